r"""The solver: a model, its state arrays, sources, and the compiled steppers.

Time levels: after ``step_count = n`` steps the solver holds ``E^n`` (time
``n dt``), ``H^{n-1/2}``, ``P^n`` and ``P^{n-1}``.  One :meth:`Solver.step`

1. asks every source for ``J^{n+1/2}`` and records ``E^n`` where needed,
2. calls the compiled stepper (H to n+1/2, P to n+1, E to n+1),
3. injects ``-dt J / eps_inf`` and books source work, bath heat and outflow.

With a Bloch edge on x (:class:`fdtd.space.edges.Bloch`) every field,
polarization and CPML memory array is complex128, the kernels receive the wrap
factor exp(i theta) (1.0, a float, otherwise), sources may hand complex
currents, and energies and work are Hermitian (docs/theory/bloch-cell.md).

The time loop with stop criteria, progress and guard rails is
:meth:`Solver.advance`.
"""

from __future__ import annotations

import math
import time as _time
import warnings

import numba
import numpy as np

from fdtd import _checks
from fdtd.errors import GeometryError, InstabilityError, ParameterError
from fdtd.solver.kernels import energy as ek
from fdtd.solver.kernels import inject as injk
from fdtd.solver.kernels import nonlocal_pole as nlk
from fdtd.solver.kernels.yee1d import step_1d
from fdtd.solver.kernels.yee_te import step_te, step_te_blocked
from fdtd.solver.kernels.yee_tm import step_tm, step_tm_blocked
from fdtd.solver.ledger import EnergyLedger
from fdtd.space.model import Model
from fdtd._progress import progress_bar
from fdtd.sources.prescribed import Source
from fdtd.space.stability import courant_number

#: grids smaller than this run on one thread by default (parallel regions cost ~10 us)
SMALL_GRID_CELLS = 250_000


_threads_in_use = [None]


def _use_threads(n: int) -> None:
    """numba.set_num_threads(n), skipped when n is already set (it costs ~10 us a call)."""
    if _threads_in_use[0] != n or numba.get_num_threads() != n:
        numba.set_num_threads(n)
        _threads_in_use[0] = n


def staggered_zeros(shape, k: int, dtype=np.float64) -> np.ndarray:
    """Zeroed array (float64 or complex128) whose start is offset by ``k`` cache lines (64 B).

    Large ``np.zeros`` arrays all begin at the same offset within a page; many
    streams then collide in the cache.  Offsetting each array's start differently
    removes that (measured: offsetting array starts by different multiples of 64 bytes
    gave 1.2-2.2x).  The buffer is allocated in bytes, so the start lands on a
    cache-line boundary plus ``64 k`` bytes for any item size dividing 64.
    """
    dtype = np.dtype(dtype)
    item = dtype.itemsize
    if 64 % item:
        raise ParameterError(
            f"staggered_zeros dtype = {dtype}: expected an item size dividing 64 bytes")
    size = int(np.prod(shape))
    buf = np.zeros(size * item + 64 * (k % 32) + 128, dtype=np.uint8)
    start = (-buf.ctypes.data) % 64 + 64 * (k % 32)
    return buf[start:start + size * item].view(dtype).reshape(shape)


