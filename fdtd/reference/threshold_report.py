"""The threshold report: every cutoff that applies, as a table and as a JSON-ready dict.

:func:`threshold_report` runs :func:`fdtd.reference.thresholds.thresholds` (and,
with a speed, :func:`~fdtd.reference.thresholds.cherenkov_band`) for the local
continuum, the grid's own cutoff, the periodic cell's wavenumbers, the
well-resolved wavenumbers and the nonlocal (physical) model, and collects the
results in a :class:`ThresholdReport`; ``str(report)`` is the table that
``gapwake threshold`` prints, :meth:`ThresholdReport.as_dict` its ``--json`` form.

Numbers are normalized (speeds in c, wavenumbers in 1/ell, frequencies in
c/ell); with the reference length ``ell`` (metres) the table adds SI columns.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import scipy.constants as _sc

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.media.materials import Material, NonlocalLorentzPole
from fdtd.reference.cutoffs import Cutoff, Geometry
from fdtd.reference.modes import Scheme, local_version, lossless, nonlocal_model
from fdtd.reference.thresholds import Threshold, cherenkov_band, thresholds

_C0 = _sc.c                          # m/s
_HBAR_EV = _sc.hbar / _sc.e          # eV s: photon energy = hbar omega


@dataclass
class ThresholdRow:
    """One model/cutoff combination of a :class:`ThresholdReport`."""

    label: str
    cutoff: Cutoff
    material: Material
    cherenkov: Threshold
    anomalous: Threshold | None
    band: list | None


@dataclass
class ThresholdReport:
    """Thresholds for several cutoffs; ``str()`` prints the table.

    All numbers are normalized (speeds in c, wavenumbers in 1/ell, frequencies
    in c/ell); with ``ell`` (metres) the table adds SI columns (1/um, rad/s and eV).
    """

    material: Material
    geometry: Geometry
    omega0: float | None
    speed: float | None
    rows: list
    ell: float | None = None
    notes: list = field(default_factory=list)

    def as_dict(self) -> dict:
        def th(t):
            if t is None:
                return None
            d = {"speed": {"value": None if math.isnan(t.speed) else t.speed, "units": "c"},
                 "branch": t.branch, "set_by": t.set_by,
                 "meaning": t.describe(),
                 "k": {"value": t.k, "units": "1/ell"}, "omega": {"value": t.omega, "units": "c/ell"}}
            if self.ell and t.k is not None:
                d["k_si"] = {"value": t.k / self.ell, "units": "1/m"}
                d["omega_si"] = {"value": t.omega * _C0 / self.ell, "units": "rad/s"}
            return d
        return {"material": self.material.name, "geometry": self.geometry.label(),
                "omega0": {"value": self.omega0, "units": "c/ell"},
                "speed": {"value": self.speed, "units": "c"}, "ell": {"value": self.ell, "units": "m"},
                "rows": [{"cutoff": r.label, "cherenkov": th(r.cherenkov), "anomalous": th(r.anomalous),
                          "band": None if r.band is None else [{"omega_lo": a, "omega_hi": b,
                                                                "units": "c/ell"} for a, b in r.band]}
                         for r in self.rows],
                "notes": list(self.notes)}

    def _fmt_k(self, k):
        if k is None:
            return ("-", "-")
        si = f"{k / self.ell * 1e-6:.4g}" if self.ell else "-"
        return (f"{k:.5g}", si)

    def _fmt_w(self, w):
        if w is None:
            return ("-", "-")
        if not self.ell:
            return (f"{w:.5g}", "-")
        w_si = w * _C0 / self.ell
        ev = w_si * _HBAR_EV
        return (f"{w:.5g}", f"{w_si:.4g} ({ev:.4g} eV)")

    def table(self) -> str:
        m = self.material
        lines = [f"speed thresholds: material {m.name!r} (eps_inf = {m.eps_inf:g}, "
                 f"{len(m.poles)} pole(s)), {self.geometry.label()}"]
        if self.omega0 is not None:
            lines.append(f"oscillator rest frequency omega0 = {self.omega0:.5g} c/ell"
                         + (f" = {self.omega0 * _C0 / self.ell:.4g} rad/s" if self.ell else ""))
        if self.ell:
            lines.append(f"normalized units: ell = {self.ell:.4g} m; k in 1/ell, omega in c/ell; "
                         "SI: k in 1/um, omega in rad/s (photon energy in eV)")
        else:
            lines.append("normalized units: k in 1/ell, omega in c/ell")
        head = ["cutoff / model", "process", "v_min [c]", "k [1/ell]", "k [1/um]", "omega [c/ell]",
                "omega [rad/s]", "branch", "set by"]
        body = []
        for r in self.rows:
            first = True
            for t in (r.cherenkov, r.anomalous):
                if t is None:
                    continue
                k1, k2 = self._fmt_k(t.k)
                w1, w2 = self._fmt_w(t.omega)
                sp = "none < c" if t.set_by == "none" else f"{t.speed:.5g}"
                body.append([r.label if first else "", "Cherenkov (charge)" if t.process == "cherenkov"
                             else "anomalous Doppler", sp, k1, k2, w1, w2, t.branch, t.set_by])
                first = False
        width = [max(len(h), *(len(b[i]) for b in body)) if body else len(h) for i, h in enumerate(head)]
        fmt = "  ".join(f"{{:<{w}}}" for w in width)
        lines.append(fmt.format(*head))
        lines.append(fmt.format(*["-" * w for w in width]))
        lines += [fmt.format(*b) for b in body]
        if self.speed is not None and any(r.band is not None for r in self.rows):
            lines.append("")
            lines.append(f"Cherenkov band of a charge at v = {self.speed:.4g} c "
                         "(frequencies where it emits):")
            for r in self.rows:
                if r.band is None:
                    continue
                if not r.band:
                    txt = "none"
                else:
                    txt = ", ".join(self._band_txt(a, b) for a, b in r.band)
                lines.append(f"  {r.label}: {txt}")
        if self.notes:
            lines.append("")
            lines += [f"note: {n}" for n in self.notes]
        return "\n".join(lines)

    def _band_txt(self, a, b):
        def one(x):
            if not math.isfinite(x):
                return "inf"
            if not self.ell:
                return f"{x:.5g}"
            return f"{x:.5g} ({x * _C0 / self.ell * _HBAR_EV:.4g} eV)"
        return f"{one(a)} .. {one(b)} c/ell"

    def __str__(self) -> str:
        return self.table()


def threshold_report(material: Material, omega0: float | None = None, speed: float | None = None,
                     geometry: Geometry | None = None, scheme: Scheme | None = None,
                     period: float | None = None, beta_nl: float | None = None,
                     ell: float | None = None, notes=()) -> ThresholdReport:
    """Cherenkov and anomalous-Doppler thresholds for every cutoff that applies.

    Rows: the local continuum without cutoff; with ``scheme``, the grid's own
    cutoff (discrete dispersion, k <= pi/dx) and, with ``period``, the periodic
    cell's k_m set; with ``beta_nl`` (or a material that already has nonlocal
    poles) the physical cutoff of the nonlocal model, in the continuum and on
    the grid (and its periodic set).

    Parameters
    ----------
    material : Material
    omega0 : float, optional
        Oscillator rest frequency (c/ell), > 0; without it only Cherenkov.
    speed : float, optional
        A speed (fraction of c) for which the Cherenkov band is listed (2D only).
    geometry : Geometry
        Default: bulk 1D without a charge band (1D) -- pass ``Geometry.bulk(2)``
        or ``Geometry.gap(h)`` for 2D.
    scheme : Scheme, optional
    period : float, optional
        Periodic cell length (normalized), with ``scheme``.
    beta_nl : float, optional
        Add the nonlocal (physical) cutoff with this speed, [0, 1).
    ell : float, optional
        Reference length in metres, for the SI columns.
    notes : sequence of str
        Extra notes printed under the table (e.g. those of ``resolve_inputs``, which
        reads the command line's and a scenario's values in the scenario layer).
    """
    geometry = geometry or Geometry()
    if not isinstance(material, Material):
        raise ParameterError(f"material = {material!r} is not allowed: expected an fdtd Material")
    if omega0 is not None:
        omega0 = _checks.positive("source rest frequency omega0", omega0)
    if speed is not None:
        speed = _checks.in_range("source speed v (fraction of c)", speed, 0.0, 1.0, lo_open=True,
                                 hi_open=True)
    if ell is not None:
        ell = _checks.positive("reference length ell (metres)", ell)
    if period is not None and scheme is None:
        raise ParameterError("period (periodic cell length) needs a scheme (grid cell and time step)")
    base = lossless(local_version(material))
    models = [("local", base, Cutoff())]
    if scheme is not None:
        models.append(("local", base, Cutoff(scheme=scheme)))
        if period is not None:
            models.append(("local", base, Cutoff(scheme=scheme, period=period)))
        models.append(("local", base, Cutoff.resolved(scheme.dx, scheme.dt)))
    nonloc = nonlocal_model(material, beta_nl)
    if nonloc is None and beta_nl is not None:
        notes = list(notes) + [f"beta_nl = {beta_nl:g} ignored: the material has no Lorentz pole "
                               "to make spatially dispersive"]
    if nonloc is not None:
        bn = max(p.beta_nl for p in nonloc.poles if isinstance(p, NonlocalLorentzPole))
        models.append((f"nonlocal beta_nl={bn:g}", nonloc, Cutoff()))
        if scheme is not None:
            models.append((f"nonlocal beta_nl={bn:g}", nonloc, Cutoff(scheme=scheme)))
            if period is not None:
                models.append((f"nonlocal beta_nl={bn:g}", nonloc,
                               Cutoff(scheme=scheme, period=period)))
            models.append((f"nonlocal beta_nl={bn:g}", nonloc, Cutoff.resolved(scheme.dx, scheme.dt)))
    rows = []
    for label, mat, cut in models:
        th = thresholds(mat, omega0, cut, geometry)
        ch, an = th["cherenkov"], th.get("anomalous")
        band = None
        if speed is not None and geometry.dims == 2 and cut.period is None:
            band = cherenkov_band(mat, speed, cut, geometry)
        rows.append(ThresholdRow(f"{label}, {cut.label()}", cut, mat, ch, an, band))
    if speed is not None and geometry.dims == 1:
        notes = list(notes) + ["no Cherenkov band listed: in 1D a charge moving along x has no "
                               "transverse current and does not radiate (use a 2D geometry)"]
    notes = list(notes) + [
        "loss is ignored for the mode positions (lossless branches); with loss the switch-on "
        "is a steep rise over a speed interval of order gamma/k, not a step",
        "'cutoff' / 'k -> inf': the threshold falls with the largest wavenumber allowed "
        "(a lossless local Lorentz medium has a mode of any small phase velocity below its "
        "resonance), so the number depends on the cutoff you believe in"]
    if scheme is not None:
        notes = notes + [
            "'resolved only': wavenumbers with at least 12 cells per wavelength (k dx <= pi/6). A grid "
            "threshold below it comes from waves near pi/dx, where the Yee grid slows every wave (by "
            "2/pi at pi/dx): a property of the grid. With a nonlocal pole both grid rows converge as "
            "dx shrinks (the resolved one to beta_nl, the full one to about 2 beta_nl/pi); the local "
            "ones fall in proportion to dx without limit"]
    if geometry.kind == "gap":
        notes.append(f"gap coupling: only wavenumbers with exp(-2 kappa h) >= {geometry.coupling:g}, "
                     "kappa = sqrt(k_x^2 - omega^2), count (k_gap = ln(1/f)/(2h) = "
                     f"{geometry.k_gap:.4g} 1/ell): a criterion, not a law; the coupled power falls "
                     "smoothly as exp(-2 kappa h)")
        notes.append("surface polariton: local model k_x = omega sqrt(eps/(eps+1)) where eps < -1 "
                     "(on the grid an analogue with eps_d and K_x, not the exact discrete interface)")
    if scheme is not None:
        notes.append("grid rows use the Yee + ADE dispersion (2/dt)^2 sin^2(omega dt/2) eps_d = K^2 "
                     "along the motion; the source's shape factor and grid-crossing aliases are not "
                     "included")
    return ThresholdReport(material, geometry, omega0, speed, rows, ell, notes)
