"""The temporally blocked 2D kernel is bit-identical to stepping one step per sweep.

The schedule (docs/theory/temporal-blocking.md) only reorders row updates whose inputs
are the same numbers, so every field, polarization, CPML and bath-tally value must agree
bit for bit, not to a tolerance.  Random fields everywhere make any wrongly ordered row
visible at once.
"""

import numpy as np
import pytest

import fdtd as f
from fdtd.solver.kernels.yee_te import step_te, step_te_blocked
from fdtd.solver.kernels.yee_tm import step_tm, step_tm_blocked

LORENTZ = f.Material(2.0, (f.LorentzPole(3.0, 0.3, 0.01), f.LorentzPole(1.0, 0.5, 0.05)), "two-pole")


def _solver(pol, edges, levels, shape=(40, 33), ledger=False):
    g = f.Grid(shape, (1.0, 1.0), pol)
    m = f.Model(g, [(f.Rectangle(8.0, 30.0, 5.0, 21.5), LORENTZ)], edges=edges)
    s = f.Solver(m, courant=0.9, ledger=ledger, threads=1)
    rng = np.random.default_rng(7)
    for c in s.fields:
        a = s.fields[c]
        a[...] = rng.standard_normal(a.shape) + (1j * rng.standard_normal(a.shape) if s.complex_fields else 0)
    s.temporal_levels = levels
    return s


def _state(s):
    out = [a.copy() for a in s.fields.values()]
    out += [a.copy() for pair in s.polarization.values() for a in pair]
    out += [a.copy() for a in s.psi.values()] + [s.bath_rows.copy()]
    return out


def _same(a, b):
    return len(a) == len(b) and all(np.array_equal(x, y) for x, y in zip(a, b, strict=True))


CASES = [("te", f.CPML(6), 2), ("tm", f.CPML(6), 5), ("te", [f.Bloch(0.7), f.CPML(5)], 3),
         ("tm", [f.Bloch(0.7), f.CPML(5)], 4), ("te", [f.Periodic(), f.PEC()], 5), ("tm", [f.Periodic(), f.PEC()], 3)]


@pytest.mark.parametrize(("pol", "edges", "levels"), CASES,
                         ids=["te-cpml", "tm-cpml", "te-bloch", "tm-bloch", "te-periodic-pec", "tm-periodic-pec"])
def test_blocked_solver_steps_equal_single_steps(pol, edges, levels):
    single, blocked = _solver(pol, edges, 1), _solver(pol, edges, levels)
    assert blocked.temporal_levels_now() == levels and single.temporal_levels_now() == 1
    n = 3 * levels + 2          # whole sweeps and a remainder stepped singly
    single.step(n)
    blocked.step(n)
    assert blocked.step_count == single.step_count == n
    assert _same(_state(single), _state(blocked))
    assert not _same(_state(single), _state(_solver(pol, edges, 1)))      # something moved


@pytest.mark.parametrize("pol", ["te", "tm"])
def test_several_row_blocks_and_the_bath_tally(pol):
    """Three row blocks (the threaded schedule, run here on one thread) with the bath
    tallied on every level: the boundaries between blocks are filled correctly."""
    a, b = _solver(pol, f.CPML(6), 1, shape=(48, 20)), _solver(pol, f.CPML(6), 1, shape=(48, 20))
    box = np.array([0, 48, 0, 20], dtype=np.int64)
    levels, nchunks = 4, 3
    psi = a.psi
    for s, blocked in ((a, False), (b, True)):
        F, psi = s.fields, s.psi
        if pol == "te":
            (Px, Pxo), (Py, Pyo) = s.polarization["Ex"], s.polarization["Ey"]
            args = (F["Ex"], F["Ey"], F["Hz"], Px, Pxo, Py, Pyo, s._segs["Ex"], s._segs["Ey"], s._coef,
                    s._prof[0], s._prof[1], psi["hz_x"], psi["ey_x"], psi["hz_y"], psi["ex_y"])
            tail = (True, s.bath_rows, s._gid, s._bathc_all, box, box, s.wrap_phase)
            if blocked:
                step_te_blocked(*args, nchunks, levels, *tail)
            else:
                for _ in range(levels):
                    step_te(*args, nchunks, *tail)
        else:
            Pz, Pzo = s.polarization["Ez"]
            args = (F["Ez"], F["Hx"], F["Hy"], Pz, Pzo, s._segs["Ez"], s._coef, s._prof[0], s._prof[1],
                    psi["hy_x"], psi["ez_x"], psi["hx_y"], psi["ez_y"])
            tail = (True, s.bath_rows, s._gid, s._bathc_all, box, s.wrap_phase)
            if blocked:
                step_tm_blocked(*args, nchunks, levels, *tail)
            else:
                for _ in range(levels):
                    step_tm(*args, nchunks, *tail)
    assert np.any(a.bath_rows != 0.0)
    assert _same(_state(a), _state(b))


def test_blocking_is_not_used_where_a_step_is_more_than_the_kernel():
    assert _solver("te", f.CPML(6), 4, ledger=True).temporal_levels_now() == 1       # face flux per step
    s = _solver("te", f.CPML(6), 4)
    s.observers.append(object())
    assert s.temporal_levels_now() == 1
    assert _solver("te", f.CPML(6), 20).temporal_levels_now() == 1      # 40 rows < 2 L + 2 = 42
    auto = _solver("te", f.CPML(6), None)
    assert auto.temporal_levels_now() == 1          # small grid: the fields stay in cache anyway
