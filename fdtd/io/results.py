r"""The HDF5 results file: its layout, written and read by this one module.

The layout is the table :data:`LAYOUT`; :func:`put` refuses to write a dataset that
is not in it, and ``docs/results.md`` carries the table as :func:`layout_markdown`
renders it (a test keeps the two equal; ``python -m fdtd.io.results`` prints it).

Conventions (``format = "gapwake-results"``, ``format_version = 2``):

* numbers are stored in the simulator's normalized units (c = eps0 = mu0 = 1, lengths
  in ell, fields in E0, H as H Z0); every dataset has the attributes ``units`` (the SI
  unit, a string pint parses), ``si_factor`` (multiply the stored numbers by it to get
  ``units``), ``normalized_unit`` (what one stored unit is) and ``description``;
* coordinates are attached as HDF5 dimension scales (``ds.dims[k][0]``);
* writing is atomic: the file is built under ``<name>.incomplete`` with ``status =
  "running"`` and renamed when everything is written; a killed run leaves only the
  ``.incomplete`` file, which never says ``complete``.
"""

from __future__ import annotations

import json
import os
import re
import time
from dataclasses import dataclass
from pathlib import Path

import h5py
import numpy as np

from fdtd._version import __version__

FORMAT = "gapwake-results"
FORMAT_VERSION = 2

#: quantity -> (SI unit in 2D, SI unit in 1D, attribute of fdtd.units.UnitSystem giving the
#: factor (None: 1), what one normalized unit is)
QUANTITY = {
    "length": ("m", "m", "length", "ell"),
    "time": ("s", "s", "time", "ell / c"),
    "wavenumber": ("1/m", "1/m", "wavenumber", "1 / ell"),
    "angular_frequency": ("rad/s", "rad/s", "angular_frequency", "c / ell"),
    "power": ("W/m", "W/m^2", "power", "per unit length along z in 2D, per unit area in 1D"),
    "energy": ("J/m", "J/m^2", "energy", "per unit length along z in 2D, per unit area in 1D"),
    "force": ("N/m", "N/m^2", "force", "per unit length along z in 2D, per unit area in 1D"),
    "field": ("V/m", "V/m", "field", "E0 (the units.field of the scenario)"),
    "magnetic_field": ("A/m", "A/m", "magnetic_field", "E0 / Z0"),
    "energy_density": ("J/m^3", "J/m^3", "energy_density", "eps0 E0^2"),
    "dimensionless": ("dimensionless", "dimensionless", None, "1"),
}


@dataclass(frozen=True)
class Entry:
    """One dataset of the layout: path pattern, shape, quantity, description."""

    path: str
    shape: str
    quantity: str
    description: str

    def pattern(self) -> re.Pattern:
        pat = re.escape(self.path)
        for key, rx in (("<k>", r"\d+"), ("<name>", r"[^/]+"), ("<component>", "[EH][xyz]")):
            pat = pat.replace(re.escape(key), rx)
        return re.compile(pat + "$")


