r"""One time step of the 2D TM_z grid (Ez, Hx, Hy) with ADE poles and CPML.

Normalized Maxwell equations::

    dHx/dt = -dEz/dy
    dHy/dt =  dEz/dx
    dDz/dt =  dHy/dx - dHx/dy - Jz     (J is added by the caller)

Staggering: Ez[i, j] at (i, j), Hx[i, j] at (i, j+1/2), Hy[i, j] at
(i+1/2, j); index n wraps to 0.  Arguments follow :mod:`.yee_te`:
``psi_hy_x, psi_ez_x`` have shape (n_pml_x, ny), ``psi_hx_y, psi_ez_y``
(nx, n_pml_y); ``seg`` are the row segments of the Ez map, ``box`` its tally
ranges; ``wrap_phase`` is exp(i theta) of a Bloch-periodic x axis (1.0 for real
fields; see :mod:`.yee_te`): row nx-1 reads Ez of row 0 times it, row 0 reads
Hy of row nx-1 times its conjugate.  Row i of Ez needs rows i and i-1 of Hy; row i of H needs rows i and
i+1 of Ez, so the same two-phase fused sweep applies.
"""

from __future__ import annotations

import numpy as np
from numba import njit, prange

from fdtd.solver.kernels.common import DO_E, DO_H, blocked_schedule, pml_slot, update_e_row
from fdtd.solver.kernels.options import PARALLEL, SERIAL


@njit(**SERIAL)
def _h_row(i, Ez, Hx, Hy, prof_x, prof_y, psi_hy_x, psi_hx_y, wrap_phase):
    nx, ny = Ez.shape
    nxlo, nxhi, ckx_i, ckx_h, bx_i, cx_i, bx_h, cx_h = prof_x
    nylo, nyhi, cky_i, cky_h, by_i, cy_i, by_h, cy_h = prof_y
    ip = i + 1
    if ip == nx:
        ip = 0
    ez = Ez[i]
    ez1 = Ez[ip]
    hx = Hx[i]
    hy = Hy[i]
    for j in range(ny - 1):
        hx[j] -= cky_h[j] * (ez[j + 1] - ez[j])
    hx[ny - 1] -= cky_h[ny - 1] * (ez[0] - ez[ny - 1])
    kx = ckx_h[i]
    if ip == 0:
        # across the x wrap: row nx is the next cell's row 0, exp(i theta) Ez[0]
        ph = wrap_phase
        for j in range(ny):
            hy[j] += kx * (ph * ez1[j] - ez[j])
    else:
        for j in range(ny):
            hy[j] += kx * (ez1[j] - ez[j])
    ii = pml_slot(i, nx, nxlo, nxhi)
    if ii >= 0:
        b = bx_h[i]
        c = cx_h[i]
        ps = psi_hy_x[ii]
        for j in range(ny):
            ps[j] = b * ps[j] + c * (ez1[j] - ez[j])
            hy[j] += ps[j]
    if nylo + nyhi > 0:
        ps = psi_hx_y[i]
        for j in range(nylo):
            ps[j] = by_h[j] * ps[j] + cy_h[j] * (ez[j + 1] - ez[j])
            hx[j] -= ps[j]
        for j in range(ny - nyhi, ny):
            jj = j - (ny - nyhi) + nylo
            jn = j + 1
            if jn == ny:
                jn = 0
            ps[jj] = by_h[j] * ps[jj] + cy_h[j] * (ez[jn] - ez[j])
            hx[j] -= ps[jj]


