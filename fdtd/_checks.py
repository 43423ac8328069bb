"""Small validators used at the edges of the package.

They raise :class:`fdtd.errors.ParameterError` with a message that names the
parameter, the value received and the allowed range, e.g.::

    cell size dx = -1.0 is not allowed: expected a finite number > 0
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from typing import Any

import numpy as np

from fdtd.errors import ParameterError


def _fmt(value: Any) -> str:
    if isinstance(value, float):
        return repr(value)
    return str(value)


def finite_number(name: str, value: Any) -> float:
    """Return ``value`` as a float, refusing non-numbers, NaN and infinities."""
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise ParameterError(f"{name} = {value!r} is not a number: expected a finite real number") from None
    if not math.isfinite(x):
        raise ParameterError(f"{name} = {_fmt(x)} is not allowed: expected a finite real number")
    return x


def positive(name: str, value: Any) -> float:
    """A finite number strictly greater than zero."""
    x = finite_number(name, value)
    if x <= 0.0:
        raise ParameterError(f"{name} = {_fmt(x)} is not allowed: expected a finite number > 0")
    return x


def non_negative(name: str, value: Any) -> float:
    """A finite number greater than or equal to zero."""
    x = finite_number(name, value)
    if x < 0.0:
        raise ParameterError(f"{name} = {_fmt(x)} is not allowed: expected a finite number >= 0")
    return x


def in_range(name: str, value: Any, lo: float, hi: float, *, lo_open: bool = False,
             hi_open: bool = False) -> float:
    """A finite number inside [lo, hi] (ends open where asked)."""
    x = finite_number(name, value)
    bad = (x < lo or x > hi or (lo_open and x == lo) or (hi_open and x == hi))
    if bad:
        left = "(" if lo_open else "["
        right = ")" if hi_open else "]"
        raise ParameterError(
            f"{name} = {_fmt(x)} is not allowed: expected a number in {left}{lo}, {hi}{right}")
    return x


def positive_int(name: str, value: Any, minimum: int = 1) -> int:
    """An integer >= ``minimum`` (bools refused)."""
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        raise ParameterError(f"{name} = {value!r} is not allowed: expected an integer >= {minimum}")
    if int(value) < minimum:
        raise ParameterError(f"{name} = {value} is not allowed: expected an integer >= {minimum}")
    return int(value)


def one_of(name: str, value: Any, allowed: Iterable[str]) -> str:
    allowed = list(allowed)
    if value not in allowed:
        raise ParameterError(f"{name} = {value!r} is not allowed: expected one of {allowed}")
    return value


def finite_array(name: str, value: Any) -> np.ndarray:
    arr = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(arr)):
        bad = int(np.size(arr) - np.count_nonzero(np.isfinite(arr)))
        raise ParameterError(f"{name} contains {bad} non-finite entries: expected finite numbers")
    return arr
