r"""Scenario files (TOML): the schema and its validation.

A scenario describes a physical situation in physical units.  It is read
with the standard library (``tomllib``), checked against the schema in
:data:`SCHEMA` before anything runs (unknown keys are errors, with a
did-you-mean suggestion; every error names the file, the key path, the value
and what was expected), resolved into normalized units
(:mod:`fdtd.scenario.resolve`) and sized into a plan (:mod:`fdtd.scenario.plan`),
from which the experiment procedure builds the model, solver, sources and
recorders.  The full key reference is in ``docs/scenarios.md``.

Sections: ``[meta]``, ``[units]``, ``[materials.NAME]``, ``[geometry]``,
``[[regions]]``, ``[grid]``, ``[source]``, ``[run]``, ``[record]``, ``[scan]``.
"""

from __future__ import annotations

import copy
import difflib
import math
import tomllib
from dataclasses import dataclass
from pathlib import Path

from fdtd.scenario import quantities as Q
from fdtd.scenario.quantities import ScenarioError


# ----------------------------------------------------------------------------- schema
@dataclass(frozen=True)
class Key:
    """One key of a section: ``kind`` is a quantity kind, or "str", "bool", "int",
    "number", "list", "table", "choice"."""

    kind: str
    required: bool = False
    default: object = None
    choices: tuple = ()
    lo: float | None = None
    hi: float | None = None
    lo_open: bool = False
    hi_open: bool = False
    doc: str = ""


#: largest permittivity or oscillator strength taken (a grid resolving sqrt(1e6) = 1000 times the
#: vacuum wavenumber is beyond any run; larger values are typing mistakes)
EPS_MAX = 1e6

POLE_KEYS = {
    "kind": Key("choice", True, choices=("lorentz", "drude"), doc="pole model"),
    "delta_eps": Key("dimensionless", False, lo=0.0, hi=EPS_MAX, doc="Lorentz oscillator strength"),
    "omega": Key("angular_frequency", False, lo=0.0, lo_open=True, doc="Lorentz resonance"),
    "omega_p": Key("angular_frequency", False, lo=0.0, lo_open=True, doc="Drude plasma frequency"),
    "gamma": Key("rate", False, default=0.0, lo=0.0, doc="damping rate (loss into the bath)"),
    "beta_nl": Key("speed", False, default=0.0, lo=0.0, hi=1.0, hi_open=True,
                   doc="Lorentz only: nonlocal speed (spatial dispersion, a physical wavenumber cutoff)"),
}

MATERIAL_KEYS = {
    "kind": Key("choice", True, choices=("constant", "poles", "polar", "sellmeier", "table"),
                doc="how the permittivity is given"),
    "eps": Key("dimensionless", False, lo=0.0, hi=EPS_MAX, lo_open=True, doc="constant permittivity"),
    "eps_inf": Key("dimensionless", False, default=1.0, lo=0.0, hi=EPS_MAX, lo_open=True,
                   doc="high-frequency permittivity"),
    "poles": Key("list", False, default=(), doc="list of pole tables"),
    "omega_to": Key("angular_frequency", False, lo=0.0, lo_open=True, doc="transverse optical phonon"),
    "omega_lo": Key("angular_frequency", False, lo=0.0, lo_open=True, doc="longitudinal optical phonon"),
    "gamma": Key("rate", False, default=0.0, lo=0.0, doc="phonon damping rate"),
    "B": Key("list", False, doc="Sellmeier strengths"),
    "C": Key("list", False, doc="Sellmeier resonances, um^2"),
    "file": Key("str", False, doc="CSV table of n, k or eps', eps''"),
    "n_lorentz": Key("int", False, default=2, lo=0, doc="poles for a table fit"),
    "n_drude": Key("int", False, default=0, lo=0, doc="Drude poles for a table fit"),
    "beta_nl": Key("speed", False, default=0.0, lo=0.0, hi=1.0, hi_open=True,
                   doc="polar: nonlocal speed of the phonon pole (spatial dispersion)"),
}

#: the keys (besides ``kind``) that each material kind reads; any other key is refused
MATERIAL_KIND_KEYS = {
    "constant": ("eps",),
    "poles": ("eps_inf", "poles"),
    "polar": ("eps_inf", "omega_to", "omega_lo", "gamma", "beta_nl"),
    "sellmeier": ("B", "C"),
    "table": ("file", "n_lorentz", "n_drude"),
}
#: the keys (besides ``kind``) that each pole kind reads (beta_nl of a Drude pole has its own message)
POLE_KIND_KEYS = {
    "lorentz": ("delta_eps", "omega", "gamma", "beta_nl"),
    "drude": ("omega_p", "gamma", "beta_nl"),
}

