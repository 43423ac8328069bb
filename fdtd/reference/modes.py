r"""Lossless mode branches of a homogeneous medium, in the continuum and on the Yee grid.

The speed thresholds of :mod:`fdtd.reference.thresholds` need, for a wavenumber
k, every frequency at which the medium carries a wave.  This module gives them
(numpy and scipy only, no solver):

* :class:`Scheme`: the Yee + ADE discretisation ``dx, dt`` whose own dispersion
  is used (which wavenumbers count, and where the source is, are
  :mod:`fdtd.reference.cutoffs`);
* material helpers: :func:`lossless`, :func:`with_nonlocal`, :func:`local_version`,
  :func:`nonlocal_model`, :func:`resonance_frequencies`;
* the branches ``omega_j(k)`` (:func:`mode_frequencies`): continuum
  ``omega^2 eps(omega, k) = k^2``, or the scheme's
  ``(2/dt)^2 sin^2(omega dt/2) eps_d(omega, K) = K^2``, with a nonlocal pole's
  resonance moving as ``a0 + beta_nl^2 k^2``;
* the surface polariton of a flat vacuum interface, local model
  (:func:`surface_polariton_frequencies`).

Units: normalized (c = 1; wavenumbers in 1/ell, frequencies in c/ell for the
reference length ell of :mod:`fdtd.units`).  Loss is ignored: every pole is
taken with ``gamma = 0``.  The derivations are in docs/theory/thresholds.md.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, replace

import numpy as np

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.media.materials import LorentzPole, Material, NonlocalLorentzPole
from fdtd.reference._roots import bracketed_roots, scalar_root


# ----------------------------------------------------------------------------- the scheme
@dataclass(frozen=True)
class Scheme:
    """The Yee + ADE discretisation whose own dispersion is used.

    Parameters
    ----------
    dx : float
        Cell size along the motion (normalized length), > 0.  2D grids are
        taken square (dy = dx).
    dt : float
        Time step (normalized time), > 0.
    """

    dx: float
    dt: float

    def __post_init__(self) -> None:
        object.__setattr__(self, "dx", _checks.positive("grid cell dx", self.dx))
        object.__setattr__(self, "dt", _checks.positive("time step dt", self.dt))

    @property
    def k_nyquist(self) -> float:
        """pi/dx, the largest wavenumber the grid represents (1/ell)."""
        return math.pi / self.dx

    def K2(self, k):
        """Eigenvalue of minus the discrete Laplacian along one axis,
        ``(2/dx)^2 sin^2(k dx/2)`` (1/ell^2); same shape as ``k``."""
        return (2.0 / self.dx * np.sin(np.asarray(k, dtype=float) * self.dx / 2.0)) ** 2

    def u_to_omega(self, u):
        """omega from ``u = omega_tilde^2 = (2/dt)^2 sin^2(omega dt/2)`` (c/ell)."""
        s = np.sqrt(np.clip(u, 0.0, None)) * self.dt / 2.0
        with np.errstate(invalid="ignore"):
            return np.where(s <= 1.0, 2.0 / self.dt * np.arcsin(np.minimum(s, 1.0)), np.nan)

    def omega_to_u(self, w):
        return (2.0 / self.dt * np.sin(np.asarray(w, dtype=float) * self.dt / 2.0)) ** 2

    @property
    def u_top(self) -> float:
        """u at omega dt = pi: the top of the real-frequency range."""
        return 4.0 / self.dt**2


# ----------------------------------------------------------------------------- materials
@dataclass(frozen=True)
class _Poles:
    eps_inf: float
    a0: np.ndarray      # (P,) ADE a0 (Omega^2; 0 for Drude)
    b: np.ndarray       # (P,) ADE b
    cL: np.ndarray      # (P,) Laplacian coefficient (beta_nl^2 for a nonlocal pole)


def _poles(material: Material, local: bool = False) -> _Poles:
    if not isinstance(material, Material):
        raise ParameterError(f"material = {material!r} is not allowed: expected an fdtd Material")
    a0, b, cl = [], [], []
    for p in material.poles:
        q0, _a1, qb = p.ade_parameters()
        if qb == 0.0:
            continue                       # a pole of zero strength has no resonance
        a0.append(q0)
        b.append(qb)
        cl.append(0.0 if local else p.laplacian_coefficient())
    return _Poles(material.eps_inf, np.array(a0, float), np.array(b, float), np.array(cl, float))


def lossless(material: Material) -> Material:
    """The material with every damping rate set to 0 (mode positions only)."""
    poles = tuple(replace(p, gamma=0.0) if hasattr(p, "gamma") else p for p in material.poles)
    return Material(material.eps_inf, poles, material.name)


def with_nonlocal(material: Material, beta_nl: float) -> Material:
    """Every Lorentz pole of ``material`` made spatially dispersive with ``beta_nl``.

    ``beta_nl`` (fraction of c) in [0, 1); Drude poles stay local.  Already
    nonlocal poles get the new ``beta_nl``.
    """
    b = _checks.in_range("beta_nl (nonlocal speed, fraction of c)", beta_nl, 0.0, 1.0, hi_open=True)
    poles = []
    for p in material.poles:
        if isinstance(p, NonlocalLorentzPole):
            poles.append(replace(p, beta_nl=b))
        elif isinstance(p, LorentzPole):
            poles.append(NonlocalLorentzPole(p.delta_eps, p.omega0, p.gamma, b))
        else:
            poles.append(p)
    return Material(material.eps_inf, tuple(poles), material.name)


def local_version(material: Material) -> Material:
    """The material with every nonlocal pole replaced by its local (k = 0) pole."""
    poles = tuple(p.local() if isinstance(p, NonlocalLorentzPole) else p for p in material.poles)
    return Material(material.eps_inf, poles, material.name)



def nonlocal_model(material: Material, beta_nl: float | None) -> Material | None:
    """The lossless spatially dispersive model: the material with ``beta_nl`` given to its
    Lorentz poles, or the material itself if it has nonlocal poles; None if neither applies."""
    nonloc = None
    if beta_nl is not None:
        nonloc = lossless(with_nonlocal(material, beta_nl))
    elif material.is_nonlocal:
        nonloc = lossless(material)
    return nonloc if nonloc is not None and nonloc.is_nonlocal else None


def resonance_frequencies(material: Material) -> np.ndarray:
    """Resonance frequencies sqrt(a0) (c/ell) of the material's resonant poles at k = 0,
    shape (Q,), in the order of the poles (Drude poles and poles of zero strength left out)."""
    P = _poles(material, local=True)
    return np.sqrt(P.a0[P.a0 > 0.0])


def _u_eps(u, K2, P: _Poles):
    """u * eps(u, K^2) without loss (elementwise); u and K2 broadcast together, result
    of their broadcast shape.  u = omega^2 (continuum) or omega_tilde^2 (scheme)."""
    u, K2 = np.broadcast_arrays(np.asarray(u, float), np.asarray(K2, float))
    shape = u.shape
    u, K2 = u.reshape(-1), K2.reshape(-1)
    a0 = P.a0[:, None] + P.cL[:, None] * K2[None, :]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # a Drude pole (a0 = 0) contributes u * b/(0 - u) = -b exactly
        term = np.where(a0 == 0.0, -P.b[:, None], P.b[:, None] * u[None, :] / (a0 - u[None, :]))
        return (u * P.eps_inf + term.sum(axis=0)).reshape(shape)


class _Roots:
    """Brackets of one root per (row, column) of a table, solved together.

    ``ok`` (R, N) marks the entries with a bracket; the flat arrays (one entry per
    True of ``ok``, row-major) hold the bracket ``lo, hi`` (in u), ``K2`` and the
    resonances at the bracket's ends (``pole_lo``, ``pole_hi``; NaN where an end is
    not a resonance); ``kind`` is 0 for a bulk branch, 1 for a surface polariton."""

    def __init__(self, ok, lo, hi, K2, pole_lo, pole_hi, kind):
        self.ok = ok
        self.lo, self.hi, self.K2 = lo[ok], hi[ok], np.broadcast_to(K2, ok.shape)[ok]
        self.pole_lo, self.pole_hi = pole_lo[ok], pole_hi[ok]
        self.kind = np.full(self.lo.shape, float(kind))

    def above(self, u_min, residual) -> None:
        """Keep only roots u >= u_min (shape (N,), per column): the residual increases
        through the root, so a root lies above u_min iff the residual there is <= 0; the
        bracket then starts at u_min (a cheaper search), else the entry is dropped."""
        um = np.broadcast_to(u_min, self.ok.shape)[self.ok]
        inside = um > self.lo
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            r = residual(np.where(inside & (um < self.hi), um, self.lo), self.K2, self.pole_lo,
                         self.pole_hi, self.kind)
        self.lo = np.where(inside, um, self.lo)
        self._keep(~inside | ((um < self.hi) & (r <= 0.0)))

    def only_rows(self, rows) -> None:
        """Drop the entries of every row not in ``rows`` (row indices of this table)."""
        wanted = np.zeros(self.ok.shape[0], dtype=bool)
        wanted[list(rows)] = True
        self._keep(wanted[np.nonzero(self.ok)[0]])

    def _keep(self, keep) -> None:
        """Keep the flat entries where ``keep`` (one bool per entry) is True."""
        idx = np.flatnonzero(self.ok)
        self.ok = self.ok.copy()
        self.ok.flat[idx[~keep]] = False
        for name in ("lo", "hi", "K2", "pole_lo", "pole_hi", "kind"):
            setattr(self, name, getattr(self, name)[keep])


def _branch_brackets(P: _Poles, K2, u_top: float) -> _Roots:
    """Brackets of the roots u_j of u eps(u, K^2) = K^2, one per interval between resonances.

    K2 (N,); rows j = 0..Q for Q resonant poles: branch j lives between the j-th and
    (j+1)-th resonance (sorted per column; resonance 0 is u = 0), and has no root
    where the interval is empty or (scheme) lies above u_top.  On each interval
    ``u eps(u) - K^2`` increases from -inf just above a resonance to +inf just below
    the next, so the bracket is the interval itself."""
    K2 = np.asarray(K2, float)
    N = K2.size
    res_mask = P.a0 > 0.0
    a0 = np.sort(P.a0[res_mask][:, None] + P.cL[res_mask][:, None] * K2[None, :], axis=0)  # (Q, N)
    Q = a0.shape[0]
    # the function is infinite on a resonance: start one floating-point step inside it
    lo = np.vstack([np.zeros((1, N)), np.nextafter(a0, np.inf)])
    hi = np.vstack([np.nextafter(a0, -np.inf), np.full((1, N), u_top)])
    ok = hi > lo
    drude = float(P.b[P.a0 == 0.0].sum())
    ok[0] &= K2 > -drude                     # u eps(0+) = -(sum of the Drude b)
    if math.isfinite(u_top):
        with np.errstate(invalid="ignore"):
            ok[Q] &= _u_eps(np.full(N, u_top), K2, P) >= K2    # the scheme's top, omega dt = pi
    # u eps(u) >= eps_inf u - 2 sum|b| for u >= 2 a0_max (each pole's term is >= -2 b there):
    # an upper bracket of the top branch, much closer to its root than the scheme's top
    top = np.maximum(2.0 * (a0[-1] if Q else np.zeros(N)),
                     (K2 + 2.0 * np.abs(P.b).sum()) / P.eps_inf) * 1.01 + 1e-300
    hi[Q] = np.minimum(np.maximum(top, lo[Q] * 1.01 + 1e-300), u_top)
    nan = np.full((1, N), np.nan)
    return _Roots(ok, lo, hi, K2, np.vstack([nan, a0]), np.vstack([a0, nan]), 0)


def _surface_brackets(material: Material, K2, scheme: Scheme | None) -> _Roots:
    """Brackets of the surface polariton's roots of :func:`_surface_residual`, one row per
    band of :func:`_surface_bands`; bound (a root) only where K^2 exceeds the band's start."""
    K2 = np.asarray(K2, float)
    bands = _surface_bands(material, scheme)
    start = np.array([s for s, _u in bands]).reshape(-1, 1)           # (Bs, 1)
    end = np.array([u_s for _s, u_s in bands]).reshape(-1, 1)
    lo = np.broadcast_to(np.nextafter(start, np.inf), (len(bands), K2.size))
    hi = np.broadcast_to(end, lo.shape)
    ok = (K2[None, :] > start) & (hi > lo)
    pole_lo = np.broadcast_to(np.where(start > 0.0, start, np.nan), lo.shape)   # a Drude band
    return _Roots(ok, lo, hi, K2, pole_lo, np.full(lo.shape, np.nan), 1)        # starts at u = 0


