"""Readable NumPy twins of the compiled steppers.

They perform exactly the update of :mod:`.yee1d`, :mod:`.yee_te` and
:mod:`.yee_tm`, written with whole-array operations and full-size CPML
auxiliary arrays, so that the tests can check the compiled kernels
against them and a reader can see what the kernels do without the
row-fusion and segment bookkeeping.  Not for production runs.

``state`` is a dict of field arrays and ``P``/``Po`` dicts per E component;
``cell`` dicts give per-node coefficient arrays built from the mixture maps
(``inv_eps`` (shape of the grid) and ``c1, c2, c3`` (ns, *shape)).
``prof`` is a list of :class:`fdtd.space.edges.AxisProfile` (with dt folded
in by the caller as in the kernels: ``ck``, ``b``, ``c`` keys per node type)
and ``"wrap"``, the factor exp(i theta) a field picks up across the wrap of
that axis (1 except on a Bloch-periodic x axis, docs/theory/bloch-cell.md):
a forward difference at the last node reads ``wrap * a[0]``, a backward
difference at node 0 reads ``conj(wrap) * a[-1]``.  State arrays are float64,
or complex128 in a Bloch cell.
"""

from __future__ import annotations

import numpy as np


def _diff_fwd(a, axis, wrap=1.0):
    """a[k+1] - a[k] with wrap (forward difference onto the half node); a[n] = wrap * a[0]."""
    nxt = np.roll(a, -1, axis=axis)
    last = [slice(None)] * a.ndim
    last[axis] = -1
    nxt[tuple(last)] *= wrap
    return nxt - a


def _diff_bwd(a, axis, wrap=1.0):
    """a[k] - a[k-1] with wrap (backward difference onto the integer node); a[-1] = conj(wrap) a[n-1]."""
    prev = np.roll(a, 1, axis=axis)
    first = [slice(None)] * a.ndim
    first[axis] = 0
    prev[tuple(first)] *= np.conj(wrap)
    return a - prev


def _stretch(diff, axis, prof, node, psi_key, aux, ndim):
    """(1/kappa) diff * dt/Delta + dt*psi, updating the full-size psi array."""
    shape = [1] * ndim
    shape[axis] = -1
    ck = prof[f"ck_{node}"].reshape(shape)
    b = prof[f"b_{node}"].reshape(shape)
    c = prof[f"c_{node}"].reshape(shape)
    psi = aux.setdefault(psi_key, np.zeros_like(diff))
    psi[...] = b * psi + c * diff
    return ck * diff + psi


def _update_e(E, P, Po, cell, curl):
    ds = np.zeros_like(E)
    for s in range(P.shape[0]):
        on = cell["active"][s]
        pnew = np.where(on, cell["c1"][s] * P[s] + cell["c2"][s] * Po[s] + cell["c3"][s] * E, P[s])
        ds += pnew - P[s]
        Po[s] = np.where(on, P[s], Po[s])
        P[s] = pnew
    E += cell["inv_eps"] * (curl - ds)


def step_1d_numpy(state, cells, prof, aux):
    Ey, Hz = state["Ey"], state["Hz"]
    w = prof[0]["wrap"]
    Hz -= _stretch(_diff_fwd(Ey, 0, w), 0, prof[0], "half", "hz_x", aux, 1)
    curl = -_stretch(_diff_bwd(Hz, 0, w), 0, prof[0], "int", "ey_x", aux, 1)
    _update_e(Ey, state["P"]["Ey"], state["Po"]["Ey"], cells["Ey"], curl)


def step_te_numpy(state, cells, prof, aux):
    Ex, Ey, Hz = state["Ex"], state["Ey"], state["Hz"]
    w = prof[0]["wrap"]
    Hz -= (_stretch(_diff_fwd(Ey, 0, w), 0, prof[0], "half", "hz_x", aux, 2)
           - _stretch(_diff_fwd(Ex, 1), 1, prof[1], "half", "hz_y", aux, 2))
    curl_x = _stretch(_diff_bwd(Hz, 1), 1, prof[1], "int", "ex_y", aux, 2)
    curl_y = -_stretch(_diff_bwd(Hz, 0, w), 0, prof[0], "int", "ey_x", aux, 2)
    _update_e(Ex, state["P"]["Ex"], state["Po"]["Ex"], cells["Ex"], curl_x)
    _update_e(Ey, state["P"]["Ey"], state["Po"]["Ey"], cells["Ey"], curl_y)


def step_tm_numpy(state, cells, prof, aux):
    Ez, Hx, Hy = state["Ez"], state["Hx"], state["Hy"]
    w = prof[0]["wrap"]
    Hx -= _stretch(_diff_fwd(Ez, 1), 1, prof[1], "half", "hx_y", aux, 2)
    Hy += _stretch(_diff_fwd(Ez, 0, w), 0, prof[0], "half", "hy_x", aux, 2)
    curl = (_stretch(_diff_bwd(Hy, 0, w), 0, prof[0], "int", "ez_x", aux, 2)
            - _stretch(_diff_bwd(Hx, 1), 1, prof[1], "int", "ez_y", aux, 2))
    _update_e(Ez, state["P"]["Ez"], state["Po"]["Ez"], cells["Ez"], curl)


STEPPERS = {"1d": step_1d_numpy, "te": step_te_numpy, "tm": step_tm_numpy}


def twin_inputs(solver):
    """Per-node coefficient arrays and profile dicts for the twins, from a Solver."""
    model = solver.model
    t = solver.tables
    g = model.grid
    cells = {}
    ns = max(model.max_poles, 1)
    for c in g.e_components:
        mix = model.mix_maps[c]
        cells[c] = {"inv_eps": t["inv_eps"][mix],
                    "c1": np.stack([t["c1"][mix, s] for s in range(ns)]),
                    "c2": np.stack([t["c2"][mix, s] for s in range(ns)]),
                    "c3": np.stack([t["c3"][mix, s] for s in range(ns)]),
                    "active": np.stack([t["n_poles"][mix] > s for s in range(ns)])}
    prof = []
    for a, p in enumerate(solver.profiles):
        d = g.spacing[a]
        dt = solver.dt
        prof.append({"ck_int": dt / d * p.inv_kappa_int, "ck_half": dt / d * p.inv_kappa_half,
                     "b_int": p.b_int, "c_int": dt * p.c_int,
                     "b_half": p.b_half, "c_half": dt * p.c_half,
                     "wrap": solver.wrap_phase if a == 0 else 1.0})
    return cells, prof


def twin_state(solver):
    """A deep copy of the solver's fields and polarization in the twins' layout."""
    g = solver.model.grid
    st = {c: solver.fields[c].copy() for c in solver.fields}
    st["P"], st["Po"] = {}, {}
    ns = max(solver.model.max_poles, 1)
    for c in g.e_components:
        P, Po = solver.polarization[c]
        if solver.model.max_poles:
            st["P"][c] = P.reshape((ns,) + g.shape).copy()
            st["Po"][c] = Po.reshape((ns,) + g.shape).copy()
        else:
            st["P"][c] = np.zeros((1,) + g.shape, solver.dtype)
            st["Po"][c] = np.zeros((1,) + g.shape, solver.dtype)
    return st
