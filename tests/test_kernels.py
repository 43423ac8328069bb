"""Compiled steppers against their NumPy twins, and thread-count independence.

The Bloch case runs the complex specialization of the kernels (complex128 state,
wrap factor exp(i theta) across the x wrap, docs/theory/bloch-cell.md).
"""

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
    "bloch-x": [f.Bloch(0.7), (f.CPML(4), f.PEC())],
}


def _random(rng, shape, complex_fields):
    a = rng.standard_normal(shape)
    return a + 1j * rng.standard_normal(shape) if complex_fields else a


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
    cplx = s.complex_fields
    assert cplx == (edge_name == "bloch-x")
    assert s.fields[model.grid.e_components[0]].dtype == (np.complex128 if cplx else np.float64)
    for c in s.fields:
        s.fields[c][...] = _random(rng, s.fields[c].shape, cplx)
    for c in model.grid.e_components:  # respect the conducting walls
        s.fields[c][model.mix_maps[c] == 0] = 0.0
        for arr in s.polarization[c]:
            if model.max_poles:
                arr[...] = 0.1 * _random(rng, arr.shape, cplx)
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


@pytest.mark.parametrize("pol", ["1d", "te", "tm"])
def test_bloch_twin_sees_the_phase(pol, rng):
    """The twin comparison above can fail: the same start stepped with phase 0.7 and
    with phase 0 differs by far more than the 1e-12 tolerance, and only near the wrap."""
    out = []
    for theta in (0.7, 0.0):
        model = _model(pol, [f.Bloch(theta), (f.CPML(4), f.PEC())])
        s = f.Solver(model, courant=0.9, ledger=False)
        r = np.random.default_rng(5)
        for c in s.fields:
            s.fields[c][...] = _random(r, s.fields[c].shape, True)
        s.step(1)
        out.append({c: a.copy() for c, a in s.fields.items()})
    for c in out[0]:
        d = np.abs(out[0][c] - out[1][c])
        # one step moves the wrap's influence one row at most
        assert np.all(d[2:-1] == 0.0), c
    # the E component of the x curl differs at the wrap (TM's Hx has no x derivative)
    e = model.grid.e_components[-1]
    assert np.abs(out[0][e] - out[1][e]).max() > 0.1


@pytest.mark.parametrize("pol", ["te", "tm"])
@pytest.mark.parametrize("edges", ["cpml", "bloch"])
def test_two_threads_bitwise_equal_to_one(pol, edges, rng):
    import numba

    if numba.config.NUMBA_NUM_THREADS < 2:
        pytest.skip("needs two threads")
    results = []
    for threads in (1, 2):
        model = _model(pol, f.CPML(5) if edges == "cpml" else [f.Bloch(1.1), f.CPML(5)])
        s = f.Solver(model, courant=0.9, threads=threads)
        src = f.line_current(s, model.grid.e_components[-1], (1.2, 1.6), 1.0,
                             f.GaussianPulse(0.5, 0.15, derivative=True))
        s.attach(src)
        s.advance(steps=80)
        results.append({c: a.copy() for c, a in s.fields.items()})
    for c in results[0]:
        assert np.array_equal(results[0][c], results[1][c]), c