def _distance(u, pole_lo, pole_hi):
    """(u - pole_lo)(pole_hi - u), a factor left out where a pole is NaN (no pole at that end)."""
    return (np.where(np.isnan(pole_lo), 1.0, u - pole_lo)
            * np.where(np.isnan(pole_hi), 1.0, pole_hi - u))


def _surface_residual(u, K2, P: _Poles):
    """``K^2 (g + u) - g u`` with ``g = u eps(u)`` (local): zero where
    ``K^2 = u eps/(eps + 1)``.  It is the polariton relation multiplied by
    ``-(g + u) = -u (eps + 1) > 0`` inside a band (eps < -1), so it has the same
    sign as ``u eps/(eps + 1) - K^2`` there but no pole at the band's end, where
    it equals ``u^2 > 0``; at the band's start (a resonance) it tends to -inf."""
    g = _u_eps(u, 0.0, P)
    return K2 * (g + u) - g * u


def _residual(P: _Poles, P_local: _Poles):
    """The function whose roots :func:`_solve` finds: per entry the bulk relation
    ``u eps(u, K^2) - K^2`` (kind 0) or the surface one (kind 1), times the distances
    to the resonances that bound its bracket.  Each has a simple pole there; with the
    factor (> 0 inside the bracket: same root, same signs) it is smooth (for one pole a
    quadratic), which the root search's interpolation steps need to converge quickly."""
    def f(u, K2, pole_lo, pole_hi, kind):
        out = np.empty(np.shape(u))
        bulk = kind == 0.0
        if np.any(bulk):
            out[bulk] = _u_eps(u[bulk], K2[bulk], P) - K2[bulk]
        if not np.all(bulk):
            out[~bulk] = _surface_residual(u[~bulk], K2[~bulk], P_local)
        return out * _distance(u, pole_lo, pole_hi)
    return f