SCHEMA = {
    "meta": {
        "title": Key("str", False, default=""),
        "description": Key("str", False, default=""),
    },
    "units": {
        "mode": Key("choice", False, default="si", choices=("si", "natural")),
        "length": Key("length", False, lo=0.0, lo_open=True, doc="reference length (SI mode)"),
        "frequency": Key("angular_frequency", False, lo=0.0, lo_open=True,
                         doc="reference angular frequency (natural mode)"),
        "field": Key("dimensionless", False, default=1.0, lo=0.0, lo_open=True,
                     doc="reference field E0 in V/m"),
    },
    "geometry": {
        "kind": Key("choice", False, default="none", choices=("none", "half-space", "slab", "slot")),
        "material": Key("str", False, doc="half-space or slab material"),
        "surface": Key("length", False, default=0.0, doc="half-space surface / slab top / slot bottom, y"),
        "thickness": Key("length", False, lo=0.0, lo_open=True, doc="slab thickness"),
        "lower": Key("str", False, doc="slot: lower material"),
        "upper": Key("str", False, doc="slot: upper material"),
        "gap": Key("length", False, lo=0.0, lo_open=True, doc="slot: gap width"),
        "lower_thickness": Key("length", False, lo=0.0, lo_open=True),
        "upper_thickness": Key("length", False, lo=0.0, lo_open=True),
        "background": Key("str", False, default="vacuum"),
    },
    "grid": {
        "polarization": Key("choice", False, choices=("te", "tm", "1d")),
        "cell": Key("length", False, lo=0.0, lo_open=True, doc="cell size"),
        "cells_per_wavelength": Key("number", False, lo=4.0, doc="or: cells per shortest wavelength"),
        "length": Key("length", True, lo=0.0, lo_open=True, doc="cell length along x (co-moving) or domain length"),
        "height": Key("length", False, lo=0.0, lo_open=True, doc="interior half height (co-moving) / height"),
        "absorber": Key("length", False, lo=0.0, lo_open=True,
                        doc="absorbing-layer thickness (default: half the source's rest-frame wavelength, "
                            ">= 10 cells)"),
        "courant": Key("number", False, default=0.95, lo=0.0, hi=1.0, lo_open=True,
                       doc="fraction of the stability limit"),
        "adjust_length": Key("bool", False, default=True,
                             doc="let the cell length change (by at most 20 %) so that the recording window "
                                 "holds whole beat periods of the Doppler lines and no harmonic sits on a "
                                 "light-line crossing; scans keep the first point's length"),
        "subsamples": Key("int", False, default=4, lo=1),
        "threads": Key("int", False, lo=1),
    },
    "source": {
        "kind": Key("choice", True, choices=("dipole", "charge")),
        "speed": Key("speed", True, lo=0.0, hi=1.0, hi_open=True, doc="speed (fraction of c below 1)"),
        "height": Key("length", False, default=0.0, doc="y of the path"),
        "x0": Key("length", False, default=0.0, doc="x at t = 0"),
        "frequency": Key("angular_frequency", False, lo=0.0, lo_open=True, doc="rest-frame frequency"),
        "axis": Key("choice", False, default="y", choices=("x", "y", "z")),
        "moment": Key("dipole_per_length", False, default=None, doc="rest-frame dipole moment per length"),
        "transition_dipole": Key("dipole_per_length", False, default=None, lo=0.0, lo_open=True,
                                 doc="two-level transition dipole |d| for the equivalent quantum rates "
                                     "(default: half the moment, p0 = 2|d|)"),
        "charge": Key("charge_per_length", False, default=None, doc="line charge"),
        "ramp_periods": Key("number", False, default=3.0, lo=0.0, doc="switch-on, rest-frame periods"),
        "speed_ramp": Key("time", False, default=None, lo=0.0, doc="charges: time to reach the speed"),
        "shape_order": Key("int", False, default=3, lo=1, hi=3),
        "shape_scale": Key("int", False, default=2, lo=1),
        "max_frequency": Key("angular_frequency", False, lo=0.0, lo_open=True,
                             doc="charges: highest frequency of interest (for the grid)"),
        "gap_fraction": Key("number", False, lo=0.0, hi=1.0, lo_open=True, hi_open=True,
                            doc="slot geometry: height as a fraction of the gap (overrides height)"),
    },
    "run": {
        "kind": Key("choice", False, default="comoving", choices=("comoving", "open")),
        "transits": Key("int", False, default=8, lo=1,
                        doc="co-moving: recording window in transit times (at least; rounded up to whole "
                            "beat periods of the Doppler lines); windows repeat until the figures settle"),
        "settle_tolerance": Key("number", False, default=5e-3, lo=0.0, lo_open=True,
                                doc="co-moving: largest remaining drift of the reported figures between "
                                    "recording windows, relative to each figure"),
        "max_time": Key("time", False, lo=0.0, lo_open=True, doc="co-moving: give up settling after this time"),
        "time": Key("time", False, lo=0.0, lo_open=True, doc="open: simulated time"),
        "checkpoint_every": Key("int", False, default=0, lo=0,
                                doc="steps between checkpoints when a checkpoint file is given (--checkpoint); "
                                    "0: one recording window (co-moving) or a tenth of the run (open)"),
        "isolated_emitter": Key("bool", False, default=False,
                                doc="co-moving: also compute the isolated emitter (not the cell's row of "
                                    "emitters) from phased rows integrated over k0 (several more runs)"),
        "isolated_tolerance": Key("number", False, default=1e-2, lo=0.0, lo_open=True,
                                  doc="relative quadrature error of the isolated emitter's branch powers"),
        "isolated_max_runs": Key("int", False, default=17, lo=1,
                                 doc="most phased-row runs for the isolated emitter"),
        "grid_check": Key("bool", False, default=True,
                          doc="co-moving: run the point again on a grid twice as coarse and include the "
                              "difference (the discretization error) in the error estimates"),
        "grid_tolerance": Key("number", False, default=2e-2, lo=0.0, lo_open=True,
                              doc="co-moving, with the grid check: largest estimated discretization error "
                                  "of the total power (and of each branch carrying at least 5 % of it), "
                                  "relative; above it the grid is refined (run.grid_refinements) or the "
                                  "result is marked not converged"),
        "grid_refinements": Key("int", False, default=1, lo=0, hi=3,
                                doc="co-moving: automatic refinements (cell halved, same source shape; each "
                                    "costs about 8 times the run in 2D) when the grid error exceeds "
                                    "run.grid_tolerance"),
    },
    "record": {
        "doppler": Key("bool", False, default=True),
        "flux_heights": Key("list", False, default=(), doc="y of flux lines (lengths)"),
        "snapshots": Key("int", False, default=0, lo=0, doc="number of field snapshots"),
        "snapshot_component": Key("str", False, doc="field component of the snapshots"),
        "reference": Key("bool", False, default=True, doc="planar reference when the geometry is planar"),
        "line_component": Key("str", False, doc="record this component on a line (k-omega map)"),
        "line_height": Key("length", False, doc="y of that line"),
        "line_every": Key("int", False, default=2, lo=1),
        "passage_start": Key("length", False, doc="open domain: start of the column span analysed"),
        "passage_stop": Key("length", False, doc="open domain: end of that span"),
    },
    "scan": {
        "key": Key("str", True, doc='key path to vary, e.g. "source.speed"'),
        "values": Key("list", True, doc="values (same units rules as the key)"),
    },
}

