"""Vectorised adaptive Gauss-Kronrod quadrature for the planar and 1D bulk references.

:func:`adaptive_integral` integrates a vector-valued integrand over a line split
at breakpoints (light-line crossings, guided-mode poles), refining all panels
that miss their share of the tolerance in one vectorised pass per level.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import numpy as np

_GK_X = np.array([0.991455371120813, 0.949107912342759, 0.864864423359769, 0.741531185599394,
                  0.586087235467691, 0.405845151377397, 0.207784955007898, 0.0])
_GK_WK = np.array([0.022935322010529, 0.063092092629979, 0.104790010322250, 0.140653259715525,
                   0.169004726639267, 0.190350578064785, 0.204432940075298, 0.209482141084728])
_GK_WG = np.array([0.129484966168870, 0.279705391489277, 0.381830050505119, 0.417959183673469])
# Gauss-Kronrod 7-15 nodes and weights (e.g. Piessens et al., QUADPACK, 1983; tabulated values)
_NODES = np.concatenate([-_GK_X[:-1], _GK_X[::-1]])
_WK = np.concatenate([_GK_WK[:-1], _GK_WK[::-1]])
_WG_FULL = np.zeros(15)
_WG_FULL[[1, 3, 5, 13, 11, 9]] = np.concatenate([_GK_WG[:3], _GK_WG[:3]])
_WG_FULL[7] = _GK_WG[3]


def adaptive_integral(f: Callable[[np.ndarray], np.ndarray], breakpoints: Sequence[float],
                      rtol: float = 1e-9, atol: float = 0.0, max_intervals: int = 100000):
    """Vectorised adaptive Gauss-Kronrod (7-15) integral over [b0, b_last].

    ``f`` maps a 1D array of abscissae (n,) to values of shape (n_out, n); the
    error is controlled on row 0 (the others are integrated on the same panels).
    On every panel between breakpoints the variable x = p + (q - p)(1 - cos(pi u))/2
    clusters nodes at both ends, which turns the integrable 1/sqrt singularities
    at light-line crossings (k_y -> 0) into smooth integrands.  Returns
    (integrals (n_out,), error estimate of row 0).  The one-line case of
    :func:`adaptive_integrals`.
    """
    vals, errs = adaptive_integrals(lambda x, g: f(x), [breakpoints], rtol, atol, max_intervals)
    return vals[0], float(errs[0])


def adaptive_integrals(f: Callable[[np.ndarray, np.ndarray], np.ndarray],
                       breakpoints: Sequence[Sequence[float]], rtol: float = 1e-9,
                       atol: float = 0.0, max_intervals: int = 100000):
    """Many independent integrals at once, each as :func:`adaptive_integral`.

    ``breakpoints[g]`` splits line g; ``f(x, g)`` maps abscissae (n,) and their
    line indices (n,) to values (n_out, n).  Every line meets its own tolerance
    max(rtol |I_g|, atol) on row 0; all lines' panels are evaluated in one call
    of ``f`` per refinement level.  Returns (integrals (G, n_out), error
    estimates (G,)); a line with fewer than two distinct breakpoints is zero.
    """
    P_l, Q_l, own_l = [], [], []
    for g, bp in enumerate(breakpoints):
        b = np.unique(np.asarray(bp, dtype=float))
        P_l.append(b[:-1])
        Q_l.append(b[1:])
        own_l.append(np.full(max(b.size - 1, 0), g))
    G = len(P_l)
    P, Q = np.concatenate(P_l), np.concatenate(Q_l)
    line = np.concatenate(own_l).astype(int)
    # panels in u in [0, 1] of each breakpoint interval (interval index, line index)
    owner = np.arange(P.size)
    lo = np.zeros(P.size)
    hi = np.ones(P.size)
    done = None
    done_err = np.zeros(G)
    active = np.ones(G, dtype=bool)
    for _ in range(60):
        if owner.size == 0:
            break
        grp = line[owner]
        mid = 0.5 * (lo + hi)
        half = 0.5 * (hi - lo)
        u = mid[:, None] + half[:, None] * _NODES[None, :]
        pp, qq = P[owner][:, None], Q[owner][:, None]
        x = pp + (qq - pp) * np.sin(0.5 * np.pi * u) ** 2       # = (1 - cos(pi u))/2
        jac = (qq - pp) * 0.5 * np.pi * np.sin(np.pi * u)
        fx = np.asarray(f(x.ravel(), np.repeat(grp, 15)))
        fx = fx.reshape(-1, x.shape[0], 15) * jac[None]
        K = half[None, :] * (fx @ _WK)
        Gs = half * (fx[0] @ _WG_FULL)
        err = np.abs(K[0] - Gs)
        if done is None:
            done = np.zeros((G, K.shape[0]))
        est = np.abs(done[:, 0] + np.bincount(grp, K[0], G))
        tol = np.maximum(rtol * np.maximum(est, 1e-300), atol)
        err_g = np.bincount(grp, err, G)
        n_g = np.bincount(grp, minlength=G)
        # a line whose total error meets its tolerance is finished with all its panels
        finished = active & (n_g > 0) & (done_err + err_g <= tol)
        # otherwise keep the panels whose error is small against the tolerance per panel
        ok = finished[grp] | (err <= tol[grp] / (4.0 * np.maximum(n_g[grp], 1))) \
            | ((hi - lo) < 1e-12)
        nb = np.bincount(grp[~ok], minlength=G)
        overflow = 2 * nb > max_intervals
        ok |= overflow[grp]
        for j in range(K.shape[0]):
            done[:, j] += np.bincount(grp[ok], K[j, ok], G)
        done_err += np.bincount(grp[ok], err[ok], G)
        active &= ~(finished | overflow)
        keep = ~ok
        lo_b, hi_b, mid_b, own_b = lo[keep], hi[keep], mid[keep], owner[keep]
        lo = np.concatenate([lo_b, mid_b])
        hi = np.concatenate([mid_b, hi_b])
        owner = np.concatenate([own_b, own_b])
    if done is None:                         # no panels at all
        n_out = np.asarray(f(np.zeros(1), np.zeros(1, dtype=int))).shape[0]
        done = np.zeros((G, n_out))
    return done, done_err
