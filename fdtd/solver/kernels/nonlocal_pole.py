r"""Kernels of the spatially dispersive (nonlocal) pole: its Laplacian term.

A nonlocal pole obeys ``P'' + a1 P' + a0 P - c_L lap P = b E``
(:class:`fdtd.media.materials.NonlocalLorentzPole`).  Its central-difference update is
the local one plus one term,

.. math:: P^{n+1} = c_1 P^n + c_2 P^{n-1} + c_3 E^n + c_4\,(L P^n),
          \qquad c_4 = c_L / (1/\Delta t^2 + a_1/(2\Delta t)),

with ``L`` the second-difference Laplacian on the polarization component's own
lattice, restricted to the nodes wholly inside the medium of the pole, with
Pekar's condition ``P = 0`` on the medium's surface entering through a
boundary-aware diagonal (:func:`boundary_diagonal`).  The steppers of :mod:`.yee1d`, :mod:`.yee_te`, :mod:`.yee_tm`
do the local part; because ``E^{n+1}`` depends linearly on ``P^{n+1} - P^n``,
adding ``Q = c_4 L P^n`` afterwards (``P^{n+1} += Q``, ``E^{n+1} -= Q/eps_inf``)
gives exactly the fused update.  :func:`prepass` computes ``Q`` from ``P^n``
(before the stepper) and keeps ``P^{n-1}`` for the bath tally;
:func:`postpass` applies it.  The steppers' bath tally is switched off for
nonlocal slots; :func:`postpass` books it with the corrected ``P^{n+1}``, and
the energy that leaves the ledger box through the polarization gradient
(summation by parts of ``L`` across the box faces, docs/theory/nonlocal-pole.md,
"Energy").

Arrays are 2D ``[row, col]``: a 1D grid is one row (``inv_h2[0] = 0``).
``P, Po`` (ns, rows, cols) hold one E component's polarization;
``mix`` (rows, cols) its mixture map; ``nlg[m, s]`` the global id of the
nonlocal pole in slot ``s`` of mixture ``m`` or -1; ``c4, kappa, bathc,
inv_eps`` per-mixture tables; ``inv_h2 = (1/dx^2, 1/dy^2)``; ``periodic``
(bool, bool) per axis; ``box = (r0, r1, q0, q1)`` the ledger box of this
component.
"""

from __future__ import annotations

import numpy as np
from numba import njit, prange

from fdtd.solver.kernels.options import PARALLEL, SERIAL


@njit(**SERIAL)
def _neighbour(i, n, step, periodic):
    """Index of the neighbour i + step, or -1 beyond a closed edge."""
    k = i + step
    if k < 0:
        return k + n if periodic else -1
    if k >= n:
        return k - n if periodic else -1
    return k


@njit(**SERIAL)
def _laplacian_at(P, s, mix, nlg, g, diag, i, j, inv_h2, periodic, r0, r1, q0, q1):
    """(L P)_ij over the nodes of pole group g: neighbours of the group in rows
    [r0, r1) and columns [q0, q1) (the whole grid for the update, the ledger box
    for energies) minus ``diag[i, j] P_ij`` (``diag`` holds the boundary-aware
    diagonal, see docs/theory/nonlocal-pole.md, "Surface")."""
    nr = mix.shape[0]
    nc = mix.shape[1]
    acc = -diag[i, j] * P[s, i, j]
    if inv_h2[0] != 0.0:
        for st in (-1, 1):
            k = _neighbour(i, nr, st, periodic[0])
            if k >= r0 and k < r1 and k >= 0 and nlg[mix[k, j], s] == g:
                acc += inv_h2[0] * P[s, k, j]
    for st in (-1, 1):
        k = _neighbour(j, nc, st, periodic[1])
        if k >= q0 and k < q1 and k >= 0 and nlg[mix[i, k], s] == g:
            acc += inv_h2[1] * P[s, i, k]
    return acc


@njit(**SERIAL)
def _prepass_row(P, Po, s, mix, nlg, c4, diag, inv_h2, periodic, Q, Pold, i):
    nc = mix.shape[1]
    for j in range(nc):
        g = nlg[mix[i, j], s]
        if g < 0:
            Q[i, j] = 0.0
            continue
        Q[i, j] = c4[mix[i, j], s] * _laplacian_at(P, s, mix, nlg, g, diag, i, j, inv_h2,
                                                  periodic, 0, mix.shape[0], 0, nc)
        Pold[i, j] = Po[s, i, j]


@njit(**PARALLEL)
def prepass(P, Po, s, mix, nlg, c4, diag, inv_h2, periodic, rows, Q, Pold):
    """Q = c4 L P^n and Pold = P^{n-1} on the nodes of nonlocal slot ``s``.

    ``rows`` = (first, stop) row range that holds such nodes."""
    for i in prange(rows[0], rows[1]):
        _prepass_row(P, Po, s, mix, nlg, c4, diag, inv_h2, periodic, Q, Pold, i)


@njit(**SERIAL)
def prepass_serial(P, Po, s, mix, nlg, c4, diag, inv_h2, periodic, rows, Q, Pold):
    """:func:`prepass` on one thread (from compiled loops over steps)."""
    for i in range(rows[0], rows[1]):
        _prepass_row(P, Po, s, mix, nlg, c4, diag, inv_h2, periodic, Q, Pold, i)