SECTIONS = tuple(SCHEMA) + ("materials", "regions")

REGION_KEYS = {
    "shape": Key("choice", True, choices=("half-space", "slab", "rectangle", "polygon", "grating")),
    "material": Key("str", True),
    "below": Key("length", False), "above": Key("length", False),
    "lo": Key("length", False), "hi": Key("length", False),
    "x0": Key("length", False), "x1": Key("length", False), "y0": Key("length", False),
    "y1": Key("length", False),
    "vertices": Key("list", False, doc="polygon vertices [[x, y], ...] (lengths)"),
    "period": Key("length", False, lo=0.0, lo_open=True, doc="grating period along x"),
    "duty": Key("number", False, lo=0.0, hi=1.0, lo_open=True, doc="grating filling fraction"),
    "depth": Key("length", False, lo=0.0, lo_open=True, doc="grating tooth height"),
    "top": Key("length", False, doc="grating: y of the tooth tops"),
}


#: the keys (besides ``shape`` and ``material``) that each region shape needs; no others are read
REGION_SHAPE_KEYS = {
    "half-space": ("below", "above"),        # exactly one of the two
    "slab": ("lo", "hi"),
    "rectangle": ("x0", "x1", "y0", "y1"),
    "polygon": ("vertices",),
    "grating": ("period", "duty", "top", "depth"),
}

#: deepest nesting of tables and lists a scenario may have (the schema itself needs four:
#: materials.NAME.poles[i].key)
MAX_DEPTH = 16
#: largest scenario file read (a scenario is a page of text)
MAX_FILE_BYTES = 1 << 20

_SI_UNIT = {"length": "m", "time": "s", "angular_frequency": "rad/s", "rate": "1/s", "speed": "c",
            "charge_per_length": "C/m", "dipole_per_length": "C"}


def _allowed_range(spec: Key) -> str:
    """E.g. "a speed (fraction of c below 1) in 0 <= value < 1 c"."""
    parts = []
    if spec.lo is not None:
        parts.append(f"{spec.lo:g} {'<' if spec.lo_open else '<='} ")
    parts.append("value")
    if spec.hi is not None:
        parts.append(f" {'<' if spec.hi_open else '<='} {spec.hi:g}")
    unit = _SI_UNIT.get(spec.kind, "")
    what = f"{spec.doc} " if spec.doc else ""
    return f"{what}in {''.join(parts)}{(' ' + unit) if unit else ''}"


