"""A session: every point of a scenario through the experiment procedure, into one results file.

All points are planned (and so validated) before anything runs.  The results file is
opened at the start under ``<name>.incomplete``; each point's large records stream into
its group while it runs, its figures are written when it ends, and the file gets its
final name only when everything is written (:class:`fdtd.io.results.AtomicResults`).
Ctrl-C or SIGTERM stops the running point, keeps what was measured and marks the file
partial.
"""

from __future__ import annotations

import json
import logging
from dataclasses import dataclass
from pathlib import Path

from fdtd.experiment.procedure import Experiment
from fdtd.experiment.resources import ResourceError, guard
from fdtd.experiment.stopping import deferred_stops
from fdtd.experiment.summary import summarise
from fdtd.io import results as R
from fdtd.io.results import write_point
from fdtd.scenario.plan import plan as make_plan
from fdtd.scenario.schema import Scenario

log = logging.getLogger("fdtd.session")

#: status of a run that completed but whose figures failed their own settling test
NOT_CONVERGED = "not converged"


@dataclass
class SessionResult:
    file: str
    status: str
    stop_reason: str
    points: list          # one summary dict per point


#: most points of one scan (each is planned before anything runs)
MAX_SCAN_POINTS = 10_000

#: scan keys that change the cell itself: then every point sizes its own cell
_CELL_KEYS = ("grid.length", "grid.cell", "grid.cells_per_wavelength", "grid.adjust_length")


def plan_points(scenario: Scenario) -> list:
    """(point scenario, plan) for every point of the scenario (raises ScenarioError).

    Within a scan every point keeps the cell (length and cell size) the first point's plan
    chose, so that the points are comparable, unless the scan varies the cell itself."""
    points = scenario.scan_points()
    if len(points) > MAX_SCAN_POINTS:
        from fdtd.scenario.quantities import ScenarioError

        raise ScenarioError(f"{scenario.where}: scan.values has {len(points):,} points: at most "
                            f"{MAX_SCAN_POINTS:,} in one scenario (split the scan into several files, or run "
                            "them as a sweep)")
    first = make_plan(points[0].resolve())
    out = [(points[0], first)]
    scan_key = scenario.values.get("scan", {}).get("key")
    for pt in points[1:]:
        if scan_key not in _CELL_KEYS and first.kind == "comoving":
            pt = pt.set("grid.length", f"{first.length * first.ell!r} m") \
                .set("grid.cell", f"{first.cell * first.ell!r} m").set("grid.adjust_length", False)
        out.append((pt, make_plan(pt.resolve())))
    return out


def run_scenario(scenario: Scenario, out=None, progress: bool | None = None, checkpoint=None,
                 resume=None, force: bool = False, make_parents: bool = False) -> SessionResult:
    """Run every point of ``scenario`` and write the results file (see module doc).

    Before anything is allocated: every point is planned, the output and checkpoint paths
    are checked (:func:`fdtd.io.paths.check_output`) and each point's memory, disk and work
    are held against this machine (:func:`fdtd.experiment.resources.guard`; ``force`` lets
    through what might fit).  With ``checkpoint`` the state is saved every
    run.checkpoint_every steps (default: once per recording window) and each finished scan
    point is kept beside it; ``resume`` continues from such a checkpoint, at the point and
    step it was taken, bit for bit."""
    from fdtd.io import checkpoint as CK
    from fdtd.io.paths import OutputPathError, check_output

    planned = plan_points(scenario)
    out = Path(out) if out else Path(scenario.where).with_suffix(".h5")
    check_output(out, "--output", make_parents)
    if checkpoint is not None:
        check_output(checkpoint, "--checkpoint", make_parents)
        if Path(checkpoint).resolve() == out.resolve():
            raise OutputPathError(f"--checkpoint {checkpoint}: the same file as the results (--output)")
    for pt, p in planned:
        guard(p, pt.where, out, force=force, points=1)
    digest = CK.scenario_digest([p for _pt, p in planned])
    start, fresh = 0, True
    if resume is not None:
        head = CK.read_header(resume)
        if head["digest"] and head["digest"] != digest:
            raise CK.CheckpointError(f"--resume {resume}: the checkpoint belongs to a different scenario (or the "
                                     "scenario was edited since): resume with the scenario and --set values it "
                                     "was made with")
        start, fresh = head["point"], head["fresh"]
        if start >= len(planned):
            raise CK.CheckpointError(f"--resume {resume}: every point of this scenario had finished; the results "
                                     f"were written when it ended (point {start} of {len(planned)})")
    status, reason = "complete", "completed"
    summaries = []
    with deferred_stops():
        writer = R.AtomicResults(out)
        with writer as f:
            try:
                status, reason = _run_points(f, scenario, planned, progress, checkpoint, resume, start, fresh,
                                             digest, summaries)
            except KeyboardInterrupt:          # while a point's figures were being written
                status, reason = "partial", "interrupted while writing the results"
            # the rename is the last act: a killed run never leaves a file that looks complete
            writer.commit(status, reason)
    return SessionResult(str(out), status, reason, summaries)


