r"""Closed-form results the simulations are checked against (normalized units, 2D per unit length).

Derivations are in docs/theory/frank-tamm-2d.md and docs/theory/line-sources.md; the
sources for the 3D originals are cited beside each function.

* 2D Frank-Tamm: a line charge lambda moving at v = beta c along x in a
  non-magnetic medium eps(omega) radiates, per unit path length and unit
  angular frequency (omega > 0),

  .. math:: \frac{d^2W}{dx\,d\omega} = \frac{\lambda^2}{2\pi}\,
            \frac{\sqrt{\beta^2\varepsilon(\omega)-1}}{\beta\,\varepsilon(\omega)}
            \quad (\beta^2\varepsilon > 1),

  the 2D analogue of I. Frank and I. Tamm, Dokl. Akad. Nauk SSSR 14, 109
  (1937) and J. D. Jackson, Classical Electrodynamics, 3rd ed., sec. 13.4,
  eq. 13.48 (3D: q^2 omega (1 - 1/(beta^2 eps)) / (4 pi); from memory).
* In a cell periodic along x with length L (an infinite row of charges) the
  power per charge sits at k_m = 2 pi m / L, omega_m = k_m v:
  P_m = (v lambda^2 / L) sqrt(beta^2 eps - 1) / eps  (m and -m together).
* Cherenkov angle between the wave vector and the velocity: cos(theta) = 1/(n beta);
  threshold beta = 1/n (Jackson sec. 13.4, from memory).
* Line sources at rest in vacuum: out-of-plane current I -> omega I^2 / 8,
  in-plane current element -> omega I^2 / 16; line dipole p: omega^3 p^2 / 8
  (out of plane) and omega^3 p^2 / 16 (in plane) (from G = (i/4) H0(k rho)).
"""

from __future__ import annotations

import numpy as np

from fdtd import _checks


def frank_tamm_2d(beta, eps, charge: float = 1.0):
    """d^2W/(dx d omega) of a line charge (normalized units); zero below threshold.

    ``eps`` is the (real) relative permittivity at the frequency of interest.
    """
    beta = np.asarray(beta, dtype=float)
    eps = np.asarray(eps, dtype=float)
    arg = beta * beta * eps - 1.0
    ok = (arg > 0) & (eps > 0)
    safe = np.where(ok, arg, 1.0)
    val = charge**2 / (2 * np.pi) * np.sqrt(safe) / (beta * np.where(ok, eps, 1.0))
    return np.where(ok, val, 0.0)


def row_harmonic_power(speed: float, length: float, eps, charge: float = 1.0):
    """Power per charge of a periodic row in harmonic m (m and -m together).

    ``eps`` at omega_m = k_m v.  Equals frank_tamm_2d * v * (2 pi v / L).
    """
    return frank_tamm_2d(speed, eps, charge) * speed * (2 * np.pi * speed / length)


def cherenkov_angle(beta: float, n: float) -> float:
    """Angle (radians) between the emitted wave vector and the velocity."""
    b = _checks.in_range("beta", beta, 0.0, 1.0, lo_open=True, hi_open=True)
    x = 1.0 / (n * b)
    if x > 1:
        raise _checks.ParameterError(f"beta = {beta!r} is below the Cherenkov threshold 1/n = {1 / n!r}")
    return float(np.arccos(x))


def cherenkov_band_edges(material, beta: float, omega_max: float, samples: int = 20001):
    """Frequencies (ascending) in (0, omega_max] where the emission condition
    beta^2 Re eps(omega) > 1 switches on or off.

    Both kinds of switch are found: zeros of f = beta^2 Re eps - 1 and the
    resonance poles of eps, where f jumps from +inf to -inf (located as zeros
    of 1/Re eps).  Each is refined with Brent's method.
    """
    from scipy.optimize import brentq

    def f(w):
        return beta**2 * float(np.real(material.permittivity(w))) - 1.0

    def inv_eps(w):
        with np.errstate(divide="ignore", invalid="ignore"):   # exactly on a resonance: eps = inf
            e = complex(material.permittivity(w))
        return 0.0 if not np.isfinite(e.real) else 1.0 / e.real

    w = np.linspace(omega_max / samples, omega_max, samples)
    fv = beta**2 * np.real(material.permittivity(w)) - 1.0
    idx = np.nonzero(np.sign(fv[1:]) != np.sign(fv[:-1]))[0]
    edges = []
    for i in idx:
        a, b = w[i], w[i + 1]
        if min(abs(fv[i]), abs(fv[i + 1])) > 1.0 and np.sign(inv_eps(a)) != np.sign(inv_eps(b)):
            edges.append(brentq(inv_eps, a, b, xtol=1e-14))
        else:
            edges.append(brentq(f, a, b, xtol=1e-14))
    return np.array(edges)


def line_current_power(omega: float, current: float, in_plane: bool) -> float:
    """Radiated power per unit length of a line current I cos(omega t) in vacuum."""
    return omega * current**2 / (16.0 if in_plane else 8.0)


def line_dipole_power(omega: float, moment: float, in_plane: bool) -> float:
    """Radiated power per unit length of a line dipole p cos(omega t) at rest in vacuum."""
    return line_current_power(omega, omega * moment, in_plane)
