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
        change of the oscillator's energy is -gamma^2 times this (docs/theory/frames-and-drag.md).
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


def _unmix(S: np.ndarray, csum: np.ndarray, wsum: np.ndarray) -> np.ndarray:
    """Separate the two Doppler lines of every harmonic exactly.

    ``S`` (n_windows, 2, ...) holds the window sums ``sum_t w_t e^{i omega_s t} X(t)`` of a
    signal X whose harmonic carries the lines omega_+ and omega_- = omega_+ - 2 Omega.  Each
    sum also picks up the other line times ``c = sum_t w_t e^{2 i Omega t} / sum_t w_t``:
    ``S_+ = W (x_+ + c x_-)``, ``S_- = W (x_- + conj(c) x_+)``.  Solving the 2x2 system removes
    the cross terms whatever the window length (docs/theory/doppler-work.md, "Windows");
    with a window of whole beat periods pi/Omega, c = 0 and this changes nothing."""
    out = S.copy()
    for wi in range(S.shape[0]):
        if wsum[wi] <= 0:
            continue
        c = csum[wi] / wsum[wi]
        det = 1.0 - abs(c) ** 2
        out[wi, 0] = (S[wi, 0] - c * S[wi, 1]) / det
        out[wi, 1] = (S[wi, 1] - np.conj(c) * S[wi, 0]) / det
    return out


class _Checkpointable:
    """Recorders whose accumulators a checkpoint saves and a resumed run restores bit for bit.

    ``_STATE`` names the attributes (arrays, numbers or None); checkpoints are taken
    between steps, so per-step scratch values are not part of it."""

    _STATE: tuple = ()

    def checkpoint_state(self) -> dict:
        return {name: getattr(self, name) for name in self._STATE}

    def restore_state(self, state: dict) -> None:
        for name in self._STATE:
            cur, new = getattr(self, name), state[name]
            if isinstance(cur, np.ndarray) and new is not None and np.shape(new) == cur.shape:
                cur[...] = new
            else:
                setattr(self, name, new)


