"""Pieces shared by the steppers: the E/P update of one row of segments."""

from __future__ import annotations

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
