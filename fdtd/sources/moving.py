r"""Moving sources on prescribed world lines: line charges and oscillating dipoles.

**Charges** (2D TE_z; a line charge per unit length along z moving in the
plane) use the charge-conserving deposition of :func:`fdtd.solver.kernels.deposit.esirkepov_te`:
Gauss's law on the grid, ``div D - rho``, is kept at round-off for the whole run.

**Dipoles** carry a rest-frame moment ``p'(tau) = p0 R(tau) cos(omega0 tau + phase)``
along a fixed axis, with ``tau`` the proper time and ``R`` an optional smooth
switch-on over ``ramp`` (proper time).  The lab-frame moment of a point dipole
moving with velocity v is (docs/theory/moving-sources.md, "Moving dipole")

.. math::  \mathbf p = \mathbf p' - \left(1 - \tfrac{1}{\gamma}\right)(\mathbf p'\cdot\hat v)\hat v ,

i.e. the component along the motion shrinks by 1/gamma (the polarization
density grows by gamma, the volume of the dipole contracts by gamma) and
the transverse components are unchanged; the lab oscillation runs at
``omega0 / gamma``.  The lab current is ``J = dP/dt + curl (P x v)``; the
second term is the magnetization current of a moving electric dipole.

Which dipole axis each grid can carry: TE_z in-plane ("x", "y"); TM_z
out-of-plane ("z"); 1D "y" (a dipole sheet moving along x).

**Bloch cells** (a :class:`~fdtd.space.edges.Bloch` edge on x, theta = k0 L): the
source stands for the phased row ``J_total(x) = sum_m exp(i k0 m L) J(x - m L)``.
The source keeps its unwrapped position; a deposit at unwrapped x index ``i_u``
lands on ``i_u mod nx`` times ``exp(-i theta floor(i_u / nx))``, and the charge
density gets the same factors, so the Esirkepov continuity equation and Gauss's
law hold in the cell with the phased wrap (docs/theory/bloch-cell.md).  Currents
(and charge densities) are then complex128; elsewhere they stay real.
"""

from __future__ import annotations

import math
import warnings

import numpy as np

from fdtd import _checks
from fdtd.errors import GeometryError, ParameterError
from fdtd.solver.kernels import deposit
from fdtd.sources.shapes import Shape
from fdtd.sources.prescribed import Source, smooth_ramp, smooth_ramp_array
from fdtd.sources.worldlines import WorldLine


class NumericalCherenkovWarning(UserWarning):
    """The source is faster than the grid's own phase velocity at wavenumbers it excites."""


def numerical_phase_velocity_limit(dt: float, spacing: float, shape: Shape,
                                   threshold: float = 1e-2) -> float:
    """Smallest vacuum phase velocity of the Yee grid along one axis over the
    wavenumbers a source of this shape excites (|form factor| >= threshold).

    Along an axis (other wavenumber components zero) the Yee relation gives
    ``omega(k) = (2/dt) asin((dt/Delta) sin(k Delta / 2))``; the phase
    velocity omega/k falls monotonically towards the cutoff k = pi/Delta.
    A source moving faster than this emits grid-made (numerical) Cherenkov
    radiation even in vacuum.  Returns units of c.
    """
    k = np.linspace(1e-6, np.pi / spacing, 4001)
    ff = np.abs(shape.form_factor(k, spacing))
    excited = k[ff >= threshold]
    k_max = excited.max() if excited.size else k[0]
    arg = min(dt / spacing * math.sin(k_max * spacing / 2), 1.0)
    return 2.0 / (dt * k_max) * math.asin(arg)