#: every dataset a results file can hold (per point; scans repeat them under scan/point_<k>/)
LAYOUT = (
    Entry("ledger/time", "(n_samples,)", "time", "sample times of the energy ledger"),
    Entry("ledger/stored", "(n_samples,)", "energy", "field + polarization energy in the ledger box"),
    Entry("ledger/source_work", "(n_samples,)", "energy", "cumulative work done by the source on the field"),
    Entry("ledger/bath", "(n_samples,)", "energy", "cumulative heat handed to the bath (pole damping)"),
    Entry("ledger/outflow", "(n_samples,)", "energy", "cumulative outflow into the absorbing layers"),
    Entry("doppler/kx", "(n_points,)", "wavenumber", "k_x of each Doppler point"),
    Entry("doppler/omega", "(n_points,)", "angular_frequency",
          "lab angular frequency omega = k_x v + s Omega of each point"),
    Entry("doppler/branch", "(n_points,)", "dimensionless", "+1 normal, -1 anomalous, 0 charge (Cherenkov)"),
    Entry("doppler/power", "(n_points,)", "power", "work rate of the source into each point"),
    Entry("doppler/power_half1", "(n_points,)", "power", "the same from the first half of the record"),
    Entry("doppler/power_half2", "(n_points,)", "power", "the same from the second half"),
    Entry("doppler/flux_<k>/kx", "(n_points,)", "wavenumber", "k_x of the flux points"),
    Entry("doppler/flux_<k>/omega", "(n_points,)", "angular_frequency", "their lab frequencies"),
    Entry("doppler/flux_<k>/branch", "(n_points,)", "dimensionless", "their branches"),
    Entry("doppler/flux_<k>/flux", "(n_points,)", "power",
          "upward Poynting flux through the line y = height (attribute) per point"),
    Entry("reference/kx_normal", "(n_ref,)", "wavenumber", "harmonics 2 pi m / L of the cell, normal branch"),
    Entry("reference/power_normal", "(n_ref,)", "power", "exact planar reference, same k set and source shape"),
    Entry("reference/kx_anomalous", "(n_ref,)", "wavenumber", "harmonics, anomalous branch"),
    Entry("reference/power_anomalous", "(n_ref,)", "power", "exact planar reference, anomalous branch"),
    Entry("reference/kx_charge", "(n_ref,)", "wavenumber", "harmonics, charge"),
    Entry("reference/power_charge", "(n_ref,)", "power", "exact planar reference for a line charge"),
    Entry("line/data", "(n_t, n_x)", "field or magnetic_field",
          "the component (attribute) along the line y = height (attribute) over time"),
    Entry("line/time", "(n_t,)", "time", "time level of each line sample"),
    Entry("line/x", "(n_x,)", "length", "x of the line samples"),
    Entry("snapshots/<component>", "(n, n_x, n_y) or (n, n_x)", "field or magnetic_field", "field snapshots"),
    Entry("snapshots/time", "(n,)", "time", "time level of each snapshot"),
    Entry("snapshots/requested_times", "(n,)", "time", "times asked for"),
    Entry("snapshots/x", "(n_x,)", "length", "x of the snapshot nodes"),
    Entry("snapshots/y", "(n_y,)", "length", "y of the snapshot nodes (2D)"),
    Entry("geometry/material_map", "(n_x, n_y) or (n_x,)", "dimensionless",
          "index into the material_names attribute of the dominant material at each node (-1: wall)"),
    Entry("geometry/outline_<k>_<k>", "(m, 2)", "length", "region outline (x, y)"),
    Entry("materials/<name>/omega", "(600,)", "angular_frequency", "frequency axis of the tabulated permittivity"),
    Entry("materials/<name>/eps_real", "(600,)", "dimensionless", "Re eps(omega) of each material used"),
    Entry("materials/<name>/eps_imag", "(600,)", "dimensionless", "Im eps(omega) (positive for loss; e^{-i omega t})"),
    Entry("materials/<name>/branch_k", "(400,)", "wavenumber",
          "wavenumbers (up to the grid's pi/dx) of the lossless bulk branches (dispersive materials)"),
    Entry("materials/<name>/branch_omega", "(branches, 400)", "angular_frequency",
          "lossless bulk branches omega_j(k), spatial dispersion included (NaN: none)"),
)


def layout_entry(path: str) -> Entry:
    """The layout entry of a dataset path (relative to its point), or KeyError."""
    for e in LAYOUT:
        if e.pattern().match(path):
            return e
    raise KeyError(f"{path!r} is not a dataset of the results layout (fdtd/io/results.py LAYOUT)")


def _unit_name(quantity: str, dims: int) -> str:
    u2, u1, _a, _d = QUANTITY[quantity]
    return u2 if dims == 2 else u1


def si_of(units, quantity: str) -> tuple[str, float]:
    """(SI unit, factor from normalized to SI) of a quantity in a unit system."""
    _u2, _u1, attr, _d = QUANTITY[quantity]
    name = _unit_name(quantity, units.dims)
    if attr is None:
        return ("1" if quantity == "dimensionless" else name), 1.0
    if attr == "wavenumber":
        return name, 1.0 / units.length
    return name, float(getattr(units, attr))


def layout_markdown() -> str:
    """The dataset table of docs/results.md (2D units; 1D runs are per unit area)."""
    lines = ["| dataset | shape | units | description |", "|---|---|---|---|"]
    for e in LAYOUT:
        qs = [q.strip() for q in e.quantity.split(" or ")]
        unit = " or ".join(_unit_name(q, 2) for q in qs)
        lines.append(f"| `{e.path}` | {e.shape} | {unit} | {e.description} |")
    return "\n".join(lines)


def _relative(group, name: str) -> str:
    """Dataset path relative to its point (strips /scan/point_<k>/)."""
    full = f"{group.name.rstrip('/')}/{name}".lstrip("/")
    return re.sub(r"^scan/point_\d+/", "", full)


