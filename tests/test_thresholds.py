"""Analytic speed thresholds (fdtd.reference.thresholds) and the `gapwake threshold` command.

Outside results used (beside each check):
* Cherenkov condition beta^2 eps(omega) > 1, threshold 1/n in a constant dielectric:
  J. D. Jackson, Classical Electrodynamics, 3rd ed. (1999), sec. 13.4 (from memory).
* Surface plasmon of a Drude metal / vacuum interface, k^2 = w^2 eps/(eps + 1):
  S. A. Maier, Plasmonics: Fundamentals and Applications (2007), eq. (2.14) (from memory).
* Nonlocal (exciton-polariton) pole chi = delta_eps W^2/(W^2 + beta^2 k^2 - w^2):
  J. J. Hopfield and D. G. Thomas, Phys. Rev. 132, 563 (1963) (as cited in fdtd/materials.py).
Everything else is compared with closed forms derived in the docstrings and in
docs/theory/thresholds.md, or with the simulator itself.
"""

import json
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import fdtd as f
from fdtd.reference import modes as M
from fdtd.reference import thresholds as T
from fdtd.scenario.threshold_inputs import resolve_inputs
from fdtd.space.stability import max_stable_dt
from fdtd.cli import main

W, DE, EINF, W0 = 1.0, 2.0, 1.0, 0.6          # the Lorentz medium of the simulator checks
LZ = f.Material(EINF, (f.LorentzPole(DE, W, 0.0),), "lossless Lorentz")


# ----------------------------------------------------------------------------- (a) constant eps
@pytest.mark.parametrize("n", [1.5, 2.4])
def test_constant_dielectric_cherenkov_threshold_is_one_over_n(n):
    # Jackson sec. 13.4: a charge radiates iff beta n > 1 (from memory)
    glass = f.Material(n * n, (), "glass")
    th = T.cherenkov_threshold(glass)
    assert th.speed == pytest.approx(1 / n, rel=1e-14)
    assert th.set_by == "mode" and th.k is None          # no dispersion: every k has w/k = 1/n
    assert T.cherenkov_threshold(glass, T.Cutoff(5.0)).speed == pytest.approx(1 / n, rel=1e-14)
    # the band: all frequencies just above threshold, none below (2D bulk)
    assert T.cherenkov_band(glass, 1 / n * 1.01) == [(0.0, math.inf)]
    assert T.cherenkov_band(glass, 1 / n * 0.99) == []


@pytest.mark.parametrize("n", [1.5, 2.4])
def test_constant_dielectric_anomalous_threshold_closed_form(n):
    glass = f.Material(n * n, (), "glass")
    # No cutoff: k v - w0/gamma = k/n gives k = w0/(gamma (v - 1/n)) > 0 (and omega = k/n > 0)
    # iff v > 1/n, so the threshold is 1/n, approached as k -> inf.
    th = T.anomalous_threshold(glass, W0)
    assert th.speed == pytest.approx(1 / n, rel=1e-12) and th.set_by == "k -> inf"
    v = 1.2 / n
    k = W0 * math.sqrt(1 - v * v) / (v - 1 / n)
    assert T.mode_frequencies(glass, k)[0] == pytest.approx(k * v - W0 * math.sqrt(1 - v * v), rel=1e-12)
    # With a cutoff k_max the threshold is where the line first touches the mode at k_max:
    # k_max (v - 1/n) = w0 sqrt(1 - v^2), i.e. (k^2 + w0^2) v^2 - 2 k^2 v/n + k^2/n^2 - w0^2 = 0,
    # solved here independently of the module (root above 1/n).
    for k_max in (0.5, 3.0, 40.0):
        th = T.anomalous_threshold(glass, W0, T.Cutoff(k_max))
        roots = np.roots([k_max**2 + W0**2, -2 * k_max**2 / n, k_max**2 / n**2 - W0**2]).real
        v_exact = roots[roots > 1 / n].min()
        assert th.speed == pytest.approx(v_exact, rel=1e-12)
        assert th.set_by == "cutoff" and th.k == pytest.approx(k_max)
        assert abs(k_max * (th.speed - 1 / n) - W0 * math.sqrt(1 - th.speed**2)) < 1e-12


