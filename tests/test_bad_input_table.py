"""A table of bad inputs: each is refused by the command line with exit code 2, a message that
names the key or option, the value and what is allowed, no traceback, and nothing written.

Scenario rows are edits of a small valid scenario (the one of tests/test_scenario_files.py, or a
small open domain); each goes through both ``gapwake check`` and ``gapwake run`` (refused at
plan time, before anything is stepped).  Command-line rows give the arguments; ``{res}`` is a real
results file and ``{ckpt}`` a checkpoint of the base scenario, both written once per module.
"""

from __future__ import annotations

import re

import h5py
import pytest
from test_scenario_files import TINY, edit

import fdtd
from fdtd.cli import main

OPEN = """\
[units]
mode = "natural"
frequency = "1 eV"

[materials.d]
kind = "poles"
eps_inf = 1.0
poles = [ { kind = "lorentz", delta_eps = 1.25, omega = 4.0, gamma = 0.02 } ]

[[regions]]
shape = "rectangle"
material = "d"
x0 = 2.0
x1 = 6.0
y0 = -1.0
y1 = 1.0

[grid]
cell = 0.1
length = 8.0
height = 2.0

[source]
kind = "charge"
speed = 0.6
height = 0.0
x0 = 1.0
max_frequency = 4.0
speed_ramp = 1.0

[run]
kind = "open"
time = 6.0

[record]
snapshots = 3
"""

POLES = ('kind = "poles"\neps_inf = 1.0\n'
         'poles = [ { kind = "lorentz", delta_eps = 2.0, omega = "1.0 eV", gamma = "0.1 eV" } ]')
RECT = "x0 = 2.0\nx1 = 6.0\ny0 = -1.0\ny1 = 1.0\n"


def shape(name: str, keys: str = "") -> str:
    """The open scenario with its rectangle replaced by a region of another shape."""
    return edit(edit(OPEN, 'shape = "rectangle"', f'shape = "{name}"'), RECT, keys)