def put(group, name: str, data, quantity: str, units, description: str | None = None, scales=()):
    """Write (or replace) a documented dataset with its unit attributes.

    ``quantity`` must be one the layout allows for this path; ``scales`` are
    (axis, dataset) pairs to attach as dimension scales."""
    entry = layout_entry(_relative(group, name))
    allowed = [q.strip() for q in entry.quantity.split(" or ")]
    if quantity not in allowed:
        raise ValueError(f"{name}: quantity {quantity!r} is not the layout's {entry.quantity!r}")
    if name in group and not isinstance(data, h5py.Dataset):
        del group[name]
    ds = data if isinstance(data, h5py.Dataset) else group.create_dataset(name, data=np.asarray(data))
    label(ds, quantity, units, description or entry.description)
    for axis, scale in scales:
        attach(ds, axis, scale)
    return ds


def label(ds, quantity: str, units, description: str) -> None:
    si_name, factor = si_of(units, quantity)
    ds.attrs["units"] = "dimensionless" if si_name == "1" else si_name
    ds.attrs["si_factor"] = factor
    ds.attrs["normalized_unit"] = QUANTITY[quantity][3]
    ds.attrs["description"] = description


def attach(ds, axis: int, scale) -> None:
    """Attach ``scale`` (a dataset) as the dimension scale of ``ds`` along ``axis``."""
    if not scale.is_scale:
        scale.make_scale(scale.name.rsplit("/", 1)[-1])
    ds.dims[axis].attach_scale(scale)


class AtomicResults:
    """Context manager: an HDF5 file written under a temporary name, renamed on commit."""

    def __init__(self, path):
        self.path = Path(path)
        self.tmp = self.path.with_name(self.path.name + ".incomplete")
        self.f = None

    def __enter__(self) -> h5py.File:
        self.f = h5py.File(self.tmp, "w")
        a = self.f.attrs
        a["format"] = FORMAT
        a["format_version"] = FORMAT_VERSION
        a["gapwake_version"] = __version__
        a["status"] = "running"
        a["created"] = time.strftime("%Y-%m-%dT%H:%M:%S%z")
        self.f.flush()          # a run killed from here on leaves a readable "running" file
        return self.f

    def commit(self, status: str, stop_reason: str) -> Path:
        """Write the final status and give the file its name.  Ctrl-C and SIGTERM are held
        back until the rename is done, and a rename that fails leaves the temporary file
        marked partial: a file that says "complete" always has its final name."""
        import signal

        held = {signal.SIGINT, signal.SIGTERM}
        try:
            old = signal.pthread_sigmask(signal.SIG_BLOCK, held)
        except (AttributeError, ValueError, OSError):     # not POSIX, or not the main thread
            old = None
        try:
            self.f.attrs["status"] = status
            self.f.attrs["stop_reason"] = stop_reason
            self.f.flush()
            self.f.close()
            self.f = None
            try:
                os.replace(self.tmp, self.path)
            except OSError as exc:
                with h5py.File(self.tmp, "a") as f:
                    f.attrs["status"] = "partial"
                    f.attrs["stop_reason"] = f"could not be renamed to {self.path}: {exc.strerror}"
                from fdtd.io.paths import OutputPathError

                raise OutputPathError(f"results: could not rename {self.tmp} to {self.path} ({exc.strerror}); "
                                      f"the results are in {self.tmp}, marked partial") from None
        finally:
            if old is not None:
                signal.pthread_sigmask(signal.SIG_SETMASK, old)
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
            if isinstance(val, (dict, list)):
                continue                       # arrays and lists: in the JSON only
            if isinstance(val, (bool, np.bool_, str)):
                g.attrs[k] = str(val)
            elif val is None:
                g.attrs[k] = np.nan
            else:
                g.attrs[k] = float(val)
            err = v.get("error")
            g.attrs[k + "_error"] = float(err) if isinstance(err, (int, float)) else np.nan
            g.attrs[k + "_units"] = str(v.get("units", ""))


def _field_quantity(component: str) -> str:
    return {"E": "field", "H": "magnetic_field"}.get(component[:1], "energy_density")


