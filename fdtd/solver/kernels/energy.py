r"""Stored-energy terms of the discrete energy ledger (see docs/theory/energy-ledger.md).

At integer time level n the scheme conserves, in a lossless source-free
closed region,

.. math::
   T^n = \sum \tfrac12\varepsilon_\infty (E^n)^2 + \tfrac12 H^{n+1/2}H^{n-1/2}
        + \tfrac12 E^n\sum_s (P_s^n - P_s^{n-1})
        + \sum_s \Big[\frac{(P_s^n-P_s^{n-1})^2}{2 b_s\Delta t^2}
        + \frac{a_{0,s}}{2b_s} P_s^n P_s^{n-1}\Big],

summed over the region with weight dV.  The functions here compute the
pieces from the state at the start of step n (E^n, H^{n-1/2}, P^n, P^{n-1});
``H^{n+1/2}`` is formed on the fly with the plain (non-CPML) Yee update,
valid inside the ledger box.  Arrays are 2D ``[row, col]``; a 1D grid is
passed as a single row.

Complex fields (Bloch cell, docs/theory/bloch-cell.md): :func:`e_terms` is
called on the real and the imaginary parts and the results added; the H terms
take complex arrays and the wrap factor ``wrap_phase = exp(i theta)`` of the x
axis (1.0 for real fields, where they reduce to the real formulas bit for bit)
and return ``sum Re(conj(H^{n-1/2}) H^{n+1/2}) / 2``.
"""

from __future__ import annotations

import numpy as np
from numba import njit, prange

from fdtd.solver.kernels.options import PARALLEL, SERIAL, SERIAL_FAST


@njit(**SERIAL_FAST)
def _row_field_energy(E, mix, eps_inf, i, q0, q1):
    """sum eps_inf E^2 / 2 over one row (a reduction LLVM vectorizes under fastmath)."""
    acc = 0.0
    for j in range(q0, q1):
        e = E[i, j]
        acc += 0.5 * eps_inf[mix[i, j]] * e * e
    return acc


@njit(**SERIAL)
def e_terms(E, mix, P, Po, eps_inf, n_poles, kin, pot, gid, dt, r0, r1, q0, q1, wp_out):
    """Return (sum eps_inf E^2 / 2, sum E dP / 2) over rows [r0, r1), cols [q0, q1).

    Adds each pole's stored energy to ``wp_out[gid]``.  Sums are per unit dV.  The plain
    per-cell form, kept as the twin of :func:`e_terms_segments` (which the ledger uses).
    """
    we = 0.0
    wx = 0.0
    inv_dt2 = 1.0 / (dt * dt)
    for i in range(r0, r1):
        we += _row_field_energy(E, mix, eps_inf, i, q0, q1)
        for j in range(q0, q1):
            m = mix[i, j]
            npm = n_poles[m]
            if npm == 0:
                continue
            e = E[i, j]
            for s in range(npm):
                p = P[s, i, j]
                po = Po[s, i, j]
                d = p - po
                wx += 0.5 * e * d
                wp_out[gid[m, s]] += kin[m, s] * d * d * inv_dt2 + pot[m, s] * p * po
    return we, wx


@njit(**SERIAL_FAST)
def _seg_sums(e, p, po, j0, j1):
    """(sum e d, sum d^2, sum p po) over [j0, j1) with d = p - po (vectorized reductions)."""
    ed = 0.0
    dd = 0.0
    pp = 0.0
    for j in range(j0, j1):
        a = p[j]
        b = po[j]
        d = a - b
        ed += e[j] * d
        dd += d * d
        pp += a * b
    return ed, dd, pp


@njit(**SERIAL_FAST)
def _seg_square(e, j0, j1):
    acc = 0.0
    for j in range(j0, j1):
        acc += e[j] * e[j]
    return acc


@njit(**SERIAL)
def e_terms_segments(E, seg, P, Po, eps_inf, n_poles, kin, pot, gid, dt, r0, r1, q0, q1, wp_out):
    """:func:`e_terms` walking the row segments of the mixture map (``seg`` = (row_ptr,
    start, stop, mix), :class:`fdtd.space.model.Segments`): one mixture per segment, so
    every inner loop is a plain reduction over a contiguous slice.  The same sums as
    :func:`e_terms` up to round-off (reassociated); used by the ledger."""
    ptr, st, sp, mx = seg
    we = 0.0
    wx = 0.0
    inv_dt2 = 1.0 / (dt * dt)
    for i in range(r0, r1):
        e = E[i]
        for k in range(ptr[i], ptr[i + 1]):
            j0 = max(st[k], q0)
            j1 = min(sp[k], q1)
            if j1 <= j0:
                continue
            m = mx[k]
            we += 0.5 * eps_inf[m] * _seg_square(e, j0, j1)
            for s in range(n_poles[m]):
                ed, dd, pp = _seg_sums(e, P[s, i], Po[s, i], j0, j1)
                wx += 0.5 * ed
                wp_out[gid[m, s]] += kin[m, s] * dd * inv_dt2 + pot[m, s] * pp
    return we, wx


