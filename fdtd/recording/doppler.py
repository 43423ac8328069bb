r"""Doppler-resolved work of a uniformly moving source in a periodic cell.

In a cell that is periodic along x with length L = nx dx, the work the
source does on the field per unit time,

.. math:: P = -\langle \textstyle\sum J\cdot\bar E\, dV \rangle_t ,

splits exactly over the wavenumbers k_m = 2 pi m / L (Parseval in x).  The
current of a source moving at v with internal lab frequency Omega
(``omega0/gamma`` for a dipole, 0 for a charge) has, at each k_m, only the
lab frequencies ``omega = k_m v + s Omega`` (s = +1, -1; s = 0 for a charge).
Demodulating the x-transforms of J and of E at exactly those frequencies
over a window T gives

.. math:: P_{m,s} = -\frac{dV}{n_x}\,\mathrm{Re}\,\big(a_{m,s}^*\,e_{m,s}\big),\qquad
          a_{m,s} = \langle e^{i\omega_{m,s} t}\hat J_m(t)\rangle,\;
          e_{m,s} = \langle e^{i\omega_{m,s} t}\hat E_m(t)\rangle .

A point (m, s) with lab frequency ``omega > 0`` belongs to branch s:
s = +1 the normal Doppler branch ``omega - k v = +Omega``, s = -1 the
anomalous branch ``omega - k v = -Omega``.  With ``omega < 0`` it is the
complex conjugate of the point (-m, -s); both are added to the physical
(|omega|) point.  Cross terms between the two lines of one m average out over
a window that holds whole periods of ``pi/Omega``; terms at other
frequencies (switch-on transients, the grid-crossing aliases at
``k_m v + 2 pi p v/dx``) average out over whole transit periods L/v.  The
difference between the sum of P_{m,s} and the ledger's source work over the
same window is reported as the unresolved part.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from fdtd.errors import GeometryError, ParameterError
from fdtd.solver.kernels import demod


@dataclass
class DopplerSpectrum:
    """Result of :class:`DopplerWorkRecorder` (normalized units).

    ``kx`` (n,) physical wavenumbers (sign: along the motion is positive),
    ``omega`` (n,) lab frequencies (> 0), ``branch`` (n,) +1 normal, -1
    anomalous, 0 charge; ``power`` (n,) work rate per point (power per unit
    length in 2D).  ``total`` = sum of power, ``source_work_rate`` the ledger's
    mean rate over the window, ``unresolved`` their difference.
    """

    kx: np.ndarray
    omega: np.ndarray
    branch: np.ndarray
    power: np.ndarray
    window: float
    source_work_rate: float
    speed: float
    internal_frequency: float
    meta: dict = field(default_factory=dict)
    halves: tuple | None = None      # (power of the first half-window, of the second), same points

    # -- mechanics -------------------------------------------------------
    def _moment(self, power, weight) -> float:
        with np.errstate(divide="ignore", invalid="ignore"):
            w = np.where(self.omega > 0, weight / np.where(self.omega > 0, self.omega, 1.0), 0.0)
        return float(np.sum(power * w))

    @property
    def drag_force(self) -> float:
        """x-momentum handed to the field per unit time, sum P k_x / omega (normalized force).

        It is the force that keeps the source at constant speed (positive: the
        field drags the source back)."""
        return self._moment(self.power, self.kx)

    @property
    def motion_power(self) -> float:
        """Power drawn from the motion, v * drag_force."""
        return self.speed * self.drag_force

    @property
    def internal_power(self) -> float:
        """Lab power drawn from the internal oscillation, sum P s Omega / omega.

        Normal-branch points drain the oscillator (> 0), anomalous ones pump it
        (< 0).  total = motion_power + internal_power.  The rest-frame rate of
        change of the oscillator's energy is -gamma^2 times this (DEVELOPERS.md).
        """
        return self._moment(self.power, self.branch * self.internal_frequency)

    # -- error estimates ---------------------------------------------------
    def error(self, figure: str = "total") -> float:
        """Estimated error of a figure ("total", "normal", "anomalous", "drag_force",
        "internal_power"): the larger of the spread between the two half-windows
        and, for the total, the unresolved part of the ledger's work."""
        val = getattr(self, figure)
        est = 0.0
        if self.halves is not None:
            for hp in self.halves:
                twin = DopplerSpectrum(self.kx, self.omega, self.branch, hp, self.window,
                                       self.source_work_rate, self.speed, self.internal_frequency)
                est = max(est, abs(getattr(twin, figure) - val))
        if figure == "total":
            est = max(est, abs(self.unresolved))
        return est

    def summary(self) -> dict:
        """Figures with error estimates (normalized units)."""
        out = {}
        for name in ("total", "normal", "anomalous", "drag_force", "motion_power", "internal_power"):
            out[name] = {"value": getattr(self, name),
                         "error": self.error(name) if name != "motion_power"
                         else self.speed * self.error("drag_force")}
        out["unresolved"] = {"value": self.unresolved, "error": 0.0}
        return out

    @property
    def total(self) -> float:
        return float(self.power.sum())

    def branch_power(self, b: int) -> float:
        return float(self.power[self.branch == b].sum())

    @property
    def normal(self) -> float:
        return self.branch_power(1)

    @property
    def anomalous(self) -> float:
        return self.branch_power(-1)

    @property
    def unresolved(self) -> float:
        return self.source_work_rate - self.total


