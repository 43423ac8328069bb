"""Scenario files, the command line, the results file, plots and animations.

The scenario used here is a small case of our own (an invented single-resonance
dielectric); it runs in about a second.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import h5py
import numpy as np
import pytest

import fdtd
from fdtd.cli import main
from fdtd.experiment.procedure import Experiment
from fdtd.scenario.plan import plan as make_plan

ROOT = Path(__file__).resolve().parents[1]

TINY = """\
[units]
length = "164.4 nm"

[materials.m]
kind = "poles"
eps_inf = 1.0
poles = [ { kind = "lorentz", delta_eps = 2.0, omega = "1.0 eV", gamma = "0.1 eV" } ]

[geometry]
kind = "half-space"
material = "m"

[grid]
cell = "20 nm"
length = "600 nm"
height = "300 nm"

[source]
kind = "dipole"
speed = "0.6 c"
height = "150 nm"
frequency = "1.2 eV"

[run]
transits = 2

[record]
flux_heights = ["250 nm", "0 nm"]
snapshots = 5
line_component = "Hz"
line_height = "200 nm"
"""


def write(tmp_path, text, name="case.toml") -> Path:
    p = tmp_path / name
    p.write_text(text)
    return p


def edit(text: str, old: str, new: str) -> str:
    assert old in text, old
    return text.replace(old, new, 1)


@pytest.fixture(scope="module")
def tiny_run(tmp_path_factory):
    d = tmp_path_factory.mktemp("tiny")
    path = write(d, TINY)
    out = fdtd.run(path, d / "tiny.h5", progress=False)
    return d, path, Path(out.file), out


# ----------------------------------------------------------------------------- schema errors
MISSING = [
    ('length = "600 nm"\n', "", "grid.length is missing"),
    ('kind = "dipole"\n', "", "source.kind is missing"),
    ('speed = "0.6 c"\n', "", "source.speed is missing"),
    ('kind = "poles"\n', "", "materials.m.kind is missing"),
    ('{ kind = "lorentz", ', "{ ", "poles[0].kind is missing"),
]

WRONG_TYPE = [
    ('speed = "0.6 c"', "speed = true", "source.speed = True"),
    ('length = "600 nm"', "length = [1, 2]", "grid.length = [1, 2]"),
    ("snapshots = 5", 'snapshots = "many"', "record.snapshots = 'many': expected an integer"),
    ("transits = 2", "transits = 2.5", "run.transits = 2.5: expected an integer"),
    ('material = "m"', "material = 3", "geometry.material = 3: expected a string"),
    ("[run]\n", "[run]\ncourant = 1\n", "unknown key 'run.courant'"),
    ("[record]\n", "[record]\ndoppler = \"yes\"\n", "record.doppler = 'yes': expected true or false"),
    ("poles = [", "poles = 3 #", "materials.m.poles = 3: expected a list"),
]

OUT_OF_RANGE = [
    ('speed = "0.6 c"', 'speed = "1.2 c"', "source.speed = '1.2 c'", "value < 1"),
    ('speed = "0.6 c"', 'speed = "-0.1 c"', "source.speed = '-0.1 c'", "0 <= value"),
    ('cell = "20 nm"', 'cell = "-5 nm"', "grid.cell = '-5 nm'", "0 < value"),
    ("[grid]\n", "[grid]\ncourant = 1.5\n", "grid.courant = 1.5", "value <= 1"),
    ("[grid]\n", "[grid]\ncourant = 0.0\n", "grid.courant = 0.0", "0 < value"),
    ("snapshots = 5", "snapshots = -1", "record.snapshots = -1", "0 <= value"),
    ("[source]\n", "[source]\nshape_order = 4\n", "source.shape_order = 4", "value <= 3"),
    ('gamma = "0.1 eV"', 'gamma = "-0.1 eV"', "gamma = '-0.1 eV'", "0 <= value"),
    ("delta_eps = 2.0", "delta_eps = -2.0", "delta_eps = -2.0", "0 <= value"),
    ('kind = "half-space"', 'kind = "halfspace"', "geometry.kind = 'halfspace'", "did you mean 'half-space'"),
]

UNKNOWN = [
    ('length = "600 nm"', 'lenght = "600 nm"', "unknown key 'grid.lenght' (did you mean 'length'?)"),
    ("[source]", "[sorce]", "did you mean 'source'"),
    ('height = "150 nm"', 'heigth = "150 nm"', "did you mean 'height'"),
]

BAD_UNITS = [
    ('length = "600 nm"', 'length = "40 parsecs per fortnight"', "grid.length = '40 parsecs per fortnight'"),
    ('frequency = "1.2 eV"', 'frequency = "3 furlongs"', "source.frequency = '3 furlongs'"),
    ('speed = "0.6 c"', 'speed = "fast"', "source.speed = 'fast'"),
    ('cell = "20 nm"', 'cell = "20 blorbs"', "grid.cell = '20 blorbs'"),
]

CROSS = [
    ('material = "m"', 'material = "glass"', "geometry.material = 'glass'"),
    ('line_component = "Hz"', 'line_component = "Bz"', "record.line_component = 'Bz'"),
]


def _expect_rejected(tmp_path, capsys, text, *fragments):
    path = write(tmp_path, text)
    out = tmp_path / "never.h5"
    for cmd in (["check", str(path)], ["run", str(path), "-o", str(out)]):
        rc = main(cmd)
        err = capsys.readouterr().err
        assert rc == 2, (cmd, err)
        assert str(path.name) in err, err         # the file is named
        for frag in fragments:
            assert frag in err, (frag, err)
    assert list(tmp_path.glob("never.h5*")) == []  # nothing written


@pytest.mark.parametrize("old,new,msg", MISSING)
def test_missing_required_key(tmp_path, capsys, old, new, msg):
    _expect_rejected(tmp_path, capsys, edit(TINY, old, new), msg)


@pytest.mark.parametrize("old,new,msg", WRONG_TYPE)
def test_wrong_type(tmp_path, capsys, old, new, msg):
    _expect_rejected(tmp_path, capsys, edit(TINY, old, new), msg)


@pytest.mark.parametrize("old,new,msg,allowed", OUT_OF_RANGE)
def test_out_of_range(tmp_path, capsys, old, new, msg, allowed):
    _expect_rejected(tmp_path, capsys, edit(TINY, old, new), msg, allowed)


@pytest.mark.parametrize("old,new,msg", UNKNOWN)
def test_unknown_key_suggests(tmp_path, capsys, old, new, msg):
    _expect_rejected(tmp_path, capsys, edit(TINY, old, new), msg)


@pytest.mark.parametrize("old,new,msg", BAD_UNITS)
def test_bad_unit_strings(tmp_path, capsys, old, new, msg):
    _expect_rejected(tmp_path, capsys, edit(TINY, old, new), msg)


@pytest.mark.parametrize("old,new,msg", CROSS)
def test_cross_checks(tmp_path, capsys, old, new, msg):
    _expect_rejected(tmp_path, capsys, edit(TINY, old, new), msg)


def test_all_errors_reported_at_once(tmp_path, capsys):
    text = edit(edit(TINY, 'speed = "0.6 c"', 'speed = "2 c"'), 'cell = "20 nm"', 'cel = "20 nm"')
    _expect_rejected(tmp_path, capsys, text, "source.speed", "grid.cel")


def test_not_toml_and_missing_file(tmp_path, capsys):
    _expect_rejected(tmp_path, capsys, "this is = = not toml", "not valid TOML")
    assert main(["check", str(tmp_path / "absent.toml")]) == 2
    assert "absent.toml" in capsys.readouterr().err


def test_set_override_is_validated(tmp_path, capsys):
    path = write(tmp_path, TINY)
    assert main(["check", str(path), "--set", 'source.speed="3 c"']) == 2
    assert "source.speed" in capsys.readouterr().err
    assert main(["check", str(path), "--set", "nosuchkey"]) == 2


def test_check_prints_resolved_grid_and_estimates(tmp_path, capsys):
    path = write(tmp_path, TINY)
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    for word in ("cells", "time step", "Courant", "steps", "memory", "run time"):
        assert word in out, (word, out)


def test_check_warns_on_coarse_grid_and_overlap(tmp_path, capsys):
    text = edit(edit(TINY, 'cell = "20 nm"', 'cell = "40 nm"'), 'height = "150 nm"', 'height = "60 nm"')
    path = write(tmp_path, text)
    assert main(["check", str(path)]) == 0      # warnings are not errors
    out = capsys.readouterr().out
    assert "cells per wavelength" in out
    assert "overlaps a material" in out


# ----------------------------------------------------------------------------- results file
def test_scenario_documentation_is_the_schema():
    """docs/scenarios.md carries exactly the key tables the schema renders."""
    from fdtd.scenario.schema import schema_markdown

    assert schema_markdown() in (ROOT / "docs" / "scenarios.md").read_text()


def test_results_documentation_is_the_writers_layout():
    """docs/results.md carries exactly the table the writer's own layout renders."""
    from fdtd.io.results import layout_markdown

    assert layout_markdown() in (ROOT / "docs" / "results.md").read_text()


