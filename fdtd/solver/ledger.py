r"""The energy ledger: stored energy, source work, bath heat and outflow.

The ledger watches an index box inside the absorbing layers (the *ledger
region*: every node there is advanced by the plain Yee update).  With
``T^n`` the discrete stored energy of :mod:`fdtd.solver.kernels.energy`, the scheme
satisfies exactly (to round-off), for every step,

.. math::  T^{n+1} - T^n = W^{n+1/2}_{src} - B^{n} - F^{n+1/2},

* source work ``W_src = -dt sum J^{n+1/2} . Ebar dV`` with
  ``Ebar = (E^n + E^{n+1})/2``;
* bath heat ``B^n = dt sum (a1/b) ((P^{n+1} - P^{n-1}) / (2 dt))^2 dV``
  (tallied inside the kernels);
* outflow ``F = dt sum_boundary Ebar x H^{n+1/2}``, the discrete Poynting
  flux across the faces of the box, from summation by parts of the curl
  operators (derivation in docs/theory/energy-ledger.md).

Outflow into the absorbing layers is what the layers absorb once the field
has died down there.

Complex fields (a Bloch edge on x) take the Hermitian form of every term:
``|E|^2``, ``Re conj(H^{n-1/2}) H^{n+1/2}``, ``|dP|^2``, work
``-dt Re sum conj(J) . Ebar dV`` and flux ``Re conj(Ebar) H``.  The local terms
are the sums of the real-field terms over real and imaginary parts; the H term
forms ``H^{n+1/2}`` with the phased curl (docs/theory/bloch-cell.md).  The residual
``(T^n - T^0) - sum(W_src - B - F)`` is printed relative to the largest
ledger entry.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from fdtd.solver.kernels import energy as ek
from fdtd.solver.kernels import inject as injk
from fdtd.solver.kernels import nonlocal_pole as nlk


def _axis_range(box_axis, n: int, offset: float) -> tuple[int, int]:
    """Index range of a component along one axis inside the ledger box."""
    if box_axis is None:
        return 0, n
    lo, hi = box_axis
    return (lo, hi + 1) if offset == 0.0 else (lo, hi)


@dataclass
class LedgerSample:
    step: int
    time: float
    field_e: float
    field_h: float
    cross: float
    poles: np.ndarray
    source_work: float
    bath: np.ndarray
    outflow: float

    @property
    def stored(self) -> float:
        return self.field_e + self.field_h + self.cross + float(self.poles.sum())


@dataclass
class EnergyLedger:
    """Bookkeeping of the energy balance of one solver (see module doc)."""

    solver: object
    box: list
    samples: list[LedgerSample] = field(default_factory=list)

    def __post_init__(self) -> None:
        s = self.solver
        g = s.model.grid
        self.ranges = {c: [_axis_range(self.box[a], g.shape[a], g.offsets(c)[a]) for a in range(g.dims)]
                       for c in g.e_components + g.h_components}
        self.n_gid = max(len(s.model.pole_labels), 1)
        self.source_work = 0.0
        self.outflow = 0.0
        self._build_flux_indices()

    # -- flux through the faces of the box ------------------------------
    def _build_flux_indices(self) -> None:
        s = self.solver
        g = s.model.grid
        e_idx, h_idx, w, comp_e, comp_h = [], [], [], [], []

        def add(ec, hc, e_nodes, h_nodes, weight):
            e_nodes = np.ravel_multi_index(tuple(np.asarray(e_nodes)), g.shape)
            h_nodes = np.ravel_multi_index(tuple(np.asarray(h_nodes)), g.shape)
            e_idx.append(e_nodes)
            h_idx.append(h_nodes)
            w.append(np.full(e_nodes.size, weight))
            comp_e.append(np.full(e_nodes.size, g.e_components.index(ec)))
            comp_h.append(np.full(e_nodes.size, g.h_components.index(hc)))

        bx = self.box[0]
        by = self.box[1] if g.dims == 2 else None
        pol = g.polarization
        if pol == "1d":
            if bx is not None:
                ia, ib = bx
                add("Ey", "Hz", ([ib],), ([ib],), 1.0)
                add("Ey", "Hz", ([ia],), ([ia - 1],), -1.0)
        elif pol == "te":
            dx, dy = g.spacing
            if by is not None:
                ja, jb = by
                i = np.arange(*self.ranges["Ex"][0])
                add("Ex", "Hz", (i, np.full_like(i, jb)), (i, np.full_like(i, jb)), -dx)
                add("Ex", "Hz", (i, np.full_like(i, ja)), (i, np.full_like(i, ja - 1)), dx)
            if bx is not None:
                ia, ib = bx
                j = np.arange(*self.ranges["Ey"][1])
                add("Ey", "Hz", (np.full_like(j, ib), j), (np.full_like(j, ib), j), dy)
                add("Ey", "Hz", (np.full_like(j, ia), j), (np.full_like(j, ia - 1), j), -dy)
        else:  # tm
            dx, dy = g.spacing
            if bx is not None:
                ia, ib = bx
                j = np.arange(*self.ranges["Ez"][1])
                add("Ez", "Hy", (np.full_like(j, ib), j), (np.full_like(j, ib), j), -dy)
                add("Ez", "Hy", (np.full_like(j, ia), j), (np.full_like(j, ia - 1), j), dy)
            if by is not None:
                ja, jb = by
                i = np.arange(*self.ranges["Ez"][0])
                add("Ez", "Hx", (i, np.full_like(i, jb)), (i, np.full_like(i, jb)), dx)
                add("Ez", "Hx", (i, np.full_like(i, ja)), (i, np.full_like(i, ja - 1)), -dx)
        self._flux = []
        if e_idx:
            ei = np.concatenate(e_idx)
            hi = np.concatenate(h_idx)
            ww = np.concatenate(w)
            ce = np.concatenate(comp_e)
            ch = np.concatenate(comp_h)
            for a in range(len(g.e_components)):
                for b in range(len(g.h_components)):
                    sel = (ce == a) & (ch == b)
                    if sel.any():
                        self._flux.append((g.e_components[a], g.h_components[b], ei[sel], hi[sel], ww[sel]))

    def flux_gather(self) -> list[np.ndarray]:
        """E^n on the box faces (called before the step; the buffers are reused)."""
        f = self.solver.fields
        if self.solver.complex_fields:
            return [f[ec].reshape(-1)[ei] for ec, _hc, ei, _hi, _w in self._flux]
        if not hasattr(self, "_face_e0"):
            self._face_e0 = [np.empty(ei.size) for _ec, _hc, ei, _hi, _w in self._flux]
        for (ec, _hc, ei, _hi, _w), buf in zip(self._flux, self._face_e0):
            injk.gather(f[ec].reshape(-1), ei, buf)
        return self._face_e0

    def flux_accumulate(self, before: list[np.ndarray]) -> None:
        """Add dt * outward Poynting flux of this step (called after the step)."""
        f = self.solver.fields
        cplx = self.solver.complex_fields
        tot = 0.0
        for (ec, hc, ei, hi, w), e0 in zip(self._flux, before):
            if cplx:
                ebar = 0.5 * (e0 + f[ec].reshape(-1)[ei])
                tot += float(np.vdot(w * ebar, f[hc].reshape(-1)[hi]).real)
            else:
                tot += injk.face_flux(f[ec].reshape(-1), f[hc].reshape(-1), ei, hi, w, e0)
        self.outflow += self.solver.dt * tot

    # -- stored energy ---------------------------------------------------
    def stored_energy(self) -> tuple[float, float, float, np.ndarray]:
        """(E part, H part, cross term, per-pole energies) of T^n, state at step start."""
        s = self.solver
        g = s.model.grid
        t = s.tables
        dV = g.cell_volume
        we = wx = 0.0
        wp = np.zeros(self.n_gid)
        for c in g.e_components:
            E = s.fields[c]
            P, Po = s.polarization[c]
            if g.dims == 1:
                E2 = E.reshape(1, -1)
                r = (0, 1) + self.ranges[c][0]
            else:
                E2 = E
                r = self.ranges[c][0] + self.ranges[c][1]
            # complex fields: the local terms are quadratic forms with real coefficients,
            # so their Hermitian value is the sum over the real and the imaginary parts
            parts = ((E2.real, P.real, Po.real), (E2.imag, P.imag, Po.imag)) if s.complex_fields \
                else ((E2, P, Po),)
            for E_, P_, Po_ in parts:
                a, b = ek.e_terms_segments(E_, s._segs[c], P_, Po_, t["eps_inf"], t["n_poles"], t["kin"],
                                           t["pot"], t["gid"], s.dt, r[0], r[1], r[2], r[3], wp)
                we += a
                wx += b
            for slot, mixn, _rows, _Q, _Pold, diag in s.nonlocal_entries.get(c, ()):
                # gradient energy of a nonlocal pole (kernels/nonlocal_pole.py)
                nlk.gradient_energy(P, Po, slot, mixn, t["nlg"], t["kappa"], diag, s.nonlocal_inv_h2,
                                    s.nonlocal_periodic, self.tally_box(c), wp)
        f = s.fields
        if g.polarization == "1d":
            q = self.ranges["Hz"][0]
            wh = ek.h_terms_1d(f["Hz"], f["Ey"], s.dt / g.spacing[0], q[0], q[1], s.wrap_phase)
        elif g.polarization == "te":
            r = self.ranges["Hz"]
            wh = ek.h_terms_te(f["Hz"], f["Ex"], f["Ey"], s.dt / g.spacing[0], s.dt / g.spacing[1],
                               r[0][0], r[0][1], r[1][0], r[1][1], s.wrap_phase)
        else:
            rx, ry = self.ranges["Hx"], self.ranges["Hy"]
            wh = ek.h_terms_tm(f["Hx"], f["Hy"], f["Ez"], s.dt / g.spacing[0], s.dt / g.spacing[1],
                               np.array(rx[0] + rx[1]), np.array(ry[0] + ry[1]), s.wrap_phase)
        return we * dV, wh * dV, wx * dV, wp * dV

    def bath_heat(self, tally: np.ndarray | None = None) -> np.ndarray:
        """Cumulative heat handed to the bath per material pole (normalized energy), from the
        kernels' tally (default: the solver's tally rows now; or one row kept earlier)."""
        s = self.solver
        t = s.bath_rows.sum(axis=0) if tally is None else tally
        return t[: self.n_gid] * s.model.grid.cell_volume / (4.0 * s.dt)

    def sample(self) -> LedgerSample:
        """Record the balance now (once per step: a second call at the same step returns the first)."""
        if self.samples and self.samples[-1].step == self.solver.step_count:
            return self.samples[-1]
        we, wh, wx, wp = self.stored_energy()
        smp = LedgerSample(self.solver.step_count, self.solver.time, we, wh, wx, wp,
                           self.source_work, self.bath_heat(), self.outflow)
        self.samples.append(smp)
        return smp

    def record(self, step: int, we: float, wh: float, wx: float, wp: np.ndarray, bath_row: np.ndarray) -> None:
        """Record a sample taken inside a compiled block of 1D steps (fdtd.solver.block1d):
        the stored energy at level ``step`` (totals, dV applied), the bath tally row then, and
        the work and outflow this ledger holds now (the caller adds them step by step)."""
        s = self.solver
        self.samples.append(LedgerSample(step, step * s.dt, we, wh, wx, wp, self.source_work,
                                         self.bath_heat(bath_row), self.outflow))

    def tally_box(self, component: str) -> np.ndarray:
        """(r0, r1, q0, q1) where the kernels tally bath heat for ``component``."""
        g = self.solver.model.grid
        r = self.ranges[component]
        if g.dims == 1:
            return np.array((0, 1) + r[0], dtype=np.int64)
        return np.array(r[0] + r[1], dtype=np.int64)

    # -- report ------------------------------------------------------------
    def residual(self) -> float:
        """Relative imbalance between the first and the last sample."""
        if len(self.samples) < 2:
            return float("nan")
        a, b = self.samples[0], self.samples[-1]
        d_stored = b.stored - a.stored
        d_src = b.source_work - a.source_work
        d_bath = float(b.bath.sum() - a.bath.sum())
        d_out = b.outflow - a.outflow
        scale = max(abs(a.stored), abs(b.stored), abs(d_src), abs(d_bath), abs(d_out), 1e-300)
        return (d_stored - d_src + d_bath + d_out) / scale

    def summary(self) -> dict:
        b = self.samples[-1]
        a = self.samples[0]
        return {
            "stored_start": a.stored, "stored_end": b.stored,
            "source_work": b.source_work - a.source_work,
            "bath_heat": float(b.bath.sum() - a.bath.sum()),
            "outflow": b.outflow - a.outflow,
            "relative_residual": self.residual(),
        }

    def table(self) -> str:
        """A printable table of the balance between the first and last sample."""
        s = self.summary()
        lines = ["energy ledger (normalized energy units)",
                 f"  stored energy at start     {s['stored_start']: .6e}",
                 f"  work done by sources       {s['source_work']: .6e}",
                 f"  heat into the bath         {s['bath_heat']: .6e}",
                 f"  outflow to absorbing layers{s['outflow']: .6e}",
                 f"  stored energy at end       {s['stored_end']: .6e}",
                 f"  relative residual          {s['relative_residual']: .3e}"]
        return "\n".join(lines)
