"""Numerical dispersion of the scheme, measured from plane waves in periodic domains.

Reference for vacuum: the Yee discrete dispersion relation
sin^2(w dt/2)/(c dt)^2 = sum_i sin^2(k_i d_i/2)/d_i^2
(A. Taflove and S. C. Hagness, Computational Electrodynamics, 3rd ed. (2005),
ch. 4, eq. 4.12 for 2D; from memory).  For the Lorentz medium the reference is
the discrete relation derived in docs/theory/yee-and-ade.md ("ADE and the discrete permittivity"),
(2/dt)^2 sin^2(w dt/2) eps_d(w) = K^2, and the continuum polariton relation
w^2 eps(w) = c^2 k^2 (e.g. C. Kittel, Introduction to Solid State Physics,
8th ed., ch. 14 on polaritons; from memory).
"""

import numpy as np
import pytest
from helpers import frequencies_from_roots, loglog_slope, prony_roots, record_point

import fdtd as f


def _vacuum_yee_omega(k, spacing, dt):
    s = sum(np.sin(ki * d / 2) ** 2 / d**2 for ki, d in zip(k, spacing))
    return 2.0 / dt * np.arcsin(dt * np.sqrt(s))


_record = record_point


@pytest.mark.parametrize("m", [1, 5, 12])
def test_vacuum_1d_matches_yee_relation(m):
    n, dx = 64, 0.1
    g = f.Grid((n,), (dx,), "1d")
    s = f.Solver(f.Model(g, edges=f.Periodic()), courant=0.8, ledger=False)
    k = 2 * np.pi * m / (n * dx)
    s.fields["Ey"][:] = np.cos(k * g.axis_coordinates("Ey", 0))
    x = _record(s, "Ey", 3, 400)
    w = frequencies_from_roots(prony_roots(x, 2), s.dt)
    w_yee = _vacuum_yee_omega((k,), (dx,), s.dt)
    assert w.size == 1
    assert abs(w[0].real - w_yee) / w_yee < 1e-6
    # and the measurement really sees the grid: the continuum value c k is off
    assert abs(w[0].real - k) / k > 1e-4


@pytest.mark.parametrize("pol,comp", [("tm", "Ez"), ("te", "Hz")])
@pytest.mark.parametrize("mx,my", [(3, 0), (4, 4), (7, 2)])
def test_vacuum_2d_axis_and_diagonal(pol, comp, mx, my):
    nx = ny = 32
    dx = dy = 0.1
    g = f.Grid((nx, ny), (dx, dy), pol)
    s = f.Solver(f.Model(g, edges=f.Periodic()), courant=0.7, ledger=False)
    kx, ky = 2 * np.pi * mx / (nx * dx), 2 * np.pi * my / (ny * dy)
    X, Y = g.coordinates(comp)
    s.fields[comp][...] = np.cos(kx * X + ky * Y)
    x = _record(s, comp, (5, 7), 300)
    w = frequencies_from_roots(prony_roots(x, 2), s.dt)
    w_yee = _vacuum_yee_omega((kx, ky), (dx, dy), s.dt)
    assert w.size == 1
    assert abs(w[0].real - w_yee) / w_yee < 1e-6


def _discrete_lorentz_roots(mat, K2, dt):
    """Roots z of the discrete dispersion polynomial (one pole), z = exp(-i w dt)."""
    (p,) = mat.poles
    a0, a1, b = p.ade_parameters()
    P = np.polynomial.polynomial
    delta = np.array([1.0, -2.0, 1.0])          # z^2 - 2z + 1   (coefficients low -> high)
    sigma = np.array([-1.0, 0.0, 1.0])          # z^2 - 1
    den = np.array([0.0, a0, 0.0]) + delta / dt**2 + a1 * sigma / (2 * dt)  # z * Den
    lhs = -P.polymul(delta, mat.eps_inf * den + np.array([0.0, b, 0.0]))
    rhs = K2 * dt**2 * P.polymul(den, [0.0, 1.0])
    return P.polyroots(P.polysub(lhs, rhs))


def _lorentz_run(mat, n, L, m, courant, steps, pol="1d"):
    dx = L / n
    g = f.Grid((n,), (dx,), "1d")
    model = f.Model(g, background=mat, edges=f.Periodic())
    s = f.Solver(model, courant=courant, ledger=False)
    k = 2 * np.pi * m / L
    s.fields["Ey"][:] = np.cos(k * g.axis_coordinates("Ey", 0))
    x = _record(s, "Ey", 0, steps)
    return s, k, dx, x


@pytest.mark.parametrize("gamma", [0.0, 0.3])
@pytest.mark.parametrize("m", [2, 6])
def test_lorentz_matches_discrete_dispersion(gamma, m):
    mat = f.lorentz_material(1.5, 2.5, 4.0, gamma, "lz")
    s, k, dx, x = _lorentz_run(mat, 80, 8.0, m, 0.9, 500)
    w_meas = frequencies_from_roots(prony_roots(x, 4), s.dt)
    K2 = (2 / dx * np.sin(k * dx / 2)) ** 2
    w_pred = frequencies_from_roots(_discrete_lorentz_roots(mat, K2, s.dt), s.dt)
    assert w_meas.size == 2 and w_pred.size == 2
    np.testing.assert_allclose(w_meas, w_pred, rtol=1e-6)
    # the discrete relation is eps_d: check the same numbers through Material.discrete_permittivity
    for w in w_pred:
        lhs = (2 / s.dt * np.sin(w * s.dt / 2)) ** 2 * mat.discrete_permittivity(w, s.dt)
        assert abs(lhs - K2) / K2 < 1e-9


def test_lorentz_approaches_continuum_at_second_order():
    mat = f.lorentz_material(1.0, 3.0, 2.0, 0.0, "lz")
    L, m = 12.0, 3
    k = 2 * np.pi * m / L
    # continuum polariton: eps_inf w^4 - (eps_s W^2 + k^2) w^2 + k^2 W^2 = 0
    eps_s = 1.0 + 3.0
    w2 = np.roots([1.0, -(eps_s * 4.0 + k**2), k**2 * 4.0])
    w_cont = np.sort(np.sqrt(w2.real))
    errs, hs = [], []
    for n in (120, 240, 480):
        s, _, dx, x = _lorentz_run(mat, n, L, m, 0.5, 600)
        w = np.sort(frequencies_from_roots(prony_roots(x, 4), s.dt).real)
        errs.append(np.max(np.abs(w - w_cont) / w_cont))
        hs.append(s.dt * 2.0)   # Omega dt
    slope = loglog_slope(hs, errs)
    assert 1.9 < slope < 2.1, (hs, errs, slope)
