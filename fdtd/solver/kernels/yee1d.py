r"""One time step of the 1D grid (Ey, Hz along x) with ADE poles and CPML.

Normalized equations: ``dHz/dt = -dEy/dx``, ``dDy/dt = -dHz/dx - Jy``.
Ey[i] at x = i dx, Hz[i] at (i + 1/2) dx; index n wraps to 0.

Arguments: ``Ey, Hz`` float64 (n,); ``Py, Pyo`` float64 (ns, 1, n);
``seg`` the segments of the single row; ``coef``, ``prof_x`` as in
:mod:`.yee_te`; ``psi_hz_x, psi_ey_x`` float64 (n_pml,); ``bath_row``
float64 (n_gid,); ``box`` (0, 1, i0, i1): tally range along x;
``wrap_phase``: factor exp(i theta) of a Bloch-periodic x axis, of the fields'
dtype (1.0 for real fields: the update is then the plain periodic one, bit for
bit).  In a Bloch cell all field, polarization and psi arrays are complex128.
"""

from __future__ import annotations

from numba import njit

from fdtd.solver.kernels.common import update_e_row
from fdtd.solver.kernels.options import SERIAL


@njit(**SERIAL)
def step_1d(Ey, Hz, Py, Pyo, seg, coef, prof_x, psi_hz_x, psi_ey_x, tally, bath_row, gid,
            bathc, box, wrap_phase, curl, dsum):
    """Advance (Ey, Hz) and the polarization by one step; ``curl`` and ``dsum`` are
    scratch arrays like Ey (kept by the caller: nothing is allocated per step)."""
    n = Ey.shape[0]
    nlo, nhi, ck_i, ck_h, b_i, c_i, b_h, c_h = prof_x
    inv_eps, n_poles, c1, c2, c3 = coef
    for i in range(n - 1):
        Hz[i] -= ck_h[i] * (Ey[i + 1] - Ey[i])
    # across the wrap: Ey at index n is the next cell's Ey[0] = exp(i theta) Ey[0]
    Hz[n - 1] -= ck_h[n - 1] * (wrap_phase * Ey[0] - Ey[n - 1])
    for i in range(nlo):
        psi_hz_x[i] = b_h[i] * psi_hz_x[i] + c_h[i] * (Ey[i + 1] - Ey[i])
        Hz[i] -= psi_hz_x[i]
    for i in range(n - nhi, n):
        ii = i - (n - nhi) + nlo
        ip = i + 1
        if ip == n:
            ip = 0
        psi_hz_x[ii] = b_h[i] * psi_hz_x[ii] + c_h[i] * (Ey[ip] - Ey[i])
        Hz[i] -= psi_hz_x[ii]
    # Hz at index -1 is the previous cell's Hz[n-1] = exp(-i theta) Hz[n-1]
    curl[0] = -ck_i[0] * (Hz[0] - wrap_phase.conjugate() * Hz[n - 1])
    for i in range(1, n):
        curl[i] = -ck_i[i] * (Hz[i] - Hz[i - 1])
    for i in range(nlo):
        im = i - 1
        if im < 0:
            im = n - 1
        psi_ey_x[i] = b_i[i] * psi_ey_x[i] + c_i[i] * (Hz[i] - Hz[im])
        curl[i] -= psi_ey_x[i]
    for i in range(n - nhi, n):
        ii = i - (n - nhi) + nlo
        psi_ey_x[ii] = b_i[i] * psi_ey_x[ii] + c_i[i] * (Hz[i] - Hz[i - 1])
        curl[i] -= psi_ey_x[ii]
    ptr, st, sp, mx = seg
    update_e_row(Ey, Py, Pyo, 0, curl, dsum, ptr[0], ptr[1], st, sp, mx, inv_eps, n_poles,
                 c1, c2, c3, tally, box[2], box[3], bath_row, gid, bathc)