def test_results_layout_matches_documentation(tiny_run):
    """Every dataset written is in the layout with the quantity's SI unit (a string pint
    parses, of the right dimension), and the coordinates are attached as dimension scales."""
    import pint
    import scipy.constants as sc

    from fdtd.io.results import layout_entry

    ureg = pint.UnitRegistry()
    dimension = {"length": "[length]", "time": "[time]", "wavenumber": "1/[length]",
                 "angular_frequency": "1/[time]", "power": "[power]/[length]",
                 "energy": "[energy]/[length]", "field": "[electric_field]", "magnetic_field": "[current]/[length]",
                 "dimensionless": ""}
    _d, _p, h5, _out = tiny_run
    seen = []
    with h5py.File(h5, "r") as f:
        assert f.attrs["format"] == "gapwake-results"
        assert f.attrs["status"] == "complete"
        assert "[source]" in f["scenario"].attrs["text"]
        units = f["units"].attrs

        def visit(name, obj):
            if not isinstance(obj, h5py.Dataset):
                return
            seen.append(name)
            entry = layout_entry(name)          # raises for an undocumented dataset
            for a in ("units", "si_factor", "normalized_unit", "description"):
                assert a in obj.attrs, (name, a)
            q = ureg.parse_expression(str(obj.attrs["units"]))
            allowed = [dimension[x.strip()] for x in entry.quantity.split(" or ")]
            assert any(q.check(dm) if dm else q.dimensionless for dm in allowed), (name, obj.attrs["units"])
        f.visititems(visit)
        for must in ("ledger/time", "ledger/stored", "ledger/source_work", "ledger/bath", "ledger/outflow",
                     "doppler/power", "reference/power_normal", "snapshots/Hz", "line/data",
                     "geometry/material_map"):
            assert must in seen, must
        # conversion factors agree with /units
        assert f["snapshots/x"].attrs["si_factor"] == pytest.approx(units["length"], rel=1e-12)
        assert f["ledger/time"].attrs["si_factor"] == pytest.approx(units["time"], rel=1e-12)
        assert f["doppler/power"].attrs["si_factor"] == pytest.approx(units["power"], rel=1e-12)
        # H is stored in units of E0/Z0 (Z0 from scipy.constants)
        z0 = sc.mu_0 * sc.c
        assert f["snapshots/Hz"].attrs["si_factor"] == pytest.approx(units["field"] / z0, rel=1e-9)
        assert np.all(np.diff(f["ledger/time"][:]) > 0)
        # dimension scales
        assert f["line/data"].dims[0][0] == f["line/time"] and f["line/data"].dims[1][0] == f["line/x"]
        assert f["snapshots/Hz"].dims[0][0] == f["snapshots/time"]
        assert f["snapshots/Hz"].dims[2][0] == f["snapshots/y"]
        assert f["doppler/power"].dims[0][0] == f["doppler/kx"]
        summary = json.loads(f["summary"].attrs["json"])
    for key in ("total_power", "normal_power", "anomalous_power", "drag_force", "ledger_residual"):
        assert key in summary and "units" in summary[key]
    assert summary["total_power"]["units"] == "W/m"
    assert summary["drag_force"]["units"] == "N/m"


