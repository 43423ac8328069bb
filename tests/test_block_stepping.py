"""Block stepping gives the physics of step-by-step stepping (a twin test, as the kernels'
NumPy twins are).

The solver evaluates the sources' currents for a block of steps in compiled code, and in
1D advances the whole block (update, injection, work, ledger flux, the Doppler recorder's
samples) in one compiled call (fdtd/solver/block1d.py).  Here the same runs are made both
ways, through ``fdtd.run``, and must agree to round-off.
"""

from __future__ import annotations

import numpy as np
import pytest
from cases import lorentz, run, scenario

import fdtd
from fdtd.experiment.procedure import Experiment
from fdtd.scenario.plan import plan as make_plan
from fdtd.solver.stepper import Solver

LZ = lorentz(1.0, (2.0, 1.0, 0.1))


def one_by_one(monkeypatch):
    """Force the step-by-step path (sources evaluated each step, no compiled block)."""
    monkeypatch.setattr(Solver, "_block_currents", lambda self, m: None)
    monkeypatch.setattr(Solver, "_block_1d_possible", lambda self: False)


def counted(monkeypatch) -> list:
    """Count the compiled 1D blocks (so that a twin test knows the fast path was taken)."""
    import fdtd.solver.block1d as b1

    calls = []
    real = b1.advance_block_1d

    def wrapper(solver, m, pre, *ledger):
        calls.append(m)
        return real(solver, m, pre, *ledger)

    monkeypatch.setattr(b1, "advance_block_1d", wrapper)
    return calls


def both_ways(case, tmp_path, monkeypatch):
    """Run ``case(name)`` through fdtd.run in compiled blocks and step by step; the block
    path must have covered every step.  Returns (fast, slow) run outputs."""
    with monkeypatch.context() as mp:
        blocks = counted(mp)
        fast, _ = run(case("fast"), tmp_path, "fast.h5")
    assert sum(blocks) >= fast.value("steps")
    with monkeypatch.context() as mp:
        one_by_one(mp)
        slow, _ = run(case("slow"), tmp_path, "slow.h5")
    return fast, slow


def sheet_case(name: str):
    return scenario({"lz": LZ}, {"background": "lz"},
                    {"polarization": "1d", "cell": 0.05, "length": 6.0},
                    {"kind": "dipole", "speed": 0.5, "frequency": 0.3},
                    run={"transits": 4, "max_time": 200.0}, name=name)


def figures(out) -> dict:
    return {k: out.value(k, normalized=True) for k in ("total_power", "normal_power", "anomalous_power",
                                                          "drag_force", "ledger_residual")}


@pytest.mark.filterwarnings("ignore::fdtd.recording.steady.SteadyStateWarning")
def test_1d_run_in_compiled_blocks_equals_the_step_by_step_run(tmp_path, monkeypatch):
    with monkeypatch.context() as mp:
        blocks = counted(mp)
        fast, _ = run(sheet_case("fast"), tmp_path, "fast.h5")
    assert sum(blocks) >= fast.value("steps") and max(blocks) > 100      # the run and its grid check
    with monkeypatch.context() as mp:
        one_by_one(mp)
        slow, _ = run(sheet_case("slow"), tmp_path, "slow.h5")
    a, b = figures(fast), figures(slow)
    assert fast.value("steps") == slow.value("steps")
    for k in ("total_power", "normal_power", "anomalous_power", "drag_force"):
        assert a[k] == pytest.approx(b[k], rel=1e-9, abs=1e-12 * abs(b["total_power"])), k
    assert abs(a["ledger_residual"]) < 1e-9 and abs(b["ledger_residual"]) < 1e-9
    fa, fb = fdtd.as_arrays(fast.file), fdtd.as_arrays(slow.file)
    np.testing.assert_allclose(fa["doppler/power"], fb["doppler/power"], rtol=1e-8,
                               atol=1e-10 * np.abs(fb["doppler/power"]).max())


@pytest.mark.parametrize("polarization, axis", [("te", "x"), ("te", "y"), ("tm", "z")])
def test_block_currents_equal_the_per_step_currents(polarization, axis):
    """The dipole's deposit for a block of steps, scattered onto the grid, equals the
    per-step deposit of every step (2D cells, in-plane and out-of-plane moments)."""
    sc = scenario({"lz": LZ}, {"kind": "half-space", "material": "lz"},
                  {"polarization": polarization, "cell": 0.1, "length": 4.0, "height": 1.5, "absorber": 1.0},
                  {"kind": "dipole", "speed": 0.7, "height": 0.4, "frequency": 1.2, "axis": axis})
    exp = Experiment(make_plan(sc.resolve()), progress=False)
    s, src = exp.solver, exp.source
    s.step_count = 37                          # inside the switch-on: the moment is changing
    m = 9
    block = src.block_currents((s.step_count + np.arange(m + 1)) * s.dt)
    assert block is not None
    size = s.grid.n_cells
    for k in range(m):
        per_step = src.currents((s.step_count + k + 0.5) * s.dt)
        for (comp, flat, J), (comp_b, flat_b, J_b) in zip(per_step, block):
            assert comp == comp_b
            dense = np.zeros(size)
            np.add.at(dense, flat, J)
            dense_b = np.zeros(size)
            np.add.at(dense_b, flat_b[k], J_b[k])
            np.testing.assert_allclose(dense_b, dense, rtol=0, atol=1e-12 * np.abs(dense).max())


