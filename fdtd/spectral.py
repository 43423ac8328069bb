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

from .errors import ParameterError


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
                 duration: float | None = None):
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
        if self.duration is not None and self.duration <= 0:
            raise ParameterError(f"recording duration = {duration!r}: expected a positive time")
        self.weight_sum = 0.0
        nx = g.shape[0]
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
        shape = (len(self.lines), len(self.comps), self.rows.size, self.m.size)
        self.A = np.zeros(shape, dtype=complex)
        self.B = np.zeros(shape, dtype=complex)
        self.n_samples = 0
        self.t_first = None
        self.t_last = None
        self.work0 = None
        self._e0 = None
        solver.observers.append(self)

    # -- hooks -----------------------------------------------------------
    def _rows_of(self, arr):
        return arr[:, self.rows] if arr.ndim == 2 else arr.reshape(-1, 1)

    def before_step(self, solver) -> None:
        t_half = (solver.step_count + 0.5) * solver.dt
        if t_half < self.start or (self.duration is not None and t_half > self.start + self.duration):
            self._e0 = None
            return
        self._e0 = [self._rows_of(solver.fields[c]).copy() for c in self.comps]
        if self.work0 is None:
            self.work0 = solver.source_work
            self.t_first = solver.step_count * solver.dt

    def after_step(self, solver, injections) -> None:
        if self._e0 is None:
            return
        t = (solver.step_count - 0.5) * solver.dt      # t_{n+1/2} of the step just taken
        g = solver.model.grid
        nrow = self.rows.size
        w = 1.0
        if self.duration is not None:
            w = math.sin(math.pi * (t - self.start) / self.duration) ** 2
        phase = np.empty((len(self.lines), self.m.size), dtype=complex)
        for a, s in enumerate(self.lines):
            phase[a] = w * np.exp(1j * (self.k * self.speed + s * self.Omega) * t)
        for ci, c in enumerate(self.comps):
            ebar = 0.5 * (self._e0[ci] + self._rows_of(solver.fields[c]))
            Ehat = np.fft.fft(ebar, axis=0)[self.m_index]          # (m, rows)
            J = np.zeros((self.nx, nrow))
            for comp, flat, vals, _e in injections:
                if comp != c:
                    continue
                if g.dims == 2:
                    ii, jj = np.divmod(flat, g.shape[1])
                    pos = self._row_pos[jj]
                    sel = pos >= 0
                    if not np.all(sel) and np.any(vals[~sel] != 0):
                        raise ParameterError("DopplerWorkRecorder: the source current left the "
                                             "recorded rows; give rows= covering its path")
                    np.add.at(J, (ii[sel], pos[sel]), vals[sel])
                else:
                    np.add.at(J[:, 0], flat, vals)
            Jhat = np.fft.fft(J, axis=0)[self.m_index]
            for a in range(len(self.lines)):
                self.A[a, ci] += (phase[a][:, None] * Jhat).T
                self.B[a, ci] += (phase[a][:, None] * Ehat).T
        self.n_samples += 1
        self.weight_sum += w
        self.t_last = solver.step_count * solver.dt
        self.work_last = solver.source_work

    # -- result -----------------------------------------------------------
    def result(self) -> DopplerSpectrum:
        if self.n_samples == 0:
            raise ParameterError("DopplerWorkRecorder: nothing recorded (start time after the run?)")
        W = self.weight_sum
        dV = self.solver.model.grid.cell_volume
        P = -(dV / self.nx) * np.real(np.conj(self.A) * self.B).sum(axis=(1, 2)) / W**2   # (lines, m)
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
        out_p = np.zeros(uniq.size)
        np.add.at(out_p, inv, pw)
        first = np.zeros(uniq.size, dtype=int)
        first[inv[::-1]] = np.arange(inv.size)[::-1]
        window = self.t_last - self.t_first
        rate = (self.work_last - self.work0) / window
        order = np.lexsort((kx[first], br[first]))
        return DopplerSpectrum(kx[first][order], om[first][order], br[first][order], out_p[order],
                               window, rate, self.speed, self.Omega,
                               {"samples": self.n_samples, "t_first": self.t_first, "t_last": self.t_last})