# ----------------------------------------------------------------------------- loading
def _finite(x) -> bool:
    try:
        return math.isfinite(x)
    except OverflowError:          # an integer beyond the float range
        return False


def _check_depth(data, where: str) -> None:
    """Refuse tables and lists nested deeper than MAX_DEPTH (and cycles, which never end)."""
    stack = [(data, 1)]
    while stack:
        node, depth = stack.pop()
        if isinstance(node, dict):
            children = node.values()
        elif isinstance(node, (list, tuple)):
            children = node
        else:
            continue
        if depth > MAX_DEPTH:
            raise ScenarioError(f"{where}: tables and lists nested more than {MAX_DEPTH} levels deep: "
                                f"expected at most {MAX_DEPTH} (the schema needs four)")
        stack.extend((c, depth + 1) for c in children)


class Scenario:
    """A scenario file (or dict) with its validated, SI-converted values.

    Use :meth:`set` to change a parameter (key path as in the file) before
    :meth:`resolve`.
    """

    def __init__(self, data: dict, where: str = "scenario", text: str | None = None):
        self.where = where
        self.text = text
        self.errors: list[str] = []
        self.values: dict = {}
        _check_depth(data, where)
        self.raw = copy.deepcopy(data)
        self._validate()

    @classmethod
    def load(cls, path) -> Scenario:
        path = Path(path)
        try:
            size = path.stat().st_size
            if path.is_dir():
                raise ScenarioError(f"{path}: is a folder: expected a scenario file (TOML)")
            if size > MAX_FILE_BYTES:
                raise ScenarioError(f"{path}: {size} bytes: expected a scenario file (TOML) of at most "
                                    f"{MAX_FILE_BYTES} bytes")
            raw = path.read_bytes()
        except OSError as exc:
            raise ScenarioError(f"{path}: cannot read the scenario file ({exc.strerror})") from None
        if b"\0" in raw:
            raise ScenarioError(f"{path}: a binary file (it contains NUL bytes): expected a scenario file "
                                "(TOML text)")
        try:
            text = raw.decode("utf-8")
        except UnicodeDecodeError as exc:
            line = raw[: exc.start].count(b"\n") + 1
            raise ScenarioError(f"{path}: not UTF-8 text (byte 0x{raw[exc.start]:02x} on line {line}): "
                                "expected a scenario file (TOML) in UTF-8") from None
        try:
            data = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise ScenarioError(f"{path}: not valid TOML: {exc}") from None
        except RecursionError:
            raise ScenarioError(f"{path}: nested too deeply to read: expected tables and lists nested at "
                                f"most {MAX_DEPTH} levels") from None
        return cls(data, where=str(path), text=text)

    def set(self, key_path: str, value) -> Scenario:
        """A copy with ``key_path`` (e.g. "source.speed", or "materials.m.poles.0.omega" with a
        list index) set to ``value``."""
        if not isinstance(key_path, str) or not key_path.strip():
            raise ScenarioError(f"{self.where}: key path {key_path!r}: expected a dotted key such as "
                                '"source.speed"')
        parts = [p.strip() for p in key_path.strip().split(".")]
        if any(not p for p in parts):
            raise ScenarioError(f"{self.where}: key path {key_path!r} has an empty part: expected a dotted "
                                'key such as "source.speed"')
        data = copy.deepcopy(self.raw)
        node = data
        for depth, p in enumerate(parts):
            last = depth == len(parts) - 1
            if isinstance(node, list):
                if not (p.isdigit() and int(p) < len(node)):
                    raise ScenarioError(
                        f"{self.where}: cannot set {key_path!r}: {'.'.join(parts[:depth]) or 'the top level'} "
                        f"is a list of {len(node)} entries and {p!r} is not an index of it: expected "
                        + (f"0 to {len(node) - 1}" if node else "no index (the list is empty)"))
                p = int(p)
            elif not isinstance(node, dict):
                raise ScenarioError(
                    f"{self.where}: cannot set {key_path!r}: {'.'.join(parts[:depth])} = {node!r} is a "
                    "value, not a table or a list, so it has no keys inside")
            if last:
                node[p] = value
            else:
                if isinstance(node, dict) and p not in node:
                    node[p] = {}
                node = node[p]
        return Scenario(data, self.where, None)

    # -- validation -------------------------------------------------------
    def _fail(self, key: str, value, expected: str) -> None:
        self.errors.append(f"{self.where}: {key} = {value!r}: expected {expected}")

    def _unknown(self, key: str, allowed) -> None:
        leaf = str(key).split(".")[-1]
        near = difflib.get_close_matches(leaf, [str(a) for a in allowed], n=1)
        hint = f" (did you mean {near[0]!r}?)" if near else f" (allowed: {', '.join(sorted(allowed))})"
        self.errors.append(f"{self.where}: unknown key {key!r}{hint}")

    def _check_table(self, prefix: str, table, keys: dict, natural) -> dict:
        out = {}
        if not isinstance(table, dict):
            self._fail(prefix, table, "a table")
            return out
        for k in table:
            if k not in keys:
                self._unknown(f"{prefix}.{k}", keys)
        for k, spec in keys.items():
            path = f"{prefix}.{k}"
            if k not in table:
                if spec.required:
                    what = f"one of {list(spec.choices)}" if spec.choices else (spec.doc or spec.kind)
                    self.errors.append(f"{self.where}: {path} is missing: expected {what}")
                out[k] = spec.default
                continue
            out[k] = self._convert(path, table[k], spec, natural)
        return out

    def _convert(self, path, value, spec: Key, natural):
        kind = spec.kind
        try:
            if kind == "str":
                if not isinstance(value, str):
                    self._fail(path, value, "a string")
                    return spec.default
                return value
            if kind == "bool":
                if not isinstance(value, bool):
                    self._fail(path, value, "true or false")
                    return spec.default
                return value
            if kind == "choice":
                if value not in spec.choices:
                    near = difflib.get_close_matches(str(value), spec.choices, n=1)
                    hint = f" (did you mean {near[0]!r}?)" if near else ""
                    self._fail(path, value, f"one of {list(spec.choices)}{hint}")
                    return spec.default
                return value
            if kind == "list":
                if not isinstance(value, list):
                    self._fail(path, value, "a list")
                    return spec.default
                return value
            if kind == "int":
                if isinstance(value, bool) or not isinstance(value, int):
                    self._fail(path, value, "an integer")
                    return spec.default
                x = value
            elif kind == "number":
                if isinstance(value, bool) or not isinstance(value, (int, float)) or not _finite(value):
                    self._fail(path, value, "a finite number")
                    return spec.default
                x = float(value)
            else:
                x = Q.parse(value, kind, path, self.where, natural)
        except ScenarioError as exc:
            self.errors.append(str(exc))
            return spec.default
        lo, hi = spec.lo, spec.hi
        low_bad = lo is not None and (x < lo or (spec.lo_open and x == lo))
        high_bad = hi is not None and (x > hi or (spec.hi_open and x == hi))
        if low_bad or high_bad:
            self._fail(path, value, _allowed_range(spec))
        return x

    def _validate(self) -> None:
        d = self.raw
        if not isinstance(d, dict):
            raise ScenarioError(f"{self.where}: {d!r}: expected a TOML table at the top level")
        for sec in d:
            if sec not in SECTIONS:
                self._unknown(sec, SECTIONS)
        units = self._check_table("units", d.get("units", {}), SCHEMA["units"], None)
        natural = None
        if units.get("mode") == "natural":
            if units.get("frequency") is None:
                self.errors.append(f"{self.where}: units.frequency is missing: natural-unit mode needs the "
                                   "reference angular frequency (e.g. \"2.1 eV\")")
            elif units["frequency"] > 0:          # else its range error is listed already
                natural = Q.Natural(units["frequency"])
        self.natural = natural
        v = {"units": units}
        for sec in ("meta", "geometry", "grid", "source", "run", "record"):
            v[sec] = self._check_table(sec, d.get(sec, {}), SCHEMA[sec], natural)
        v["materials"] = self._check_materials(d.get("materials", {}), natural)
        regions = []
        raw_regions = d.get("regions", [])
        if not isinstance(raw_regions, list):
            self._fail("regions", raw_regions, "a list of region tables ([[regions]] sections)")
            raw_regions = []
        for i, r in enumerate(raw_regions):
            regions.append(self._check_region(i, r, natural))
        v["regions"] = regions
        if "scan" in d:
            v["scan"] = self._check_table("scan", d["scan"], SCHEMA["scan"], natural)
        self.values = v
        if not self.errors:
            self._cross_checks()
        if not self.errors and "scan" in v:
            self._check_scan_values()
        if self.errors:
            raise ScenarioError("\n".join(self.errors))

    def _not_applicable(self, prefix: str, table: dict, what: str, allowed) -> None:
        for k in table:
            if k not in allowed:
                self.errors.append(f"{self.where}: {prefix}.{k} does not apply to {what}: expected only "
                                   f"{', '.join(allowed)}")

    def _check_materials(self, raw, natural) -> dict:
        mats = {}
        if not isinstance(raw, dict):
            self._fail("materials", raw, "a table of named materials ([materials.NAME] sections)")
            return mats
        for name, tab in raw.items():
            p = f"materials.{name}"
            m = self._check_table(p, tab, MATERIAL_KEYS, natural)
            if not isinstance(tab, dict):
                continue
            kind = tab.get("kind")
            if isinstance(kind, str) and kind in MATERIAL_KIND_KEYS:
                self._not_applicable(p, tab, f"a material of kind {kind!r}", ("kind",) + MATERIAL_KIND_KEYS[kind])
            poles = []
            for i, pt in enumerate(m.get("poles") or ()):
                pp = f"{p}.poles[{i}]"
                poles.append(self._check_table(pp, pt, POLE_KEYS, natural))
                if isinstance(pt, dict) and isinstance(pt.get("kind"), str) and pt["kind"] in POLE_KIND_KEYS:
                    self._not_applicable(pp, pt, f"a pole of kind {pt['kind']!r}",
                                         ("kind",) + POLE_KIND_KEYS[pt["kind"]])
            m["poles"] = poles
            if "B" in tab:
                m["B"] = self._numbers(f"{p}.B", tab["B"], lo=0.0, hi=EPS_MAX,
                                       what=f"Sellmeier strengths in 0 <= value <= {EPS_MAX:g}")
            if "C" in tab:
                m["C"] = self._numbers(f"{p}.C", tab["C"], lo=0.0, lo_open=True,
                                       what="Sellmeier resonances > 0 (um^2)")
            mats[name] = m
        return mats

    def _check_region(self, i: int, r, natural) -> dict:
        p = f"regions[{i}]"
        out = self._check_table(p, r, REGION_KEYS, natural)
        if not isinstance(r, dict) or not isinstance(r.get("shape"), str) or r["shape"] not in REGION_SHAPE_KEYS:
            return out
        shape = r["shape"]
        need = REGION_SHAPE_KEYS[shape]
        self._not_applicable(p, r, f"a region of shape {shape!r}", ("shape", "material") + need)
        if shape == "half-space":
            if ("below" in r) == ("above" in r):
                self.errors.append(f"{self.where}: {p} (half-space) needs exactly one of below or above "
                                   f"(got {'both' if 'below' in r else 'neither'})")
            return out
        missing = [k for k in need if k not in r]
        if missing:
            self.errors.append(f"{self.where}: {p} ({shape}) is missing {', '.join(missing)}: a {shape} "
                               f"needs {', '.join(need)}")
            return out
        for lo, hi in (("lo", "hi"), ("x0", "x1"), ("y0", "y1")):
            if lo in need and out.get(lo) is not None and out.get(hi) is not None and not out[lo] < out[hi]:
                self._fail(f"{p}.{hi}", r[hi], f"a value above {p}.{lo} = {r[lo]!r} (an empty region)")
        if shape == "polygon":
            out["vertices_si"] = self._vertices(f"{p}.vertices", r["vertices"], natural)
        return out

    def _vertices(self, path: str, value, natural) -> list:
        expected = "a list of at least three [x, y] pairs of lengths, enclosing an area"
        if not isinstance(value, list) or len(value) < 3 or not all(isinstance(v, list) and len(v) == 2
                                                                    for v in value):
            self._fail(path, value, expected)
            return []
        pts = []
        for j, pair in enumerate(value):
            try:
                pts.append(tuple(Q.parse(c, "length", f"{path}[{j}]", self.where, natural) for c in pair))
            except ScenarioError as exc:
                self.errors.append(str(exc))
                return []
        area = 0.5 * abs(sum(x0 * y1 - x1 * y0 for (x0, y0), (x1, y1) in zip(pts, pts[1:] + pts[:1])))
        if not area > 0:
            self._fail(path, value, expected + " (these vertices enclose none)")
        return pts

    def _check_scan_values(self) -> None:
        values = self.values["scan"]["values"]
        if not values:
            self._fail("scan.values", values, "a non-empty list of values for scan.key")
            return
        try:
            self.scan_points()
        except ScenarioError as exc:
            self.errors.append(str(exc))

    def _numbers(self, path, value, lo=None, lo_open=False, hi=None, what="numbers"):
        ok = isinstance(value, list) and all(isinstance(x, (int, float)) and not isinstance(x, bool)
                                             and _finite(x) for x in value)
        if ok and lo is not None:
            ok = all(x > lo if lo_open else x >= lo for x in value)
        if ok and hi is not None:
            ok = all(x <= hi for x in value)
        if not ok:
            self._fail(path, value, f"a list of finite {what}")
            return []
        return [float(x) for x in value]

    def _cross_checks(self) -> None:
        v = self.values
        names = set(v["materials"]) | {"vacuum"}

        def need_mat(path, name):
            if name is None:
                self.errors.append(f"{self.where}: {path} is missing: expected a material name")
            elif name not in names:
                near = difflib.get_close_matches(name, sorted(names), n=1)
                hint = f" (did you mean {near[0]!r}?)" if near else ""
                self._fail(path, name, f"one of the materials {sorted(names)}{hint}")

        for name, m in v["materials"].items():
            p = f"materials.{name}"
            k = m["kind"]
            if k == "constant" and m.get("eps") is None:
                self.errors.append(f"{self.where}: {p}.eps is missing: a constant material needs eps")
            if k == "polar":
                if m.get("omega_to") is None or m.get("omega_lo") is None:
                    self.errors.append(f"{self.where}: {p} (polar) needs omega_to and omega_lo")
                elif m["omega_lo"] <= m["omega_to"]:
                    self._fail(f"{p}.omega_lo", self.raw["materials"][name]["omega_lo"],
                               "a longitudinal frequency above omega_to")
            if k == "sellmeier" and (not m.get("B") or len(m.get("B") or []) != len(m.get("C") or [])):
                self.errors.append(f"{self.where}: {p} (sellmeier) needs lists B and C of equal length")
            if k == "table" and not m.get("file"):
                self.errors.append(f"{self.where}: {p}.file is missing: a table material needs a CSV file")
            for i, pole in enumerate(m["poles"]):
                if pole["kind"] == "lorentz" and (pole.get("delta_eps") is None or pole.get("omega") is None):
                    self.errors.append(f"{self.where}: {p}.poles[{i}] (lorentz) needs delta_eps and omega")
                if pole["kind"] == "drude" and pole.get("omega_p") is None:
                    self.errors.append(f"{self.where}: {p}.poles[{i}] (drude) needs omega_p")
                if pole["kind"] == "drude" and pole.get("beta_nl"):
                    self._fail(f"{p}.poles[{i}].beta_nl", self.raw["materials"][name]["poles"][i]["beta_nl"],
                               "0 for a Drude pole (spatial dispersion is offered for Lorentz poles only)")
            if k != "polar" and m.get("beta_nl"):
                self._fail(f"{p}.beta_nl", self.raw["materials"][name]["beta_nl"],
                           "no material-level beta_nl unless kind = 'polar' (give it per pole)")
        g = v["geometry"]
        need_mat("geometry.background", g["background"])
        if g["kind"] in ("half-space", "slab"):
            need_mat("geometry.material", g["material"])
            if g["kind"] == "slab" and g["thickness"] is None:
                self.errors.append(f"{self.where}: geometry.thickness is missing: a slab needs a thickness")
        if g["kind"] == "slot":
            need_mat("geometry.lower", g["lower"])
            need_mat("geometry.upper", g["upper"])
            if g["gap"] is None:
                self.errors.append(f"{self.where}: geometry.gap is missing: a slot needs a gap width")
        for i, r in enumerate(v["regions"]):
            need_mat(f"regions[{i}].material", r["material"])
        s = v["source"]
        if s["kind"] == "dipole" and s.get("frequency") is None:
            self.errors.append(f"{self.where}: source.frequency is missing: a dipole needs its rest-frame "
                               "frequency (e.g. \"2.1 eV\")")
        if s["kind"] == "charge" and s.get("max_frequency") is None and v["grid"].get("cell") is None:
            self.errors.append(f"{self.where}: source.max_frequency (or grid.cell) is missing: a charge "
                               "needs the highest frequency of interest to size the grid")
        if s["speed"] is not None and s["speed"] <= 0 and v["run"]["kind"] == "comoving":
            self._fail("source.speed", self.raw.get("source", {}).get("speed"),
                       "a speed > 0 for a co-moving cell")
        if s.get("gap_fraction") is not None and g["kind"] != "slot":
            self._fail("source.gap_fraction", s["gap_fraction"], 'a "slot" geometry (or use source.height)')
        grid = v["grid"]
        if grid.get("cell") is None and grid.get("cells_per_wavelength") is None:
            grid["cells_per_wavelength"] = 20.0
        if v["run"]["kind"] == "open" and v["run"].get("time") is None:
            self.errors.append(f"{self.where}: run.time is missing: an open-domain run needs its duration")
        pol = grid.get("polarization")
        if pol is None:
            grid["polarization"] = "tm" if (s["kind"] == "dipole" and s["axis"] == "z") else "te"
        elif s["kind"] == "charge" and pol != "te":
            self._fail("grid.polarization", pol, '"te" (a moving line charge lives in TE_z)')
        elif s["kind"] == "dipole":
            allowed = {"te": ("x", "y"), "tm": ("z",), "1d": ("y",)}[pol]
            if s["axis"] not in allowed:
                self._fail("source.axis", s["axis"], f"one of {list(allowed)} for polarization {pol!r}")
        rec = v["record"]
        for i, y in enumerate(rec.get("flux_heights") or ()):
            try:
                Q.parse(y, "length", f"record.flux_heights[{i}]", self.where, self.natural)
            except ScenarioError as exc:
                self.errors.append(str(exc))
        if rec.get("line_height") is not None and rec.get("line_component") is None:
            self._fail("record.line_height", self.raw["record"]["line_height"],
                       "record.line_component beside it (the field to record on that line)")
        starts = [k for k in ("passage_start", "passage_stop") if rec.get(k) is not None]
        if len(starts) == 1:
            self.errors.append(f"{self.where}: record.{starts[0]} is given without record."
                               f"{({'passage_start', 'passage_stop'} - set(starts)).pop()}: the passage "
                               "analysis needs both ends of its column span")
        elif starts and not rec["passage_start"] < rec["passage_stop"]:
            self._fail("record.passage_stop", self.raw["record"]["passage_stop"],
                       f"a value above record.passage_start = {self.raw['record']['passage_start']!r}")
        if starts and v["run"]["kind"] != "open":
            self._fail("record.passage_start", self.raw["record"].get("passage_start"),
                       'run.kind = "open" (the passage analysis is for open domains)')
        if "scan" in v:
            key = v["scan"]["key"]
            sec, _, leaf = key.partition(".")
            if sec not in SCHEMA or sec == "scan" or leaf not in SCHEMA.get(sec, {}):
                self._fail("scan.key", key, "a key path such as \"source.speed\" or \"geometry.gap\" "
                           "(a key of [units], [geometry], [grid], [source], [run] or [record])")

    # -- resolution ---------------------------------------------------------
    def resolve(self):
        """The scenario in normalized units (:class:`fdtd.scenario.resolve.Resolved`)."""
        from fdtd.scenario.resolve import Resolved

        return Resolved(self)

    def scan_points(self) -> list[Scenario]:
        """One scenario per scan value (or [self] without a scan)."""
        if "scan" not in self.values:
            return [self]
        key = self.values["scan"]["key"]
        pts = []
        for val in self.values["scan"]["values"]:
            data = copy.deepcopy(self.raw)
            data.pop("scan")
            sec, leaf = key.split(".", 1)
            data.setdefault(sec, {})[leaf] = val
            pts.append(Scenario(data, f"{self.where} [{key} = {val!r}]", None))
        return pts


