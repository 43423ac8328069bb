r"""Steady state of a co-moving cell, judged on the figures it reports.

The experiment procedure records successive windows (each a whole number of transit
times and of beat periods, :func:`fdtd.scenario.plan.recording_window`) and demodulates
each into its Doppler-branch powers.  :func:`window_convergence` compares the last
windows: a figure F has settled when the change between the last two windows, scaled up
by how slowly the changes shrink, is below ``tol`` times max(|F|, floor).  The same
numbers give the time part of the error estimate (docs/theory/doppler-work.md,
"Settling and error estimates").

Why this and not the dissipated power: a steady dissipated power says the field as a
whole has settled, but the reported branch powers can still be off by many per cent (a
slow polariton next to one harmonic, a wave trapped at grazing incidence); a figure that
is reported is tested.
"""

from __future__ import annotations

import math

#: the figures whose drift is estimated between windows; the settling test judges the powers
#: (the drag and the internal power are differences of large terms when the total is small:
#: their drift is reported in their error bars, not tested)
DIPOLE_FIGURES = ("total", "normal", "anomalous", "drag_force", "internal_power")
CHARGE_FIGURES = ("total", "drag_force")
TESTED = ("total", "normal", "anomalous")
#: figures that are judged against the total's scale (a small branch need only be small)
SHARE_OF_TOTAL = 0.01
#: a power below this counts as zero for a dipole: this fraction of its free-space power at
#: rest; for a charge: this fraction of its apparent power (the size of its near-field
#: exchange with the field, which a radiating charge nearly reaches: measured 0.96 of it just
#: above the Cherenkov threshold in n = 1.5; below it the residue, grid noise, was 1e-4 to
#: 3e-3 of it and changed by tens of per cent between windows).  The reported error bars
#: carry the measured drift whatever this level.
ZERO_DIPOLE = 1e-4
ZERO_CHARGE = 5e-2
#: a convergence ratio r = |dF_k / dF_{k-1}| above this is treated as no convergence yet
R_MAX = 0.95


class SteadyStateWarning(UserWarning):
    """A run did not settle to the requested tolerance within the allowed time."""


def remaining_drift(deltas: list[float]) -> float:
    """Estimated distance of the last window's figure from its steady value.

    ``deltas`` are the changes between successive windows (oldest first).  Two cases:

    * the changes shrink with one sign (a transient dying out, F_k = F_inf + C r^k): the
      remaining error is |dF_k| r / (1 - r), r = |dF_k / dF_{k-1}|;
    * they alternate or grow (a persistent beat, noise): the last window sits anywhere in
      the range the last changes span, max(|dF_{k-1}|, |dF_k|).

    With a single change, twice it (one comparison says little about the trend)."""
    if not deltas:
        return math.inf
    d2 = abs(deltas[-1])
    if len(deltas) < 2:
        return 2.0 * d2
    d1 = abs(deltas[-2])
    same_sign = deltas[-1] * deltas[-2] > 0
    if same_sign and d1 > 0 and d2 < d1:
        r = min(d2 / d1, R_MAX)
        return d2 * max(1.0, r / (1.0 - r))
    return max(d1, d2)


def at_zero(value: float, error: float, zero: float) -> bool:
    """A figure that, error included, stays below the zero level: it has settled at zero
    (its error bar, at most ``zero``, is what is reported; below a Cherenkov threshold the
    power is grid noise of the near-field exchange that changes by tens of per cent between
    windows and never settles relative to itself)."""
    return zero > 0 and abs(value) + error <= zero


def window_convergence(history: list[dict], tol: float, zero: float, figures=DIPOLE_FIGURES,
                       zero_level: float | None = None):
    """(steady, time_errors) from the figures of successive windows.

    A figure has settled when its remaining drift is below ``tol`` times its size (or the
    total's share, or ``zero``), or when value and drift together stay below ``zero_level``
    (:func:`at_zero`; default ``zero``, 0 turns it off).

    ``history`` is a list (oldest first) of dicts figure -> value (normalized units);
    ``zero`` the power below which a figure counts as zero (ZERO_DIPOLE, ZERO_CHARGE).
    ``time_errors`` maps each figure to its estimated remaining drift."""
    if len(history) < 2:
        return False, {f: None for f in figures}
    last = history[-1]
    total = abs(last["total"])
    errors, steady = {}, True
    for f in figures:
        vals = [h[f] for h in history]
        deltas = [b - a for a, b in zip(vals[:-1], vals[1:])]
        err = remaining_drift(deltas)
        errors[f] = err
        if f not in TESTED:
            continue
        ref = max(total, zero) if f == "total" else max(abs(last[f]), SHARE_OF_TOTAL * total, zero)
        if err > tol * ref and not at_zero(last[f], err, zero if zero_level is None else zero_level):
            steady = False
    return steady, errors


def describe(history: list[dict], errors: dict, tol: float) -> str:
    """One line on how far from settled the last windows are (for warnings)."""
    if len(history) < 2:
        return "only one recording window: nothing to compare"
    last = history[-1]
    parts = []
    for f, e in errors.items():
        if e is None or f not in last:
            continue
        v = abs(last[f])
        parts.append(f"{f} {e / v:.1e}" if v > 0 else f"{f} {e:.1e} (abs)")
    return f"{len(history)} windows; remaining drift relative to each figure: " + ", ".join(parts) + \
        f" (tolerance {tol:g})"


def is_finite_figures(fig: dict) -> bool:
    return all(isinstance(v, float) and math.isfinite(v) for v in fig.values())