def _solve(P: _Poles, P_local: _Poles, tables, u_min=None) -> list:
    """Roots of several bracket tables (:class:`_Roots`) in one vectorised call of
    ``scipy.optimize.elementwise.find_root`` (to 4 ulp); each table -> an (R, N) array
    of u, NaN where there is no root (or none >= ``u_min``, shape (N,), if given)."""
    f = _residual(P, P_local)
    if u_min is not None:
        for t in tables:
            t.above(u_min, f)
    roots = bracketed_roots(f, *(np.concatenate([getattr(t, name) for t in tables])
                                 for name in ("lo", "hi")),
                            tuple(np.concatenate([getattr(t, name) for t in tables])
                                  for name in ("K2", "pole_lo", "pole_hi", "kind")))
    out, i = [], 0
    for t in tables:
        u = np.full(t.ok.shape, np.nan)
        n = int(t.ok.sum())
        u[t.ok] = roots[i:i + n]
        out.append(u)
        i += n
    return out


def _u_min(omega_min, kf, scheme: Scheme | None):
    """u of the lowest wanted frequency per wavenumber (None: all); +inf above the scheme's top."""
    if omega_min is None:
        return None
    w = np.broadcast_to(np.asarray(omega_min, dtype=float), kf.shape)
    if scheme is None:
        return w * w
    return np.where(w <= math.pi / scheme.dt, scheme.omega_to_u(w), np.inf)


