r"""World lines: prescribed trajectories r(t) of moving sources.

Every world line gives, at lab time t (normalized; c = 1), the position
``r(t)``, the velocity ``v(t)`` and the proper time ``tau(t)`` (with
``tau(0) = 0``), ``d tau / dt = sqrt(1 - |v|^2)``.  Speeds ``|v| >= 1``
are refused.

* :class:`UniformMotion` -- straight line at constant velocity, optionally
  reached by a smooth speed ramp from rest (C^2, so the start radiates little);
* :class:`PiecewiseLinear` -- straight segments between given (t, r) points;
* :class:`CallableWorldLine` -- any user function r(t) (accelerating or
  decelerating sources), velocity by central differences unless given.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy.integrate import quad

from fdtd import _checks
from fdtd.errors import ParameterError


def _check_speed(name: str, v: np.ndarray) -> None:
    s = float(np.sqrt(np.sum(np.asarray(v, dtype=float) ** 2)))
    if not math.isfinite(s):
        raise ParameterError(f"{name} = {np.asarray(v).tolist()} is not finite")
    if s >= 1.0:
        raise ParameterError(
            f"{name}: speed |v| = {s!r} c is not allowed: expected |v| < 1 (the speed of light "
            "in vacuum, c = 1 in normalized units)")


class WorldLine:
    """Interface: position(t), velocity(t), proper_time(t) (arrays of shape (dims,))."""

    dims: int = 2

    def position(self, t: float) -> np.ndarray:  # pragma: no cover - abstract
        raise NotImplementedError

    def velocity(self, t: float) -> np.ndarray:  # pragma: no cover - abstract
        raise NotImplementedError

    def proper_time(self, t: float) -> float:  # pragma: no cover - abstract
        raise NotImplementedError

    def max_speed(self, t0: float, t1: float, samples: int = 257) -> float:
        ts = np.linspace(t0, t1, samples)
        return float(max(np.linalg.norm(self.velocity(t)) for t in ts))

    def max_velocity_components(self, t0: float, t1: float, samples: int = 257) -> np.ndarray:
        ts = np.linspace(t0, t1, samples)
        return np.max(np.abs(np.array([self.velocity(t) for t in ts])), axis=0)

    def gamma(self, t: float) -> float:
        v2 = float(np.sum(self.velocity(t) ** 2))
        return 1.0 / math.sqrt(1.0 - v2)


def _ramp_profile(x: float) -> float:
    """Quintic smoothstep on [0, 1] (C^2)."""
    if x <= 0.0:
        return 0.0
    if x >= 1.0:
        return 1.0
    return x * x * x * (10.0 - 15.0 * x + 6.0 * x * x)


def _ramp_integral(x: float) -> float:
    """Integral of the smoothstep from 0 to x (x in [0, 1]); equals 1/2 at x = 1."""
    x = min(max(x, 0.0), 1.0)
    return x**4 * (2.5 - 3.0 * x + x * x)


@dataclass(frozen=True)
class UniformMotion(WorldLine):
    """r(t) = r0 + v t, or with ``ramp > 0`` the speed rises smoothly from 0 to v.

    Parameters
    ----------
    start : sequence of float
        Position at t = 0 (normalized length).
    velocity : sequence of float
        Final velocity (units of c), |v| < 1.
    ramp : float
        Duration of the smooth speed ramp (normalized time, >= 0).
    """

    start: Sequence[float]
    velocity_vector: Sequence[float]
    ramp: float = 0.0

    def __post_init__(self) -> None:
        r0 = _checks.finite_array("world line start", self.start).reshape(-1)
        v = _checks.finite_array("world line velocity", self.velocity_vector).reshape(-1)
        if r0.shape != v.shape:
            raise ParameterError(f"world line start {r0.tolist()} and velocity {v.tolist()} differ in length")
        _check_speed("world line velocity", v)
        object.__setattr__(self, "start", tuple(r0))
        object.__setattr__(self, "velocity_vector", tuple(v))
        _checks.non_negative("world line ramp", self.ramp)
        object.__setattr__(self, "dims", len(r0))

    @property
    def speed(self) -> float:
        return float(np.linalg.norm(self.velocity_vector))

    def _distance_factor(self, t: float) -> float:
        """Fraction s(t) with r = r0 + v * s(t): s = t without ramp."""
        T = self.ramp
        if T <= 0.0 or t >= T:
            return t - 0.5 * T if T > 0 else t
        if t <= 0.0:
            return 0.0
        return T * _ramp_integral(t / T)

    def position(self, t: float) -> np.ndarray:
        return np.asarray(self.start) + np.asarray(self.velocity_vector) * self._distance_factor(t)

    def velocity(self, t: float) -> np.ndarray:
        T = self.ramp
        f = 1.0 if T <= 0.0 else _ramp_profile(t / T)
        if T > 0 and t <= 0:
            f = 0.0
        return np.asarray(self.velocity_vector) * f

    def proper_time(self, t: float) -> float:
        v = self.speed
        if self.ramp <= 0.0:
            return t * math.sqrt(1.0 - v * v)
        T = self.ramp
        if t <= 0.0:
            return t
        t_in = min(t, T)
        tau, _ = quad(lambda s: math.sqrt(1.0 - (v * _ramp_profile(s / T)) ** 2), 0.0, t_in,
                      epsabs=1e-14, epsrel=1e-13, limit=200)
        if t > T:
            tau += (t - T) * math.sqrt(1.0 - v * v)
        return tau


@dataclass(frozen=True)
class PiecewiseLinear(WorldLine):
    """Straight segments between (times[k], points[k]); constant velocity on each.

    Before the first time the source rests at the first point, after the last
    at the last point.
    """

    times: Sequence[float]
    points: Sequence[Sequence[float]]

    def __post_init__(self) -> None:
        t = _checks.finite_array("piecewise world line times", self.times).reshape(-1)
        p = _checks.finite_array("piecewise world line points", self.points)
        if p.ndim != 2 or p.shape[0] != t.size or t.size < 2:
            raise ParameterError(
                f"piecewise world line: {t.size} times and points of shape {p.shape}: expected "
                "n >= 2 times and n points")
        if np.any(np.diff(t) <= 0):
            raise ParameterError(f"piecewise world line times {t.tolist()} must increase strictly")
        for k in range(t.size - 1):
            _check_speed(f"piecewise world line segment {k}", (p[k + 1] - p[k]) / (t[k + 1] - t[k]))
        object.__setattr__(self, "times", tuple(t))
        object.__setattr__(self, "points", tuple(map(tuple, p)))
        object.__setattr__(self, "dims", p.shape[1])

    def _segment(self, t: float) -> int:
        return int(np.clip(np.searchsorted(self.times, t, side="right") - 1, 0, len(self.times) - 2))

    def position(self, t: float) -> np.ndarray:
        t = min(max(t, self.times[0]), self.times[-1])
        k = self._segment(t)
        t0, t1 = self.times[k], self.times[k + 1]
        p0, p1 = np.asarray(self.points[k]), np.asarray(self.points[k + 1])
        return p0 + (p1 - p0) * (t - t0) / (t1 - t0)

    def velocity(self, t: float) -> np.ndarray:
        if t < self.times[0] or t > self.times[-1]:
            return np.zeros(self.dims)
        k = self._segment(t)
        return (np.asarray(self.points[k + 1]) - np.asarray(self.points[k])) / (
            self.times[k + 1] - self.times[k])

    def proper_time(self, t: float) -> float:
        tau = 0.0
        ts = self.times
        # proper time from t = 0 (rest outside the segments)
        lo, hi = (0.0, t) if t >= 0 else (t, 0.0)
        edges = sorted({lo, hi, *[x for x in ts if lo < x < hi]})
        for a, b in zip(edges[:-1], edges[1:]):
            v = self.velocity(0.5 * (a + b))
            tau += (b - a) * math.sqrt(1.0 - float(np.sum(v * v)))
        return tau if t >= 0 else -tau


@dataclass(frozen=True)
class CallableWorldLine(WorldLine):
    """A user-supplied trajectory ``r(t)`` (and optionally ``v(t)``).

    The velocity defaults to a central difference with step ``h``; the
    proper time is integrated with adaptive quadrature.  Speeds are checked
    on the run's time span when the source is bound to a solver.
    """

    func: Callable[[float], Sequence[float]]
    velocity_func: Callable[[float], Sequence[float]] | None = None
    h: float = 1e-6
    _cache: dict = field(default_factory=dict, compare=False, repr=False)

    def __post_init__(self) -> None:
        r0 = np.asarray(self.func(0.0), dtype=float).reshape(-1)
        _checks.finite_array("callable world line r(0)", r0)
        object.__setattr__(self, "dims", r0.size)

    def position(self, t: float) -> np.ndarray:
        return np.asarray(self.func(t), dtype=float).reshape(-1)

    def velocity(self, t: float) -> np.ndarray:
        if self.velocity_func is not None:
            return np.asarray(self.velocity_func(t), dtype=float).reshape(-1)
        return (self.position(t + self.h) - self.position(t - self.h)) / (2 * self.h)

    def proper_time(self, t: float) -> float:
        # integrate incrementally from the last evaluated time (runs move forward)
        c = self._cache
        t_prev, tau_prev = c.get("last", (0.0, 0.0))
        if t < t_prev:
            t_prev, tau_prev = 0.0, 0.0
        integrand = lambda s: math.sqrt(max(1.0 - float(np.sum(self.velocity(s) ** 2)), 0.0))  # noqa: E731
        inc, _ = quad(integrand, t_prev, t, epsabs=1e-14, epsrel=1e-12, limit=200)
        c["last"] = (t, tau_prev + inc)
        return tau_prev + inc