class _MovingSource(Source):
    """Shared parts: world line checks, cell coordinates, interior check."""

    def __init__(self, worldline: WorldLine, shape: Shape):
        if not isinstance(worldline, WorldLine):
            raise ParameterError(f"worldline = {worldline!r}: expected an fdtd world line")
        if not isinstance(shape, Shape):
            raise ParameterError(f"shape = {shape!r}: expected fdtd.sources.shapes.Shape")
        self.worldline = worldline
        self.shape = shape
        self.solver = None

    def _bind_common(self, solver, horizon: float | None = None) -> None:
        g = solver.model.grid
        if self.worldline.dims != g.dims:
            raise ParameterError(
                f"world line has {self.worldline.dims} coordinates: the grid is {g.dims}D")
        self.solver = solver
        self.grid = g
        self.dt = solver.dt
        self.periodic = solver.model.periodic
        # Bloch cell: theta reduced to [-pi, pi] (None without a Bloch edge)
        bloch = solver.model.bloch
        self.bloch_theta = None if bloch is None else bloch.wrap_phase
        # interior bounds in cells (positions of the source centre allowed)
        self.bounds = []
        for a in range(g.dims):
            if self.periodic[a]:
                self.bounds.append(None)
                continue
            nlo, nhi = solver.model.pml_cells()[a]
            lo = max(nlo, 1) + self.shape.half_support + 1.0
            hi = g.shape[a] - max(nhi, 1) - self.shape.half_support - 1.0
            self.bounds.append((lo, hi))
        self._check_inside(0.0)
        self.speed_limits = np.array([numerical_phase_velocity_limit(solver.dt, g.spacing[a], self.shape)
                                      for a in range(g.dims)])
        self._warned = False
        # speed checks: the whole course of a uniform world line, the first steps of
        # others (then every step, see _check_speed)
        if hasattr(self.worldline, "velocity_vector"):
            vmax = np.abs(np.asarray(self.worldline.velocity_vector, dtype=float))
        else:
            span = horizon if horizon is not None else 200.0 * solver.dt
            vmax = self.worldline.max_velocity_components(0.0, span)
        self._warn_if_fast(vmax, 3)

    def _warn_if_fast(self, vabs: np.ndarray, stacklevel: int) -> None:
        speed = float(np.sqrt(np.sum(vabs**2)))
        if speed >= 1.0:
            raise ParameterError(
                f"source speed |v| = {speed!r} c is not allowed: expected |v| < 1 (the speed of light)")
        if self._warned:
            return
        g = self.grid
        for a in range(g.dims):
            lim = self.speed_limits[a]
            if vabs[a] > lim:
                self._warned = True
                warnings.warn(
                    f"source speed along {'xy'[a]} reaches {vabs[a]:.4g} c, above the grid's "
                    f"numerical vacuum phase velocity {lim:.4g} c at the wavenumbers this source "
                    f"excites (cell d{'xy'[a]} = {g.spacing[a]:.4g}, Courant number "
                    f"{self.solver.courant_number:.4g}, shape order {self.shape.order} x{self.shape.scale}): "
                    "expect numerical Cherenkov radiation; use finer cells, a wider shape or a "
                    f"slower source (speed limit {lim:.4g} c)", NumericalCherenkovWarning,
                    stacklevel=stacklevel)
                return

    def _check_speed(self, t: float) -> None:
        if hasattr(self.worldline, "velocity_vector"):
            return      # checked once at bind
        self._warn_if_fast(np.abs(self.worldline.velocity(t)), 5)

    def cell_position(self, t: float) -> np.ndarray:
        """Position in cells from storage index 0 of the integer nodes."""
        r = self.worldline.position(t)
        return (r - np.asarray(self.grid.origin)) / np.asarray(self.grid.spacing)

    def _check_inside(self, t: float) -> None:
        X = self.cell_position(t)
        for a, b in enumerate(self.bounds):
            if b is None:
                continue
            if not (b[0] <= X[a] <= b[1]):
                x_phys = self.worldline.position(t)[a]
                g = self.grid
                lo = g.origin[a] + b[0] * g.spacing[a]
                hi = g.origin[a] + b[1] * g.spacing[a]
                raise GeometryError(
                    f"moving source at {'xy'[a]} = {x_phys:.6g} (t = {t:.6g}) is outside the interior "
                    f"[{lo:.6g}, {hi:.6g}] allowed for its shape (clear of the absorbing layers "
                    "and walls): shorten the run, move the path, or enlarge the grid")

    def _cell_factors(self, i0: int, ni: int) -> np.ndarray | None:
        """Phased-row factors exp(-i theta floor(i_u / nx)) of the unwrapped x indices
        ``i_u = i0 .. i0 + ni - 1`` (complex (ni,)), or None outside a Bloch cell."""
        if self.bloch_theta is None:
            return None
        cells = np.floor_divide(np.arange(i0, i0 + ni), self.grid.shape[0])
        return np.exp(-1j * self.bloch_theta * cells)

    def _phased(self, patch: np.ndarray, i0: int) -> np.ndarray:
        """A deposit patch (ni,) or (ni, nj) on unwrapped x indices from i0, times the
        Bloch factors (unchanged outside a Bloch cell), flattened like :meth:`_flat`."""
        fac = self._cell_factors(i0, patch.shape[0])
        if fac is not None:
            patch = patch * (fac if patch.ndim == 1 else fac[:, None])
        return patch.reshape(-1)

    def _flat(self, i0: int, ni: int, j0: int | None = None, nj: int | None = None) -> np.ndarray:
        g = self.grid
        ii = np.arange(i0, i0 + ni)
        if self.periodic[0]:
            ii = np.mod(ii, g.shape[0])
        if g.dims == 1:
            return ii.astype(np.int64)
        jj = np.arange(j0, j0 + nj)
        if self.periodic[1]:
            jj = np.mod(jj, g.shape[1])
        return (ii[:, None] * g.shape[1] + jj[None, :]).reshape(-1).astype(np.int64)


