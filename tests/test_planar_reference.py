"""The exact planar reference solver against closed forms and its own invariants.

Closed forms: line sources at rest in vacuum (omega^3 p^2/8 out of plane, /16 in plane,
from the 2D Green's function (i/4) H0(k rho): see tests/test_radiation.py, where they
are also checked against scipy.special Hankel functions); the 2D Frank-Tamm formula
(docs/theory/frank-tamm-2d.md; 3D original I. E. Tamm and I. M. Frank, "Coherent radiation of a fast
electron in a medium", Dokl. Akad. Nauk SSSR 14, 107 (1937), reference checked with the
search tool; Jackson sec. 13.4, from memory); Lorentz
invariance of the radiated power of a dipole moving in vacuum (Jackson sec. 14.1,
from memory).
"""

import math

import numpy as np
import pytest

import fdtd as f
from fdtd.reference import closed_forms as theory
from fdtd.reference.planar import Bulk1D, MovingLineSource, PlanarReference, Stack

W = 2 * np.pi
LZ = f.Material(1.0, (f.LorentzPole(2.0, 1.0, 0.1),), "lossy Lorentz")


@pytest.mark.parametrize("axis,in_plane", [("z", False), ("x", True), ("y", True)])
def test_dipole_at_rest_in_vacuum(axis, in_plane):
    r = PlanarReference(Stack(), MovingLineSource("dipole", 0.0, 0.3, 1.0, W, axis)).solve()
    assert abs(r.total / theory.line_dipole_power(W, 1.0, in_plane) - 1) < 1e-9
    assert r.anomalous == 0.0
    assert abs(r.flux_up - r.flux_down) < 1e-9 * r.total       # symmetric
    assert abs(r.drag_force) < 1e-9 * r.total / W


@pytest.mark.parametrize("v", [0.3, 0.6, 0.9])
@pytest.mark.parametrize("axis", ["z", "x", "y"])
def test_moving_dipole_in_vacuum_no_anomalous_and_rest_total(v, axis):
    r = PlanarReference(Stack(), MovingLineSource("dipole", v, 0.3, 1.0, W, axis)).solve()
    rest = theory.line_dipole_power(W, 1.0, axis != "z")
    assert r.anomalous == 0.0
    assert abs(r.total / rest - 1) < 1e-7
    # energy bookkeeping: lab power = power from the motion + from the oscillator
    assert abs(r.motion_power + r.internal_power - r.total) < 1e-8 * r.total
    # rest frame: the oscillator loses gamma^2 * internal_power = the rest-frame power
    gam = 1 / math.sqrt(1 - v * v)
    assert abs(gam**2 * r.internal_power / rest - 1) < 1e-7


def test_line_current_at_rest_matches_green_function_power():
    r = PlanarReference(Stack(), MovingLineSource("current", 0.0, 0.0 + 0.7, 1.0, W, "z")).solve()
    assert abs(r.total / theory.line_current_power(W, 1.0, in_plane=False) - 1) < 1e-9
    r = PlanarReference(Stack(), MovingLineSource("current", 0.0, 0.7, 1.0, W, "y")).solve()
    assert abs(r.total / theory.line_current_power(W, 1.0, in_plane=True) - 1) < 1e-9


def test_charge_in_uniform_dielectric_is_frank_tamm():
    glass = f.Material(2.25)
    v, kmax = 0.8, 40.0
    ref = PlanarReference(Stack(glass, (), glass), MovingLineSource("charge", v, 0.4, 1.0), k_max=kmax)
    k = np.array([0.5, 3.0, 17.0])
    # per unit k: P = int dk/(2 pi) density, and dk = d omega / v
    np.testing.assert_allclose(ref.density(k, 0) / (2 * np.pi),
                               v * v * theory.frank_tamm_2d(v, 2.25), rtol=1e-12)
    r = ref.solve()
    assert abs(r.total / (v * v * theory.frank_tamm_2d(v, 2.25) * kmax) - 1) < 1e-9
    assert abs(r.motion_power / r.total - 1) < 1e-9           # all from the motion
    below = PlanarReference(Stack(glass, (), glass), MovingLineSource("charge", 0.6, 0.4, 1.0), k_max=kmax)
    assert below.solve().total < 1e-12                          # below beta = 1/n: nothing


def test_polariton_peak_areas_converge_as_loss_vanishes():
    totals = []
    for g in (1e-2, 3e-3, 1e-3, 3e-4, 1e-4):
        med = f.Material(1.0, (f.LorentzPole(2.0, 1.0, g),), "lz")
        r = PlanarReference(Stack.half_space(med), MovingLineSource("dipole", 0.6, 0.5, 1.0, 1.2, "y")).solve()
        totals.append((r.normal, r.anomalous))
    t = np.array(totals)
    steps = np.abs(np.diff(t, axis=0))
    # the change shrinks with the loss (roughly in proportion): the peaks are resolved
    assert np.all(steps[1:] < 0.6 * steps[:-1] + 1e-12), steps
    assert np.all(steps[-1] < 2e-4 * t[-1])


def test_flux_split_and_slot_symmetry():
    r = PlanarReference(Stack.half_space(LZ), MovingLineSource("dipole", 0.6, 0.5, 1.0, 1.2, "y")).solve()
    assert abs(r.flux_up + r.flux_down - r.total) < 1e-7 * r.total   # the gap is lossless
    slot = Stack.slot(LZ, LZ, 1.0)
    s = PlanarReference(slot, MovingLineSource("dipole", 0.0, 0.5, 1.0, 1.2, "y")).solve()
    assert abs(s.flux_up - s.flux_down) < 1e-7 * s.total              # source at the centre


def test_periodic_sum_tends_to_the_integral():
    ref = PlanarReference(Stack.half_space(LZ), MovingLineSource("dipole", 0.6, 0.5, 1.0, 1.2, "x"))
    exact = ref.solve().total
    errs = []
    for L in (20.0, 80.0):
        per = ref.periodic(L, m_max=int(40 * L))
        errs.append(abs(sum(p.sum() for _k, p in per.values()) / exact - 1))
    assert errs[1] < errs[0] and errs[1] < 5e-3


def test_bulk_1d_branches_and_threshold_trend():
    med = f.Material(1.0, (f.LorentzPole(2.0, 1.0, 0.05),), "lz")
    slow = Bulk1D(med, 0.05, 0.6).solve()
    fast = Bulk1D(med, 0.5, 0.6).solve()
    assert fast.anomalous > 0.05 * fast.total
    assert slow.anomalous < 1e-3 * slow.total
    for r in (slow, fast):
        assert abs(r.motion_power + r.internal_power - r.total) < 1e-7 * r.total


def test_bad_input():
    with pytest.raises(f.GeometryError, match="lies on an interface"):
        PlanarReference(Stack.half_space(LZ), MovingLineSource("dipole", 0.5, 0.0, 1.0, 1.0, "y"))
    with pytest.raises(f.ParameterError, match=r"source speed = 1.0"):
        MovingLineSource("dipole", 1.0, 0.5, 1.0, 1.0, "y")
    with pytest.raises(f.ParameterError, match="charge at rest"):
        MovingLineSource("charge", 0.0, 0.5)
