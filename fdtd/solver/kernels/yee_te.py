r"""One time step of the 2D TE_z grid (Ex, Ey, Hz) with ADE poles and CPML.

Normalized Maxwell equations (c = eps0 = mu0 = 1)::

    dHz/dt = -(dEy/dx - dEx/dy)
    dDx/dt =  dHz/dy - Jx          (J is added by the caller)
    dDy/dt = -dHz/dx - Jy

Staggering (see :mod:`fdtd.space.grid`): Ex[i, j] at (i+1/2, j), Ey[i, j] at
(i, j+1/2), Hz[i, j] at (i+1/2, j+1/2); index n wraps to 0.

Arguments
---------
Ex, Ey, Hz : float64 (nx, ny)
    E^n and H^{n-1/2} on entry, E^{n+1} and H^{n+1/2} on exit.
Px, Pxo, Py, Pyo : float64 (ns, nx, ny)
    Polarization P^n, P^{n-1} per pole slot (P^{n+1}, P^n on exit).
seg_x, seg_y : tuples (row_ptr, start, stop, mix) of int64 arrays
    Row segments of the Ex / Ey mixture maps (:class:`fdtd.space.model.Segments`).
coef : tuple (inv_eps, n_poles, c1, c2, c3)
    Per-mixture tables (:meth:`fdtd.space.model.Model.kernel_tables`).
prof_x, prof_y : tuples (n_lo, n_hi, ck_int, ck_half, b_int, c_int, b_half, c_half)
    ``ck = dt / (Delta kappa)`` at integer / half nodes; CPML recursion
    coefficients b and c (c times dt/Delta: psi arrays hold dt * psi).
psi_hz_x, psi_ey_x : float64 (n_pml_x, ny)
psi_hz_y, psi_ex_y : float64 (nx, n_pml_y)
nchunks : int
    Number of row blocks (the thread count).
tally : bool; bath_rows : float64 (nx, n_gid); gid, bathc : (n_mix, ns)
box_x, box_y : int64 (4,) row/column ranges of Ex / Ey where the bath is tallied.
wrap_phase : float64 or complex128
    exp(i theta) of a Bloch-periodic x axis (docs/theory/bloch-cell.md): row
    nx-1 reads Ey of row 0 times it, row 0 reads Hz of row nx-1 times its
    conjugate.  Real runs pass 1.0 (the same bits as the plain wrap); Bloch runs
    pass a complex128 and complex128 field, polarization and psi arrays (numba
    compiles a separate specialization).  The y wrap never carries a phase.

The H and E updates are fused row by row: row i of E needs rows i and i-1 of
H^{n+1/2}; row i of H needs rows i and i+1 of E^n.  Each block first updates
H on its last row (phase 1), then sweeps its rows doing H(i) then E(i).
"""

from __future__ import annotations

import numpy as np
from numba import njit, prange

from fdtd.solver.kernels.common import DO_E, DO_H, blocked_schedule, pml_slot, update_e_row
from fdtd.solver.kernels.options import PARALLEL, SERIAL


