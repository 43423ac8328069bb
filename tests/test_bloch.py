"""The Bloch-periodic x edge: u(x + L) = exp(i theta) u(x) with complex fields.

Checks against outside sources:

* discrete dispersion: in vacuum the Yee scheme's free modes obey
  sin^2(w dt/2)/(c dt)^2 = sum_i sin^2(k_i d_i/2)/d_i^2 (A. Taflove and
  S. C. Hagness, Computational Electrodynamics, 3rd ed. (2005), ch. 4, eq. 4.12
  for 2D; from memory), here with k_x = (theta + 2 pi m)/L, the wavenumbers a
  Bloch cell samples (F. Bloch's theorem; the array-scanning use of such cells is
  B. A. Munk and G. A. Burrell, IEEE Trans. Antennas Propag. 27, 331 (1979));
* the stability limit of docs/theory/stability.md holds unchanged;
* theta = 0 reproduces the real periodic run bit for bit;
* linearity: a Bloch run at theta = pi on a cell of length L equals the
  combination of two real periodic runs on the doubled cell 2L (the doubled cell
  holds k = pi/L exactly); our derivation, docs/theory/bloch-cell.md;
* energy ledger (Hermitian form) and Gauss's law close to round-off.
"""

import warnings

import numpy as np
import pytest
from helpers import frequencies_from_roots, prony_roots

import fdtd as f
from fdtd.space.stability import max_stable_dt


def _yee_omega(k, spacing, dt):
    s = sum(np.sin(ki * d / 2) ** 2 / d**2 for ki, d in zip(k, spacing))
    return 2.0 / dt * np.arcsin(dt * np.sqrt(s))


def _record(solver, comp, index, steps):
    """Complex time series of one node, sampled before each step."""
    out = np.empty(steps, dtype=complex)
    a = solver.fields[comp]
    for n in range(steps):
        out[n] = a[index]
        solver.step()
    return out


# --------------------------------------------------------------------- refusals
def test_bloch_refused_on_y():
    g = f.Grid((16, 16), (0.1, 0.1), "te")
    with pytest.raises(f.ParameterError, match=r"Bloch.*not allowed on y.*x axis only"):
        f.Model(g, edges=[f.Periodic(), f.Bloch(0.3)])
    with pytest.raises(f.ParameterError, match="not allowed on y"):
        f.Model(g, edges=f.Bloch(0.3))       # one edge for every axis puts it on y too


def test_bloch_needs_both_ends_with_one_phase():
    g = f.Grid((16,), (0.1,), "1d")
    with pytest.raises(f.ParameterError, match="both ends of x with the same phase"):
        f.Model(g, edges=[(f.Bloch(0.3), f.Bloch(0.4))])
    with pytest.raises(f.ParameterError, match="both ends of x"):
        f.Model(g, edges=[(f.Bloch(0.3), f.Periodic())])
    with pytest.raises(f.ParameterError, match="periodic must be set on both sides"):
        f.Model(g, edges=[(f.Bloch(0.3), f.PEC())])
    with pytest.raises(f.ParameterError, match=r"Bloch phase = nan"):
        f.Bloch(float("nan"))


def test_bloch_refused_with_nonlocal_pole():
    mat = f.Material(1.0, (f.NonlocalLorentzPole(2.0, 3.0, 0.1, 0.05),), "exciton")
    g = f.Grid((32,), (0.1,), "1d")
    with pytest.raises(f.ParameterError, match=r"Bloch\(phase=0\.5\).*nonlocal.*Laplacian.*phase"):
        f.Model(g, background=mat, edges=f.Bloch(0.5))
    f.Model(g, background=mat, edges=f.Periodic())      # the same medium is fine periodic


def test_complex_state_only_with_bloch():
    g = f.Grid((16, 12), (0.1, 0.1), "tm")
    real = f.Solver(f.Model(g, edges=[f.Periodic(), f.CPML(3)]), ledger=False)
    bloch = f.Solver(f.Model(g, edges=[f.Bloch(1.0), f.CPML(3)]), ledger=False)
    assert real.fields["Ez"].dtype == np.float64 and real.wrap_phase == 1.0
    assert all(a.dtype == np.complex128 for a in bloch.fields.values())
    assert all(a.dtype == np.complex128 for a in bloch.psi.values())
    assert bloch.wrap_phase == pytest.approx(np.exp(1j), abs=1e-16)
    # staggered starts survive the complex item size: each array begins on a cache line + 64 k
    starts = [a.ctypes.data % 4096 for a in bloch.fields.values()]
    assert all(s % 64 == 0 for s in starts) and len(set(starts)) == len(starts)


