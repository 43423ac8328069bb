r"""Deposition of moving sources onto the Yee grid (small dense patches).

Positions are in cells, measured from storage index 0 of the integer nodes
(``X = (x - x0) / dx``).  Every function returns the lower storage index of a
patch and the patch arrays; the caller wraps indices on periodic axes and
checks them against the interior on closed ones.

Charges (TE_z only): the charge-conserving scheme of T. Zh. Esirkepov,
"Exact charge conservation scheme for Particle-in-Cell simulation with an
arbitrary form-factor", Comput. Phys. Commun. 135, 144 (2001), eqs. (21)-(24)
for 2D (reference checked; eq. numbers from memory).  For a move (X0, Y0) -> (X1, Y1) in a step,
with node shapes Sx0, Sx1, Sy0, Sy1,

    Wx = (Sx1 - Sx0) (Sy0 + Sy1) / 2,     Wy = (Sx0 + Sx1) (Sy1 - Sy0) / 2,
    Jx[i+1/2, j] = -(q dx / (dV dt)) sum_{i' <= i} Wx[i', j],
    Jy[i, j+1/2] = -(q dy / (dV dt)) sum_{j' <= j} Wy[i, j'],

so that (rho^{n+1} - rho^n)/dt + div J = 0 exactly with rho = q Sx Sy / dV.

Dipoles: lab polarization density P deposited with node shapes along axes
where the component sits on integer nodes and half shapes
(:func:`fdtd.sources.shapes.half_weights`) where it sits on half nodes; the
magnetization M = P x v of the step uses the mean moment, the chord velocity
and step-averaged half shapes (:func:`step_half_weights`); then
``J = (P^{n+1} - P^n)/dt + curl M`` with the same discrete curl as the E
update, so ``div J = -div (P^{n+1} - P^n)/dt`` exactly.  For motion along an
axis the convective part of dP/dt and curl M cancel to round-off, as for a
pair of opposite charges (Esirkepov) in the limit of small separation.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from fdtd.solver.kernels.bspline import half_weights, node_weights
from fdtd.solver.kernels.options import SERIAL


@njit(**SERIAL)
def _span(a, b, hs):
    lo = int(math.floor(min(a, b) - hs)) - 1
    hi = int(math.ceil(max(a, b) + hs)) + 1
    return lo, hi - lo + 1


@njit(**SERIAL)
def esirkepov_te(X0, Y0, X1, Y1, order, scale):
    """Dimensionless Esirkepov sums for one step of a point charge.

    Returns ``(i0, j0, cx, cy)`` with ``cx[a, b] = -sum_{a' <= a} Wx[a', b]`` at
    Ex storage index (i0 + a, j0 + b) and ``cy[a, b] = -sum_{b' <= b} Wy[a, b']``
    at Ey storage index (i0 + a, j0 + b).  Then Jx = q dx/(dV dt) cx and
    Jy = q dy/(dV dt) cy.
    """
    hs = 0.5 * (order + 1) * scale
    i0, ni = _span(X0, X1, hs)
    j0, nj = _span(Y0, Y1, hs)
    sx0 = node_weights(order, scale, X0, i0, ni)
    sx1 = node_weights(order, scale, X1, i0, ni)
    sy0 = node_weights(order, scale, Y0, j0, nj)
    sy1 = node_weights(order, scale, Y1, j0, nj)
    cx = np.zeros((ni, nj))
    cy = np.zeros((ni, nj))
    for b in range(nj):
        acc = 0.0
        ys = 0.5 * (sy0[b] + sy1[b])
        for a in range(ni):
            acc -= (sx1[a] - sx0[a]) * ys
            cx[a, b] = acc
    for a in range(ni):
        acc = 0.0
        xs = 0.5 * (sx0[a] + sx1[a])
        for b in range(nj):
            acc -= xs * (sy1[b] - sy0[b])
            cy[a, b] = acc
    return i0, j0, cx, cy


@njit(**SERIAL)
def charge_nodes_te(X, Y, order, scale):
    """(i0, j0, w) with w[a, b] = Sx(i0+a - X) Sy(j0+b - Y): the node charge fraction."""
    hs = 0.5 * (order + 1) * scale
    i0, ni = _span(X, X, hs)
    j0, nj = _span(Y, Y, hs)
    sx = node_weights(order, scale, X, i0, ni)
    sy = node_weights(order, scale, Y, j0, nj)
    w = np.empty((ni, nj))
    for a in range(ni):
        for b in range(nj):
            w[a, b] = sx[a] * sy[b]
    return i0, j0, w


@njit(**SERIAL)
def step_half_weights(order, scale, X0, X1, i0, n):
    """Half-node shape averaged over a straight move X0 -> X1 within one step.

    ``A[k] = (1/(X1-X0)) int h(i0+k+1/2 - X) dX = -sum_{k'<=k} (S(i0+k'-X1) - S(i0+k'-X0)) / (X1-X0)``,
    so that ``v (A[k] - A[k-1]) / Delta = -(S^1 - S^0)/dt`` exactly: the
    magnetization current cancels the convective part of dP/dt to round-off,
    which is what a pair of opposite charges gives in the limit of small
    separation.  Falls back to the half shape at X0 for |X1 - X0| < 1e-12.
    """
    dX = X1 - X0
    if abs(dX) < 1e-12:
        return half_weights(order, scale, X0, i0, n)
    s0 = node_weights(order, scale, X0, i0, n)
    s1 = node_weights(order, scale, X1, i0, n)
    A = np.empty(n)
    acc = 0.0
    for k in range(n):
        acc -= s1[k] - s0[k]
        A[k] = acc / dX
    return A


@njit(**SERIAL)
def dipole_te(Xs, Ys, pxs, pys, order, scale, dx, dy, dt):
    """Current patch of an in-plane point dipole over one step (TE_z).

    ``Xs, Ys`` (2,) position in cells and ``pxs, pys`` (2,) lab moment at
    t_n and t_{n+1}.  J = (P^{n+1} - P^n)/dt + curl M with M = Pbar x v,
    ``Pbar`` the mean moment of the step, v the chord velocity and the
    step-averaged half shapes (:func:`step_half_weights`).  Returns
    ``(i0, j0, jx, jy)`` at Ex and Ey storage indices (i0 + a, j0 + b).
    """
    hs = 0.5 * (order + 1) * scale
    i0, ni = _span(Xs[0], Xs[1], hs)
    j0, nj = _span(Ys[0], Ys[1], hs)
    dV = dx * dy
    jx = np.zeros((ni, nj))
    jy = np.zeros((ni, nj))
    for lvl in range(2):
        sgn = (1.0 if lvl == 1 else -1.0) / (dt * dV)
        wx = node_weights(order, scale, Xs[lvl], i0, ni)
        wy = node_weights(order, scale, Ys[lvl], j0, nj)
        hx = half_weights(order, scale, Xs[lvl], i0, ni)
        hy = half_weights(order, scale, Ys[lvl], j0, nj)
        for a in range(ni):
            for b in range(nj):
                jx[a, b] += sgn * pxs[lvl] * hx[a] * wy[b]
                jy[a, b] += sgn * pys[lvl] * wx[a] * hy[b]
    vx = (Xs[1] - Xs[0]) * dx / dt
    vy = (Ys[1] - Ys[0]) * dy / dt
    px = 0.5 * (pxs[0] + pxs[1])
    py = 0.5 * (pys[0] + pys[1])
    mz_amp = (px * vy - py * vx) / dV       # M_z = (P x v)_z at Hz nodes (half, half)
    if mz_amp != 0.0:
        ax = step_half_weights(order, scale, Xs[0], Xs[1], i0, ni)
        ay = step_half_weights(order, scale, Ys[0], Ys[1], j0, nj)
        for a in range(ni):
            for b in range(nj):
                m = mz_amp * ax[a] * ay[b]
                mb = mz_amp * ax[a] * ay[b - 1] if b > 0 else 0.0
                ma = mz_amp * ax[a - 1] * ay[b] if a > 0 else 0.0
                jx[a, b] += (m - mb) / dy       # (curl M)_x = dMz/dy
                jy[a, b] -= (m - ma) / dx       # (curl M)_y = -dMz/dx
    return i0, j0, jx, jy


@njit(**SERIAL)
def dipole_tm(Xs, Ys, pzs, order, scale, dx, dy, dt):
    """Current patch of an out-of-plane point dipole (TM_z); returns (i0, j0, jz).

    Same construction as :func:`dipole_te`: Mx = -Pz vy at Hx (node, half),
    My = Pz vx at Hy (half, node).
    """
    hs = 0.5 * (order + 1) * scale
    i0, ni = _span(Xs[0], Xs[1], hs)
    j0, nj = _span(Ys[0], Ys[1], hs)
    dV = dx * dy
    jz = np.zeros((ni, nj))
    for lvl in range(2):
        sgn = (1.0 if lvl == 1 else -1.0) / (dt * dV)
        wx = node_weights(order, scale, Xs[lvl], i0, ni)
        wy = node_weights(order, scale, Ys[lvl], j0, nj)
        for a in range(ni):
            for b in range(nj):
                jz[a, b] += sgn * pzs[lvl] * wx[a] * wy[b]
    vx = (Xs[1] - Xs[0]) * dx / dt
    vy = (Ys[1] - Ys[0]) * dy / dt
    pz = 0.5 * (pzs[0] + pzs[1])
    mx_amp = -pz * vy / dV
    my_amp = pz * vx / dV
    if mx_amp != 0.0 or my_amp != 0.0:
        # node shapes on the axis where M sits on nodes: the step average of S
        wx = 0.5 * (node_weights(order, scale, Xs[0], i0, ni) + node_weights(order, scale, Xs[1], i0, ni))
        wy = 0.5 * (node_weights(order, scale, Ys[0], j0, nj) + node_weights(order, scale, Ys[1], j0, nj))
        ax = step_half_weights(order, scale, Xs[0], Xs[1], i0, ni)
        ay = step_half_weights(order, scale, Ys[0], Ys[1], j0, nj)
        for a in range(ni):
            for b in range(nj):
                my = my_amp * ax[a] * wy[b]
                my_m = my_amp * ax[a - 1] * wy[b] if a > 0 else 0.0
                mx = mx_amp * wx[a] * ay[b]
                mx_m = mx_amp * wx[a] * ay[b - 1] if b > 0 else 0.0
                jz[a, b] += (my - my_m) / dx - (mx - mx_m) / dy
    return i0, j0, jz


@njit(**SERIAL)
def dipole_1d(Xs, pys, order, scale, dx, dt):
    """Current of a transverse dipole sheet moving along x (1D); returns (i0, jy)."""
    hs = 0.5 * (order + 1) * scale
    i0, ni = _span(Xs[0], Xs[1], hs)
    jy = np.zeros(ni)
    for lvl in range(2):
        sgn = (1.0 if lvl == 1 else -1.0) / (dt * dx)
        w = node_weights(order, scale, Xs[lvl], i0, ni)
        for a in range(ni):
            jy[a] += sgn * pys[lvl] * w[a]
    vx = (Xs[1] - Xs[0]) * dx / dt
    mz_amp = -0.5 * (pys[0] + pys[1]) * vx / dx     # M_z = (P x v)_z = -Py vx at half nodes
    if mz_amp != 0.0:
        A = step_half_weights(order, scale, Xs[0], Xs[1], i0, ni)
        for a in range(ni):
            m = mz_amp * A[a]
            ma = mz_amp * A[a - 1] if a > 0 else 0.0
            jy[a] -= (m - ma) / dx          # (curl M)_y = -dMz/dx
    return i0, jy


# -- blocks of steps ------------------------------------------------------------------
# The same deposits for n successive steps in one call, written into padded arrays
# (flat storage index, value) of fixed width: the solver then injects them without a
# Python-side evaluation per step.  Padding entries have index 0 and value 0.

@njit(**SERIAL)
def _wrap(i, n, periodic):
    if periodic:
        i = i % n
        if i < 0:
            i += n
    return i


@njit(**SERIAL)
def dipole_1d_block(X, py, order, scale, dx, dt, nx, periodic, flat, J):
    """Steps s = 0..n-1 of :func:`dipole_1d` from the levels X[s], X[s+1] (cells) and
    py[s], py[s+1]; writes flat (n, w) int64 and J (n, w) float64 (w large enough:
    see :func:`block_width`)."""
    n, w = J.shape
    for s in range(n):
        i0, jy = dipole_1d(X[s:s + 2], py[s:s + 2], order, scale, dx, dt)
        for k in range(w):
            flat[s, k] = 0
            J[s, k] = 0.0
        for a in range(jy.shape[0]):
            flat[s, a] = _wrap(i0 + a, nx, periodic)
            J[s, a] = jy[a]


@njit(**SERIAL)
def dipole_te_block(X, Y, px, py, order, scale, dx, dy, dt, nx, ny, px_periodic, py_periodic,
                    flat, Jx, Jy):
    """Steps of :func:`dipole_te` (levels as in :func:`dipole_1d_block`); Ex and Ey share
    the patch indices ``flat`` (n, w)."""
    n, w = Jx.shape
    for s in range(n):
        i0, j0, jx, jy = dipole_te(X[s:s + 2], Y[s:s + 2], px[s:s + 2], py[s:s + 2], order, scale,
                                   dx, dy, dt)
        for k in range(w):
            flat[s, k] = 0
            Jx[s, k] = 0.0
            Jy[s, k] = 0.0
        ni, nj = jx.shape
        for a in range(ni):
            ii = _wrap(i0 + a, nx, px_periodic)
            for b in range(nj):
                jj = _wrap(j0 + b, ny, py_periodic)
                flat[s, a * nj + b] = ii * ny + jj
                Jx[s, a * nj + b] = jx[a, b]
                Jy[s, a * nj + b] = jy[a, b]


@njit(**SERIAL)
def dipole_tm_block(X, Y, pz, order, scale, dx, dy, dt, nx, ny, px_periodic, py_periodic, flat, Jz):
    """Steps of :func:`dipole_tm` (levels as in :func:`dipole_1d_block`)."""
    n, w = Jz.shape
    for s in range(n):
        i0, j0, jz = dipole_tm(X[s:s + 2], Y[s:s + 2], pz[s:s + 2], order, scale, dx, dy, dt)
        for k in range(w):
            flat[s, k] = 0
            Jz[s, k] = 0.0
        ni, nj = jz.shape
        for a in range(ni):
            ii = _wrap(i0 + a, nx, px_periodic)
            for b in range(nj):
                flat[s, a * nj + b] = ii * ny + _wrap(j0 + b, ny, py_periodic)
                Jz[s, a * nj + b] = jz[a, b]


def block_width(order: int, scale: int, step_cells: float) -> int:
    """Patch length along one axis that holds every step's deposit (:func:`_span` plus a
    margin) for a source moving at most ``step_cells`` cells per step."""
    hs = 0.5 * (order + 1) * scale
    return int(math.ceil(2 * hs + abs(step_cells))) + 5