# ----------------------------------------------------------------------------- (b) Lorentz medium
@pytest.mark.parametrize("beta", [0.3, 0.5, 0.7])
def test_one_pole_band_edges_against_analytic_root(beta):
    # beta^2 eps(w) = 1 with eps = eps_inf + D W^2/(W^2 - w^2): multiplying by (W^2 - w^2) it is
    # linear in u = w^2: u = W^2 (1 - beta^2 D/(1 - beta^2 eps_inf)) (beta^2 eps_inf < 1), and the
    # band ends at the resonance W, where eps jumps to -inf (condition: Jackson sec. 13.4).
    med = f.Material(1.2, (f.LorentzPole(DE, W, 0.0),), "one pole")
    band = T.cherenkov_band(med, beta)
    eps_s = 1.2 + DE
    if beta**2 * eps_s > 1:
        assert band == [(0.0, pytest.approx(W, rel=1e-12))]
    else:
        u1 = W**2 * (1 - beta**2 * DE / (1 - beta**2 * 1.2))
        assert len(band) == 1
        assert band[0][0] == pytest.approx(math.sqrt(u1), rel=1e-10)
        assert band[0][1] == pytest.approx(W, rel=1e-12)


@pytest.mark.parametrize("beta", [0.45, 0.55, 0.95])
def test_two_pole_band_edges_against_quadratic_roots(beta):
    # Two lossless poles: (beta^2 eps_inf - 1)(W1^2-u)(W2^2-u) + beta^2 D1 W1^2 (W2^2-u)
    # + beta^2 D2 W2^2 (W1^2-u) = 0 is quadratic in u = w^2; every resonance is an edge too.
    e_inf, (d1, w1), (d2, w2) = 1.5, (1.0, 1.0), (0.5, 2.0)
    med = f.Material(e_inf, (f.LorentzPole(d1, w1, 0.0), f.LorentzPole(d2, w2, 0.0)), "two poles")
    b2 = beta**2
    a = b2 * e_inf - 1
    c2 = a
    c1 = -a * (w1**2 + w2**2) - b2 * d1 * w1**2 - b2 * d2 * w2**2
    c0 = a * w1**2 * w2**2 + b2 * d1 * w1**2 * w2**2 + b2 * d2 * w2**2 * w1**2
    u = np.roots([c2, c1, c0])
    u = u[np.isreal(u)].real
    expected = sorted([math.sqrt(x) for x in u if x > 0] + [w1, w2])
    band = T.cherenkov_band(med, beta, omega_max=10.0)
    edges = [e for ab in band for e in ab if 0.0 < e < 10.0]
    assert len(edges) == len(expected)
    assert np.allclose(edges, expected, rtol=1e-9)
    # and the band is where beta^2 eps > 1 (spot check at the midpoints)
    for lo, hi in band:
        mid = 0.5 * (lo + min(hi, 10.0))
        assert b2 * med.permittivity(mid).real > 1


def test_local_continuum_thresholds_fall_as_one_over_kmax():
    # Lossless local Lorentz medium: from u eps(u) = k^2 the lower branch flattens,
    # w = W (1 - D W^2/(2 k^2)) + O(1/k^4), so its phase velocity -> 0 and, with a cutoff,
    # Cherenkov: v_min k_max = W (1 - D W^2/(2 k_max^2)) + O(1/k^4);
    # anomalous: v_min k_max = w + w0 sqrt(1 - v^2) -> W + w0, corrections O(1/k^2).
    assert T.cherenkov_threshold(LZ).speed == 0.0
    th = T.anomalous_threshold(LZ, W0)
    assert th.speed == 0.0 and th.set_by == "k -> inf"
    prev = None
    for k_max in (1e2, 1e3, 1e4):
        both = T.thresholds(LZ, W0, T.Cutoff(k_max))
        ch, an = both["cherenkov"], both["anomalous"]
        assert ch.set_by == an.set_by == "cutoff" and ch.k == an.k == pytest.approx(k_max)
        assert abs(ch.speed * k_max - W * (1 - DE * W**2 / (2 * k_max**2))) < 10 / k_max**4
        assert abs(an.speed * k_max - (W + W0)) < 3 / k_max**2
        if prev is not None:
            assert an.speed == pytest.approx(prev / 10, rel=1e-3)        # 1/k_max
        prev = an.speed


