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
import signal
from dataclasses import dataclass
from pathlib import Path

from fdtd.experiment.procedure import Experiment
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


#: scan keys that change the cell itself: then every point sizes its own cell
_CELL_KEYS = ("grid.length", "grid.cell", "grid.cells_per_wavelength", "grid.adjust_length")


def plan_points(scenario: Scenario) -> list:
    """(point scenario, plan) for every point of the scenario (raises ScenarioError).

    Within a scan every point keeps the cell (length and cell size) the first point's plan
    chose, so that the points are comparable, unless the scan varies the cell itself."""
    points = scenario.scan_points()
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
                 resume=None) -> SessionResult:
    """Run every point of ``scenario`` and write the results file (see module doc)."""
    planned = plan_points(scenario)
    out = Path(out) if out else Path(scenario.where).with_suffix(".h5")
    status, reason = "complete", "completed"
    summaries = []
    old_handler = None

    def on_term(signum, frame):    # SIGTERM: stop like Ctrl-C, keep what was measured
        raise KeyboardInterrupt

    try:
        old_handler = signal.signal(signal.SIGTERM, on_term)
    except ValueError:   # not in the main thread
        pass
    try:
        writer = R.AtomicResults(out)
        with writer as f:
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
            for k, (pt, p) in enumerate(planned):
                log.info("point %d/%d: %s", k + 1, len(planned), pt.where)
                for w in p.warnings:
                    log.warning("  warning: %s", w)
                group = f.create_group(f"scan/point_{k}") if scan else f
                exp = Experiment(p, progress=progress, checkpoint=checkpoint, sink=group)
                if resume is not None and k == 0:
                    from fdtd.io.checkpoint import load_checkpoint

                    load_checkpoint(resume, exp)
                    log.info("  resumed from %s at step %d (%s)", resume, exp.solver.step_count,
                             exp.state["phase"])
                why = exp.execute()
                steady = exp.state.get("steady")
                grid = None
                if why == "completed" and p.grid_check and p.kind == "comoving":
                    from fdtd.experiment.grid_check import run_grid_check

                    grid = run_grid_check(p, exp.last_spectrum, progress=progress)
                isolated = None
                if why == "completed" and p.isolated and p.kind == "comoving" and exp.last_spectrum is not None:
                    from fdtd.experiment.isolated import isolated_emitter

                    isolated = isolated_emitter(p, exp.last_spectrum, p.isolated_tol, p.isolated_max_runs,
                                                progress=progress)
                if why == "interrupted":
                    st = "partial"
                    status, reason = "partial", f"interrupted at step {exp.solver.step_count}"
                elif steady is False:
                    st = NOT_CONVERGED
                    if status == "complete":
                        status, reason = NOT_CONVERGED, ("the reported figures did not settle within "
                                                         "run.max_time")
                else:
                    st = "complete"
                outcome = summarise(exp, st, grid, isolated)
                write_point(group, p, outcome, pt.values["geometry"]["kind"])
                summaries.append(outcome.summary)
                f.flush()
                if why == "interrupted":
                    break
            if scan:
                R.write_summary(f, {"points": {"value": len(summaries), "error": None, "units": "",
                                               "normalized": len(summaries)}})
            if len(summaries) < len(planned) and status == "complete":
                status, reason = "partial", "scan not finished"
            # the rename is the last act: a killed run never leaves a file that looks complete
            writer.commit(status, reason)
    finally:
        if old_handler is not None:
            signal.signal(signal.SIGTERM, old_handler)
    return SessionResult(str(out), status, reason, summaries)
