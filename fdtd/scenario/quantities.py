r"""Physical quantities in scenario files: strings with units, parsed by pint.

Every value of a dimensional key may be

* a string with units, e.g. ``"40 nm"``, ``"0.35 c"``, ``"2.1 eV"`` (a photon
  energy for a frequency: omega = E / hbar), ``"508 THz"`` (an ordinary
  frequency: omega = 2 pi f), ``"3e-3 eV"`` for a damping rate (gamma = E/hbar),
  ``"797 1/cm"`` (a spectroscopic wavenumber: omega = 2 pi c nu);
* a plain number, read in the documented SI unit of the kind (metres,
  seconds, rad/s for angular frequencies and rates), except speeds, where a
  plain number is the fraction of c (beta), and dimensionless quantities;
* in natural-unit mode (``[units] mode = "natural"``) a plain number is in
  units of the reference: lengths in c/omega_ref, times in 1/omega_ref,
  frequencies and rates in omega_ref.

:func:`parse` returns SI values (floats), speeds as beta = v/c; the scenario
layer converts them to the solver's normalized units.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import pint
import scipy.constants as sc

from fdtd._pint import UREG as _UREG      # the package's shared registry ("periods" defined there)
from fdtd.errors import ParameterError

KINDS = ("length", "time", "angular_frequency", "rate", "speed", "dimensionless", "charge_per_length",
         "dipole_per_length")


#: longest string read as a quantity ("2.1 eV" needs a few characters; a longer one is a mistake)
MAX_TEXT = 80
#: chained or parenthesised powers, or an exponent of three digits or more: the unit parser would
#: evaluate them as exact integers (9**9**9 does not finish)
_RUNAWAY_POWER = re.compile(r"(\*\*|\^)\s*[-+]?\s*(\d{3,}|\(|\d+(\.\d*)?\s*(\*\*|\^))|\)\s*(\*\*|\^)")


class ScenarioError(ParameterError):
    """A scenario value is wrong; the message names the file, the key path and the value."""


@dataclass(frozen=True)
class Natural:
    """Natural-unit mode: reference angular frequency (rad/s)."""

    omega_ref: float

    @property
    def length(self) -> float:
        return sc.c / self.omega_ref


def _article(kind: str) -> str:
    return "an" if kind[:1] in "aeiou" else "a"


def _err(where: str, key: str, value, expected: str) -> ScenarioError:
    return ScenarioError(f"{where}: {key} = {value!r}: expected {expected}")


def parse(value, kind: str, key: str = "?", where: str = "scenario", natural: Natural | None = None) -> float:
    """Return the SI value of ``value`` (see module doc) for a quantity of ``kind``."""
    if kind not in KINDS:
        raise ValueError(f"unknown quantity kind {kind!r}")
    if isinstance(value, bool):
        raise _err(where, key, value, f"{_article(kind)} {kind.replace('_', ' ')} (a number or a string with units)")
    if isinstance(value, (int, float)):
        try:
            x = float(value)
        except OverflowError:
            x = math.inf
        if not math.isfinite(x):
            raise _err(where, key, value, "a finite number")
        if natural is not None:
            x = x * {"length": natural.length, "time": 1 / natural.omega_ref,
                     "angular_frequency": natural.omega_ref, "rate": natural.omega_ref}.get(kind, 1.0)
            if not math.isfinite(x):
                raise _err(where, key, value, f"a finite {kind.replace('_', ' ')} (it overflows in SI units)")
        return x          # SI, or beta for a speed
    if not isinstance(value, str):
        raise _err(where, key, value, f"{_article(kind)} {kind.replace('_', ' ')} (a number or a string with units)")
    expected = f"{_article(kind)} {kind.replace('_', ' ')} with units, e.g. " + _EXAMPLES[kind]
    if len(value) > MAX_TEXT or _RUNAWAY_POWER.search(value):
        # the unit parser evaluates arithmetic: 9**9**9 would compute for ever
        raise _err(where, key, value, expected + f" (at most {MAX_TEXT} characters, powers of at most two "
                   "digits)")
    try:
        q = _UREG.Quantity(value)
        mag = float(q.magnitude)
    except Exception:
        raise _err(where, key, value, expected) from None
    if not math.isfinite(mag):
        raise _err(where, key, value, "a finite number")
    dim = q.dimensionality
    try:
        x = _to_si(q, kind, dim)
    except pint.DimensionalityError:
        raise _err(where, key, value, f"{_article(kind)} {kind.replace('_', ' ')}, e.g. {_EXAMPLES[kind]} "
                   f"(got a quantity of dimension {dim})") from None
    except (ArithmeticError, TypeError, ValueError):
        raise _err(where, key, value, expected) from None
    if not math.isfinite(x):
        raise _err(where, key, value, f"a finite {kind.replace('_', ' ')} (it overflows in SI units)")
    return x


def _to_si(q, kind: str, dim) -> float:
    if kind == "length":
        return float(q.to("m").magnitude)
    if kind == "time":
        return float(q.to("s").magnitude)
    if kind == "speed":                                          # returned as beta = v/c
        if dim == _UREG.dimensionless.dimensionality:
            return float(q.to("dimensionless").magnitude)
        return float(q.to("m/s").magnitude) / sc.c
    if kind in ("angular_frequency", "rate"):
        if dim == _UREG.eV.dimensionality:                       # energy: E / hbar
            return float(q.to("J").magnitude) / sc.hbar
        if dim == (1 / _UREG.m).dimensionality:                  # wavenumber: 2 pi c nu
            return 2 * math.pi * sc.c * float(q.to("1/m").magnitude)
        if "radian" in str(q.units):
            return float(q.to("rad/s").magnitude)
        if dim == (1 / _UREG.s).dimensionality:                  # Hz: omega = 2 pi f
            return 2 * math.pi * float(q.to("Hz").magnitude) if kind == "angular_frequency" \
                else float(q.to("1/s").magnitude)
        raise pint.DimensionalityError(q.units, "1/s")
    if kind == "charge_per_length":
        return float(q.to("C/m").magnitude)
    if kind == "dipole_per_length":
        return float(q.to("C").magnitude)
    return float(q.to("dimensionless").magnitude)


_EXAMPLES = {
    "length": '"40 nm" or 4e-8 (metres)',
    "time": '"10 fs" or 1e-14 (seconds)',
    "angular_frequency": '"2.1 eV", "508 THz", "797 1/cm" or a number in rad/s',
    "rate": '"3e-3 eV", "1e12 1/s" or a number in 1/s',
    "speed": '"0.35 c", "1e8 m/s" or a plain fraction of c (0.35)',
    "dimensionless": "a plain number",
    "charge_per_length": '"1e-10 C/m" or a number in C/m',
    "dipole_per_length": '"1e-20 C" (dipole moment per unit length, C m / m) or a number in C',
}
