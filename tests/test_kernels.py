"""Compiled steppers against their NumPy twins, and thread-count independence."""

import numpy as np
import pytest

import fdtd as f
from fdtd.solver.kernels.reference import STEPPERS, twin_inputs, twin_state

LZ = f.Material(1.3, (f.LorentzPole(1.5, 2.0, 0.2), f.LorentzPole(0.4, 5.0, 0.0)), "two-pole")
DR = f.Material(1.0, (f.DrudePole(3.0, 0.5),), "drude")

EDGE_CASES = {
    "cpml-all": f.CPML(5, kappa_max=3.0, alpha_max=0.2),
    "periodic-x": [f.Periodic(), (f.CPML(4), f.PEC())],
    "pec-all": f.PEC(),
}


def _model(pol, edges):
    if pol == "1d":
        g = f.Grid((60,), (0.1,), "1d")
        pl = [(f.Slab("x", 1.0, 3.05), LZ), (f.Slab("x", 4.0, 5.5), DR)]
    else:
        g = f.Grid((23, 29), (0.1, 0.12), pol)
        pl = [(f.HalfSpace("y", below=1.1), LZ), (f.Rectangle(0.5, 1.7, 2.0, 2.6), DR)]
    if pol == "1d" and isinstance(edges, list):
        edges = [edges[0]]
    return f.Model(g, pl, edges=edges)


@pytest.mark.parametrize("pol", ["1d", "te", "tm"])
@pytest.mark.parametrize("edge_name", list(EDGE_CASES))
def test_compiled_step_matches_numpy_twin(pol, edge_name, rng):
    model = _model(pol, EDGE_CASES[edge_name])
    s = f.Solver(model, courant=0.9, ledger=False)
    for c in s.fields:
        s.fields[c][...] = rng.standard_normal(s.fields[c].shape)
    for c in model.grid.e_components:  # respect the conducting walls
        s.fields[c][model.mix_maps[c] == 0] = 0.0
        for arr in s.polarization[c]:
            if model.max_poles:
                arr[...] = 0.1 * rng.standard_normal(arr.shape)
    cells, prof = twin_inputs(s)
    state = twin_state(s)
    aux = {}
    for _ in range(12):
        s.step()
        STEPPERS[pol](state, cells, prof, aux)
    for c in s.fields:
        ref = state[c]
        scale = np.max(np.abs(ref))
        np.testing.assert_allclose(s.fields[c], ref, rtol=0, atol=1e-12 * scale, err_msg=c)
    for c in model.grid.e_components:
        P, _ = s.polarization[c]
        np.testing.assert_allclose(P.reshape(state["P"][c].shape), state["P"][c], rtol=0,
                                   atol=1e-12 * np.max(np.abs(state["P"][c])))


@pytest.mark.parametrize("pol", ["te", "tm"])
def test_two_threads_bitwise_equal_to_one(pol, rng):
    import numba

    if numba.config.NUMBA_NUM_THREADS < 2:
        pytest.skip("needs two threads")
    results = []
    for threads in (1, 2):
        model = _model(pol, f.CPML(5))
        s = f.Solver(model, courant=0.9, threads=threads)
        src = f.line_current(s, model.grid.e_components[-1], (1.2, 1.6), 1.0,
                             f.GaussianPulse(0.5, 0.15, derivative=True))
        s.attach(src)
        s.advance(steps=80)
        results.append({c: a.copy() for c, a in s.fields.items()})
    for c in results[0]:
        assert np.array_equal(results[0][c], results[1][c]), c
