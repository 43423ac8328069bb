"""Every worked scenario in scenarios/ runs through ``gapwake run``, shortened with ``--set``
(the first scan point, at most three recording windows, one grid).  These are runs of the product as a user starts them;
the checks are the run's own consistency (exit code, status, energy ledger, branch sum, the
reference where the geometry is planar).  Their headline claims are asserted on the
full-length runs by validation/worked_scenarios.py.
"""

from __future__ import annotations

import json
import tomllib
from pathlib import Path

import pytest

from fdtd.cli import main

ROOT = Path(__file__).resolve().parents[1]
SCENARIOS = sorted((ROOT / "scenarios").glob("*.toml"))
#: over a minute even when shortened (a 2D cell with a fine grid)
SLOW = {"polar_crystal_glide"}


def _shortened(path: Path) -> list[str]:
    """The first scan point, its own window, at most three windows (run.max_time), one grid
    (no automatic refinement: it would cost 4-8 times the run)."""
    import fdtd
    from fdtd.experiment.session import plan_points

    data = tomllib.loads(path.read_text())
    args = []
    sc = fdtd.load(path)
    if "scan" in data:
        first = json.dumps(data["scan"]["values"][0])
        args += ["--set", f"scan.values=[{first}]"]
        sc = sc.set("scan.values", [data["scan"]["values"][0]])
    _pt, p = plan_points(sc)[0]
    if p.kind == "comoving":
        t_max = p.seconds(p.switch_on + 3 * p.transits * p.transit)
        args += ["--set", f'run.max_time="{t_max!r} s"', "--set", "run.grid_refinements=0"]
    return args


def test_there_are_worked_scenarios():
    assert len(SCENARIOS) >= 4


@pytest.mark.parametrize("path", [pytest.param(p, id=p.stem, marks=[pytest.mark.slow] if p.stem in SLOW else [])
                                  for p in SCENARIOS])
def test_worked_scenario_runs_through_the_command_line(path, tmp_path, capsys):
    out = tmp_path / f"{path.stem}.h5"
    rc = main(["run", str(path), "-o", str(out), "--json", *_shortened(path)])
    data = json.loads(capsys.readouterr().out)
    # shortened, a run may stop before its figures settle: then it says so (exit 3)
    assert (rc, data["status"]) in ((0, "complete"), (3, "not converged")), (rc, data["status"])
    assert Path(data["file"]).exists()
    (p,) = data["points"]
    assert abs(p["ledger_residual"]["value"]) < 1e-9
    assert p["total_power"]["value"] > 0
    if "rest_frequency" in p:                     # a dipole: both branches add up to the total
        total = p["normal_power"]["value"] + p["anomalous_power"]["value"]
        assert total == pytest.approx(p["total_power"]["value"], rel=1e-9, abs=0)
    # not converged means: not settled, or (one grid only) a grid error above run.grid_tolerance
    steady = p.get("steady", {}).get("value") is not False
    grid_bad = "exceeds run.grid_tolerance" in data["stop_reason"]
    assert (data["status"] == "complete") == (steady and not grid_bad), (steady, data["stop_reason"])
    if grid_bad:
        assert "grid_error_of_total" in p
    if "reference_total_power" in p:
        assert p["reference_total_power"]["value"] > 0
