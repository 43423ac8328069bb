"""Nothing lost, nothing misread: checkpoints in every phase and between scan points (kill -9,
then --resume, bit for bit), resource guards before allocation, output paths checked before
the run, a final rename that never leaves a "complete" file under a temporary name, and
memory that stays flat with run length.

All runs go through ``gapwake run`` (``fdtd.cli.main``) or a real ``gapwake`` process."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import time
from pathlib import Path

import h5py
import numpy as np
import pytest

from test_scenario_files import TINY as BASE
from test_scenario_files import edit

import fdtd
from fdtd.cli import main

#: the small half-space scenario of tests/test_scenario_files.py, with a checkpoint cadence
TINY = edit(BASE, "transits = 2", "transits = 2\ncheckpoint_every = 60")

SCAN = TINY + """
[scan]
key = "source.speed"
values = ["0.6 c", "0.65 c"]
"""


def _write(tmp_path, text, name="case.toml") -> Path:
    p = tmp_path / name
    p.write_text(text)
    return p


def _same_results(a_path, b_path) -> None:
    a, b = fdtd.as_arrays(a_path), fdtd.as_arrays(b_path)
    assert set(a) == set(b)
    for name in a:
        nan_ok = np.issubdtype(np.asarray(a[name]).dtype, np.floating)   # NaN marks "no branch"
        assert np.array_equal(a[name], b[name], equal_nan=nan_ok), name
    with h5py.File(a_path) as fa, h5py.File(b_path) as fb:
        assert fa.attrs["status"] == fb.attrs["status"]


def _header(ck: Path):
    """(point, phase, step) of a checkpoint, or None while it is not there / being replaced."""
    try:
        with h5py.File(ck, "r") as f:
            state = json.loads(f.attrs["state"]) if "state" in f.attrs else {"phase": "not started"}
            step = int(f["solver"].attrs["step_count"]) if "solver" in f else 0
            return int(f.attrs.get("point", 0)), state["phase"], step, len(state.get("windows", []))
    except (OSError, KeyError):
        return None


def _kill_when(tmp_path, scenario: Path, ck: Path, ready, timeout=240.0) -> Path:
    """Start ``gapwake run`` in a process, SIGKILL it as soon as ``ready(header)`` holds for its
    checkpoint, and return the (unfinished) results path."""
    out = tmp_path / "killed.h5"
    env = dict(os.environ, NUMBA_NUM_THREADS="1")
    proc = subprocess.Popen([sys.executable, "-m", "fdtd.cli", "run", str(scenario), "-o", str(out),
                             "--checkpoint", str(ck), "--quiet"], env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    t0 = time.time()
    try:
        while time.time() - t0 < timeout:
            h = _header(ck) if ck.exists() else None
            if h is not None and ready(h):
                proc.kill()
                break
            if proc.poll() is not None:
                pytest.fail(f"the run ended before the kill point (rc {proc.returncode}): "
                            f"{proc.stderr.read().decode()[-2000:]}")
            time.sleep(0.01)
        else:
            pytest.fail("kill point not reached")
    finally:
        proc.wait(30)
    assert proc.returncode == -9
    assert not out.exists()          # a killed run leaves no file under the final name
    return out


@pytest.fixture(scope="module")
def whole(tmp_path_factory):
    d = tmp_path_factory.mktemp("whole")
    sc = _write(d, TINY)
    assert main(["run", str(sc), "-o", str(d / "whole.h5"), "--quiet"]) == 0
    return d / "whole.h5"


@pytest.mark.parametrize("phase", ["ramp", "first window", "second window"])
def test_kill_9_then_resume_is_bitwise_identical(tmp_path, whole, phase, capsys):
    sc = _write(tmp_path, TINY)
    ck = tmp_path / "state.ck"
    ready = {"ramp": lambda h: h[1] == "ramp",
             "first window": lambda h: h[1] == "window" and h[3] == 0,
             "second window": lambda h: h[1] == "window" and h[3] == 1}[phase]
    killed = _kill_when(tmp_path, sc, ck, ready)
    tmp = killed.with_name(killed.name + ".incomplete")
    if tmp.exists():                                     # what a kill -9 leaves: never "complete"
        with h5py.File(tmp, "r") as f:
            assert f.attrs["status"] != "complete"
    resumed = tmp_path / "resumed.h5"
    assert main(["run", str(sc), "-o", str(resumed), "--resume", str(ck), "--checkpoint", str(ck),
                 "--quiet"]) == 0
    capsys.readouterr()
    _same_results(whole, resumed)


@pytest.mark.slow
def test_kill_9_between_and_inside_scan_points(tmp_path, capsys):
    """A scan killed in its second point resumes there and keeps the first (slow: three
    processes of a two-point scan)."""
    sc = _write(tmp_path, SCAN)
    assert main(["run", str(sc), "-o", str(tmp_path / "whole.h5"), "--quiet"]) == 0
    ck = tmp_path / "scan.ck"
    _kill_when(tmp_path, sc, ck, lambda h: h[0] == 1 and h[1] == "window")
    assert (tmp_path / "scan.ck.point0").exists()
    assert main(["run", str(sc), "-o", str(tmp_path / "resumed.h5"), "--resume", str(ck), "--quiet"]) == 0
    capsys.readouterr()
    _same_results(tmp_path / "whole.h5", tmp_path / "resumed.h5")


def test_scan_resumes_at_a_fresh_point_marker(tmp_path, capsys):
    """Between scan points the checkpoint says "point k, not started": a resume keeps the
    finished points and runs the rest (the same results as one uninterrupted run)."""
    text = SCAN.replace("checkpoint_every = 60", "checkpoint_every = 100000")   # only between points
    sc = _write(tmp_path, text)
    ck = tmp_path / "scan.ck"
    assert main(["run", str(sc), "-o", str(tmp_path / "whole.h5"), "--checkpoint", str(ck), "--quiet"]) == 0
    point0 = tmp_path / "scan.ck.point0"
    assert point0.exists()
    # the state after point 0 had finished: its kept results and the marker of point 1
    from fdtd.io.checkpoint import read_header, save_point
    from fdtd.experiment.session import plan_points
    from fdtd.io.checkpoint import scenario_digest

    digest = scenario_digest([p for _pt, p in plan_points(fdtd.load(sc))])
    with h5py.File(point0) as f, h5py.File(tmp_path / "whole.h5") as w:
        save_point(ck, 0, w["scan/point_0"], json.loads(f.attrs["summary"]), digest)
    assert read_header(ck) == {"point": 1, "fresh": True, "digest": digest}
    assert main(["run", str(sc), "-o", str(tmp_path / "resumed.h5"), "--resume", str(ck), "--quiet"]) == 0
    capsys.readouterr()
    _same_results(tmp_path / "whole.h5", tmp_path / "resumed.h5")


def test_checkpoint_without_cadence_writes_one_per_window(tmp_path, capsys):
    sc = _write(tmp_path, TINY.replace("checkpoint_every = 60\n", ""))
    ck = tmp_path / "state.ck"
    assert main(["run", str(sc), "-o", str(tmp_path / "r.h5"), "--checkpoint", str(ck), "--quiet"]) == 0
    capsys.readouterr()
    h = _header(ck)
    assert h is not None and h[2] > 0                 # a real state was saved


def test_resume_with_another_scenarios_checkpoint_exits_2(tmp_path, capsys):
    sc = _write(tmp_path, TINY)
    ck = tmp_path / "state.ck"
    assert main(["run", str(sc), "-o", str(tmp_path / "a.h5"), "--checkpoint", str(ck), "--quiet"]) == 0
    other = _write(tmp_path, TINY.replace('speed = "0.6 c"', 'speed = "0.62 c"'), "other.toml")
    capsys.readouterr()
    assert main(["run", str(other), "-o", str(tmp_path / "b.h5"), "--resume", str(ck), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "different scenario" in err and "Traceback" not in err
    assert not (tmp_path / "b.h5").exists() and not (tmp_path / "b.h5.incomplete").exists()
    # a results file is not a checkpoint
    assert main(["run", str(sc), "-o", str(tmp_path / "c.h5"), "--resume", str(tmp_path / "a.h5"), "--quiet"]) == 2
    assert "not a gapwake checkpoint" in capsys.readouterr().err


# ----------------------------------------------------------------------------- output paths
@pytest.mark.parametrize("case", ["directory", "under a file", "missing folder", "checkpoint is output"])
def test_output_paths_are_checked_before_the_run(tmp_path, case, capsys):
    sc = _write(tmp_path, TINY)
    (tmp_path / "afile").write_text("x")
    (tmp_path / "adir").mkdir()
    args = {"directory": ["-o", str(tmp_path / "adir")],
            "under a file": ["-o", str(tmp_path / "afile" / "r.h5")],
            "missing folder": ["-o", str(tmp_path / "new" / "r.h5")],
            "checkpoint is output": ["-o", str(tmp_path / "r.h5"), "--checkpoint", str(tmp_path / "r.h5")]}[case]
    t0 = time.perf_counter()
    assert main(["run", str(sc), *args, "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err and ("--output" in err or "--checkpoint" in err), err
    assert time.perf_counter() - t0 < 20                 # refused before the simulation
    assert not list(tmp_path.glob("**/*.incomplete")) and not (tmp_path / "r.h5").exists()
    if case == "missing folder":                         # created on request
        assert main(["run", str(sc), *args, "--parents", "--quiet"]) == 0
        assert (tmp_path / "new" / "r.h5").exists()


def test_failed_rename_leaves_a_partial_file_not_a_complete_one(tmp_path):
    from fdtd.io.paths import OutputPathError
    from fdtd.io.results import AtomicResults

    target = tmp_path / "r.h5"
    w = AtomicResults(target)
    with w as f:
        f.attrs["x"] = 1
        target.mkdir()                                   # something takes the name meanwhile
        (target / "keep").write_text("x")
        with pytest.raises(OutputPathError, match="marked partial"):
            w.commit("complete", "completed")
    with h5py.File(tmp_path / "r.h5.incomplete") as f:
        assert f.attrs["status"] == "partial"


# ----------------------------------------------------------------------------- resources
def test_memory_estimate_matches_the_allocated_arrays():
    from fdtd.experiment.procedure import Experiment
    from fdtd.experiment.resources import memory_estimate
    from fdtd.experiment.session import plan_points

    bulk_1d = (TINY.replace('[grid]\n', '[grid]\npolarization = "1d"\n')
               .replace('kind = "half-space"\nmaterial = "m"', 'background = "m"')
               .replace('height = "300 nm"\n', '').replace('height = "150 nm"\n', '')
               .replace('flux_heights = ["250 nm", "0 nm"]\n', '').replace('line_height = "200 nm"\n', '')
               .replace('line_component = "Hz"', 'line_component = "Ey"'))
    for text in (TINY, bulk_1d):
        sc = fdtd.Scenario(__import__("tomllib").loads(text), where="tiny")
        _pt, p = plan_points(sc)[0]
        exp = Experiment(p, progress=False)
        s = exp.solver
        real = sum(a.nbytes for a in s.fields.values()) + sum(P.nbytes + Po.nbytes for P, Po in s.polarization.values())
        real += sum(a.nbytes for a in s.psi.values())
        est = memory_estimate(p)
        assert 0.9 * real <= est <= 2.5 * real, (est, real)


@pytest.mark.parametrize("edit, expect", [
    (('cell = "20 nm"', 'cell = "0.05 nm"'), r"needs about .* GiB of memory .* available"),
    (('height = "300 nm"', "height = 257"), r"plain number is read in"),
])
def test_grids_that_do_not_fit_are_refused_by_check_and_run(tmp_path, edit, expect, capsys):
    sc = _write(tmp_path, TINY.replace(*edit))
    for cmd in (["check", str(sc)], ["run", str(sc), "-o", str(tmp_path / "r.h5"), "--quiet"]):
        t0 = time.perf_counter()
        assert main(cmd) == 2
        err = capsys.readouterr().err
        assert "Traceback" not in err
        import re

        assert re.search(expect, err), err
        assert time.perf_counter() - t0 < 30
    assert not list(tmp_path.glob("r.h5*"))


def test_absurd_run_lengths_and_snapshot_counts_are_refused(tmp_path, capsys):
    for old, what in ((("transits = 2", "transits = 2\nmax_time = \"1 s\""), "cell updates"),
                      (('snapshots = 5', "snapshots = 1000000000"), "snapshots")):
        sc = _write(tmp_path, TINY.replace(*old))
        assert main(["run", str(sc), "-o", str(tmp_path / "r.h5"), "--quiet"]) == 2
        err = capsys.readouterr().err
        assert what in err and "Traceback" not in err, err


# ----------------------------------------------------------------------------- memory
_RSS = """
import resource, sys, fdtd
out = fdtd.run(sys.argv[1], sys.argv[2], progress=False)
print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
"""

OPEN = """\
[units]
mode = "natural"
frequency = "1 eV"

