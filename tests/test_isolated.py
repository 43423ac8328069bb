"""The isolated emitter from the simulator: phased rows (Bloch-periodic cells) integrated over
k0, against the exact planar reference's continuum (single-emitter) values.

Array-scanning idea: B. A. Munk and G. A. Burrell, IEEE Trans. Antennas Propag. 27, 331
(1979); derivation in docs/theory/bloch-cell.md.  The reference is the planar solver's
k_x integral (docs/theory/planar-reference.md), which the co-moving cell alone samples only
at k_m = 2 pi m / L: a row of emitters, not one.
"""

from __future__ import annotations

import warnings

import pytest
from cases import lorentz, run, scenario

import fdtd as f
from fdtd.reference.planar import MovingLineSource, PlanarReference, Stack
from fdtd.sources.shapes import Shape

W0 = 1.2


def _case(gamma, geometry, axis, speed, height, grid, **run_keys):
    mats = {"lz": lorentz(1.0, (2.0, 1.0, gamma)), "lz2": lorentz(2.0, (1.5, 1.3, gamma))}
    geo = {"half": {"kind": "half-space", "material": "lz"},
           "slot": {"kind": "slot", "lower": "lz", "upper": "lz2", "gap": 1.5},
           "slab": {"kind": "slab", "material": "lz", "thickness": 0.6}}[geometry]
    sc = scenario(mats, geo, grid,
                  {"kind": "dipole", "speed": speed, "height": height, "frequency": W0, "axis": axis},
                  run={"isolated_emitter": True, **run_keys})
    LZ = f.Material(1.0, (f.LorentzPole(2.0, 1.0, gamma),), "lz")
    LZ2 = f.Material(2.0, (f.LorentzPole(1.5, 1.3, gamma),), "lz2")
    stack = {"half": Stack.half_space(LZ), "slot": Stack.slot(LZ, LZ2, 1.5),
             "slab": Stack(f.VACUUM, ((LZ, 0.6),), f.VACUUM, -0.6)}[geometry]
    return sc, stack


def _isolated(sc, stack, speed, height, axis, tmp_path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        out, res = run(sc, tmp_path)
    ref = PlanarReference.like_simulation(stack, MovingLineSource("dipole", speed, height, 1.0, W0, axis),
                                          Shape(*res.plan["shape"]), res.plan["cell"]).solve()
    return out.points[0], ref


def test_isolated_emitter_error_bars_cover_the_reference_on_a_small_budget(tmp_path):
    """Three phased runs only (not converged, and said so): the error bars still cover the
    exact single-emitter values, which the cell's row of emitters misses by tens of per cent."""
    # one grid (no automatic refinement): the phased runs would otherwise run on the refined
    # grid at 8 times the cost, and the reference is taken on the run's own cell either way
    sc, stack = _case(0.3, "half", "y", 0.6, 0.5, {"cell": 0.1, "length": 9.0}, isolated_max_runs=3,
                      grid_refinements=0)
    s, ref = _isolated(sc, stack, 0.6, 0.5, "y", tmp_path)
    assert s["isolated_runs"]["value"] == 3 and s["isolated_converged"]["value"] is False
    assert "warning_isolated" in s
    for name, r in (("total", ref.total), ("normal", ref.normal), ("anomalous", ref.anomalous)):
        iso = s[f"isolated_{name}_power"]
        assert abs(iso["normalized"] - r) <= iso["error"] / iso["value"] * abs(iso["normalized"]), name
        assert abs(s[f"{name}_power"]["normalized"] / r - 1) > 0.2          # the row is far off
    # the rates of the isolated emitter equal the reference's single-emitter rates likewise
    d = s["isolated_decay_rate_ratio"]
    assert abs(d["value"] - s["single_emitter_decay_rate_ratio"]["value"]) <= d["error"]


SIX = {
    # name: (gamma, geometry, axis, speed, height); 20 cells per shortest wavelength
    "half-space y, low loss": (0.02, "half", "y", 0.6, 0.5),
    "half-space x, moderate loss": (0.3, "half", "x", 0.6, 0.5),
    "half-space z (TM), moderate loss": (0.1, "half", "z", 0.6, 0.5),
    "slot y, low loss": (0.03, "slot", "y", 0.6, 0.75),
    "slab y, moderate loss": (0.1, "slab", "y", 0.5, 0.4),
    "slab x, low loss": (0.03, "slab", "x", 0.7, 0.4),
}


@pytest.mark.slow
@pytest.mark.parametrize("name", list(SIX))
def test_isolated_emitter_matches_the_continuum_reference(name, tmp_path):
    """Six planar cases at 20 cells per shortest wavelength, default isolated-emitter settings.
    The error bars cover the exact single-emitter values; where the k0 integral reached its
    tolerance (run.isolated_converged) total and normal agree within 1 % and the anomalous
    branch within 3 % (where it carries more than 1 % of the total).  Measured (this machine,
    2026-12-03, before the error-bar check was added here): half-space x, half-space z and the
    low-loss slab x met 1 %/1 %/3 % within 20 single-cell runs' worth of steps; the low-loss
    half-space y and slot y met the accuracy with 23 and 21 runs' worth; the moderate-loss
    slab y (guided modes, sharp in k0) used the budget of 17 phased runs, said it had not
    converged, and was 3.3 % off with an error bar of 9.8 %."""
    gamma, geo, axis, speed, height = SIX[name]
    sc, stack = _case(gamma, geo, axis, speed, height, {"cells_per_wavelength": 20, "length": 9.0})
    s, ref = _isolated(sc, stack, speed, height, axis, tmp_path)
    for fig, r in (("total", ref.total), ("normal", ref.normal), ("anomalous", ref.anomalous)):
        iso = s[f"isolated_{fig}_power"]
        assert abs(iso["normalized"] - r) <= iso["error"] / iso["value"] * abs(iso["normalized"]), fig
    if s["isolated_converged"]["value"]:
        assert abs(s["isolated_total_power"]["normalized"] / ref.total - 1) < 0.01
        assert abs(s["isolated_normal_power"]["normalized"] / ref.normal - 1) < 0.01
        if ref.anomalous > 0.01 * ref.total:
            assert abs(s["isolated_anomalous_power"]["normalized"] / ref.anomalous - 1) < 0.03
    else:
        assert "warning_isolated" in s
