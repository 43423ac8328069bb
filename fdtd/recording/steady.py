r"""Steady-state detection of a co-moving cell: the one settle test of the code base.

The experiment procedure advances in blocks of one transit time L/v.  In each block
:class:`DissipationMonitor` forms the Hann-weighted mean of the power that leaves the
field for good -- outflow into the absorbing layers plus heat into the bath, from the
energy ledger.  Unlike the source's work it has almost no share of the large reactive
near-field exchange at 2 Omega.  :func:`settled` compares the means of the last two
groups of blocks (docs/theory/doppler-work.md, "Settling").
"""

from __future__ import annotations

import math

import numpy as np

from fdtd import _checks
from fdtd.errors import ParameterError


class SteadyStateWarning(UserWarning):
    """A run did not settle to the requested tolerance within the allowed time."""


def settled(rates, tol: float, group: int = 3) -> bool:
    """Steady: the means of the last two groups of ``group`` blocks agree within ``tol``
    (relative).

    Comparing group means (not single blocks) tolerates a periodic beat of up to
    ``group`` blocks, e.g. a slow exchange with a weakly damped free wave."""
    if len(rates) < 2 * group:
        return False
    a = float(np.mean(rates[-2 * group:-group]))
    b = float(np.mean(rates[-group:]))
    return abs(a - b) <= tol * max(abs(a), abs(b), 1e-300)


def spread(rates, group: int = 3) -> float:
    """Relative spread of the last ``group`` block rates about their mean."""
    last = np.asarray(rates[-group:], dtype=float)
    if last.size == 0:
        return math.nan
    return float(np.max(np.abs(last - last.mean())) / max(abs(last.mean()), 1e-300))


class DissipationMonitor:
    """Hann-weighted mean dissipated power over blocks of ``block_steps`` steps.

    A solver observer: after each step it books the change of outflow + bath heat with
    the weight sin^2(pi (n + 1/2) / N) of the step's place in its block; :meth:`take`
    closes a block and returns its mean rate (normalized power).  Needs the solver's
    energy ledger.

    The monitor follows the solver's step count, so a block is the steps
    ``[k N, (k + 1) N)`` counted from ``origin`` (the step at which settling began).
    """

    _STATE = ("origin", "weighted", "weights", "_prev")

    def __init__(self, solver, block_steps: int, origin: int | None = None):
        if solver.ledger is None:
            raise ParameterError("settling needs the energy ledger (Solver(..., ledger=True))")
        self.solver = solver
        self.block_steps = _checks.positive_int("block_steps", block_steps)
        self.origin = int(solver.step_count if origin is None else origin)
        x = (np.arange(self.block_steps) + 0.5) / self.block_steps
        self._w = np.sin(np.pi * x) ** 2
        self.weighted = 0.0
        self.weights = 0.0
        self._prev = self._dissipated()
        solver.observers.append(self)

    def _dissipated(self) -> float:
        s = self.solver
        return s.ledger.outflow + float(s.bath_rows.sum()) * s.model.grid.cell_volume / (4 * s.dt)

    def before_step(self, solver) -> None:
        pass

    def after_step(self, solver, injections) -> None:
        now = self._dissipated()
        k = (solver.step_count - 1 - self.origin) % self.block_steps
        w = self._w[k]
        self.weighted += w * (now - self._prev)
        self.weights += w
        self._prev = now

    def take(self) -> float:
        """Mean dissipated power of the block just completed; starts the next block."""
        if self.weights <= 0:
            raise ParameterError("DissipationMonitor.take: no step recorded in this block")
        rate = self.weighted / (self.weights * self.solver.dt)
        self.weighted = 0.0
        self.weights = 0.0
        return float(rate)

    def close(self) -> None:
        obs = self.solver.observers
        obs[:] = [o for o in obs if o is not self]

    def checkpoint_state(self) -> dict:
        return {name: getattr(self, name) for name in self._STATE}

    def restore_state(self, state: dict) -> None:
        for name in self._STATE:
            setattr(self, name, type(getattr(self, name))(state[name]))