# (id, scenario text, regex the message must match)
SCENARIOS = [
    # structure
    ("materials-not-a-table", "materials = 5\n" + edit(TINY, "[materials.m]", "[materialsx.m]"),
     r"materials = 5: expected a table of named materials"),
    ("material-not-a-table", edit(TINY, "[materials.m]\n" + POLES + "\n", "").replace(
        "[units]", "materials = { m = 5 }\n[units]"), r"materials\.m = 5: expected a table"),
    ("pole-not-a-table", edit(TINY, "poles = [ {", "poles = [ 5, {"),
     r"materials\.m\.poles\[0\] = 5: expected a table"),
    ("regions-not-a-list", "regions = 5\n" + TINY, r"regions = 5: expected a list of region tables"),
    ("region-not-a-table", "regions = [5]\n" + TINY, r"regions\[0\] = 5: expected a table"),
    ("geometry-not-a-table", edit(TINY, '[geometry]\nkind = "half-space"\nmaterial = "m"\n', "").replace(
        "[units]", "geometry = 5\n[units]"), r"geometry = 5: expected a table"),
    ("meta-a-list", "meta = [1]\n" + TINY, r"meta = \[1\]: expected a table"),
    ("unknown-section", TINY + "[sourse]\nkind = 1\n", r"unknown key 'sourse' \(did you mean 'source'\?\)"),
    ("rectangle-without-x0-x1", edit(OPEN, "x0 = 2.0\nx1 = 6.0\n", ""),
     r"regions\[0\] \(rectangle\) is missing x0, x1: a rectangle needs x0, x1, y0, y1"),
    ("rectangle-empty", edit(OPEN, "x0 = 2.0\nx1 = 6.0\n", "x0 = 6.0\nx1 = 2.0\n"),
     r"regions\[0\]\.x1 = 2\.0: expected a value above regions\[0\]\.x0 = 6\.0"),
    ("polygon-without-vertices", shape("polygon"), r"regions\[0\] \(polygon\) is missing vertices"),
    ("polygon-bad-vertices", shape("polygon", 'vertices = [[1], "a"]\n'),
     r"regions\[0\]\.vertices = \[\[1\], 'a'\]: expected a list of at least three \[x, y\] pairs"),
    ("polygon-without-area", shape("polygon", "vertices = [[1, 0], [2, 0], [3, 0]]\n"),
     r"regions\[0\]\.vertices = .*enclose none"),
    ("half-space-neither-side", shape("half-space"),
     r"regions\[0\] \(half-space\) needs exactly one of below or above \(got neither\)"),
    ("slab-without-bounds", shape("slab"), r"regions\[0\] \(slab\) is missing lo, hi"),
    ("grating-without-keys", shape("grating"), r"regions\[0\] \(grating\) is missing period, duty, top, depth"),
    ("region-key-of-another-shape", edit(OPEN, "x0 = 2.0\n", "x0 = 2.0\nperiod = 1.0\n"),
     r"regions\[0\]\.period does not apply to a region of shape 'rectangle': expected only shape, material, "
     r"x0, x1, y0, y1"),
    ("material-key-of-another-kind", edit(TINY, "eps_inf = 1.0", "eps_inf = 1.0\neps = 2.0"),
     r"materials\.m\.eps does not apply to a material of kind 'poles': expected only kind, eps_inf, poles"),
    ("pole-key-of-another-kind", edit(TINY, 'gamma = "0.1 eV" }', 'gamma = "0.1 eV", omega_p = 1.0 }'),
     r"materials\.m\.poles\[0\]\.omega_p does not apply to a pole of kind 'lorentz'"),
    ("sellmeier-negative-resonance", edit(TINY, POLES, 'kind = "sellmeier"\nB = [1.0]\nC = [-1.0]'),
     r"materials\.m\.C = \[-1\.0\]: expected a list of finite Sellmeier resonances > 0"),
    ("scan-not-a-table", "scan = 5\n" + TINY, r"scan = 5: expected a table"),
    ("scan-empty", TINY + '[scan]\nkey = "source.speed"\nvalues = []\n',
     r"scan\.values = \[\]: expected a non-empty list"),
    ("scan-value-wrong-type", TINY + '[scan]\nkey = "source.speed"\nvalues = [true]\n',
     r"source\.speed = True: expected a speed"),
    ("scan-key-a-section", TINY + '[scan]\nkey = "source"\nvalues = [1]\n',
     r"scan\.key = 'source': expected a key path"),
    ("scan-of-the-scan", TINY + '[scan]\nkey = "scan.key"\nvalues = ["x"]\n', r"scan\.key = 'scan\.key': expected"),
    # values: sign, zero, non-finite, type, dimension
    ("open-time-negative", edit(OPEN, "time = 6.0", "time = -6.0"), r"run\.time = -6\.0: expected .*0 < value s"),
    ("open-time-zero", edit(OPEN, "time = 6.0", "time = 0.0"), r"run\.time = 0\.0: expected .*0 < value s"),
    ("max-time-negative", edit(TINY, "transits = 2", 'transits = 2\nmax_time = "-1 ps"'),
     r"run\.max_time = '-1 ps': expected .*0 < value s"),
    ("max-time-zero", edit(TINY, "transits = 2", "transits = 2\nmax_time = 0"),
     r"run\.max_time = 0: expected .*0 < value"),
    ("absorber-negative", edit(TINY, 'height = "300 nm"', 'height = "300 nm"\nabsorber = "-100 nm"'),
     r"grid\.absorber = '-100 nm': expected .*0 < value m"),
    ("absorber-zero", edit(TINY, 'height = "300 nm"', 'height = "300 nm"\nabsorber = 0'),
     r"grid\.absorber = 0: expected .*0 < value m"),
    ("cell-nan", edit(TINY, 'cell = "20 nm"', "cell = nan"), r"grid\.cell = nan: expected a finite number"),
    ("cell-infinite-string", edit(TINY, 'cell = "20 nm"', 'cell = "inf nm"'),
     r"grid\.cell = 'inf nm': expected a finite"),
    ("cell-overflowing", edit(TINY, 'cell = "20 nm"', 'cell = "1e308 km"'),
     r"grid\.cell = '1e308 km': expected a finite length \(it overflows in SI units\)"),
    ("cell-runaway-power", edit(TINY, 'cell = "20 nm"', 'cell = "9**9**9 nm"'),
     r"grid\.cell = '9\*\*9\*\*9 nm': expected a length with units.*powers of at most two digits"),
    ("speed-nan", edit(TINY, 'speed = "0.6 c"', "speed = nan"), r"source\.speed = nan: expected a finite number"),
    ("settle-tolerance-inf", edit(TINY, "transits = 2", "transits = 2\nsettle_tolerance = inf"),
     r"run\.settle_tolerance = inf: expected a finite number"),
    ("eps-inf-nan", edit(TINY, "eps_inf = 1.0", "eps_inf = nan"), r"materials\.m\.eps_inf = nan: expected a finite"),
    ("length-in-eV", edit(TINY, 'length = "600 nm"', 'length = "1 eV"'),
     r"grid\.length = '1 eV': expected a length, .*got a quantity of dimension"),
    ("frequency-in-nm", edit(TINY, 'frequency = "1.2 eV"', 'frequency = "1 nm"'),
     r"source\.frequency = '1 nm': expected an angular frequency"),
    ("max-time-in-nm", edit(TINY, "transits = 2", 'transits = 2\nmax_time = "3 nm"'),
     r"run\.max_time = '3 nm': expected a time"),
    ("flux-height-in-eV", edit(TINY, 'flux_heights = ["250 nm", "0 nm"]', 'flux_heights = ["1 eV"]'),
     r"record\.flux_heights\[0\] = '1 eV': expected a length"),
    ("string-for-integer", edit(TINY, "transits = 2", 'transits = "2"'), r"run\.transits = '2': expected an integer"),
    ("missing-choice", edit(TINY, 'kind = "dipole"\n', ""),
     r"source\.kind is missing: expected one of \['dipole', 'charge'\]"),
    # recorders, sources and sizes against the grid, at plan time
    ("line-outside-grid", edit(TINY, 'line_height = "200 nm"', 'line_height = "10 um"'),
     r"record\.line_height = '10 um' lies outside the interior \|y\| <= 3e-07 m"),
    ("line-in-absorber", edit(TINY, 'line_height = "200 nm"', 'line_height = "-330 nm"'),
     r"record\.line_height = '-330 nm' lies outside the interior"),
    ("line-height-without-component", edit(TINY, 'line_component = "Hz"\n', ""),
     r"record\.line_height = '200 nm': expected record\.line_component beside it"),
    ("flux-line-outside-grid", edit(TINY, 'flux_heights = ["250 nm", "0 nm"]', 'flux_heights = ["5 um"]'),
     r"record\.flux_heights\[0\] = '5 um' lies outside the interior"),
    ("passage-outside-grid", edit(OPEN, "snapshots = 3", "snapshots = 3\npassage_start = 50.0\npassage_stop = 60.0"),
     r"record\.passage_start = 50\.0 lies outside the interior 0 <= x <= "),
    ("passage-reversed", edit(OPEN, "snapshots = 3", "snapshots = 3\npassage_start = 5.0\npassage_stop = 3.0"),
     r"record\.passage_stop = 3\.0: expected a value above record\.passage_start = 5\.0"),
    ("passage-one-end", edit(OPEN, "snapshots = 3", "snapshots = 3\npassage_start = 5.0"),
     r"record\.passage_start is given without record\.passage_stop"),
    ("source-above-grid", edit(TINY, 'height = "150 nm"\nfrequency', 'height = "5 um"\nfrequency'),
     r"source\.height = 5e-06 m does not fit in the interior"),
    ("open-source-before-grid", edit(OPEN, "x0 = 1.0\nmax", "x0 = -50.0\nmax"),
     r"source\.x0 = -50\.0 lies outside the interior 0 <= x <= "),
    ("open-source-leaves-grid", edit(OPEN, "time = 6.0", "time = 40.0"),
     r"the source leaves the grid: from source\.x0 = 1\.0 at 0\.6 c for run\.time = 40\.0"),
    ("grid-too-many-cells", edit(TINY, 'cell = "20 nm"', 'cell = "0.001 nm"'),
     r"the grid would have 1\.\d+e\+12 cells .*grid\.cell = '0\.001 nm'.*expected at most 1e\+09 cells"),
    ("window-on-light-line", edit(TINY, 'speed = "0.6 c"', 'speed = "0.5 c"'),
     r"a Doppler line of this cell lies .* from the vacuum light line.*expected at most 1e\+06"),
]

