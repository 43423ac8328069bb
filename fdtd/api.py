"""The Python API: load a scenario, change parameters, check, run, read results as arrays.

    import fdtd.api as gw
    sc = gw.load("scenarios/polar_crystal_glide.toml").set("source.speed", "0.4 c")
    print(gw.check(sc).text)
    out = gw.run(sc, "glide.h5")
    with gw.open_results(out.file) as r:
        kx, power = r.array("doppler/kx"), r.array("doppler/power")

The command line (``gapwake``) is a thin layer over these functions.
"""

from __future__ import annotations

import time

from dataclasses import dataclass, field

import numpy as np

import scipy.constants as sc

from fdtd.experiment.session import plan_points, run_scenario
from fdtd.io.results import Results
from fdtd.scenario.schema import Scenario


def load(path) -> Scenario:
    """Read and validate a scenario file (raises ScenarioError with every problem found)."""
    return Scenario.load(path)


def open_results(path, point: int | None = None) -> Results:
    """Open a results file (numpy arrays out; ``point`` selects a scan point)."""
    return Results(path, point)


@dataclass
class CheckReport:
    """What ``gapwake check`` says of one point: printable rows, warnings and notes, and the
    estimated run time in seconds (``seconds``: the typical run; ``seconds_max``: with every
    window run.max_time allows and the automatic grid refinement)."""

    rows: list = field(default_factory=list)
    warnings: list = field(default_factory=list)
    notes: list = field(default_factory=list)
    seconds: float = float("nan")
    seconds_max: float = float("nan")
    #: the typical run time with 0, 1, ... automatic grid refinements (whether the grid check
    #: refines is decided during the run, from its own error estimate)
    seconds_refined: list = field(default_factory=list)

    @property
    def text(self) -> str:
        width = max((len(k) for k, _v in self.rows), default=10)
        lines = [f"  {k:<{width}}  {v}" for k, v in self.rows]
        lines += [f"  warning: {w}" for w in self.warnings]
        lines += [f"  note: {n}" for n in self.notes]
        return "\n".join(lines)


def _refined_cost_ratio(p, cost, t_one: float, where) -> float | None:
    """The run time of the point on the grid refined once, relative to ``t_one`` (the run on
    the planned grid): twice the steps, at a step cost measured on the refined cell.  None
    when the refined cell is not built (it would not fit: the run would not refine either)."""
    from fdtd.experiment.grid_check import refined_plan
    from fdtd.experiment.procedure import Experiment
    from fdtd.experiment.resources import ResourceError, guard
    from fdtd.experiment.timing import step_cost

    r = refined_plan(p)
    try:
        guard(r, where)
    except ResourceError:
        return None
    fine = Experiment(r, progress=False)
    steps_typ = fine.expected_steps()
    ramp = fine.ramp_steps if r.kind == "comoving" else 0
    c = step_cost(fine)
    t_fine = ramp * c.ramp + (steps_typ - ramp) * c.window
    return t_fine / t_one if t_one > 0 else None


