"""Running discrete Fourier transforms of field components (:class:`DFTRecorder`).

Time levels, shapes and positions: see :mod:`fdtd.recording.observer`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdtd import _checks
from fdtd.errors import GeometryError, ParameterError
from fdtd.recording.observer import (
    _Clock,
    _kind_of,
    _level_time,
    _Observer,
    _window,
)


@dataclass(frozen=True)
class DFTWindow:
    """Span actually summed for one component: first and last sample time, sample count."""

    start: float
    stop: float
    samples: int


class DFTRecorder(_Observer):
    r"""Running discrete Fourier transforms of field components.

    For each listed component and angular frequency omega,

    .. math:: X(\omega) = \sum_n X(t_n)\, e^{i \omega t_n}\, \Delta t

    over the samples whose own time level ``t_n`` (E: n dt, H: (n - 1/2) dt)
    lies in ``[start, stop]``.  A field ``Re(A e^{-i omega t})`` recorded
    over whole periods T gives ``X(omega) = A T / 2``.  Cost per step:
    one complex multiply-add of size n_freq x region per component.

    Parameters
    ----------
    solver : Solver
    components : str or sequence of str
    frequencies : 1D array of float
        Angular frequencies (normalized, rad per unit time), each with
        ``|omega| <= pi / dt`` (the sampling limit).
    start, stop : float
        Window (normalized time); ``stop=None`` leaves it open.
    region : tuple of slices / index arrays, optional
        Storage indices to transform, applied as ``field[region]`` to every
        component (so staggered components are at their own positions; see
        :meth:`region_coordinates`).  None: the whole grid.
    """

    def __init__(self, solver, components, frequencies, start=0.0, stop=None, region=None):
        super().__init__(solver, components)
        g = self.grid
        om = _checks.finite_array("frequencies", np.atleast_1d(frequencies))
        if om.ndim != 1 or om.size == 0:
            raise ParameterError(f"frequencies = {frequencies!r}: expected a non-empty 1D array "
                                 "of angular frequencies")
        nyq = math.pi / self.dt
        if np.any(np.abs(om) > nyq * (1 + 1e-12)):
            bad = float(om[np.argmax(np.abs(om))])
            raise ParameterError(
                f"frequencies: {bad!r} is not allowed: expected |omega| <= pi/dt = {nyq:.6g}, "
                "above which samples every dt cannot tell it from a lower frequency")
        self.frequencies = om.copy()
        self.start, self.stop = _window(start, stop)
        self.region = self._region(region)
        self.region_shape = np.empty(g.shape)[self.region].shape
        self._clock = _Clock(self.dt, self._n_begin, self.start, self.stop, 1)
        self._kind = {c: _kind_of(g, c) for c in self.components}
        self._acc = {c: np.zeros((om.size,) + self.region_shape, dtype=np.complex128)
                     for c in self.components}
        self._count = {k: 0 for k in self.kinds}
        self._first = {k: math.nan for k in self.kinds}
        self._last = {k: math.nan for k in self.kinds}
        # broadcast the per-frequency phase over the region axes
        self._bshape = (om.size,) + (1,) * len(self.region_shape)
        self._attach()

    def _region(self, region) -> tuple:
        g = self.grid
        if region is None:
            return (slice(None),) * g.dims
        if not isinstance(region, tuple):
            region = (region,)
        if len(region) > g.dims:
            raise GeometryError(f"region = {region!r} has {len(region)} entries: the grid has "
                                f"{g.dims} axes (shape {g.shape})")
        region = tuple(r if isinstance(r, slice) else np.asarray(r) for r in region)
        try:
            sel = np.empty(g.shape)[region]
        except IndexError as exc:
            raise GeometryError(f"region = {region!r} does not fit the grid of shape {g.shape} "
                                f"({exc}): expected slices or index arrays within it") from None
        if sel.size == 0:
            raise GeometryError(f"region = {region!r} selects no node of the grid of shape "
                                f"{g.shape}: expected a non-empty selection")
        return region

    def _wants(self, n: int) -> bool:
        return any(self._clock.takes(k, n) for k in self.kinds)

    def _observe(self, n: int) -> None:
        for k in self.kinds:
            if not self._clock.takes(k, n):
                continue
            t = _level_time(k, n, self.dt)
            w = (np.exp(1j * self.frequencies * t) * self.dt).reshape(self._bshape)
            for c in self.components:
                if self._kind[c] == k:
                    acc = self._acc[c]
                    acc += w * self._field(c)[self.region]
            if self._count[k] == 0:
                self._first[k] = t
            self._last[k] = t
            self._count[k] += 1

    def spectrum(self, component: str) -> np.ndarray:
        """X(omega) of ``component``: complex array (n_freq, *region_shape).

        Units: field units x normalized time.
        """
        return self._acc[self._check_component(component)].copy()

    @property
    def window(self) -> dict[str, DFTWindow]:
        """Component -> :class:`DFTWindow` (first/last sample time actually summed, count)."""
        return {c: DFTWindow(self._first[k], self._last[k], self._count[k])
                for c in self.components for k in (self._kind[c],)}

    def region_coordinates(self, component: str) -> tuple[np.ndarray, ...]:
        """Positions of the region's nodes of ``component``: one array per axis, region_shape."""
        c = self._check_component(component)
        g = self.grid
        mesh = np.meshgrid(*[g.axis_coordinates(c, a) for a in range(g.dims)], indexing="ij")
        return tuple(m[self.region] for m in mesh)
