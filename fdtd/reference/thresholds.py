r"""Analytic speed thresholds: Cherenkov emission and the anomalous Doppler effect.

A source moving at speed v along x puts its current, at wavenumber k_x, only at
the lab frequencies ``omega = k_x v + s Omega`` (``Omega = omega0/gamma``, the
rest-frame frequency ``omega0`` slowed by time dilation; ``Omega = 0`` for a
charge).  It can hand energy to a lossless medium only where such a line meets
a mode ``omega = omega_j(k)`` of the medium (:mod:`fdtd.reference.modes`).  This
module finds, without running the solver (numpy and scipy only, answers in
milliseconds):

* the minimum speed for Cherenkov emission of a charge, ``v_min = min_j,k
  omega_j(k)/k`` (:func:`cherenkov_threshold`), and the emission band at a given
  speed (:func:`cherenkov_band`, the frequencies where ``beta^2 eps(omega) > 1``
  in a local continuum medium);
* the minimum speed for anomalous-Doppler emission of an oscillator,
  ``k v - omega0 sqrt(1 - v^2) = omega_j(k) > 0`` (:func:`anomalous_threshold`);
* both from one mode table (:func:`thresholds`), and ``v_min`` as a function of
  the cutoff wavenumber (:func:`threshold_curve`, :func:`threshold_curves`);
* for a source in the bulk (1D: ``k = k_x``; 2D: any ``k_y``) or at height h
  above a half-space across a vacuum gap (:class:`Geometry`), with three kinds of
  wavenumber cutoff (:class:`Cutoff`): none, the grid's own (``k <= pi/dx`` with
  the scheme's discrete dispersion, optionally only the periodic cell's
  ``k_m = 2 pi m / L``), and a physical one (a :class:`~fdtd.media.materials.NonlocalLorentzPole`).

The report table is :func:`threshold_report` (:mod:`fdtd.reference.threshold_report`,
importable from here too).  This package draws nothing and reads no input: the
figure of ``v_min`` against the cutoff (``plot_threshold_vs_cutoff``) lives with the
other figures, and the command line's values are read in the scenario layer
(``threshold_inputs``).

Units: normalized (c = 1; wavenumbers in 1/ell, frequencies in c/ell for the
reference length ell of :mod:`fdtd.units`); speeds are fractions of c.

Loss is ignored for the mode positions: every pole is taken with ``gamma = 0``.
A lossy medium absorbs some power on every Doppler line, so with loss the
switch-on is a steep rise over a speed interval of order ``gamma/k``, not a
step.  The derivations are in docs/theory/thresholds.md.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.media.materials import Material
from fdtd.reference._roots import bracketed_roots
from fdtd.reference.cutoffs import RESOLVED_KDX, Cutoff, Geometry
from fdtd.reference.modes import Scheme, _poles, _u_eps, mode_frequencies, modes_and_surface

#: points of the k grid on which the minimum over k is searched (then refined)
_K_POINTS = 3000

PROCESSES = ("cherenkov", "anomalous")

#: names defined in fdtd.reference.threshold_report and re-exported here on first use (that
#: module builds on this one, so importing it at the top would be circular)
_REPORT_NAMES = ("threshold_report", "ThresholdReport", "ThresholdRow")

__all__ = ["RESOLVED_KDX", "Cutoff", "Geometry", "Scheme", "mode_frequencies", "PROCESSES",
           "Threshold", "anomalous_speed", "thresholds", "cherenkov_threshold",
           "anomalous_threshold", "threshold_curve", "threshold_curves", "cherenkov_band",
           *_REPORT_NAMES]


def __getattr__(name):
    if name in _REPORT_NAMES:
        from fdtd.reference import threshold_report as report

        return getattr(report, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


# ----------------------------------------------------------------------------- speeds
def anomalous_speed(k, omega, omega0: float):
    r"""The speed v at which the anomalous Doppler line meets the point (k, omega).

    Solves ``k v - omega0 sqrt(1 - v^2) = omega`` (the left side increases with
    v from -omega0 at v = 0 to k at v = 1).  Squaring,
    ``(k^2 + omega0^2) v^2 - 2 k omega v + omega^2 - omega0^2 = 0``; the root with
    ``k v >= omega`` is

    .. math:: v = \frac{k\omega + \omega_0\sqrt{k^2 + \omega_0^2 - \omega^2}}{k^2 + \omega_0^2},

    which lies in (0, 1) iff ``0 < omega < k``.  With ``omega0 = 0`` it is the
    phase velocity omega/k (Cherenkov).  Arrays broadcast; NaN where no v < 1.
    """
    k = np.asarray(k, dtype=float)
    w = np.asarray(omega, dtype=float)
    w0 = float(omega0)
    with np.errstate(invalid="ignore", divide="ignore"):
        v = (k * w + w0 * np.sqrt(np.maximum(k * k + w0 * w0 - w * w, 0.0))) / (k * k + w0 * w0)
        ok = np.isfinite(w) & (w > 0.0) & (w < k)
    return np.where(ok, v, np.nan)


def _asymptotes(material: Material, local: bool) -> list[tuple[float, str]]:
    """Phase velocities of the branches as k -> inf (continuum): 0 for every local
    resonance (the branch below it flattens), beta_nl for a nonlocal one, and
    1/sqrt(eps_inf) for the photon-like top branch."""
    P = _poles(material, local)
    out = [(1.0 / math.sqrt(P.eps_inf), "photon-like (1/sqrt(eps_inf))")]
    for a0, cl in zip(P.a0, P.cL):
        if a0 > 0 and cl == 0.0:
            out.append((0.0, f"below the resonance {math.sqrt(a0):.4g} c/ell"))
        elif cl > 0.0:
            out.append((math.sqrt(cl), f"nonlocal (beta_nl = {math.sqrt(cl):.4g})"))
    return out


def _branch_label(j: int, nb: int) -> str:
    if nb == 1:
        return "photon-like"
    if j == 0:
        return "lowest"
    if j == nb - 1:
        return "highest"
    return f"branch {j}"


@dataclass(frozen=True)
class Threshold:
    """Minimum speed of one emission process.

    ``speed`` (fraction of c; NaN if no speed below c emits); ``k`` (1/ell) and
    ``omega`` (c/ell) of the mode where it is reached (None when approached
    only as k -> inf); ``branch`` a label; ``set_by`` one of ``"mode"`` (a
    minimum inside the allowed wavenumbers), ``"cutoff"`` (reached at the
    cutoff k_max: the cutoff sets it), ``"gap"`` (reached at the gap-coupling
    limit), ``"k -> inf"`` (approached only as k -> inf: any cutoff sets it),
    ``"none"``.
    """

    process: str
    speed: float
    k: float | None
    omega: float | None
    branch: str
    set_by: str

    def describe(self) -> str:
        if self.set_by == "none":
            return "no emission below c"
        what = {"mode": "reached at a mode inside the allowed k",
                "cutoff": "reached at the cutoff k_max: set by the cutoff",
                "gap": "reached at the gap-coupling limit: set by the gap criterion",
                "k -> inf": "approached only as k -> inf: set by the cutoff"}[self.set_by]
        return what


def _modes_on(material, k, cutoff: Cutoff, geometry: Geometry, local: bool, row=None):
    """Mode frequencies on k (N,): list of (label, omega (N,)); for a gap the
    surface polariton is added and points outside the coupling criterion
    ``k^2 - omega^2 <= k_gap^2`` are NaN.  With ``row`` only that row is
    computed (the others are NaN): the refinements need one."""
    rows = None if row is None else [row]
    if geometry.kind != "gap":
        if rows is None:
            W = mode_frequencies(material, k, cutoff.scheme, local)
        else:
            W, _ = modes_and_surface(material, k, cutoff.scheme, local, surface=False, rows=rows)
        return [(_branch_label(j, W.shape[0]), W[j]) for j in range(W.shape[0])]
    # only omega >= sqrt(k^2 - k_gap^2) passes the criterion: the search skips the rest
    W, S = modes_and_surface(material, k, cutoff.scheme, local, rows=rows,
                             omega_min=np.sqrt(np.maximum(k * k - geometry.k_gap**2, 0.0)))
    rows = [(_branch_label(j, W.shape[0]), W[j]) for j in range(W.shape[0])]
    rows += [("surface polariton" + (f" {j}" if S.shape[0] > 1 else ""), S[j])
             for j in range(S.shape[0])]
    with np.errstate(invalid="ignore"):
        return [(lab, np.where(k * k - w * w <= geometry.k_gap**2, w, np.nan)) for lab, w in rows]


def _k_scale(material: Material, omega0) -> float:
    P = _poles(material)
    return max([math.sqrt(a) for a in P.a0 if a > 0] + [math.sqrt(abs(P.b).sum() / P.eps_inf),
                                                         float(omega0 or 0.0), 1e-6])


def _k_grid(material: Material, omega0, k_hi: float) -> np.ndarray:
    """Wavenumbers in (0, k_hi]: geometric from 1e-4 of the material's scale plus linear."""
    lo = min(1e-4 * _k_scale(material, omega0), 1e-3 * k_hi)
    g = np.geomspace(lo, k_hi, _K_POINTS)
    lin = np.linspace(0.0, k_hi, _K_POINTS // 2 + 1)[1:]
    return np.unique(np.concatenate([g, lin, [k_hi]]))


def _search(material: Material, omega0s: dict, cutoff: Cutoff, geometry: Geometry,
            local: bool) -> dict:
    """Thresholds for several processes from one mode table: {process: Threshold}."""
    kset = cutoff.k_set()
    if kset is not None:
        k = kset
    else:
        k_hi = cutoff.k_max if cutoff.finite else 1e5 * _k_scale(material, max(omega0s.values()))
        k = _k_grid(material, max(omega0s.values()), k_hi)
    rows = _modes_on(material, k, cutoff, geometry, local) if k.size else []
    asym = _asymptotes(material, local) if (not cutoff.finite and geometry.kind == "bulk") else []
    a_best = min(asym, default=(math.inf, ""))
    out = {}
    edges: dict = {}
    for proc, w0 in omega0s.items():
        best = (math.inf, None)
        speeds = [anomalous_speed(k, w, w0) for _lab, w in rows]
        for r, v in enumerate(speeds):
            if np.all(np.isnan(v)):
                continue
            i = int(np.nanargmin(v))
            if v[i] < best[0]:
                best = (float(v[i]), (r, i))
        if best[1] is None or a_best[0] < best[0] * (1 - 1e-12):
            if a_best[0] < 1.0:
                out[proc] = Threshold(proc, a_best[0], None, None, a_best[1], "k -> inf")
            else:
                out[proc] = Threshold(proc, math.nan, None, None, "-", "none")
            continue
        r, i = best[1]
        label, w = rows[r]
        v = speeds[r]
        last = np.nonzero(np.isfinite(w))[0][-1]
        if np.nanmax(v) - v[i] <= 1e-12 * v[i]:
            # no dispersion on this branch (constant eps and omega0 = 0): every k gives it
            out[proc] = Threshold(proc, float(v[i]), None, None, label + " (any k)", "mode")
            continue
        if i == k.size - 1:
            # at the largest k searched: the cutoff if there is one; without, the far end of the
            # search (1e5 x the material's scale) stands for k -> inf
            out[proc] = Threshold(proc, float(v[i]), float(k[i]), float(w[i]), label,
                                  "cutoff" if cutoff.finite else "k -> inf")
            continue
        if kset is not None:
            out[proc] = Threshold(proc, float(v[i]), float(k[i]), float(w[i]), label,
                                  "gap" if (i == last and geometry.kind == "gap") else "mode")
            continue
        if i == last and geometry.kind == "gap":
            # the edge of the gap criterion k^2 - omega(k)^2 = k_gap^2, bracketed by [k_i, k_i+1]
            if (r, i) not in edges:
                # (two finer grids: the last point inside the criterion, to ~1e-6 of k_i+1 - k_i)
                lo, hi = float(k[i]), float(k[i + 1])
                for _ in range(2):
                    kk = np.linspace(lo, hi, 513)
                    ww = _modes_on(material, kk, cutoff, geometry, local, row=r)[r][1]
                    j = int(np.nonzero(np.isfinite(ww))[0][-1])
                    lo, hi, w_lo = float(kk[j]), float(kk[min(j + 1, 512)]), float(ww[j])
                edges[(r, i)] = (lo, w_lo)
            ke, we = edges[(r, i)]
            out[proc] = Threshold(proc, float(anomalous_speed(ke, we, w0)), ke, we, label, "gap")
            continue
        # interior minimum: refine on finer local grids
        lo, hi = float(k[max(i - 1, 0)]), float(k[min(i + 1, k.size - 1)])
        vi, ki, wi = float(v[i]), float(k[i]), float(w[i])
        for _ in range(2):
            kk = np.linspace(lo, hi, 401)
            ww = _modes_on(material, kk, cutoff, geometry, local, row=r)[r][1]
            vv = anomalous_speed(kk, ww, w0)
            if np.all(np.isnan(vv)):
                break
            j = int(np.nanargmin(vv))
            if vv[j] <= vi:
                vi, ki, wi = float(vv[j]), float(kk[j]), float(ww[j])
            lo, hi = float(kk[max(j - 1, 0)]), float(kk[min(j + 1, 400)])
        out[proc] = Threshold(proc, vi, ki, wi, label, "mode")
    return out


def thresholds(material: Material, omega0: float | None = None, cutoff: Cutoff | None = None,
               geometry: Geometry | None = None, local: bool = False) -> dict:
    """Both thresholds from one mode table: ``{"cherenkov": Threshold, "anomalous": Threshold}``
    (the second only with ``omega0``).  See :func:`cherenkov_threshold` and
    :func:`anomalous_threshold`."""
    w0s = {"cherenkov": 0.0}
    if omega0 is not None:
        w0s["anomalous"] = _checks.positive("source rest frequency omega0", omega0)
    return _search(material, w0s, cutoff or Cutoff(), geometry or Geometry(), local)


def cherenkov_threshold(material: Material, cutoff: Cutoff | None = None,
                        geometry: Geometry | None = None, local: bool = False) -> Threshold:
    """Minimum speed for Cherenkov emission of a charge: ``min_j,k omega_j(k)/k``.

    Over the modes with ``k <= cutoff.k_max`` (the periodic set k_m if given),
    with the continuum or the scheme's dispersion, and for a gap only where the
    coupling criterion holds (see :class:`Geometry`; the surface polariton is
    included).  A charge at speed v emits at (k, omega = k v) on a mode with
    phase velocity v; a slower mode is reached by a larger k_y in 2D (the bulk
    branches rise with |k|), so the minimum over the modes is the threshold.
    Loss ignored.  Returns a :class:`Threshold` (speed in units of c).
    """
    return _search(material, {"cherenkov": 0.0}, cutoff or Cutoff(), geometry or Geometry(),
                   local)["cherenkov"]


def anomalous_threshold(material: Material, omega0: float, cutoff: Cutoff | None = None,
                        geometry: Geometry | None = None, local: bool = False) -> Threshold:
    """Minimum speed for anomalous-Doppler emission of an oscillator.

    An oscillator of rest-frame frequency ``omega0`` (c/ell) moving at v has its
    anomalous line at ``omega = k v - omega0/gamma(v)``; it emits (and is
    excited) where that line meets a mode with omega > 0.  For each mode point
    the speed is :func:`anomalous_speed`; the threshold is its minimum over the
    allowed modes (as in :func:`cherenkov_threshold`).  Loss ignored.
    """
    w0 = _checks.positive("source rest frequency omega0", omega0)
    return _search(material, {"anomalous": w0}, cutoff or Cutoff(), geometry or Geometry(),
                   local)["anomalous"]


def threshold_curve(material: Material, k_max, process: str = "cherenkov", omega0: float | None = None,
                    geometry: Geometry | None = None, scheme: Scheme | None = None,
                    local: bool = False) -> np.ndarray:
    """v_min as a function of the cutoff wavenumber: shape of ``k_max`` (fraction of c).

    The running minimum of the threshold speed over a dense grid of k; each
    value is the minimum over ``k <= k_max`` (an upper bound within the grid
    spacing, ~1e-3 relative).  With ``scheme`` the discrete dispersion is used
    and ``k_max`` is clipped to pi/dx.  NaN where no mode below c is reached.
    """
    _checks.one_of("process", process, PROCESSES)
    w0 = 0.0 if process == "cherenkov" else _checks.positive("source rest frequency omega0", omega0)
    return threshold_curves(material, k_max, {process: w0}, geometry, scheme, local)[process]


def threshold_curves(material: Material, k_max, omega0s: dict, geometry: Geometry | None = None,
                     scheme: Scheme | None = None, local: bool = False) -> dict:
    """:func:`threshold_curve` for several processes from one mode table.

    ``omega0s`` maps a process name to its rest frequency (c/ell; 0 for a charge),
    e.g. ``{"cherenkov": 0.0, "anomalous": 0.6}``.  Returns ``{name: v_min}``, each of
    the shape of ``k_max`` (fraction of c; a float for a scalar ``k_max``).
    """
    geometry = geometry or Geometry()
    w0s = omega0s
    kmax = np.atleast_1d(np.asarray(k_max, dtype=float))
    if np.any(~(kmax > 0)):
        raise ParameterError(f"k_max = {k_max!r} is not allowed: expected wavenumbers > 0")
    if scheme is not None:
        kmax = np.minimum(kmax, scheme.k_nyquist)
    top = float(kmax.max())
    k = np.unique(np.concatenate([np.geomspace(min(top * 1e-4, 1e-3 * _k_scale(material, 0.0)), top,
                                               2000), kmax]))
    rows = _modes_on(material, k, Cutoff(top, scheme), geometry, local)
    idx = np.searchsorted(k, kmax)
    out = {}
    for proc, w0 in w0s.items():
        v = np.full(k.shape, np.nan)
        for _label, w in rows:
            v = np.fmin(v, anomalous_speed(k, w, w0))
        run = np.fmin.accumulate(np.where(np.isnan(v), np.inf, v))
        run = np.where(np.isinf(run), np.nan, run)
        out[proc] = run[idx].reshape(np.shape(k_max)) if np.ndim(k_max) else float(run[idx][0])
    return out


# ----------------------------------------------------------------------------- Cherenkov band
def _band_condition(material: Material, w, speed: float, cutoff: Cutoff, geometry: Geometry,
                    local: bool) -> np.ndarray:
    """True where a charge at ``speed`` emits at frequency w (2D: some k_y)."""
    P = _poles(material, local)
    w = np.asarray(w, dtype=float)
    kx = w / speed
    ok = kx <= cutoff.k_max
    if geometry.kind == "gap":
        ok &= kx * kx - w * w <= geometry.k_gap**2
    sch = cutoff.scheme
    if sch is None:
        u, A = w * w, kx * kx
        B = np.full(w.shape, np.inf)
    else:
        u, A = sch.omega_to_u(w), sch.K2(kx)
        B = A + 4.0 / sch.dx**2                        # K_y^2 <= 4/dy^2 (dy = dx)
        ok &= w <= math.pi / sch.dt
    # h(K^2) = u eps(u, K^2) - K^2 decreases between its poles in K^2 (a nonlocal
    # resonance a0 + cL K^2 = u); a root in [A, B] exists iff h(A) > 0 with no
    # pole before B, or a pole in (A, B) followed by h(B) < 0 or a second pole.
    hA = _u_eps(u, A, P) - A
    with np.errstate(invalid="ignore"):
        hB = np.where(np.isfinite(B), _u_eps(u, np.where(np.isfinite(B), B, 0.0), P) - B, -np.inf)
    n_poles = np.zeros(w.shape, dtype=int)
    for a0, cl in zip(P.a0, P.cL):
        if cl > 0:
            Kr = (u - a0) / cl
            n_poles += ((Kr > A) & (Kr < B)).astype(int)
    root = np.where(n_poles == 0, (hA > 0) & (hB < 0), (hA > 0) | (n_poles >= 2) | (hB < 0))
    return ok & root


def cherenkov_band(material: Material, speed: float, cutoff: Cutoff | None = None,
                   geometry: Geometry | None = None, local: bool = False,
                   omega_max: float | None = None) -> list[tuple[float, float]]:
    """Frequency intervals where a charge at ``speed`` emits (2D bulk or gap).

    Local continuum: ``beta^2 eps(omega) > 1``.  In general: some mode at
    frequency omega has a wavenumber ``|k| >= k_x = omega/v`` (and within the
    scheme's zone), with ``k_x <= k_max`` and, for a gap, the coupling
    criterion ``k_x^2 - omega^2 <= k_gap^2``, i.e. ``omega <= gamma v k_gap``.
    Edges are located on a fine frequency grid and refined, all at once, by a
    bracketing root search on the yes/no condition (to 4 ulp); they include the
    resonances, where eps jumps.

    Returns a list of ``(omega_lo, omega_hi)`` (c/ell); ``omega_hi = inf`` if
    the band is open upward (continuum with ``beta^2 eps_inf > 1``).
    """
    v = _checks.in_range("source speed v (fraction of c)", speed, 0.0, 1.0, lo_open=True, hi_open=True)
    cutoff = cutoff or Cutoff()
    geometry = geometry or Geometry.bulk(2)
    if geometry.kind == "bulk" and geometry.dims == 1:
        raise ParameterError("cherenkov_band needs a 2D geometry (bulk dims = 2 or a gap): a charge "
                             "moving along x in 1D has no transverse current and does not radiate")
    P = _poles(material, local)
    scale = max([math.sqrt(a) for a in P.a0 if a > 0] + [math.sqrt(abs(P.b).sum() / P.eps_inf), 1e-6])
    hi = omega_max if omega_max is not None else 10.0 * scale
    if cutoff.finite:
        hi = min(hi, v * cutoff.k_max)
    if cutoff.scheme is not None:
        hi = min(hi, math.pi / cutoff.scheme.dt)
    if geometry.kind == "gap":
        hi = min(hi, geometry.k_gap * v / math.sqrt(1 - v * v))
    grid = np.unique(np.concatenate([np.linspace(0, hi, 40001)[1:], np.geomspace(hi * 1e-6, hi, 4001),
                                     [math.sqrt(a) for a in P.a0 if 0 < math.sqrt(a) < hi]]))
    c = _band_condition(material, grid, v, cutoff, geometry, local)

    def side(w, c_left):
        """-1 where the condition is as at the bracket's left end, +1 where not: a sign change
        at the switch, which a bracketing root search closes in on (by bisection steps)."""
        return np.where(_band_condition(material, w, v, cutoff, geometry, local) == c_left, -1.0, 1.0)

    i = np.nonzero(c[1:] != c[:-1])[0]
    edges = [float(e) for e in bracketed_roots(side, grid[i], grid[i + 1], (c[i].astype(float),))]
    bands = []
    start = 0.0 if c[0] else None
    for e in edges:
        if start is None:
            start = e
        else:
            bands.append((start, e))
            start = None
    if start is not None:
        open_top = (not cutoff.finite and cutoff.scheme is None and geometry.kind == "bulk"
                    and omega_max is None and speed**2 * P.eps_inf > 1.0)
        bands.append((start, math.inf if open_top else hi))
    return bands