class DopplerWorkRecorder:
    """Record the Doppler-resolved work of one moving source (periodic-x cell).

    Parameters
    ----------
    solver : Solver
        Its x axis must be periodic.
    source : MovingCharge or MovingDipole
        Moving uniformly along +x (after its ramp) at speed ``speed``.
    speed : float
        v (units of c).
    internal_frequency : float
        Lab frequency Omega of the internal oscillation (0 for a charge).
    rows : sequence of int, optional
        Storage rows j the source's current touches (default: from its
        position and shape).
    m_max : int, optional
        Largest |m| kept (default nx // 2).
    start : float
        Lab time at which recording starts (skip the switch-on).
    every : int
        Record every that many steps (default 1).  Refused if the sampling would
        alias the highest recorded Doppler line (omega dt every >= pi).
    duration : float, optional
        Length of the recording window.  With it the demodulation uses a
        Hann taper ``sin^2(pi (t - start)/duration)``: exact for the Doppler
        lines themselves, while leakage from free waves at nearby frequencies
        (for instance waves trapped at grazing angles in a periodic cell,
        which never reach the absorbing layers) falls as ``1/T^3`` instead of
        ``1/T``.  Without it, a flat window up to the last recorded step.
    """

    def __init__(self, solver, source, speed: float, internal_frequency: float = 0.0,
                 rows=None, m_max: int | None = None, start: float = 0.0,
                 duration: float | None = None, every: int = 1):
        g = solver.model.grid
        if g.dims != 2 or not solver.model.periodic[0]:
            if not (g.dims == 1 and solver.model.periodic[0]):
                raise ParameterError("DopplerWorkRecorder needs a grid periodic along x")
        self.solver = solver
        self.source = source
        self.speed = float(speed)
        self.Omega = float(internal_frequency)
        self.start = float(start)
        self.duration = None if duration is None else float(duration)
        nx = g.shape[0]
        if self.duration is not None:
            slowest = max(nx * g.spacing[0] / self.speed if self.speed > 0 else 0.0,
                          2 * math.pi / self.Omega if self.Omega > 0 else 0.0)
            if not self.duration >= slowest:
                raise ParameterError(
                    f"recording duration = {duration!r} is shorter than one period of the slowest "
                    f"component it must resolve ({slowest:.6g}: the transit time L/v or 2 pi/Omega); "
                    "record over several whole transits")
        self.weight_sum = 0.0
        self.nx = nx
        self.L = nx * g.spacing[0]
        self.comps = g.e_components
        if g.dims == 2:
            if rows is None:
                Y = source.cell_position(0.0)[1]
                hs = source.shape.half_support
                rows = np.arange(int(math.floor(Y - hs)) - 1, int(math.ceil(Y + hs)) + 2)
            self.rows = np.mod(np.asarray(rows, dtype=np.int64), g.shape[1])
            self._row_pos = np.full(g.shape[1], -1, dtype=np.int64)
            self._row_pos[self.rows] = np.arange(self.rows.size)
        else:
            self.rows = np.zeros(1, dtype=np.int64)
        m_max = nx // 2 if m_max is None else int(m_max)
        msig = np.fft.fftfreq(nx, d=1.0 / nx).astype(int)
        self.m_index = np.nonzero(np.abs(msig) <= m_max)[0]
        self.m = msig[self.m_index]
        self.k = 2 * np.pi * self.m / self.L
        self.lines = (0,) if self.Omega == 0.0 else (1, -1)
        self._k_speed = self.k * self.speed
        self._line_freq = np.array([s_ * self.Omega for s_ in self.lines])
        # node positions along x (the same for every component up to a constant phase,
        # which cancels in J* E): use integer node positions
        self._x_of_i = np.arange(nx) * g.spacing[0]
        # phase table for the sparse transform of the current (bounded size)
        self._table = (np.exp(-1j * np.outer(self._x_of_i, self.k)) if nx * self.k.size <= 4_000_000
                       else None)
        self._src_index = np.where(self.m_index <= nx // 2, self.m_index, nx - self.m_index).astype(np.int64)
        self._conj = self.m_index > nx // 2
        self.every = int(every)
        if self.every < 1:
            raise ParameterError(f"every = {every!r}: expected an integer >= 1")
        w_max = float(np.max(np.abs(self.k)) * self.speed + self.Omega)
        if w_max * solver.dt * self.every >= math.pi:
            raise ParameterError(
                f"every = {every} samples the highest Doppler line (omega = {w_max:.4g}) below its "
                f"Nyquist rate: use every < {math.pi / (w_max * solver.dt):.3g} or a smaller m_max")
        shape = (len(self.lines), len(self.comps), self.rows.size, self.m.size)
        self.n_samples = 0
        self.t_first = None
        self.t_last = None
        self.work0 = None
        self._e0 = None
        self._work_prev = None
        self.weighted_work = 0.0
        self.weighted_time = 0.0
        n_win = 3 if self.duration is not None else 1
        self.A = np.zeros((n_win,) + shape, dtype=complex)
        self.B = np.zeros((n_win,) + shape, dtype=complex)
        self.wsum = np.zeros(n_win)
        solver.observers.append(self)

    # -- hooks -----------------------------------------------------------
    def _rows_of(self, arr):
        return arr[:, self.rows] if arr.ndim == 2 else arr.reshape(-1, 1)

    def before_step(self, solver) -> None:
        t_half = (solver.step_count + 0.5) * solver.dt
        if t_half < self.start or (self.duration is not None and t_half > self.start + self.duration) \
                or solver.step_count % self.every:
            self._e0 = None
            return
        self._e0 = [self._rows_of(solver.fields[c]).copy() for c in self.comps]
        self._work_prev = solver.source_work
        if self.work0 is None:
            self.work0 = solver.source_work
            self.t_first = solver.step_count * solver.dt

    def after_step(self, solver, injections) -> None:
        if self._e0 is None:
            return
        t = (solver.step_count - 0.5) * solver.dt      # t_{n+1/2} of the step just taken
        g = solver.model.grid
        if self.duration is not None:
            x = (t - self.start) / self.duration
            # Hann tapers on the whole window and on each half (for the error estimate)
            weights = np.array([math.sin(math.pi * x) ** 2,
                                math.sin(2 * math.pi * x) ** 2 if x < 0.5 else 0.0,
                                math.sin(2 * math.pi * x) ** 2 if x >= 0.5 else 0.0])
        else:
            weights = np.ones(1)
        phase = np.exp(1j * (self._k_speed[None, :] + self._line_freq[:, None]) * t)
        # E-bar on the recorded rows, contiguous along x for the transform
        ebar = np.stack([0.5 * (self._e0[ci] + self._rows_of(solver.fields[c])).T
                         for ci, c in enumerate(self.comps)])           # (comp, rows, nx)
        Epos = np.fft.rfft(ebar, axis=-1)
        Jhat = np.zeros((len(self.comps), self.rows.size, self.k.size), dtype=complex)
        for comp, flat, vals, _e in injections:
            if comp not in self.comps or not flat.size:
                continue
            ci = self.comps.index(comp)
            if g.dims == 2:
                ii, jj = np.divmod(flat, g.shape[1])
                pos = self._row_pos[jj]
                if np.any(pos < 0) and np.any(vals[pos < 0] != 0):
                    raise ParameterError("DopplerWorkRecorder: the source current left the "
                                         "recorded rows; give rows= covering its path")
            else:
                ii, pos = flat, np.zeros(flat.size, dtype=np.int64)
            # no BLAS here: its own threads would fight the kernel's OpenMP threads
            if self._table is not None:
                demod.sparse_dft_table(Jhat[ci], ii, pos, vals.astype(float), self._table)
            else:
                demod.sparse_dft(Jhat[ci], ii, pos, vals.astype(float), self.k, self._x_of_i)
        demod.accumulate_half(self.A, self.B, Jhat, Epos, self._src_index, self._conj, phase, weights)
        w = weights[0]
        self.wsum += weights
        self.n_samples += 1
        self.weight_sum += w
        self.t_last = solver.step_count * solver.dt
        self.work_last = solver.source_work
        # the ledger's work of this step, with the same taper (removes the 2 Omega
        # swing of the reactive near-field energy that a flat window would keep)
        self.weighted_work += w * (solver.source_work - self._work_prev)
        self.weighted_time += w * solver.dt

    # -- result -----------------------------------------------------------
    def result(self) -> DopplerSpectrum:
        if self.n_samples == 0:
            raise ParameterError("DopplerWorkRecorder: nothing recorded (start time after the run?)")
        dV = self.solver.model.grid.cell_volume
        powers = []
        for wi in range(self.A.shape[0]):
            W = self.wsum[wi]
            powers.append(-(dV / self.nx) * np.real(np.conj(self.A[wi]) * self.B[wi]).sum(axis=(1, 2))
                          / max(W, 1e-300) ** 2)
        P = powers[0]   # (lines, m)
        kx, om, br, pw = [], [], [], []
        for a, s in enumerate(self.lines):
            w = self.k * self.speed + s * self.Omega
            pos = w >= 0
            kx.append(np.where(pos, self.k, -self.k))
            om.append(np.abs(w))
            br.append(np.where(pos, s, -s))
            pw.append(P[a])
        kx, om, br, pw = map(np.concatenate, (kx, om, br, pw))
        # combine each physical point with its conjugate twin
        key = np.round(kx * 1e9).astype(np.int64) * 3 + br
        uniq, inv = np.unique(key, return_inverse=True)

        def combine(values):
            out = np.zeros(uniq.size)
            np.add.at(out, inv, values)
            return out

        out_p = combine(pw)
        first = np.zeros(uniq.size, dtype=int)
        first[inv[::-1]] = np.arange(inv.size)[::-1]
        window = self.t_last - self.t_first
        rate = self.weighted_work / self.weighted_time if self.weighted_time > 0 else float("nan")
        order = np.lexsort((kx[first], br[first]))
        halves = None
        if len(powers) == 3 and self.wsum[1] > 0 and self.wsum[2] > 0:
            halves = tuple(combine(np.concatenate([powers[wi][a] for a in range(len(self.lines))]))[order]
                           for wi in (1, 2))
        return DopplerSpectrum(kx[first][order], om[first][order], br[first][order], out_p[order],
                               window, rate, self.speed, self.Omega,
                               {"samples": self.n_samples, "t_first": self.t_first, "t_last": self.t_last,
                                "flat_work_rate": (self.work_last - self.work0) / window},
                               halves=halves)


def _taper_weights(t: float, start: float, duration: float | None) -> np.ndarray:
    """Hann weights on the whole window and on each half (or a flat weight)."""
    if duration is None:
        return np.ones(1)
    x = (t - start) / duration
    return np.array([math.sin(math.pi * x) ** 2,
                     math.sin(2 * math.pi * x) ** 2 if x < 0.5 else 0.0,
                     math.sin(2 * math.pi * x) ** 2 if x >= 0.5 else 0.0])


class DopplerFluxRecorder:
    """Doppler-resolved Poynting flux through horizontal grid lines of a periodic-x cell.

    For each storage row ``jb`` of the tangential E component, the exact
    discrete upward flux across the face between E row jb and H row jb (the
    face formula of the energy ledger, DEVELOPERS.md), per unit length along z,

        TE:  F = -dx sum_i Ebar_x(i, jb) H_z(i, jb),    TM:  F = dx sum_i Ebar_z(i, jb) H_x(i, jb),

    is split over the Doppler points (k_m, omega = k_m v + s Omega) by the same
    demodulation as :class:`DopplerWorkRecorder`.  Positive = upward (+y).
    """

    def __init__(self, solver, speed: float, internal_frequency: float, rows, start: float = 0.0,
                 duration: float | None = None, m_max: int | None = None, every: int = 1):
        g = solver.model.grid
        if g.dims != 2 or not solver.model.periodic[0]:
            raise ParameterError("DopplerFluxRecorder needs a 2D grid periodic along x")
        rows = np.atleast_1d(np.asarray(rows, dtype=np.int64))
        if rows.min() < 0 or rows.max() >= g.shape[1]:
            raise GeometryError(f"flux rows {rows.tolist()} outside the grid rows 0..{g.shape[1] - 1}")
        self.solver = solver
        self.rows = rows
        self.speed = float(speed)
        self.Omega = float(internal_frequency)
        self.start = float(start)
        self.duration = None if duration is None else float(duration)
        nx = g.shape[0]
        self.nx = nx
        self.L = nx * g.spacing[0]
        self.ec, self.hc, self.sign = ("Ex", "Hz", -1.0) if g.polarization == "te" else ("Ez", "Hx", 1.0)
        m_max = nx // 2 if m_max is None else int(m_max)
        msig = np.fft.fftfreq(nx, d=1.0 / nx).astype(int)
        self.m_index = np.nonzero(np.abs(msig) <= m_max)[0]
        self.k = 2 * np.pi * msig[self.m_index] / self.L
        self.lines = (0,) if self.Omega == 0.0 else (1, -1)
        n_win = 3 if self.duration is not None else 1
        self._line_freq = np.array([s_ * self.Omega for s_ in self.lines])
        self._src_index = np.where(self.m_index <= nx // 2, self.m_index, nx - self.m_index).astype(np.int64)
        self._conj = self.m_index > nx // 2
        self.every = int(every)
        w_max = float(np.max(np.abs(self.k)) * self.speed + self.Omega)
        if self.every < 1 or w_max * solver.dt * self.every >= math.pi:
            raise ParameterError(
                f"every = {every!r}: expected an integer >= 1 below the Nyquist limit "
                f"{math.pi / (w_max * solver.dt):.3g} of the highest Doppler line")
        self._A5 = np.zeros((n_win, len(self.lines), 1, rows.size, self.m_index.size), dtype=complex)
        self._B5 = np.zeros_like(self._A5)
        self.A = self._A5[:, :, 0]
        self.B = self._B5[:, :, 0]
        self.wsum = np.zeros(n_win)
        self._e0 = None
        solver.observers.append(self)

    def before_step(self, solver) -> None:
        t_half = (solver.step_count + 0.5) * solver.dt
        inside = t_half >= self.start and (self.duration is None or t_half <= self.start + self.duration)
        inside = inside and solver.step_count % self.every == 0
        self._e0 = solver.fields[self.ec][:, self.rows].copy() if inside else None

    def after_step(self, solver, injections) -> None:
        if self._e0 is None:
            return
        t = (solver.step_count - 0.5) * solver.dt
        weights = _taper_weights(t, self.start, self.duration)
        ebar = 0.5 * (self._e0 + solver.fields[self.ec][:, self.rows]).T
        Eh = demod.half_spectrum_to_full(np.fft.rfft(ebar, axis=-1), self.m_index, self.nx)
        Hpos = np.fft.rfft(np.ascontiguousarray(solver.fields[self.hc][:, self.rows].T), axis=-1)
        phase = np.exp(1j * (self.k[None, :] * self.speed + self._line_freq[:, None]) * t)
        demod.accumulate_half(self._A5, self._B5, Eh[None], Hpos[None], self._src_index, self._conj,
                              phase, weights)
        self.wsum += weights

    def result(self) -> list[DopplerSpectrum]:
        """One :class:`DopplerSpectrum` per row; its ``power`` holds the upward flux."""
        if self.wsum[0] == 0:
            raise ParameterError("DopplerFluxRecorder: nothing recorded (start time after the run?)")
        dx = self.solver.model.grid.spacing[0]
        out = []
        for r in range(self.rows.size):
            per_window = []
            for wi in range(self.A.shape[0]):
                W = max(self.wsum[wi], 1e-300)
                per_window.append(self.sign * (dx / self.nx)
                                  * np.real(np.conj(self.A[wi, :, r]) * self.B[wi, :, r]) / W**2)
            kx, om, br = [], [], []
            for a, s in enumerate(self.lines):
                w = self.k * self.speed + s * self.Omega
                pos = w >= 0
                kx.append(np.where(pos, self.k, -self.k))
                om.append(np.abs(w))
                br.append(np.where(pos, s, -s))
            kx, om, br = map(np.concatenate, (kx, om, br))
            key = np.round(kx * 1e9).astype(np.int64) * 3 + br
            uniq, inv = np.unique(key, return_inverse=True)

            def combine(vals):
                o = np.zeros(uniq.size)
                np.add.at(o, inv, vals)
                return o

            first = np.zeros(uniq.size, dtype=int)
            first[inv[::-1]] = np.arange(inv.size)[::-1]
            order = np.lexsort((kx[first], br[first]))
            flux = [combine(np.concatenate(list(pw)))[order] for pw in per_window]
            halves = (flux[1], flux[2]) if len(flux) == 3 else None
            out.append(DopplerSpectrum(kx[first][order], om[first][order], br[first][order], flux[0],
                                       float("nan"), float("nan"), self.speed, self.Omega,
                                       {"row": int(self.rows[r])}, halves=halves))
        return out


class SteadyStateWarning(UserWarning):
    """A run did not settle to the requested tolerance within the allowed time."""


def run_until_steady(solver, period: float, tol: float = 2e-3, max_time: float = 1e4,
                     min_blocks: int = 3):
    """Advance until the dissipated power settles; return (steady, block_rates).

    The run advances in blocks of ``period`` (a transit time L/v or a multiple
    of it).  In each block the Hann-weighted mean of the power that leaves the
    field for good, outflow into the absorbing layers plus heat into the bath
    (from the energy ledger), is formed: unlike the source's work it has almost
    no share of the large reactive near-field exchange at 2 Omega.  Steady =
    the last ``min_blocks`` rates agree with their mean within ``tol``
    (relative) -- precisely, the means of the last two groups of ``min_blocks``
    blocks agree within ``tol``.  If ``max_time`` passes first, a
    :class:`SteadyStateWarning` says what to change, and the results recorded
    afterwards are partial.
    """
    period = _positive("period", period)
    if solver.ledger is None:
        raise ParameterError("run_until_steady needs the energy ledger (Solver(..., ledger=True))")
    led = solver.ledger
    rates = []

    def dissipated():
        return led.outflow + float(solver.bath_rows.sum()) * solver.model.grid.cell_volume / (4 * solver.dt)

    while True:
        steps = max(int(round(period / solver.dt)), 1)
        ws = np.empty(steps)
        prev = dissipated()
        for n in range(steps):
            solver.step()
            now = dissipated()
            ws[n] = now - prev
            prev = now
        x = (np.arange(steps) + 0.5) / steps
        w = np.sin(np.pi * x) ** 2
        rates.append(float(np.sum(w * ws) / (np.sum(w) * solver.dt)))
        if len(rates) >= 2 * min_blocks:
            # means of the last two groups of blocks: tolerates a periodic beat of up to
            # min_blocks blocks (a slow exchange with a weakly damped free wave)
            a = float(np.mean(rates[-2 * min_blocks:-min_blocks]))
            b = float(np.mean(rates[-min_blocks:]))
            if abs(a - b) <= tol * max(abs(a), abs(b), 1e-300):
                return True, rates
        if solver.time >= max_time:
            import warnings

            last = np.array(rates[-min_blocks:])
            spread = float(np.max(np.abs(last - last.mean())) / max(abs(last.mean()), 1e-300))
            warnings.warn(
                f"the dissipated power did not settle to tol = {tol:g} by t = {solver.time:.6g} "
                f"(spread of the last {min_blocks} blocks {spread:.2e}): allow more time (max_time), "
                "add loss, or accept a larger tol; results recorded from here are partial",
                SteadyStateWarning, stacklevel=2)
            return False, rates


def _positive(name, value):
    if not (value > 0 and math.isfinite(value)):
        raise ParameterError(f"{name} = {value!r} is not allowed: expected a finite number > 0")
    return float(value)


class PassageWorkRecorder:
    """Doppler-resolved work of a uniformly moving source in an open (non-periodic) domain.

    In a steady state of uniform motion the time-averaged work rate is
    ``(v / dx) <E_col>``, with E_col the work done on the nodes of one grid
    column while the source passes it, averaged over columns.  The average
    must run over columns whose passage times span several periods of the
    internal oscillation: a single column is passed in a fraction of a period,
    and the dipole's large reactive exchange with its near field (at 2 Omega)
    cancels only between columns.  The recorder therefore takes every column
    of the span [x_start, x_stop] with a Hann weight across the span.

    For each column it keeps E-bar and the source's complex branch current J+
    (the exp(-i omega0 tau) part, :meth:`MovingDipole.branch_currents`) on the
    rows of the path, over +-``half_window`` (length) around the passage, and
    splits E_col over lab frequency by Parseval in time:

        E_col = -2 dV dt Re sum_t J+ . Ebar = -(2 dV dt / N) Re sum_q Jhat+(q) conj(Ebar_hat(q)).

    For a dipole q > 0 is the normal branch (k_x = (omega - Omega)/v), q < 0 the
    anomalous one (at |omega|, k_x = (|omega| + Omega)/v); for a charge the
    current is real (J+ is J itself, the formula's factor 2 is undone) and the
    negative frequencies are folded onto the positive ones.  The frequency
    resolution is 2 pi v / (2 half_window).
    """

    def __init__(self, solver, source, speed: float, internal_frequency: float, x_start: float,
                 x_stop: float, half_window: float, rows=None, t_pass0: float = 0.0):
        g = solver.model.grid
        if g.dims != 2:
            raise ParameterError("PassageWorkRecorder is for 2D grids")
        self.solver = solver
        self.source = source
        self.speed = _positive("speed", speed)
        self.Omega = float(internal_frequency)
        self.half_window = _positive("half_window", half_window)
        comp0 = g.e_components[0]
        ia = g.index_of(comp0, (x_start, 0.0))[0]
        ib = g.index_of(comp0, (x_stop, 0.0))[0]
        if not (0 <= ia < ib < g.shape[0]):
            raise GeometryError(
                f"passage span x = [{x_start!r}, {x_stop!r}] does not fit inside the grid "
                f"[{g.origin[0]:.6g}, {g.origin[0] + g.extent[0]:.6g}] with x_start < x_stop")
        if self.Omega > 0:
            span_t = (ib - ia) * g.spacing[0] / self.speed
            if span_t < 2 * math.pi / self.Omega:
                raise ParameterError(
                    f"passage span of {x_stop - x_start:.6g} is passed in {span_t:.6g}, less than one "
                    f"internal period 2 pi/Omega = {2 * math.pi / self.Omega:.6g}: widen the span")
        self.cols = list(range(ia, ib + 1))
        x = (np.arange(len(self.cols)) + 0.5) / len(self.cols)
        self.col_weights = np.sin(np.pi * x) ** 2
        if rows is None:
            Y = source.cell_position(0.0)[1]
            hs = source.shape.half_support
            rows = np.arange(int(math.floor(Y - hs)) - 1, int(math.ceil(Y + hs)) + 2)
        self.rows = np.asarray(rows, dtype=np.int64)
        self._row_pos = np.full(g.shape[1], -1, dtype=np.int64)
        self._row_pos[self.rows] = np.arange(self.rows.size)
        self.comps = g.e_components
        x0 = source.worldline.position(t_pass0)[0]
        xc = g.axis_coordinates(comp0, 0)
        self.t_pass = np.array([t_pass0 + (xc[c] - x0) / self.speed for c in self.cols])
        tw = self.half_window / self.speed
        self.n_win = int(round(2 * tw / solver.dt))
        self.J = np.zeros((len(self.cols), self.n_win, len(self.comps), self.rows.size), dtype=complex)
        self.E = np.zeros((len(self.cols), self.n_win, len(self.comps), self.rows.size))
        self.first_step = np.array([int(math.ceil((tp - tw) / solver.dt - 0.5)) for tp in self.t_pass])
        self.filled = np.zeros(len(self.cols), dtype=int)
        self._e0 = None
        solver.observers.append(self)

    def _active(self, n):
        k = n - self.first_step
        return np.nonzero((k >= 0) & (k < self.n_win))[0]

    def before_step(self, solver) -> None:
        act = self._active(solver.step_count)
        if act.size == 0:
            self._e0 = None
            return
        cols = np.array(self.cols)[act]
        self._e0 = (act, np.stack([solver.fields[k][cols][:, self.rows] for k in self.comps], axis=1))

    def after_step(self, solver, injections) -> None:
        if self._e0 is None:
            return
        act, e0 = self._e0
        n = solver.step_count - 1
        t = (n + 0.5) * solver.dt
        cols = np.array(self.cols)[act]
        e1 = np.stack([solver.fields[k][cols][:, self.rows] for k in self.comps], axis=1)
        slot = n - self.first_step[act]
        self.E[act, slot] = 0.5 * (e0 + e1)
        ny = solver.model.grid.shape[1]
        col_pos = {c: a for a, c in zip(act, cols)}
        for comp, flat, vals in self.source.branch_currents(t):
            ci = self.comps.index(comp)
            ii, jj = np.divmod(flat, ny)
            for i_node, j_node, val in zip(ii, jj, vals):
                a = col_pos.get(int(i_node))
                r = self._row_pos[j_node]
                if a is not None and r >= 0:
                    self.J[a, n - self.first_step[a], ci, r] += val
        self.filled[act] += 1

    def result(self) -> DopplerSpectrum:
        """Spectrum (work rate per frequency bin, positive omega), Hann-averaged over the span."""
        if not np.all(self.filled == self.n_win):
            raise ParameterError(
                f"PassageWorkRecorder: {int(np.sum(self.filled < self.n_win))} of {len(self.cols)} "
                "columns were not passed completely: run longer (or shrink half_window)")
        dt = self.solver.dt
        dV = self.solver.model.grid.cell_volume
        dx = self.solver.model.grid.spacing[0]
        N = self.n_win
        w = 2 * np.pi * np.fft.fftfreq(N, dt)
        Jh = np.fft.ifft(self.J, axis=1) * N          # exp(+i omega t) convention
        Eh = np.fft.ifft(self.E, axis=1) * N
        per_col = -(2 * dV * dt / N) * np.real(np.sum(Jh * np.conj(Eh), axis=(2, 3)))   # (cols, q)
        if self.Omega == 0.0:
            per_col = per_col / 2.0                    # J+ = J for a charge: undo the factor 2
        spec = (self.col_weights[:, None] * per_col).sum(axis=0) / self.col_weights.sum()
        spec = spec * self.speed / dx
        if self.Omega == 0.0:
            # a real current: the negative-frequency half mirrors the positive one
            pos = w > 0
            kx, om, br = w[pos] / self.speed, w[pos], np.zeros(pos.sum(), dtype=int)
            pw = 2.0 * spec[pos]
        else:
            keep = w != 0
            w, spec = w[keep], spec[keep]
            br = np.where(w > 0, 1, -1)
            om = np.abs(w)
            kx = np.where(w > 0, (w - self.Omega) / self.speed, (om + self.Omega) / self.speed)
            pw = spec
        order = np.lexsort((kx, br))
        return DopplerSpectrum(kx[order], om[order], br[order], pw[order],
                               2 * self.half_window / self.speed, float("nan"), self.speed, self.Omega,
                               {"columns": len(self.cols)})
