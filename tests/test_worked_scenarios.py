"""Every worked scenario in scenarios/ runs through ``gapwake run``, shortened with ``--set``
(two transits, the first scan point).  These are runs of the product as a user starts them;
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
#: 1D runs are dominated by per-step Python work today: over a minute even when shortened
SLOW = {"bulk_exciton_threshold"}


def _shortened(path: Path) -> list[str]:
    data = tomllib.loads(path.read_text())
    args = ["--set", "run.transits=2"]
    if "scan" in data:
        args += ["--set", f"scan.values=[{json.dumps(data['scan']['values'][0])}]"]
    return args


def test_there_are_worked_scenarios():
    assert len(SCENARIOS) >= 4


@pytest.mark.parametrize("path", [pytest.param(p, id=p.stem, marks=[pytest.mark.slow] if p.stem in SLOW else [])
                                  for p in SCENARIOS])
def test_worked_scenario_runs_through_the_command_line(path, tmp_path, capsys):
    out = tmp_path / f"{path.stem}.h5"
    assert main(["run", str(path), "-o", str(out), "--json", *_shortened(path)]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["status"] in ("complete", "partial") and Path(data["file"]).exists()
    (p,) = data["points"]
    assert abs(p["ledger_residual"]["value"]) < 1e-9
    assert p["total_power"]["value"] > 0
    if "rest_frequency" in p:                     # a dipole: both branches add up to the total
        total = p["normal_power"]["value"] + p["anomalous_power"]["value"]
        assert total == pytest.approx(p["total_power"]["value"], rel=1e-9, abs=0)
    if data["status"] == "complete" and p.get("steady", {}).get("value") is False:
        pytest.fail("a run that did not settle is reported complete")
    if "reference_total_power" in p:
        assert p["reference_total_power"]["value"] > 0
