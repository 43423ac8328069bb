"""Property-based checks (hypothesis) of the scenario layer: random values and random structures,
built from the schema's own keys plus junk, never end in anything but a clean refusal
(ScenarioError / ParameterError, with a message that names a key) or success -- neither in
validation (:class:`fdtd.scenario.schema.Scenario`) nor in planning
(:func:`fdtd.experiment.session.plan_points`, which sizes every point and steps nothing).
A command-line part feeds ``gapwake check`` and ``run`` invalid ``--set`` values and option
values and expects exit code 2 without a traceback.

The default profile runs 400 validation and 300 planning examples (plus 200 junk documents) in
about half a minute on one core; the ``slow`` test plans 1500 more.
"""

from __future__ import annotations

import copy
import re
import tomllib
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_scenario_files import TINY

from fdtd.cli import main
from fdtd.errors import ParameterError
from fdtd.experiment.session import plan_points
from fdtd.scenario.schema import MATERIAL_KEYS, POLE_KEYS, REGION_KEYS, SCHEMA, Scenario

ROOT = Path(__file__).resolve().parents[1]

#: valid bases: the small scenario of the file tests, and the shipped worked scenarios
BASES = [tomllib.loads(TINY)] + [tomllib.loads(p.read_text()) for p in sorted((ROOT / "scenarios").glob("*.toml"))]

UNITS = ["nm", "um", "m", "mm", "eV", "meV", "1/cm", "THz", "Hz", "rad/s", "c", "m/s", "fs", "ps", "s", "C", "C/m",
         "", "furlongs", "kg", "nm**2", "1/s"]
NUMBERS = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0.0, -0.0, 1e-300, -1.0, 0.5, 1.0, 2.0, 1e3, 1e300, 0.999999]),
    st.integers(min_value=-(2**70), max_value=2**70),
)


def quantity_text():
    return st.builds(lambda x, u: f"{x!r} {u}".strip(), NUMBERS, st.sampled_from(UNITS))


SCALARS = st.one_of(
    st.none(), st.booleans(), NUMBERS, quantity_text(),
    st.text(max_size=12),
    st.sampled_from(["te", "tm", "1d", "dipole", "charge", "open", "comoving", "half-space", "slab", "slot",
                     "rectangle", "polygon", "grating", "lorentz", "drude", "poles", "constant", "polar",
                     "sellmeier", "table", "m", "vacuum", "Hz", "Ex", "Ey", "Ez", "Q", "9**9**9 nm", "(((1)))"]),
)
VALUES = st.recursive(SCALARS, lambda inner: st.one_of(st.lists(inner, max_size=4),
                                                       st.dictionaries(st.text(max_size=6), inner, max_size=3)),
                      max_leaves=8)

#: every key path of the schema (sections, materials, poles and regions of the bases) plus junk
SECTION_KEYS = [(sec, k) for sec, keys in SCHEMA.items() for k in keys]
JUNK_KEYS = ["", "x", "kind", "materials", "regions", "0", "1e3", "length ", "Hz"]


def _valid_pool() -> dict:
    """Key name -> the values the valid bases give it (a scalar or a list)."""
    pool: dict = {}

    def visit(node):
        if isinstance(node, dict):
            for k, v in node.items():
                if not isinstance(v, dict):
                    pool.setdefault(k, []).append(v)
                visit(v)
        elif isinstance(node, list):
            for v in node:
                visit(v)

    for b in BASES:
        visit(b)
    return pool


VALID = _valid_pool()


def key_value(key=None):
    """Often a value some valid scenario gives this key (so that many mutated scenarios pass
    validation and reach the planner), else a quantity string, a number or anything at all."""
    options = [quantity_text(), NUMBERS, VALUES]
    if key in VALID:
        options = [st.sampled_from(VALID[key])] * 3 + options
    return st.one_of(*options)