@pytest.mark.parametrize("beta_nl", [0.05, 0.3])
def test_nonlocal_threshold_converges_to_beta_nl(beta_nl):
    # Hopfield-Thomas pole: resonance W^2 + beta^2 k^2, so the lower branch obeys
    # w^2 = beta^2 k^2 + c + O(1/k^2), c = W^2 (1 - D beta^2/(1 - beta^2 eps_inf)) (derived in the
    # draft docs); its phase velocity tends to beta_nl (from above when c > 0, as here) instead of 0.
    # Hence v_min(k_max) -> beta_nl: Cherenkov (v - beta) k^2 -> c/(2 beta); anomalous, expanding
    # the closed form of fdtd.reference.thresholds.anomalous_speed in 1/k:
    # (v - beta) k = w0 sqrt(1 - beta^2) + (c/(2 beta) - beta w0^2)/k + O(1/k^2)
    # (the first term is the oscillator's time-dilated frequency at v ~ beta).
    nl = M.with_nonlocal(LZ, beta_nl)
    c = W**2 * (1 - DE * beta_nl**2 / (1 - beta_nl**2 * EINF))
    assert c > 0
    th = T.thresholds(nl, W0)
    assert th["cherenkov"].speed == pytest.approx(beta_nl, rel=1e-12)
    assert th["anomalous"].speed == pytest.approx(beta_nl, rel=1e-12)
    assert th["anomalous"].set_by == "k -> inf"
    for k_max in (1e3, 1e4):
        th = T.thresholds(nl, W0, T.Cutoff(k_max))
        assert (th["cherenkov"].speed - beta_nl) * k_max**2 == pytest.approx(c / (2 * beta_nl), rel=2e-2)
        assert (th["anomalous"].speed - beta_nl) * k_max == pytest.approx(
            W0 * math.sqrt(1 - beta_nl**2) + (c / (2 * beta_nl) - beta_nl * W0**2) / k_max, rel=1e-3)
    # the local model at the same cutoff is far below: the physical cutoff dominates
    assert T.anomalous_threshold(LZ, W0, T.Cutoff(1e4)).speed < 0.01 * beta_nl


def test_surface_plasmon_of_a_drude_metal():
    # Maier, Plasmonics (2007), eq. (2.14) with eps = 1 - wp^2/w^2 (from memory): solving
    # k^2 = w^2 eps/(eps+1) for w^2 gives w^2 = k^2 + wp^2/2 - sqrt(k^4 + wp^4/4) -> wp^2/2.
    wp = 1.3
    metal = f.Material(1.0, (f.DrudePole(wp, 0.0),), "Drude")
    k = np.array([0.2, 1.0, 3.0, 50.0])
    w = M.surface_polariton_frequencies(metal, k)[0]
    assert np.allclose(w, np.sqrt(k**2 + wp**2 / 2 - np.sqrt(k**4 + wp**4 / 4)), rtol=1e-10)
    # and the bulk plasma branch w^2 = wp^2 + k^2
    assert np.allclose(T.mode_frequencies(metal, k)[0], np.sqrt(wp**2 + k**2), rtol=1e-12)


def test_gap_threshold_sits_on_the_coupling_criterion():
    h, frac = 0.5, 0.01
    g = T.Geometry.gap(h, frac)
    th = T.thresholds(LZ, W0, geometry=g)
    for t in th.values():
        assert t.set_by == "gap"
        kappa = math.sqrt(t.k**2 - t.omega**2)
        assert math.exp(-2 * kappa * h) == pytest.approx(frac, rel=1e-6)   # the criterion, not a law
        assert t.omega == pytest.approx(T.mode_frequencies(LZ, t.k)[0], rel=1e-12)
    # a weaker criterion admits larger k_x, hence a lower threshold
    assert T.anomalous_threshold(LZ, W0, geometry=T.Geometry.gap(h, 1e-4)).speed < th["anomalous"].speed