class MovingCharge(_MovingSource):
    """A line charge (per unit length along z) moving in the plane of a TE_z grid.

    Parameters
    ----------
    charge : float
        Line charge (normalized units, see :mod:`fdtd.units`).
    worldline : WorldLine
        Its trajectory (2 coordinates).
    shape : Shape
        Deposition shape (default quadratic B-spline).
    cancel_row_current : bool
        In a cell periodic along the motion the charge stands for an infinite
        row of charges, whose mean current (q v_x / L per row) is a DC current
        sheet that radiates for ever, an artifact of the periodicity.  With
        this option (default) a steady counter-current equal to minus the
        x-average of the deposited Jx, with the charge's own y-profile, removes
        the k_x = 0 part; it is divergence-free, so Gauss's law is untouched.
        In a Bloch cell with theta != 0 (mod 2 pi) the phased row has no k_x = 0
        part, and a cell-uniform current would not be divergence-free across the
        phased wrap: the option then does nothing.
    """

    def __init__(self, charge: float, worldline: WorldLine, shape: Shape = Shape(3, 2),
                 cancel_row_current: bool = True):
        super().__init__(worldline, shape)
        self.charge = _checks.finite_number("charge", charge)
        self.cancel_row_current = bool(cancel_row_current)

    def bind(self, solver, horizon: float | None = None) -> None:
        pol = solver.model.grid.polarization
        if pol != "te":
            raise ParameterError(
                f"a moving line charge needs the TE_z polarization (in-plane Ex, Ey carry its "
                f"field and current); the grid is {pol!r}")
        self._bind_common(solver, horizon)

    def currents(self, t_half: float):
        t0 = t_half - 0.5 * self.dt
        t1 = t_half + 0.5 * self.dt
        X0 = self.cell_position(t0)
        X1 = self.cell_position(t1)
        self._check_inside(t1)
        self._check_speed(t_half)
        i0, j0, cx, cy = deposit.esirkepov_te(X0[0], X0[1], X1[0], X1[1], self.shape.order,
                                              self.shape.scale)
        dx, dy = self.grid.spacing
        dV = dx * dy
        flat = self._flat(i0, cx.shape[0], j0, cx.shape[1])
        jx = (self.charge * dx / (dV * self.dt)) * cx
        out = [("Ex", flat, self._phased(jx, i0)),
               ("Ey", flat, self._phased((self.charge * dy / (dV * self.dt)) * cy, i0))]
        # theta = 0 only (the Bloch factors are then 1, so the real jx gives the same mean)
        if self.periodic[0] and self.cancel_row_current and self.bloch_theta in (None, 0.0):
            nx, ny = self.grid.shape
            mean_rows = jx.sum(axis=0) / nx                       # x-average of Jx per row
            jj = np.arange(j0, j0 + cx.shape[1])
            if self.periodic[1]:
                jj = np.mod(jj, ny)
            flat_dc = (np.arange(nx)[:, None] * ny + jj[None, :]).reshape(-1).astype(np.int64)
            out.append(("Ex", flat_dc, -np.broadcast_to(mean_rows, (nx, jj.size)).reshape(-1)))
        return out

    def branch_currents(self, t_half: float):
        """For a charge the current itself (one branch; real outside Bloch cells)."""
        return self.currents(t_half)

    def charge_density(self, t: float) -> tuple[np.ndarray, np.ndarray]:
        """(flat indices, density) of the deposited charge on integer nodes at time t
        (complex with the phased-row factors in a Bloch cell)."""
        X = self.cell_position(t)
        i0, j0, w = deposit.charge_nodes_te(X[0], X[1], self.shape.order, self.shape.scale)
        return (self._flat(i0, w.shape[0], j0, w.shape[1]),
                self._phased(self.charge * w / self.grid.cell_volume, i0))


AXES = {"x": 0, "y": 1, "z": 2}
ALLOWED_AXES = {"te": ("x", "y"), "tm": ("z",), "1d": ("y",)}