@st.composite
def mutated(draw):
    data = copy.deepcopy(draw(st.sampled_from(BASES)))
    for _ in range(draw(st.integers(1, 3))):
        op = draw(st.sampled_from(["set", "set", "set", "delete", "junk-key", "section", "material", "pole",
                                   "region", "scan"]))
        if op == "set":
            sec, key = draw(st.sampled_from(SECTION_KEYS))
            tab = data.setdefault(sec, {})
            if isinstance(tab, dict):
                tab[key] = draw(key_value(key))
        elif op == "delete":
            sec = draw(st.sampled_from(sorted(data)))
            if isinstance(data[sec], dict) and data[sec]:
                del data[sec][draw(st.sampled_from(sorted(data[sec], key=str)))]
            else:
                del data[sec]
        elif op == "junk-key":
            sec = draw(st.sampled_from(sorted(SCHEMA) + ["materials", "regions", "junk"]))
            tab = data.setdefault(sec, {})
            if isinstance(tab, dict):
                tab[draw(st.sampled_from(JUNK_KEYS))] = draw(VALUES)
        elif op == "section":
            data[draw(st.sampled_from(sorted(SCHEMA) + ["materials", "regions"]))] = draw(VALUES)
        elif op == "material":
            mats = data.setdefault("materials", {})
            if isinstance(mats, dict):
                name = draw(st.sampled_from(sorted(mats) + ["m", "new"]))
                tab = mats.setdefault(name, {"kind": "constant", "eps": 2.0})
                key = draw(st.sampled_from(sorted(MATERIAL_KEYS)))
                if isinstance(tab, dict):
                    tab[key] = draw(key_value(key))
        elif op == "pole":
            mats = data.get("materials")
            if isinstance(mats, dict) and mats:
                tab = mats[draw(st.sampled_from(sorted(mats)))]
                if isinstance(tab, dict) and isinstance(tab.get("poles"), list) and tab["poles"] \
                        and isinstance(tab["poles"][0], dict):
                    key = draw(st.sampled_from(sorted(POLE_KEYS)))
                    tab["poles"][0][key] = draw(key_value(key))
        elif op == "region":
            regions = data.setdefault("regions", [])
            if isinstance(regions, list):
                reg = {"shape": draw(st.sampled_from(["half-space", "slab", "rectangle", "polygon", "grating",
                                                      "circle"])),
                       "material": draw(st.sampled_from(["m", "vacuum", "nothing"]))}
                for _k in range(draw(st.integers(0, 5))):
                    key = draw(st.sampled_from(sorted(REGION_KEYS)))
                    reg[key] = draw(key_value(key))
                regions.append(reg)
        else:
            data["scan"] = {"key": draw(st.sampled_from([f"{s}.{k}" for s, k in SECTION_KEYS] + ["x", "scan.key"])),
                            "values": draw(st.lists(key_value("values"), max_size=3))}
    return data


def accepted_or_refused_cleanly(data) -> str:
    """'refused' (a ParameterError naming a key, or the file), or 'planned'."""
    try:
        sc = Scenario(data, where="fuzz")
    except ParameterError as exc:
        assert str(exc).startswith("fuzz"), str(exc)
        return "refused"
    try:
        plan_points(sc)
    except ParameterError as exc:
        assert re.search(r"fuzz|[a-z_]+\.[a-z_]+", str(exc)), str(exc)
        return "refused"
    return "planned"


FUZZ = settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                       HealthCheck.data_too_large])


@FUZZ
@given(mutated())
def test_random_scenarios_are_planned_or_refused_cleanly(data):
    accepted_or_refused_cleanly(data)


@settings(FUZZ, max_examples=400)
@given(mutated())
def test_random_scenarios_are_validated_or_refused_cleanly(data):
    """Validation alone (cheap, so more examples): a Scenario or a ParameterError naming the file."""
    try:
        Scenario(data, where="fuzz")
    except ParameterError as exc:
        assert str(exc).startswith("fuzz"), str(exc)


@settings(max_examples=200, deadline=None)
@given(VALUES)
def test_any_top_level_value_is_refused_cleanly(data):
    """Whatever the document is -- a list, a number, a table of junk -- it is refused (no valid
    scenario is made of junk)."""
    with pytest.raises(ParameterError):
        Scenario(data if not isinstance(data, dict) else {**data, "junk": 1}, where="fuzz")