@njit(**SERIAL)
def _h_row(i, Ex, Ey, Hz, prof_x, prof_y, psi_hz_x, psi_hz_y, wrap_phase):
    nx, ny = Hz.shape
    nxlo, nxhi, ckx_i, ckx_h, bx_i, cx_i, bx_h, cx_h = prof_x
    nylo, nyhi, cky_i, cky_h, by_i, cy_i, by_h, cy_h = prof_y
    ip = i + 1
    if ip == nx:
        ip = 0
    hz = Hz[i]
    ey0 = Ey[i]
    ey1 = Ey[ip]
    ex = Ex[i]
    kx = ckx_h[i]
    if ip == 0:
        # across the x wrap: row nx is the next cell's row 0, exp(i theta) Ey[0]
        ph = wrap_phase
        for j in range(ny - 1):
            hz[j] -= kx * (ph * ey1[j] - ey0[j]) - cky_h[j] * (ex[j + 1] - ex[j])
        hz[ny - 1] -= kx * (ph * ey1[ny - 1] - ey0[ny - 1]) - cky_h[ny - 1] * (ex[0] - ex[ny - 1])
    else:
        for j in range(ny - 1):
            hz[j] -= kx * (ey1[j] - ey0[j]) - cky_h[j] * (ex[j + 1] - ex[j])
        hz[ny - 1] -= kx * (ey1[ny - 1] - ey0[ny - 1]) - cky_h[ny - 1] * (ex[0] - ex[ny - 1])
    ii = pml_slot(i, nx, nxlo, nxhi)
    if ii >= 0:
        b = bx_h[i]
        c = cx_h[i]
        ps = psi_hz_x[ii]
        for j in range(ny):
            ps[j] = b * ps[j] + c * (ey1[j] - ey0[j])
            hz[j] -= ps[j]
    if nylo + nyhi > 0:
        ps = psi_hz_y[i]
        for j in range(nylo):
            ps[j] = by_h[j] * ps[j] + cy_h[j] * (ex[j + 1] - ex[j])
            hz[j] += ps[j]
        for j in range(ny - nyhi, ny):
            jj = j - (ny - nyhi) + nylo
            jn = j + 1
            if jn == ny:
                jn = 0
            ps[jj] = by_h[j] * ps[jj] + cy_h[j] * (ex[jn] - ex[j])
            hz[j] += ps[jj]


@njit(**SERIAL)
def _e_rows(i, Ex, Ey, Hz, Px, Pxo, Py, Pyo, seg_x, seg_y, coef, prof_x, prof_y,
            psi_ex_y, psi_ey_x, curl, dsum, tally, bath_row, gid, bathc, box_x, box_y, wrap_phase):
    nx, ny = Hz.shape
    nxlo, nxhi, ckx_i, ckx_h, bx_i, cx_i, bx_h, cx_h = prof_x
    nylo, nyhi, cky_i, cky_h, by_i, cy_i, by_h, cy_h = prof_y
    inv_eps, n_poles, c1, c2, c3 = coef
    hz = Hz[i]
    # ---- Ex at (i+1/2, j): dDx/dt = dHz/dy
    curl[0] = cky_i[0] * (hz[0] - hz[ny - 1])
    for j in range(1, ny):
        curl[j] = cky_i[j] * (hz[j] - hz[j - 1])
    if nylo + nyhi > 0:
        ps = psi_ex_y[i]
        for j in range(nylo):
            jm = j - 1
            if jm < 0:
                jm = ny - 1
            ps[j] = by_i[j] * ps[j] + cy_i[j] * (hz[j] - hz[jm])
            curl[j] += ps[j]
        for j in range(ny - nyhi, ny):
            jj = j - (ny - nyhi) + nylo
            ps[jj] = by_i[j] * ps[jj] + cy_i[j] * (hz[j] - hz[j - 1])
            curl[j] += ps[jj]
    ptr, st, sp, mx = seg_x
    t_on = tally and i >= box_x[0] and i < box_x[1]
    update_e_row(Ex[i], Px, Pxo, i, curl, dsum, ptr[i], ptr[i + 1], st, sp, mx,
                 inv_eps, n_poles, c1, c2, c3, t_on, box_x[2], box_x[3], bath_row, gid, bathc)
    # ---- Ey at (i, j+1/2): dDy/dt = -dHz/dx
    im = i - 1
    if im < 0:
        im = nx - 1
    hzm = Hz[im]
    kx = ckx_i[i]
    if i == 0:
        # across the x wrap: row -1 is the previous cell's row nx-1, exp(-i theta) Hz[nx-1]
        phm = wrap_phase.conjugate()
        for j in range(ny):
            curl[j] = -kx * (hz[j] - phm * hzm[j])
    else:
        for j in range(ny):
            curl[j] = -kx * (hz[j] - hzm[j])
    ii = pml_slot(i, nx, nxlo, nxhi)
    if ii >= 0:
        b = bx_i[i]
        c = cx_i[i]
        ps = psi_ey_x[ii]
        for j in range(ny):
            ps[j] = b * ps[j] + c * (hz[j] - hzm[j])
            curl[j] -= ps[j]
    ptr, st, sp, mx = seg_y
    t_on = tally and i >= box_y[0] and i < box_y[1]
    update_e_row(Ey[i], Py, Pyo, i, curl, dsum, ptr[i], ptr[i + 1], st, sp, mx,
                 inv_eps, n_poles, c1, c2, c3, t_on, box_y[2], box_y[3], bath_row, gid, bathc)