class MovingDipole(_MovingSource):
    """A point (2D: line; 1D: sheet) electric dipole oscillating in its rest frame.

    Parameters
    ----------
    moment : float
        Rest-frame amplitude p0 (normalized: dipole moment per unit length in
        2D, per unit area in 1D).
    omega0 : float
        Rest-frame angular frequency (normalized), > 0.
    worldline : WorldLine
    axis : {"x", "y", "z"}
        Direction of the rest-frame moment.
    phase : float
        Phase at tau = 0 (radians).
    ramp : float
        Proper-time duration of a smooth (C^2) switch-on of the oscillation.
    shape : Shape
        Deposition shape (default cubic B-spline).
    """

    def __init__(self, moment: float, omega0: float, worldline: WorldLine, axis: str = "y",
                 phase: float = 0.0, ramp: float = 0.0, shape: Shape = Shape(3, 2)):
        super().__init__(worldline, shape)
        self.moment = _checks.finite_number("dipole moment", moment)
        self.omega0 = _checks.positive("dipole omega0", omega0)
        self.axis = _checks.one_of("dipole axis", axis, ("x", "y", "z"))
        self.phase = _checks.finite_number("dipole phase", phase)
        self.ramp = _checks.non_negative("dipole ramp", ramp)

    def bind(self, solver, horizon: float | None = None) -> None:
        pol = solver.model.grid.polarization
        if self.axis not in ALLOWED_AXES[pol]:
            raise ParameterError(
                f"dipole axis = {self.axis!r} cannot be carried by polarization {pol!r}: expected "
                f"one of {list(ALLOWED_AXES[pol])} (TE_z carries in-plane, TM_z out-of-plane "
                "dipoles; 1D a transverse dipole sheet)")
        if pol == "1d":
            if self.worldline.dims != 1:
                raise ParameterError("a 1D dipole sheet moves along x: give a 1-coordinate world line")
        self._bind_common(solver, horizon)

    # -- moment ---------------------------------------------------------
    def rest_moment(self, tau: float) -> float:
        return self.moment * smooth_ramp(tau, self.ramp) * math.cos(self.omega0 * tau + self.phase)

    def lab_moment(self, t: float) -> np.ndarray:
        """Lab-frame dipole vector (3 components x, y, z) at lab time t."""
        tau = self.worldline.proper_time(t)
        p = np.zeros(3)
        p[AXES[self.axis]] = self.rest_moment(tau)
        v = np.zeros(3)
        v[: self.worldline.dims] = self.worldline.velocity(t)
        s2 = float(v @ v)
        if s2 > 0:
            gam = 1.0 / math.sqrt(1.0 - s2)
            vhat = v / math.sqrt(s2)
            p = p - (1.0 - 1.0 / gam) * (p @ vhat) * vhat
        return p

    def lab_moment_complex(self, t: float) -> np.ndarray:
        """Lab dipole vector of the positive-frequency part p0/2 R exp(-i(omega0 tau + phase)).

        The real moment is twice its real part; it carries the normal Doppler
        branch at lab frequencies omega > 0 and the anomalous one at omega < 0.
        """
        tau = self.worldline.proper_time(t)
        p = np.zeros(3, dtype=complex)
        p[AXES[self.axis]] = 0.5 * self.moment * smooth_ramp(tau, self.ramp) * \
            np.exp(-1j * (self.omega0 * tau + self.phase))
        v = np.zeros(3)
        v[: self.worldline.dims] = self.worldline.velocity(t)
        s2 = float(v @ v)
        if s2 > 0:
            gam = 1.0 / math.sqrt(1.0 - s2)
            vhat = v / math.sqrt(s2)
            p = p - (1.0 - 1.0 / gam) * (p @ vhat) * vhat
        return p

    def branch_currents(self, t_half: float):
        """Complex current of the positive-frequency part (list like :meth:`currents`).

        The deposit is linear in the moment: real and imaginary parts are
        deposited separately with the same kernels.
        """
        re = self._currents_for(lambda t: np.real(self.lab_moment_complex(t)), t_half)
        im = self._currents_for(lambda t: np.imag(self.lab_moment_complex(t)), t_half)
        return [(c, flat, a + 1j * b) for (c, flat, a), (_c, _f, b) in zip(re, im)]

    def lab_frequency(self, t: float = 0.0) -> float:
        """omega0 / gamma at time t (the lab oscillation frequency)."""
        return self.omega0 / self.worldline.gamma(t)

    def currents(self, t_half: float):
        self._check_inside(t_half + 0.5 * self.dt)
        self._check_speed(t_half)
        return self._currents_for(self.lab_moment, t_half)

    def block_currents(self, t_levels: np.ndarray):
        """The currents of ``n = len(t_levels) - 1`` successive steps at once, step s running
        from ``t_levels[s]`` to ``t_levels[s + 1]``: a list of ``(component, flat (n, w)
        int64, J (n, w) float64)`` (padding: index 0, value 0), or None where only the
        per-step form applies (a Bloch cell, a world line with a speed ramp).  The same
        deposit as :meth:`currents`, evaluated in compiled code for the whole block."""
        wl = self.worldline
        if self.bloch_theta is not None or not hasattr(wl, "velocity_vector") or wl.ramp > 0:
            return None
        t = np.asarray(t_levels, dtype=float)
        self._check_inside(float(t[0]))
        self._check_inside(float(t[-1]))
        g = self.grid
        origin, spacing = np.asarray(g.origin), np.asarray(g.spacing)
        X = (np.asarray(wl.start) + np.asarray(wl.velocity_vector) * t[:, None] - origin) / spacing
        v = np.zeros(3)
        v[: wl.dims] = wl.velocity_vector
        direction = np.zeros(3)
        direction[AXES[self.axis]] = 1.0
        s2 = float(v @ v)
        if s2 > 0:
            vhat = v / math.sqrt(s2)
            direction = direction - (1.0 - math.sqrt(1.0 - s2)) * (direction @ vhat) * vhat
        tau = t * math.sqrt(1.0 - wl.speed ** 2)
        rest = self.moment * smooth_ramp_array(tau, self.ramp) * np.cos(self.omega0 * tau + self.phase)
        o, sc, dt = self.shape.order, self.shape.scale, self.dt
        n = t.size - 1
        step_cells = np.abs(X[1] - X[0]) if n > 0 else np.zeros(wl.dims)
        if g.polarization == "1d":
            w = deposit.block_width(o, sc, step_cells[0])
            flat, J = np.empty((n, w), np.int64), np.empty((n, w))
            deposit.dipole_1d_block(np.ascontiguousarray(X[:, 0]), rest * direction[1], o, sc, g.spacing[0], dt,
                                    g.shape[0], bool(self.periodic[0]), flat, J)
            return [("Ey", flat, J)]
        w = deposit.block_width(o, sc, step_cells[0]) * deposit.block_width(o, sc, step_cells[1])
        args = (o, sc, g.spacing[0], g.spacing[1], dt, g.shape[0], g.shape[1], bool(self.periodic[0]),
                bool(self.periodic[1]))
        Xc, Yc = np.ascontiguousarray(X[:, 0]), np.ascontiguousarray(X[:, 1])
        flat = np.empty((n, w), np.int64)
        if g.polarization == "te":
            Jx, Jy = np.empty((n, w)), np.empty((n, w))
            deposit.dipole_te_block(Xc, Yc, rest * direction[0], rest * direction[1], *args, flat, Jx, Jy)
            return [("Ex", flat, Jx), ("Ey", flat, Jy)]
        Jz = np.empty((n, w))
        deposit.dipole_tm_block(Xc, Yc, rest * direction[2], *args, flat, Jz)
        return [("Ez", flat, Jz)]

    def _currents_for(self, moment, t_half: float):
        """Deposit the current of the moment function ``moment(t)`` (3-vector) over one step."""
        dt = self.dt
        ts = (t_half - 0.5 * dt, t_half + 0.5 * dt)
        X = np.array([self.cell_position(t) for t in ts])
        p = np.array([moment(t) for t in ts])
        g = self.grid
        o, s = self.shape.order, self.shape.scale
        if g.polarization == "te":
            i0, j0, jx, jy = deposit.dipole_te(X[:, 0].copy(), X[:, 1].copy(), p[:, 0].copy(),
                                               p[:, 1].copy(), o, s, g.spacing[0], g.spacing[1], dt)
            flat = self._flat(i0, jx.shape[0], j0, jx.shape[1])
            return [("Ex", flat, self._phased(jx, i0)), ("Ey", flat, self._phased(jy, i0))]
        if g.polarization == "tm":
            i0, j0, jz = deposit.dipole_tm(X[:, 0].copy(), X[:, 1].copy(), p[:, 2].copy(), o, s,
                                           g.spacing[0], g.spacing[1], dt)
            return [("Ez", self._flat(i0, jz.shape[0], j0, jz.shape[1]), self._phased(jz, i0))]
        i0, jy = deposit.dipole_1d(X[:, 0].copy(), p[:, 1].copy(), o, s, g.spacing[0], dt)
        return [("Ey", self._flat(i0, jy.shape[0]), self._phased(jy, i0))]