def n_branches(material: Material) -> int:
    """Number of lossless mode branches (resonant poles + 1)."""
    P = _poles(material)
    return int(np.count_nonzero(P.a0 > 0.0)) + 1


def modes_and_surface(material: Material, k, scheme: Scheme | None = None, local: bool = False,
                      omega_min=None, surface: bool = True, rows=None) -> tuple:
    """:func:`mode_frequencies` and :func:`surface_polariton_frequencies` from one root search.

    ``omega_min`` (c/ell, broadcast to the shape S of ``k``), if given: only
    frequencies >= omega_min are wanted; the others are NaN, and the search starts
    there (the gap criterion ``k^2 - omega^2 <= k_gap^2`` of
    :mod:`fdtd.reference.thresholds` asks for ``omega >= sqrt(k^2 - k_gap^2)``).
    ``surface=False`` leaves the surface polariton out (no rows); ``rows``, if
    given, are the only rows solved (indices into bulk rows followed by surface
    rows), the others are NaN.  Returns ``(bulk (B,) + S, surface (Bs,) + S)`` (c/ell).
    """
    k = np.asarray(k, dtype=float)
    kf = np.abs(k.ravel())
    P, P_local = _poles(material, local), _poles(material, local=True)
    K2 = kf**2 if scheme is None else scheme.K2(kf)
    u_top = math.inf if scheme is None else scheme.u_top
    tables = [_branch_brackets(P, K2, u_top)]
    if surface:
        tables.append(_surface_brackets(material, K2, scheme))
    if rows is not None:
        nb = tables[0].ok.shape[0]
        tables[0].only_rows([r for r in rows if r < nb])
        if surface:
            tables[1].only_rows([r - nb for r in rows if r >= nb])
    bulk, *rest = _solve(P, P_local, tables, _u_min(omega_min, kf, scheme))
    surf = rest[0] if surface else np.zeros((0, kf.size))
    to_w = np.sqrt if scheme is None else scheme.u_to_omega
    return (to_w(bulk).reshape((bulk.shape[0],) + k.shape),
            to_w(surf).reshape((surf.shape[0],) + k.shape))


