r"""Material library: published dispersion formulas and tabulated data as Lorentz/Drude poles.

Everything here returns an ordinary :class:`fdtd.materials.Material`, so the
solver, the stability limit and the energy ledger need to know nothing about
where a pole came from.  Conventions are those of :mod:`fdtd.materials`: time
dependence ``exp(-i omega t)`` (a passive medium has ``Im eps >= 0`` for
``omega > 0``) and

.. math::  \varepsilon(\omega) = \varepsilon_\infty
           + \sum_j \frac{\Delta\varepsilon_j\,\Omega_j^2}{\Omega_j^2-\omega^2-i\gamma_j\omega}
           - \sum_k \frac{\omega_{p,k}^2}{\omega^2+i\gamma_k\omega}.

Angular frequencies are *normalized* (unit ``c/ell`` for a reference length
``ell`` in metres, see :mod:`fdtd.units`).  Every function that starts from
SI data (wavelengths, eV, cm^-1, Hz) therefore takes ``ell``.  Useful
identities (``c`` cancels in the first two):

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
* :func:`read_optical_table`, :func:`fit_poles`, :class:`PoleFit`,
  :func:`material_from_table` -- a passive least-squares pole fit of tabulated
  ``n, k`` or ``eps1, eps2`` data.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import NamedTuple

import numpy as np
import scipy.constants as sc

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.media.materials import DrudePole, LorentzPole, Material
from fdtd.units import UnitSystem

# Length of one wavelength unit in metres (the Sellmeier C_i are in unit^2).
_LENGTH_UNITS: dict[str, float] = {
    "m": 1.0, "cm": 1e-2, "mm": 1e-3, "um": 1e-6, "µm": 1e-6, "μm": 1e-6, "micron": 1e-6,
    "nm": 1e-9, "a": 1e-10, "angstrom": 1e-10,
}


def _length_unit(name: str, unit: str) -> float:
    key = str(unit).strip().lower()
    if key not in _LENGTH_UNITS:
        raise ParameterError(f"{name} = {unit!r} is not allowed: expected one of "
                             f"{sorted(set(_LENGTH_UNITS))}")
    return _LENGTH_UNITS[key]


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
# 1. Sellmeier formulas
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
        Unit of ``lambda`` in the formula: ``"m"``, ``"mm"``, ``"um"``, ``"nm"``, ...
    ell : float
        Reference length of the normalized units, metres.
    name : str
        Material label.
    fold_above : float, optional
        Normalized angular frequency.  Poles with ``Omega_i > fold_above`` are
        replaced by their low-frequency value ``B_i`` added to ``eps_inf``.
        Why: an ultraviolet resonance far above the band of a run still sets
        the explicit-ADE stability limit ``Omega dt < 2`` (see
        :mod:`fdtd.stability`); folding it costs a relative error of about
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
    unit_m = _length_unit("wavelength_unit", wavelength_unit)
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
# 2. Polar crystals (one optical phonon)
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


# ---------------------------------------------------------------------------
# 3a. Tabulated optical constants
# ---------------------------------------------------------------------------

class OpticalTable(NamedTuple):
    """Tabulated permittivity: normalized angular frequency (ascending) and complex eps."""

    omega: np.ndarray
    eps: np.ndarray


# Abscissa kinds -> {unit: factor}.  The factor turns the number in the file
# into the SI quantity the converter expects (metres, Hz, rad/s, eV, 1/m).
_ABSCISSA: dict[str, tuple[str, dict[str, float]]] = {}
_FREQ_UNITS = {"hz": 1.0, "khz": 1e3, "mhz": 1e6, "ghz": 1e9, "thz": 1e12, "phz": 1e15}
_OMEGA_UNITS = {"rad_s": 1.0, "rad/s": 1.0, "rad_per_s": 1.0}
_ENERGY_UNITS = {"ev": 1.0, "mev": 1e-3}
_WAVENUMBER_UNITS = {"cm-1": 100.0, "cm^-1": 100.0, "1/cm": 100.0, "m-1": 1.0, "1/m": 1.0}
for _k in ("wavelength", "lambda"):
    _ABSCISSA[_k] = ("wavelength", _LENGTH_UNITS)
for _k in ("frequency", "freq"):
    _ABSCISSA[_k] = ("frequency", _FREQ_UNITS)
_ABSCISSA["omega"] = ("omega", _OMEGA_UNITS)
_ABSCISSA["energy"] = ("energy", _ENERGY_UNITS)
for _k in ("wavenumber", "nu"):
    _ABSCISSA[_k] = ("wavenumber", _WAVENUMBER_UNITS)

# Ordinate pairs (first, second) -> representation.
_PAIRS: dict[tuple[str, str], str] = {
    ("n", "k"): "nk",
    ("eps1", "eps2"): "eps", ("eps_re", "eps_im"): "eps", ("e1", "e2"): "eps",
    ("epsilon1", "epsilon2"): "eps", ("re_eps", "im_eps"): "eps", ("eps'", "eps''"): "eps",
}

_HEADER_EXAMPLES = ("'wavelength_um,n,k', 'energy_eV,eps1,eps2', 'omega_rad_s,eps_re,eps_im', "
                    "'frequency_THz,n,k' or 'wavenumber_cm-1,eps1,eps2'")


def _norm_name(col: str) -> str:
    s = re.sub(r"[\(\)\[\]]", " ", col.strip().lower()).strip()
    return re.sub(r"\s+", "_", s)


def _is_number(s: str) -> bool:
    try:
        float(s)
    except ValueError:
        return False
    return True


def _parse_abscissa(col: str):
    """``(kind, factor)`` for a column name like 'wavelength_um', or None if not an abscissa."""
    s = _norm_name(col)
    kind, _, unit = s.partition("_")
    if kind not in _ABSCISSA:
        return None
    canonical, units = _ABSCISSA[kind]
    return canonical, unit, units


def _to_normalized_omega(kind: str, x: np.ndarray, ell: float) -> np.ndarray:
    if kind == "wavelength":
        return 2.0 * np.pi * ell / x
    if kind == "frequency":
        return 2.0 * np.pi * x * ell / sc.c
    if kind == "omega":
        return x * ell / sc.c
    if kind == "energy":
        return x * sc.e / sc.hbar * ell / sc.c
    if kind == "wavenumber":
        return 2.0 * np.pi * x * ell
    raise AssertionError(kind)  # pragma: no cover


def read_optical_table(path, ell: float, columns: Sequence[str] | None = None,
                       delimiter: str | None = None) -> OpticalTable:
    """Read a table of optical constants and convert it to ``(omega, eps)``.

    File format: optional ``#`` comment lines, then one header row naming the
    columns with their units, then one row of numbers per sample.  Columns:

    * abscissa ``<kind>_<unit>``: ``wavelength_{m,mm,um,nm,A}`` (vacuum
      wavelength), ``frequency_{Hz,kHz,MHz,GHz,THz,PHz}``, ``omega_rad_s``,
      ``energy_{eV,meV}``, ``wavenumber_{cm-1,m-1}``; units may also be written
      in brackets, ``wavelength (um)``;
    * ordinates, one pair: ``n, k`` (complex index ``n + i k``, ``k >= 0``
      absorbing) or ``eps1, eps2`` (also ``eps_re, eps_im``; ``eps = eps1 + i
      eps2``, ``eps2 >= 0`` absorbing).

    Names are case-insensitive.  The delimiter is guessed from the header
    (comma, semicolon, tab, else whitespace) unless given.

    Parameters
    ----------
    path : str or Path
        The CSV file.
    ell : float
        Reference length of the normalized units, metres.
    columns : sequence of 3 str, optional
        ``(abscissa, first, second)`` header names to use, for files with more
        columns; by default the file must have one abscissa column and one
        ordinate pair.
    delimiter : str, optional
        Field separator.

    Returns
    -------
    OpticalTable
        ``(omega, eps)``: normalized angular frequencies sorted ascending and
        the complex permittivity (``exp(-i omega t)``, passive ``Im eps >= 0``).

    Raises
    ------
    ParameterError
        For a missing file, a header without a known abscissa or ordinate pair,
        an unknown unit, a missing column, a wrong number of fields, a
        non-numeric or non-finite value, a non-positive abscissa, or a table
        whose imaginary parts are mostly negative (the ``exp(+i omega t)``
        sign convention).  The message names the file, the line and what was
        expected.
    """
    ell = _checks.positive("ell (reference length, metres)", ell)
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8-sig")   # utf-8-sig: spreadsheet BOMs
    except OSError as exc:
        raise ParameterError(f"optical table {str(p)!r} cannot be read: {exc.strerror or exc}"
                             ) from None
    lines = text.splitlines()

    def where(lineno: int) -> str:
        return f"optical table {str(p)!r}, line {lineno}"

    header_no = None
    for i, raw in enumerate(lines, start=1):
        s = raw.strip()
        if s and not s.startswith("#"):
            header_no = i
            break
    if header_no is None:
        raise ParameterError(f"optical table {str(p)!r} is empty: expected a header row such as "
                             f"{_HEADER_EXAMPLES} followed by rows of numbers")
    header = lines[header_no - 1].strip()
    if delimiter is None:
        delimiter = next((d for d in (",", ";", "\t") if d in header), None)

    def split(s: str) -> list[str]:
        return [t.strip() for t in (s.split(delimiter) if delimiter else s.split())]

    names = split(header)
    keys = [_norm_name(n) for n in names]
    if all(_is_number(n) for n in names):
        raise ParameterError(f"{where(header_no)}: {header!r} looks like numbers: expected a "
                             f"header row naming the columns, e.g. {_HEADER_EXAMPLES}")

    # --- choose the three columns ---------------------------------------------
    if columns is not None:
        if isinstance(columns, str) or len(columns) != 3:
            raise ParameterError(f"columns = {columns!r} is not allowed: expected three header "
                                 "names (abscissa, first, second), e.g. ('wavelength_um', 'n', 'k')")
        idx = []
        for c in columns:
            k = _norm_name(c)
            if k not in keys:
                raise ParameterError(f"{where(header_no)}: missing column {c!r}: the header has "
                                     f"{names}")
            idx.append(keys.index(k))
    else:
        absc = [i for i, n in enumerate(names) if _parse_abscissa(n) is not None]
        pairs = [(keys.index(a), keys.index(b)) for (a, b) in _PAIRS
                 if a in keys and b in keys]
        if len(absc) != 1:
            known = sorted({_ABSCISSA[k][0] for k in _ABSCISSA})
            what = "no" if not absc else "more than one"
            raise ParameterError(
                f"{where(header_no)}: header {names} has {what} abscissa column: expected exactly "
                f"one named <kind>_<unit> with kind in {known} (e.g. {_HEADER_EXAMPLES}), "
                "or pass columns=")
        if len(pairs) != 1:
            have = [k for k in keys if k not in (keys[absc[0]],)]
            missing = ""
            for a, b in _PAIRS:
                if (a in keys) != (b in keys):
                    missing = f" (missing column {b if a in keys else a!r})"
                    break
            raise ParameterError(
                f"{where(header_no)}: header columns {have} are not one ordinate pair{missing}: "
                f"expected 'n,k' or 'eps1,eps2' (also 'eps_re,eps_im'), or pass columns=")
        idx = [absc[0], *pairs[0]]

    a_parsed = _parse_abscissa(names[idx[0]])
    if a_parsed is None:
        raise ParameterError(f"{where(header_no)}: column {names[idx[0]]!r} is not an abscissa: "
                             f"expected <kind>_<unit>, e.g. {_HEADER_EXAMPLES}")
    kind, unit, unit_table = a_parsed
    if unit not in unit_table:
        raise ParameterError(f"{where(header_no)}: unknown unit {unit!r} in column "
                             f"{names[idx[0]]!r}: expected one of {sorted(unit_table)} for {kind}")
    factor = unit_table[unit]
    pair = (keys[idx[1]], keys[idx[2]])
    if pair not in _PAIRS:
        raise ParameterError(f"{where(header_no)}: columns {names[idx[1]]!r}, {names[idx[2]]!r} "
                             "are not an ordinate pair: expected ('n', 'k') or ('eps1', 'eps2') "
                             "(also 'eps_re', 'eps_im')")
    rep = _PAIRS[pair]

    # --- the numbers ----------------------------------------------------------
    rows: list[tuple[float, float, float]] = []
    for lineno in range(header_no + 1, len(lines) + 1):
        s = lines[lineno - 1].strip()
        if not s or s.startswith("#"):
            continue
        fields = split(s)
        if len(fields) != len(names):
            raise ParameterError(f"{where(lineno)}: {len(fields)} fields: expected "
                                 f"{len(names)} (one per header column {names})")
        vals = []
        for j in idx:
            try:
                v = float(fields[j])
            except ValueError:
                raise ParameterError(f"{where(lineno)}: column {names[j]!r} = {fields[j]!r} is "
                                     "not a number: expected a finite real number") from None
            if not math.isfinite(v):
                raise ParameterError(f"{where(lineno)}: column {names[j]!r} = {fields[j]!r}: "
                                     "expected a finite real number")
            vals.append(v)
        if vals[0] <= 0.0:
            raise ParameterError(f"{where(lineno)}: column {names[idx[0]]!r} = {fields[idx[0]]!r}"
                                 f": expected a {kind} > 0")
        rows.append((vals[0], vals[1], vals[2]))
    if not rows:
        raise ParameterError(f"{where(header_no)}: header but no data rows: expected at least "
                             "one row of numbers after the header")
    data = np.array(rows)
    omega = _to_normalized_omega(kind, data[:, 0] * factor, ell)
    if rep == "nk":
        eps = (data[:, 1] + 1j * data[:, 2]) ** 2
    else:
        eps = data[:, 1] + 1j * data[:, 2]
    # A table in the exp(+i omega t) convention written as eps' + i eps'' with
    # eps'' < 0 would be fitted as a gain medium; refuse it rather than guess.
    lossy = np.abs(eps.imag) > 1e-12 * np.abs(eps)
    if np.count_nonzero(eps.imag[lossy] < 0) > 0.5 * max(np.count_nonzero(lossy), 1):
        raise ParameterError(
            f"optical table {str(p)!r}: most imaginary parts ({names[idx[2]]!r}) are negative: "
            "expected k >= 0 / eps2 >= 0 for an absorbing medium (convention exp(-i omega t)); "
            "flip the sign of a table written for exp(+i omega t)")
    order = np.argsort(omega, kind="stable")
    return OpticalTable(omega[order], eps[order])


# ---------------------------------------------------------------------------
# 3b. Passive pole fit
# ---------------------------------------------------------------------------

@dataclass
class PoleFit:
    """Result of :func:`fit_poles`.

    Attributes
    ----------
    material : Material
        The fitted medium (passive by construction).
    eps_inf : float
        Fitted (or fixed) high-frequency permittivity.
    lorentz : tuple of (delta_eps, omega0, gamma)
        Lorentz poles, normalized frequencies, sorted by ``omega0``.
    drude : tuple of (omega_p, gamma)
        Drude poles, normalized frequencies, sorted by ``omega_p``.
    omega, eps_data : ndarray
        The data that were fitted.
    eps_fit : ndarray
        The fitted permittivity at ``omega``.
    point_errors : ndarray
        Per point ``|eps_fit - eps_data| / s``, with the scale
        ``s = sqrt(|eps_data|^2 + floor^2)`` (``floor = 1e-3 max|eps_data|``, so
        that a zero crossing of eps does not blow up the relative error).
    residual : float
        Root mean square of ``point_errors`` (unweighted).
    max_error : float
        Largest entry of ``point_errors``.
    active_bounds : tuple of str
        Parameters that ended on a passivity bound (e.g. ``"lorentz[1].gamma"``
        at 0, ``"eps_inf"`` at ``eps_inf_min``): the data asked for a value
        the passive model cannot take, or the pole is not needed.
    n_starts : int
        Number of starting points that were run.
    success : bool
        Whether the optimiser reported convergence for the best start.
    message : str
        Optimiser message for the best start.
    """

    material: Material
    eps_inf: float
    lorentz: tuple[tuple[float, float, float], ...]
    drude: tuple[tuple[float, float], ...]
    omega: np.ndarray
    eps_data: np.ndarray
    eps_fit: np.ndarray
    point_errors: np.ndarray
    residual: float
    max_error: float
    active_bounds: tuple[str, ...] = ()
    n_starts: int = 0
    success: bool = True
    message: str = ""
    eps_inf_fitted: bool = field(default=True, repr=False)

    @property
    def parameters(self) -> dict:
        """The fitted parameters as a plain dict (normalized frequencies)."""
        return {"eps_inf": self.eps_inf,
                "lorentz": [dict(delta_eps=d, omega0=w, gamma=g) for d, w, g in self.lorentz],
                "drude": [dict(omega_p=w, gamma=g) for w, g in self.drude]}

    def summary(self) -> str:
        """A few lines describing the fit (for logs and reports)."""
        out = [f"pole fit of {self.omega.size} points: rms relative error {self.residual:.3g}, "
               f"max {self.max_error:.3g}",
               f"  eps_inf = {self.eps_inf:.6g}" + ("" if self.eps_inf_fitted else " (fixed)")]
        out += [f"  Lorentz: delta_eps = {d:.6g}, omega0 = {w:.6g}, gamma = {g:.6g}"
                for d, w, g in self.lorentz]
        out += [f"  Drude: omega_p = {w:.6g}, gamma = {g:.6g}" for w, g in self.drude]
        if self.active_bounds:
            out.append(f"  on passivity bounds: {', '.join(self.active_bounds)}")
        return "\n".join(out)

    def plot(self, path, title: str | None = None) -> Path:
        """Write a figure of data vs fit (Re eps, Im eps) and the relative error.

        The format follows the file extension (``.png``, ``.pdf``, ...).  Uses the
        Agg canvas directly, so no display and no change of the pyplot backend.
        """
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        path = Path(path)
        fig = Figure(figsize=(6.0, 7.0), layout="constrained")
        FigureCanvasAgg(fig)
        ax_re, ax_im, ax_err = fig.subplots(3, 1, sharex=True)
        w = self.omega
        wd = np.linspace(w.min(), w.max(), max(400, 4 * w.size))
        ef = np.asarray(self.material.permittivity(wd))
        ax_re.plot(w, self.eps_data.real, "o", ms=3, label="data")
        ax_re.plot(wd, ef.real, "-", label="fit")
        ax_re.set_ylabel(r"Re $\varepsilon$")
        ax_re.legend()
        ax_im.plot(w, self.eps_data.imag, "o", ms=3)
        ax_im.plot(wd, ef.imag, "-")
        ax_im.set_ylabel(r"Im $\varepsilon$")
        err = np.maximum(self.point_errors, 1e-17)     # log axis: keep exact zeros visible
        ax_err.semilogy(w, err, ".-")
        ax_err.set_ylabel("relative error")
        ax_err.set_xlabel(r"$\omega$ [c/$\ell$]")
        fig.suptitle(title or f"{self.material.name}: rms {self.residual:.2g}, "
                              f"max {self.max_error:.2g}")
        fig.savefig(path)
        return path


class _Model:
    """Pole model on scaled frequencies ``x = omega / s`` (``s = max omega``).

    Why scaled: the optimiser then sees resonances and rates of order one
    whatever ``ell`` is, and the default tolerances mean the same thing for
    every table.  Parameter vector: ``[eps_inf?] + [d_j, u_j, g_j] * n_l +
    [p_k, h_k] * n_d`` with ``u = Omega/s``, ``g = gamma/s``, ``p = omega_p/s``,
    ``h = gamma_D/s``.  All entries are bounded below (passivity).
    """

    def __init__(self, x, n_l, n_d, fit_einf):
        self.x = x
        self.n_l, self.n_d, self.fit_einf = n_l, n_d, fit_einf
        self.off = 1 if fit_einf else 0
        self.n_par = self.off + 3 * n_l + 2 * n_d

    def eval(self, q, eps_fixed):
        x = self.x
        eps = np.full(x.shape, q[0] if self.fit_einf else eps_fixed, dtype=complex)
        J = np.zeros((x.size, self.n_par), dtype=complex)
        if self.fit_einf:
            J[:, 0] = 1.0
        o = self.off
        for j in range(self.n_l):
            d, u, g = q[o + 3 * j: o + 3 * j + 3]
            D = u * u - x * x - 1j * g * x
            eps += d * u * u / D
            J[:, o + 3 * j] = u * u / D
            J[:, o + 3 * j + 1] = 2.0 * d * u * (-x * x - 1j * g * x) / (D * D)
            J[:, o + 3 * j + 2] = 1j * d * u * u * x / (D * D)
        o += 3 * self.n_l
        for k in range(self.n_d):
            p, h = q[o + 2 * k: o + 2 * k + 2]
            D = x * x + 1j * h * x
            eps -= p * p / D
            J[:, o + 2 * k] = -2.0 * p / D
            J[:, o + 2 * k + 1] = 1j * p * p * x / (D * D)
        return eps, J


def _peak_guesses(x, im):
    """Positions and FWHM (scaled units) of peaks of Im eps, most prominent first."""
    from scipy.signal import find_peaks, peak_widths

    if x.size < 3 or not np.any(im > 0):
        return []
    idx, props = find_peaks(im, prominence=0.02 * float(np.max(im)))
    if idx.size == 0:
        return []
    order = np.argsort(props["prominences"])[::-1]
    idx = idx[order]
    widths, _, left, right = peak_widths(im, idx, rel_height=0.5)
    grid = np.arange(x.size)
    out = []
    for i, lo, hi in zip(idx, left, right, strict=True):
        fwhm = float(np.interp(hi, grid, x) - np.interp(lo, grid, x))
        out.append((float(x[i]), max(fwhm, 1e-3 * float(x[i]))))
    return out


def fit_poles(omega, eps_values, n_lorentz: int = 1, n_drude: int = 0,
              eps_inf: float | None = None, weights=None, *, eps_inf_min: float = 1.0,
              imag_weight: float = 1.0, n_starts: int = 8, seed: int = 0,
              name: str = "fitted") -> PoleFit:
    r"""Passive least-squares fit of tabulated permittivity by Lorentz and Drude poles.

    Minimises ``sum_k w_k^2 [ (Re Δ_k)^2 + imag_weight^2 (Im Δ_k)^2 ] / s_k^2``
    with ``Δ_k = eps_model(omega_k) - eps_k`` and the scale
    ``s_k = sqrt(|eps_k|^2 + floor^2)``, ``floor = 1e-3 max |eps|`` (a relative
    error that stays finite where eps crosses zero, e.g. at a polar crystal's
    LO frequency).  Passivity is enforced by bounds, not penalties:
    ``delta_eps >= 0``, ``Omega > 0``, ``gamma >= 0``, ``omega_p > 0``,
    ``eps_inf >= eps_inf_min`` -- so every returned parameter set gives
    ``Im eps >= 0`` for ``omega > 0`` and is accepted by
    :class:`~fdtd.materials.LorentzPole` / :class:`~fdtd.materials.DrudePole`.

    Method: bounded trust-region least squares (``scipy.optimize.least_squares``,
    ``method="trf"``, analytic Jacobian) on frequencies scaled by ``max omega``,
    from several starts.  In each start the resonances and rates are placed
    first -- at the most prominent peaks of ``Im eps`` (rate = peak FWHM),
    then spread over the band, then at seeded random positions -- and the
    parameters that enter linearly (``eps_inf``, ``delta_eps Omega^2``,
    ``omega_p^2``) are set by bounded linear least squares before the full
    nonlinear fit.  The best start wins.

    Parameters
    ----------
    omega : array
        Normalized angular frequencies, > 0 (a Drude pole is singular at 0).
    eps_values : array of complex
        Permittivity at ``omega`` (convention ``exp(-i omega t)``).
    n_lorentz, n_drude : int
        Numbers of poles (>= 0, at least one pole in total).
    eps_inf : float, optional
        Fix eps_inf (> 0) instead of fitting it.
    weights : array, optional
        Per-point weights (>= 0); default 1.
    eps_inf_min : float
        Lower bound of a fitted eps_inf (default 1: the vacuum value that a
        complete set of resonances tends to; lower it, > 0, for a table whose
        band is followed by resonances that the fit does not include).
    imag_weight : float
        Weight of the imaginary part relative to the real part (> 0).
    n_starts : int
        Maximum number of starting points (>= 1); stops early on an exact fit.
    seed : int
        Seed of the random starts (the fit is reproducible).
    name : str
        Name of the returned material.

    Returns
    -------
    PoleFit
    """
    from scipy.optimize import least_squares, lsq_linear

    w = np.atleast_1d(np.asarray(omega, dtype=float))
    e = np.atleast_1d(np.asarray(eps_values, dtype=complex))
    if w.ndim != 1 or e.shape != w.shape:
        raise ParameterError(f"omega has shape {w.shape} and eps_values {e.shape}: expected two "
                             "1D arrays of the same length")
    _checks.finite_array("omega", w)
    if not np.all(np.isfinite(e)):
        raise ParameterError("eps_values contains non-finite entries: expected finite numbers")
    if np.any(w <= 0):
        raise ParameterError(f"omega has {np.count_nonzero(w <= 0)} entries <= 0 (smallest "
                             f"{w.min()!r}): expected angular frequencies > 0")
    n_l = _checks.positive_int("n_lorentz", n_lorentz, minimum=0)
    n_d = _checks.positive_int("n_drude", n_drude, minimum=0)
    if n_l + n_d == 0:
        raise ParameterError("n_lorentz = 0 and n_drude = 0: expected at least one pole")
    n_starts = _checks.positive_int("n_starts", n_starts)
    imag_weight = _checks.positive("imag_weight", imag_weight)
    fit_einf = eps_inf is None
    if fit_einf:
        eps_inf_min = _checks.positive("eps_inf_min", eps_inf_min)
        eps_fixed = 0.0
    else:
        eps_fixed = _checks.positive("eps_inf", eps_inf)
    if weights is None:
        wt = np.ones_like(w)
    else:
        wt = np.atleast_1d(np.asarray(weights, dtype=float))
        if wt.shape != w.shape:
            raise ParameterError(f"weights has shape {wt.shape}: expected {w.shape} (one per point)")
        _checks.finite_array("weights", wt)
        if np.any(wt < 0) or not np.any(wt > 0):
            raise ParameterError("weights: expected numbers >= 0, at least one > 0")

    order = np.argsort(w, kind="stable")
    w, e, wt = w[order], e[order], wt[order]
    model = _Model(w / w.max(), n_l, n_d, fit_einf)
    n_par = model.n_par
    if 2 * np.count_nonzero(wt > 0) < n_par:
        raise ParameterError(f"{w.size} points (with weight > 0) give {2 * w.size} real data for "
                             f"{n_par} parameters: expected at least as many data as parameters")
    s = w.max()
    x = model.x
    floor = 1e-3 * float(np.max(np.abs(e)))
    scale = np.sqrt(np.abs(e) ** 2 + floor**2)
    rw = wt / scale                          # row weights of the real part
    iw = imag_weight * rw                    # ... and of the imaginary part

    def resid(q):
        m, _ = model.eval(q, eps_fixed)
        d = m - e
        return np.concatenate([rw * d.real, iw * d.imag])

    def jac(q):
        _, J = model.eval(q, eps_fixed)
        return np.vstack([rw[:, None] * J.real, iw[:, None] * J.imag])

    # Bounds.  Omega and omega_p must be strictly positive for the pole classes;
    # 1e-9 of the top frequency is "zero" for any practical purpose.  The upper
    # bound on Omega stops a pole from running to infinity when the data only
    # need a constant (it then behaves as eps_inf; see active_bounds).
    tiny = 1e-9
    lb, ub, names = [], [], []
    if fit_einf:
        lb.append(eps_inf_min)
        ub.append(np.inf)
        names.append("eps_inf")
    for j in range(n_l):
        lb += [0.0, tiny, 0.0]
        ub += [np.inf, 1e4, np.inf]
        names += [f"lorentz[{j}].delta_eps", f"lorentz[{j}].omega0", f"lorentz[{j}].gamma"]
    for k in range(n_d):
        lb += [tiny, 0.0]
        ub += [np.inf, np.inf]
        names += [f"drude[{k}].omega_p", f"drude[{k}].gamma"]
    lb, ub = np.array(lb), np.array(ub)

    # ---- starting points for the nonlinear parameters ------------------------
    rng = np.random.default_rng(seed)
    x_lo, x_hi = float(x[0]), float(x[-1])
    peaks = _peak_guesses(x, e.imag)
    # Drude rate from the lowest-frequency point: for a Drude-dominated
    # response Im eps / (eps_inf - Re eps) ~ gamma / omega.
    h0 = float(np.clip(x_lo * max(e.imag[0], 0.0) / max(1.0 - e.real[0], 1e-12), 1e-4, 10.0))

    def spread(n, lo, hi):
        if n == 0:
            return np.zeros(0)
        if hi <= lo * 1.0001:
            return np.full(n, lo)
        return np.geomspace(lo, hi, n + 2)[1:-1]

    starts = []
    for gfac in (1.0, 0.3, 3.0):
        us, gs = [], []
        for u, fwhm in peaks[:n_l]:
            us.append(u)
            gs.append(gfac * fwhm)
        rest = spread(n_l - len(us), x_lo, x_hi)
        us += list(rest)
        gs += list(gfac * 0.1 * rest)
        starts.append((np.array(us), np.array(gs), np.full(n_d, h0 * gfac)))
    starts.append((spread(n_l, x_lo, x_hi), 0.1 * spread(n_l, x_lo, x_hi),
                   np.full(n_d, 0.1 * x_lo)))
    starts.append((spread(n_l, x_lo / 2, min(2 * x_hi, 1e3)),
                   0.3 * spread(n_l, x_lo / 2, min(2 * x_hi, 1e3)), np.full(n_d, x_lo)))
    while len(starts) < n_starts:
        us = np.exp(rng.uniform(np.log(x_lo / 3), np.log(3 * x_hi), n_l))
        gs = us * np.exp(rng.uniform(np.log(0.01), np.log(1.0), n_l))
        hs = np.exp(rng.uniform(np.log(1e-3), np.log(1.0), n_d))
        starts.append((np.sort(us), gs, hs))
    starts = starts[:n_starts]

    def linear_start(us, gs, hs):
        """Best linear parameters (eps_inf, b_j = d_j u_j^2, p_k^2) for fixed u, g, h."""
        cols, lo = [], []
        if fit_einf:
            cols.append(np.ones_like(x, dtype=complex))
            lo.append(eps_inf_min)
        for u, g in zip(us, gs, strict=True):
            cols.append(1.0 / (u * u - x * x - 1j * g * x))
            lo.append(0.0)
        for h in hs:
            cols.append(-1.0 / (x * x + 1j * h * x))
            lo.append(tiny**2)
        A = np.array(cols).T
        rhs = e - (0.0 if fit_einf else eps_fixed)
        M = np.vstack([rw[:, None] * A.real, iw[:, None] * A.imag])
        r = np.concatenate([rw * rhs.real, iw * rhs.imag])
        sol = lsq_linear(M, r, bounds=(np.array(lo), np.full(len(lo), np.inf)), method="bvls")
        c = sol.x
        q = []
        i = 0
        if fit_einf:
            q.append(c[0])
            i = 1
        for u, g in zip(us, gs, strict=True):
            q += [c[i] / (u * u), u, g]
            i += 1
        for h in hs:
            q += [math.sqrt(max(c[i], tiny**2)), h]
            i += 1
        return np.clip(np.array(q, dtype=float), lb, ub)

    best = None
    n_run = 0
    for us, gs, hs in starts:
        n_run += 1
        q0 = linear_start(np.clip(us, tiny, 1e4), np.maximum(gs, 0.0), np.maximum(hs, 0.0))
        sol = least_squares(resid, q0, jac=jac, bounds=(lb, ub), method="trf", x_scale="jac",
                            xtol=1e-14, ftol=1e-14, gtol=1e-14, max_nfev=200 * (n_par + 1))
        if best is None or sol.cost < best.cost:
            best = sol
        # An exact fit cannot be improved; stop rather than spend the other starts.
        if math.sqrt(2.0 * best.cost / w.size) < 1e-11:
            break

    q = best.x
    eps_hat = q[0] if fit_einf else eps_fixed
    o = model.off
    lor = sorted(((float(q[o + 3 * j]), float(q[o + 3 * j + 1] * s), float(q[o + 3 * j + 2] * s))
                  for j in range(n_l)), key=lambda t: t[1])
    o += 3 * n_l
    dru = sorted(((float(q[o + 2 * k] * s), float(q[o + 2 * k + 1] * s)) for k in range(n_d)),
                 key=lambda t: t[0])
    poles = tuple([LorentzPole(d, w0, g) for d, w0, g in lor]
                  + [DrudePole(wp, g) for wp, g in dru])
    material = Material(float(eps_hat), poles, name)
    fit = np.asarray(material.permittivity(w), dtype=complex)
    errs = np.abs(fit - e) / scale
    at_bound = tuple(n for n, v, lo_, hi_ in zip(names, q, lb, ub, strict=True)
                     if v <= lo_ * (1 + 1e-9) + 1e-15 or v >= hi_ * (1 - 1e-9))
    return PoleFit(material=material, eps_inf=float(eps_hat), lorentz=tuple(lor),
                   drude=tuple(dru), omega=w, eps_data=e, eps_fit=fit, point_errors=errs,
                   residual=float(np.sqrt(np.mean(errs**2))), max_error=float(errs.max()),
                   active_bounds=at_bound, n_starts=n_run, success=bool(best.status > 0),
                   message=str(best.message), eps_inf_fitted=fit_einf)


def material_from_table(path, ell: float, n_lorentz: int = 1, n_drude: int = 0, *,
                        columns: Sequence[str] | None = None, name: str | None = None,
                        max_error: float | None = None, **fit_options) -> PoleFit:
    """Read a table (:func:`read_optical_table`) and fit poles to it (:func:`fit_poles`).

    Returns the :class:`PoleFit` (its ``.material`` is the medium) so that the
    quality of the fit is always at hand.

    Parameters
    ----------
    path, ell, columns :
        As for :func:`read_optical_table` (``ell`` in metres).
    n_lorentz, n_drude :
        Numbers of poles.
    name : str, optional
        Material name; default the file stem.
    max_error : float, optional
        Refuse (ParameterError) a fit whose largest relative error exceeds this.
    **fit_options :
        Passed to :func:`fit_poles` (``eps_inf``, ``weights``, ``eps_inf_min``, ...).
    """
    table = read_optical_table(path, ell, columns=columns)
    fit = fit_poles(table.omega, table.eps, n_lorentz, n_drude,
                    name=name or Path(path).stem, **fit_options)
    if max_error is not None:
        max_error = _checks.positive("max_error", max_error)
        if fit.max_error > max_error:
            raise ParameterError(
                f"pole fit of {str(path)!r} with {n_lorentz} Lorentz and {n_drude} Drude poles has "
                f"max relative error {fit.max_error:.3g}: expected <= max_error = {max_error!r} "
                "(try more poles, a narrower band, or eps_inf_min < 1)")
    return fit


__all__ = [
    "from_sellmeier", "refractive_index_at_wavelength", "polar_crystal", "polar_crystal_ev",
    "polar_crystal_wavenumbers", "SIC_PHONON_CM", "silicon_carbide", "OpticalTable",
    "read_optical_table", "PoleFit", "fit_poles", "material_from_table",
]
