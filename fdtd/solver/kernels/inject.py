"""Source injection and its work, compiled: the per-step part of a source's coupling.

``E -= dt J / eps_inf`` at the source's nodes (repeated indices add up, as
``np.subtract.at`` would), and the work ``-dt sum J . (E^n + E^{n+1})/2`` the
ledger books.  Plain arrays in; real fields only (complex Bloch runs keep the NumPy
form in the solver).
"""

from __future__ import annotations

from numba import njit

from fdtd.solver.kernels.options import SERIAL


@njit(**SERIAL)
def gather(ef, flat, out):
    """out[k] = ef[flat[k]] (E^n at the source nodes, before the step)."""
    for k in range(flat.shape[0]):
        out[k] = ef[flat[k]]


@njit(**SERIAL)
def inject(ef, flat, J, dt, inv_eps, mix_flat):
    """ef[flat[k]] -= dt J[k] inv_eps[mix_flat[flat[k]]] for every k."""
    for k in range(flat.shape[0]):
        i = flat[k]
        ef[i] -= dt * J[k] * inv_eps[mix_flat[i]]


@njit(**SERIAL)
def mean_field_dot(ef, flat, J, e0):
    """sum_k J[k] (e0[k] + ef[flat[k]]) / 2."""
    acc = 0.0
    for k in range(flat.shape[0]):
        acc += J[k] * (0.5 * (e0[k] + ef[flat[k]]))
    return acc


@njit(**SERIAL)
def face_flux(ef, hf, e_nodes, h_nodes, weights, e0):
    """sum_k weights[k] (e0[k] + ef[e_nodes[k]]) / 2 * hf[h_nodes[k]]: the ledger's outward
    Poynting flux through the box faces over one step (without the factor dt)."""
    acc = 0.0
    for k in range(e_nodes.shape[0]):
        acc += weights[k] * (0.5 * (e0[k] + ef[e_nodes[k]])) * hf[h_nodes[k]]
    return acc
