"""Recording windows that separate the Doppler lines exactly, and a vacuum dipole whose power
is known to round-off for the discrete scheme itself.

The exact reference is the time-harmonic response of the TM_z Yee lattice to the deposit the
simulator makes (tests/discrete_vacuum.py; Yee 1966, discrete plane waves as in Taflove &
Hagness ch. 4): with it the window, the settling, the absorbing layers and the demodulation
are checked together, without the grid's dispersion error in the way.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from cases import run, scenario
from discrete_vacuum import point_power

from fdtd.recording.doppler import _unmix
from fdtd.scenario.plan import LIGHT_LINE_SAFE, MIN_BEATS, light_line_score, recording_window


def test_cross_talk_of_two_lines_is_removed_for_any_window():
    """Two lines omega_+ and omega_+ - 2 Omega demodulated over a Hann window that is not a
    whole number of beat periods: the raw window sums mix them, the 2x2 solve returns each
    amplitude to round-off."""
    rng = np.random.default_rng(3)
    Omega, w_plus = 0.37, 1.9
    n = 173                                    # an awkward number of samples: 2.2 beats
    t = (np.arange(n) + 0.5) * 0.11
    T = n * 0.11
    w = np.sin(np.pi * (t - 0.0) / T) ** 2
    x_plus, x_minus = 1.3 - 0.4j, -0.2 + 2.1j
    signal = x_plus * np.exp(-1j * w_plus * t) + x_minus * np.exp(-1j * (w_plus - 2 * Omega) * t)
    S = np.empty((1, 2), dtype=complex)
    S[0, 0] = np.sum(w * np.exp(1j * w_plus * t) * signal)
    S[0, 1] = np.sum(w * np.exp(1j * (w_plus - 2 * Omega) * t) * signal)
    W = np.array([w.sum()])
    C = np.array([np.sum(w * np.exp(2j * Omega * t))])
    raw = S[0] / W[0]
    assert abs(raw[0] - x_plus) > 1e-3                 # the cross-talk is there ...
    fixed = _unmix(S, C, W)[0] / W[0]
    np.testing.assert_allclose(fixed, [x_plus, x_minus], rtol=0, atol=1e-12)   # ... and gone
    _ = rng


@pytest.mark.parametrize("length, speed, omega0", [(9.0, 0.6, 1.2), (10.0, 0.8, 0.1), (6.0, 0.5, 1.2),
                                                   (3.3, 0.3, 2.0)])
def test_window_is_whole_transits_and_whole_beats(length, speed, omega0):
    """The chosen cell holds whole beat periods pi/Omega in whole transits, at least
    MIN_BEATS of them, within 20 % of the length asked for and away from the light line."""
    Omega = omega0 * math.sqrt(1 - speed * speed)
    w = recording_window(length, speed, Omega, 8, adjust=True, check_light_line=True)
    beats = w.transits * w.length / speed / (math.pi / Omega)
    assert abs(beats - round(beats)) < 1e-9 and round(beats) == w.beats >= MIN_BEATS
    assert w.transits >= 8 and abs(w.length / length - 1) <= 0.2 and w.mismatch == 0.0
    assert light_line_score(w.length, speed, Omega) >= LIGHT_LINE_SAFE
    fixed = recording_window(length, speed, Omega, 8, adjust=False, check_light_line=True)
    assert fixed.length == length
    beats = fixed.transits * length / speed / (math.pi / Omega)
    assert abs(beats - round(beats)) == pytest.approx(fixed.mismatch, abs=1e-12)


# the cases: (omega0, v, L) in natural units; fast ones (a few seconds each)
VACUUM_CASES = [(0.643, 0.235, 7.83), (0.110, 0.734, 11.97), (0.989, 0.397, 6.78), (1.704, 0.455, 8.93),
                (0.3, 0.6, 8.0)]


@pytest.mark.parametrize("omega0, speed, length", VACUUM_CASES)
def test_vacuum_dipole_gives_the_exact_discrete_power_with_default_settings(omega0, speed, length, tmp_path):
    """A z-dipole moving through vacuum (TM_z), default settings: the branch powers equal the
    exact lattice response to 1e-4 (total), every Doppler point carrying more than 1e-3 of it
    to 3e-4, and the anomalous branch is empty (exactly zero in vacuum) to 1e-6 of the total.
    Before the windows separated the lines, such runs were off by up to several hundred per
    cent depending on the number of transits recorded."""
    sc = scenario({}, {}, {"length": length}, {"kind": "dipole", "speed": speed, "frequency": omega0, "axis": "z"})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        out, res = run(sc, tmp_path)
    assert out.status == "complete"
    sim = res.spectrum()
    g = res.attrs("grid")
    (dx, dy), dt, oy, nx = g["spacing"], g["dt"], g["origin"][1], int(g["shape"][0])
    plan = res.plan
    Omega = omega0 * math.sqrt(1 - speed * speed)
    Y = (plan["height"] - oy) / dy
    ref = np.array([point_power(k, b, speed, Omega, plan["length"], nx, dx, dy, dt, Y, *plan["shape"])
                    for k, b in zip(sim.kx, sim.branch)])
    total = ref.sum()
    assert abs(sim.total / total - 1) < 1e-4
    assert abs(sim.anomalous) < 1e-6 * total and abs(ref[sim.branch == -1].sum()) < 1e-12 * total
    big = np.abs(ref) > 1e-3 * total
    assert np.all(np.abs(sim.power[big] / ref[big] - 1) < 3e-4)


def test_a_grating_fixes_the_cell_length():
    """A structure periodic along x (a grating) must fit whole periods into the cell: the
    plan keeps the length as given, and refuses a length that is not a multiple."""
    from fdtd.scenario.plan import plan
    from fdtd.scenario.quantities import ScenarioError

    def case(length):
        return scenario({"g": {"kind": "constant", "eps": 4.0}}, {},
                        {"cell": 0.1, "length": length},
                        {"kind": "dipole", "speed": 0.6, "height": 0.6, "frequency": 1.2, "axis": "y"},
                        name="grating").set("regions", [{"shape": "grating", "material": "g", "period": 1.5,
                                                        "duty": 0.5, "top": 0.0, "depth": 0.3}])

    p = plan(case(9.0).resolve())
    assert p.length == pytest.approx(9.0, rel=1e-12) and any("grating" in n for n in p.notes)
    with pytest.raises(ScenarioError, match="whole number of grating periods"):
        plan(case(9.4).resolve())