[materials.m]
kind = "poles"
eps_inf = 1.0
poles = [ { kind = "lorentz", delta_eps = 2.0, omega = 1.0, gamma = 0.1 } ]

[geometry]
kind = "half-space"
material = "m"

[grid]
cell = 0.1
length = 30.0
height = 1.0

[source]
kind = "dipole"
speed = "0 c"
x0 = 15.0
height = 0.25
frequency = 1.2

[run]
kind = "open"
time = TIME

[record]
line_component = "Hz"
line_height = 0.4
line_every = 1
"""


@pytest.mark.slow
def test_memory_stays_flat_with_run_length(tmp_path):
    """Peak RSS of a run 10 times longer within 1.2 times that of the 1x run: the field line
    (here ~160 MB at 10x if it were kept in memory) streams to the results file (slow: about
    a minute on a quiet core)."""
    rss = []
    for k, T in enumerate((300.0, 3000.0)):
        sc = _write(tmp_path, OPEN.replace("TIME", str(T)), f"open{k}.toml")
        r = subprocess.run([sys.executable, "-c", _RSS, str(sc), str(tmp_path / f"o{k}.h5")], capture_output=True,
                           text=True, env=dict(os.environ, NUMBA_NUM_THREADS="1"), timeout=600)
        assert r.returncode == 0, r.stderr[-2000:]
        rss.append(int(r.stdout.split()[-1]) * 1024)
    with fdtd.open_results(tmp_path / "o1.h5") as res:
        line_bytes = res.root["line/data"].size * 8 if "line/data" in res.root else None
    assert line_bytes is None or line_bytes > 0.3 * rss[0]       # the record would have shown
    print(f"peak RSS 1x {rss[0] / 2**20:.0f} MiB, 10x {rss[1] / 2**20:.0f} MiB; line record at 10x "
          f"{(line_bytes or 0) / 2**20:.0f} MiB")
    assert rss[1] <= 1.2 * rss[0], rss


def test_ctrl_c_while_the_figures_are_written_leaves_a_partial_file(tmp_path, monkeypatch, capsys):
    """Ctrl-C after the simulation, while a point's figures are being written: the file gets
    its name but says partial (never complete), and the command exits 130."""
    import fdtd.experiment.session as S

    def interrupted(*_a, **_k):
        raise KeyboardInterrupt

    monkeypatch.setattr(S, "write_point", interrupted)
    sc = _write(tmp_path, TINY.replace("transits = 2", "transits = 1").replace("checkpoint_every = 60\n", ""))
    assert main(["run", str(sc), "-o", str(tmp_path / "r.h5"), "--quiet"]) == 130
    capsys.readouterr()
    with h5py.File(tmp_path / "r.h5") as f:
        assert f.attrs["status"] == "partial"
        assert "interrupted" in f.attrs["stop_reason"]