def write_point(group, plan, outcome, kind: str) -> None:
    """Write one point's results (an :class:`fdtd.experiment.summary.Outcome`) into a group;
    the streamed records (``snapshots``, ``line``) are already there and get their units
    and coordinates here."""
    u = plan.units
    gi = outcome.grid
    g = group.require_group("grid")
    g.attrs.update({"polarization": gi["polarization"], "shape": gi["shape"], "spacing": gi["spacing"],
                    "origin": gi["origin"], "dt": gi["dt"], "courant": gi["courant"]})
    geo = group.require_group("geometry")
    geo.attrs["surfaces"] = np.array(plan.surfaces, dtype=float)
    geo.attrs["source_height"] = plan.height
    geo.attrs["kind"] = kind
    put(geo, "material_map", outcome.material_map, "dimensionless", u)
    geo.attrs["material_names"] = json.dumps(outcome.material_names)
    for k, lines in enumerate(outcome.outlines):
        for j, line in enumerate(lines):
            put(geo, f"outline_{k}_{j}", line, "length", u)
    _write_ledger(group, outcome.ledger_samples, u)
    if outcome.spectrum is not None:
        _write_doppler(group, plan, outcome, u)
    if outcome.reference:
        rg = group.require_group("reference")
        for b, name in ((1, "normal"), (-1, "anomalous"), (0, "charge")):
            if b in outcome.reference:
                k, pw = outcome.reference[b]
                kd = put(rg, f"kx_{name}", k, "wavenumber", u)
                put(rg, f"power_{name}", pw, "power", u, scales=((0, kd),))
    _finish_snapshots(group, plan, u)
    _finish_line(group, plan, u)
    mg = group.require_group("materials")
    for name, c in outcome.material_curves.items():
        sub = mg.require_group(name)
        w = put(sub, "omega", c["omega"], "angular_frequency", u)
        put(sub, "eps_real", c["eps_real"], "dimensionless", u, scales=((0, w),))
        put(sub, "eps_imag", c["eps_imag"], "dimensionless", u, scales=((0, w),))
        if "branch_k" in c:
            kb = put(sub, "branch_k", c["branch_k"], "wavenumber", u)
            put(sub, "branch_omega", c["branch_omega"], "angular_frequency", u, scales=((1, kb),))
    write_summary(group, outcome.summary)
    group.attrs["plan"] = plan.to_json()


def _write_ledger(group, samples, u) -> None:
    led = group.require_group("ledger")
    t = put(led, "time", [x.time for x in samples], "time", u)
    sc = ((0, t),)
    put(led, "stored", [x.stored for x in samples], "energy", u, scales=sc)
    put(led, "source_work", [x.source_work for x in samples], "energy", u, scales=sc)
    put(led, "bath", [float(x.bath.sum()) for x in samples], "energy", u, scales=sc)
    put(led, "outflow", [x.outflow for x in samples], "energy", u, scales=sc)


def _write_doppler(group, plan, outcome, u) -> None:
    sp = outcome.spectrum
    d = group.require_group("doppler")
    kx = put(d, "kx", sp.kx, "wavenumber", u)
    sc = ((0, kx),)
    put(d, "omega", sp.omega, "angular_frequency", u, scales=sc)
    put(d, "branch", sp.branch, "dimensionless", u, scales=sc)
    put(d, "power", sp.power, "power", u, scales=sc)
    if sp.halves is not None:
        put(d, "power_half1", sp.halves[0], "power", u, scales=sc)
        put(d, "power_half2", sp.halves[1], "power", u, scales=sc)
    d.attrs.update({"speed": plan.speed, "internal_frequency": plan.Omega, "window": sp.window,
                    "partial": bool(sp.meta.get("partial"))})
    for k, (fl, y) in enumerate(zip(outcome.fluxes, plan.flux_heights)):
        fg = d.require_group(f"flux_{k}")
        fg.attrs["height"] = y
        fk = put(fg, "kx", fl.kx, "wavenumber", u)
        put(fg, "omega", fl.omega, "angular_frequency", u, scales=((0, fk),))
        put(fg, "branch", fl.branch, "dimensionless", u, scales=((0, fk),))
        put(fg, "flux", fl.power, "power", u, scales=((0, fk),))


def _finish_snapshots(group, plan, u) -> None:
    """Name the streamed snapshot datasets as documented, with units and coordinates."""
    if "snapshots" not in group:
        return
    sg = group["snapshots"]
    c = plan.snapshot_component
    kind = "E" if c.startswith("E") else "H"
    if f"time_{kind}" in sg:
        sg.move(f"time_{kind}", "time")
    for k in ("E", "H"):
        if f"time_{k}" in sg:
            del sg[f"time_{k}"]
    axes = []
    for a, name in enumerate("xy"):
        if f"coord_{c}_{name}" in sg:
            sg.move(f"coord_{c}_{name}", name)
            axes.append((a + 1, put(sg, name, sg[name], "length", u)))
    t = put(sg, "time", sg["time"], "time", u)
    put(sg, "requested_times", sg["requested_times"], "time", u)
    put(sg, c, sg[c], _field_quantity(c), u, f"{c} snapshots (H in units of E0/Z0)",
        scales=((0, t),) + tuple(axes))
    for key in ("units", "recorder", "description"):
        sg.attrs.pop(key, None)
    sg.attrs["component"] = c