def test_the_fuzzer_reaches_the_planner():
    """The structures above are not all refused at validation: enough of them get planned for the
    property to mean something (counted over a fixed sample)."""
    outcomes = []

    @settings(max_examples=60, deadline=None, database=None, derandomize=True,
              suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
    @given(mutated())
    def collect(data):
        outcomes.append(accepted_or_refused_cleanly(data))

    collect()
    assert outcomes.count("planned") >= 6, outcomes.count("planned")
    assert outcomes.count("refused") >= 6, outcomes.count("refused")


@pytest.mark.slow
@settings(max_examples=1500, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                   HealthCheck.data_too_large])
@given(mutated())
def test_random_scenarios_are_planned_or_refused_cleanly_long(data):
    accepted_or_refused_cleanly(data)


# ----------------------------------------------------------------------------- command line
#: --set values that no key of the schema accepts for the given kind
WRONG_FOR = {
    "length": ['"5 eV"', "true", "[1, 2]", '"-3 nm"', '"nan nm"', '"9**9**9 nm"', '{a = 1}'],
    "speed": ['"2 c"', '"1 nm"', "false", '"-0.1 c"'],
    "int": ['"3"', "2.5", "-7", "true"],
    "number": ['"0.5"', "nan", "inf", "[0.5]"],
    "bool": ['"yes"', "1", "[true]"],
}
SET_CASES = (
    [("grid.cell", v) for v in WRONG_FOR["length"]]
    + [("source.speed", v) for v in WRONG_FOR["speed"]]
    + [("run.transits", v) for v in WRONG_FOR["int"]]
    + [("grid.courant", v) for v in WRONG_FOR["number"]]
    + [("record.doppler", v) for v in WRONG_FOR["bool"]]
    + [("source.speed.value", "1"), ("materials.m.poles.3.omega", "1"), ("materials.m.poles.x", "1"),
       ("source.speed", '"0.5 c'), ("source.speed", "[1,"), ("source.speed", "'0.5 c\""), ("", "1"),
       ("nosuch.key", "1"), ("grid..cell", "1"), ("grid.cell", ""), ("regions.0.x0", "1")]
)


@pytest.mark.parametrize("key,value", SET_CASES)
def test_command_line_set_refused_with_exit_2(key, value, tmp_path, capsys):
    scn = tmp_path / "case.toml"
    scn.write_text(TINY)
    for cmd in (["check", str(scn)], ["run", str(scn), "-o", str(tmp_path / "out.h5"), "--quiet"]):
        rc = main([*cmd, "--set", f"{key}={value}"])
        err = capsys.readouterr().err
        assert rc == 2, (key, value, rc, err)
        assert "Traceback" not in err and err.strip(), err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["case.toml"]


OPTION_CASES = [
    ["animate", "{res}", "--fps", "0"], ["animate", "{res}", "--fps", "-1"], ["animate", "{res}", "--fps", "1e3"],
    ["animate", "{res}", "--component", "Bz"], ["animate", "{res}", "-o", "{tmp}/x.webm"],
    ["plot", "{res}", "--format", "png,,pdf"], ["plot", "{res}", "--format", "exe"],
    ["plot", "{tmp}/case.toml"], ["animate", "{tmp}/case.toml"],
    ["run", "{tmp}/case.toml", "--resume", "{tmp}/case.toml"],
    ["check"], ["run"], ["check", "{tmp}/case.toml", "--set"],
]


@pytest.fixture(scope="module")
def results_file(tmp_path_factory):
    d = tmp_path_factory.mktemp("fuzzbase")
    scn = d / "base.toml"
    scn.write_text(TINY)
    assert main(["run", str(scn), "-o", str(d / "base.h5"), "--quiet"]) == 0
    return d / "base.h5"


@pytest.mark.parametrize("args", OPTION_CASES, ids=lambda a: " ".join(a))
def test_command_line_options_refused_with_exit_2(args, tmp_path, capsys, results_file):
    (tmp_path / "case.toml").write_text(TINY)
    argv = [a.format(res=results_file, tmp=tmp_path) for a in args]
    try:
        rc = main(argv)
    except SystemExit as exc:            # argparse's own refusals
        rc = exc.code
    err = capsys.readouterr().err
    assert rc == 2, (argv, rc, err)
    assert "Traceback" not in err and err.strip(), err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["case.toml"]