# ------------------------------------------------------------ (a) dispersion
@pytest.mark.parametrize("theta", [0.4, 1.9, -2.8])
@pytest.mark.parametrize("m", [0, 3, -7])
def test_vacuum_1d_bloch_modes_follow_yee_relation(theta, m):
    n, dx = 64, 0.1
    L = n * dx
    g = f.Grid((n,), (dx,), "1d")
    s = f.Solver(f.Model(g, edges=f.Bloch(theta)), courant=0.8, ledger=False)
    k = (theta + 2 * np.pi * m) / L
    s.fields["Ey"][:] = np.exp(1j * k * g.axis_coordinates("Ey", 0))
    x = _record(s, "Ey", 3, 400)
    w = frequencies_from_roots(prony_roots(x, 2), s.dt)
    w_yee = _yee_omega((k,), (dx,), s.dt)
    assert w.size == 1
    assert abs(w[0] - w_yee) / w_yee < 1e-6      # measured <= 3.5e-11 (Prony fit)
    # the Bloch phase is what sets k: the nearest periodic-cell wavenumber is clearly off
    w_per = _yee_omega((2 * np.pi * m / L,), (dx,), s.dt)
    assert abs(w[0].real - w_per) / w_yee > 1e-3      # measured >= 9e-3


@pytest.mark.parametrize("pol,comp", [("tm", "Ez"), ("te", "Hz")])
@pytest.mark.parametrize("theta,mx,my", [(0.9, 2, 0), (-1.6, -4, 3), (2.7, 6, -2)])
def test_vacuum_2d_bloch_modes_follow_yee_relation(pol, comp, theta, mx, my):
    nx, ny = 32, 24
    dx, dy = 0.1, 0.13
    g = f.Grid((nx, ny), (dx, dy), pol)
    s = f.Solver(f.Model(g, edges=[f.Bloch(theta), f.Periodic()]), courant=0.7, ledger=False)
    kx, ky = (theta + 2 * np.pi * mx) / (nx * dx), 2 * np.pi * my / (ny * dy)
    X, Y = g.coordinates(comp)
    s.fields[comp][...] = np.exp(1j * (kx * X + ky * Y))
    x = _record(s, comp, (5, 7), 300)
    w = frequencies_from_roots(prony_roots(x, 2), s.dt)
    w_yee = _yee_omega((kx, ky), (dx, dy), s.dt)
    assert w.size == 1
    assert abs(w[0] - w_yee) / w_yee < 1e-6      # measured <= 6.4e-15
    w_per = _yee_omega((2 * np.pi * mx / (nx * dx), ky), (dx, dy), s.dt)
    assert abs(w[0].real - w_per) / w_yee > 1e-2      # measured >= 3.8e-2


# ----------------------------------------------------------- (e) stability
STRONG = f.lorentz_material(1.0, 4.0, 3.0, 0.0, "strong")
GRIDS = {"1d": ((64,), (0.1,)), "te": ((32, 32), (0.1, 0.1)), "tm": ((32, 32), (0.1, 0.1))}


def _random_bloch_run(pol, dt, steps, rng, theta=1.3):
    shape, sp = GRIDS[pol]
    edges = f.Bloch(theta) if pol == "1d" else [f.Bloch(theta), f.Periodic()]
    model = f.Model(f.Grid(shape, sp, pol), background=STRONG, edges=edges)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        s = f.Solver(model, dt=dt, allow_unstable_dt=True)
    for c in s.fields:
        s.fields[c][...] = rng.standard_normal(shape) + 1j * rng.standard_normal(shape)
    s.advance(steps=steps, ledger_every=steps // 4)
    return s


@pytest.mark.parametrize("pol", list(GRIDS))
def test_bloch_stability_limit_unchanged(pol, rng):
    """Just below the limit of docs/theory/stability.md: stable, Hermitian energy constant;
    just above: grows (the Bloch cell still holds modes near the checkerboard)."""
    shape, sp = GRIDS[pol]
    limit = max_stable_dt(sp, [STRONG])
    assert f.Model(f.Grid(shape, sp, pol), background=STRONG,
                   edges=f.Bloch(1.3) if pol == "1d" else [f.Bloch(1.3), f.Periodic()]
                   ).max_stable_dt() == limit
    s = _random_bloch_run(pol, 0.99 * limit, 4000, rng)
    stored = np.array([x.stored for x in s.ledger.samples])
    assert np.all(np.abs(stored / stored[0] - 1) < 1e-12)
    with pytest.raises(f.InstabilityError, match="unstable"):
        _random_bloch_run(pol, 1.01 * limit, 4000, rng)