@njit(**SERIAL)
def postpass(P, Po, E, s, mix, nlg, inv_eps, Q, Pold, rows, tally, box, bathc, gid, bath_rows,
             kappa, inv_h2, periodic):
    """Apply Q to P^{n+1} and E^{n+1}; tally the bath heat of slot ``s`` in the box.

    On entry ``P`` holds the local part of P^{n+1}, ``Po`` holds P^n, ``Pold``
    P^{n-1}.  Adds ``bathc (P^{n+1} - P^{n-1})^2`` to ``bath_rows[i, gid]`` (the
    steppers' convention, scaled later by dV/(4 dt)).  Returns the sum over box
    nodes of ``-kappa/2 (P^{n+1} - P^{n-1})_i P^n_j inv_h2`` over member
    neighbours j outside the box: the energy that leaves the box through the
    polarization gradient (times dV)."""
    nc = mix.shape[1]
    r0, r1, q0, q1 = box[0], box[1], box[2], box[3]
    out = 0.0
    for i in range(rows[0], rows[1]):
        for j in range(nc):
            m = mix[i, j]
            g = nlg[m, s]
            if g < 0:
                continue
            q = Q[i, j]
            P[s, i, j] += q
            E[i, j] -= inv_eps[m] * q
            if tally and i >= r0 and i < r1 and j >= q0 and j < q1:
                d = P[s, i, j] - Pold[i, j]
                bath_rows[i, gid[m, s]] += bathc[m, s] * d * d
                # neighbours outside the box that belong to the same pole
                cross = 0.0
                if inv_h2[0] != 0.0:
                    for st in (-1, 1):
                        k = _neighbour(i, mix.shape[0], st, periodic[0])
                        if k >= 0 and (k < r0 or k >= r1) and nlg[mix[k, j], s] == g:
                            cross += inv_h2[0] * Po[s, k, j]
                for st in (-1, 1):
                    k = _neighbour(j, nc, st, periodic[1])
                    if k >= 0 and (k < q0 or k >= q1) and nlg[mix[i, k], s] == g:
                        cross += inv_h2[1] * Po[s, i, k]
                out += -0.5 * kappa[m, s] * d * cross
    return out


@njit(**SERIAL)
def gradient_energy(P, Po, s, mix, nlg, kappa, diag, inv_h2, periodic, box, wp_out):
    """Add ``-kappa/2 P^n_i (L_box P^{n-1})_i`` over the box nodes of slot ``s`` to
    ``wp_out[gid]`` (the nonlocal part of the pole energy W_p^{n-1/2}, per dV)."""
    r0, r1, q0, q1 = box[0], box[1], box[2], box[3]
    for i in range(r0, r1):
        for j in range(q0, q1):
            m = mix[i, j]
            g = nlg[m, s]
            if g < 0:
                continue
            lap = _laplacian_at(Po, s, mix, nlg, g, diag, i, j, inv_h2, periodic, r0, r1, q0, q1)
            wp_out[g] += -0.5 * kappa[m, s] * P[s, i, j] * lap


def laplacian_numpy(P2, member, diag, inv_h2, periodic):
    """NumPy twin of the masked Laplacian on one slot: ``P2`` (rows, cols),
    ``member`` bool (rows, cols) of one pole group, ``diag`` its diagonal;
    zero outside the group."""
    Pm = np.where(member, P2, 0.0)
    out = -diag * P2
    for axis, (ih2, per) in enumerate(zip(inv_h2, periodic, strict=True)):
        if ih2 == 0.0:
            continue
        up = np.roll(Pm, -1, axis=axis)
        dn = np.roll(Pm, 1, axis=axis)
        if not per:
            sl_last = [slice(None)] * 2
            sl_last[axis] = -1
            up[tuple(sl_last)] = 0.0
            sl_first = [slice(None)] * 2
            sl_first[axis] = 0
            dn[tuple(sl_first)] = 0.0
        out += ih2 * (up + dn)
    return np.where(member, out, 0.0)


def boundary_diagonal(member, fill_neighbour_source, inv_h2, periodic, wall=None, edge_delta=(0.5, 0.5)):
    """Diagonal of minus the Laplacian on the nodes of one pole group, (rows, cols).

    ``member`` bool (rows, cols): the nodes wholly inside the medium;
    ``fill_neighbour_source`` float (rows, cols): each node's fill fraction of the
    medium.  A member whose neighbour along an axis is not a member sees the surface at
    ``delta h`` with ``delta = 1/2 + f_nb`` (exact for a planar surface normal to that axis,
    from the dual-cell fractions), and Pekar's ``P = 0`` there enters through the ghost value
    ``-P (1 - delta)/delta``: the diagonal gets ``1/delta`` instead of 1 (symmetric,
    F. Gibou et al., J. Comput. Phys. 176, 205 (2002); checked).  A conducting-wall node
    (``wall``, bool (rows, cols)) is the surface itself: ``delta = 1``.  Beyond a closed edge
    the surface lies ``edge_delta[axis]`` cells away (1 for a component on integer nodes along
    that axis, whose wall is the wrapped node 0; 1/2 for one on half nodes).  With
    ``delta >= 1/2`` every Gershgorin disc of ``-L`` ends below ``sum_i 4/h_i^2``, the bulk
    bound."""
    diag = np.zeros(member.shape)
    if wall is None:
        wall = np.zeros(member.shape, dtype=bool)
    for axis, (ih2, per) in enumerate(zip(inv_h2, periodic, strict=True)):
        if ih2 == 0.0:
            continue
        for step in (-1, 1):
            nb_member = np.roll(member, -step, axis=axis)
            nb_fill = np.roll(fill_neighbour_source, -step, axis=axis)
            delta = 0.5 + np.clip(nb_fill, 0.0, 1.0)
            delta = np.where(np.roll(wall, -step, axis=axis), 1.0, delta)
            if not per:
                edge = [slice(None)] * 2
                edge[axis] = -1 if step == 1 else 0
                nb_member[tuple(edge)] = False
                delta[tuple(edge)] = edge_delta[axis]
            diag += ih2 * np.where(nb_member, 1.0, 1.0 / delta)
    return np.where(member, diag, 0.0)
