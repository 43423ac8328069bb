"""Scenario objects for the physics tests, in natural units (c = 1, lengths in c/omega_ref).

The physics checks run through the product: a :class:`fdtd.scenario.schema.Scenario`
(what a TOML file parses into) goes through :func:`fdtd.run`, the same experiment
procedure as ``gapwake run``, and the test reads the results file.  Plain numbers are
normalized units: lengths in c/omega_ref, frequencies in omega_ref (here 1 eV / hbar).
"""

from __future__ import annotations

import copy
from pathlib import Path

import fdtd
from fdtd.scenario.schema import Scenario

REFERENCE_FREQUENCY = "1 eV"


def lorentz(eps_inf: float, *poles) -> dict:
    """A material table: ``poles`` are (delta_eps, omega, gamma[, beta_nl]) in natural units."""
    tab = []
    for p in poles:
        d = {"kind": "lorentz", "delta_eps": p[0], "omega": p[1], "gamma": p[2]}
        if len(p) > 3:
            d["beta_nl"] = p[3]
        tab.append(d)
    return {"kind": "poles", "eps_inf": eps_inf, "poles": tab}


def constant(eps: float) -> dict:
    return {"kind": "constant", "eps": eps}


def scenario(materials: dict, geometry: dict, grid: dict, source: dict, run: dict | None = None,
             record: dict | None = None, name: str = "test case") -> Scenario:
    """A natural-unit scenario from its sections (dicts as in a TOML file)."""
    data = {"units": {"mode": "natural", "frequency": REFERENCE_FREQUENCY},
            "materials": copy.deepcopy(materials), "geometry": dict(geometry), "grid": dict(grid),
            "source": dict(source), "run": dict(run or {}), "record": dict(record or {})}
    return Scenario(data, where=name)


def run(sc: Scenario, tmp_path: Path, name: str = "case.h5"):
    """Run through :func:`fdtd.run`; returns (RunOutput, an open Results of point 0)."""
    out = fdtd.run(sc, Path(tmp_path) / name, progress=False)
    return out, fdtd.open_results(out.file, None if len(out.points) == 1 else 0)