def check(scenario: Scenario) -> list[CheckReport]:
    """Resolved grid, estimates and warnings for each scan point (nothing is stepped)."""
    from fdtd.experiment.procedure import Experiment

    reports = []
    from fdtd.experiment.resources import disk_estimate, guard, memory_available, memory_estimate
    from fdtd.experiment.timing import step_cost

    for pt, p in plan_points(scenario):
        rep = CheckReport(warnings=list(p.warnings), notes=list(p.notes) + list(p.adjustments))
        guard(p, pt.where)                           # refuses what does not fit, before allocating
        t_build = time.perf_counter()
        exp = Experiment(p, progress=False)          # builds model and solver
        t_build = time.perf_counter() - t_build      # (a charge's electrostatic start is in it)
        s = exp.solver
        ell = p.ell
        cells = s.grid.n_cells
        steps_typ, steps_max = exp.expected_steps(), exp.max_steps()
        arrays = sum(a.nbytes for a in s.fields.values()) + sum(P.nbytes + Po.nbytes for P, Po in
                                                               s.polarization.values())
        cost = step_cost(exp)                       # measured on this experiment's own solver
        ramp = exp.ramp_steps if p.kind == "comoving" else 0
        t_one = ramp * cost.ramp + (steps_typ - ramp) * cost.window
        t_one_max = ramp * cost.ramp + (steps_max - ramp) * cost.window
        # the grid check's coarse companion: a quarter of the cells and half the steps in 2D
        # (an eighth of the run), half and half in 1D; an automatic refinement: 8x (2D) or 4x
        # (1D) the run; the isolated emitter: about ten phased runs of complex fields (2.6
        # times the work per step)
        # (each refinement is a run on the grid halved; the run before it is its companion).
        # The first refinement's step cost is measured on the refined cell too: small cells
        # do not cost in proportion to their size; further ones scale by the work.
        extra = 1.0
        refine = []
        if p.kind == "comoving" and p.grid_check:
            extra += 0.125 if p.dims == 2 else 0.25
            grow = 8.0 if p.dims == 2 else 4.0
            first = grow
            if p.grid_refinements:
                first = _refined_cost_ratio(p, cost, t_one, pt.where) or grow
            refine = [sum(first * grow ** k for k in range(n)) for n in range(p.grid_refinements + 1)]
        refine = refine or [0.0]
        iso = 2.6 * min(10, p.isolated_max_runs) if p.kind == "comoving" and p.isolated else 0.0
        # the isolated-emitter runs go on the finest grid
        grow_iso = [iso * (8.0 if p.dims == 2 else 4.0) ** n for n in range(len(refine))]
        # set-up of each run: the one measured here, the companion's, 4x per refinement
        companion = p.kind == "comoving" and p.grid_check
        builds = [t_build * ((2.0 if companion else 1.0) + 4.0 * n)
                  for n in range(len(refine))]
        rep.seconds_refined = [(extra + r + g) * t_one + b for r, g, b in zip(refine, grow_iso, builds, strict=True)]
        t_typ, t_max = rep.seconds_refined[0], (extra + refine[-1] + grow_iso[-1]) * t_one_max + builds[-1]
        rep.seconds, rep.seconds_max = t_typ, t_max
        if p.kind == "comoving":
            left = (p.max_time - p.switch_on) / (p.transits * p.transit)
            if left < 2:
                rep.warnings.append(
                    f"run.max_time = {p.seconds(p.max_time):.3g} s leaves room for {left:.2g} recording windows "
                    f"of {p.transits} transits: at least two are needed to test the settling (the result "
                    "will be marked not converged); raise run.max_time")
        to_rad_s = sc.c / ell
        rep.rows += [
            ("point", pt.where),
            ("run", f"{p.kind} cell" if p.kind == "comoving" else "open domain"),
            ("grid", f"{p.polarization.upper()} {' x '.join(map(str, s.grid.shape))} = {cells:,} cells, "
                     f"cell {p.cell * ell * 1e9:.4g} nm"),
            ("extent", f"{s.grid.extent[0] * ell * 1e6:.4g} um"
             + (f" x {s.grid.extent[1] * ell * 1e6:.4g} um" if s.grid.dims == 2 else "")
             + f", absorbing layers {p.absorber * ell * 1e9:.4g} nm"),
            ("time step", f"{p.seconds(s.dt) * 1e18:.4g} as (Courant number {s.courant_number:.3f}, "
                          f"{s.dt / s.model.max_stable_dt():.0%} of the Yee + ADE limit)"),
            ("source", f"{p.source_kind}, v = {p.speed:.4g} c, height {p.height * ell * 1e9:.4g} nm"
             + (f", rest frequency {p.omega0 * to_rad_s:.4g} rad/s (lab {p.Omega * to_rad_s:.4g})"
                if p.omega0 else "")),
            ("window", (f"{p.transits} transits of {p.seconds(p.transit) * 1e15:.4g} fs"
                        + (f" = {p.window_beats} beat periods pi/Omega" if p.window_beats else "")
                        + (f" (misses whole beats by {p.window_mismatch:.2f})" if p.window_mismatch > 1e-9 else "")
                        + f", cell length {p.length * ell * 1e9:.5g} nm") if p.kind == "comoving" else "the whole run"),
            ("steps", f"about {steps_typ:,} (at most {steps_max:,})" if steps_typ != steps_max else f"{steps_typ:,}"),
            ("memory", f"{arrays / 2**20:.0f} MiB of field and polarization arrays (estimate before "
                       f"building {memory_estimate(p) / 2**20:.0f} MiB; {memory_available() / 2**30:.3g} GiB "
                       "available)"),
            ("results", f"about {max(disk_estimate(p), 2**20) / 2**20:.0f} MiB (snapshots and field line"
                        + ("; about 4 times that if the grid check refines the grid"
                           if p.kind == "comoving" and p.grid_check and p.grid_refinements and
                           (p.snapshots or p.line_component) else "") + ")"),
            ("run time", f"about {_fmt_time(t_typ)}"
             + (f" on this grid, about {_fmt_time(rep.seconds_refined[1])} if the grid check refines it once"
                if len(rep.seconds_refined) > 1 else "")
             + (f" (at most {_fmt_time(t_max)}, with every window run.max_time allows and every automatic "
                "grid refinement)" if t_max > 1.5 * t_typ else "")
             + f"; a step costs {cost.window * 1e6:.3g} us here, measured on this cell"),
        ]
        reports.append(rep)
    return reports


def _fmt_time(t: float) -> str:
    if t < 90:
        return f"{t:.0f} s"
    if t < 5400:
        return f"{t / 60:.0f} min"
    return f"{t / 3600:.1f} h"


@dataclass
class RunOutput:
    file: str
    status: str
    stop_reason: str
    points: list

    @property
    def summary(self) -> dict:
        return self.points[0] if len(self.points) == 1 else {"points": self.points}

    def value(self, name: str, point: int = 0, normalized: bool = False) -> float:
        v = self.points[point][name]
        return v["normalized"] if normalized else v["value"]


def run(scenario, out=None, progress: bool | None = None, checkpoint=None, resume=None, force: bool = False,
        make_parents: bool = False) -> RunOutput:
    """Run a scenario (a Scenario or a path) through the experiment procedure and write the
    results file; diagnostics go to the ``fdtd`` logger.  Refuses (ParameterError) before
    anything runs an output or checkpoint path that cannot be written (``make_parents``
    creates missing folders) and a run that does not fit this machine (``force`` tries
    anyway); see :func:`fdtd.experiment.session.run_scenario`."""
    sc_ = scenario if isinstance(scenario, Scenario) else load(scenario)
    r = run_scenario(sc_, out=out, progress=progress, checkpoint=checkpoint, resume=resume, force=force,
                     make_parents=make_parents)
    return RunOutput(r.file, r.status, r.stop_reason, r.points)


def as_arrays(path, point: int | None = None) -> dict:
    """All datasets of a results file (one point) as a flat dict of numpy arrays."""
    out = {}
    with Results(path, point) as r:
        def visit(name, obj):
            if hasattr(obj, "shape"):
                out[name] = np.asarray(obj)
        r.root.visititems(visit)
    return out
