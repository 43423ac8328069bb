"""Bad input is refused with a message naming the parameter, the value and the allowed range."""

import numpy as np
import pytest

import fdtd as f


@pytest.mark.parametrize("dx", [0.0, -0.1, float("nan"), float("inf")])
def test_bad_cell_size(dx):
    with pytest.raises(f.ParameterError, match=r"cell size dx = .* expected a finite (real )?number"):
        f.Grid((10, 10), (dx, 0.1), "te")


def test_bad_polarization_and_shape():
    with pytest.raises(f.ParameterError, match=r"polarization = 'TEM'.*expected one of"):
        f.Grid((10, 10), (0.1, 0.1), "TEM")
    with pytest.raises(f.ParameterError, match=r"nx = 1 .*expected an integer >= 2"):
        f.Grid((1, 10), (0.1, 0.1), "tm")
    with pytest.raises(f.ParameterError, match="needs 2"):
        f.Grid((10,), (0.1,), "tm")


def test_time_step_above_limit_refused_with_the_limit():
    model = f.Model(f.Grid((20,), (0.1,), "1d"), edges=f.Periodic())
    with pytest.raises(f.StabilityError, match=r"dt = 0.2 exceeds the stability limit dt_max = 0.1"):
        f.Solver(model, dt=0.2)
    with pytest.raises(f.ParameterError, match=r"courant .* = 1.5 .*\(0.0, 1.0\]"):
        f.Solver(model, courant=1.5)


def test_lorentz_pole_refuses_negative_omega_squared_and_gamma():
    with pytest.raises(f.ParameterError, match=r"omega0_sq \(Omega\^2\) = -1.0 .*> 0"):
        f.LorentzPole(1.0, omega0_sq=-1.0, gamma=0.1)
    with pytest.raises(f.ParameterError, match=r"gamma \(damping rate\) = -0.1 .*>= 0"):
        f.LorentzPole(1.0, 2.0, -0.1)
    with pytest.raises(f.ParameterError, match=r"delta_eps = -2.0 .*>= 0"):
        f.LorentzPole(-2.0, 2.0, 0.1)
    with pytest.raises(f.ParameterError, match=r"omega0 .* = nan .*finite"):
        f.LorentzPole(1.0, float("nan"), 0.1)
    with pytest.raises(f.ParameterError, match=r"omega_p = 0.0 .*> 0"):
        f.DrudePole(0.0, 0.1)
    with pytest.raises(f.ParameterError, match=r"eps_inf = nan"):
        f.Material(float("nan"))


def test_material_map_of_wrong_shape():
    g = f.Grid((10, 12), (0.1, 0.1), "te")
    with pytest.raises(f.ShapeError, match=r"shape \(12, 10\): expected the grid shape \(10, 12\)"):
        f.Model(g, material_map=np.zeros((12, 10), dtype=int), materials=[f.VACUUM])
    with pytest.raises(f.ParameterError, match=r"values span \[3, 3\]: expected indices in \[0, 0\]"):
        f.Model(g, material_map=np.full((10, 12), 3), materials=[f.VACUUM])


def test_nan_in_source_and_cpml_parameters():
    with pytest.raises(f.ParameterError, match="omega = nan"):
        f.ContinuousWave(float("nan"))
    with pytest.raises(f.ParameterError, match=r"CPML kappa_max = 0.5 .*>= 1"):
        f.CPML(10, kappa_max=0.5)
    with pytest.raises(f.ParameterError, match="CPML cells"):
        f.CPML(0)


def test_periodic_on_one_side_only_is_refused():
    g = f.Grid((10, 12), (0.1, 0.1), "te")
    with pytest.raises(f.ParameterError, match="periodic must be set on both sides"):
        f.Model(g, edges=[(f.Periodic(), f.PEC()), f.CPML(3)])


def test_source_in_absorbing_layer_or_wrong_component():
    g = f.Grid((40, 40), (0.1, 0.1), "te")
    model = f.Model(g, edges=f.CPML(8))
    s = f.Solver(model)
    with pytest.raises(f.GeometryError, match="inside the absorbing layer"):
        s.attach(f.line_current(s, "Ey", (0.3, 2.0), 1.0, f.ContinuousWave(1.0)))
    with pytest.raises(f.ParameterError, match=r"component = 'Ez' cannot be carried by polarization 'te'"):
        s.attach(f.PrescribedCurrent("Ez", [(20, 20)], 1.0, f.ContinuousWave(1.0)))
    with pytest.raises(f.GeometryError, match="spans"):
        s.attach(f.PrescribedCurrent("Ex", [(50, 20)], 1.0, f.ContinuousWave(1.0)))


def test_run_needs_a_stop_criterion():
    s = f.Solver(f.Model(f.Grid((20,), (0.1,), "1d"), edges=f.Periodic()))
    with pytest.raises(f.ParameterError, match="stop criterion"):
        s.advance()


def test_unstable_run_stops_with_clear_error(rng):
    import warnings

    model = f.Model(f.Grid((32, 32), (0.1, 0.1), "tm"), edges=f.Periodic())
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        s = f.Solver(model, dt=1.05 * model.max_stable_dt(), allow_unstable_dt=True, check_every=20)
    s.fields["Ez"][...] = rng.standard_normal((32, 32))
    with pytest.raises(f.InstabilityError, match=r"exceeds ten times what was put in|non-finite"):
        s.advance(steps=5000)
    assert s.step_count < 5000
    assert s.stop_reason.startswith("unstable")