# ----------------------------------------------------------------------------- (c) discrete scheme
@pytest.mark.parametrize("beta_nl", [0.0, 0.2])
def test_discrete_branches_are_the_yee_ade_dispersion(beta_nl):
    """Every branch solves (2/dt)^2 sin^2(w dt/2) eps_d(w, K) = K^2 with fdtd's own discrete
    permittivity, and no root is missed (brute-force sign scan over 0 < w < pi/dt)."""
    med = f.Material(1.3, (f.LorentzPole(DE, W, 0.0), f.LorentzPole(0.7, 2.2, 0.0)), "two poles")
    if beta_nl:
        med = M.with_nonlocal(med, beta_nl)
    dx = 0.3
    dt = 0.9 * max_stable_dt((dx,), [med])
    sch = T.Scheme(dx, dt)
    k = np.array([0.05, 0.7, 2.0, 5.0, math.pi / dx])
    Wd = T.mode_frequencies(med, k, sch)
    K2 = sch.K2(k)
    ws = np.linspace(1e-6, math.pi / dt * (1 - 1e-9), 400001)
    for i, kk in enumerate(k):
        roots = Wd[:, i][np.isfinite(Wd[:, i])]
        eps = np.real(med.discrete_permittivity(roots, dt, k=kk, spacing=dx))
        lhs = (2 / dt * np.sin(roots * dt / 2)) ** 2 * eps
        assert np.allclose(lhs, K2[i], rtol=1e-9, atol=1e-12)
        F = (2 / dt * np.sin(ws * dt / 2)) ** 2 * np.real(med.discrete_permittivity(ws, dt, k=kk,
                                                                                   spacing=dx)) - K2[i]
        s = np.nonzero(np.sign(F[1:]) != np.sign(F[:-1]))[0]
        # a sign change through a pole has huge |F| on both sides; a root has small |F|
        found = [ws[j] for j in s if min(abs(F[j]), abs(F[j + 1])) < 1.0 + K2[i]]
        assert len(found) == roots.size
        assert np.allclose(found, np.sort(roots), atol=2 * (ws[1] - ws[0]))


def test_discrete_branches_tend_to_continuum_at_second_order():
    k = np.array([0.5, 1.5, 3.0])
    cont = T.mode_frequencies(LZ, k)
    errs, hs = [], [0.2, 0.1, 0.05, 0.025]
    for dx in hs:
        dt = 0.5 * dx
        errs.append(np.nanmax(np.abs(T.mode_frequencies(LZ, k, T.Scheme(dx, dt)) - cont)))
    slope = np.polyfit(np.log(hs), np.log(errs), 1)[0]
    assert 1.9 < slope < 2.1
    # the grid's anomalous threshold approaches the continuum one at the same k_max
    k_max = 5.0
    ref = T.anomalous_threshold(LZ, W0, T.Cutoff(k_max)).speed
    near = T.anomalous_threshold(LZ, W0, T.Cutoff(k_max, T.Scheme(math.pi / k_max / 8, 0.01))).speed
    assert abs(near - ref) < 1e-3 * ref


# ----------------------------------------------------------------------------- (d) the simulator
def _anomalous_power_scan(dx, n_cells, speeds, gamma, tmp_path, k_only=None):
    """1D periodic co-moving cell (as tests/test_doppler_vs_reference.py::
    test_bulk_1d_dipole_sheet_matches_reference), linear shape, as a scenario with a speed
    scan run through ``fdtd.run``; anomalous-branch power per speed (only the points with
    |k_x| = k_only if given).  Returns (power (S,), dt (S,))."""
    from cases import lorentz, scenario

    import fdtd

    sc = scenario({"lz": lorentz(EINF, (DE, W, gamma))}, {"background": "lz"},
                  # the grid's cutoff set is the point of the test: keep the cell as asked
                  {"polarization": "1d", "cell": dx, "length": n_cells * dx, "adjust_length": False},
                  {"kind": "dipole", "speed": float(speeds[0]), "frequency": W0, "shape_order": 1,
                   "shape_scale": 1, "ramp_periods": 10.0 * W0 / (2 * math.pi)},
                  run={"transits": 2})
    sc = fdtd.Scenario(dict(sc.raw, scan={"key": "source.speed", "values": [float(v) for v in speeds]}),
                       where="speed scan")
    out = fdtd.run(sc, tmp_path / f"scan_{n_cells}.h5", progress=False)
    power, dts = [], []
    for k in range(len(speeds)):
        with fdtd.open_results(out.file, k) as res:
            assert res.plan["nx"] == n_cells              # the cell is the one asked for
            r = res.spectrum()
            dts.append(res.attrs("grid")["dt"])
        sel = r.branch == -1
        if k_only is not None:
            sel &= np.isclose(np.abs(r.kx), k_only)
        power.append(r.power[sel].sum())
    return np.array(power), np.array(dts)


