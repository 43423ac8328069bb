"""Bracketed root finding for the analytic references: thin wrappers around scipy.

The dispersion relations of :mod:`fdtd.reference.modes` and the band edges of
:mod:`fdtd.reference.thresholds` are solved for many wavenumbers (or many edges)
at once, each on its own bracket.  :func:`bracketed_roots` hands all of them to
one call of ``scipy.optimize.elementwise.find_root`` (Chandrupatla's method,
vectorised over the brackets); :func:`scalar_root` is ``scipy.optimize.brentq``
with the tolerances used here.  Both stop at a bracket a few units in the last
place wide (relative tolerance ``4 eps``), the accuracy the hand-written
bisection and Newton loops they replace reached.
"""

from __future__ import annotations

import numpy as np

#: relative tolerance on the root: 4 units in the last place (also the smallest brentq accepts)
XRTOL = 4.0 * np.finfo(float).eps
#: absolute tolerance on the root: only for roots at (or within a few normal numbers of) zero
XATOL = 4.0 * np.finfo(float).tiny


def bracketed_roots(f, lo, hi, args=()) -> np.ndarray:
    """Roots of ``f(x, *args) = 0``, one per bracket ``[lo, hi]``.

    Parameters
    ----------
    f : callable
        Elementwise: ``f(x, *args)[i]`` depends on ``x[i]`` and ``args[j][i]`` only.  It
        must be finite at both ends and change sign across each bracket.
    lo, hi : array_like, shape (N,)
        Lower and upper ends (``lo < hi``).
    args : tuple of arrays, each shape (N,)
        Per-bracket parameters passed on to ``f``.

    Returns
    -------
    ndarray, shape (N,)
        The roots (to ``XRTOL`` relative); NaN where the bracket did not hold a
        sign change or a non-finite value was met.
    """
    lo = np.asarray(lo, dtype=float)
    hi = np.asarray(hi, dtype=float)
    if lo.size == 0:
        return np.zeros(lo.shape)
    # imported here: scipy.optimize costs ~0.25 s at start-up, and light commands (a constant
    # permittivity: closed forms only) never need it
    from scipy.optimize.elementwise import find_root

    # the relations divide by their resonances: near them large values are expected, and a
    # division there only ever marks an element as failed (NaN), which the status reports
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        res = find_root(f, (lo, hi), args=tuple(args), tolerances={"xrtol": XRTOL, "xatol": XATOL})
    return np.where(res.success, res.x, np.nan)


def scalar_root(f, lo: float, hi: float) -> float:
    """Root of a scalar ``f`` with a sign change on ``[lo, hi]`` (Brent's method, to ``XRTOL``)."""
    from scipy.optimize import brentq

    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        return float(brentq(f, lo, hi, xtol=XATOL, rtol=XRTOL))
