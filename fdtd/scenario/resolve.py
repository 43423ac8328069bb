"""A validated scenario in the solver's normalized units: reference length, materials.

Lengths are in ``ell`` (``units.length``, or c/omega of the source), frequencies in
c/ell, times in ell/c (c = eps0 = mu0 = 1).  The sizing rules that turn this into a
runnable :class:`fdtd.scenario.plan.Plan` are in :mod:`fdtd.scenario.plan`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import scipy.constants as sc

from fdtd.errors import ParameterError
from fdtd.media.materials import VACUUM, DrudePole, LorentzPole, Material, NonlocalLorentzPole
from fdtd.scenario.quantities import ScenarioError
from fdtd.scenario.schema import Scenario

#: reference lengths accepted (metres): from nuclear to kilometre scales; beyond them the
#: normalized numbers of ordinary inputs under- or overflow
LENGTH_RANGE = (1e-15, 1e3)


@dataclass
class Resolved:
    """A scenario in normalized units (lengths in ell, frequencies in c/ell), ready to build."""

    scenario: Scenario
    ell: float = 0.0
    materials: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)

    def __post_init__(self) -> None:
        v = self.scenario.values
        u = v["units"]
        s = v["source"]
        if self.scenario.natural is not None:
            self.ell = self.scenario.natural.length
        elif u.get("length") is not None:
            self.ell = u["length"]
        elif s["kind"] == "dipole":
            self.ell = sc.c / s["frequency"]
        else:
            self.ell = sc.c / s["max_frequency"] if s.get("max_frequency") else 1e-6
        if not LENGTH_RANGE[0] <= self.ell <= LENGTH_RANGE[1]:
            raise ScenarioError(
                f"{self.scenario.where}: the reference length is {self.ell:.3g} m (from {self._ell_origin()}): "
                f"expected {LENGTH_RANGE[0]:g} m to {LENGTH_RANGE[1]:g} m (normalized values beyond that range "
                "lose their precision)")
        from fdtd.units import UnitSystem

        self.units = UnitSystem(self.ell, u["field"], 1 if v["grid"]["polarization"] == "1d" else 2)
        self.materials = {"vacuum": VACUUM}
        for name, m in v["materials"].items():
            try:
                self.materials[name] = self._material(name, m)
            except (ArithmeticError, ValueError) as exc:
                if isinstance(exc, ParameterError):
                    raise ScenarioError(f"{self.scenario.where}: materials.{name}: {exc}") from None
                raise ScenarioError(f"{self.scenario.where}: materials.{name}: its values give no usable "
                                    f"permittivity in normalized units ({exc}): expected frequencies and "
                                    "strengths of ordinary size against the reference length") from None

    def _ell_origin(self) -> str:
        v = self.scenario.values
        if self.scenario.natural is not None:
            return "units.frequency"
        if v["units"].get("length") is not None:
            return "units.length"
        return "source.frequency" if v["source"]["kind"] == "dipole" else "source.max_frequency"

    # unit helpers ------------------------------------------------------------
    def L(self, x_si: float | None) -> float | None:
        return None if x_si is None else x_si / self.ell

    def W(self, w_si: float | None) -> float | None:
        return None if w_si is None else w_si * self.ell / sc.c

    def T(self, t_si: float | None) -> float | None:
        return None if t_si is None else t_si * sc.c / self.ell

    def _material(self, name: str, m: dict) -> Material:
        k = m["kind"]
        if k == "constant":
            return Material(m["eps"], (), name)
        if k == "poles":
            poles = []
            for p in m["poles"]:
                if p["kind"] == "lorentz" and p.get("beta_nl"):
                    poles.append(NonlocalLorentzPole(p["delta_eps"], self.W(p["omega"]), self.W(p["gamma"]),
                                                     p["beta_nl"]))
                elif p["kind"] == "lorentz":
                    poles.append(LorentzPole(p["delta_eps"], self.W(p["omega"]), self.W(p["gamma"])))
                else:
                    poles.append(DrudePole(self.W(p["omega_p"]), self.W(p["gamma"])))
            return Material(m["eps_inf"], tuple(poles), name)
        if k == "polar":
            wt, wl = self.W(m["omega_to"]), self.W(m["omega_lo"])
            de = m["eps_inf"] * (wl**2 - wt**2) / wt**2        # Lyddane-Sachs-Teller
            if m.get("beta_nl"):
                return Material(m["eps_inf"], (NonlocalLorentzPole(de, wt, self.W(m["gamma"]), m["beta_nl"]),),
                                name)
            return Material(m["eps_inf"], (LorentzPole(de, wt, self.W(m["gamma"])),), name)
        if k == "sellmeier":
            poles = []
            for B, C in zip(m["B"], m["C"]):
                lam = math.sqrt(C) * 1e-6                       # C in um^2
                poles.append(LorentzPole(B, self.W(2 * math.pi * sc.c / lam), 0.0))
            return Material(1.0, tuple(poles), name)
        # table: fitted by the material library
        from fdtd.media import pole_fit as ml  # noqa: F401  (optional module)

        path = Path(m["file"])
        if not path.is_absolute():
            path = Path(self.scenario.where).parent / path
        fit = ml.material_from_table(path, ell=self.ell, n_lorentz=m["n_lorentz"], n_drude=m["n_drude"],
                                     name=name)
        self.notes.append(f"material {name!r} fitted to {path.name}: rms residual {fit.residual:.2e}")
        return fit.material