@njit(**SERIAL)
def _re_conj_product(a, b):
    """Re(conj(a) b); for real numbers a * b (the same bits)."""
    return (a.conjugate() * b).real


@njit(**SERIAL_FAST)
def _h_row_te(h, ey0, ey1, ex, kx, ky, ph, q0, q1):
    w = 0.0
    for j in range(q0, q1):
        hn = h[j] - kx * (ph * ey1[j] - ey0[j]) + ky * (ex[j + 1] - ex[j])
        w += (h[j].conjugate() * hn).real
    return w


@njit(**SERIAL)
def h_terms_te(Hz, Ex, Ey, kx, ky, r0, r1, q0, q1, wrap_phase):
    """sum Re(conj(Hz^{n-1/2}) Hz^{n+1/2}) / 2 with the plain update; kx = dt/dx, ky = dt/dy.

    ``wrap_phase``: exp(i theta) that Ey of row 0 carries when read from row nx-1.
    """
    nx, ny = Hz.shape
    w = 0.0
    qa = min(q1, ny - 1)             # columns whose j + 1 needs no wrap
    for i in range(r0, r1):
        ip = (i + 1) % nx
        ph = wrap_phase if ip == 0 else 1.0
        h, ey0, ey1, ex = Hz[i], Ey[i], Ey[ip], Ex[i]
        w += _h_row_te(h, ey0, ey1, ex, kx, ky, ph, q0, qa)
        for j in range(max(qa, q0), q1):
            jp = (j + 1) % ny
            hn = h[j] - kx * (ph * ey1[j] - ey0[j]) + ky * (ex[jp] - ex[j])
            w += _re_conj_product(h[j], hn)
    return 0.5 * w


@njit(**SERIAL_FAST)
def _h_row_tm_x(h, ez, ky, q0, q1):
    w = 0.0
    for j in range(q0, q1):
        w += (h[j].conjugate() * (h[j] - ky * (ez[j + 1] - ez[j]))).real
    return w


@njit(**SERIAL_FAST)
def _h_row_tm_y(h, ez0, ez1, kx, ph, q0, q1):
    w = 0.0
    for j in range(q0, q1):
        w += (h[j].conjugate() * (h[j] + kx * (ph * ez1[j] - ez0[j]))).real
    return w


@njit(**SERIAL)
def h_terms_tm(Hx, Hy, Ez, kx, ky, bx, by, wrap_phase):
    """sum Re(conj(Hx) Hx' + conj(Hy) Hy') / 2; bx, by = (r0, r1, q0, q1) boxes of Hx and Hy.

    ``wrap_phase``: exp(i theta) that Ez of row 0 carries when read from row nx-1.
    """
    nx, ny = Ez.shape
    w = 0.0
    qa = min(bx[3], ny - 1)
    for i in range(bx[0], bx[1]):
        h, ez = Hx[i], Ez[i]
        w += _h_row_tm_x(h, ez, ky, bx[2], qa)
        for j in range(max(qa, bx[2]), bx[3]):
            jp = (j + 1) % ny
            w += _re_conj_product(h[j], h[j] - ky * (ez[jp] - ez[j]))
    for i in range(by[0], by[1]):
        ip = (i + 1) % nx
        ph = wrap_phase if ip == 0 else 1.0
        w += _h_row_tm_y(Hy[i], Ez[i], Ez[ip], kx, ph, by[2], by[3])
    return 0.5 * w


@njit(**SERIAL)
def h_terms_1d(Hz, Ey, kx, q0, q1, wrap_phase):
    """sum Re(conj(Hz^{n-1/2}) Hz^{n+1/2}) / 2 over [q0, q1) of a 1D grid."""
    n = Hz.shape[0]
    w = 0.0
    for i in range(q0, q1):
        h = Hz[i]
        ip = (i + 1) % n
        ph = wrap_phase if ip == 0 else 1.0
        w += 0.5 * _re_conj_product(h, h - kx * (ph * Ey[ip] - Ey[i]))
    return w


@njit(**PARALLEL)
def sum_of_squares(a):
    """sum a^2 over a 2D array (NaN/inf propagate), parallel over rows."""
    n0 = a.shape[0]
    acc = np.zeros(n0)
    for i in prange(n0):
        s = 0.0
        row = a[i]
        for j in range(row.shape[0]):
            s += row[j] * row[j]
        acc[i] = s
    return acc.sum()
