r"""Stability limit of the combined Yee + ADE scheme.

Derivation (written out in docs/theory/stability.md).  For a
plane wave ``exp(i k.x - i omega n dt)`` in a homogeneous medium the scheme
obeys

.. math::  \tilde\omega^2\, \varepsilon_d(\omega) = K^2, \qquad
           K^2 = \sum_i \frac{4}{\Delta_i^2}\sin^2\frac{k_i\Delta_i}{2},

with the discrete permittivity of :meth:`fdtd.media.materials.Material.discrete_permittivity`.
Write ``u = omega_tilde^2 = (4/dt^2) sin^2(omega dt/2)``; real frequencies
cover ``0 <= u <= 4/dt^2``.  Without loss, ``g(u) = u eps_d(u)`` is strictly
increasing between its poles (``g'(u) = eps_inf + sum b a0 / (a0-u)^2 > 0``),
so the highest root lies above the highest resonance and the scheme is stable
exactly when that root stays below ``u = 4/dt^2`` for the largest ``K^2``,
``K_max^2 = sum_i 4/Delta_i^2`` (the checkerboard mode).  That is

.. math::  \Delta t^2 \sum_i \frac{1}{\Delta_i^2} \;\le\;
           \varepsilon_d(\omega\Delta t=\pi)
           = \varepsilon_\infty - \sum_p \frac{b_p\,\Delta t^2}{4 - a_{0,p}\Delta t^2},
           \qquad a_{0,p}\Delta t^2 < 4 .

A spatially dispersive pole (``- c_L lap P`` in its ADE) has, for the same
plane wave, ``a0 -> a0 + c_L K^2``: the criterion holds for every K, and
the right-hand side falls as K grows, so the checkerboard mode again decides
and ``a0_p`` is replaced by ``a0_p + 4 c_L sum 1/Delta_i^2``.

Because the polarization is advanced explicitly from ``E^n`` it adds a
negative term: a Lorentz or Drude medium lowers the limit below the vacuum
Courant limit (for a Drude pole, ``dt^2 sum 1/Delta^2 <= eps_inf - omega_p^2 dt^2/4``).
The loss term drops out at ``omega dt = pi`` (``sin(pi) = 0``), so damping
does not move the limit; with ``a1 >= 0`` the discrete medium stays passive
and no root crosses the unit circle elsewhere.  On a grid with several
materials we apply the criterion to every material present and take the
smallest ``dt`` (the local, frozen-coefficient criterion); tests check it by
the growth of runs just above and just below it.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence

from scipy.optimize import brentq

from fdtd.media.materials import Material


def _inverse_spacing_sum(spacing: Sequence[float]) -> float:
    return float(sum(1.0 / d**2 for d in spacing))


def max_stable_dt(spacing: Sequence[float], materials: Iterable[Material]) -> float:
    """Largest stable time step (normalized time units) for the given media.

    Parameters
    ----------
    spacing : sequence of float
        Cell sizes (dx,) or (dx, dy), normalized length units.
    materials : iterable of Material
        Every medium present on the grid (vacuum is added if absent; pass
        only the materials if the grid has no vacuum cell).
    """
    D = _inverse_spacing_sum(spacing)
    best = math.inf
    for m in materials:
        best = min(best, _max_dt_one(D, m))
    return best


def _max_dt_one(D: float, material: Material) -> float:
    # A spatially dispersive pole adds c_L K^2 to a0 (its Laplacian on the pole's
    # lattice has the same eigenvalue K^2 as the Yee curl-curl); the worst case
    # is the checkerboard mode K^2 = 4 D.
    params = [(a0 + p.laplacian_coefficient() * 4.0 * D, a1, b)
              for p in material.poles for (a0, a1, b) in [p.ade_parameters()]]
    a0_max = max((a0 for a0, _a1, _b in params), default=0.0)
    x_hi = 4.0 / a0_max if a0_max > 0 else math.inf

    def f(x: float) -> float:
        s = x * D - material.eps_inf
        for a0, _a1, b in params:
            s += b * x / (4.0 - a0 * x)
        return s

    if not params:
        return math.sqrt(material.eps_inf / D)
    upper = min(x_hi * (1.0 - 1e-15), 4.0 * material.eps_inf / D + 1.0)
    # f(0) = -eps_inf < 0 and f increases to +inf at x_hi (or beyond eps_inf/D)
    while f(upper) < 0.0:  # pragma: no cover - only for x_hi = inf with tiny b
        upper *= 2.0
    x_star = brentq(f, 0.0, upper, xtol=1e-300, rtol=1e-15, maxiter=500)
    return math.sqrt(x_star)


def courant_number(dt: float, spacing: Sequence[float]) -> float:
    """Vacuum Courant number ``c dt sqrt(sum 1/Delta_i^2)`` (1 is the vacuum limit)."""
    return dt * math.sqrt(_inverse_spacing_sum(spacing))