class DopplerWorkRecorder(_Checkpointable):
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

    _STATE = ("A", "B", "wsum", "csum", "n_samples", "weight_sum", "t_first", "t_last", "work0", "work_last",
              "weighted_work", "weighted_time")

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
            if not self.duration >= slowest * (1 - 1e-9):
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
        # a Bloch cell (complex fields, u(x + L) = e^{i k0 L} u(x)) samples k0 + 2 pi m / L;
        # each harmonic is then its own point (no conjugate twin in the same run)
        self.complex = bool(getattr(solver, "complex_fields", False))
        bloch = solver.model.bloch if self.complex else None
        self.k0 = bloch.wrap_phase / self.L if bloch is not None else 0.0
        self.k = self.k0 + 2 * np.pi * self.m / self.L
        self.lines = (0,) if self.Omega == 0.0 else (1, -1)
        self._k_speed = self.k * self.speed
        self._line_freq = np.array([s_ * self.Omega for s_ in self.lines])
        # node positions along x (the same for every component up to a constant phase,
        # which cancels in J* E): use integer node positions
        self._x_of_i = np.arange(nx) * g.spacing[0]
        self._bloch_phase = np.exp(-1j * self.k0 * self._x_of_i) if self.complex else None
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
        self.work_last = None
        self._e0 = None
        self._work_prev = None
        self.weighted_work = 0.0
        self.weighted_time = 0.0
        n_win = 3 if self.duration is not None else 1
        self.A = np.zeros((n_win,) + shape, dtype=complex)
        self.B = np.zeros((n_win,) + shape, dtype=complex)
        self.wsum = np.zeros(n_win)
        self.csum = np.zeros(n_win, dtype=complex)     # sum_t w_t exp(2 i Omega t): line cross-talk
        # samples every ``every`` steps counted from the window's first step, so that a window
        # of whole sampling intervals is sampled uniformly (exact nulls of the Hann taper)
        self._anchor = int(round(self.start / solver.dt))
        # real 2D fields: the recorded rows gathered in compiled code into kept buffers
        self._fast_rows = g.dims == 2 and not self.complex
        if self._fast_rows:
            self._e0_buf = np.empty((len(self.comps), self.rows.size, nx))
            self._ebar_buf = np.empty((len(self.comps), self.rows.size, nx))
        solver.observers.append(self)

    # -- hooks -----------------------------------------------------------
    def _rows_of(self, arr):
        return arr[:, self.rows] if arr.ndim == 2 else arr.reshape(-1, 1)

    def before_step(self, solver) -> None:
        t_half = (solver.step_count + 0.5) * solver.dt
        if t_half < self.start or (self.duration is not None and t_half > self.start + self.duration) \
                or (solver.step_count - self._anchor) % self.every:
            self._e0 = None
            return
        if self._fast_rows:
            for ci, c in enumerate(self.comps):
                demod.rows_transposed(solver.fields[c], self.rows, self._e0_buf[ci])
            self._e0 = self._e0_buf
        else:
            self._e0 = [self._rows_of(solver.fields[c]).copy() for c in self.comps]
        self._work_prev = solver.source_work
        if self.work0 is None:
            self.work0 = solver.source_work
            self.t_first = solver.step_count * solver.dt

    # -- blocks of steps (1D: fdtd.solver.block1d) --------------------------
    @property
    def accepts_blocks(self) -> bool:
        return self.solver.model.grid.dims == 1 and not self.complex

    def _weights(self, t):
        """Taper weights (..., n_w) at times t (array)."""
        t = np.asarray(t, dtype=float)
        if self.duration is None:
            return np.ones(t.shape + (1,))
        x = (t - self.start) / self.duration
        s2 = np.sin(2 * np.pi * x) ** 2
        return np.stack([np.sin(np.pi * x) ** 2, np.where(x < 0.5, s2, 0.0), np.where(x >= 0.5, s2, 0.0)],
                        axis=-1)

    def block_samples(self, solver, m: int) -> np.ndarray:
        """Which of the next ``m`` steps this recorder samples (the test of :meth:`before_step`)."""
        return self._sampled(solver.step_count, m)

    def _sampled(self, step0: int, m: int) -> np.ndarray:
        n = step0 + np.arange(m)
        t_half = (n + 0.5) * self.solver.dt
        ok = (t_half >= self.start) & ((n - self._anchor) % self.every == 0)
        if self.duration is not None:
            ok &= t_half <= self.start + self.duration
        return ok

    def after_block(self, solver, block) -> None:
        """Demodulate the sampled steps of a block (:class:`fdtd.solver.block1d.Block`)."""
        mine = self._sampled(block.step0, block.m)
        if not mine.any():
            return
        dt = solver.dt
        rows = np.cumsum(block.sample) - 1                  # row of each sampled step in ebar
        idx = np.nonzero(mine)[0]
        n = block.step0 + idx
        t = (n + 0.5) * dt
        weights = self._weights(t)
        if self.work0 is None:
            self.work0 = block.work_before[idx[0]]
            self.t_first = n[0] * dt
        Epos = np.fft.rfft(block.ebar[rows[idx]], axis=-1)
        Jhat = np.empty((idx.size, self.k.size), dtype=complex)
        flat = np.ascontiguousarray(block.flat[idx])
        J = np.ascontiguousarray(block.J[idx])
        if self._table is not None:
            demod.sparse_dft_block(Jhat, flat, J, self._table)
        else:
            Jhat[...] = (J[:, :, None] * np.exp(-1j * self.k[None, None, :] * self._x_of_i[flat][:, :, None])).sum(1)
        omega = self._k_speed[None, :] + self._line_freq[:, None]
        phase0 = np.exp(1j * omega * t[0])
        rot = np.exp(1j * omega * dt)
        gaps = np.concatenate([[0], np.diff(n)]).astype(np.int64)
        demod.accumulate_half_block(self.A, self.B, Jhat, Epos, self._src_index, self._conj, phase0, rot, gaps,
                                    weights)
        self.wsum += weights.sum(axis=0)
        if len(self.lines) == 2:
            self.csum += (weights * np.exp(2j * self.Omega * t)[:, None]).sum(axis=0)
        w0 = weights[:, 0]
        self.n_samples += idx.size
        self.weight_sum += float(w0.sum())
        self.t_last = (n[-1] + 1) * dt
        self.work_last = block.work_before[idx[-1] + 1]
        self.weighted_work += float(np.sum(w0 * (block.work_before[idx + 1] - block.work_before[idx])))
        self.weighted_time += float(w0.sum()) * dt

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
        if self._fast_rows:
            ebar = self._ebar_buf
            for ci, c in enumerate(self.comps):
                demod.mean_rows_transposed(solver.fields[c], self.rows, self._e0[ci], ebar[ci])
        else:
            ebar = np.stack([0.5 * (self._e0[ci] + self._rows_of(solver.fields[c])).T
                             for ci, c in enumerate(self.comps)])           # (comp, rows, nx)
        if self.complex:
            Efull = np.fft.fft(ebar * self._bloch_phase, axis=-1)[..., self.m_index]
        else:
            Epos = np.fft.rfft(ebar, axis=-1)
        Jhat = np.zeros((len(self.comps), self.rows.size, self.k.size), dtype=complex)
        vtype = complex if self.complex else float
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
                demod.sparse_dft_table(Jhat[ci], ii, pos, vals.astype(vtype), self._table)
            else:
                demod.sparse_dft(Jhat[ci], ii, pos, vals.astype(vtype), self.k, self._x_of_i)
        if self.complex:
            demod.accumulate(self.A, self.B, Jhat, Efull, phase, weights)
        else:
            demod.accumulate_half(self.A, self.B, Jhat, Epos, self._src_index, self._conj, phase, weights)
        w = weights[0]
        self.wsum += weights
        if len(self.lines) == 2:
            self.csum += weights * np.exp(2j * self.Omega * t)
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
        A, B = self.A, self.B
        if len(self.lines) == 2:
            A, B = _unmix(A, self.csum, self.wsum), _unmix(B, self.csum, self.wsum)
        powers = []
        for wi in range(A.shape[0]):
            W = self.wsum[wi]
            powers.append(-(dV / self.nx) * np.real(np.conj(A[wi]) * B[wi]).sum(axis=(1, 2))
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
        # the size of the source's exchange with the field, reactive part included: the
        # scale below which a demodulated power counts as zero
        apparent = float((dV / self.nx) * np.sum(np.abs(A[0]) * np.abs(B[0])) / max(self.wsum[0], 1e-300) ** 2)
        return DopplerSpectrum(kx[first][order], om[first][order], br[first][order], out_p[order],
                               window, rate, self.speed, self.Omega,
                               {"samples": self.n_samples, "t_first": self.t_first, "t_last": self.t_last,
                                "flat_work_rate": (self.work_last - self.work0) / window,
                                "apparent": apparent},
                               halves=halves)


def _taper_weights(t: float, start: float, duration: float | None) -> np.ndarray:
    """Hann weights on the whole window and on each half (or a flat weight)."""
    if duration is None:
        return np.ones(1)
    x = (t - start) / duration
    return np.array([math.sin(math.pi * x) ** 2,
                     math.sin(2 * math.pi * x) ** 2 if x < 0.5 else 0.0,
                     math.sin(2 * math.pi * x) ** 2 if x >= 0.5 else 0.0])


class DopplerFluxRecorder(_Checkpointable):
    """Doppler-resolved Poynting flux through horizontal grid lines of a periodic-x cell.

    For each storage row ``jb`` of the tangential E component, the exact
    discrete upward flux across the face between E row jb and H row jb (the
    face formula of the energy ledger, docs/theory/energy-ledger.md), per unit length along z,

        TE:  F = -dx sum_i Ebar_x(i, jb) H_z(i, jb),    TM:  F = dx sum_i Ebar_z(i, jb) H_x(i, jb),

    is split over the Doppler points (k_m, omega = k_m v + s Omega) by the same
    demodulation as :class:`DopplerWorkRecorder`.  Positive = upward (+y).
    """

    _STATE = ("_A5", "_B5", "wsum", "csum")

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
        self.csum = np.zeros(n_win, dtype=complex)
        self._anchor = int(round(self.start / solver.dt))
        self._e0 = None
        solver.observers.append(self)

    def before_step(self, solver) -> None:
        t_half = (solver.step_count + 0.5) * solver.dt
        inside = t_half >= self.start and (self.duration is None or t_half <= self.start + self.duration)
        inside = inside and (solver.step_count - self._anchor) % self.every == 0
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
        if len(self.lines) == 2:
            self.csum += weights * np.exp(2j * self.Omega * t)

    def result(self) -> list[DopplerSpectrum]:
        """One :class:`DopplerSpectrum` per row; its ``power`` holds the upward flux."""
        if self.wsum[0] == 0:
            raise ParameterError("DopplerFluxRecorder: nothing recorded (start time after the run?)")
        dx = self.solver.model.grid.spacing[0]
        A, B = self.A, self.B
        if len(self.lines) == 2:
            A, B = _unmix(A, self.csum, self.wsum), _unmix(B, self.csum, self.wsum)
        out = []
        for r in range(self.rows.size):
            per_window = []
            for wi in range(A.shape[0]):
                W = max(self.wsum[wi], 1e-300)
                per_window.append(self.sign * (dx / self.nx)
                                  * np.real(np.conj(A[wi, :, r]) * B[wi, :, r]) / W**2)
            kx, om, br = [], [], []
            for s in self.lines:
                w = self.k * self.speed + s * self.Omega
                pos = w >= 0
                kx.append(np.where(pos, self.k, -self.k))
                om.append(np.abs(w))
                br.append(np.where(pos, s, -s))
            kx, om, br = map(np.concatenate, (kx, om, br))
            key = np.round(kx * 1e9).astype(np.int64) * 3 + br
            uniq, inv = np.unique(key, return_inverse=True)

            def combine(vals, uniq=uniq, inv=inv):
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


def auto_sampling(dt: float, cell: float, speed: float, internal_frequency: float, k_top: float,
                  max_alias_order: int = 3, margin: float = 0.15, divides: int | None = None) -> int:
    """Sampling interval (in steps) for the Doppler recorders.

    At most 80 % of the Nyquist limit of the highest recorded line
    ``k_top v + Omega``, and such that the deposit's grid-crossing aliases, at
    ``2 pi p v / dx`` from each line, do not fold back onto the lines: the
    sampling frequency must not divide them, i.e. ``p k v dt / dx`` stays at
    least ``margin`` away from whole numbers for p = 1..max_alias_order.  With ``divides``
    (the window's step count) only divisors of it are taken, so that the window is sampled
    uniformly from its first step to its last.
    """
    k_nyq = max(int(0.8 * math.pi / ((k_top * speed + internal_frequency) * dt)), 1)
    c = speed * dt / cell
    for k in range(k_nyq, 0, -1):
        if divides is not None and divides % k:
            continue
        ok = True
        for p in range(1, max_alias_order + 1):
            x = p * k * c
            if abs(x - round(x)) < margin:
                ok = False
                break
        if ok:
            return k
    return 1