@pytest.mark.filterwarnings("ignore::fdtd.recording.steady.SteadyStateWarning")
def test_1d_nonlocal_pole_in_compiled_blocks_equals_the_step_by_step_run(tmp_path, monkeypatch):
    """The same with a spatially dispersive (nonlocal) pole, whose Laplacian pre- and
    post-passes run inside the compiled loop."""
    def case(name):
        sc = sheet_case(name)
        sc = sc.set("materials.lz.poles", [{"kind": "lorentz", "delta_eps": 2.0, "omega": 1.0, "gamma": 0.1,
                                            "beta_nl": "0.15 c"}])
        return sc
    fast, slow = both_ways(case, tmp_path, monkeypatch)
    a, b = figures(fast), figures(slow)
    for k in ("total_power", "normal_power", "anomalous_power", "drag_force"):
        assert a[k] == pytest.approx(b[k], rel=1e-9, abs=1e-12 * abs(b["total_power"])), k
    assert abs(a["ledger_residual"]) < 1e-9 and abs(b["ledger_residual"]) < 1e-9


@pytest.mark.filterwarnings("ignore::fdtd.recording.steady.SteadyStateWarning")
@pytest.mark.parametrize("component", ["Ey", "Hz"])
def test_1d_field_line_and_snapshots_in_compiled_blocks_equal_the_step_by_step_records(tmp_path, monkeypatch,
                                                                                        component):
    """A 1D run that records a field line and snapshots (E or H component) goes in compiled
    blocks too, and stores the same samples at the same time levels."""
    def case(name):
        sc = sheet_case(name)
        sc = sc.set("record.line_component", component).set("record.line_every", 3)
        return sc.set("record.snapshots", 4).set("record.snapshot_component", component)
    fast, slow = both_ways(case, tmp_path, monkeypatch)
    fa, fb = fdtd.as_arrays(fast.file), fdtd.as_arrays(slow.file)
    for name in ("line/time", "snapshots/time"):
        np.testing.assert_array_equal(fa[name], fb[name])
    assert fa["line/time"].size > 100 and fa["snapshots/time"].size == 4
    for name in ("line/data", f"snapshots/{component}"):
        assert fa[name].shape == fb[name].shape
        np.testing.assert_allclose(fa[name], fb[name], rtol=1e-9, atol=1e-12 * np.abs(fb[name]).max())


def test_1d_ledger_samples_inside_compiled_blocks_equal_the_step_by_step_samples(monkeypatch):
    """advance(ledger_every=10) in 1D samples the ledger inside the compiled blocks; the
    samples (stored energy by part, work, bath heat, outflow) equal those taken after single steps."""
    from fdtd.experiment.procedure import Experiment

    def solver():
        exp = Experiment(make_plan(sheet_case("ledger").resolve()), progress=False)
        exp.state["record_start_step"] = exp.solver.step_count
        exp._start_recording()
        return exp.solver
    with monkeypatch.context() as mp:
        blocks = counted(mp)
        fast = solver()
        fast.advance(steps=700, ledger_every=10, progress=False)
    assert max(blocks) > 10                 # the blocks ran past the ledger's sampling steps
    with monkeypatch.context() as mp:
        one_by_one(mp)
        slow = solver()
        slow.advance(steps=700, ledger_every=10, progress=False)
    a, b = fast.ledger.samples, slow.ledger.samples
    assert [x.step for x in a] == [x.step for x in b] == list(range(0, 701, 10))
    for x, y in zip(a, b, strict=True):
        scale = abs(y.field_e) + abs(y.field_h) + 1e-300
        for name in ("field_e", "field_h", "cross", "source_work", "outflow"):
            assert getattr(x, name) == pytest.approx(getattr(y, name), rel=1e-9, abs=1e-12 * scale), name
        np.testing.assert_allclose(x.poles, y.poles, rtol=1e-9, atol=1e-12 * scale)
        np.testing.assert_allclose(x.bath, y.bath, rtol=1e-9, atol=1e-12 * scale)
    assert fast.ledger.samples[-1].stored > 0
