"""Pieces shared by the steppers: the E/P update of one row of segments."""

from __future__ import annotations

import numpy as np
from numba import njit

from fdtd.solver.kernels.options import SERIAL


@njit(**SERIAL)
def pml_slot(i, n, n_lo, n_hi):
    """Index of node ``i`` in a compact psi array, or -1 outside the layers."""
    if i < n_lo:
        return i
    if i >= n - n_hi:
        return i - (n - n_hi) + n_lo
    return -1


@njit(**SERIAL)
def update_e_row(e_row, P, Po, i, curl, dsum, seg_lo, seg_hi, seg_start, seg_stop, seg_mix,
                 inv_eps, n_poles, c1, c2, c3, tally, t0, t1, bath_row, gid, bathc):
    """Advance one row of one E component and its polarization.

    ``e_row`` (length n) holds E^n and receives E^{n+1};
    ``curl[j]`` holds ``dt * (curl H)^{n+1/2}`` (CPML terms included);
    ``P[s, i]``/``Po[s, i]`` hold P^n / P^{n-1} of pole slot s and receive
    P^{n+1} / P^n.  Segment k of this row covers ``seg_start[k] <= j <
    seg_stop[k]`` with mixture ``seg_mix[k]``:

        P^{n+1} = c1 P^n + c2 P^{n-1} + c3 E^n
        E^{n+1} = E^n + inv_eps (curl - sum_s (P_s^{n+1} - P_s^n))

    If ``tally``, adds ``bathc[m, s] * |P^{n+1} - P^{n-1}|^2`` over
    ``t0 <= j < t1`` to ``bath_row[gid[m, s]]`` (heat handed to the bath,
    scaled later by dV / (4 dt)).

    The arrays ``e_row, curl, dsum, P, Po`` are all float64 (ordinary runs) or
    all complex128 (Bloch cells, docs/theory/bloch-cell.md); numba compiles one
    specialization per dtype.  ``bath_row`` is float64 in both.
    """
    for k in range(seg_lo, seg_hi):
        j0 = seg_start[k]
        j1 = seg_stop[k]
        m = seg_mix[k]
        ie = inv_eps[m]
        npol = n_poles[m]
        e = e_row[j0:j1]
        cu = curl[j0:j1]
        nj = j1 - j0
        if npol == 0:
            for j in range(nj):
                e[j] += ie * cu[j]
            continue
        ds = dsum[j0:j1]
        for j in range(nj):
            ds[j] = 0.0
        for s in range(npol):
            a = c1[m, s]
            b = c2[m, s]
            c = c3[m, s]
            p = P[s, i, j0:j1]
            po = Po[s, i, j0:j1]
            if tally and bathc[m, s] != 0.0:
                lo = max(t0 - j0, 0)
                hi = min(t1 - j0, nj)
                acc = 0.0
                for j in range(nj):
                    pn = p[j]
                    pold = po[j]
                    pnew = a * pn + b * pold + c * e[j]
                    po[j] = pn
                    p[j] = pnew
                    ds[j] += pnew - pn
                    if j >= lo and j < hi:
                        d = pnew - pold
                        # |d|^2: d * d for real fields (same bits), Re(d conj d) for complex
                        acc += (d * d.conjugate()).real
                bath_row[gid[m, s]] += bathc[m, s] * acc
            else:
                for j in range(nj):
                    pn = p[j]
                    pnew = a * pn + b * po[j] + c * e[j]
                    po[j] = pn
                    p[j] = pnew
                    ds[j] += pnew - pn
        for j in range(nj):
            e[j] += ie * (cu[j] - ds[j])


#: what a temporally blocked sweep does on a row: its H update, its E update, or both (H first)
DO_H = 1
DO_E = 2


@njit(**SERIAL)
def blocked_schedule(nx, nchunks, levels):
    """The row updates of ``levels`` temporally blocked steps (docs/theory/temporal-blocking.md),
    shared by the TE_z and TM_z drivers.

    Returns ``(ops1, n1, ops2, n2)``: ``ops1[k, :n1[k]]`` are the (row, DO_H | DO_E) updates of
    row block k in phase 1 (a wavefront, level s on row r - s + 1, valid rows shrinking by one
    per level at both ends); ``ops2[k, :n2[k]]`` those of the fill around the boundary at the
    start of block k (the x wrap for k = 0), level by level.  The blocks of one phase touch
    disjoint rows when each holds at least 2 * levels + 2 rows."""
    longest = 0
    for k in range(nchunks):
        longest = max(longest, (k + 1) * nx // nchunks - k * nx // nchunks)
    ops1 = np.empty((nchunks, (longest + levels) * levels, 2), dtype=np.int64)
    n1 = np.zeros(nchunks, dtype=np.int64)
    ops2 = np.empty((nchunks, levels * (2 * levels + 1), 2), dtype=np.int64)
    n2 = np.zeros(nchunks, dtype=np.int64)
    for k in range(nchunks):
        a = k * nx // nchunks
        b = (k + 1) * nx // nchunks
        q = 0
        for r in range(a, b + levels - 1):
            for s in range(1, levels + 1):
                i = r - s + 1
                if i >= a + s - 1 and i < b - s:
                    ops1[k, q, 0] = i
                    ops1[k, q, 1] = DO_H | (DO_E if i >= a + s else 0)
                    q += 1
        n1[k] = q
        q = 0
        for s in range(1, levels + 1):
            for d in range(-s, s):
                ops2[k, q, 0] = (a + d + nx) % nx
                ops2[k, q, 1] = DO_E | (DO_H if d < s - 1 else 0)
                q += 1
        n2[k] = q
    return ops1, n1, ops2, n2
