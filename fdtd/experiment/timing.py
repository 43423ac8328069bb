"""What a step of this experiment costs on this machine, measured on its own solver.

`gapwake check` estimates a run's time from the step counts of the plan and the cost of a
step.  The cost is measured, not assumed from a kernel rate: a few blocks of steps of the
experiment just built, first as in the switch-on (sources only), then with the recorders
of a recording window attached, so that the source deposit, the ledger, the Doppler
demodulation and the per-call overheads of small cells are all in it.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

#: each phase is timed for at least this long (s), in doubling batches of steps
MIN_SECONDS = 0.15
MAX_STEPS = 4096

_CACHE: dict = {}


@dataclass
class StepCost:
    """Seconds per step in the switch-on (``ramp``) and in a recording window (``window``)."""

    ramp: float
    window: float


def _timed(solver, first: int = 16) -> float:
    solver.advance(steps=2, progress=False)              # compiled code loaded, buffers made
    n = first
    while True:
        t0 = time.perf_counter()
        solver.advance(steps=n, progress=False)
        dt = time.perf_counter() - t0
        if dt >= MIN_SECONDS or n >= MAX_STEPS:
            return dt / n
        n *= 2


def step_cost(exp) -> StepCost:
    """Measure (once per grid shape, polarization, pole count and source kind in a process)
    the cost of a step of ``exp`` (an :class:`~fdtd.experiment.procedure.Experiment` that
    has not run: it is used up by the measurement)."""
    p, s = exp.plan, exp.solver
    # the recorders' cost depends on the point (their sampling follows the speed and the
    # source frequency, their harmonics the window): only identical points share a measurement
    key = (p.polarization, s.grid.shape, exp.model.max_poles, p.source_kind, p.kind, p.doppler,
           tuple(p.flux_heights), s.threads, p.speed, p.omega0, p.transits, p.length, p.cell)
    if key in _CACHE:
        return _CACHE[key]
    ramp = _timed(s)
    window = ramp
    if p.kind == "comoving":
        exp.state["record_start_step"] = s.step_count
        exp._start_recording()
        window = _timed(s)
        exp._close_window_recorders()
    _CACHE[key] = cost = StepCost(ramp, window)
    return cost
