r"""Shape functions of moving sources: B-splines, optionally widened.

A source at position X (in cells, along one axis) deposits onto integer nodes
with weights ``w_i = S(i - X)`` and onto half nodes with the
*derivative-consistent* weights

.. math::  h_{i+1/2} = \sum_{i' \le i} S'(i' - X),

so that ``h_{i+1/2} - h_{i-1/2} = S'(i - X)``: the discrete divergence of a
polarization deposited with ``h`` along its own axis equals minus the
derivative of the node shape, exactly what two opposite charges give in the
limit of small separation.  For B-splines this is the next-lower B-spline,
``h_{i+1/2} = S_{m-1}(i + 1/2 - X)``.

``S`` is a partition of unity (``sum_i S(i - X) = 1`` for every X), which
makes the charge-conserving current deposition (Esirkepov) compact.

B-splines of order m (support (m+1) cells, m = 1 linear, 2 quadratic,
3 cubic) and their integer widenings ``S(u/s)/s`` (support (m+1)s cells,
also a partition of unity) are provided.  The continuum Fourier transform of
the node shape is the form factor ``sinc^{m+1}(k s Delta / 2)``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numba import njit

from . import _checks
from .errors import ParameterError
from .kernels.options import SERIAL


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


@dataclass(frozen=True)
class Shape:
    """B-spline shape of a moving source.

    Parameters
    ----------
    order : int
        1 (linear), 2 (quadratic) or 3 (cubic).  Dipoles deposit their
        polarization along its own axis with order-1, so order >= 2 keeps
        every deposit continuous as the source crosses cells.
    scale : int
        Widening factor s >= 1 (support (order+1)*s cells).
    """

    order: int = 2
    scale: int = 1

    def __post_init__(self) -> None:
        o = _checks.positive_int("shape order", self.order)
        if o > 3:
            raise ParameterError(f"shape order = {o} is not allowed: expected 1, 2 or 3")
        _checks.positive_int("shape scale", self.scale)

    @property
    def half_support(self) -> float:
        """Half-width of the support, cells."""
        return 0.5 * (self.order + 1) * self.scale

    def form_factor(self, k, spacing: float, half: bool = False):
        """Fourier transform F(k) = int S(u) exp(i k u) du of the deposited shape.

        ``k`` may be complex: for an evanescent k_y = i kappa the sinc becomes
        sinh(kappa a)/(kappa a), the (larger) weight with which a source of finite
        height couples to a decaying field.  ``half=True`` gives the transform of
        the derivative-consistent half-node shape, F(k) (k dx/2)/sin(k dx/2).
        """
        k = np.asarray(k)
        if np.iscomplexobj(k):
            x = k * spacing * self.scale / 2.0
            s = np.where(np.abs(x) < 1e-8, 1.0 + 0j, np.sin(x) / np.where(np.abs(x) < 1e-8, 1.0, x))
            f = s ** (self.order + 1)
            if half:
                z = k * spacing / 2.0
                f = f * np.where(np.abs(z) < 1e-8, 1.0 + 0j, z / np.sin(np.where(np.abs(z) < 1e-8, 1.0, z)))
            return f
        x = k.astype(float) * spacing * self.scale / 2.0
        f = np.sinc(x / math.pi) ** (self.order + 1)
        if half:
            f = f / np.sinc(k.astype(float) * spacing / 2.0 / math.pi)
        return f
