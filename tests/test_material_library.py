"""Material library: Sellmeier formulas, polar crystals, optical tables and passive pole fits.

The CSV fixtures in tests/data/ are written by :func:`write_fixtures` below from known poles
(closed forms in eV, independent of the library); regenerate them with
``python tests/test_material_library.py``.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import scipy.constants as sc

import fdtd as f
from fdtd.media import formulas as fm
from fdtd.media import pole_fit as pf
from fdtd.media import tables as tb
from fdtd.viz.pole_fit import plot_pole_fit

DATA = Path(__file__).parent / "data"
ELL = 1e-6            # reference length (m) used throughout
EV_PER_UM = sc.h * sc.c / sc.e / 1e-6     # photon energy (eV) times wavelength (um)

# Malitson's fused-silica Sellmeier coefficients: I. H. Malitson, J. Opt. Soc. Am. 55, 1205
# (1965), as reproduced on refractiveindex.info (shelf glass, book fused_silica, page Malitson),
# checked with the search tool; lambda_i in um (the formula uses lambda_i^2).
MALITSON_B = (0.6961663, 0.4079426, 0.8974794)
MALITSON_LAMBDA_UM = (0.0684043, 0.1162414, 9.896161)

# Known poles of the fixtures, in eV (eps_inf, [(delta_eps, E0, hbar*gamma)], [(hbar*wp, hbar*g)]).
FIXTURES = {
    "two_lorentz_energy_eps.csv": dict(
        header="energy_eV,eps1,eps2", eps_inf=1.5,
        lorentz=[(2.0, 1.5, 0.2), (1.0, 4.0, 0.5)], drude=[],
        abscissa=np.linspace(0.5, 6.0, 111)),
    "drude_lorentz_wavelength_nk.csv": dict(
        header="wavelength_um,n,k", eps_inf=2.0,
        lorentz=[(1.2, 3.0, 0.6)], drude=[(8.0, 0.1)],
        abscissa=np.linspace(0.2, 2.0, 91)),
}


def _eps_ev(E, eps_inf, lorentz, drude):
    """Closed-form permittivity with every frequency written as an energy in eV."""
    E = np.asarray(E, dtype=float)
    eps = np.full(E.shape, eps_inf, dtype=complex)
    for de, E0, G in lorentz:
        eps += de * E0**2 / (E0**2 - E**2 - 1j * G * E)
    for Ep, G in drude:
        eps -= Ep**2 / (E**2 + 1j * G * E)
    return eps


def fixture_table(name: str) -> np.ndarray:
    """The rows of fixture ``name`` (abscissa, first, second) as written to tests/data/."""
    spec = FIXTURES[name]
    x = spec["abscissa"]
    E = x if spec["header"].startswith("energy_eV") else EV_PER_UM / x
    eps = _eps_ev(E, spec["eps_inf"], spec["lorentz"], spec["drude"])
    if spec["header"].endswith("n,k"):
        nk = np.sqrt(eps)          # principal branch: Im n has the sign of Im eps (> 0 here)
        return np.column_stack([x, nk.real, nk.imag])
    return np.column_stack([x, eps.real, eps.imag])


def write_fixtures(folder: Path) -> None:
    folder.mkdir(parents=True, exist_ok=True)
    for name, spec in FIXTURES.items():
        np.savetxt(folder / name, fixture_table(name), delimiter=",", fmt="%.15e",
                   header=spec["header"], comments="")


def _omega_to_ev(w):
    return np.asarray(w) * f.UnitSystem(ELL).angular_frequency * sc.hbar / sc.e


def _assert_passive(material, lo=1e-3, hi=1e3):
    w = np.geomspace(lo, hi, 4000)
    assert np.all(np.asarray(material.permittivity(w)).imag >= 0.0)


# ---------------------------------------------------------------------------
# Sellmeier
# ---------------------------------------------------------------------------

def test_malitson_fused_silica_index_at_helium_d_line():
    m = fm.from_sellmeier(MALITSON_B, np.square(MALITSON_LAMBDA_UM), "um", ell=ELL,
                          name="fused silica")
    n = fm.refractive_index_at_wavelength(m, 587.6e-9, ELL)
    # n = 1.4585 at 587.6 nm: Malitson (1965); refractiveindex.info lists n = 1.45846 at
    # 0.5876 um for this formula (checked with the search tool).
    assert abs(n.real - 1.4585) < 1e-4
    assert abs(n.real - 1.45846) < 1e-5
    assert n.imag == 0.0                       # Sellmeier terms are lossless poles
    # n ~ 1.444 at 1550 nm (telecom value for fused silica; from memory)
    assert abs(fm.refractive_index_at_wavelength(m, 1.55e-6, ELL).real - 1.444) < 1e-3


def test_sellmeier_poles_reproduce_the_formula_for_any_ell_and_unit():
    B, lam = np.array(MALITSON_B), np.array(MALITSON_LAMBDA_UM)
    wl_um = np.array([0.25, 0.4, 0.6328, 1.0, 2.0, 3.5])
    n2_formula = 1 + np.sum(B[:, None] * wl_um**2 / (wl_um**2 - lam[:, None] ** 2), axis=0)
    for ell in (1e-6, 3.7e-7, 2e-5):
        m = fm.from_sellmeier(B, lam**2, "um", ell=ell)
        n = fm.refractive_index_at_wavelength(m, wl_um * 1e-6, ell)
        np.testing.assert_allclose(n.real**2, n2_formula, rtol=1e-13)
        # the resonances sit at omega_i = 2 pi ell / lambda_i (normalized)
        np.testing.assert_allclose([p.omega0 for p in m.poles], 2 * np.pi * ell / (lam * 1e-6),
                                   rtol=1e-14)
        assert all(p.delta_eps == b and p.gamma == 0.0 for p, b in zip(m.poles, B, strict=True))
    m_nm = fm.from_sellmeier(B, (lam * 1e3) ** 2, "nm", ell=ELL)
    m_um = fm.from_sellmeier(B, lam**2, "um", ell=ELL)
    np.testing.assert_allclose([p.omega0 for p in m_nm.poles], [p.omega0 for p in m_um.poles],
                               rtol=1e-14)


def test_sellmeier_folding_of_far_resonances():
    B, lam = np.array(MALITSON_B), np.array(MALITSON_LAMBDA_UM)
    full = fm.from_sellmeier(B, lam**2, ell=ELL)
    folded = fm.from_sellmeier(B, lam**2, ell=ELL, fold_above=20.0)   # drops the two UV poles
    assert len(folded.poles) == 1
    assert folded.eps_inf == pytest.approx(1 + B[0] + B[1], rel=1e-15, abs=0)
    w = 2 * np.pi * ELL / 1.55e-6
    # error of folding ~ sum B_i (w/W_i)^2 for w << W_i
    bound = sum(p.delta_eps * (w / p.omega0) ** 2 for p in full.poles[:2])
    err = abs(folded.permittivity(w) - full.permittivity(w))
    assert 0.5 * bound < err < 1.5 * bound
    zero_c = fm.from_sellmeier([0.5, 1.0], [0.0, 0.01], ell=ELL)     # C = 0: a constant term
    assert zero_c.eps_inf == 1.5 and len(zero_c.poles) == 1


@pytest.mark.parametrize("kwargs, match", [
    (dict(B=[1.0], C=[-0.01]), r"Sellmeier C\[0\] = -0.01 .*>= 0"),
    (dict(B=[-1.0], C=[0.01]), r"Sellmeier B\[0\] = -1.0 .*>= 0"),
    (dict(B=[1.0, 2.0], C=[0.01]), r"B has 2 terms and C has 1"),
    (dict(B=[1.0], C=[0.01], wavelength_unit="eV"), r"wavelength_unit = 'eV' .*expected a length"),
    (dict(B=[1.0], C=[0.01], wavelength_unit="bogus"), r"wavelength_unit = 'bogus' .*not a unit"),
    (dict(B=[1.0], C=[float("nan")]), r"Sellmeier C contains 1 non-finite"),
])
def test_sellmeier_bad_input(kwargs, match):
    with pytest.raises(f.ParameterError, match=match):
        fm.from_sellmeier(ell=ELL, **kwargs)
    with pytest.raises(f.ParameterError, match=r"ell .* = 0.0"):
        fm.from_sellmeier([1.0], [0.01], ell=0.0)


# ---------------------------------------------------------------------------
# Polar crystals
# ---------------------------------------------------------------------------

def test_polar_crystal_is_the_factorised_one_phonon_form():
    w_to, w_lo, g, einf = 2.0, 2.6, 0.05, 6.5
    m = fm.polar_crystal(w_to, w_lo, g, einf)
    w = np.linspace(0.1, 5.0, 37)
    expected = einf * (w_lo**2 - w**2 - 1j * g * w) / (w_to**2 - w**2 - 1j * g * w)
    np.testing.assert_allclose(m.permittivity(w), expected, rtol=1e-13)
    # LST: eps(0)/eps_inf = (w_LO/w_TO)^2 (R. H. Lyddane, R. G. Sachs and E. Teller, "On the
    # polar vibrations of alkali halides", Phys. Rev. 59, 673 (1941); checked, search tool)
    assert m.permittivity(0.0).real / einf == pytest.approx((w_lo / w_to) ** 2, rel=1e-14, abs=0)
    _assert_passive(m)


def test_polar_crystal_zero_at_lo_and_reststrahlen_band():
    w_to, w_lo, einf = 2.0, 2.6, 6.5
    lossless = fm.polar_crystal(w_to, w_lo, 0.0, einf)
    assert abs(lossless.permittivity(w_lo)) < 1e-13 * einf
    band = np.linspace(w_to * 1.001, w_lo * 0.999, 50)
    assert np.all(lossless.permittivity(band).real < 0)
    outside = np.concatenate([np.linspace(0.1, w_to * 0.999, 20), np.linspace(w_lo * 1.001, 9, 20)])
    assert np.all(lossless.permittivity(outside).real > 0)
    # with loss, eps(w_LO) = eps_inf (-i g w_LO)/(w_TO^2 - w_LO^2 - i g w_LO): small, ~ gamma
    for g in (1e-3, 1e-2):
        e_lo = fm.polar_crystal(w_to, w_lo, g, einf).permittivity(w_lo)
        lead = einf * g * w_lo / (w_lo**2 - w_to**2)
        rel = 2 * (g * w_lo / (w_lo**2 - w_to**2)) ** 2
        assert e_lo.imag == pytest.approx(lead, rel=rel, abs=0)
        assert abs(e_lo.real) < 2 * einf * (g * w_lo / (w_lo**2 - w_to**2)) ** 2


def test_polar_crystal_unit_conversions_agree_with_unit_system():
    units = f.UnitSystem(ELL)
    m_ev = fm.polar_crystal_ev(0.10, 0.12, 0.001, 6.0, units=units)
    to = units.angular_frequency_from_ev
    m = fm.polar_crystal(to(0.10), to(0.12), to(0.001), 6.0)
    w = np.linspace(0.3, 0.8, 11)
    np.testing.assert_allclose(m_ev.permittivity(w), m.permittivity(w), rtol=1e-12)
    np.testing.assert_allclose(fm.polar_crystal_ev(0.10, 0.12, 0.001, 6.0, ell=ELL)
                               .permittivity(w), m.permittivity(w), rtol=1e-12)
    # wavenumbers: omega = 2 pi c nu (nu in 1/m), divided by the unit c/ell
    m_cm = fm.polar_crystal_wavenumbers(797.0, 969.0, 4.76, 6.56, ell=ELL)
    assert m_cm.poles[0].omega0 == pytest.approx(
        2 * np.pi * sc.c * 797.0e2 / units.angular_frequency, rel=1e-14, abs=0)
    # (abs=0: gamma is 3e-3 here, and approx's default abs of 1e-12 would loosen rel=1e-14)
    assert m_cm.poles[0].gamma == pytest.approx(
        2 * np.pi * sc.c * 4.76e2 / units.angular_frequency, rel=1e-14, abs=0)


def test_silicon_carbide_reststrahlen_band_in_the_observed_range():
    m = fm.silicon_carbide(ell=ELL)
    wl_um = np.linspace(9.0, 14.0, 5001)
    eps = fm.refractive_index_at_wavelength(m, wl_um * 1e-6, ELL) ** 2
    negative = wl_um[eps.real < 0]
    # Re eps < 0 between ~10.3 um (LO) and ~12.5 um (TO); SiC shows its phonon feature in
    # 10-13 um: H. Mutschke et al., Astron. Astrophys. 345, 187 (1999), abstract (search tool).
    assert 10.0 < negative.min() < 10.5 and 12.3 < negative.max() < 13.0
    assert np.all(np.diff(negative) < 1.5e-3)      # one contiguous band
    p = fm.SIC_PHONON_CM       # LST with the library's own (from-memory) numbers
    assert m.permittivity(0.0).real == pytest.approx(p["eps_inf"] * (p["nu_LO"] / p["nu_TO"]) ** 2)


def test_polar_crystal_bad_input():
    with pytest.raises(f.ParameterError, match=r"omega_LO = 1.5 .*> omega_TO = 2.0"):
        fm.polar_crystal(2.0, 1.5, 0.1, 5.0)
    with pytest.raises(f.ParameterError, match=r"gamma .* = -0.1 .*>= 0"):
        fm.polar_crystal(2.0, 2.5, -0.1, 5.0)
    with pytest.raises(f.ParameterError, match="exactly one of units"):
        fm.polar_crystal_ev(0.1, 0.12, 0.001, 6.0)
    with pytest.raises(f.ParameterError, match="exactly one of units"):
        fm.polar_crystal_wavenumbers(797, 969, 4.76, 6.56, units=f.UnitSystem(ELL), ell=ELL)


# ---------------------------------------------------------------------------
# Optical tables
# ---------------------------------------------------------------------------

def test_committed_fixtures_match_their_generator():
    for name, spec in FIXTURES.items():
        path = DATA / name
        assert path.read_text().splitlines()[0] == spec["header"]
        np.testing.assert_allclose(np.loadtxt(path, delimiter=",", skiprows=1),
                                   fixture_table(name), rtol=1e-14)


def test_table_units_all_give_the_same_omega_and_eps(tmp_path):
    true = f.Material(1.5, (f.LorentzPole(2.0, 3.0, 0.4),))
    wl_m = np.linspace(0.8e-6, 3e-6, 7)
    w = 2 * np.pi * ELL / wl_m                          # normalized omega
    w_si = w * sc.c / ELL                               # rad/s
    eps = true.permittivity(w)
    nk = np.sqrt(eps)
    abscissae = {
        "wavelength_um": wl_m * 1e6, "wavelength (nm)": wl_m * 1e9, "frequency_THz": w_si / 2e12 / np.pi,
        "omega_rad_s": w_si, "energy_eV": w_si * sc.hbar / sc.e,
        "wavenumber_cm-1": 1 / (wl_m * 100), "Energy_meV": w_si * sc.hbar / sc.e * 1e3,
        # any unit of the right dimension that pint reads
        "wavelength_angstrom": wl_m * 1e10, "frequency (GHz)": w_si / 2e9 / np.pi,
        "wavenumber_1/m": 1 / wl_m, "omega_rad_per_s": w_si,
    }
    for col, x in abscissae.items():
        for pair, (a, b) in {"n,k": (nk.real, nk.imag), "eps1,eps2": (eps.real, eps.imag)}.items():
            p = tmp_path / "t.csv"
            rows = "\n".join(f"{xi:.17g},{ai:.17g},{bi:.17g}" for xi, ai, bi in zip(x, a, b, strict=True))
            p.write_text(f"# comment line\n{col},{pair}\n{rows}\n")
            t = tb.read_optical_table(p, ELL)
            np.testing.assert_allclose(t.omega, np.sort(w), rtol=1e-12, err_msg=col)
            np.testing.assert_allclose(t.eps, eps[np.argsort(w)], rtol=1e-12, err_msg=col)
    # whitespace-separated, extra column chosen with columns=
    p = tmp_path / "ws.txt"
    p.write_text("wavelength_um  n  k  T_K\n" + "\n".join(
        f"{x} {a} {b} 300" for x, a, b in zip(wl_m * 1e6, nk.real, nk.imag, strict=True)))
    t = tb.read_optical_table(p, ELL, columns=("wavelength_um", "n", "k"))
    np.testing.assert_allclose(t.eps, eps[np.argsort(w)], rtol=1e-12)


@pytest.mark.parametrize("text, columns, match", [
    ("wavelength_um,n\n1.0,1.5\n", None, r"line 1: .*not one ordinate pair \(missing column 'k'\)"),
    ("wavelength_um,n,x\n1.0,1.5,0\n", ("wavelength_um", "n", "k"), r"line 1: missing column 'k'"),
    ("wavelength_um,n,k\n1.0,1.5,0.0\n1.1,abc,0.0\n", None,
     r"line 3: column 'n' = 'abc' is not a number"),
    ("wavelength_bogus,n,k\n1.0,1.5,0\n", None, r"line 1: unknown unit 'bogus'.*expected a wavelength unit"),
    ("wavelength_eV,n,k\n1.0,1.5,0\n", None, r"line 1: unit 'eV' .*expected a wavelength unit"),
    ("colour,n,k\n1.0,1.5,0\n", None, r"line 1: .*no abscissa column"),
    ("# c\nenergy_eV,eps1,eps2\n1.0,2.0\n", None, r"line 3: 2 fields: expected 3"),
    ("energy_eV,eps1,eps2\n1.0,2.0,nan\n", None, r"line 2: column 'eps2' = 'nan'.*finite"),
    ("wavelength_um,n,k\n-1.0,1.5,0.1\n", None, r"line 2: .*expected a wavelength > 0"),
    ("1.0,1.5,0.1\n", None, r"line 1: .*looks like numbers"),
    ("energy_eV,eps1,eps2\n", None, r"line 1: header but no data rows"),
    ("", None, r"is empty"),
    ("energy_eV,eps1,eps2\n1,2,-0.5\n2,2,-0.4\n3,2,0.1\n", None, r"imaginary parts .* negative"),
])
def test_bad_tables_name_file_and_line(tmp_path, text, columns, match):
    p = tmp_path / "bad_table.csv"
    p.write_text(text)
    with pytest.raises(f.ParameterError, match=match) as info:
        tb.read_optical_table(p, ELL, columns=columns)
    assert "bad_table.csv" in str(info.value)


def test_missing_table_file(tmp_path):
    with pytest.raises(f.ParameterError, match=r"nothere.csv' cannot be read"):
        tb.read_optical_table(tmp_path / "nothere.csv", ELL)


# ---------------------------------------------------------------------------
# Pole fits
# ---------------------------------------------------------------------------

def _check_recovered(fit, spec):
    assert fit.eps_inf == pytest.approx(spec["eps_inf"], rel=1e-3)
    got_l = [(d, *_omega_to_ev([w0, g])) for d, w0, g in fit.lorentz]
    for got, want in zip(got_l, sorted(spec["lorentz"], key=lambda t: t[1]), strict=True):
        np.testing.assert_allclose(got, want, rtol=1e-3)
    got_d = [tuple(_omega_to_ev([wp, g])) for wp, g in fit.drude]
    for got, want in zip(got_d, sorted(spec["drude"]), strict=True):
        np.testing.assert_allclose(got, want, rtol=1e-3)


@pytest.mark.parametrize("name", sorted(FIXTURES))
def test_fixture_poles_are_recovered(name):
    spec = FIXTURES[name]
    fit = pf.material_from_table(DATA / name, ELL, n_lorentz=len(spec["lorentz"]),
                                 n_drude=len(spec["drude"]), max_error=1e-8)
    _check_recovered(fit, spec)
    assert fit.residual < 1e-10 and fit.max_error < 1e-9
    # abs=0: the residual is ~1e-15 (measured), far below approx's default abs of 1e-12,
    # which made this comparison pass for any residual under 1e-12
    assert fit.residual == pytest.approx(np.sqrt(np.mean(fit.point_errors**2)), rel=1e-12, abs=0)
    assert fit.material.name == Path(name).stem
    _assert_passive(fit.material)


def test_noisy_table_gives_a_passive_fit_with_an_honest_residual(rng):
    spec = FIXTURES["two_lorentz_energy_eps.csv"]
    t = tb.read_optical_table(DATA / "two_lorentz_energy_eps.csv", ELL)
    sigma = 0.01                                            # 1 % complex relative noise
    noisy = t.eps * (1 + sigma * (rng.standard_normal(t.eps.size)
                                  + 1j * rng.standard_normal(t.eps.size)))
    fit = pf.fit_poles(t.omega, noisy, n_lorentz=2)
    # rms of |noise|/|eps| is sigma*sqrt(2); a good fit leaves about that (a little less)
    assert 0.6 * sigma * math.sqrt(2) < fit.residual < 1.2 * sigma * math.sqrt(2)
    assert fit.max_error == pytest.approx(fit.point_errors.max())
    np.testing.assert_allclose(fit.eps_fit, fit.material.permittivity(t.omega), rtol=1e-14)
    for d, w0, g in fit.lorentz:
        assert d >= 0 and w0 > 0 and g >= 0
    _assert_passive(fit.material)
    for got, want in zip(fit.lorentz, spec["lorentz"], strict=True):      # close to the truth
        assert _omega_to_ev(got[1]) == pytest.approx(want[1], rel=0.02)
        assert got[0] == pytest.approx(want[0], rel=0.05)


def test_data_that_want_negative_parameters_get_passive_bounds():
    w = np.linspace(0.5, 10.0, 120)
    # eps_inf below 1 and a *negative* oscillator (gain) at w = 6: not passive
    eps = (0.6 + 1.0 * 9 / (9 - w**2 - 0.3j * w) - 0.5 * 36 / (36 - w**2 - 0.6j * w))
    fit = pf.fit_poles(w, eps, n_lorentz=2, n_drude=1)
    assert fit.eps_inf >= 1.0
    for d, w0, g in fit.lorentz:
        assert d >= 0 and w0 > 0 and g >= 0
    for wp, g in fit.drude:
        assert wp > 0 and g >= 0
    assert "eps_inf" in fit.active_bounds
    assert fit.residual > 1e-2                     # the passive model cannot follow the gain
    _assert_passive(fit.material)
    # eps_inf_min lowered: eps_inf may go below 1 but stays positive
    low = pf.fit_poles(w, eps, n_lorentz=2, eps_inf_min=0.1)
    assert 0.1 <= low.eps_inf < 1.0


def test_fixed_eps_inf_and_weights():
    true = f.Material(2.25, (f.LorentzPole(1.0, 2.0, 0.2), f.DrudePole(1.5, 0.05)))
    w = np.linspace(0.5, 5.0, 60)
    fit = pf.fit_poles(w, true.permittivity(w), n_lorentz=1, n_drude=1, eps_inf=2.25,
                       weights=np.linspace(1, 2, w.size))
    assert fit.eps_inf == 2.25 and not fit.eps_inf_fitted
    np.testing.assert_allclose(fit.lorentz[0], (1.0, 2.0, 0.2), rtol=1e-6)
    np.testing.assert_allclose(fit.drude[0], (1.5, 0.05), rtol=1e-6)
    assert "fixed" in fit.summary()


def test_fit_plot_writes_png_and_pdf(tmp_path):
    true = f.lorentz_material(1.5, 2.0, 3.0, 0.4)
    w = np.linspace(1.0, 6.0, 40)
    fit = pf.fit_poles(w, true.permittivity(w), n_lorentz=1)
    png = plot_pole_fit(fit, tmp_path / "fit.png")
    pdf = plot_pole_fit(fit, tmp_path / "fit.pdf", title="one Lorentz pole")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and png.stat().st_size > 5000
    assert pdf.read_bytes()[:5] == b"%PDF-"


@pytest.mark.parametrize("kwargs, match", [
    (dict(omega=[1.0, 2.0], eps_values=[1.0]), r"same length"),
    (dict(omega=[0.0, 1.0, 2.0], eps_values=[1, 2, 3]), r"entries <= 0"),
    (dict(omega=[1.0, 2.0, 3.0], eps_values=[1, 2, 3], n_lorentz=0), r"at least one pole"),
    (dict(omega=[1.0, 2.0, 3.0], eps_values=[1, 2, 3], n_lorentz=-1), r"n_lorentz = -1"),
    (dict(omega=[1.0], eps_values=[2.0 + 0.1j], n_lorentz=1), r"at least as many data"),
    (dict(omega=[1.0, 2.0, 3.0], eps_values=[1, 2, 3], eps_inf=-1.0), r"eps_inf = -1.0"),
    (dict(omega=[1.0, 2.0, 3.0], eps_values=[1, 2, 3], weights=[1, -1, 1]), r"weights"),
])
def test_fit_bad_input(kwargs, match):
    with pytest.raises(f.ParameterError, match=match):
        pf.fit_poles(**kwargs)


def test_material_from_table_refuses_a_poor_fit():
    with pytest.raises(f.ParameterError, match=r"max relative error .* expected <= max_error"):
        pf.material_from_table(DATA / "two_lorentz_energy_eps.csv", ELL, n_lorentz=1,
                               max_error=1e-3)


if __name__ == "__main__":
    write_fixtures(DATA)
    print(f"wrote {', '.join(FIXTURES)} to {DATA}")