def mode_frequencies(material: Material, k, scheme: Scheme | None = None, local: bool = False,
                     omega_min=None):
    """Lossless mode branches omega_j(k) of a homogeneous medium.

    Continuum: ``omega^2 eps(omega, k) = k^2``; with ``scheme``: the Yee + ADE
    relation ``(2/dt)^2 sin^2(omega dt/2) eps_d(omega, K) = K^2``,
    ``K = (2/dx) sin(k dx/2)`` (a wave along one axis).  With u = omega^2
    (continuum) or u = omega_tilde^2 (scheme), ``u eps(u)`` increases between
    consecutive resonances (a nonlocal pole's resonance is ``a0 + beta_nl^2 k^2``
    or ``+ beta_nl^2 K^2``), so each branch is one root per interval, found by
    a vectorised bracketed root search (``scipy.optimize.elementwise.find_root``,
    to 4 ulp); without resonances the one branch is ``u = (K^2 + sum b_Drude)/eps_inf``.
    Loss is ignored.

    Parameters
    ----------
    material : Material
    k : array_like, shape S
        Wavenumbers |k| (1/ell), >= 0.
    scheme : Scheme, optional
        Discrete dispersion of this scheme instead of the continuum.
    local : bool
        Treat nonlocal poles as local (k = 0 resonance).
    omega_min : array_like, optional
        Lowest frequency wanted (c/ell), broadcast to S; lower roots are NaN.

    Returns
    -------
    ndarray, shape (B,) + S
        omega_j(k) (c/ell), branches ordered from the lowest; NaN where a
        branch has no real frequency (e.g. above omega dt = pi).
    """
    k = np.asarray(k, dtype=float)
    P = _poles(material, local)
    kf = np.abs(k.ravel())
    K2 = kf**2 if scheme is None else scheme.K2(kf)
    u_top = math.inf if scheme is None else scheme.u_top
    t = _branch_brackets(P, K2, u_top)
    if t.ok.shape[0] == 1 and omega_min is None:
        # no resonance: u eps(u) = eps_inf u - sum b_Drude is linear, the root is exact
        u = np.full(t.ok.shape, np.nan)
        u[t.ok] = (t.K2 + float(P.b[P.a0 == 0.0].sum())) / P.eps_inf
    else:
        (u,) = _solve(P, P, [t], _u_min(omega_min, kf, scheme))
    w = np.sqrt(u) if scheme is None else scheme.u_to_omega(u)
    return w.reshape((w.shape[0],) + k.shape)


