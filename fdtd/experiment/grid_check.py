r"""The grid check: the same point on a grid twice as coarse, for the discretization error.

A co-moving run's error has a time part (the drift between recording windows) and a
grid part (the Yee scheme's dispersion, the rasterised surfaces).  The grid part is
measured, not assumed: the experiment is run again with cells twice as large -- the same
cell length, so the same harmonics k_m, and the same physical source (a B-spline widened
by s on the fine grid is the one widened by s/2 on the coarse one) -- and for a scheme of
second order the fine run's error is about

.. math:: e_{grid} \approx |F_{fine} - F_{coarse}| / (2^2 - 1),

times a safety factor.  The coarse run costs about an eighth of the fine one in 2D (a
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
#: the error estimate is this times the Richardson difference (common practice: a safety
#: factor between 1.25 and 3 on Richardson estimates of asymptotically second-order schemes)
SAFETY = 1.5
#: figures compared between the grids
FIGURES = ("total", "normal", "anomalous", "drag_force", "internal_power")


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


def run_grid_check(p: Plan, fine_spectrum, progress=False) -> dict:
    """Run the companion and return {"errors": figure -> estimated grid error,
    "coarse": figure -> coarse value, "steady": bool or None, "note": str}."""
    from fdtd.experiment.procedure import Experiment

    cp, why = coarse_plan(p)
    if cp is None or fine_spectrum is None:
        return {"errors": {}, "coarse": {}, "steady": None, "note": why or "no fine spectrum"}
    exp = Experiment(cp, progress=progress, records=False)
    log.info("  grid check: the same point on a grid twice as coarse (%d cells along x)", cp.nx)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SteadyStateWarning)
        exp.execute()
    coarse = exp.last_spectrum
    if coarse is None:
        return {"errors": {}, "coarse": {}, "steady": None, "note": "the coarse run recorded nothing"}
    # the harmonics both grids recorded
    nx_c = cp.nx
    m_max = nx_c // M_MAX_FRACTION_2D if (p.polarization != "1d" and p.source_kind == "dipole") else nx_c // 2
    k_max = 2 * np.pi * m_max / p.length
    f = _restricted(fine_spectrum, k_max)
    c = _restricted(coarse, k_max)
    errors = {k: SAFETY * abs(f[k] - c[k]) / (FACTOR**2 - 1) for k in FIGURES}
    return {"errors": errors, "coarse": c, "steady": exp.state.get("steady"), "note": ""}
