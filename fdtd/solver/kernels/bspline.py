"""Compiled B-spline weights of the moving sources' shapes (see fdtd.sources.shapes).

Plain functions on numbers and arrays; the shape object and its form factor live in
:mod:`fdtd.sources.shapes`.
"""

import numpy as np
from numba import njit

from fdtd.solver.kernels.options import SERIAL


@njit(**SERIAL)
def bspline(order, u):
    """Centred cardinal B-spline of the given order (0..3) at u (cells)."""
    a = abs(u)
    if order == 0:
        return 1.0 if a < 0.5 else (0.5 if a == 0.5 else 0.0)
    if order == 1:
        return 1.0 - a if a < 1.0 else 0.0
    if order == 2:
        if a <= 0.5:
            return 0.75 - a * a
        if a < 1.5:
            t = 1.5 - a
            return 0.5 * t * t
        return 0.0
    # order 3
    if a <= 1.0:
        return 2.0 / 3.0 - a * a + 0.5 * a * a * a
    if a < 2.0:
        t = 2.0 - a
        return t * t * t / 6.0
    return 0.0


@njit(**SERIAL)
def node_weights(order, scale, X, i0, n):
    """w[k] = S(i0 + k - X), k = 0..n-1, for the widened B-spline S(u/s)/s."""
    w = np.empty(n)
    for k in range(n):
        w[k] = bspline(order, (i0 + k - X) / scale) / scale
    return w


@njit(**SERIAL)
def half_weights(order, scale, X, i0, n):
    """h[k] = S_half(i0 + k + 1/2 - X), k = 0..n-1 (derivative-consistent, see module doc).

    For scale 1 this is the B-spline of order m-1 at the half nodes; for
    wider shapes the cumulative sum of the exact derivative samples
    S'(i - X) = (S_{m-1}((i-X)/s + 1/2) - S_{m-1}((i-X)/s - 1/2)) / s^2.
    """
    h = np.empty(n)
    if scale == 1:
        for k in range(n):
            h[k] = bspline(order - 1, i0 + k + 0.5 - X)
        return h
    acc = 0.0
    for k in range(n):
        u = (i0 + k - X) / scale
        acc += (bspline(order - 1, u + 0.5) - bspline(order - 1, u - 0.5)) / (scale * scale)
        h[k] = acc
    # the derivative samples S'(i - X) multiply a unit spacing: h is the running sum
    return h
