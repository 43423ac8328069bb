"""Small utilities shared by the tests (not fixtures)."""

from __future__ import annotations

import numpy as np


def prony_roots(x: np.ndarray, order: int) -> np.ndarray:
    """Roots z_k of the linear-prediction polynomial of a sum of ``order`` exponentials.

    ``x[n] = sum_k A_k z_k^n`` exactly is recovered to round-off by least squares
    (Prony's method; e.g. S. L. Marple, Digital Spectral Analysis, 1987, ch. 11, from memory).
    """
    n = x.size
    rows = n - order
    A = np.column_stack([x[order - k - 1: order - k - 1 + rows] for k in range(order)])
    b = x[order:order + rows]
    coef, *_ = np.linalg.lstsq(A, b, rcond=None)
    return np.roots(np.concatenate([[1.0], -coef]))


def frequencies_from_roots(z: np.ndarray, dt: float) -> np.ndarray:
    """omega with z = exp(-i omega dt), positive real part first, sorted by Re omega."""
    w = 1j * np.log(z.astype(complex)) / dt
    w = w[w.real > 0]
    return np.sort_complex(w)


def loglog_slope(h, err) -> float:
    """Slope of log(err) against log(h) (the observed convergence order)."""
    return float(np.polyfit(np.log(h), np.log(err), 1)[0])


def record_point(solver, comp: str, index, steps: int) -> np.ndarray:
    """Time series (steps,) of ``solver.fields[comp][index]``, sampled before each step."""
    out = np.empty(steps)
    a = solver.fields[comp]
    for n in range(steps):
        out[n] = a[index]
        solver.step()
    return out