BYTES = [
    ("not-utf8", b"# caf\xe9\n" + TINY.encode(), r"not UTF-8 text \(byte 0xe9 on line 1\)"),
    ("binary", bytes(range(256)) * 8, r"a binary file \(it contains NUL bytes\)"),
    ("deep-lists", (TINY + "[meta]\ntitle = " + "[" * 5000 + "]" * 5000 + "\n").encode(),
     r"nested too deeply to read: expected tables and lists nested at most 16 levels"),
    ("deep-tables", (TINY + "[meta]\nx = " + "{a = " * 3000 + "1" + "}" * 3000 + "\n").encode(),
     r"nested too deeply to read"),
    ("deep-but-readable", (TINY + "[meta]\nx = " + "[" * 30 + "]" * 30 + "\n").encode(),
     r"nested more than 16 levels deep"),
]

# (id, arguments, extra files {name: bytes or "foreign-h5"}, regex)
COMMANDS = [
    ("set-into-scalar", ["check", "{scn}", "--set", "source.speed.x=1"], {},
     r"cannot set 'source\.speed\.x': source\.speed = '0\.6 c' is a value, not a table or a list"),
    ("set-list-index-out-of-range", ["check", "{scn}", "--set", 'materials.m.poles.5.omega="1.1 eV"'], {},
     r"materials\.m\.poles is a list of 1 entries and '5' is not an index of it: expected 0 to 0"),
    ("set-key-into-list", ["check", "{scn}", "--set", "record.flux_heights.x=1"], {},
     r"record\.flux_heights is a list of 2 entries and 'x' is not an index of it"),
    ("set-unbalanced-quote", ["check", "{scn}", "--set", 'source.speed="0.6 c'], {},
     r"--set 'source\.speed=\"0\.6 c': the value '\"0\.6 c' is not a TOML value"),
    ("set-unbalanced-bracket", ["check", "{scn}", "--set", "source.speed=[1,"], {},
     r"the value '\[1,' is not a TOML value"),
    ("set-two-values", ["check", "{scn}", "--set", "source.speed=0.5\nx = 1"], {}, r"spans several lines"),
    ("set-without-equals", ["check", "{scn}", "--set", "source.speed"], {}, r"--set 'source\.speed': no '='"),
    ("set-empty-key", ["check", "{scn}", "--set", "=0.5"], {}, r"the key before '=' is empty"),
    ("set-empty-value", ["check", "{scn}", "--set", "source.speed="], {}, r"the value after '=' is empty"),
    ("set-empty-key-part", ["check", "{scn}", "--set", "source..speed=0.5"], {},
     r"key path 'source\.\.speed' has an empty part"),
    ("set-unknown-section", ["check", "{scn}", "--set", "nosuch.key=1"], {}, r"unknown key 'nosuch'"),
    ("resume-text-file", ["run", "{scn}", "-o", "{tmp}/out.h5", "--resume", "{tmp}/notes.txt"],
     {"notes.txt": b"hello\n"}, r"--resume .*notes\.txt: not a (gapwake )?checkpoint \(not an HDF5 file\)"),
    ("resume-toml-file", ["run", "{scn}", "-o", "{tmp}/out.h5", "--resume", "{tmp}/other.toml"],
     {"other.toml": TINY.encode()}, r"--resume .*other\.toml: not a (gapwake )?checkpoint"),
    ("resume-missing", ["run", "{scn}", "-o", "{tmp}/out.h5", "--resume", "{tmp}/nope.ckpt"], {},
     r"--resume .*nope\.ckpt: no such file"),
    ("resume-empty", ["run", "{scn}", "-o", "{tmp}/out.h5", "--resume", "{tmp}/empty.ckpt"], {"empty.ckpt": b""},
     r"not a (gapwake )?checkpoint \(not an HDF5 file, it is empty\)"),
    ("resume-other-hdf5", ["run", "{scn}", "-o", "{tmp}/out.h5", "--resume", "{tmp}/foreign.h5"],
     {"foreign.h5": "foreign-h5"}, r"--resume .*foreign\.h5: not a gapwake checkpoint \(format None"),
    ("resume-a-results-file", ["run", "{scn}", "-o", "{tmp}/out.h5", "--resume", "{res}"], {},
     r"not a gapwake checkpoint \(format 'gapwake-results'"),
    ("resume-other-scenario", ["run", "{scn3}", "-o", "{tmp}/out.h5", "--resume", "{ckpt}"], {},
     r"the checkpoint belongs to a different scenario"),
    ("animate-fps-zero", ["animate", "{res}", "--fps", "0", "-o", "{tmp}/m.gif"], {},
     r"--fps = 0: expected a whole number of frames per second from 1 to 120"),
    ("animate-fps-negative", ["animate", "{res}", "--fps", "-3", "-o", "{tmp}/m.gif"], {}, r"--fps = -3: expected"),
    ("animate-fps-text", ["animate", "{res}", "--fps", "abc", "-o", "{tmp}/m.gif"], {}, r"--fps = 'abc': expected"),
    ("animate-unknown-component", ["animate", "{res}", "--component", "Q", "-o", "{tmp}/m.gif"], {},
     r"--component: invalid choice: 'Q' \(choose from 'Ex', 'Ey', 'Ez', 'Hx', 'Hy', 'Hz'\)"),
    ("animate-component-not-stored", ["animate", "{res}", "--component", "Ez", "-o", "{tmp}/m.gif"], {},
     r"component = 'Ez': .* stores snapshots of Hz only"),
    ("animate-unknown-extension", ["animate", "{res}", "-o", "{tmp}/m.avi"], {},
     r"--output = '.*m\.avi': expected a movie file ending in \.gif or \.mp4"),
    ("animate-no-extension", ["animate", "{res}", "-o", "{tmp}/m"], {}, r"expected a movie file ending in"),
    ("plot-unknown-format", ["plot", "{res}", "--format", "xyz", "-o", "{tmp}/figs"], {},
     r"--format = 'xyz': expected comma-separated formats among png, pdf"),
    ("plot-empty-format", ["plot", "{res}", "--format", "", "-o", "{tmp}/figs"], {}, r"--format = '': expected"),
    ("unknown-option", ["check", "{scn}", "--bogus"], {}, r"unrecognized arguments: --bogus"),
    ("scenario-folder", ["check", "{tmp}"], {}, r"is a folder: expected a scenario file"),
]
for cmd in ("plot", "animate"):
    COMMANDS += [
        (f"{cmd}-text-file", [cmd, "{tmp}/notes.txt"], {"notes.txt": b"hello\n"},
         r"notes\.txt: not an HDF5 file: expected a results file written by gapwake run"),
        (f"{cmd}-toml-file", [cmd, "{tmp}/other.toml"], {"other.toml": TINY.encode()},
         r"other\.toml: not an HDF5 file"),
        (f"{cmd}-missing", [cmd, "{tmp}/nope.h5"], {}, r"nope\.h5: no such file: expected a results file"),
        (f"{cmd}-empty", [cmd, "{tmp}/empty.h5"], {"empty.h5": b""}, r"empty\.h5: not an HDF5 file, it is empty"),
        (f"{cmd}-other-hdf5", [cmd, "{tmp}/foreign.h5"], {"foreign.h5": "foreign-h5"},
         r"not a gapwake results file \(format attribute None, expected 'gapwake-results'\)"),
        (f"{cmd}-folder", [cmd, "{tmp}"], {}, r"not a file: expected a results file"),
    ]


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    """A results file and a checkpoint of the base scenario."""
    d = tmp_path_factory.mktemp("base")
    scn = d / "base.toml"
    scn.write_text(edit(TINY, "transits = 2", "transits = 2\ncheckpoint_every = 50"))
    ckpt = d / "base.ckpt"
    assert main(["run", str(scn), "-o", str(d / "base.h5"), "--quiet", "--checkpoint", str(ckpt)]) == 0
    assert ckpt.exists()
    return {"res": str(d / "base.h5"), "ckpt": str(ckpt), "base": scn}


