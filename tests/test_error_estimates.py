"""The error estimates behind every reported figure: the grid part and the settling test.

Grid part: Richardson extrapolation (L. F. Richardson, Phil. Trans. R. Soc. A 210, 307 (1911))
with the safety factors of Roache's grid convergence index, 3 for two grids and 1.25 for
three grids with the order observed (P. J. Roache, J. Fluids Eng. 116, 405 (1994); from
memory).  The checks use spectra whose figures converge as F(h) = F0 + C h^p exactly, so
the true error of the finest grid is known and the estimate must cover it.
"""

from types import SimpleNamespace

import numpy as np
import pytest

from fdtd.experiment.grid_check import compare_grids
from fdtd.recording.doppler import DopplerSpectrum
from fdtd.recording.steady import TESTED, window_convergence

LENGTH = 10.0
SPEED = 0.6
OMEGA0 = 1.0


def spectrum(powers_normal, powers_anomalous) -> DopplerSpectrum:
    """A two-branch spectrum on the harmonics m = 1..n of a cell of length LENGTH."""
    n = len(powers_normal)
    k = 2 * np.pi * np.arange(1, n + 1) / LENGTH
    kx = np.concatenate([k, k])
    omega = np.concatenate([k * SPEED + OMEGA0 * 0.8, np.abs(k * SPEED - OMEGA0 * 0.8)])
    branch = np.concatenate([np.ones(n, int), -np.ones(n, int)])
    power = np.concatenate([powers_normal, powers_anomalous]).astype(float)
    return DopplerSpectrum(kx, omega, branch, power, 100.0, float(power.sum()), SPEED, OMEGA0 * 0.8, {})


PLAN = SimpleNamespace(length=LENGTH, polarization="te", source_kind="dipole")
BASE_N = np.array([1.0, 0.7, 0.4, 0.2])
BASE_A = np.array([0.3, 0.2, 0.1, 0.05])
SLOPE = np.array([0.8, -0.5, 0.9, 0.3])        # per-harmonic error constants, mixed signs


def on_grid(h: float, order: float) -> DopplerSpectrum:
    return spectrum(BASE_N * (1 + SLOPE * h**order), BASE_A * (1 - SLOPE * h**order))


@pytest.mark.parametrize("order", [2.0, 1.5, 1.0, 0.5])
def test_three_grid_estimate_covers_the_true_error_whatever_the_order(order):
    h = 0.05
    coarse, medium, fine = on_grid(4 * h, order), on_grid(2 * h, order), on_grid(h, order)
    nx_coarse = 4000
    first = compare_grids(PLAN, medium, nx_coarse, coarse)
    second = compare_grids(PLAN, fine, nx_coarse * 2, medium, previous=first)
    exact = spectrum(BASE_N, BASE_A)
    for fig in ("total", "normal", "anomalous"):
        true = sum(abs(a - b) for a, b in zip(
            [p for p, br in zip(fine.power, fine.branch) if fig == "total" or br == (1 if fig == "normal" else -1)],
            [p for p, br in zip(exact.power, exact.branch) if fig == "total" or br == (1 if fig == "normal" else -1)]))
        est = second["errors"][fig]
        assert est >= true, (order, fig, est, true)
        assert est <= 3.5 * true, (order, fig, est, true)     # and not uselessly wide
    assert second["order"] == pytest.approx(min(order, 2.0) if order >= 1 else order, rel=1e-6)


def test_two_grid_estimate_uses_the_two_grid_safety_factor():
    h = 0.05
    medium, fine = on_grid(2 * h, 2.0), on_grid(h, 2.0)
    out = compare_grids(PLAN, fine, 4000, medium)
    diff = np.sum(np.abs(fine.power - medium.power))
    assert out["errors"]["total"] == pytest.approx(3.0 * diff / 3.0)
    true = np.sum(np.abs(fine.power - spectrum(BASE_N, BASE_A).power))
    assert out["errors"]["total"] >= true


def test_a_figure_at_zero_settles_within_the_zero_level_and_nothing_larger_does():
    rng = np.random.default_rng(1)
    zero = 1e-3
    noise = [{"total": float(v), "normal": 0.0, "anomalous": 0.0} for v in 2e-4 * rng.standard_normal(6)]
    assert window_convergence(noise, 0.005, zero, TESTED)[0] is True
    # the same noise around a power 100 times the zero level has not settled to 0.5 %
    loud = [{"total": 0.1 + h["total"] * 50, "normal": 0.1, "anomalous": 0.0} for h in noise]
    assert window_convergence(loud, 0.005, zero, TESTED)[0] is False
    # noise as large as the zero level is not zero
    assert window_convergence(noise, 0.005, 1e-4, TESTED)[0] is False