def _run_points(f, scenario, planned, progress, checkpoint, resume, start, fresh, digest, summaries):
    """The points of a session into the open results file ``f``; returns (status, reason)."""
    from fdtd.io import checkpoint as CK

    status, reason = "complete", "completed"
    sc_g = f.create_group("scenario")
    sc_g.attrs["text"] = scenario.text or ""
    sc_g.attrs["file"] = str(scenario.where)
    sc_g.attrs["resolved"] = planned[0][1].to_json()
    R.write_units(f, planned[0][1].units)
    f.attrs["scenario_file"] = str(scenario.where)
    f.flush()
    scan = len(planned) > 1
    if scan:
        sg = f.create_group("scan")
        sg.attrs["key"] = scenario.values["scan"]["key"]
        sg.attrs["values"] = json.dumps(scenario.values["scan"]["values"])
    for k in range(start):                     # finished before the interruption: kept beside it
        summaries.append(CK.load_point(resume, k, f["scan"], f"point_{k}", digest))
        log.info("point %d/%d: kept from %s", k + 1, len(planned), resume)
    for k in range(start, len(planned)):
        pt, p = planned[k]
        log.info("point %d/%d: %s", k + 1, len(planned), pt.where)
        for w in p.warnings:
            log.warning("  warning: %s", w)
        group = f.create_group(f"scan/point_{k}") if scan else f
        exp = Experiment(p, progress=progress, checkpoint=checkpoint, sink=group)
        exp.session = {"point": k, "digest": digest}
        if resume is not None and k == start and not fresh:
            CK.load_checkpoint(resume, exp)
            log.info("  resumed from %s at step %d (%s)", resume, exp.solver.step_count, exp.state["phase"])
        why = exp.execute()
        grid = isolated = None
        try:
            if why == "completed" and p.grid_check and p.kind == "comoving":
                exp, grid, why = _grid_checked(exp, group, progress)
                p = exp.plan
            if why == "completed" and p.isolated and p.kind == "comoving" and exp.last_spectrum is not None:
                from fdtd.experiment.isolated import isolated_emitter

                isolated = isolated_emitter(p, exp.last_spectrum, p.isolated_tol, p.isolated_max_runs,
                                            progress=progress)
        except KeyboardInterrupt:      # during a companion run: the point's own figures are kept
            why = "interrupted"
            p.notes.append("interrupted during the grid check or the isolated-emitter runs: the figures are "
                           "those of the point's own run, without that check")
        steady = exp.state.get("steady")
        grid_bad = grid is not None and grid.get("relative", 0.0) > p.grid_tol
        if why == "interrupted":
            st = "partial"
            status, reason = "partial", f"interrupted at step {exp.solver.step_count}"
        elif steady is False or grid_bad:
            st = NOT_CONVERGED
            if status == "complete":
                status, reason = NOT_CONVERGED, (
                    "the reported figures did not settle within run.max_time" if steady is False else
                    f"the estimated discretization error ({100 * grid['relative']:.2g} %) exceeds "
                    f"run.grid_tolerance = {100 * p.grid_tol:.2g} %: refine grid.cell")
        else:
            st = "complete"
        outcome = summarise(exp, st, grid, isolated)
        write_point(group, p, outcome, pt.values["geometry"]["kind"])
        summaries.append(outcome.summary)
        f.flush()
        if why == "interrupted":
            break
        if checkpoint is not None and scan:
            CK.save_point(checkpoint, k, group, outcome.summary, digest)
    if scan:
        R.write_summary(f, {"points": {"value": len(summaries), "error": None, "units": "",
                                       "normalized": len(summaries)}})
    if len(summaries) < len(planned) and status == "complete":
        status, reason = "partial", "scan not finished"
    return status, reason


def _grid_checked(exp: Experiment, group, progress):
    """The grid check of a finished co-moving point, refining the grid while its estimated
    error exceeds run.grid_tolerance (at most run.grid_refinements times): each refinement
    runs the point again with the cell halved, and the run before it serves as the coarse
    companion.  Returns (the finest experiment, its grid check, "completed"/"interrupted")."""
    from fdtd.experiment.grid_check import compare_grids, refined_plan, run_grid_check

    p = exp.plan
    grid = run_grid_check(p, exp.last_spectrum, progress=progress, floor=exp.zero_power, zero_level=exp.zero_level)
    for _ in range(p.grid_refinements):
        rel = grid.get("relative", float("nan"))
        if not rel > p.grid_tol:          # within tolerance (or no estimate): done
            break
        if exp.state.get("steady") is False:
            p.notes.append("no grid refinement: the run did not settle within run.max_time, and a finer grid "
                           "does not make it settle (raise run.max_time first)")
            break
        r = refined_plan(p)
        try:
            guard(r, p.where)            # the same limits as any run: refine only what fits
        except ResourceError as exc:
            p.notes.append(f"no grid refinement: {exc}")
            break
        log.info("  grid error %.2g %% > run.grid_tolerance = %.2g %%: running again with cell %.4g nm",
                 100 * rel, 100 * p.grid_tol, r.cell * r.ell * 1e9)
        fine = Experiment(r, progress=progress, sink=group)
        why = fine.execute()
        if why != "completed":
            return fine, None, why
        r.adjustments.append(f"grid refined automatically: cell {p.cell * p.ell:.4g} m -> {r.cell * r.ell:.4g} m "
                             f"(the estimated discretization error on the first grid was {100 * rel:.2g} %, "
                             f"above run.grid_tolerance = {100 * p.grid_tol:.2g} %)")
        grid = compare_grids(r, fine.last_spectrum, p.nx, exp.last_spectrum, floor=fine.zero_power, previous=grid,
                             zero_level=fine.zero_level)
        grid.update(steady=exp.state.get("steady"), note="")
        exp, p = fine, r
    return exp, grid, "completed"