@pytest.mark.parametrize("dx, n_cells, speeds", [
    (0.5, 60, np.arange(0.17, 0.2701, 0.02)),            # k <= pi/dx = 6.28: predicted v_min 0.243
    (30 / 85, 85, np.arange(0.12, 0.2201, 0.02)),       # odd cell count: k_m <= 8.80, v_min 0.178
])
def test_speed_scan_switches_the_anomalous_branch_on_at_the_grid_threshold(dx, n_cells, speeds, tmp_path):
    """Issue 6: a speed scan in the 1D bulk case switches the anomalous branch on within one scan
    step of the predicted v_min, for two grids with different cutoffs.

    Medium: one Lorentz pole (eps_inf 1, D 2, W 1) with small loss gamma = 0.05; oscillator
    w0 = 0.6.  Without a cutoff its threshold would be 0 (set by the cutoff), so the switch-on
    speed is the grid's: the discrete branch at the largest k_m of the periodic cell.
    Loss: resonances of neighbouring harmonics near the cutoff are 2 pi v/L apart in frequency
    (0.05 at L = 30, v = 0.24): gamma = 0.05 makes them overlap, so no speed above threshold falls
    between them; one scan step below threshold the line is detuned by ~k_max dv = 0.13-0.18 from
    the branch, where the Lorentzian tail is (gamma/2 / detuning)^2 ~ 0.02-0.04 of the peak; and
    6/gamma = 120 of settling puts the start-up transients at exp(-3) in amplitude.
    Detection: the switch-on is the steepest rise of the anomalous-branch power along the scan
    (largest ratio between neighbouring speeds); v_on is the first speed after it.  Below
    threshold the power also grows with v (the off-resonant absorption rises as the line's
    frequency approaches the resonance), so the rise must be a distinct step: a ratio >= 10 and
    at least twice every other ratio of the scan.
    """
    dv = float(speeds[1] - speeds[0])
    power, dts = _anomalous_power_scan(dx, n_cells, speeds, 0.05, tmp_path)
    L = n_cells * dx
    ratio = power[1:] / power[:-1]
    i = int(np.argmax(ratio))
    v_on = float(speeds[i + 1])
    # prediction: lossless branch of the discrete scheme, periodic cell's k_m, the runs' own dt
    # (commensurate dt varies by < 0.5 % over the scan; its effect on v_min is checked below)
    preds = [T.anomalous_threshold(LZ, W0, T.Cutoff.grid(dx, dt, period=L))
             for dt in (dts.min(), dts.max())]
    v_pred = preds[0].speed
    assert abs(preds[1].speed - v_pred) < 0.05 * dv
    assert preds[0].set_by == "cutoff"
    assert ratio[i] >= 10.0, (speeds, power)
    assert np.all(np.delete(ratio, i) <= 0.5 * ratio[i]), (speeds, power)
    assert abs(v_on - v_pred) <= dv, (v_on, v_pred, speeds, power)
    # off below, on above: nothing more than one step below v_pred reaches a tenth of P(v_on),
    # nothing above v_on drops below a third of it
    below = speeds < v_pred - dv
    assert np.all(power[below] < 0.1 * power[i + 1])
    assert np.all(power[i + 1:] > 0.3 * power[i + 1])
    # the continuum without cutoff would predict 0, and the two grids differ by > 3 steps
    assert T.anomalous_threshold(LZ, W0).speed == 0.0


