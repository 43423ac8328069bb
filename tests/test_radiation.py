"""2D radiation of a time-harmonic line current I0 cos(wt) in vacuum.

Out-of-plane current (TM_z, Jz): radiated power per unit length P = eta0 k I0^2 / 8.
In-plane current element (TE_z, Jy): P = eta0 k I0^2 / 16 (pattern cos^2 phi).
Both are computed independently here from the 2D Green's function
G = (i/4) H0^(1)(k rho) of (nabla^2 + k^2) G = -delta (e.g. W. C. Chew, Waves and
Fields in Inhomogeneous Media, 1990, sec. 2.2.1 "A Line Source", section checked in
the book's table of contents with the search tool; the TM result is the classic
line-source power, e.g. C. A. Balanis, Advanced Engineering Electromagnetics,
2nd ed., 2012, ch. 11, from memory): the exact near fields are built from
scipy.special.hankel1 / h1vp and their Poynting flux is integrated over circles.
"""

import numpy as np
import pytest
import scipy.special as sp
from helpers import loglog_slope

import fdtd as f

OMEGA = 2 * np.pi   # lambda = 1 normalized length unit
I0 = 1.0


def _hankel_flux(pol: str, rho: float, k: float = OMEGA) -> float:
    """Radiated power per unit length from the exact fields (normalized: eta0 = 1)."""
    phi = np.linspace(0, 2 * np.pi, 721)[:-1]
    if pol == "tm":
        Ez = -(k * I0 / 4) * sp.hankel1(0, k * rho) * np.ones_like(phi)
        Hphi = 1j * k * I0 / 4 * sp.hankel1(1, k * rho) * np.ones_like(phi)
        S = 0.5 * np.real(-Ez * np.conj(Hphi))           # (E x H*)_rho = -Ez Hphi*
    else:
        Hz = -1j * k * I0 / 4 * sp.hankel1(1, k * rho) * np.cos(phi)
        Ephi = -(k * I0 / 4) * sp.h1vp(1, k * rho) * np.cos(phi)
        S = 0.5 * np.real(Ephi * np.conj(Hz))            # (E x H*)_rho = Ephi Hz*
    return float(np.mean(S) * 2 * np.pi * rho)


@pytest.mark.parametrize("pol", ["tm", "te"])
def test_green_function_flux_is_the_closed_form(pol):
    closed = OMEGA * I0**2 / (8 if pol == "tm" else 16)
    for rho in (0.05, 0.7, 3.3):
        assert abs(_hankel_flux(pol, rho) / closed - 1) < 1e-12


def _simulated_power(pol: str, cells_per_wavelength: int) -> float:
    comp = "Ez" if pol == "tm" else "Ey"
    d = 1.0 / cells_per_wavelength
    npml = 12
    n = int(round(3.0 / d)) + 2 * npml
    g = f.Grid((n, n), (d, d), pol, origin=(-n * d / 2, -n * d / 2))
    model = f.Model(g, edges=f.CPML(npml))
    steps_per_period = int(np.ceil(1.0 / (0.95 * model.max_stable_dt())))
    s = f.Solver(model, dt=1.0 / steps_per_period)
    s.attach(f.line_current(s, comp, (0.0, 0.0), I0, f.ContinuousWave(OMEGA, I0, ramp=3.0)))
    s.advance(steps=10 * steps_per_period)           # ramp and transit to the layers
    w0, out0 = s.source_work, s.ledger.outflow
    s.advance(steps=4 * steps_per_period)            # average over four whole periods
    p_src = (s.source_work - w0) / 4.0
    p_out = (s.ledger.outflow - out0) / 4.0
    assert abs(p_out / p_src - 1) < 1e-3          # what goes in comes out through the box
    return p_src


@pytest.mark.parametrize("pol", ["tm", "te"])
def test_line_current_power_within_2_percent_and_second_order(pol):
    exact = _hankel_flux(pol, 1.0)
    ppw = np.array([20, 28, 40])
    err = np.array([abs(_simulated_power(pol, n) / exact - 1) for n in ppw])
    assert err[0] < 0.02, err                  # measured 0.0051 (tm and te)
    slope = loglog_slope(1.0 / ppw, err)       # three resolutions
    assert 1.9 < slope < 2.1, (err, slope)     # measured 2.02 (tm and te)
