"""Cherenkov emission of a line charge in 2D: threshold, angle, 2D Frank-Tamm, dispersive bands.

Analytic references (fdtd/reference/closed_forms.py; derivation of the 2D forms in
docs/theory/frank-tamm-2d.md):
the 2D analogue of the Frank-Tamm formula (I. Frank and I. Tamm, Dokl. Akad. Nauk
SSSR 14, 109 (1937); J. D. Jackson, Classical Electrodynamics, 3rd ed., sec. 13.4,
for the 3D original; from memory), the threshold beta = 1/n and the angle
cos(theta) = 1/(n beta) (Jackson sec. 13.4).  All runs are scenarios run through
``fdtd.run`` (the experiment procedure of ``gapwake run``): co-moving periodic cell,
electrostatic start, speed ramp, settling, Doppler-resolved work over a Hann-tapered
window of whole transit times.
"""

import numpy as np
from cases import constant, lorentz, run, scenario
from helpers import loglog_slope

import fdtd as f
from fdtd.reference import closed_forms as theory
from fdtd.sources.shapes import Shape

GLASS = f.Material(2.25, (), "n=1.5")
L = 4.0


def charge_case(medium: dict, v, length, cell, shape, tmp_path, transits=6, record=None, name="c.h5",
                must_settle=True, max_time=None, **run_keys):
    """A line charge crossing a uniform medium in a co-moving cell; its results file."""
    sc = scenario({"medium": medium}, {"background": "medium"},
                  {"cell": cell, "length": length, "height": 2.0, "absorber": 1.2},
                  {"kind": "charge", "speed": v, "speed_ramp": 2.0, "shape_order": shape.order,
                   "shape_scale": shape.scale},
                  run={"transits": transits, **({"max_time": max_time} if max_time else {}), **run_keys},
                  record=record, name=name)
    out, res = run(sc, tmp_path, name)
    if must_settle:
        assert out.value("steady") is True, name
    return out, res


def _per_harmonic(spec):
    sel = spec.kx > 0
    return spec.kx[sel], spec.omega[sel], spec.power[sel]


def test_frank_tamm_per_harmonic_within_3_percent_and_second_order(tmp_path):
    v, shape = 0.8, Shape(2, 1)
    errs = {}
    for d in (0.1, 0.05):
        # the narrow shape also radiates at grid-scale k_x (numerical Cherenkov: the plan
        # warns), where the total never settles; the resolved harmonics are what is checked
        _out, res = charge_case(constant(2.25), v, L, d, shape, tmp_path, name=f"ft{d}.h5",
                                must_settle=False)
        spec = res.spectrum()
        k, w, P = _per_harmonic(spec)
        expected = theory.row_harmonic_power(v, L, 2.25)
        lam_cells = 2 * np.pi / (w * 1.5) / d              # wavelength in the medium, in cells
        resolved = lam_cells >= 20
        rel = P / expected - 1
        if d == 0.05:
            assert resolved.sum() >= 3
            assert np.all(np.abs(rel[resolved]) < 0.03), rel[resolved]
        errs[d] = abs(rel[1])                              # m = 2
    assert 1.7 < loglog_slope([0.1, 0.05], [errs[0.1], errs[0.05]]) < 2.4, errs


def test_frank_tamm_like_for_like_with_the_source_form_factor(tmp_path):
    """With the deposited shape's form factor |F(kx) F(ky)|^2 the remaining error is the
    grid dispersion: below 1 % for every harmonic resolved by 20 cells."""
    v, shape, d = 0.8, Shape(3, 2), 0.05
    _out, res = charge_case(constant(2.25), v, L, d, shape, tmp_path)
    spec = res.spectrum()
    k, w, P = _per_harmonic(spec)
    ky = k * np.sqrt(v * v * 2.25 - 1)
    expected = theory.row_harmonic_power(v, L, 2.25) * shape.form_factor(k, d) ** 2 \
        * shape.form_factor(ky, d) ** 2
    resolved = 2 * np.pi / (w * 1.5) / d >= 20
    assert np.all(np.abs(P[resolved] / expected[resolved] - 1) < 0.01)
    # and the Doppler lines carry all the work measured by the ledger
    assert abs(spec.unresolved) < 2e-3 * spec.total