@functools.lru_cache(maxsize=64)
def _surface_bands(material: Material, scheme: Scheme | None) -> tuple:
    """Bands (u_start, u_end) where eps(u) < -1 (local, lossless; u = omega^2 or
    omega_tilde^2): from each resonance (or u = 0 with a Drude pole), where
    eps -> -inf, up to eps = -1 (eps increases inside an interval; the end is a
    root of eps + 1, found by Brent's method)."""
    P = _poles(material, local=True)
    u_top = math.inf if scheme is None else scheme.u_top
    res = sorted(set(float(a) for a in P.a0 if a > 0.0))
    starts = ([0.0] if np.any(P.a0 == 0.0) else []) + res

    def eps_plus_1(u):
        return float(_u_eps(u, 0.0, P)) / u + 1.0

    out = []
    for s in starts:
        above = [r for r in res if r > s]
        top = above[0] if above else u_top
        # just above the resonance eps is large and negative, but finite
        lo_b = s * (1.0 + 1e-14) + 1e-300
        if math.isfinite(top):
            hi_b = top * (1.0 - 1e-14)
        else:
            hi_b = max(2.0 * s, 1.0)
            while eps_plus_1(hi_b) <= 0.0:
                hi_b *= 2.0
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            if eps_plus_1(hi_b) <= 0.0:
                u_s = hi_b                   # eps < -1 up to the top of the interval
            else:
                u_s = scalar_root(eps_plus_1, lo_b, hi_b)
        out.append((s, u_s))
    return tuple(out)


def surface_polariton_frequencies(material: Material, kx, scheme: Scheme | None = None,
                                  omega_min=None):
    """Surface polariton of a flat vacuum/medium interface, local model.

    ``k_x^2 = u eps(u)/(eps(u) + 1)`` with u = omega^2, in every band where
    ``eps < -1``: each band starts at a resonance (or at omega = 0 with a Drude
    pole), where eps -> -inf, and ends where eps = -1; there the right side rises
    monotonically from the resonance u to +inf, so there is one root per band
    where ``k_x^2`` exceeds the band's start (bound to the surface).  Nonlocal
    poles are taken at k = 0 (the surface polariton of a spatially dispersive
    medium also depends on the additional boundary condition; not modelled).
    With ``scheme`` the same relation is written with ``omega_tilde^2``,
    ``eps_d`` and ``K_x``: an analogue, not the exact dispersion of a discrete
    interface (which depends on how the interface cells are filled).

    Parameters
    ----------
    kx : array_like, shape S
        Wavenumber along the surface (1/ell).
    omega_min : array_like, optional
        As for :func:`mode_frequencies`.

    Returns
    -------
    ndarray, shape (B,) + S
        omega (c/ell) per band, NaN where no bound surface mode at that k_x.
    """
    kx = np.asarray(kx, dtype=float)
    kf = np.abs(kx.ravel())
    P = _poles(material, local=True)
    K2 = kf**2 if scheme is None else scheme.K2(kf)
    (u,) = _solve(P, P, [_surface_brackets(material, K2, scheme)], _u_min(omega_min, kf, scheme))
    w = np.sqrt(u) if scheme is None else scheme.u_to_omega(u)
    return w.reshape((w.shape[0],) + kx.shape)
