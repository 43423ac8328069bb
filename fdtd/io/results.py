r"""The HDF5 results file: layout, atomic writing, reading back.

Layout (``format = "gapwake-results"``, ``format_version = 1``; the full
table with units is in ``docs/results.md``)::

    /                  attrs: format, format_version, gapwake_version, status
                       ("complete" or "partial"), stop_reason, created, scenario_file
    /scenario          attrs: text (the TOML file), resolved (JSON of the resolved plan)
    /units             attrs: SI value of one normalized unit of each quantity
    /grid              attrs: polarization, shape, spacing, origin, dt, courant
    /geometry          outline_<k> (m, 2); attrs: kind, surfaces, source_height
    /ledger            time, stored, source_work, bath, outflow       (n_samples,)
    /doppler           kx, omega, branch, power, power_half1, power_half2  (n_points,)
                       attrs: speed, internal_frequency, window, partial
    /doppler/flux_<k>  kx, omega, branch, flux; attrs: height
    /reference         kx_normal, power_normal, kx_anomalous, power_anomalous
    /line              data (n_t, n_x), time, x; attrs: component, height
    /snapshots         <component> (n, nx, ny) or (n, nx), time, x, y
    /summary           attrs: json (the run summary), and one attribute per figure
    /scan/point_<k>/   the same groups for each point of a scan; /scan attrs: key, values

Every dataset carries ``units`` (what a normalized unit is), ``si_units`` and
``si_factor`` (multiply to get SI) and a ``description``.  Normalized units:
c = eps0 = mu0 = 1, lengths in ell (``/units`` attr ``length_m``).

Writing is atomic: the file is built under ``<name>.incomplete`` with
``status = "running"`` and renamed at the end; an interrupted run (Ctrl-C)
is written with ``status = "partial"``; a killed run leaves only the
``.incomplete`` file, which never looks complete.
"""

from __future__ import annotations

import json
import os
import time
from pathlib import Path

import h5py
import numpy as np

from fdtd._version import __version__

FORMAT = "gapwake-results"
FORMAT_VERSION = 1

#: name -> (SI unit, attribute of fdtd.units.UnitSystem giving the factor, description)
QUANTITY = {
    "length": ("m", "length", "normalized length (ell)"),
    "time": ("s", "time", "normalized time (ell / c)"),
    "wavenumber": ("1/m", None, "normalized wavenumber (1 / ell)"),
    "angular_frequency": ("rad/s", "angular_frequency", "normalized angular frequency (c / ell)"),
    "power": (None, "power", "normalized power (per unit length along z in 2D, per unit area in 1D)"),
    "energy": (None, "energy", "normalized energy (per unit length in 2D, per unit area in 1D)"),
    "force": (None, "force", "normalized force (per unit length in 2D, per unit area in 1D)"),
    "field": ("V/m", "field", "normalized electric field (E0)"),
    "magnetic_field": ("A/m", "magnetic_field", "normalized magnetic field (E0 / Z0)"),
    "energy_density": (None, "energy_density", "normalized energy density (eps0 E0^2)"),
    "dimensionless": ("1", None, "dimensionless"),
}


def si_of(units, quantity: str) -> tuple[str, float]:
    si_name, attr, _desc = QUANTITY[quantity]
    if quantity == "wavenumber":
        return "1/m", 1.0 / units.length
    if attr is None:
        return si_name, 1.0
    if si_name is None:
        si_name = "J/m^3" if quantity == "energy_density" else (
            {"power": "W/m", "energy": "J/m", "force": "N/m"}[quantity] if units.dims == 2 else
            {"power": "W/m^2", "energy": "J/m^2", "force": "N/m^2"}[quantity])
    return si_name, float(getattr(units, attr))


def put(group, name: str, data, quantity: str, units, description: str = ""):
    """Write a dataset with its unit attributes."""
    if name in group:
        del group[name]
    ds = group.create_dataset(name, data=np.asarray(data))
    si_name, factor = si_of(units, quantity)
    ds.attrs["units"] = QUANTITY[quantity][2]
    ds.attrs["si_units"] = si_name
    ds.attrs["si_factor"] = factor
    ds.attrs["description"] = description or name
    return ds


class AtomicResults:
    """Context manager: an HDF5 file written under a temporary name, renamed on commit."""

    def __init__(self, path):
        self.path = Path(path)
        self.tmp = self.path.with_name(self.path.name + ".incomplete")
        self.f = None

    def __enter__(self) -> h5py.File:
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self.f = h5py.File(self.tmp, "w")
        a = self.f.attrs
        a["format"] = FORMAT
        a["format_version"] = FORMAT_VERSION
        a["gapwake_version"] = __version__
        a["status"] = "running"
        a["created"] = time.strftime("%Y-%m-%dT%H:%M:%S%z")
        return self.f

    def commit(self, status: str, stop_reason: str) -> Path:
        self.f.attrs["status"] = status
        self.f.attrs["stop_reason"] = stop_reason
        self.f.flush()
        self.f.close()
        self.f = None
        os.replace(self.tmp, self.path)
        return self.path

    def __exit__(self, exc_type, exc, tb) -> None:
        if self.f is not None:          # not committed: leave the .incomplete file for inspection
            try:
                self.f.attrs["status"] = "failed"
                self.f.close()
            except Exception:  # pragma: no cover
                pass


def write_units(f, units) -> None:
    g = f.require_group("units")
    for name in ("length", "time", "angular_frequency", "field", "energy", "power", "force", "charge",
                 "dipole_moment", "current"):
        g.attrs[name] = float(getattr(units, name))
    g.attrs["dims"] = units.dims
    g.attrs["note"] = ("SI value of one normalized unit; energies, powers and forces per unit length "
                       "along z (2D) or per unit area (1D)")


def write_summary(group, summary: dict) -> None:
    g = group.require_group("summary")
    g.attrs["json"] = json.dumps(summary, default=float)
    for k, v in summary.items():
        if isinstance(v, dict) and "value" in v:
            val = v["value"]
            if isinstance(val, (bool, np.bool_)) or isinstance(val, str):
                g.attrs[k] = str(val)
            else:
                g.attrs[k] = float(val) if val is not None else np.nan
            err = v.get("error")
            g.attrs[k + "_error"] = float(err) if err is not None else np.nan
            g.attrs[k + "_units"] = str(v.get("units", ""))


class Results:
    """Read-only view of a results file (numpy arrays out)."""

    def __init__(self, path, point: int | None = None):
        self.path = Path(path)
        self.f = h5py.File(self.path, "r")
        if self.f.attrs.get("format") != FORMAT:
            raise ValueError(f"{self.path}: not a gapwake results file")
        self.root = self.f if point is None else self.f[f"scan/point_{point}"]

    @property
    def status(self) -> str:
        return str(self.f.attrs["status"])

    @property
    def n_points(self) -> int:
        return len(self.f["scan"]) if "scan" in self.f else 1

    def point(self, k: int) -> Results:
        return Results(self.path, k)

    @property
    def summary(self) -> dict:
        return json.loads(self.root["summary"].attrs["json"])

    def array(self, path: str) -> np.ndarray:
        return np.asarray(self.root[path])

    def has(self, path: str) -> bool:
        return path in self.root

    def attrs(self, path: str = "/") -> dict:
        return dict((self.root if path == "/" else self.root[path]).attrs)

    @property
    def scenario_text(self) -> str:
        return str(self.f["scenario"].attrs["text"])

    def units(self) -> dict:
        return dict(self.f["units"].attrs)

    def close(self) -> None:
        self.f.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
