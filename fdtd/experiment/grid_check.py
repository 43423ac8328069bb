r"""The grid check: the same point on a grid twice as coarse, for the discretization error.

A co-moving run's error has a time part (the drift between recording windows) and a
grid part (the Yee scheme's dispersion, the rasterised surfaces).  The grid part is
measured, not assumed: the experiment is run again with cells twice as large -- the same
cell length, so the same harmonics k_m, and the same physical source (a B-spline widened
by s on the fine grid is the one widened by s/2 on the coarse one) -- and for a scheme of
second order the fine run's error is about

.. math:: e_{grid} \approx \sum_{points} |P_{fine} - P_{coarse}| / (2^2 - 1),

times a safety factor (Roache's grid convergence index).  The coarse run costs about an eighth of the fine one in 2D (a
quarter of the cells, half the steps).  See docs/theory/doppler-work.md, "Settling and
error estimates".
"""

from __future__ import annotations

import copy
import logging
import warnings

import numpy as np

from fdtd.recording.steady import SteadyStateWarning
from fdtd.scenario.plan import M_MAX_FRACTION_2D, Plan

log = logging.getLogger("fdtd.experiment")

#: coarsening factor of the companion grid
FACTOR = 2
#: the error estimate is this times the Richardson difference of two grids: the safety factor
#: of the grid convergence index for a two-grid study (P. J. Roache, "Perspective: a method for
#: uniform reporting of grid refinement studies", J. Fluids Eng. 116, 405 (1994); from memory)
SAFETY_TWO_GRIDS = 3.0
#: ... and with three grids, where the order is observed rather than assumed (same source)
SAFETY_THREE_GRIDS = 1.25
#: figures compared between the grids
FIGURES = ("total", "normal", "anomalous", "drag_force", "internal_power")
#: a Doppler branch counts in the grid tolerance when it carries at least this share of the total
BRANCH_SHARE = 0.05


