"""Normalized units used inside the solver, and conversion to SI at the edges.

Inside the package every quantity is expressed in a system where

    c = eps0 = mu0 = 1,

lengths are measured in a reference length ``ell`` (metres, chosen per run),
and field amplitudes in a reference field ``E0`` (V/m, default 1 V/m).
From these follow (``eta0 = sqrt(mu0/eps0)``):

==========================  ==========================  =======================
quantity                    normalized unit             SI value of one unit
==========================  ==========================  =======================
length x                    ell                         ell  [m]
time t                      ell / c                     ell/c  [s]
angular frequency omega     c / ell                     c/ell  [rad/s]
electric field E            E0                          E0  [V/m]
magnetic field H            E0 / eta0                   E0/eta0  [A/m]
current density J           E0 / (eta0 ell)             [A/m^2]
charge density rho          eps0 E0 / ell               [C/m^3]
polarization P              eps0 E0                     [C/m^2]
energy density u            eps0 E0^2                   [J/m^3]
==========================  ==========================  =======================

With these choices the normalized Maxwell equations read
``dD/dt = curl H - J``, ``dH/dt = -curl E``, ``div D = rho``,
``D = eps_inf E + sum_p P_p``: the familiar form with all constants set to one.

Lower-dimensional grids carry the dimension they lack: in 2D an energy is per
unit length along z (J/m), a charge is a line charge (C/m); in 1D an energy is
per unit transverse area (J/m^2), a charge is a sheet charge (C/m^2).
"""

from __future__ import annotations

from dataclasses import dataclass

import scipy.constants as sc

from fdtd._checks import positive

C0 = sc.c
EPS0 = sc.epsilon_0
MU0 = sc.mu_0
ETA0 = (MU0 / EPS0) ** 0.5
HBAR = sc.hbar
ELEMENTARY_CHARGE = sc.e


@dataclass(frozen=True)
class UnitSystem:
    """Conversion factors between normalized units and SI.

    Parameters
    ----------
    length : float
        The reference length ``ell`` in metres.
    field : float
        The reference electric field ``E0`` in V/m (default 1).
    dims : int
        Dimensionality of the grid (1 or 2); sets what "energy" and "charge"
        mean (per unit area in 1D, per unit length in 2D).
    """

    length: float
    field: float = 1.0
    dims: int = 2

    def __post_init__(self) -> None:
        positive("units.length", self.length)
        positive("units.field", self.field)
        if self.dims not in (1, 2):
            raise ValueError(f"units.dims = {self.dims!r}: expected 1 or 2")

    # --- elementary scales -------------------------------------------------
    @property
    def time(self) -> float:
        """One normalized time unit in seconds (ell / c)."""
        return self.length / C0

    @property
    def angular_frequency(self) -> float:
        """One normalized angular frequency unit in rad/s (c / ell)."""
        return C0 / self.length

    @property
    def magnetic_field(self) -> float:
        """One normalized H unit in A/m."""
        return self.field / ETA0

    @property
    def current_density(self) -> float:
        """One normalized J unit in A/m^2."""
        return self.field / (ETA0 * self.length)

    @property
    def charge_density(self) -> float:
        """One normalized rho unit in C/m^3."""
        return EPS0 * self.field / self.length

    @property
    def energy_density(self) -> float:
        """One normalized energy-density unit in J/m^3."""
        return EPS0 * self.field**2

    # --- integrated quantities (carry the missing dimensions) ---------------
    @property
    def energy(self) -> float:
        """One normalized energy unit: J/m (2D, per length along z) or J/m^2 (1D)."""
        return self.energy_density * self.length**self.dims

    @property
    def power(self) -> float:
        """One normalized power unit: W/m (2D) or W/m^2 (1D)."""
        return self.energy / self.time

    @property
    def charge(self) -> float:
        """One normalized charge unit: C/m (2D line charge) or C/m^2 (1D sheet)."""
        return self.charge_density * self.length**self.dims

    @property
    def dipole_moment(self) -> float:
        """One normalized dipole-moment unit: C (2D, C m per m) or C/m (1D)."""
        return self.charge * self.length

    @property
    def current(self) -> float:
        """One normalized current unit: A (2D line current) or A/m (1D sheet)."""
        return self.current_density * self.length ** (self.dims)

    @property
    def force(self) -> float:
        """One normalized force unit: N/m (2D) or N/m^2 (1D)."""
        return self.energy / self.length

    # --- photon energies ----------------------------------------------------
    def angular_frequency_from_ev(self, energy_ev: float) -> float:
        """Normalized angular frequency of a photon energy given in eV."""
        return energy_ev * ELEMENTARY_CHARGE / HBAR / self.angular_frequency

    def angular_frequency_to_ev(self, omega: float) -> float:
        """Photon energy in eV of a normalized angular frequency."""
        return omega * self.angular_frequency * HBAR / ELEMENTARY_CHARGE