def test_results_values_are_physical(tiny_run):
    """Energy balance and branch sum of the small run (its own internal consistency)."""
    _d, _p, _h5, out = tiny_run
    s = out.summary
    assert abs(s["ledger_residual"]["value"]) < 1e-9
    tot, nrm, ano = (s[k]["value"] for k in ("total_power", "normal_power", "anomalous_power"))
    assert tot == pytest.approx(nrm + ano, rel=1e-9)
    # sim vs the planar reference: only two transits, so compare within the run's own error bar
    ref = s["reference_total_power"]["value"]
    assert abs(tot - ref) < 3 * s["total_power"]["error"] + 0.05 * ref


def test_api_reads_arrays_and_changes_parameters(tiny_run, tmp_path):
    _d, path, h5, _out = tiny_run
    arrays = fdtd.as_arrays(h5)
    assert arrays["snapshots/Hz"].shape[0] == 5
    with fdtd.open_results(h5) as r:
        assert r.status == "complete"
        assert r.array("doppler/kx").shape == r.array("doppler/power").shape
    sc = fdtd.load(path).set("source.speed", "0.3 c").set("record.snapshots", 0)
    out = fdtd.run(sc, tmp_path / "slow.h5", progress=False)
    # the changed values reached the run: its plan, its summary, what it stored
    assert out.value("speed") == pytest.approx(0.3, rel=1e-12, abs=0)
    with fdtd.open_results(out.file) as r:
        assert r.plan["speed"] == pytest.approx(0.3, rel=1e-12, abs=0) and r.plan["snapshots"] == 0
        assert "snapshots" not in r.root and r.has("doppler/power")
        # a run that did not settle says so, in the file and in the summary; one that settled
        # is complete unless its grid check failed it (and then the reason says so)
        steady = out.value("steady") is True
        assert steady or r.status == "not converged"
        if steady and r.status != "complete":
            assert "grid_tolerance" in out.stop_reason, out.stop_reason
    assert "snapshots" not in fdtd.as_arrays(out.file)
    reports = fdtd.check(sc)
    assert reports and "cells" in reports[0].text and "v = 0.3 c" in reports[0].text