def call(argv, capsys) -> tuple[int, str]:
    try:
        rc = main(argv)
    except SystemExit as exc:        # argparse refuses its own options this way (exit 2)
        rc = exc.code
    captured = capsys.readouterr()
    return rc, captured.err + captured.out


def files_under(path) -> set:
    return {str(p.relative_to(path)) for p in path.rglob("*")}


def refused(argv, capsys, tmp_path, pattern):
    before = files_under(tmp_path)
    rc, err = call(argv, capsys)
    assert rc == 2, (argv, rc, err)
    assert "Traceback" not in err, err
    assert re.search(pattern, err), (pattern, err)
    assert files_under(tmp_path) == before, "something was written"


@pytest.mark.parametrize("text,pattern", [c[1:] for c in SCENARIOS], ids=[c[0] for c in SCENARIOS])
def test_bad_scenario_refused_by_check_and_run(text, pattern, tmp_path, capsys):
    scn = tmp_path / "case.toml"
    scn.write_text(text)
    refused(["check", str(scn)], capsys, tmp_path, pattern)
    refused(["run", str(scn), "-o", str(tmp_path / "out.h5"), "--quiet"], capsys, tmp_path, pattern)


@pytest.mark.parametrize("data,pattern", [c[1:] for c in BYTES], ids=[c[0] for c in BYTES])
def test_bad_scenario_file_refused(data, pattern, tmp_path, capsys):
    scn = tmp_path / "case.toml"
    scn.write_bytes(data)
    refused(["check", str(scn)], capsys, tmp_path, pattern)
    refused(["run", str(scn), "-o", str(tmp_path / "out.h5")], capsys, tmp_path, pattern)


