r"""The isolated emitter from the simulator: phased rows of the co-moving cell, integrated over k0.

A co-moving cell of length L computes one source of a row spaced by L: its harmonics sample
the isolated source's spectral density p(k_x) at k_m = 2 pi m / L.  A Bloch-periodic cell,
u(x + L) = e^{i k0 L} u(x), whose source images carry the same phase, samples it at
k0 + k_m; averaging the phased row's power per element over k0 gives the isolated source
(the array-scanning idea: B. A. Munk and G. A. Burrell, IEEE Trans. Antennas Propag. 27,
331 (1979); derivation in docs/theory/bloch-cell.md):

.. math:: P_{iso} = \frac{L}{2\pi}\int_{-\pi/L}^{\pi/L} P_{row}(k_0)\,dk_0
          = \frac{L}{\pi}\int_0^{\pi/L} P_{row}(k_0)\,dk_0 ,

the second form for a real source (the row at -k0 is the complex conjugate of the one at
k0).  The integrand is smooth and periodic except near the k0 where a harmonic meets a
polariton or the light line, so the integral is a trapezoid rule refined where the
integrand bends: every interval whose bisection changes its trapezoid estimate by more
than its share of the tolerance is bisected again, until the estimated error (the sum of
those changes) is below ``run.isolated_tolerance`` of the total or the run budget is spent.
Each node is a full experiment (the same procedure, settling included); k0 = 0 is the
ordinary cell already run.
"""

from __future__ import annotations

import copy
import logging
import math
import warnings

import numpy as np

from fdtd.recording.steady import SteadyStateWarning

log = logging.getLogger("fdtd.experiment")

#: the figures integrated over k0: branch powers, drag, internal power and the rest-frame
#: branch powers W'_+ (decay), W'_- (excitation) of the equivalent rates
FIGURES = ("total", "normal", "anomalous", "drag_force", "internal_power", "rest_down", "rest_up")


def _figures(p, spec) -> dict:
    from fdtd.reference.rates import rest_frame_branch_powers

    out = {f: float(getattr(spec, f)) for f in FIGURES[:5]}
    if p.source_kind == "dipole" and p.Omega > 0:
        W = rest_frame_branch_powers(spec.omega, spec.branch, spec.power, p.Omega, p.speed)
        out["rest_down"], out["rest_up"] = W[1], W[-1]
    else:
        out["rest_down"] = out["rest_up"] = 0.0
    return out


def _phased_plan(p, theta: float):
    c = copy.copy(p)
    c.bloch_phase = float(theta)
    c.snapshots, c.line_component, c.flux_heights = 0, None, []
    c.checkpoint_every = 0
    c.warnings, c.notes, c.adjustments = [], [], []
    return c


def _run_node(p, theta: float, progress) -> tuple[dict, dict]:
    from fdtd.experiment.procedure import Experiment

    exp = Experiment(_phased_plan(p, theta), progress=progress, records=False)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SteadyStateWarning)
        if exp.execute() == "interrupted":     # the user's stop ends the whole point
            raise KeyboardInterrupt
    if exp.last_spectrum is None:
        raise RuntimeError("a phased run recorded nothing")
    info = {"steady": exp.state.get("steady"), "steps": exp.solver.step_count,
            "time_errors": exp.state.get("time_errors") or {}}
    return _figures(p, exp.last_spectrum), info


def isolated_emitter(p, row_spectrum, tol: float = 1e-2, max_runs: int = 17, progress=False) -> dict:
    """Integrate the phased rows over k0 in [0, pi/L] (see module doc).

    ``row_spectrum``: the k0 = 0 run (the ordinary cell).  Returns ``{"values": figure ->
    isolated value, "errors": figure -> quadrature error estimate, "nodes": [(k0, figures,
    info)], "runs": phased runs made, "steps": their steps, "converged": bool}`` in
    normalized units (powers per unit length along z in 2D, per unit area in 1D)."""
    L = p.length
    k_hi = math.pi / L
    nodes = {0.0: (_figures(p, row_spectrum), {"steady": True, "steps": 0, "time_errors": {}})}
    runs = 0

    def value(k0):
        nonlocal runs
        if k0 not in nodes:
            log.info("  isolated emitter: phased row k0 = %.4g (k0 L = %.4f), run %d", k0, k0 * L, runs + 1)
            nodes[k0] = _run_node(p, k0 * L, progress)
            runs += 1
        return nodes[k0][0]

    def vec(f):
        return np.array([f[k] for k in FIGURES])

    def scale_of(total):
        return np.maximum(np.abs(total), 0.01 * abs(total[0]) + 1e-300)

    raw: dict = {}

    def bisect(iv):
        """Split an interval; each half carries half the error estimate its bisection gave.

        The change of the trapezoid estimate on bisection bounds the error of the coarse
        estimate; once the change has shrunk at least fourfold from the parent interval's
        (the second-order regime), the refined estimate is off by about a third of it
        (Richardson); before that, by the whole change."""
        a, b = iv
        m = 0.5 * (a + b)
        fa, fm, fb = vec(value(a)), vec(value(m)), vec(value(b))
        change = np.abs(0.25 * (fa + 2 * fm + fb) - 0.5 * (fa + fb)) * (b - a)
        parent = raw.pop(iv, None)
        asymptotic = parent is not None and np.all(change <= 0.25 * parent + 1e-300)
        estimate = change / 3.0 if asymptotic else change
        changes.pop(iv, None)
        changes[(a, m)] = changes[(m, b)] = estimate / 2.0
        raw[(a, m)] = raw[(m, b)] = change

    changes: dict = {}
    value(0.0), value(k_hi)
    bisect((0.0, k_hi))
    budget_hit = converged = False
    while True:
        total = _mean(nodes, vec, k_hi)
        err = sum(changes.values()) / k_hi
        scale = scale_of(total)
        if np.all(err[:3] <= tol * scale[:3]):
            converged = True
            break
        if runs >= max_runs:
            budget_hit = True
            break
        # the interval whose last bisection moved the branch powers most (relative)
        worst = max(changes, key=lambda iv: float(np.max(changes[iv][:3] / scale[:3])))
        bisect(worst)
    total = _mean(nodes, vec, k_hi)
    err = sum(changes.values()) / k_hi
    return {"values": dict(zip(FIGURES, total.tolist())), "errors": dict(zip(FIGURES, err.tolist())),
            "nodes": sorted((k, f, i) for k, (f, i) in nodes.items()), "runs": runs,
            "steps": sum(i["steps"] for _f, i in nodes.values()), "converged": converged,
            "budget_hit": budget_hit}


def _mean(nodes, vec, k_hi) -> np.ndarray:
    ks = np.array(sorted(nodes))
    fs = np.array([vec(nodes[k][0]) for k in ks])
    return np.trapezoid(fs, ks, axis=0) / k_hi
