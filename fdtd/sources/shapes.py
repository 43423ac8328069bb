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

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.solver.kernels.bspline import bspline, half_weights, node_weights  # noqa: F401


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
