"""Material models: continuum and discrete permittivity, mixtures, stability inputs."""

import numpy as np
import pytest
from helpers import loglog_slope

import fdtd as f


def test_lorentz_limits_and_closed_form():
    # eps(w) = eps_inf + de W^2 / (W^2 - w^2 - i g w)  (e.g. Jackson, Classical
    # Electrodynamics, 3rd ed., eq. 7.51, one resonance; from memory)
    m = f.lorentz_material(2.0, 3.0, 1.5, 0.2)
    assert m.permittivity(0.0) == pytest.approx(5.0, abs=0, rel=1e-15)
    assert abs(m.permittivity(1e6) - 2.0) < 1e-10
    w = 1.1
    expected = 2.0 + 3.0 * 1.5**2 / (1.5**2 - w**2 - 1j * 0.2 * w)
    assert abs(m.permittivity(w) - expected) < 1e-14
    assert m.permittivity(w).imag > 0   # passive with exp(-i w t)


def test_drude_closed_form():
    # eps(w) = 1 - wp^2 / (w^2 + i g w)   (e.g. Ashcroft & Mermin, ch. 1; from memory)
    m = f.Material(1.0, (f.DrudePole(5.0, 0.3),))
    w = np.array([0.7, 2.0, 9.0])
    np.testing.assert_allclose(m.permittivity(w), 1 - 25.0 / (w**2 + 1j * 0.3 * w), rtol=1e-14)


def test_discrete_permittivity_converges_at_second_order_and_stays_passive():
    m = f.Material(1.3, (f.LorentzPole(2.0, 3.0, 0.5), f.DrudePole(2.0, 0.1)))
    w = np.linspace(0.3, 6.0, 40)
    dts = np.array([0.04, 0.02, 0.01])
    err = [np.max(np.abs(m.discrete_permittivity(w, dt) - m.permittivity(w))) for dt in dts]
    assert 1.95 < loglog_slope(dts, err) < 2.05
    for dt in dts:
        wd = np.linspace(0.01, np.pi / dt * 0.999, 500)
        assert np.all(m.discrete_permittivity(wd, dt).imag >= 0)


def test_scaled_material_is_volume_average():
    m = f.lorentz_material(2.0, 3.0, 1.5, 0.2)
    half = m.scaled(0.5)
    w = np.linspace(0.1, 4, 9)
    np.testing.assert_allclose(half.permittivity(w) + f.VACUUM.scaled(0.5).permittivity(w),
                               0.5 * (m.permittivity(w) + 1.0), rtol=1e-14)
    d = f.Material(1.0, (f.DrudePole(4.0, 0.3),))
    np.testing.assert_allclose(d.scaled(0.25).permittivity(w) - 0.25, 0.25 * (d.permittivity(w) - 1),
                               rtol=1e-13)


def test_interface_on_a_node_gets_the_average():
    m = f.lorentz_material(2.0, 3.0, 1.5, 0.2)
    g = f.Grid((4, 10), (0.1, 0.1), "te")
    model = f.Model(g, [(f.HalfSpace("y", below=0.5), m)], edges=[f.Periodic(), f.Periodic()])
    ex_on_interface = model.mixtures[model.mix_maps["Ex"][0, 5]]
    assert ex_on_interface.fractions == (0.5, 0.5)
    ey_below = model.mixtures[model.mix_maps["Ey"][0, 4]]   # y = 0.45: inside
    ey_above = model.mixtures[model.mix_maps["Ey"][0, 5]]   # y = 0.55: vacuum
    assert ey_below.fractions == (0.0, 1.0) and ey_above.fractions == (1.0, 0.0)