def _finish_line(group, plan, u) -> None:
    if "line" not in group:
        return
    lg = group["line"]
    c = plan.line_component
    kind = "E" if c.startswith("E") else "H"
    lg.move(c, "data")
    lg.move(f"time_{kind}", "time")
    lg.move(f"coord_{c}", "x")
    t = put(lg, "time", lg["time"], "time", u)
    x = put(lg, "x", lg["x"], "length", u)
    put(lg, "data", lg["data"], _field_quantity(c), u, f"{c} on a line over time", scales=((0, t), (1, x)))
    for key in ("units", "recorder", "description"):
        lg.attrs.pop(key, None)
    lg.attrs.update({"component": c, "height": plan.line_height or 0.0, "periodic": plan.kind == "comoving"})


class Results:
    """Read-only view of a results file (numpy arrays out)."""

    def __init__(self, path, point: int | None = None):
        from fdtd.errors import ParameterError

        self.path = Path(path)
        what = "expected a results file written by gapwake run (HDF5)"
        if not self.path.exists():
            raise FileNotFoundError(f"{self.path}: no such file: {what}")
        if not self.path.is_file():
            raise ParameterError(f"{self.path}: not a file: {what}")
        if self.path.stat().st_size == 0 or not h5py.is_hdf5(self.path):
            empty = ", it is empty" if self.path.stat().st_size == 0 else ""
            raise ParameterError(f"{self.path}: not an HDF5 file{empty}: {what}")
        try:
            self.f = h5py.File(self.path, "r")
        except OSError as exc:
            raise ParameterError(f"{self.path}: cannot be read ({exc}): {what}") from None
        if self.f.attrs.get("format") != FORMAT:
            found = self.f.attrs.get("format")
            self.f.close()
            raise ParameterError(f"{self.path}: not a gapwake results file (format attribute {found!r}, "
                                 f"expected {FORMAT!r}): {what}")
        if point is None:
            self.root = self.f
        else:
            n = len(self.f["scan"]) if "scan" in self.f else 1
            key = f"scan/point_{point}"
            if isinstance(point, bool) or not isinstance(point, int) or key not in self.f:
                self.f.close()
                raise ParameterError(f"{self.path}: point = {point!r}: expected a scan point index from 0 to "
                                     f"{n - 1}" if "scan" in self.f else
                                     f"{self.path}: point = {point!r}: the file holds no scan (use point=None)")
            self.root = self.f[key]

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

    def si(self, path: str) -> np.ndarray:
        """A dataset converted to its SI ``units`` attribute."""
        ds = self.root[path]
        return np.asarray(ds) * float(ds.attrs.get("si_factor", 1.0))

    def has(self, path: str) -> bool:
        return path in self.root

    def attrs(self, path: str = "/") -> dict:
        return dict((self.root if path == "/" else self.root[path]).attrs)

    @property
    def plan(self) -> dict:
        return json.loads(self.root.attrs["plan"])

    def spectrum(self, flux: int | None = None):
        """The Doppler spectrum (normalized units) as a :class:`fdtd.recording.doppler.DopplerSpectrum`;
        ``flux=k`` gives the k-th flux line's (its ``power`` is the upward flux)."""
        from fdtd.recording.doppler import DopplerSpectrum

        d = self.root["doppler"]
        src = d if flux is None else d[f"flux_{flux}"]
        power = np.asarray(src["power" if flux is None else "flux"])
        halves = None
        if flux is None and "power_half1" in d:
            halves = (np.asarray(d["power_half1"]), np.asarray(d["power_half2"]))
        s = self.summary
        rate = s.get("total_power", {}).get("normalized")
        unres = s.get("unresolved_power", {}).get("normalized")
        swr = rate + unres if (flux is None and rate is not None and unres is not None) else float("nan")
        return DopplerSpectrum(np.asarray(src["kx"]), np.asarray(src["omega"]), np.asarray(src["branch"]),
                               power, float(d.attrs.get("window", np.nan)), swr, float(d.attrs["speed"]),
                               float(d.attrs["internal_frequency"]), {"partial": bool(d.attrs["partial"])},
                               halves=halves)

    def reference(self) -> dict:
        """Branch -> (k, power) of the planar reference on the cell's k set (normalized units)."""
        out = {}
        for b, name in ((1, "normal"), (-1, "anomalous"), (0, "charge")):
            if f"reference/kx_{name}" in self.root:
                out[b] = (self.array(f"reference/kx_{name}"), self.array(f"reference/power_{name}"))
        return out

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


if __name__ == "__main__":   # python -m fdtd.io.results: the dataset table of docs/results.md
    print(layout_markdown())