@pytest.mark.parametrize("dx, n_cells", [(0.5, 60), (30 / 85, 85)])
def test_cutoff_harmonic_resonates_at_the_discrete_not_the_continuum_speed(dx, n_cells, tmp_path):
    """The anomalous power on the largest harmonic k_M of the cell peaks (small loss) where the
    anomalous line crosses the lossless branch at k_M: with the scheme's discrete dispersion, not
    with the continuum one at the same k (faster by 1.5e-3 c and 4.4e-3 c on these grids).  The
    peak is located by a parabola through log P at the three highest of seven speeds spaced 0.001."""
    L = n_cells * dx
    k_M = 2 * math.pi * (n_cells // 2) / L
    model = f.Model(f.Grid((n_cells,), (dx,), "1d"), background=LZ, edges=f.Periodic())
    dt = 0.95 * model.max_stable_dt()
    v_disc = T.anomalous_threshold(LZ, W0, T.Cutoff.grid(dx, dt, period=L)).speed
    v_cont = float(T.anomalous_speed(k_M, T.mode_frequencies(LZ, k_M)[0], W0))
    assert v_cont - v_disc > 0.001
    speeds = v_disc + 0.001 * np.arange(-3, 4) + 0.0003       # grid not centred on the prediction
    power, _dts = _anomalous_power_scan(dx, n_cells, speeds, 0.05, tmp_path, k_only=k_M)
    j = int(np.argmax(power))
    assert 0 < j < speeds.size - 1
    c = np.polyfit(speeds[j - 1:j + 2], np.log(power[j - 1:j + 2]), 2)
    v_peak = -c[1] / (2 * c[0])
    # the loss and the coarse sampling shift the fitted peak by up to ~1e-4 (validation/thresholds.py
    # finds the peak within 4e-5 with a 0.00025 step); the two dispersions are 1.5e-3 (odd cell) to
    # 4.4e-3 apart: require the peak within a quarter of that distance of the discrete one
    assert abs(v_peak - v_disc) < 0.25 * (v_cont - v_disc), (v_peak, v_disc, v_cont)


def test_the_two_grid_predictions_are_distinct():
    a = T.anomalous_threshold(LZ, W0, T.Cutoff.grid(0.5, 0.4464, period=30.0)).speed
    b = T.anomalous_threshold(LZ, W0, T.Cutoff.grid(30 / 85, 0.3250, period=30.0)).speed
    assert a - b > 3 * 0.02


# ----------------------------------------------------------------------------- report, CLI, errors
def test_report_table_has_units_and_si_columns():
    rep = T.threshold_report(LZ, omega0=W0, speed=0.5, geometry=T.Geometry.gap(0.5),
                             scheme=T.Scheme(0.5, 0.45), period=30.0, beta_nl=0.05, ell=1e-6)
    text = str(rep)
    for unit in ("v_min [c]", "k [1/ell]", "k [1/um]", "omega [c/ell]", "omega [rad/s]", "eV",
                 "criterion", "not a law", "loss is ignored"):
        assert unit in text
    d = rep.as_dict()
    assert len(d["rows"]) == 8          # local: none, grid, grid+periodic, resolved; nonlocal: the same
    r0 = d["rows"][0]["anomalous"]
    assert r0["speed"]["units"] == "c"
    assert r0["k_si"]["value"] == pytest.approx(r0["k"]["value"] / 1e-6)


def test_cli_prints_the_same_numbers_as_the_api(tmp_path, capsys):
    rc = main(["threshold", "--eps", "2.25", "--frequency", "1 eV", "--cell", "20 nm", "--dims", "1",
               "--beta-nl", "0.1", "--json", "-o", str(tmp_path / "thr")])
    assert rc == 0
    d = json.loads(capsys.readouterr().out)
    assert d["rows"][0]["cherenkov"]["speed"]["value"] == pytest.approx(1 / 1.5, rel=1e-12)
    ell = d["ell"]["value"]
    import scipy.constants as sc

    assert ell == pytest.approx(sc.c / (sc.e / sc.hbar), rel=1e-12)      # c / (1 eV / hbar), CODATA via scipy
    grid = d["rows"][1]["cherenkov"]
    dx = 20e-9 / ell
    dt = 0.95 * max_stable_dt((dx,), [f.Material(2.25), f.VACUUM])
    assert grid["speed"]["value"] == pytest.approx(
        T.cherenkov_threshold(f.Material(2.25), T.Cutoff.grid(dx, dt)).speed, rel=1e-12)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["thr.pdf", "thr.png"]
    assert any("beta_nl = 0.1 ignored" in n for n in d["notes"])      # no Lorentz pole to make nonlocal


def test_cli_scenario_file_and_table(tmp_path, capsys):
    path = Path(__file__).resolve().parent.parent / "scenarios" / "polar_crystal_glide.toml"
    rc = main(["threshold", str(path), "--beta-nl", "0.01"])
    assert rc == 0
    out = capsys.readouterr().out
    assert "material 'SiC'" in out and "gap: height" in out and "anomalous Doppler" in out
    assert "periodic L=" in out and "nonlocal beta_nl=0.01" in out


def test_cli_scenario_with_a_nonlocal_material(tmp_path, capsys):
    # a 1D scenario whose pole has beta_nl: the physical cutoff appears without --beta-nl and the
    # table's numbers are those of the API for the resolved material
    (tmp_path / "nl.toml").write_text(
        '[units]\nmode = "natural"\nfrequency = "1 eV"\n'
        '[materials.ex]\nkind = "poles"\neps_inf = 1.0\n'
        'poles = [ { kind = "lorentz", delta_eps = 2.0, omega = 1.0, gamma = 0.05, beta_nl = 0.05 } ]\n'
        '[geometry]\nkind = "none"\nbackground = "ex"\n'
        '[grid]\npolarization = "1d"\ncell = 0.5\nlength = 30.0\n'
        '[source]\nkind = "dipole"\nspeed = 0.2\nfrequency = 0.6\n')
    assert main(["threshold", str(tmp_path / "nl.toml"), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    labels = [r["cutoff"] for r in d["rows"]]
    assert any(lab.startswith("nonlocal beta_nl=0.05, continuum") for lab in labels)
    row = next(r for r in d["rows"] if r["cutoff"].startswith("nonlocal beta_nl=0.05, continuum"))
    assert row["anomalous"]["speed"]["value"] == pytest.approx(0.05, rel=1e-12)
    assert row["anomalous"]["set_by"] == "k -> inf"
    assert d["geometry"] == "bulk, 1D"


def test_cli_threshold_path_does_not_load_the_runner_or_h5py():
    code = ("import sys; from fdtd.cli import main; "
            "main(['threshold', '--eps', '4', '--frequency', '1 eV']); "
            "heavy = ('h5py', 'fdtd.experiment.procedure', 'fdtd.api', 'fdtd.recording.line', "
            "'fdtd.solver.stepper'); print(sorted(m for m in heavy if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip().splitlines()[-1] == "[]"


@pytest.mark.parametrize("args, words", [
    (["--material", "SiC", "--speed", "1.0"], ["--speed", "1.0", "0 < v < 1"]),
    (["--material", "SiC", "--speed", "1.2 c"], ["--speed", "1.2 c", "0 < v < 1"]),
    (["--material", "SiC", "--height", "-5 nm"], ["--height", "-5 nm", "> 0"]),
    (["--material", "unobtainium"], ["--material", "unobtainium", "SiC"]),
    (["--material", "SiC", "--frequency", "0"], ["--frequency", "'0'", "> 0"]),
    (["--material", "SiC", "--frequency", "-2 eV"], ["--frequency", "-2 eV", "> 0"]),
    (["--eps", "4", "--beta-nl", "1.5"], ["--beta-nl", "1.5", "0 <= beta_nl < 1"]),
    (["--eps", "4", "--coupling", "2"], ["--coupling", "0 < f < 1"]),
    (["--eps", "4", "--frequency", "3 m"], ["--frequency", "3 m", "angular frequency"]),
    (["no_such_file.toml"], ["no_such_file.toml", "cannot read"]),
    ([], ["no material", "--eps"]),
])
def test_cli_bad_input_exits_2_with_a_clear_message(args, words, capsys, tmp_path):
    rc = main(["threshold", *args, "-o", str(tmp_path / "x")])
    err = capsys.readouterr().err
    assert rc == 2
    for w in words:
        assert w in err, err
    assert not list(tmp_path.iterdir())                 # nothing written


def test_api_bad_input():
    with pytest.raises(f.ParameterError, match=r"source speed v .* = 1\.0 .*\(0\.0, 1\.0\)"):
        T.cherenkov_band(LZ, 1.0)
    with pytest.raises(f.ParameterError, match=r"source speed v .* = 1\.5"):
        T.threshold_report(LZ, speed=1.5)
    with pytest.raises(f.ParameterError, match=r"source height h above the surface = -0\.5 .* > 0"):
        T.Geometry.gap(-0.5)
    with pytest.raises(f.ParameterError, match=r"omega0 = 0\.0 .* > 0"):
        T.anomalous_threshold(LZ, 0.0)
    with pytest.raises(f.ParameterError, match=r"omega0 = -1\.0"):
        T.thresholds(LZ, -1.0)
    with pytest.raises(f.ParameterError, match="material = 'SiC' .* expected an fdtd Material"):
        T.cherenkov_threshold("SiC")
    with pytest.raises(f.ParameterError, match="--material = 'glas'"):
        resolve_inputs(material="glas")
    with pytest.raises(f.ParameterError, match=r"cutoff k_max = -1"):
        T.Cutoff(-1.0)
    with pytest.raises(f.ParameterError, match="grid cell dx = 0.0"):
        T.Cutoff.grid(0.0, 0.1)
    with pytest.raises(f.ParameterError, match="needs a 2D geometry"):
        T.cherenkov_band(LZ, 0.5, geometry=T.Geometry.bulk(1))


# --------------------------------------------------- grid thresholds with a physical cutoff
def test_grid_thresholds_converge_with_a_nonlocal_pole_and_not_without():
    """Refining the grid (dx halved three times, Courant 0.95 in 1D): with the nonlocal pole the
    threshold over the well-resolved wavenumbers (k dx <= pi/6) converges at first order to
    beta_nl (within the grid's phase error at pi/6), and the threshold over all grid
    wavenumbers converges too -- to the
    speed of the slow branch at pi/dx on the grid, (2/(pi C)) asin(C beta_nl) (the Yee grid
    slows a wave at pi/dx by 2/pi; C = dt/dx), a property of the grid that the summary and
    `gapwake check` flag.  Without the nonlocal pole both fall in proportion to dx."""
    beta, w0 = 0.15, 0.1
    nl = M.lossless(f.Material(EINF, (f.NonlocalLorentzPole(DE, W, 0.0, beta),), "nl"))
    dxs = [0.05, 0.025, 0.0125, 0.00625]
    res, full, loc = [], [], []
    for dx in dxs:
        dt = 0.95 * dx
        res.append(T.anomalous_threshold(nl, w0, T.Cutoff.resolved(dx, dt)).speed)
        full.append(T.anomalous_threshold(nl, w0, T.Cutoff.grid(dx, dt)).speed)
        loc.append(T.anomalous_threshold(LZ, w0, T.Cutoff.grid(dx, dt)).speed)
    res, full, loc = map(np.array, (res, full, loc))
    # resolved: converges (first order or faster) towards the speed of the discrete
    # branch at k dx = pi/6, (12/(pi C)) asin(C beta sin(pi/12)): beta_nl within the grid's
    # 1.1 % phase error there
    limit_res = 12 / (np.pi * 0.95) * math.asin(0.95 * beta * math.sin(np.pi / 12))
    err = np.abs(res - limit_res)
    assert np.all(err[:-1] / err[1:] > 1.6), err       # first order or better (the c/k^2 term)
    assert err[-1] < 0.02 * limit_res, (res, limit_res)     # seen: 1.1 % at dx = 0.00625
    assert abs(limit_res / beta - 1) < 0.012
    # all grid wavenumbers: successive changes halve, towards the Nyquist-speed limit
    limit = 2 / (np.pi * 0.95) * math.asin(0.95 * beta)
    err = full - limit
    assert np.all(err > 0) and np.all(err[:-1] / err[1:] > 1.8), err     # seen: 2.6, 2.3, 2.2
    assert err[-1] < 3e-3 * limit, (full, limit)
    # local: proportional to dx, no limit above zero
    assert np.allclose(loc[:-1] / loc[1:], 2.0, rtol=0.02), loc
