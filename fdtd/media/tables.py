"""Tabulated optical constants: read ``n, k`` or ``eps', eps''`` tables into ``(omega, eps)``.

A table is a text file (CSV, semicolon, tab or whitespace separated) with a
header row that names each column and the unit of the abscissa, e.g.
``wavelength_um,n,k`` or ``energy (eV),eps1,eps2``.  The abscissa's unit is
read by pint (the package's shared registry, :mod:`fdtd._pint`), so any unit of
the right dimension is accepted: a length for a wavelength, a frequency, an
angular frequency, an energy (photon energy, omega = E/hbar) or an inverse
length (spectroscopic wavenumber, omega = 2 pi c nu).  The result is in the
package's normalized units (angular frequency in c/ell for a reference length
``ell`` in metres) and the ``exp(-i omega t)`` convention (``Im eps >= 0``
absorbs).  Fitting poles to a table is :mod:`fdtd.media.pole_fit`.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from pathlib import Path
from typing import NamedTuple

import numpy as np
import scipy.constants as sc

from fdtd import _checks
from fdtd.errors import ParameterError


class OpticalTable(NamedTuple):
    """Tabulated permittivity: ``omega`` (N,) normalized angular frequency (c/ell),
    ascending, and ``eps`` (N,) the complex permittivity there."""

    omega: np.ndarray
    eps: np.ndarray


#: abscissa kinds (the first word of the column name) -> (quantity, SI unit pint converts to,
#: examples of units for the messages)
_ABSCISSA: dict[str, tuple[str, str, str]] = {
    "wavelength": ("wavelength", "m", "um, nm, m, angstrom"),
    "lambda": ("wavelength", "m", "um, nm, m, angstrom"),
    "frequency": ("frequency", "Hz", "THz, GHz, Hz"),
    "freq": ("frequency", "Hz", "THz, GHz, Hz"),
    "omega": ("omega", "rad/s", "rad_s (rad/s)"),
    "energy": ("energy", "J", "eV, meV"),
    "wavenumber": ("wavenumber", "1/m", "cm-1 (1/cm), 1/m"),
    "nu": ("wavenumber", "1/m", "cm-1 (1/cm), 1/m"),
}

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


def _abscissa_name(col: str):
    """``(kind, unit text)`` of a column name like 'wavelength_um' or 'Energy (meV)', or None
    if it is not an abscissa.  The unit keeps its case (pint tells MHz from mHz)."""
    s = re.sub(r"\s+", "_", re.sub(r"[\(\)\[\]]", " ", col.strip()).strip())
    kind, _, unit = s.partition("_")
    if kind.lower() not in _ABSCISSA:
        return None
    return _ABSCISSA[kind.lower()][0], unit


def _pint_spelling(unit: str) -> str:
    """Header spellings that a column name allows but pint does not read: 'rad_s' and
    'rad_per_s' for rad/s, 'cm-1' for cm^-1."""
    u = unit.replace("_per_", "/").replace("_", "/")
    return re.sub(r"(?<=[A-Za-z\u00b5\u03bc])-(\d)", r"^-\1", u)


def _unit_factor(col: str, where: str) -> tuple[str, float]:
    """The abscissa kind of column ``col`` and the factor from its numbers to the kind's SI
    unit (m, Hz, rad/s, J or 1/m), read by pint."""
    import pint

    from fdtd._pint import UREG      # here: pint costs ~0.2 s at start-up

    kind, unit = _abscissa_name(col)
    target, examples = next((t, e) for k, t, e in _ABSCISSA.values() if k == kind)
    if not unit:
        raise ParameterError(f"{where}: column {col!r} has no unit: expected <kind>_<unit>, e.g. "
                             f"{kind}_{examples.split(',')[0]}")
    try:
        q = UREG.Quantity(1.0, _pint_spelling(unit))
    except Exception:
        raise ParameterError(f"{where}: unknown unit {unit!r} in column {col!r}: expected a "
                             f"{kind} unit, e.g. {examples}") from None
    try:
        return kind, float(q.to(target).magnitude)
    except pint.DimensionalityError:
        raise ParameterError(f"{where}: unit {unit!r} in column {col!r} is of dimension "
                             f"{q.dimensionality}: expected a {kind} unit, e.g. {examples}") from None


def _to_normalized_omega(kind: str, x: np.ndarray, ell: float) -> np.ndarray:
    """Normalized angular frequency (c/ell) from SI values x of the abscissa kind."""
    if kind == "wavelength":
        return 2.0 * np.pi * ell / x
    if kind == "frequency":
        return 2.0 * np.pi * x * ell / sc.c
    if kind == "omega":
        return x * ell / sc.c
    if kind == "energy":
        return x / sc.hbar * ell / sc.c
    if kind == "wavenumber":
        return 2.0 * np.pi * x * ell
    raise AssertionError(kind)  # pragma: no cover




def read_optical_table(path, ell: float, columns: Sequence[str] | None = None,
                       delimiter: str | None = None) -> OpticalTable:
    """Read a table of optical constants and convert it to ``(omega, eps)``.

    File format: optional ``#`` comment lines, then one header row naming the
    columns with their units, then one row of numbers per sample.  Columns:

    * abscissa ``<kind>_<unit>`` with kind ``wavelength`` (vacuum wavelength,
      e.g. ``wavelength_um``, ``wavelength_nm``, ``wavelength_angstrom``),
      ``frequency`` (``frequency_THz``), ``omega`` (angular frequency,
      ``omega_rad_s``), ``energy`` (photon energy, ``energy_eV``, ``energy_meV``)
      or ``wavenumber`` (``wavenumber_cm-1``, ``wavenumber_1/cm``); the unit is
      any unit of that dimension pint reads (case matters: ``MHz`` is not
      ``mHz``; ``A`` is the ampere, write ``angstrom``), also in brackets,
      ``wavelength (um)``;
    * ordinates, one pair: ``n, k`` (complex index ``n + i k``, ``k >= 0``
      absorbing) or ``eps1, eps2`` (also ``eps_re, eps_im``; ``eps = eps1 + i
      eps2``, ``eps2 >= 0`` absorbing).

    Column names are case-insensitive (their units are not).  The delimiter is guessed from the header
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
        an unknown unit or one of the wrong dimension, a missing column, a wrong number of fields, a
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
        absc = [i for i, n in enumerate(names) if _abscissa_name(n) is not None]
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

    if _abscissa_name(names[idx[0]]) is None:
        raise ParameterError(f"{where(header_no)}: column {names[idx[0]]!r} is not an abscissa: "
                             f"expected <kind>_<unit>, e.g. {_HEADER_EXAMPLES}")
    kind, factor = _unit_factor(names[idx[0]], where(header_no))
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


__all__ = ["OpticalTable", "read_optical_table"]