# ----------------------------------------------------------------------------- documentation
def _allowed_cell(spec: Key) -> str:
    if spec.choices:
        return " / ".join(f"`{c}`" for c in spec.choices)
    parts = []
    if spec.lo is not None:
        parts.append(f"{'>' if spec.lo_open else '≥'} {spec.lo:g}")
    if spec.hi is not None:
        parts.append(f"{'<' if spec.hi_open else '≤'} {spec.hi:g}")
    return ", ".join(parts)


def _table(keys: dict) -> str:
    rows = ["| key | kind | required | default | allowed | meaning |", "|---|---|---|---|---|---|"]
    for name, spec in keys.items():
        default = "" if spec.default in (None, ()) else f"`{spec.default}`"
        doc = spec.doc.replace("|", "\\|")
        rows.append(f"| `{name}` | {spec.kind} | {'yes' if spec.required else ''} | {default} | "
                    f"{_allowed_cell(spec)} | {doc} |")
    return "\n".join(rows)


def schema_markdown() -> str:
    """The key tables of docs/scenarios.md, rendered from :data:`SCHEMA` (a test keeps the
    file equal to it; ``python -m fdtd.scenario.schema`` prints it)."""
    parts = []
    for sec, keys in SCHEMA.items():
        parts.append(f"### `{sec}`\n\n{_table(keys)}")
    parts.append(f"### `materials.NAME`\n\n{_table(MATERIAL_KEYS)}")
    parts.append(f"### `materials.NAME.poles[]`\n\n{_table(POLE_KEYS)}")
    parts.append(f"### `[[regions]]`\n\n{_table(REGION_KEYS)}")
    return "\n\n".join(parts)


def write_docs(path) -> None:
    """Replace the key tables of docs/scenarios.md (from its "### `meta`" heading to the next
    "## " heading) with :func:`schema_markdown`."""
    from pathlib import Path

    lines = Path(path).read_text().splitlines()
    a = lines.index("### `meta`")
    b = next(k for k in range(a + 1, len(lines)) if lines[k].startswith("## "))
    Path(path).write_text("\n".join(lines[:a] + schema_markdown().splitlines() + [""] + lines[b:]) + "\n")


if __name__ == "__main__":   # python -m fdtd.scenario.schema [--write docs/scenarios.md]
    import sys

    if "--write" in sys.argv:
        write_docs(sys.argv[sys.argv.index("--write") + 1])
    else:
        print(schema_markdown())