def test_json_summary(tmp_path, capsys):
    path = write(tmp_path, edit(TINY, "snapshots = 5", "snapshots = 0"))
    assert main(["run", str(path), "-o", str(tmp_path / "a.h5"), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["status"] == "complete"
    p = data["points"][0]
    for key in ("total_power", "normal_power", "anomalous_power", "drag_force", "ledger_residual"):
        assert set(p[key]) >= {"value", "error", "units"}


def test_a_run_that_did_not_settle_is_marked_everywhere(tmp_path, capsys):
    """Exit status 3, the summary's first line, --json, the results file and the figures all
    say "not converged"."""
    import matplotlib.image as mpimg

    text = edit(edit(TINY, "snapshots = 5", "snapshots = 0"), "transits = 2",
                'transits = 2\nsettle_tolerance = 1e-12\nmax_time = "60 fs"\ngrid_check = false')
    path = write(tmp_path, text)
    assert main(["run", str(path), "-o", str(tmp_path / "nc.h5")]) == 3
    out = capsys.readouterr().out
    assert out.splitlines()[0].startswith("NOT CONVERGED: ")
    assert main(["run", str(path), "-o", str(tmp_path / "nc2.h5"), "--json"]) == 3
    data = json.loads(capsys.readouterr().out)
    assert data["status"] == "not converged" and data["points"][0]["steady"]["value"] is False
    with h5py.File(tmp_path / "nc.h5", "r") as f:
        assert f.attrs["status"] == "not converged"
    assert main(["plot", str(tmp_path / "nc.h5"), "-o", str(tmp_path / "figs"), "--format", "png"]) == 0
    capsys.readouterr()
    img = mpimg.imread(tmp_path / "figs" / "spectra.png")[..., :3]
    top = img[: max(img.shape[0] // 15, 3)]
    orange = (top[..., 0] > 0.7) & (top[..., 1] > 0.25) & (top[..., 1] < 0.5) & (top[..., 2] < 0.2)
    assert orange.sum() > 20                 # the banner across the top


def test_json_summary_carries_equivalent_quantum_rates(tmp_path, capsys):
    """The run summary turns the branch powers into two-level rates (fdtd/rates.py).  The
    absolute scale is checked here against the 2D free-space rate written out with
    scipy.constants: a line of dipoles p0 = 2|d| per unit length radiates mu0 w^3 p0^2/16
    per unit length in plane (the Hankel-function result of tests/test_radiation.py), so
    Gamma_0 = mu0 w^2 (2|d|)^2 / (16 hbar); and the simulated ratios agree with the planar
    reference on the same k set."""
    import scipy.constants as sc

    d = 3.0e-30
    text = edit(edit(TINY, "snapshots = 5", "snapshots = 0"), 'frequency = "1.2 eV"',
                f'frequency = "1.2 eV"\ntransition_dipole = "{d} C"')
    path = write(tmp_path, text)
    assert main(["run", str(path), "-o", str(tmp_path / "a.h5"), "--json"]) == 0
    p = json.loads(capsys.readouterr().out)["points"][0]
    w0 = 1.2 * sc.e / sc.hbar
    gamma0 = sc.mu_0 * w0**2 * (2 * d) ** 2 / (16 * sc.hbar)
    assert p["free_space_decay_rate"]["units"] == "1/(s m)"
    assert p["free_space_decay_rate"]["value"] == pytest.approx(gamma0, rel=1e-9)
    for name in ("decay", "excitation"):
        r = p[f"{name}_rate_ratio"]
        assert p[f"{name}_rate"]["value"] == pytest.approx(r["value"] * gamma0, rel=1e-9)
        ref = p[f"reference_{name}_rate_ratio"]["value"]
        assert abs(r["value"] - ref) <= 0.05 * abs(ref) + 3 * r["error"], (name, r, ref)
        # a rate carries at least the relative error of its branch's power (settling and grid)
        branch = p["normal_power" if name == "decay" else "anomalous_power"]
        assert r["error"] >= r["value"] * branch["error"] / branch["value"] * (1 - 1e-12), (name, r, branch)
        assert p[f"{name}_rate"]["error"] == pytest.approx(r["error"] * gamma0, rel=1e-9)
    assert p["excitation_rate_ratio"]["value"] > 0.01      # v = 0.6 pumps the oscillator here
    assert p["transition_dipole"]["value"] == pytest.approx(d, rel=1e-12)


BULK_1D = """\
[units]
mode = "natural"
frequency = "1 eV"

[materials.exc]
kind = "poles"
eps_inf = 1.0
poles = [ { kind = "lorentz", delta_eps = 2.0, omega = 1.0, gamma = 0.3, beta_nl = "0.25 c" } ]

[geometry]
background = "exc"

[grid]
polarization = "1d"
cell = 0.1
length = 12.0

[source]
kind = "dipole"
speed = "0.5 c"
frequency = 0.6

[run]
transits = 6

[record]
snapshots = 4
line_component = "Ey"
"""


def test_one_dimensional_bulk_scenario(tmp_path, capsys):
    """grid.polarization = "1d": a dipole sheet crossing a uniform (here nonlocal) medium in a
    periodic cell; powers per unit area, the exact bulk reference on the same k set, rates per
    unit area; 2D-only set-ups are refused with the reason."""
    path = write(tmp_path, BULK_1D)
    assert main(["run", str(path), "-o", str(tmp_path / "b.h5"), "--json"]) == 0
    p = json.loads(capsys.readouterr().out)["points"][0]
    assert p["total_power"]["units"] == "W/m^2" and p["decay_rate"]["units"] == "1/(s m^2)"
    for b in ("normal", "anomalous"):
        assert p[f"{b}_power"]["value"] == pytest.approx(p[f"reference_{b}_power"]["value"], rel=0.03)
    assert abs(p["ledger_residual"]["value"]) < 1e-10
    with h5py.File(tmp_path / "b.h5", "r") as f:
        comp = f["snapshots"].attrs["component"]
        assert f["line/data"].ndim == 2 and f[f"snapshots/{comp}"].shape[0] == 4
    assert main(["plot", str(tmp_path / "b.h5"), "--format", "png"]) == 0
    capsys.readouterr()
    for old, new, frag in (('[geometry]\nbackground = "exc"', '[geometry]\nkind = "half-space"\nmaterial = "exc"',
                            "geometry.kind = 'half-space'"),
                           ('[source]\nkind = "dipole"', '[source]\nkind = "dipole"\naxis = "x"', "source.axis = 'x'")):
        bad = write(tmp_path, edit(BULK_1D, old, new), "bad.toml")
        assert main(["check", str(bad)]) == 2
        assert frag in capsys.readouterr().err


def test_grid_cutoff_warnings_before_and_after_a_run(tmp_path, capsys):
    """A slow oscillator (0.1 c) in a local Lorentz medium: its anomalous line meets the lower
    polariton only at k ~ (Omega + omega0)/v, near the grid's cutoff, so `gapwake check` warns
    (the threshold calculator: reachable with k <= pi/dx, not with k dx <= pi/6) and the run
    summary flags that the anomalous power sits at k_x dx > pi/6.  With a physical cutoff
    (beta_nl = 0.25 c above the speed) there is nothing to warn about."""
    local = edit(edit(edit(BULK_1D, ', beta_nl = "0.25 c"', ""), 'speed = "0.5 c"', 'speed = "0.1 c"'),
                 "transits = 6", "transits = 2")
    local = edit(local, "length = 12.0", "length = 6.0")
    path = write(tmp_path, local)
    assert main(["check", str(path)]) == 0
    assert "only through wavenumbers near its cutoff" in capsys.readouterr().out
    assert main(["run", str(path), "-o", str(tmp_path / "l.h5"), "--json"]) == 0
    p = json.loads(capsys.readouterr().out)["points"][0]
    assert p["anomalous_share_near_grid_cutoff"]["value"] > 0.5
    assert "property of the grid" in p["warning_grid_cutoff"]["value"]
    nonlocal_ = write(tmp_path, edit(local, "gamma = 0.3 }", 'gamma = 0.3, beta_nl = "0.25 c" }'), "nl.toml")
    assert main(["check", str(nonlocal_)]) == 0
    assert "near its cutoff" not in capsys.readouterr().out


def test_failed_write_leaves_no_complete_file(tmp_path, monkeypatch):
    import fdtd.experiment.session as session

    def broken(*a, **k):
        raise OSError("disk full (simulated)")
    monkeypatch.setattr(session, "write_point", broken)
    path = write(tmp_path, edit(TINY, "snapshots = 5", "snapshots = 0"))
    with pytest.raises(OSError):
        fdtd.run(path, tmp_path / "r.h5", progress=False)
    assert not (tmp_path / "r.h5").exists()
    with h5py.File(tmp_path / "r.h5.incomplete", "r") as f:
        assert f.attrs["status"] != "complete"


def _long_case(tmp_path) -> Path:
    # a tighter tolerance and many transits keep it running for well over the time we wait
    text = edit(edit(TINY, "transits = 2", 'transits = 2\nsettle_tolerance = 1e-12\nmax_time = "1 ns"'),
                'cell = "20 nm"', 'cell = "12 nm"')
    return write(tmp_path, text, "long.toml")


def _start(path, out, *extra):
    env = dict(os.environ, PYTHONUNBUFFERED="1")
    return subprocess.Popen([sys.executable, "-m", "fdtd.cli", "run", str(path), "-o", str(out), *extra],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)


def _wait_for(proc, word, timeout=120):
    t0 = time.time()
    lines = []
    while time.time() - t0 < timeout:
        line = proc.stderr.readline()
        lines.append(line)
        if word in line:
            return
        if proc.poll() is not None:
            break
    raise AssertionError(f"never saw {word!r}: {''.join(lines)}")


def test_sigkill_leaves_no_complete_file(tmp_path):
    path, out = _long_case(tmp_path), tmp_path / "killed.h5"
    proc = _start(path, out)
    try:
        _wait_for(proc, "window 1")
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=30)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == -signal.SIGKILL
    assert not out.exists()
    for leftover in tmp_path.glob("killed.h5*"):
        try:
            f = h5py.File(leftover, "r")
        except OSError:          # cut off mid-write: unreadable, so it cannot look complete
            continue
        with f:
            assert f.attrs["status"] != "complete"


def test_interrupt_keeps_partial_results(tmp_path):
    path, out = _long_case(tmp_path), tmp_path / "stopped.h5"
    proc = _start(path, out)
    try:
        _wait_for(proc, "window 1")
        proc.send_signal(signal.SIGINT)
        # drain both pipes while waiting: a child blocked on a full pipe cannot finish writing
        proc.communicate(timeout=180)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 130
    with h5py.File(out, "r") as f:
        assert f.attrs["status"] == "partial"
        assert "interrupted" in f.attrs["stop_reason"]
        assert len(f["ledger/time"]) > 1


# ----------------------------------------------------------------------------- checkpoints
def test_checkpoint_resume_is_bitwise_identical(tmp_path, capsys):
    # one grid (no automatic refinement): the interruption at 70 % must fall inside the run
    text = edit(TINY, "transits = 2", "transits = 2\ncheckpoint_every = 150\ngrid_refinements = 0")
    path = write(tmp_path, text)
    whole = fdtd.run(path, tmp_path / "whole.h5", progress=False)
    sc = fdtd.load(path)
    ck = tmp_path / "state.ck.h5"
    first = Experiment(make_plan(sc.resolve()), progress=False, checkpoint=str(ck))
    total = whole.value("steps")
    assert first.execute(stop_after_steps=int(total * 0.7)) == "stopped"
    assert ck.exists()
    code = main(["run", str(path), "-o", str(tmp_path / "resumed.h5"), "--resume", str(ck), "--quiet"])
    assert code == (0 if whole.status == "complete" else 3), (code, whole.status)   # the same verdict
    capsys.readouterr()
    a, b = fdtd.as_arrays(tmp_path / "whole.h5"), fdtd.as_arrays(tmp_path / "resumed.h5")
    assert set(a) == set(b)
    for name in a:
        nan_ok = np.issubdtype(np.asarray(a[name]).dtype, np.floating)   # NaN marks "no branch"
        assert np.array_equal(a[name], b[name], equal_nan=nan_ok), name


# ----------------------------------------------------------------------------- figures
def _png_variance(path) -> float:
    import matplotlib.image as mpimg

    img = mpimg.imread(path)
    return float(np.var(img[..., :3]))


def test_plots_are_not_blank(tiny_run, tmp_path, capsys):
    _d, _p, h5, _out = tiny_run
    assert main(["plot", str(h5), "-o", str(tmp_path / "figs"), "--format", "png,pdf"]) == 0
    written = capsys.readouterr().out.split()
    pngs = [Path(w) for w in written if w.endswith(".png")]
    names = {p.stem for p in pngs}
    assert {"geometry", "spectra", "kx_omega", "ledger"} <= names, names
    for p in pngs:
        assert _png_variance(p) > 1e-3, p
    assert all(Path(w).stat().st_size > 1000 for w in written if w.endswith(".pdf"))


@pytest.mark.parametrize("suffix", [".gif", ".mp4"])
def test_animation_frames(tiny_run, tmp_path, capsys, suffix):
    import imageio.v3 as iio

    _d, _p, h5, _out = tiny_run
    target = tmp_path / f"movie{suffix}"
    assert main(["animate", str(h5), "-o", str(target)]) == 0
    written = Path(capsys.readouterr().out.split()[-1])
    if suffix == ".mp4" and written.suffix == ".gif":
        pytest.skip("no MP4 encoder on this machine (GIF fallback written)")
    frames = iio.imread(written, index=None)[..., :3].astype(float)
    assert frames.shape[0] == 5 and frames.shape[1] > 50 and frames.shape[2] > 50
    assert float(np.var(frames)) > 1.0
    # the field moves: the plot area changes from frame to frame
    h, w = frames.shape[1:3]
    plot = frames[:, int(0.2 * h):int(0.8 * h), int(0.15 * w):int(0.7 * w)]
    assert all(np.abs(plot[k + 1] - plot[k]).mean() > 0.5 for k in range(len(plot) - 1))
    # the colour scale is fixed: the colour bar with its tick labels (right-hand strip) is the
    # same picture in every frame (lossy MP4 coding: equal up to a few grey levels)
    bar = frames[:, int(0.2 * h):int(0.8 * h), int(0.82 * w):]
    tol = 0.5 if suffix == ".gif" else 6.0
    assert all(np.abs(bar[k] - bar[0]).mean() < tol for k in range(1, len(bar))), \
        [float(np.abs(bar[k] - bar[0]).mean()) for k in range(1, len(bar))]


# ----------------------------------------------------------------------------- help
@pytest.mark.parametrize("cmd", [[], ["check"], ["run"], ["plot"], ["animate"], ["demo"]])
def test_help_says_what_each_command_does(cmd, capsys):
    with pytest.raises(SystemExit) as exc:
        main(cmd + ["--help"])
    assert exc.value.code == 0
    text = capsys.readouterr().out
    assert "usage: gapwake" in text
    assert len(text) > 200


def test_worked_scenarios_validate():
    files = sorted((ROOT / "scenarios").glob("*.toml"))
    assert len(files) >= 3
    for f in files:
        sc = fdtd.load(f)
        assert sc.text.lstrip().startswith("#"), f"{f.name}: starts with a comment on what it shows"
        for rep in fdtd.check(sc):
            assert "cells" in rep.text
