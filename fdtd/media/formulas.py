r"""Published dispersion formulas as Lorentz poles: Sellmeier, polar crystals, SiC.

Everything here returns an ordinary :class:`fdtd.media.materials.Material`, so the
solver, the stability limit and the energy ledger need to know nothing about
where a pole came from.  Conventions are those of :mod:`fdtd.media.materials`:
time dependence ``exp(-i omega t)`` (a passive medium has ``Im eps >= 0`` for
``omega > 0``) and

.. math::  \varepsilon(\omega) = \varepsilon_\infty
           + \sum_j \frac{\Delta\varepsilon_j\,\Omega_j^2}{\Omega_j^2-\omega^2-i\gamma_j\omega}
           - \sum_k \frac{\omega_{p,k}^2}{\omega^2+i\gamma_k\omega}.

Angular frequencies are *normalized* (unit ``c/ell`` for a reference length
``ell`` in metres, see :mod:`fdtd.units`).  Every function that starts from
SI data (wavelengths, eV, cm^-1) therefore takes ``ell``.  Useful identities
(``c`` cancels in the first two):

=====================  =================================  ============================
quantity given         SI angular frequency               normalized ``omega``
=====================  =================================  ============================
vacuum wavelength lam  ``2 pi c / lam``                   ``2 pi ell / lam``
wavenumber nu (1/m)    ``2 pi c nu``                      ``2 pi ell nu``
frequency f (Hz)       ``2 pi f``                         ``2 pi f ell / c``
photon energy E (eV)   ``E e / hbar``                     ``E e ell / (hbar c)``
=====================  =================================  ============================

Contents
--------
* :func:`from_sellmeier` -- a Sellmeier formula as lossless Lorentz poles;
  :func:`refractive_index_at_wavelength` to evaluate a material at SI wavelengths.
* :func:`polar_crystal`, :func:`polar_crystal_ev`, :func:`polar_crystal_wavenumbers`
  -- the one-phonon (TO/LO) dielectric function of a polar crystal;
  :func:`silicon_carbide` as a documented example.

Tabulated data are read by :mod:`fdtd.media.tables` and fitted by :mod:`fdtd.media.pole_fit`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
import scipy.constants as sc

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.media.materials import LorentzPole, Material
from fdtd.units import UnitSystem


def _metres_per(name: str, unit: str) -> float:
    """Metres in one ``unit`` (a length unit pint knows: "um", "nm", "angstrom", ...)."""
    from fdtd._pint import UREG      # here: pint costs ~0.2 s at start-up, few callers need it

    try:
        q = UREG.Quantity(1.0, str(unit).strip())
    except Exception:
        q = None
    if q is None or q.dimensionality != UREG.metre.dimensionality:
        what = "not a unit pint knows" if q is None else f"of dimension {q.dimensionality}"
        raise ParameterError(f"{name} = {unit!r} is not allowed ({what}): expected a length "
                             "unit such as 'um', 'nm', 'mm', 'm' or 'angstrom'")
    return float(q.to("m").magnitude)


def _float_sequence(name: str, values) -> np.ndarray:
    try:
        arr = np.atleast_1d(np.asarray(values, dtype=float))
    except (TypeError, ValueError):
        raise ParameterError(f"{name} = {values!r} is not allowed: expected a sequence of "
                             "finite real numbers") from None
    if arr.ndim != 1:
        raise ParameterError(f"{name} has shape {arr.shape}: expected a 1D sequence")
    return _checks.finite_array(name, arr)


# ---------------------------------------------------------------------------
# Sellmeier formulas
# ---------------------------------------------------------------------------

def from_sellmeier(B: Sequence[float], C: Sequence[float], wavelength_unit: str = "um", *,
                   ell: float, name: str = "sellmeier",
                   fold_above: float | None = None) -> Material:
    r"""A Sellmeier formula as a sum of lossless Lorentz poles.

    The formula

    .. math:: n^2(\lambda) = 1 + \sum_i \frac{B_i\,\lambda^2}{\lambda^2 - C_i}

    (``lambda`` the vacuum wavelength, ``C_i`` in ``wavelength_unit**2``) is
    *exactly* a set of undamped Lorentz oscillators.  Put
    ``lambda_i = sqrt(C_i)`` and ``omega = 2 pi c / lambda``,
    ``omega_i = 2 pi c / lambda_i``.  Then ``lambda^2 = (2 pi c)^2 / omega^2``
    and ``C_i = (2 pi c)^2 / omega_i^2``, so

    .. math:: \frac{\lambda^2}{\lambda^2 - C_i}
              = \frac{1/\omega^2}{1/\omega^2 - 1/\omega_i^2}
              = \frac{\omega_i^2}{\omega_i^2 - \omega^2},

    which is the Lorentz susceptibility ``delta_eps Omega^2/(Omega^2 - omega^2)``
    with ``Omega = omega_i``, ``delta_eps = B_i`` and ``gamma = 0``.  In
    normalized units ``Omega_i = 2 pi ell / lambda_i`` (``c`` cancels), and
    ``eps_inf = 1``.

    Parameters
    ----------
    B : sequence of float
        Dimensionless Sellmeier strengths ``B_i >= 0`` (a negative strength is
        not a passive oscillator).
    C : sequence of float
        Sellmeier constants ``C_i = lambda_i^2 >= 0`` in ``wavelength_unit**2``
        (note: many catalogues quote ``lambda_i`` itself; square it).  A term
        with ``C_i = 0`` has no dispersion (its resonance is at infinite
        frequency) and is added to ``eps_inf`` as the constant ``B_i``.
    wavelength_unit : str
        Unit of ``lambda`` in the formula, any length unit pint knows: ``"m"``,
        ``"mm"``, ``"um"``, ``"nm"``, ``"angstrom"``, ...
    ell : float
        Reference length of the normalized units, metres.
    name : str
        Material label.
    fold_above : float, optional
        Normalized angular frequency.  Poles with ``Omega_i > fold_above`` are
        replaced by their low-frequency value ``B_i`` added to ``eps_inf``.
        Why: an ultraviolet resonance far above the band of a run still sets
        the explicit-ADE stability limit ``Omega dt < 2`` (see
        :mod:`fdtd.space.stability`); folding it costs a relative error of about
        ``B_i (omega/Omega_i)^2`` in ``eps`` at the frequencies of interest.

    Returns
    -------
    Material
        ``eps_inf = 1`` (plus folded terms) and one :class:`LorentzPole` per
        remaining term, ordered as given.

    Notes
    -----
    Sellmeier fits are lossless and only valid inside the wavelength range
    they were fitted on; between and beyond the resonances the poles are
    mathematical continuations, not data.  Some published fits use the
    wavelength in air rather than in vacuum; the difference (a relative
    wavelength change of ~3e-4) is far below most simulation needs and is
    not corrected here.
    """
    ell = _checks.positive("ell (reference length, metres)", ell)
    unit_m = _metres_per("wavelength_unit", wavelength_unit)
    B = _float_sequence("Sellmeier B", B)
    C = _float_sequence("Sellmeier C", C)
    if B.size != C.size or B.size == 0:
        raise ParameterError(f"Sellmeier B has {B.size} terms and C has {C.size}: expected the "
                             "same number (>= 1) of each")
    if fold_above is not None:
        fold_above = _checks.positive("fold_above (normalized angular frequency)", fold_above)
    eps_inf = 1.0
    poles = []
    for i, (b, c) in enumerate(zip(B.tolist(), C.tolist(), strict=True)):
        _checks.non_negative(f"Sellmeier B[{i}]", b)
        if c < 0.0:
            # lambda_i^2 < 0 would be an imaginary resonance: not an oscillator.
            raise ParameterError(f"Sellmeier C[{i}] = {c!r} is not allowed: expected a finite "
                                 f"number >= 0 (C = lambda_i^2 in {wavelength_unit}^2)")
        if c == 0.0 or b == 0.0:
            eps_inf += b
            continue
        lam_i = math.sqrt(c) * unit_m                # resonance wavelength, metres
        omega_i = 2.0 * math.pi * ell / lam_i        # normalized: 2 pi c/lam_i over c/ell
        if fold_above is not None and omega_i > fold_above:
            eps_inf += b
            continue
        poles.append(LorentzPole(float(b), omega_i, 0.0))
    return Material(eps_inf, tuple(poles), name)


def refractive_index_at_wavelength(material: Material, wavelength_m, ell: float):
    """Complex refractive index (``Im n >= 0``) of ``material`` at vacuum wavelengths.

    Parameters
    ----------
    material : Material
        A material whose poles use normalized frequencies for reference length ``ell``.
    wavelength_m : float or array
        Vacuum wavelength(s), metres, > 0.
    ell : float
        The reference length (metres) the material was built for.

    Returns
    -------
    complex or ndarray of complex
        ``sqrt(eps(omega))`` at ``omega = 2 pi ell / lambda`` (normalized).
    """
    ell = _checks.positive("ell (reference length, metres)", ell)
    lam = np.asarray(wavelength_m, dtype=float)
    if not np.all(np.isfinite(lam)) or np.any(lam <= 0):
        raise ParameterError(f"wavelength_m = {wavelength_m!r} is not allowed: expected finite "
                             "wavelengths > 0 (metres)")
    return material.refractive_index(2.0 * np.pi * ell / lam)


# ---------------------------------------------------------------------------
# Polar crystals (one optical phonon)
# ---------------------------------------------------------------------------

def polar_crystal(omega_TO: float, omega_LO: float, gamma: float, eps_inf: float, *,
                  name: str = "polar crystal") -> Material:
    r"""Dielectric function of a polar crystal with one infrared-active phonon.

    .. math:: \varepsilon(\omega) = \varepsilon_\infty\,
              \frac{\omega_{LO}^2 - \omega^2 - i\gamma\omega}
                   {\omega_{TO}^2 - \omega^2 - i\gamma\omega}

    (the one-oscillator model of the Reststrahlen band, e.g. C. Kittel,
    *Introduction to Solid State Physics*, 8th ed., ch. 14 "Optical phonons
    in ionic crystals" / "Polaritons", from memory).  Writing the numerator as
    ``(omega_TO^2 - omega^2 - i gamma omega) + (omega_LO^2 - omega_TO^2)``
    shows it is exactly one Lorentz pole:

    .. math:: \varepsilon = \varepsilon_\infty + \frac{\Delta\varepsilon\,\Omega^2}
              {\Omega^2-\omega^2-i\gamma\omega},\qquad \Omega = \omega_{TO},\quad
              \Delta\varepsilon = \varepsilon_\infty\frac{\omega_{LO}^2-\omega_{TO}^2}{\omega_{TO}^2},

    and ``eps(0) = eps_inf + delta_eps = eps_inf omega_LO^2/omega_TO^2``: the
    Lyddane-Sachs-Teller relation ``eps_0/eps_inf = omega_LO^2/omega_TO^2``.
    Without loss ``eps(omega_LO) = 0`` (the longitudinal mode) and
    ``Re eps < 0`` for ``omega_TO < omega < omega_LO``.

    Only the model with one damping rate in numerator and denominator is a
    single pole; the "factorized" model with separate ``gamma_LO`` and
    ``gamma_TO`` is not of this form.

    Parameters
    ----------
    omega_TO, omega_LO : float
        Transverse and longitudinal optical phonon angular frequencies,
        normalized (``c/ell``); ``0 < omega_TO < omega_LO`` (``omega_LO <
        omega_TO`` would need a negative oscillator strength, i.e. gain).
    gamma : float
        Phonon damping rate, normalized, >= 0.
    eps_inf : float
        High-frequency (electronic) permittivity, > 0.
    name : str
        Material label.
    """
    w_to = _checks.positive("polar crystal omega_TO", omega_TO)
    w_lo = _checks.positive("polar crystal omega_LO", omega_LO)
    if w_lo <= w_to:
        raise ParameterError(f"polar crystal omega_LO = {w_lo!r} is not allowed: expected a "
                             f"number > omega_TO = {w_to!r} (LO below TO would need a negative "
                             "oscillator strength)")
    g = _checks.non_negative("polar crystal gamma (phonon damping)", gamma)
    e_inf = _checks.positive("polar crystal eps_inf", eps_inf)
    delta_eps = e_inf * (w_lo * w_lo - w_to * w_to) / (w_to * w_to)
    return Material(e_inf, (LorentzPole(delta_eps, w_to, g),), name)


def _ell_from(units: UnitSystem | None, ell: float | None) -> float:
    if (units is None) == (ell is None):
        raise ParameterError("give exactly one of units (a UnitSystem) or ell (reference "
                             f"length, metres); got units = {units!r}, ell = {ell!r}")
    if units is not None:
        if not isinstance(units, UnitSystem):
            raise ParameterError(f"units = {units!r} is not allowed: expected a UnitSystem")
        return float(units.length)
    return _checks.positive("ell (reference length, metres)", ell)


def polar_crystal_ev(E_TO: float, E_LO: float, gamma: float, eps_inf: float, *,
                     units: UnitSystem | None = None, ell: float | None = None,
                     name: str = "polar crystal") -> Material:
    """:func:`polar_crystal` with phonon energies and damping given in eV.

    ``omega = E / hbar`` (rad/s) for the phonon energies, and likewise
    ``gamma = (hbar gamma)/hbar`` for the damping given as an energy width;
    then divided by ``c/ell``.  Constants from :mod:`scipy.constants` (CODATA).

    Parameters
    ----------
    E_TO, E_LO : float
        ``hbar omega_TO`` and ``hbar omega_LO`` in eV.
    gamma : float
        ``hbar gamma`` in eV, >= 0.
    eps_inf : float
        High-frequency permittivity.
    units, ell :
        Exactly one: a :class:`~fdtd.units.UnitSystem` or the reference length in metres.
    """
    ell = _ell_from(units, ell)
    to_norm = sc.e / sc.hbar * ell / sc.c       # eV -> rad/s -> units of c/ell
    return polar_crystal(_checks.positive("polar crystal E_TO (eV)", E_TO) * to_norm,
                         _checks.positive("polar crystal E_LO (eV)", E_LO) * to_norm,
                         _checks.non_negative("polar crystal gamma (eV)", gamma) * to_norm,
                         eps_inf, name=name)


def polar_crystal_wavenumbers(nu_TO: float, nu_LO: float, gamma: float, eps_inf: float, *,
                              units: UnitSystem | None = None, ell: float | None = None,
                              name: str = "polar crystal") -> Material:
    """:func:`polar_crystal` with phonon frequencies and damping as wavenumbers in cm^-1.

    Infrared spectroscopy quotes ``nu = 1/lambda = omega/(2 pi c)``; so
    ``omega = 2 pi c * 100 nu`` rad/s and, normalized, ``omega = 2 pi ell * 100 nu``
    (``c`` cancels).  The damping ``gamma`` (cm^-1) converts the same way.

    Parameters
    ----------
    nu_TO, nu_LO : float
        TO and LO wavenumbers, cm^-1, ``0 < nu_TO < nu_LO``.
    gamma : float
        Damping, cm^-1, >= 0.
    eps_inf : float
        High-frequency permittivity.
    units, ell :
        Exactly one: a :class:`~fdtd.units.UnitSystem` or the reference length in metres.
    """
    ell = _ell_from(units, ell)
    to_norm = 2.0 * math.pi * 100.0 * ell       # cm^-1 -> m^-1 -> 2 pi ell nu
    return polar_crystal(_checks.positive("polar crystal nu_TO (cm^-1)", nu_TO) * to_norm,
                         _checks.positive("polar crystal nu_LO (cm^-1)", nu_LO) * to_norm,
                         _checks.non_negative("polar crystal gamma (cm^-1)", gamma) * to_norm,
                         eps_inf, name=name)


#: One-phonon parameters of silicon carbide, wavenumbers in cm^-1.
#: Source: the values commonly quoted for SiC in the infrared/near-field
#: literature (omega_TO = 797, omega_LO = 969, gamma = 4.76 cm^-1, eps_inf = 6.56),
#: from memory and NOT verified against a primary source here; they give
#: eps_0 = 6.56 (969/797)^2 = 9.70 by the LST relation.  The Reststrahlen
#: band they imply, 10.3-12.5 um, agrees with the 10-13 um SiC feature of
#: H. Mutschke et al., Astron. Astrophys. 345, 187 (1999) (abstract checked).
SIC_PHONON_CM: dict[str, float] = {"nu_TO": 797.0, "nu_LO": 969.0, "gamma": 4.76,
                                   "eps_inf": 6.56}


def silicon_carbide(*, units: UnitSystem | None = None, ell: float | None = None,
                    name: str = "SiC") -> Material:
    """Example: SiC in its Reststrahlen band (one phonon, :data:`SIC_PHONON_CM`).

    Valid only near the phonon band (roughly 8-20 um); free carriers of doped
    samples and the anisotropy of hexagonal polytypes are ignored.
    """
    p = SIC_PHONON_CM
    return polar_crystal_wavenumbers(p["nu_TO"], p["nu_LO"], p["gamma"], p["eps_inf"],
                                     units=units, ell=ell, name=name)


__all__ = [
    "from_sellmeier", "refractive_index_at_wavelength", "polar_crystal", "polar_crystal_ev",
    "polar_crystal_wavenumbers", "SIC_PHONON_CM", "silicon_carbide",
]