@njit(**SERIAL)
def _e_row(i, Ez, Hx, Hy, Pz, Pzo, seg, coef, prof_x, prof_y, psi_ez_x, psi_ez_y,
           curl, dsum, tally, bath_row, gid, bathc, box, wrap_phase):
    nx, ny = Ez.shape
    nxlo, nxhi, ckx_i, ckx_h, bx_i, cx_i, bx_h, cx_h = prof_x
    nylo, nyhi, cky_i, cky_h, by_i, cy_i, by_h, cy_h = prof_y
    inv_eps, n_poles, c1, c2, c3 = coef
    im = i - 1
    if im < 0:
        im = nx - 1
    hy = Hy[i]
    hym = Hy[im]
    hx = Hx[i]
    kx = ckx_i[i]
    if i == 0:
        # across the x wrap: row -1 is the previous cell's row nx-1, exp(-i theta) Hy[nx-1]
        phm = wrap_phase.conjugate()
        curl[0] = kx * (hy[0] - phm * hym[0]) - cky_i[0] * (hx[0] - hx[ny - 1])
        for j in range(1, ny):
            curl[j] = kx * (hy[j] - phm * hym[j]) - cky_i[j] * (hx[j] - hx[j - 1])
    else:
        curl[0] = kx * (hy[0] - hym[0]) - cky_i[0] * (hx[0] - hx[ny - 1])
        for j in range(1, ny):
            curl[j] = kx * (hy[j] - hym[j]) - cky_i[j] * (hx[j] - hx[j - 1])
    ii = pml_slot(i, nx, nxlo, nxhi)
    if ii >= 0:
        b = bx_i[i]
        c = cx_i[i]
        ps = psi_ez_x[ii]
        for j in range(ny):
            ps[j] = b * ps[j] + c * (hy[j] - hym[j])
            curl[j] += ps[j]
    if nylo + nyhi > 0:
        ps = psi_ez_y[i]
        for j in range(nylo):
            jm = j - 1
            if jm < 0:
                jm = ny - 1
            ps[j] = by_i[j] * ps[j] + cy_i[j] * (hx[j] - hx[jm])
            curl[j] -= ps[j]
        for j in range(ny - nyhi, ny):
            jj = j - (ny - nyhi) + nylo
            ps[jj] = by_i[j] * ps[jj] + cy_i[j] * (hx[j] - hx[j - 1])
            curl[j] -= ps[jj]
    ptr, st, sp, mx = seg
    t_on = tally and i >= box[0] and i < box[1]
    update_e_row(Ez[i], Pz, Pzo, i, curl, dsum, ptr[i], ptr[i + 1], st, sp, mx,
                 inv_eps, n_poles, c1, c2, c3, t_on, box[2], box[3], bath_row, gid, bathc)


@njit(**PARALLEL)
def step_tm(Ez, Hx, Hy, Pz, Pzo, seg, coef, prof_x, prof_y, psi_hy_x, psi_ez_x, psi_hx_y,
            psi_ez_y, nchunks, tally, bath_rows, gid, bathc, box, wrap_phase):
    """Advance (Ez, Hx, Hy) and the polarization by one step (see module doc)."""
    nx, ny = Ez.shape
    for c in prange(nchunks):
        i_last = (c + 1) * nx // nchunks - 1
        if i_last >= c * nx // nchunks:
            _h_row(i_last, Ez, Hx, Hy, prof_x, prof_y, psi_hy_x, psi_hx_y, wrap_phase)
    for c in prange(nchunks):
        i0 = c * nx // nchunks
        i1 = (c + 1) * nx // nchunks
        curl = np.empty_like(Ez[0])
        dsum = np.empty_like(Ez[0])
        for i in range(i0, i1):
            if i != i1 - 1:
                _h_row(i, Ez, Hx, Hy, prof_x, prof_y, psi_hy_x, psi_hx_y, wrap_phase)
            _e_row(i, Ez, Hx, Hy, Pz, Pzo, seg, coef, prof_x, prof_y, psi_ez_x, psi_ez_y,
                   curl, dsum, tally, bath_rows[i], gid, bathc, box, wrap_phase)


@njit(**PARALLEL)
def step_tm_blocked(Ez, Hx, Hy, Pz, Pzo, seg, coef, prof_x, prof_y, psi_hy_x, psi_ez_x, psi_hx_y,
                    psi_ez_y, nchunks, levels, tally, bath_rows, gid, bathc, box, wrap_phase):
    """Advance by ``levels`` steps in two sweeps, bit-identical to ``levels`` calls of
    :func:`step_tm` (the schedule of :func:`fdtd.solver.kernels.yee_te.step_te_blocked`)."""
    ops1, n1, ops2, n2 = blocked_schedule(Ez.shape[0], nchunks, levels)
    for phase in range(2):
        ops, n = (ops1, n1) if phase == 0 else (ops2, n2)
        for k in prange(nchunks):
            curl = np.empty_like(Ez[0])
            dsum = np.empty_like(Ez[0])
            for q in range(n[k]):
                i = ops[k, q, 0]
                what = ops[k, q, 1]
                if what & DO_H:
                    _h_row(i, Ez, Hx, Hy, prof_x, prof_y, psi_hy_x, psi_hx_y, wrap_phase)
                if what & DO_E:
                    _e_row(i, Ez, Hx, Hy, Pz, Pzo, seg, coef, prof_x, prof_y, psi_ez_x, psi_ez_y,
                           curl, dsum, tally, bath_rows[i], gid, bathc, box, wrap_phase)