def test_threshold_found_within_the_speed_scan_resolution(tmp_path):
    """n = 1.5: threshold 2/3.  A wide source shape keeps grid-scale wavenumbers (whose
    numerical phase velocity in the medium is below c/n) from radiating."""
    shape = Shape(3, 4)
    speeds = [0.62, 0.64, 0.66, 0.68, 0.70]
    P = []
    for v in speeds:
        # below the threshold the power is grid noise whose relative settling test cannot
        # pass: only the speeds above it must settle (the others are marked not converged,
        # and a run that did not settle is not refined)
        # one grid: the automatic refinement (4x the run here) does not move the threshold
        out, _res = charge_case(constant(2.25), v, L, 0.05, shape, tmp_path, name=f"v{v}.h5",
                                must_settle=v > 2 / 3, grid_refinements=0)
        assert out.value("steady") is True or v < 2 / 3, v
        P.append(out.value("total_power", normalized=True))
    ref = P[-1]
    radiating = [p > 0.1 * ref for p in P]
    assert radiating == [False, False, False, True, True], np.array(P) / ref
    assert max(abs(p) for p in P[:3]) < 1e-2 * ref
    # just above: the analytic sum over harmonics (with the form factor) within 4 %
    v = 0.70
    m = np.arange(1, 41)
    k = 2 * np.pi * m / L
    ff = shape.form_factor(k, 0.05) ** 2 * shape.form_factor(k * np.sqrt(v * v * 2.25 - 1), 0.05) ** 2
    assert abs(ref / np.sum(theory.row_harmonic_power(v, L, 2.25) * ff) - 1) < 0.04


def test_cherenkov_angle_within_a_degree(tmp_path):
    v, d, half = 0.8, 0.05, 2.0
    _out, res = charge_case(constant(2.25), v, L, d, Shape(2, 1), tmp_path, transits=2,
                            record={"snapshots": 1, "snapshot_component": "Hz"})
    hz = res.array("snapshots/Hz")[-1]
    y = res.array("snapshots/y")
    rows = (y > 0.4) & (y < half - 0.2)
    Hk = np.fft.fft(hz[:, rows], axis=0)
    angles, weights = [], []
    for m in range(1, 6):   # each harmonic is a plane wave exp(i(kx x + ky y)) above the path
        ky = np.polyfit(y[rows], np.unwrap(np.angle(Hk[m])), 1)[0]
        angles.append(np.degrees(np.arctan2(abs(ky), 2 * np.pi * m / L)))
        weights.append(np.abs(Hk[m]).mean())
    measured = np.average(angles, weights=weights)
    assert abs(measured - np.degrees(theory.cherenkov_angle(v, 1.5))) < 1.0


def test_lorentz_medium_emits_only_in_its_cherenkov_band(tmp_path):
    """Lossless Lorentz medium, beta = 0.6: beta^2 eps(omega) > 1 only for
    omega_1 = 0.546 Omega < omega < Omega; nothing in the gap above Omega.  Near the
    longitudinal frequency omega_L (eps = 0) the charge also excites the longitudinal
    resonance of the lossless medium, which the (transverse) Frank-Tamm formula does
    not describe; those harmonics are left out of the zero check."""
    W0, v = 4.0, 0.6
    med = f.Material(1.0, (f.LorentzPole(1.25, W0, 0.0),), "lorentz")
    Lz = 6.0
    d = 0.04
    # lossless: the longitudinal resonance keeps absorbing, so the total never settles (the
    # run says so); three windows, and the harmonics in and out of the band are checked
    _out, res = charge_case(lorentz(1.0, (1.25, W0, 0.0)), v, Lz, d, Shape(2, 1), tmp_path,
                            must_settle=False, max_time=2.0 + 3 * 6 * Lz / v)
    spec = res.spectrum()
    k, w, P = _per_harmonic(spec)
    eps = np.real(med.permittivity(w))
    expected = theory.row_harmonic_power(v, Lz, eps)
    in_band = expected > 0
    omega_L = W0 * np.sqrt(2.25)
    resolved = 2 * np.pi / (w * np.sqrt(np.abs(eps))) / d >= 20
    check = in_band & resolved
    assert check.sum() >= 2
    assert np.all(np.abs(P[check] / expected[check] - 1) < 0.03)
    quiet = ~in_band & (np.abs(w - omega_L) > 0.5)
    assert np.all(np.abs(P[quiet]) < 1e-2 * P.max())
    # band edges: eps(omega_1) = 1/beta^2 gives omega_1 = Omega sqrt(1 - de/(1/beta^2 - 1)),
    # the resonance Omega closes the band; the simulated edges lie in the same harmonic gaps
    lower = W0 * np.sqrt(1 - 1.25 / (1 / v**2 - 1))
    edges = theory.cherenkov_band_edges(med, v, 8.0)
    np.testing.assert_allclose(edges, [lower, W0], rtol=1e-10)
    # the lossless longitudinal resonance near omega_L keeps absorbing (no steady state
    # there, see the docstring): left out of the band edges as of the zero check
    emitting = (P > 0.05 * P.max()) & (np.abs(w - omega_L) > 0.5)
    first, last = w[emitting][0], w[emitting][-1]
    dw = 2 * np.pi * v / Lz
    assert first - dw < edges[0] <= first
    assert last <= edges[1] < last + dw