def coarse_plan(p: Plan) -> tuple[Plan | None, str]:
    """The companion plan (or None and why there is none)."""
    if p.kind != "comoving" or not p.doppler or p.speed <= 0:
        return None, "grid check only for co-moving cells with the Doppler recorder"
    order, scale = p.shape
    if scale % FACTOR:
        return None, (f"no grid check: source.shape_scale = {scale} is not a multiple of {FACTOR}, so the "
                      "coarse grid cannot carry the same source shape")
    nx = int(round(p.nx / FACTOR))
    if nx < 8:
        return None, "no grid check: the cell has too few cells to coarsen"
    c = copy.copy(p)
    c.nx = nx
    c.cell = p.length / nx
    c.shape = (order, scale // FACTOR)
    c.snapshots, c.line_component, c.flux_heights = 0, None, []
    c.checkpoint_every = 0
    c.warnings, c.notes, c.adjustments = [], [], []
    return c, ""


def _restricted(spec, k_max: float) -> dict:
    """Figures of a spectrum from its points with |k_x| <= k_max only."""
    sel = np.abs(spec.kx) <= k_max * (1 + 1e-9)
    sub = copy.copy(spec)
    sub.kx, sub.omega, sub.branch, sub.power = spec.kx[sel], spec.omega[sel], spec.branch[sel], spec.power[sel]
    sub.halves = None
    return {f: float(getattr(sub, f)) for f in FIGURES}


def _pointwise_errors(fine, coarse, length: float, k_max: float) -> dict:
    """Sum over the Doppler points of |F_fine - F_coarse| for each figure (per-point
    contributions: power, power k/omega for the drag, power s Omega/omega for the internal
    power), on the points both grids recorded.  Summing magnitudes keeps errors of opposite
    sign at different harmonics -- a resonance shifted by the grid -- from cancelling."""
    def table(spec):
        sel = np.abs(spec.kx) <= k_max * (1 + 1e-9)
        m = np.round(spec.kx[sel] * length / (2 * np.pi)).astype(int)
        with np.errstate(divide="ignore", invalid="ignore"):
            inv_w = np.where(spec.omega[sel] > 0, 1.0 / spec.omega[sel], 0.0)
        P = spec.power[sel]
        rows = {}
        for mi, b, pw, iw in zip(m, spec.branch[sel], P, inv_w):
            rows[(int(mi), int(b))] = (pw, pw * (2 * np.pi * mi / length) * iw, pw * b * spec.internal_frequency * iw)
        return rows

    a, b = table(fine), table(coarse)
    out = {f: 0.0 for f in FIGURES}
    for key in set(a) | set(b):
        pa, da, ia = a.get(key, (0.0, 0.0, 0.0))
        pb, db, ib = b.get(key, (0.0, 0.0, 0.0))
        d = abs(pa - pb)
        out["total"] += d
        if key[1] == 1:
            out["normal"] += d
        elif key[1] == -1:
            out["anomalous"] += d
        out["drag_force"] += abs(da - db)
        out["internal_power"] += abs(ia - ib)
    return out


def refined_plan(p: Plan) -> Plan:
    """The same point on a grid twice as fine: the cell halved, the same cell length (so the
    same harmonics) and the same physical source (B-spline widened by twice as many cells)."""
    order, scale = p.shape
    r = copy.copy(p)
    r.nx = p.nx * FACTOR
    r.ny = p.ny if p.polarization == "1d" else p.ny * FACTOR
    r.cell = p.cell / FACTOR
    r.shape = (order, scale * FACTOR)
    r.warnings, r.notes, r.adjustments = list(p.warnings), list(p.notes), list(p.adjustments)
    return r


def compare_grids(p: Plan, fine_spectrum, coarse_nx: int, coarse_spectrum, floor: float = 0.0,
                  previous: dict | None = None, zero_level: float = 0.0) -> dict:
    """Estimated discretization errors of the fine run from a run on a grid FACTOR times
    coarser (``coarse_nx`` cells along x): {"errors", "coarse", "relative"}; "relative" is
    the largest error of the total and of each branch carrying at least
    :data:`BRANCH_SHARE` of it, relative to that figure or to ``floor`` (the power that counts
    as zero, e.g. below a Cherenkov threshold), whichever is larger.

    ``previous``: the check of the grid before (three grids in all).  The order is then
    observed per figure, p = log2(d_before / d_last), and the error is Roache's three-grid
    estimate 1.25 d_last / (2^p - 1) with p capped at the scheme's order 2.  Where the
    difference shrank more slowly than first order (p < 1: a resonance the grid moves across
    a harmonic, a surface mode whose interface the staggered grid places to O(dx)), the
    extrapolation is not trusted: that figure gets the two-grid first-order error
    3 d_last / (2 - 1) and the result says so ("order" below 1)."""
    m_max = coarse_nx // M_MAX_FRACTION_2D if (p.polarization != "1d" and p.source_kind == "dipole") \
        else coarse_nx // 2
    k_max = 2 * np.pi * m_max / p.length
    c = _restricted(coarse_spectrum, k_max)
    diff = _pointwise_errors(fine_spectrum, coarse_spectrum, p.length, k_max)
    errors = {k: SAFETY_TWO_GRIDS * diff[k] / (FACTOR**2 - 1) for k in FIGURES}
    order = 2.0
    if previous and previous.get("differences"):
        for k in FIGURES:
            before, last = previous["differences"][k], diff[k]
            if last <= 0:
                errors[k] = 0.0
                continue
            obs = np.log(before / last) / np.log(FACTOR) if before > 0 else 0.0
            if obs < 1.0:                                   # slower than first order
                errors[k] = SAFETY_TWO_GRIDS * last / (FACTOR - 1)
            else:
                q = min(obs, 2.0)
                errors[k] = SAFETY_THREE_GRIDS * last / (FACTOR**q - 1)
            if k in ("total", "normal", "anomalous"):
                order = min(order, float(obs))
    return {"errors": errors, "coarse": c, "differences": diff, "order": order,
            "relative": relative_grid_error(p, fine_spectrum, errors, floor, zero_level)}


def relative_grid_error(p: Plan, spec, errors: dict, floor: float = 0.0, zero_level: float = 0.0) -> float:
    """Largest relative grid error of the total and of the branches that matter (see
    :func:`compare_grids`); 0 where the total, grid error included, stays below
    ``zero_level`` (it is zero on both grids: fdtd.recording.steady.at_zero)."""
    if not errors:
        return float("nan")
    total = abs(float(spec.total))
    if max(total, floor) == 0:
        return 0.0
    if zero_level > 0 and total + errors["total"] <= zero_level:
        return 0.0
    rel = errors["total"] / max(total, floor)
    if p.source_kind == "dipole":
        for b in ("normal", "anomalous"):
            val = abs(float(getattr(spec, b)))
            if val >= BRANCH_SHARE * total and max(val, floor) > 0:
                rel = max(rel, errors[b] / max(val, floor))
    return float(rel)


def run_grid_check(p: Plan, fine_spectrum, progress=False, floor: float = 0.0, zero_level: float = 0.0) -> dict:
    """Run the companion and return {"errors": figure -> estimated grid error,
    "coarse": figure -> coarse value, "relative": largest relative error (see
    :func:`compare_grids`), "steady": bool or None, "note": str}."""
    from fdtd.experiment.procedure import Experiment

    cp, why = coarse_plan(p)
    if cp is None or fine_spectrum is None:
        return {"errors": {}, "coarse": {}, "relative": float("nan"), "steady": None,
                "note": why or "no fine spectrum"}
    exp = Experiment(cp, progress=progress, records=False)
    log.info("  grid check: the same point on a grid twice as coarse (%d cells along x)", cp.nx)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SteadyStateWarning)
        if exp.execute() == "interrupted":     # the user's stop ends the whole point
            raise KeyboardInterrupt
    coarse = exp.last_spectrum
    if coarse is None:
        return {"errors": {}, "coarse": {}, "relative": float("nan"), "steady": None,
                "note": "the coarse run recorded nothing"}
    out = compare_grids(p, fine_spectrum, cp.nx, coarse, floor, zero_level=zero_level)
    out.update(steady=exp.state.get("steady"), note="")
    return out
