r"""Prescribed (non-moving) current sources and their time waveforms.

A source hands the solver, once per step, the current density
``J^{n+1/2}`` (normalized units, see :mod:`fdtd.units`) on a few nodes of
one or more electric-field components.  The solver adds ``-dt J / eps_inf``
to E and books the work ``-dt sum J . (E^n + E^{n+1})/2 dV`` in the ledger.

Moving charges and dipoles live in :mod:`fdtd.sources.moving`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdtd import _checks
from fdtd.errors import GeometryError, ParameterError


class Waveform:
    """A scalar function of time s(t) (normalized time)."""

    def __call__(self, t: float) -> float:  # pragma: no cover - abstract
        raise NotImplementedError


def smooth_ramp(t: float, ramp: float) -> float:
    """0 -> 1 over 0 <= t <= ramp with zero first and second derivative at both ends."""
    if ramp <= 0.0 or t >= ramp:
        return 1.0 if t >= 0.0 else 0.0
    if t <= 0.0:
        return 0.0
    x = t / ramp
    return x * x * x * (10.0 - 15.0 * x + 6.0 * x * x)


def smooth_ramp_array(t: np.ndarray, ramp: float) -> np.ndarray:
    """:func:`smooth_ramp` of every element of ``t`` (the same arithmetic)."""
    t = np.asarray(t, dtype=float)
    if ramp <= 0.0:
        return np.where(t >= 0.0, 1.0, 0.0)
    x = np.clip(t / ramp, 0.0, 1.0)
    return np.where(t >= ramp, 1.0, np.where(t <= 0.0, 0.0, x * x * x * (10.0 - 15.0 * x + 6.0 * x * x)))


@dataclass(frozen=True)
class ContinuousWave(Waveform):
    """``amplitude * ramp(t) * cos(omega t + phase)``.

    ``ramp`` is the duration of a smooth (quintic, C^2) switch-on.
    """

    omega: float
    amplitude: float = 1.0
    phase: float = 0.0
    ramp: float = 0.0

    def __post_init__(self) -> None:
        _checks.positive("ContinuousWave omega", self.omega)
        _checks.finite_number("ContinuousWave amplitude", self.amplitude)
        _checks.finite_number("ContinuousWave phase", self.phase)
        _checks.non_negative("ContinuousWave ramp", self.ramp)

    def __call__(self, t: float) -> float:
        return self.amplitude * smooth_ramp(t, self.ramp) * math.cos(self.omega * t + self.phase)


@dataclass(frozen=True)
class GaussianPulse(Waveform):
    """``amplitude * exp(-((t - t0)/width)^2 / 2) * cos(omega (t - t0) + phase)``.

    With ``omega = 0`` and ``derivative=True`` the time derivative of a
    Gaussian (no DC content, so no static charge is left behind).
    """

    t0: float
    width: float
    amplitude: float = 1.0
    omega: float = 0.0
    phase: float = 0.0
    derivative: bool = False

    def __post_init__(self) -> None:
        _checks.finite_number("GaussianPulse t0", self.t0)
        _checks.positive("GaussianPulse width", self.width)
        _checks.finite_number("GaussianPulse amplitude", self.amplitude)
        _checks.non_negative("GaussianPulse omega", self.omega)

    def __call__(self, t: float) -> float:
        x = (t - self.t0) / self.width
        g = self.amplitude * math.exp(-0.5 * x * x)
        if self.derivative:
            g *= -x
        return g * math.cos(self.omega * (t - self.t0) + self.phase)


class Source:
    """Interface of everything that injects current into the grid."""

    def bind(self, solver) -> None:
        """Check placement against the solver's model and precompute indices."""

    def currents(self, t_half: float):
        """List of ``(component, flat_index (int64 array), J values (float array))``."""
        raise NotImplementedError  # pragma: no cover

    def block_currents(self, t_levels):
        """The currents of several steps at once (see
        :meth:`fdtd.sources.moving.MovingDipole.block_currents`), or None: this source
        is evaluated step by step."""
        return None


class PrescribedCurrent(Source):
    """A fixed spatial pattern of current density times a waveform.

    Parameters
    ----------
    component : str
        E component the current flows along ("Ey" in 1D; "Ex"/"Ey" in TE_z;
        "Ez" in TM_z).
    nodes : sequence of index tuples
        Storage indices of that component, e.g. ``[(i, j), ...]``.
    density : float or sequence of float
        Current density per node (normalized) at waveform value 1.
    waveform : Waveform
    """

    def __init__(self, component: str, nodes, density, waveform: Waveform):
        self.component = component
        self.nodes = [tuple(int(k) for k in np.atleast_1d(n)) for n in nodes]
        if not self.nodes:
            raise ParameterError("PrescribedCurrent nodes: expected at least one node")
        dens = np.broadcast_to(np.asarray(density, dtype=float), (len(self.nodes),)).copy()
        self.density = _checks.finite_array("PrescribedCurrent density", dens)
        if not isinstance(waveform, Waveform):
            raise ParameterError(f"waveform = {waveform!r}: expected a Waveform")
        self.waveform = waveform
        self._flat = None

    def bind(self, solver) -> None:
        grid = solver.model.grid
        if self.component not in grid.e_components:
            raise ParameterError(
                f"source component = {self.component!r} cannot be carried by polarization "
                f"{grid.polarization!r}: expected one of {list(grid.e_components)}")
        idx = np.array(self.nodes, dtype=np.int64)
        if idx.shape[1] != grid.dims:
            raise GeometryError(f"source nodes have {idx.shape[1]} indices: grid needs {grid.dims}")
        for a in range(grid.dims):
            if idx[:, a].min() < 0 or idx[:, a].max() >= grid.shape[a]:
                raise GeometryError(
                    f"source node index along {'xy'[a]} spans [{idx[:, a].min()}, "
                    f"{idx[:, a].max()}]: the grid has 0..{grid.shape[a] - 1}")
        solver.check_outside_absorbers(self.component, idx, what="current source")
        self._flat = np.ravel_multi_index(tuple(idx.T), grid.shape).astype(np.int64)

    def currents(self, t_half: float):
        return [(self.component, self._flat, self.density * self.waveform(t_half))]


def line_current(solver_or_model, component: str, position, current: float,
                 waveform: Waveform) -> PrescribedCurrent:
    """A current filament (2D) or current sheet (1D) at the node nearest ``position``.

    ``current`` is the total current (normalized: a line current in 2D, a
    surface current per unit length in 1D); it is spread over one node as the
    density ``current / dV``.
    """
    model = getattr(solver_or_model, "model", solver_or_model)
    grid = model.grid
    idx = grid.index_of(component, tuple(np.atleast_1d(position)))
    return PrescribedCurrent(component, [idx], current / grid.cell_volume, waveform)
