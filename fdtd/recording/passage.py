"""Doppler-resolved work of a uniformly moving source in an open (non-periodic) domain.

See :class:`PassageWorkRecorder` and docs/theory/open-domain.md.
"""

from __future__ import annotations

import math

import numpy as np

from fdtd import _checks
from fdtd.errors import GeometryError, ParameterError
from fdtd.recording.doppler import DopplerSpectrum, _Checkpointable


class PassageWorkRecorder(_Checkpointable):
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

    _STATE = ("J", "E", "filled")

    def __init__(self, solver, source, speed: float, internal_frequency: float, x_start: float,
                 x_stop: float, half_window: float, rows=None, t_pass0: float = 0.0):
        g = solver.model.grid
        if g.dims != 2:
            raise ParameterError("PassageWorkRecorder is for 2D grids")
        self.solver = solver
        self.source = source
        self.speed = _checks.positive("speed", speed)
        self.Omega = float(internal_frequency)
        self.half_window = _checks.positive("half_window", half_window)
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