class Solver:
    """Time-domain solver for one :class:`~fdtd.space.model.Model`.

    Parameters
    ----------
    model : Model
    dt : float, optional
        Time step (normalized); refused above the stability limit.
    courant : float, optional
        Alternatively, the fraction of the stability limit (default 0.95).
    sources : sequence of Source
    threads : int, optional
        Threads for the 2D kernels (default: 1 for small grids, else all).
    ledger : bool
        Keep the energy ledger (bath tally in the kernels, flux on the box faces).
    ledger_margin : int
        Cells between the absorbing layers and the ledger box.
    check_every : int, optional
        Steps between guard-rail checks (non-finite fields, runaway energy); default
        50, and 256 in 1D, where a check costs as much as several steps.
    allow_unstable_dt : bool
        Accept a ``dt`` above the stability limit (with a warning); the guard
        rails then stop the run when it blows up.
    """

    def __init__(self, model: Model, dt: float | None = None, courant: float | None = None,
                 sources=(), threads: int | None = None, ledger: bool = True,
                 ledger_margin: int = 1, check_every: int | None = None, allow_unstable_dt: bool = False):
        if not isinstance(model, Model):
            raise ParameterError(f"model = {model!r}: expected an fdtd.Model")
        self.model = model
        g = model.grid
        self.grid = g
        self.dt = model.resolve_dt(dt, courant, allow_unstable=allow_unstable_dt)
        self.courant_number = courant_number(self.dt, g.spacing)
        self.tables = model.kernel_tables(self.dt)
        self.profiles = model.profiles(self.dt)
        if threads is None:
            threads = 1 if g.n_cells < SMALL_GRID_CELLS else numba.config.NUMBA_NUM_THREADS
        self.threads = _checks.positive_int("threads", threads)
        if self.threads > numba.config.NUMBA_NUM_THREADS:
            raise ParameterError(
                f"threads = {threads} is not allowed: this machine offers at most "
                f"{numba.config.NUMBA_NUM_THREADS} (NUMBA_NUM_THREADS)")
        if check_every is None:
            check_every = 256 if g.dims == 1 else 50
        self.check_every = _checks.positive_int("check_every", check_every)
        self.step_count = 0
        # Bloch edge on x: complex state, wrap factor exp(i theta) of complex dtype;
        # otherwise real state and the float 1.0 (the kernels' real specialization)
        self.complex_fields = model.complex_fields
        self.dtype = np.dtype(np.complex128 if self.complex_fields else np.float64)
        self.wrap_phase = complex(model.wrap_factor) if self.complex_fields else 1.0

        # ---- state ---------------------------------------------------------
        k = 0
        dtype = self.dtype
        self.fields: dict[str, np.ndarray] = {}
        for c in g.e_components + g.h_components:
            self.fields[c] = staggered_zeros(g.shape, k, dtype)
            k += 1
        ns = model.max_poles
        self.polarization: dict[str, tuple[np.ndarray, np.ndarray]] = {}
        pshape = (ns,) + ((1,) + g.shape if g.dims == 1 else g.shape)
        for c in g.e_components:
            if ns:
                P = staggered_zeros(pshape, k, dtype)
                Po = staggered_zeros(pshape, k + 1, dtype)
                k += 2
            else:
                P = np.zeros((1, 1, 1), dtype)
                Po = np.zeros((1, 1, 1), dtype)
            self.polarization[c] = (P, Po)
        n_gid = max(len(model.pole_labels), 1)
        n_rows = g.shape[0] if g.dims == 2 else 1
        self.bath_rows = np.zeros((n_rows, n_gid))
        self._coef = (self.tables["inv_eps"], self.tables["n_poles"], self.tables["c1"],
                      self.tables["c2"], self.tables["c3"])
        self._bathc_all = np.ascontiguousarray(self.tables["bath"])
        # the steppers tally the bath of local poles only; nonlocal slots are
        # tallied after their Laplacian correction (kernels/nonlocal_pole.py)
        self._bathc = np.where(self.tables["nlg"] >= 0, 0.0, self._bathc_all)
        self._gid = np.ascontiguousarray(np.maximum(self.tables["gid"], 0))
        self._prof = [self._profile_tuple(p, a) for a, p in enumerate(self.profiles)]
        self.psi: dict[str, np.ndarray] = {}
        self._allocate_psi()
        self._segs = {c: (s.row_ptr, s.seg_start, s.seg_stop, s.seg_mix)
                      for c, s in model.segments.items()}
        self._flat_mix = {c: model.mix_maps[c].reshape(-1) for c in g.e_components}
        self._setup_nonlocal()
        # the 1D kernel's work rows, kept so that no step allocates
        self._scratch_1d = (np.empty(g.shape, self.dtype), np.empty(g.shape, self.dtype)) \
            if g.polarization == "1d" else ()

        # ---- ledger ----------------------------------------------------------
        self.ledger: EnergyLedger | None = None
        self._tally = bool(ledger)
        box = model.interior_box(ledger_margin)
        self.ledger_box = box
        if ledger:
            self.ledger = EnergyLedger(self, box)
            self._tally_boxes = {c: self.ledger.tally_box(c) for c in g.e_components}
        else:
            self._tally_boxes = {c: np.zeros(4, dtype=np.int64) for c in g.e_components}

        # ---- sources ---------------------------------------------------------
        self.sources: list[Source] = []
        for s in sources:
            self.attach(s)
        self.injected_abs = 0.0     # sum |work| of sources, for the runaway guard
        self.source_work = 0.0      # net work done on the field by sources
        self._energy0: float | None = None
        self.stop_reason = ""
        self.observers: list = []   # objects with before_step(solver) / after_step(solver, injections)
        #: steps per sweep of the temporally blocked 2D kernel: None chooses (see
        #: :meth:`temporal_levels_now`), 0 or 1 never blocks, L >= 2 blocks whenever allowed
        self.temporal_levels: int | None = None

    # ------------------------------------------------------------------
    @property
    def time(self) -> float:
        """Time of E (normalized): step_count * dt."""
        return self.step_count * self.dt

    def _profile_tuple(self, p, axis):
        d = self.grid.spacing[axis]
        dt = self.dt
        return (int(p.n_lo), int(p.n_hi), dt / d * p.inv_kappa_int, dt / d * p.inv_kappa_half,
                p.b_int, dt * p.c_int, p.b_half, dt * p.c_half)

    def _allocate_psi(self) -> None:
        g = self.grid
        pol = g.polarization
        npx = self.profiles[0].n_pml
        dtype = self.dtype
        if pol == "1d":
            for key in ("hz_x", "ey_x"):
                self.psi[key] = np.zeros(npx, dtype)
            return
        nx, ny = g.shape
        npy = self.profiles[1].n_pml
        names_x = ("hz_x", "ey_x") if pol == "te" else ("hy_x", "ez_x")
        names_y = ("hz_y", "ex_y") if pol == "te" else ("hx_y", "ez_y")
        for key in names_x:
            self.psi[key] = np.zeros((npx, ny), dtype)
        for key in names_y:
            self.psi[key] = np.zeros((nx, npy), dtype)

    def _setup_nonlocal(self) -> None:
        """Work arrays of the nonlocal poles: per E component, the slots that hold
        one, the row range they occupy, and Q / P^{n-1} buffers (rows, cols)."""
        g = self.grid
        self.nonlocal_entries: dict[str, list] = {}
        self.nonlocal_outflow = 0.0
        nlg = self.tables["nlg"]
        if not (nlg >= 0).any():
            return
        if g.dims == 1:
            self.nonlocal_inv_h2 = (0.0, 1.0 / g.spacing[0] ** 2)
            self.nonlocal_periodic = (True, bool(self.model.periodic[0]))
        else:
            self.nonlocal_inv_h2 = (1.0 / g.spacing[0] ** 2, 1.0 / g.spacing[1] ** 2)
            self.nonlocal_periodic = (bool(self.model.periodic[0]), bool(self.model.periodic[1]))
        fractions = self.model.material_fraction_table()
        for c in g.e_components:
            mix2 = self.model.mix_maps[c].reshape(1, -1) if g.dims == 1 else self.model.mix_maps[c]
            mix2 = np.ascontiguousarray(mix2)
            entries = []
            for s in range(nlg.shape[1]):
                groups = nlg[mix2, s]
                if not (groups >= 0).any():
                    continue
                rws = np.nonzero((groups >= 0).any(axis=1))[0]
                rows = (int(rws[0]), int(rws[-1]) + 1)
                diag = np.zeros(mix2.shape)
                wall = mix2 == 0                       # mixture 0: the conducting wall
                offs = g.offsets(c)
                # beyond a closed edge: the wall is the wrapped node 0 (integer nodes) or half a
                # cell away (half nodes); 1D arrays are one row
                edge = (0.5, 1.0 if offs[0] == 0.0 else 0.5) if g.dims == 1 else \
                    tuple(1.0 if o == 0.0 else 0.5 for o in offs)
                for gid in np.unique(groups[groups >= 0]):
                    fill = fractions[mix2, self.model.pole_material(int(gid))]
                    diag += nlk.boundary_diagonal(groups == gid, fill, self.nonlocal_inv_h2,
                                                  self.nonlocal_periodic, wall, edge)
                entries.append((s, mix2, rows, np.zeros(mix2.shape), np.zeros(mix2.shape), diag))
            if entries:
                self.nonlocal_entries[c] = entries

    def _nonlocal_prepass(self) -> None:
        t = self.tables
        for c, entries in self.nonlocal_entries.items():
            P, Po = self.polarization[c]
            for s, mix2, rows, Q, Pold, diag in entries:
                nlk.prepass(P, Po, s, mix2, t["nlg"], t["c4"], diag, self.nonlocal_inv_h2,
                            self.nonlocal_periodic, rows, Q, Pold)

    def _nonlocal_postpass(self) -> None:
        t = self.tables
        g = self.grid
        out = 0.0
        for c, entries in self.nonlocal_entries.items():
            P, Po = self.polarization[c]
            E2 = self.fields[c].reshape(1, -1) if g.dims == 1 else self.fields[c]
            for s, mix2, rows, Q, Pold, _diag in entries:
                out += nlk.postpass(P, Po, E2, s, mix2, t["nlg"], t["inv_eps"], Q, Pold, rows,
                                    self._tally, self._tally_boxes[c], self._bathc_all, self._gid,
                                    self.bath_rows, t["kappa"], self.nonlocal_inv_h2, self.nonlocal_periodic)
        if self.ledger is not None:
            self.ledger.outflow += out * g.cell_volume
        self.nonlocal_outflow += out * g.cell_volume

    def attach(self, source: Source) -> None:
        if not isinstance(source, Source):
            raise ParameterError(f"source {source!r}: expected an fdtd Source")
        source.bind(self)
        self.sources.append(source)

    def check_outside_absorbers(self, component: str, idx: np.ndarray, what: str = "source") -> None:
        """Refuse nodes (int array (m, dims)) that lie in an absorbing layer or on a wall."""
        g = self.grid
        for a in range(g.dims):
            p = self.profiles[a]
            if p.n_pml == 0 and self.model.periodic[a]:
                continue
            sig = p.sigma_int if g.offsets(component)[a] == 0.0 else p.sigma_half
            k = idx[:, a]
            bad = sig[k] > 0
            if not self.model.periodic[a]:
                bad |= (k == 0) & (g.offsets(component)[a] == 0.0)
            if np.any(bad):
                kk = int(k[bad][0])
                raise GeometryError(
                    f"{what} at index {kk} along {'xy'[a]} lies inside the absorbing layer or on "
                    f"the wall ({p.n_lo} cells at the low side, {p.n_hi} at the high side of "
                    f"{g.shape[a]}): move it into the interior")

    # ------------------------------------------------------------------
    def _kernel(self) -> None:
        if self.nonlocal_entries:
            self._nonlocal_prepass()
        self._local_kernel()
        if self.nonlocal_entries:
            self._nonlocal_postpass()

    def _local_kernel(self) -> None:
        g = self.grid
        f = self.fields
        psi = self.psi
        t = self._tally
        ph = self.wrap_phase
        if g.polarization == "te":
            Px, Pxo = self.polarization["Ex"]
            Py, Pyo = self.polarization["Ey"]
            _use_threads(self.threads)
            step_te(f["Ex"], f["Ey"], f["Hz"], Px, Pxo, Py, Pyo, self._segs["Ex"], self._segs["Ey"],
                    self._coef, self._prof[0], self._prof[1], psi["hz_x"], psi["ey_x"], psi["hz_y"],
                    psi["ex_y"], self.threads, t, self.bath_rows, self._gid, self._bathc,
                    self._tally_boxes["Ex"], self._tally_boxes["Ey"], ph)
        elif g.polarization == "tm":
            Pz, Pzo = self.polarization["Ez"]
            _use_threads(self.threads)
            step_tm(f["Ez"], f["Hx"], f["Hy"], Pz, Pzo, self._segs["Ez"], self._coef, self._prof[0],
                    self._prof[1], psi["hy_x"], psi["ez_x"], psi["hx_y"], psi["ez_y"], self.threads,
                    t, self.bath_rows, self._gid, self._bathc, self._tally_boxes["Ez"], ph)
        else:
            Py, Pyo = self.polarization["Ey"]
            step_1d(f["Ey"], f["Hz"], Py, Pyo, self._segs["Ey"], self._coef, self._prof[0],
                    psi["hz_x"], psi["ey_x"], t, self.bath_rows[0], self._gid, self._bathc,
                    self._tally_boxes["Ey"], ph, *self._scratch_1d)

    def _blocked_kernel(self, levels: int) -> None:
        f, psi, ph = self.fields, self.psi, self.wrap_phase
        _use_threads(self.threads)
        if self.grid.polarization == "te":
            Px, Pxo = self.polarization["Ex"]
            Py, Pyo = self.polarization["Ey"]
            step_te_blocked(f["Ex"], f["Ey"], f["Hz"], Px, Pxo, Py, Pyo, self._segs["Ex"], self._segs["Ey"],
                            self._coef, self._prof[0], self._prof[1], psi["hz_x"], psi["ey_x"], psi["hz_y"],
                            psi["ex_y"], self.threads, levels, self._tally, self.bath_rows, self._gid,
                            self._bathc, self._tally_boxes["Ex"], self._tally_boxes["Ey"], ph)
        else:
            Pz, Pzo = self.polarization["Ez"]
            step_tm_blocked(f["Ez"], f["Hx"], f["Hy"], Pz, Pzo, self._segs["Ez"], self._coef, self._prof[0],
                            self._prof[1], psi["hy_x"], psi["ez_x"], psi["hx_y"], psi["ez_y"], self.threads,
                            levels, self._tally, self.bath_rows, self._gid, self._bathc,
                            self._tally_boxes["Ez"], ph)

    #: steps whose source currents are evaluated together (bounded scratch memory)
    BLOCK = 256
    #: steps per sweep of the temporally blocked 2D kernel when chosen automatically, and
    #: the grid size from which it pays (below it the fields stay in cache anyway);
    #: measured with benchmarks/bench_temporal.py
    TEMPORAL_LEVELS = 4
    TEMPORAL_MIN_CELLS = 1 << 20

    def temporal_levels_now(self) -> int:
        """Steps per sweep the next :meth:`step` call would use (1: one step per sweep).

        Temporal blocking advances several steps per sweep over the rows and is
        bit-identical to stepping one at a time (docs/theory/temporal-blocking.md).  It
        needs a step that is the kernel alone: a 2D grid without sources, observers,
        energy ledger (whose face flux is taken between steps) or nonlocal poles, and row
        blocks of at least 2 L + 2 rows.  By default it is used from
        :attr:`TEMPORAL_MIN_CELLS` cells on."""
        g = self.grid
        want = self.temporal_levels
        if want is None:
            want = self.TEMPORAL_LEVELS if g.n_cells >= self.TEMPORAL_MIN_CELLS else 1
        if want < 2 or g.dims != 2 or self.sources or self.observers or self.ledger is not None \
                or self.nonlocal_entries:
            return 1
        if g.shape[0] // self.threads < 2 * want + 2:
            return 1
        return int(want)

    def ledger_in_blocks(self) -> bool:
        """Whether :meth:`step` can take ledger samples inside its steps (``ledger_every``):
        a 1D grid without nonlocal poles (compiled in the 1D block loop, or after each step)."""
        return self.ledger is not None and self.grid.dims == 1 and not self.nonlocal_entries

    def step(self, n: int = 1, ledger_every: int = 0, ledger_origin: int = 0) -> None:
        """Advance ``n`` steps (no guard rails; see :meth:`run`).

        Sources that can (:meth:`~fdtd.sources.prescribed.Source.block_currents`) hand the
        currents of up to :attr:`BLOCK` steps at once; injection and work then run in
        compiled code (real fields), and a 1D run whose observers all accept blocks
        advances the whole block in one compiled call (:mod:`fdtd.solver.block1d`).
        ``ledger_every`` > 0 (only where :meth:`ledger_in_blocks`): sample the energy ledger
        at each level n with (n - ledger_origin) % ledger_every == 0 on the way."""
        if ledger_every and not self.ledger_in_blocks():
            raise ParameterError("step(ledger_every=...) needs a 1D solver with a ledger and no nonlocal "
                                 "pole; use advance(ledger_every=...)")
        levels = self.temporal_levels_now() if n > 1 else 1
        if levels > 1 and n >= levels:
            sweeps = n // levels
            for _ in range(sweeps):
                self._blocked_kernel(levels)
                self.step_count += levels
            n -= sweeps * levels
        done = 0
        while done < n:
            m = min(self.BLOCK, n - done)
            pre = self._block_currents(m)
            if pre is not None and self._block_1d_possible():
                from fdtd.solver.block1d import advance_block_1d

                advance_block_1d(self, m, pre, ledger_every, ledger_origin)
            else:
                self._step_each(m, pre, ledger_every, ledger_origin)
            done += m

    def _block_currents(self, m: int):
        """Per source, its currents for the next ``m`` steps (lists of (comp, flat (m, w),
        J (m, w))), or None when a source is evaluated step by step."""
        if not self.sources or self.complex_fields:
            return None
        t_levels = (self.step_count + np.arange(m + 1)) * self.dt
        out = []
        for src in self.sources:
            cur = src.block_currents(t_levels)
            if cur is None:
                return None
            out.append(cur)
        return out

    def _block_1d_possible(self) -> bool:
        return (self.grid.polarization == "1d" and len(self.nonlocal_entries.get("Ey", ())) <= 1
                and all(getattr(o, "accepts_blocks", False) for o in self.observers))

    def _step_each(self, n: int, pre=None, ledger_every: int = 0, ledger_origin: int = 0) -> None:
        """Advance ``n`` steps one by one (``pre``: the sources' block currents, if any;
        ``ledger_every``: ledger samples due on the way, see :meth:`step`)."""
        dt = self.dt
        inv_eps = self.tables["inv_eps"]
        dV = self.grid.cell_volume
        jtype = self.dtype
        cplx = self.complex_fields
        for step in range(n):
            t_half = (self.step_count + 0.5) * dt
            inj = []
            if pre is not None:
                for cur in pre:
                    for comp, flat, J in cur:
                        ef = self.fields[comp].reshape(-1)
                        e0 = np.empty(flat.shape[1])
                        injk.gather(ef, flat[step], e0)
                        inj.append((comp, flat[step], J[step], e0))
            else:
                for src in self.sources:
                    for comp, flat, J in src.currents(t_half):
                        if flat.size:
                            J = np.asarray(J)
                            if not cplx and np.iscomplexobj(J):
                                raise ParameterError(
                                    f"source {src!r} handed a complex current to {comp} in a real run: "
                                    "complex currents need a Bloch edge on x (fdtd.space.edges.Bloch)")
                            inj.append((comp, flat, np.asarray(J, dtype=jtype),
                                        self.fields[comp].reshape(-1)[flat]))
            flux_before = self.ledger.flux_gather() if self.ledger is not None else None
            for obs in self.observers:
                obs.before_step(self)
            self._kernel()
            work = 0.0
            if cplx:
                for comp, flat, J, _e0 in inj:
                    ef = self.fields[comp].reshape(-1)
                    np.subtract.at(ef, flat, dt * J * inv_eps[self._flat_mix[comp][flat]])
                for comp, flat, J, e0 in inj:
                    e1 = self.fields[comp].reshape(-1)[flat]
                    # Hermitian work -dt Re sum conj(J) . Ebar dV (docs/theory/bloch-cell.md)
                    work -= dt * float(np.vdot(J, 0.5 * (e0 + e1)).real) * dV
            else:
                for comp, flat, J, _e0 in inj:
                    injk.inject(self.fields[comp].reshape(-1), flat, J, dt, inv_eps, self._flat_mix[comp])
                for comp, flat, J, e0 in inj:
                    work -= dt * injk.mean_field_dot(self.fields[comp].reshape(-1), flat, J, e0) * dV
            self.source_work += work
            self.injected_abs += abs(work)
            if self.ledger is not None:
                self.ledger.source_work += work
                self.ledger.flux_accumulate(flux_before)
            self.step_count += 1
            # observers see the completed step: E^{n+1}, H^{n+1/2}, step_count = n + 1
            for obs in self.observers:
                obs.after_step(self, inj)
            if ledger_every and (self.step_count - ledger_origin) % ledger_every == 0:
                self.ledger.sample()

    # ------------------------------------------------------------------
    def field_energy_measure(self) -> float:
        """0.5 * sum (|E|^2 + |H|^2) dV over the whole grid (a cheap size measure).

        Complex fields are summed as their real and imaginary parts (a float64
        view of twice the length, no copy).
        """
        tot = 0.0
        for a in self.fields.values():
            if self.complex_fields:
                a = a.view(np.float64)
            tot += ek.sum_of_squares(a.reshape(a.shape[0], -1) if a.ndim > 1 else a.reshape(1, -1))
        return 0.5 * tot * self.grid.cell_volume

    def likely_instability_causes(self) -> list[str]:
        """What in this solver's set-up can make a run grow: a time step above (or at) the Yee + ADE
        limit, a medium outside the range the scheme keeps stable (gain, eps_inf <= 0), an
        absorbing layer too thin for its grading.  Empty when none of them is present."""
        from fdtd.space.edges import CPML
        from fdtd.space.stability import max_stable_dt

        causes = []
        limit = self.model.max_stable_dt()
        if self.dt > limit * (1 + 1e-12):
            how = (f"vacuum Courant number {self.courant_number:.4g} > 1: lower the courant fraction"
                   if self.courant_number > 1 else "the media's poles lower the limit below the vacuum one: lower "
                   "the courant fraction, or refine the cell")
            causes.append(f"the time step dt = {self.dt:.6g} is {self.dt / limit:.4g} times the Yee + ADE stability "
                          f"limit {limit:.6g} ({how})")
        elif self.dt > 0.999 * limit:
            causes.append(f"the time step dt = {self.dt:.6g} sits at the stability limit {limit:.6g}, where "
                          "round-off can grow (lower the courant fraction, e.g. to 0.95)")
        for mat in self.model.materials or [self.model.background]:
            why = []
            if not mat.eps_inf > 0:
                why.append(f"eps_inf = {mat.eps_inf:.4g} <= 0")
            for pole in mat.poles:
                a0, a1, b = pole.ade_parameters()
                if a1 < 0 or b < 0 or a0 < 0:
                    why.append(f"a pole with gain or negative strength (ADE a0 = {a0:.4g}, a1 = {a1:.4g}, "
                               f"b = {b:.4g}; stable needs all >= 0)")
            if not why and mat.poles:
                own = max_stable_dt(self.grid.spacing, [mat])
                if self.dt > own * (1 + 1e-12):
                    why.append(f"its own stability limit dt = {own:.6g} is below the time step")
            if why:
                causes.append(f"medium {mat.name!r} lies outside the stable range: {'; '.join(why)}")
        thin = [(f"{side} {'xyz'[axis]}", edge.cells) for axis, pair in enumerate(self.model.edges)
                for side, edge in zip(("low", "high"), pair) if isinstance(edge, CPML) and edge.cells < 5]
        if thin:
            causes.append("absorbing layers too thin for their grading (" + ", ".join(f"{n} cells on the {where} side"
                          for where, n in thin) + "; give them at least 8-10 cells)")
        return causes

    def _instability_message(self, what: str) -> str:
        causes = self.likely_instability_causes()
        why = ("; likely cause" + ("s: " if len(causes) > 1 else ": ") + "; ".join(causes)) if causes else \
            ("; none of the usual causes (time step above the limit, a medium outside the stable range, "
             "a too thin absorbing layer) is present: look for a source current that grows without bound")
        return f"{what}: the run is unstable (dt = {self.dt:.6g}, limit {self.model.max_stable_dt():.6g}){why}"

    def check_health(self) -> None:
        """Raise InstabilityError on non-finite fields or energy beyond what was put in."""
        w = self.field_energy_measure()
        if not math.isfinite(w):
            raise InstabilityError(self._instability_message(
                f"non-finite fields at step {self.step_count} (t = {self.time:.6g})"))
        if self._energy0 is None:
            self._energy0 = w
            return
        eps_min = min(1.0, min((m.eps_inf for m in self.model.mixtures if not m.is_wall), default=1.0))
        bound = 10.0 / eps_min * (self._energy0 + self.injected_abs) + 1e-300
        if w > bound and w > 1e-200:
            raise InstabilityError(self._instability_message(
                f"field energy {w:.4e} at step {self.step_count} exceeds ten times what was put in "
                f"({(self._energy0 + self.injected_abs):.4e})"))

    def advance(self, steps: int | None = None, to_time: float | None = None, progress: bool | None = None,
            ledger_every: int | None = None, callback=None, callback_every: int = 1) -> str:
        """Advance with guard rails until a stop criterion; return why it stopped.

        Parameters
        ----------
        steps : int, optional
            Number of steps to take.
        to_time : float, optional
            Or advance until ``time >= to_time`` (normalized time).
        progress : bool, optional
            Show a progress line (default: when stderr is a terminal).
        ledger_every : int, optional
            Sample the energy ledger every that many steps (and at both ends).
        callback : callable(solver), optional
            Called every ``callback_every`` steps (recorders).
        """
        if steps is None and to_time is None:
            raise ParameterError("advance needs a stop criterion: steps=... or to_time=...")
        if steps is None:
            to_time = _checks.finite_number("to_time", to_time)
            steps = max(int(math.ceil(to_time / self.dt - 1e-9)) - self.step_count, 0)
        steps = _checks.positive_int("steps", steps, minimum=0)
        bar = progress_bar(steps, "advance", enabled=progress)
        if self._energy0 is None:
            self.check_health()
        if self.ledger is not None and not self.ledger.samples:
            self.ledger.sample()
        start = self.step_count
        self.stop_reason = "running"
        t0 = _time.perf_counter()
        try:
            done = 0
            # a 1D ledger is sampled inside the steps (compiled blocks need not stop for it)
            inside = bool(ledger_every) and self.ledger_in_blocks()
            while done < steps:
                chunk = min(self.check_every, steps - done)
                if ledger_every and not inside:
                    chunk = min(chunk, ledger_every - (self.step_count - start) % ledger_every)
                if callback is not None:
                    chunk = min(chunk, callback_every - (self.step_count - start) % callback_every)
                if inside:
                    self.step(chunk, ledger_every, start)
                else:
                    self.step(chunk)
                done += chunk
                if (self.step_count - start) % self.check_every == 0 or done == steps:
                    self.check_health()
                if ledger_every and self.ledger is not None and \
                        (self.step_count - start) % ledger_every == 0:
                    self.ledger.sample()
                if callback is not None and (self.step_count - start) % callback_every == 0:
                    callback(self)
                bar.update(chunk)
            self.stop_reason = f"completed {steps} steps"
        except KeyboardInterrupt:
            self.stop_reason = f"interrupted at step {self.step_count}"
            raise
        except InstabilityError as exc:
            self.stop_reason = f"unstable: {exc}"
            raise
        finally:
            bar.close()
            self.wall_time = _time.perf_counter() - t0
            if self.ledger is not None and self.ledger.samples and \
                    self.ledger.samples[-1].step != self.step_count:
                try:
                    self.ledger.sample()
                except Exception:  # pragma: no cover - never hide the original error
                    warnings.warn("could not take the final ledger sample", stacklevel=2)
        return self.stop_reason