@pytest.mark.parametrize("args,extra,pattern", [c[1:] for c in COMMANDS], ids=[c[0] for c in COMMANDS])
def test_bad_command_line_refused(args, extra, pattern, tmp_path, capsys, written):
    scn = tmp_path / "case.toml"
    scn.write_text(TINY)
    scn3 = tmp_path / "other_case.toml"            # the base scenario with another window
    scn3.write_text(edit(written["base"].read_text(), "transits = 2", "transits = 3"))
    for name, content in extra.items():
        if content == "foreign-h5":
            with h5py.File(tmp_path / name, "w") as f:
                f["x"] = [1.0, 2.0]
        else:
            (tmp_path / name).write_bytes(content)
    argv = [a.format(scn=scn, scn3=scn3, tmp=tmp_path, **written) for a in args]
    refused(argv, capsys, tmp_path, pattern)


def test_set_reaches_a_list_element(tmp_path):
    """--set with a list index changes that element (and only it)."""
    from fdtd.cli import _overrides

    scn = tmp_path / "case.toml"
    scn.write_text(TINY)
    base = fdtd.api.load(scn)
    changed = _overrides(base, ['materials.m.poles.0.omega="1.1 eV"'])
    pole, pole0 = changed.values["materials"]["m"]["poles"][0], base.values["materials"]["m"]["poles"][0]
    assert pole["omega"] == pytest.approx(1.1 / 1.0 * pole0["omega"], rel=1e-12)
    assert pole["delta_eps"] == pole0["delta_eps"] and pole["gamma"] == pole0["gamma"]
    # a bare quantity without quotes is still read as that string
    assert _overrides(base, ["source.speed=0.4 c"]).values["source"]["speed"] == pytest.approx(0.4)


def test_source_inside_a_medium_is_warned(tmp_path, capsys):
    """A source path under the surface of the half-space is reported before the run."""
    scn = tmp_path / "case.toml"
    scn.write_text(edit(TINY, 'height = "150 nm"\nfrequency', 'height = "-100 nm"\nfrequency'))
    assert main(["check", str(scn)]) == 0
    out = capsys.readouterr().out
    assert re.search(r"warning: the source's path at y = -1e-07 m runs inside 'm', not in the background "
                     r"'vacuum'", out), out
    scn.write_text(TINY)                    # above the surface: no such warning
    assert main(["check", str(scn)]) == 0
    assert "runs inside" not in capsys.readouterr().out


def test_help_lists_the_allowed_values(capsys):
    with pytest.raises(SystemExit):
        main(["animate", "--help"])
    out = " ".join(capsys.readouterr().out.split())
    assert "one of Ex, Ey, Ez, Hx, Hy, Hz" in out
    assert "frames per second of the movie, 1 to 120" in out