@njit(**PARALLEL)
def step_te(Ex, Ey, Hz, Px, Pxo, Py, Pyo, seg_x, seg_y, coef, prof_x, prof_y,
            psi_hz_x, psi_ey_x, psi_hz_y, psi_ex_y, nchunks, tally, bath_rows, gid, bathc,
            box_x, box_y, wrap_phase):
    """Advance (Ex, Ey, Hz) and the polarization by one step (see module doc)."""
    nx, ny = Hz.shape
    for c in prange(nchunks):
        i_last = (c + 1) * nx // nchunks - 1
        if i_last >= c * nx // nchunks:
            _h_row(i_last, Ex, Ey, Hz, prof_x, prof_y, psi_hz_x, psi_hz_y, wrap_phase)
    for c in prange(nchunks):
        i0 = c * nx // nchunks
        i1 = (c + 1) * nx // nchunks
        curl = np.empty_like(Hz[0])
        dsum = np.empty_like(Hz[0])
        for i in range(i0, i1):
            if i != i1 - 1:
                _h_row(i, Ex, Ey, Hz, prof_x, prof_y, psi_hz_x, psi_hz_y, wrap_phase)
            _e_rows(i, Ex, Ey, Hz, Px, Pxo, Py, Pyo, seg_x, seg_y, coef, prof_x, prof_y,
                    psi_ex_y, psi_ey_x, curl, dsum, tally, bath_rows[i], gid, bathc, box_x, box_y,
                    wrap_phase)



@njit(**PARALLEL)
def step_te_blocked(Ex, Ey, Hz, Px, Pxo, Py, Pyo, seg_x, seg_y, coef, prof_x, prof_y,
                    psi_hz_x, psi_ey_x, psi_hz_y, psi_ex_y, nchunks, levels, tally, bath_rows, gid,
                    bathc, box_x, box_y, wrap_phase):
    """Advance by ``levels`` steps in two sweeps (temporal blocking), bit-identical to
    ``levels`` calls of :func:`step_te`.  Schedule (docs/theory/temporal-blocking.md):
    each row block advances its interior as a wavefront, level s on row r - s + 1 (a
    trapezoid shrinking by one row per level at both ends); then the V-shaped gaps
    around the block boundaries (the x wrap included) are filled level by level.
    Each of the ``nchunks`` row blocks must hold at least 2 * levels + 2 rows."""
    ops1, n1, ops2, n2 = blocked_schedule(Hz.shape[0], nchunks, levels)
    for phase in range(2):
        ops, n = (ops1, n1) if phase == 0 else (ops2, n2)
        for k in prange(nchunks):
            curl = np.empty_like(Hz[0])
            dsum = np.empty_like(Hz[0])
            for q in range(n[k]):
                i = ops[k, q, 0]
                what = ops[k, q, 1]
                if what & DO_H:
                    _h_row(i, Ex, Ey, Hz, prof_x, prof_y, psi_hz_x, psi_hz_y, wrap_phase)
                if what & DO_E:
                    _e_rows(i, Ex, Ey, Hz, Px, Pxo, Py, Pyo, seg_x, seg_y, coef, prof_x, prof_y,
                            psi_ex_y, psi_ey_x, curl, dsum, tally, bath_rows[i], gid, bathc,
                            box_x, box_y, wrap_phase)
