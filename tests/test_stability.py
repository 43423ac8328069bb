"""The stability limit of the combined Yee + ADE scheme (derivation in fdtd/space/stability.py
and docs/theory/stability.md), checked by the growth of runs just above and just below it."""

import warnings

import numpy as np
import pytest

import fdtd as f
from fdtd.space.stability import max_stable_dt

STRONG = f.lorentz_material(1.0, 4.0, 3.0, 0.0, "strong")
GRIDS = {"1d": ((64,), (0.1,)), "te": ((32, 32), (0.1, 0.1)), "tm": ((32, 32), (0.1, 0.1))}


def _random_run(pol, material, dt, steps, rng):
    shape, sp = GRIDS[pol]
    model = f.Model(f.Grid(shape, sp, pol), background=material, edges=f.Periodic())
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        s = f.Solver(model, dt=dt, allow_unstable_dt=True)
    for c in s.fields:
        s.fields[c][...] = rng.standard_normal(shape)
    s.advance(steps=steps, ledger_every=steps // 4)
    return s


@pytest.mark.parametrize("pol", list(GRIDS))
def test_just_below_limit_is_stable_and_conserves_energy(pol, rng):
    shape, sp = GRIDS[pol]
    limit = max_stable_dt(sp, [STRONG])
    s = _random_run(pol, STRONG, 0.99 * limit, 4000, rng)
    stored = np.array([x.stored for x in s.ledger.samples])
    assert np.all(np.abs(stored / stored[0] - 1) < 1e-12)


@pytest.mark.parametrize("pol", list(GRIDS))
def test_just_above_limit_grows(pol, rng):
    shape, sp = GRIDS[pol]
    limit = max_stable_dt(sp, [STRONG])
    with pytest.raises(f.InstabilityError, match="unstable"):
        _random_run(pol, STRONG, 1.01 * limit, 4000, rng)


def test_dispersive_limit_lies_below_vacuum_limit(rng):
    """Between the dispersive and the vacuum limit the run must grow: the vacuum
    Courant number is not enough once the polarization enters explicitly."""
    shape, sp = GRIDS["te"]
    vac = max_stable_dt(sp, [f.VACUUM])
    lim = max_stable_dt(sp, [STRONG])
    assert lim < 0.985 * vac
    with pytest.raises(f.InstabilityError):
        _random_run("te", STRONG, 0.5 * (lim + vac), 4000, rng)


def test_drude_limit_has_closed_form():
    """Drude pole: dt^2 sum 1/d^2 <= eps_inf - omega_p^2 dt^2 / 4 (our derivation)."""
    sp = (0.1, 0.07)
    wp, eps_inf = 9.0, 1.7
    D = sum(1 / d**2 for d in sp)
    expected = np.sqrt(eps_inf / (D + wp**2 / 4))
    got = max_stable_dt(sp, [f.Material(eps_inf, (f.DrudePole(wp, 0.3),), "metal")])
    assert abs(got - expected) / expected < 1e-13


def test_refusal_states_the_limit():
    g = f.Grid((40, 40), (0.1, 0.1), "te")
    model = f.Model(g, [(f.HalfSpace("y", below=2.0), STRONG)])
    lim = model.max_stable_dt()
    with pytest.raises(f.StabilityError) as exc:
        f.Solver(model, dt=1.001 * lim)
    assert repr(lim) in str(exc.value) and "dt_max" in str(exc.value)
    f.Solver(model, dt=lim)  # the limit itself is accepted
