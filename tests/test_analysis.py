"""The (k_x, omega) map finds a known plane wave; overlay curves have their defining property."""

import numpy as np

import fdtd as f
from fdtd.recording.kx_omega import bulk_dispersion, doppler_lines, kx_omega_map, surface_polariton


def test_kx_omega_map_locates_a_travelling_wave():
    dx, dt, nx, nt = 0.1, 0.05, 64, 512
    k0 = 2 * np.pi * 5 / (nx * dx)
    w0 = 2.3
    x = np.arange(nx) * dx
    t = np.arange(nt)[:, None] * dt
    data = np.cos(k0 * x[None, :] - w0 * t) + 0.3 * np.cos(-2 * k0 * x[None, :] - 1.1 * t)
    kx, om, I = kx_omega_map(data, dx, dt)
    i, j = np.unravel_index(np.argmax(I), I.shape)
    assert abs(kx[j] - k0) < 1e-9 and abs(om[i] - w0) < 2 * np.pi / (nt * dt)
    # the weaker wave travels the other way: found at negative k_x
    I2 = I.copy()
    I2[:, np.abs(kx - k0) < 1e-9] = 0
    i, j = np.unravel_index(np.argmax(I2), I2.shape)
    assert abs(kx[j] + 2 * k0) < 1e-9


def test_overlays():
    lz = f.Material(1.0, (f.LorentzPole(2.0, 1.0, 0.0),))
    w = np.array([0.5, 1.2, 1.5, 2.0])
    k = bulk_dispersion(lz, w)
    eps = lz.permittivity(w).real
    ok = eps > 0
    np.testing.assert_allclose(k[ok] ** 2, w[ok] ** 2 * eps[ok], rtol=1e-12)
    assert np.all(np.isnan(k[~ok]))
    ks = surface_polariton(lz, w)
    bound = eps < -1
    # k^2 (eps + 1) = omega^2 eps for the bound interface mode with vacuum
    np.testing.assert_allclose(ks[bound] ** 2 * (eps[bound] + 1), w[bound] ** 2 * eps[bound], rtol=1e-12)
    lines = doppler_lines(np.array([-1.0, 3.0]), 0.5, 1.0)
    np.testing.assert_allclose(lines["normal"], [0.5, 2.5])
    assert np.isnan(lines["anomalous"][0]) and lines["anomalous"][1] == 0.5
