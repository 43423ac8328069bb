r"""Analytic speed thresholds: Cherenkov emission and the anomalous Doppler effect.

A source moving at speed v along x puts its current, at wavenumber k_x, only at
the lab frequencies ``omega = k_x v + s Omega`` (``Omega = omega0/gamma``, the
rest-frame frequency ``omega0`` slowed by time dilation; ``Omega = 0`` for a
charge).  It can hand energy to a lossless medium only where such a line meets
a mode ``omega = omega_j(k)`` of the medium.  This module finds, without running
the solver (numpy only, answers in milliseconds):

* the lossless mode branches ``omega_j(k)`` of a :class:`~fdtd.materials.Material`,
  in the continuum and in the Yee + ADE scheme of a given ``dx, dt``
  (:func:`mode_frequencies`), and the surface polariton of a vacuum interface
  (:func:`surface_polariton_frequencies`);
* the minimum speed for Cherenkov emission of a charge, ``v_min = min_j,k
  omega_j(k)/k`` (:func:`cherenkov_threshold`), and the emission band at a given
  speed (:func:`cherenkov_band`, the frequencies where ``beta^2 eps(omega) > 1``
  in a local continuum medium);
* the minimum speed for anomalous-Doppler emission of an oscillator,
  ``k v - omega0 sqrt(1 - v^2) = omega_j(k) > 0`` (:func:`anomalous_threshold`);
* for a source in the bulk (1D: ``k = k_x``; 2D: any ``k_y``) or at height h
  above a half-space across a vacuum gap (:class:`Geometry`), with three kinds of
  wavenumber cutoff (:class:`Cutoff`): none, the grid's own (``k <= pi/dx`` with
  the scheme's discrete dispersion, optionally only the periodic cell's
  ``k_m = 2 pi m / L``), and a physical one (a :class:`~fdtd.materials.NonlocalLorentzPole`);
* a report that prints as a table (:func:`threshold_report`) and a figure of
  ``v_min`` against the cutoff wavenumber (:func:`plot_threshold_vs_cutoff`).

Units: normalized (c = 1; wavenumbers in 1/ell, frequencies in c/ell for the
reference length ell of :mod:`fdtd.units`); speeds are fractions of c.

Loss is ignored for the mode positions: every pole is taken with ``gamma = 0``.
A lossy medium absorbs some power on every Doppler line, so with loss the
switch-on is a steep rise over a speed interval of order ``gamma/k``, not a
step.  The derivations are in DEVELOPERS.md, "Speed thresholds".
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field, replace

import numpy as np
import scipy.constants as _sc

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.media.materials import LorentzPole, Material, NonlocalLorentzPole

#: bisection steps of the scalar band-edge searches (u halves each step; 110 reach the
#: double-precision spacing even for u ~ 1e-12 in an interval of width ~1e4)
_BISECTIONS = 110
#: points of the k grid on which the minimum over k is searched (then refined)
_K_POINTS = 3000
_C0 = _sc.c                          # m/s
_HBAR_EV = _sc.hbar / _sc.e          # eV s: photon energy = hbar omega

PROCESSES = ("cherenkov", "anomalous")


# ----------------------------------------------------------------------------- set-up objects
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


#: wavenumbers with k dx above this count as near the grid's cutoff (fewer than 12 cells per
#: wavelength; the same criterion as the run summary's anomalous_share_near_grid_cutoff)
RESOLVED_KDX = math.pi / 6


@dataclass(frozen=True)
class Cutoff:
    """Which wavenumbers count, and with which dispersion.

    Parameters
    ----------
    k_max : float
        Largest wavenumber along the motion (1/ell); ``inf`` for none.
    scheme : Scheme, optional
        Use the discrete Yee + ADE dispersion of this scheme (then
        ``k_max <= pi/dx`` is enforced).
    period : float, optional
        Length L of a periodic cell (normalized): only ``k_m = 2 pi m / L``,
        ``m = 1, 2, ...`` count.

    A *physical* cutoff is not a Cutoff: it is a material with a
    :class:`~fdtd.materials.NonlocalLorentzPole` (see :func:`with_nonlocal`).
    """

    k_max: float = math.inf
    scheme: Scheme | None = None
    period: float | None = None

    def __post_init__(self) -> None:
        k = float(self.k_max)
        if not (k > 0.0):
            raise ParameterError(f"cutoff k_max = {self.k_max!r} is not allowed: expected a number > 0 "
                                 "(1/length unit) or inf for no cutoff")
        if self.scheme is not None:
            k = min(k, self.scheme.k_nyquist)
        object.__setattr__(self, "k_max", k)
        if self.period is not None:
            object.__setattr__(self, "period", _checks.positive("periodic cell length L", self.period))
            if not math.isfinite(k):
                raise ParameterError("a periodic cell's k_m set needs a finite k_max or a scheme "
                                     f"(got k_max = {self.k_max!r})")

    @classmethod
    def none(cls) -> Cutoff:
        return cls()

    @classmethod
    def wavenumber(cls, k_max: float) -> Cutoff:
        return cls(k_max=k_max)

    @classmethod
    def grid(cls, dx: float, dt: float, period: float | None = None) -> Cutoff:
        """The grid's own cutoff: discrete dispersion of (dx, dt), k <= pi/dx."""
        return cls(scheme=Scheme(dx, dt), period=period)

    @property
    def finite(self) -> bool:
        return math.isfinite(self.k_max)

    def k_set(self) -> np.ndarray | None:
        """The periodic cell's wavenumbers k_m <= k_max, shape (M,), or None."""
        if self.period is None:
            return None
        m = np.arange(1, int(math.floor(self.k_max * self.period / (2 * math.pi) * (1 + 1e-12))) + 1)
        return 2 * math.pi * m / self.period

    @classmethod
    def resolved(cls, dx: float, dt: float, period: float | None = None) -> Cutoff:
        """The grid's well-resolved wavenumbers only, k dx <= RESOLVED_KDX (pi/6: at least 12
        cells per wavelength), with the discrete dispersion: what the physics of a run rests on."""
        return cls(k_max=RESOLVED_KDX / dx, scheme=Scheme(dx, dt), period=period)

    def label(self) -> str:
        if self.scheme is not None and self.k_max < self.scheme.k_nyquist * (1 - 1e-12):
            s = (f"grid dx={self.scheme.dx:.4g} ell, dt={self.scheme.dt:.4g} ell/c, resolved only "
                 f"(k<=pi/(6dx)={self.k_max:.4g}/ell)")
        elif self.scheme is not None:
            s = (f"grid dx={self.scheme.dx:.4g} ell, dt={self.scheme.dt:.4g} ell/c "
                 f"(k<=pi/dx={self.k_max:.4g}/ell)")
        elif self.finite:
            s = f"continuum, k<={self.k_max:.4g}/ell"
        else:
            s = "continuum, no cutoff"
        if self.period is not None:
            s += f", periodic L={self.period:.4g} ell (k_m=2 pi m/L)"
        return s


@dataclass(frozen=True)
class Geometry:
    """Where the source is.

    Parameters
    ----------
    kind : str
        ``"bulk"``: the source moves through the medium; ``"gap"``: it moves at
        height ``height`` above the flat surface of a half-space of the medium,
        across vacuum.
    dims : int
        Bulk only: 1 (fields depend on x only, k = k_x) or 2 (any k_y).  A gap is 2D.
    height : float
        Gap: distance from the surface (normalized length), > 0.
    coupling : float
        Gap: the criterion's fraction f in (0, 1): a wavenumber counts if the
        evanescent coupling ``exp(-2 kappa h)``, ``kappa = sqrt(k_x^2 - omega^2)``,
        stays >= f.  A criterion, not a law (the coupled power decays smoothly).
    """

    kind: str = "bulk"
    dims: int = 1
    height: float | None = None
    coupling: float = 0.01

    def __post_init__(self) -> None:
        _checks.one_of("geometry kind", self.kind, ("bulk", "gap"))
        if self.kind == "gap":
            if self.height is None:
                raise ParameterError("a gap geometry needs the source height h above the surface "
                                     "(normalized length > 0)")
            object.__setattr__(self, "height", _checks.positive("source height h above the surface",
                                                                self.height))
            object.__setattr__(self, "dims", 2)
        elif self.dims not in (1, 2):
            raise ParameterError(f"bulk geometry dims = {self.dims!r} is not allowed: expected 1 or 2")
        object.__setattr__(self, "coupling", _checks.in_range(
            "gap coupling fraction f", self.coupling, 0.0, 1.0, lo_open=True, hi_open=True))

    @classmethod
    def bulk(cls, dims: int = 1) -> Geometry:
        return cls("bulk", dims)

    @classmethod
    def gap(cls, height: float, coupling: float = 0.01) -> Geometry:
        return cls("gap", 2, height, coupling)

    @property
    def k_gap(self) -> float:
        """ln(1/f)/(2h): the largest evanescent decay constant kappa that counts (1/ell)."""
        if self.kind != "gap":
            return math.inf
        return math.log(1.0 / self.coupling) / (2.0 * self.height)

    def label(self) -> str:
        if self.kind == "bulk":
            return f"bulk, {self.dims}D"
        return (f"gap: height h = {self.height:.4g} ell above a half-space, criterion "
                f"exp(-2 kappa h) >= {self.coupling:g} (kappa <= k_gap = {self.k_gap:.4g}/ell)")


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


def _u_eps(u, K2, P: _Poles):
    """u * eps(u, K^2) without loss; u, K2 broadcast to (N,); returns (N,)."""
    u = np.asarray(u, float)
    a0 = P.a0[:, None] + P.cL[:, None] * np.asarray(K2, float)[None, :]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # a Drude pole (a0 = 0) contributes u * b/(0 - u) = -b exactly
        term = np.where(a0 == 0.0, -P.b[:, None], P.b[:, None] * u[None, :] / (a0 - u[None, :]))
        return u * P.eps_inf + term.sum(axis=0)


def _bisect(f, lo, hi, n=_BISECTIONS):
    """Vectorised bisection for increasing f on [lo, hi] (arrays); f(lo) < 0 < f(hi)."""
    lo = lo.copy()
    hi = hi.copy()
    for _ in range(n):
        mid = 0.5 * (lo + hi)
        neg = f(mid) < 0.0
        lo = np.where(neg, mid, lo)
        hi = np.where(neg, hi, mid)
        if np.all(hi - lo <= 2e-16 * np.abs(hi)):
            break
    return 0.5 * (lo + hi)


def _u_eps_derivative(u, K2, P: _Poles):
    """d(u eps)/du = eps_inf + sum b a0/(a0 - u)^2 > 0 (lossless; Drude adds 0)."""
    a0 = P.a0[:, None] + P.cL[:, None] * np.asarray(K2, float)[None, :]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        return P.eps_inf + (P.b[:, None] * a0 / (a0 - np.asarray(u, float)[None, :]) ** 2).sum(axis=0)


def _newton_bracketed(f, fprime, lo, hi, bisections=40):
    """Root of an increasing f in (lo, hi) (arrays): bisections, then Newton steps kept
    inside the bracket (the bracket is already ~1e-12 wide after 40 bisections, so
    Newton converges in a few steps even for a root much smaller than hi - lo)."""
    lo = lo.copy()
    hi = hi.copy()
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for _ in range(bisections):
            mid = 0.5 * (lo + hi)
            neg = f(mid) < 0.0
            lo = np.where(neg, mid, lo)
            hi = np.where(neg, hi, mid)
        u = 0.5 * (lo + hi)
        for _ in range(6):
            un = u - f(u) / fprime(u)
            un = np.where(np.isfinite(un) & (un > lo) & (un < hi), un, u)
            done = np.all(np.abs(un - u) <= 4e-16 * np.abs(un))
            u = un
            if done:
                break
    return u


def _solve_branch(P: _Poles, K2, lo, hi):
    """Root of u eps(u, K2) = K2 in (lo, hi), where the left side increases."""
    return _newton_bracketed(lambda u: _u_eps(u, K2, P) - K2,
                             lambda u: _u_eps_derivative(u, K2, P), lo, hi)


def _branch_roots(P: _Poles, K2, u_top: float):
    """Roots u_j of u eps(u, K^2) = K^2, one per interval between resonances.

    K2 (N,) -> (B, N) with B = (number of resonant poles) + 1, NaN where a
    branch has no root (empty interval, or above u_top).  Branch j lives between
    the j-th and (j+1)-th resonance (sorted per column; resonance 0 is u = 0)."""
    K2 = np.asarray(K2, float)
    N = K2.size
    res_mask = P.a0 > 0.0
    a0 = (P.a0[res_mask][:, None] + P.cL[res_mask][:, None] * K2[None, :])
    a0 = np.sort(a0, axis=0)                                         # (Q, N)
    Q = a0.shape[0]
    lo = np.vstack([np.zeros((1, N)), a0])
    hi = np.vstack([a0, np.full((1, N), u_top)])
    out = np.full((Q + 1, N), np.nan)
    drude = float(P.b[P.a0 == 0.0].sum())
    for j in range(Q + 1):
        l, h = lo[j].copy(), hi[j].copy()
        ok = h > l
        if j == 0:
            ok &= K2 > -drude                    # g(0+) = -sum of the Drude b
        if not math.isfinite(u_top) and j == Q:
            # g(u) >= eps_inf u - 2 sum|b| for u >= 2 a0_max: a finite upper bracket
            h = np.maximum(2.0 * (a0[-1] if Q else np.zeros(N)),
                           (K2 + 2.0 * np.abs(P.b).sum()) / P.eps_inf) * 1.01 + 1e-300
            h = np.maximum(h, l * 1.01 + 1e-300)
        elif j == Q:
            with np.errstate(invalid="ignore"):
                ok &= _u_eps(np.full(N, u_top), K2, P) >= K2   # the scheme's top, omega dt = pi
        if not np.any(ok):
            continue
        out[j, ok] = _solve_branch(P, K2[ok], l[ok], h[ok])
    return out


def n_branches(material: Material) -> int:
    """Number of lossless mode branches (resonant poles + 1)."""
    P = _poles(material)
    return int(np.count_nonzero(P.a0 > 0.0)) + 1


def mode_frequencies(material: Material, k, scheme: Scheme | None = None, local: bool = False):
    """Lossless mode branches omega_j(k) of a homogeneous medium.

    Continuum: ``omega^2 eps(omega, k) = k^2``; with ``scheme``: the Yee + ADE
    relation ``(2/dt)^2 sin^2(omega dt/2) eps_d(omega, K) = K^2``,
    ``K = (2/dx) sin(k dx/2)`` (a wave along one axis).  With u = omega^2
    (continuum) or u = omega_tilde^2 (scheme), ``u eps(u)`` increases between
    consecutive resonances (a nonlocal pole's resonance is ``a0 + beta_nl^2 k^2``
    or ``+ beta_nl^2 K^2``), so each branch is one root per interval, found by
    vectorised bisection.  Loss is ignored.

    Parameters
    ----------
    material : Material
    k : array_like, shape S
        Wavenumbers |k| (1/ell), >= 0.
    scheme : Scheme, optional
        Discrete dispersion of this scheme instead of the continuum.
    local : bool
        Treat nonlocal poles as local (k = 0 resonance).

    Returns
    -------
    ndarray, shape (B,) + S
        omega_j(k) (c/ell), branches ordered from the lowest; NaN where a
        branch has no real frequency (e.g. above omega dt = pi).
    """
    k = np.asarray(k, dtype=float)
    P = _poles(material, local)
    kf = np.abs(k.ravel())
    if scheme is None:
        u = _branch_roots(P, kf**2, math.inf)
        w = np.sqrt(u)
    else:
        u = _branch_roots(P, scheme.K2(kf), scheme.u_top)
        w = scheme.u_to_omega(u)
    return w.reshape((w.shape[0],) + k.shape)


@functools.lru_cache(maxsize=64)
def _surface_bands(material: Material, scheme: Scheme | None) -> tuple:
    """Bands (u_start, u_end) where eps(u) < -1 (local, lossless; u = omega^2 or
    omega_tilde^2): from each resonance (or u = 0 with a Drude pole), where
    eps -> -inf, up to eps = -1 (eps increases inside an interval)."""
    P = _poles(material, local=True)
    u_top = math.inf if scheme is None else scheme.u_top
    res = sorted(set(float(a) for a in P.a0 if a > 0.0))
    starts = ([0.0] if np.any(P.a0 == 0.0) else []) + res

    def eps_plus_1(u):
        u = np.asarray(u, float)
        return _u_eps(u, np.zeros(u.size), P) / u + 1.0

    out = []
    for s in starts:
        above = [r for r in res if r > s]
        top = above[0] if above else u_top
        lo_b = s * (1.0 + 1e-14) + 1e-300
        if math.isfinite(top):
            hi_b = top * (1.0 - 1e-14)
        else:
            hi_b = max(2.0 * s, 1.0)
            while eps_plus_1(np.array([hi_b]))[0] <= 0.0:
                hi_b *= 2.0
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            if eps_plus_1(np.array([hi_b]))[0] <= 0.0:
                u_s = hi_b                   # eps < -1 up to the top of the interval
            else:
                u_s = float(_bisect(eps_plus_1, np.array([lo_b]), np.array([hi_b]))[0])
        out.append((s, u_s))
    return tuple(out)


def surface_polariton_frequencies(material: Material, kx, scheme: Scheme | None = None):
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

    Returns
    -------
    ndarray, shape (B,) + S
        omega (c/ell) per band, NaN where no bound surface mode at that k_x.
    """
    kx = np.asarray(kx, dtype=float)
    P = _poles(material, local=True)
    kf = np.abs(kx.ravel())
    K2 = kf**2 if scheme is None else scheme.K2(kf)

    def spp(u, Kb):                          # u eps/(eps + 1) - K_x^2 = g u/(g + u) - K_x^2, g = u eps
        g = _u_eps(u, np.zeros(u.size), P)
        with np.errstate(divide="ignore", invalid="ignore"):
            return g * u / (g + u) - Kb

    def spp_prime(u):                        # (g' u^2 + g^2)/(g + u)^2 > 0: increasing
        z = np.zeros(u.size)
        g, gp = _u_eps(u, z, P), _u_eps_derivative(u, z, P)
        with np.errstate(divide="ignore", invalid="ignore"):
            return (gp * u * u + g * g) / (g + u) ** 2

    out = []
    for s, u_s in _surface_bands(material, scheme):
        lo_b = s * (1.0 + 1e-14) + 1e-300
        w = np.full(kf.shape, np.nan)
        ok = K2 > s                          # bound to the surface: beyond the band's light line
        if np.any(ok) and u_s > lo_b:
            Kb = K2[ok]
            root = _newton_bracketed(lambda u, Kb=Kb: spp(u, Kb), spp_prime, np.full(Kb.size, lo_b),
                                     np.full(Kb.size, u_s))
            with np.errstate(invalid="ignore"):
                good = np.abs(spp(root, Kb)) <= 1e-6 * Kb + 1e-12
            r = np.where(good, root, np.nan)
            w[ok] = np.sqrt(r) if scheme is None else scheme.u_to_omega(r)
        out.append(w)
    if not out:
        return np.zeros((0,) + kx.shape)
    return np.array(out).reshape((len(out),) + kx.shape)


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


def _modes_on(material, k, cutoff: Cutoff, geometry: Geometry, local: bool):
    """Mode frequencies on k (N,): list of (label, omega (N,)); for a gap the
    surface polariton is added and points outside the coupling criterion
    ``k^2 - omega^2 <= k_gap^2`` are NaN."""
    rows = []
    W = mode_frequencies(material, k, cutoff.scheme, local)
    for j in range(W.shape[0]):
        rows.append((_branch_label(j, W.shape[0]), W[j]))
    if geometry.kind == "gap":
        S = surface_polariton_frequencies(material, k, cutoff.scheme)
        for j in range(S.shape[0]):
            rows.append(("surface polariton" + (f" {j}" if S.shape[0] > 1 else ""), S[j]))
        with np.errstate(invalid="ignore"):
            rows = [(lab, np.where(k * k - w * w <= geometry.k_gap**2, w, np.nan)) for lab, w in rows]
    return rows


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
                lo, hi = float(k[i]), float(k[i + 1])
                for _ in range(2):
                    kk = np.linspace(lo, hi, 513)
                    ww = _modes_on(material, kk, cutoff, geometry, local)[r][1]
                    j = int(np.nonzero(np.isfinite(ww))[0][-1])
                    lo, hi = float(kk[j]), float(kk[min(j + 1, 512)])
                edges[(r, i)] = (lo, float(_modes_on(material, np.array([lo]), cutoff, geometry,
                                                     local)[r][1][0]))
            ke, we = edges[(r, i)]
            out[proc] = Threshold(proc, float(anomalous_speed(ke, we, w0)), ke, we, label, "gap")
            continue
        # interior minimum: refine on finer local grids
        lo, hi = float(k[max(i - 1, 0)]), float(k[min(i + 1, k.size - 1)])
        vi, ki, wi = float(v[i]), float(k[i]), float(w[i])
        for _ in range(2):
            kk = np.linspace(lo, hi, 401)
            ww = _modes_on(material, kk, cutoff, geometry, local)[r][1]
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
    return _threshold_curves(material, k_max, {process: w0}, geometry, scheme, local)[process]


def _threshold_curves(material, k_max, w0s: dict, geometry, scheme, local) -> dict:
    geometry = geometry or Geometry()
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
    Edges are located on a fine frequency grid and refined by bisection (to
    ~1e-12 relative); they include the resonances, where eps jumps.

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

    def edge(a, b, ca):
        for _ in range(200):
            m = 0.5 * (a + b)
            if m <= a or m >= b:
                break
            if _band_condition(material, np.array([m]), v, cutoff, geometry, local)[0] == ca:
                a = m
            else:
                b = m
        return 0.5 * (a + b)

    edges = []
    for i in np.nonzero(c[1:] != c[:-1])[0]:
        edges.append(edge(grid[i], grid[i + 1], c[i]))
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


# ----------------------------------------------------------------------------- report
@dataclass
class ThresholdRow:
    """One model/cutoff combination of a :class:`ThresholdReport`."""

    label: str
    cutoff: Cutoff
    material: Material
    cherenkov: Threshold
    anomalous: Threshold | None
    band: list | None


@dataclass
class ThresholdReport:
    """Thresholds for several cutoffs; ``str()`` prints the table.

    All numbers are normalized (speeds in c, wavenumbers in 1/ell, frequencies
    in c/ell); with ``ell`` (metres) the table adds SI columns (1/um, rad/s and eV).
    """

    material: Material
    geometry: Geometry
    omega0: float | None
    speed: float | None
    rows: list
    ell: float | None = None
    notes: list = field(default_factory=list)

    def as_dict(self) -> dict:
        def th(t):
            if t is None:
                return None
            d = {"speed": {"value": None if math.isnan(t.speed) else t.speed, "units": "c"},
                 "branch": t.branch, "set_by": t.set_by,
                 "meaning": t.describe(),
                 "k": {"value": t.k, "units": "1/ell"}, "omega": {"value": t.omega, "units": "c/ell"}}
            if self.ell and t.k is not None:
                d["k_si"] = {"value": t.k / self.ell, "units": "1/m"}
                d["omega_si"] = {"value": t.omega * _C0 / self.ell, "units": "rad/s"}
            return d
        return {"material": self.material.name, "geometry": self.geometry.label(),
                "omega0": {"value": self.omega0, "units": "c/ell"},
                "speed": {"value": self.speed, "units": "c"}, "ell": {"value": self.ell, "units": "m"},
                "rows": [{"cutoff": r.label, "cherenkov": th(r.cherenkov), "anomalous": th(r.anomalous),
                          "band": None if r.band is None else [{"omega_lo": a, "omega_hi": b,
                                                                "units": "c/ell"} for a, b in r.band]}
                         for r in self.rows],
                "notes": list(self.notes)}

    def _fmt_k(self, k):
        if k is None:
            return ("-", "-")
        si = f"{k / self.ell * 1e-6:.4g}" if self.ell else "-"
        return (f"{k:.5g}", si)

    def _fmt_w(self, w):
        if w is None:
            return ("-", "-")
        if not self.ell:
            return (f"{w:.5g}", "-")
        w_si = w * _C0 / self.ell
        ev = w_si * _HBAR_EV
        return (f"{w:.5g}", f"{w_si:.4g} ({ev:.4g} eV)")

    def table(self) -> str:
        m = self.material
        lines = [f"speed thresholds: material {m.name!r} (eps_inf = {m.eps_inf:g}, "
                 f"{len(m.poles)} pole(s)), {self.geometry.label()}"]
        if self.omega0 is not None:
            lines.append(f"oscillator rest frequency omega0 = {self.omega0:.5g} c/ell"
                         + (f" = {self.omega0 * _C0 / self.ell:.4g} rad/s" if self.ell else ""))
        if self.ell:
            lines.append(f"normalized units: ell = {self.ell:.4g} m; k in 1/ell, omega in c/ell; "
                         "SI: k in 1/um, omega in rad/s (photon energy in eV)")
        else:
            lines.append("normalized units: k in 1/ell, omega in c/ell")
        head = ["cutoff / model", "process", "v_min [c]", "k [1/ell]", "k [1/um]", "omega [c/ell]",
                "omega [rad/s]", "branch", "set by"]
        body = []
        for r in self.rows:
            first = True
            for t in (r.cherenkov, r.anomalous):
                if t is None:
                    continue
                k1, k2 = self._fmt_k(t.k)
                w1, w2 = self._fmt_w(t.omega)
                sp = "none < c" if t.set_by == "none" else f"{t.speed:.5g}"
                body.append([r.label if first else "", "Cherenkov (charge)" if t.process == "cherenkov"
                             else "anomalous Doppler", sp, k1, k2, w1, w2, t.branch, t.set_by])
                first = False
        width = [max(len(h), *(len(b[i]) for b in body)) if body else len(h) for i, h in enumerate(head)]
        fmt = "  ".join("{:<%d}" % w for w in width)
        lines.append(fmt.format(*head))
        lines.append(fmt.format(*["-" * w for w in width]))
        lines += [fmt.format(*b) for b in body]
        if self.speed is not None and any(r.band is not None for r in self.rows):
            lines.append("")
            lines.append(f"Cherenkov band of a charge at v = {self.speed:.4g} c "
                         "(frequencies where it emits):")
            for r in self.rows:
                if r.band is None:
                    continue
                if not r.band:
                    txt = "none"
                else:
                    txt = ", ".join(self._band_txt(a, b) for a, b in r.band)
                lines.append(f"  {r.label}: {txt}")
        if self.notes:
            lines.append("")
            lines += [f"note: {n}" for n in self.notes]
        return "\n".join(lines)

    def _band_txt(self, a, b):
        def one(x):
            if not math.isfinite(x):
                return "inf"
            if not self.ell:
                return f"{x:.5g}"
            return f"{x:.5g} ({x * _C0 / self.ell * _HBAR_EV:.4g} eV)"
        return f"{one(a)} .. {one(b)} c/ell"

    def __str__(self) -> str:
        return self.table()


def _nonlocal_model(material: Material, beta_nl: float | None) -> Material | None:
    """The lossless spatially dispersive model: the material with ``beta_nl`` given to its
    Lorentz poles, or the material itself if it has nonlocal poles; None if neither applies."""
    nonloc = None
    if beta_nl is not None:
        nonloc = lossless(with_nonlocal(material, beta_nl))
    elif material.is_nonlocal:
        nonloc = lossless(material)
    return nonloc if nonloc is not None and nonloc.is_nonlocal else None


def threshold_report(material: Material, omega0: float | None = None, speed: float | None = None,
                     geometry: Geometry | None = None, scheme: Scheme | None = None,
                     period: float | None = None, beta_nl: float | None = None,
                     ell: float | None = None, notes=()) -> ThresholdReport:
    """Cherenkov and anomalous-Doppler thresholds for every cutoff that applies.

    Rows: the local continuum without cutoff; with ``scheme``, the grid's own
    cutoff (discrete dispersion, k <= pi/dx) and, with ``period``, the periodic
    cell's k_m set; with ``beta_nl`` (or a material that already has nonlocal
    poles) the physical cutoff of the nonlocal model, in the continuum and on
    the grid (and its periodic set).

    Parameters
    ----------
    material : Material
    omega0 : float, optional
        Oscillator rest frequency (c/ell), > 0; without it only Cherenkov.
    speed : float, optional
        A speed (fraction of c) for which the Cherenkov band is listed (2D only).
    geometry : Geometry
        Default: bulk 1D without a charge band (1D) -- pass ``Geometry.bulk(2)``
        or ``Geometry.gap(h)`` for 2D.
    scheme : Scheme, optional
    period : float, optional
        Periodic cell length (normalized), with ``scheme``.
    beta_nl : float, optional
        Add the nonlocal (physical) cutoff with this speed, [0, 1).
    ell : float, optional
        Reference length in metres, for the SI columns.
    notes : sequence of str
        Extra notes printed under the table (e.g. from :func:`resolve_inputs`).
    """
    geometry = geometry or Geometry()
    if not isinstance(material, Material):
        raise ParameterError(f"material = {material!r} is not allowed: expected an fdtd Material")
    if omega0 is not None:
        omega0 = _checks.positive("source rest frequency omega0", omega0)
    if speed is not None:
        speed = _checks.in_range("source speed v (fraction of c)", speed, 0.0, 1.0, lo_open=True,
                                 hi_open=True)
    if ell is not None:
        ell = _checks.positive("reference length ell (metres)", ell)
    if period is not None and scheme is None:
        raise ParameterError("period (periodic cell length) needs a scheme (grid cell and time step)")
    base = lossless(local_version(material))
    models = [("local", base, Cutoff())]
    if scheme is not None:
        models.append(("local", base, Cutoff(scheme=scheme)))
        if period is not None:
            models.append(("local", base, Cutoff(scheme=scheme, period=period)))
        models.append(("local", base, Cutoff.resolved(scheme.dx, scheme.dt)))
    nonloc = _nonlocal_model(material, beta_nl)
    if nonloc is None and beta_nl is not None:
        notes = list(notes) + [f"beta_nl = {beta_nl:g} ignored: the material has no Lorentz pole "
                               "to make spatially dispersive"]
    if nonloc is not None:
        bn = max(p.beta_nl for p in nonloc.poles if isinstance(p, NonlocalLorentzPole))
        models.append((f"nonlocal beta_nl={bn:g}", nonloc, Cutoff()))
        if scheme is not None:
            models.append((f"nonlocal beta_nl={bn:g}", nonloc, Cutoff(scheme=scheme)))
            if period is not None:
                models.append((f"nonlocal beta_nl={bn:g}", nonloc,
                               Cutoff(scheme=scheme, period=period)))
            models.append((f"nonlocal beta_nl={bn:g}", nonloc, Cutoff.resolved(scheme.dx, scheme.dt)))
    rows = []
    for label, mat, cut in models:
        th = thresholds(mat, omega0, cut, geometry)
        ch, an = th["cherenkov"], th.get("anomalous")
        band = None
        if speed is not None and geometry.dims == 2 and cut.period is None:
            band = cherenkov_band(mat, speed, cut, geometry)
        rows.append(ThresholdRow(f"{label}, {cut.label()}", cut, mat, ch, an, band))
    if speed is not None and geometry.dims == 1:
        notes = list(notes) + ["no Cherenkov band listed: in 1D a charge moving along x has no "
                               "transverse current and does not radiate (use a 2D geometry)"]
    notes = list(notes) + [
        "loss is ignored for the mode positions (lossless branches); with loss the switch-on "
        "is a steep rise over a speed interval of order gamma/k, not a step",
        "'cutoff' / 'k -> inf': the threshold falls with the largest wavenumber allowed "
        "(a lossless local Lorentz medium has a mode of any small phase velocity below its "
        "resonance), so the number depends on the cutoff you believe in"]
    if scheme is not None:
        notes = notes + [
            "'resolved only': wavenumbers with at least 12 cells per wavelength (k dx <= pi/6). A grid "
            "threshold below it comes from waves near pi/dx, where the Yee grid slows every wave (by "
            "2/pi at pi/dx): a property of the grid. With a nonlocal pole both grid rows converge as "
            "dx shrinks (the resolved one to beta_nl, the full one to about 2 beta_nl/pi); the local "
            "ones fall in proportion to dx without limit"]
    if geometry.kind == "gap":
        notes.append(f"gap coupling: only wavenumbers with exp(-2 kappa h) >= {geometry.coupling:g}, "
                     "kappa = sqrt(k_x^2 - omega^2), count (k_gap = ln(1/f)/(2h) = "
                     f"{geometry.k_gap:.4g} 1/ell): a criterion, not a law; the coupled power falls "
                     "smoothly as exp(-2 kappa h)")
        notes.append("surface polariton: local model k_x = omega sqrt(eps/(eps+1)) where eps < -1 "
                     "(on the grid an analogue with eps_d and K_x, not the exact discrete interface)")
    if scheme is not None:
        notes.append("grid rows use the Yee + ADE dispersion (2/dt)^2 sin^2(omega dt/2) eps_d = K^2 "
                     "along the motion; the source's shape factor and grid-crossing aliases are not "
                     "included")
    return ThresholdReport(material, geometry, omega0, speed, rows, ell, notes)


# ----------------------------------------------------------------------------- plot
#: Okabe-Ito colour-blind-safe palette
_COLORS = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000")


def plot_threshold_vs_cutoff(material: Material, path, omega0: float | None = None,
                             beta_nl: float | None = None, geometry: Geometry | None = None,
                             scheme: Scheme | None = None, k_range: tuple | None = None,
                             ell: float | None = None, formats=("png", "pdf")) -> list[str]:
    """Figure: v_min against the cutoff wavenumber k_max, local and nonlocal model.

    Bulk thresholds (the cutoff dependence): solid the local model, dashed the
    nonlocal one (``beta_nl``, or the material's own nonlocal poles); blue
    Cherenkov (charge), vermillion anomalous Doppler (with ``omega0``).  Dotted
    horizontal lines: the asymptotes beta_nl and 1/sqrt(eps_inf).  With
    ``scheme`` the grid's discrete-dispersion curves (green) up to pi/dx
    (vertical line); for a gap geometry a vertical line marks k_gap, beyond
    which the gap criterion (not the cutoff) sets the threshold.  Writes
    ``path`` with each suffix of ``formats`` and returns the file names.
    """
    import matplotlib

    matplotlib.use("Agg")
    from pathlib import Path

    import matplotlib.pyplot as plt

    geometry = geometry or Geometry()
    bulk = Geometry.bulk(geometry.dims)
    base = lossless(local_version(material))
    nonloc = _nonlocal_model(material, beta_nl)
    P = _poles(base)
    scale = max([math.sqrt(a) for a in P.a0 if a > 0] + [float(omega0 or 0.0), 1e-3])
    lo, hi = k_range if k_range is not None else (0.3 * scale, 1e3 * scale)
    if scheme is not None and k_range is None:
        hi = max(hi, 3 * scheme.k_nyquist)
    kmax = np.geomspace(lo, hi, 300)
    fig, ax = plt.subplots(figsize=(6.4, 4.6))
    fig.subplots_adjust(left=0.12, right=0.97, bottom=0.12, top=0.84 if ell else 0.91)
    w0s = {"cherenkov": 0.0}
    names = {"cherenkov": (_COLORS[0], "Cherenkov (charge)"),
             "anomalous": (_COLORS[1], "anomalous Doppler")}
    if omega0 is not None:
        w0s["anomalous"] = _checks.positive("source rest frequency omega0", omega0)
    loc = _threshold_curves(base, kmax, w0s, bulk, None, False)
    nlc = _threshold_curves(nonloc, kmax, w0s, bulk, None, False) if nonloc is not None else None
    kg = kmax[kmax <= scheme.k_nyquist] if scheme is not None else np.zeros(0)
    grc = _threshold_curves(base, kg, w0s, bulk, scheme, False) if kg.size else None
    for proc in w0s:
        col, name = names[proc]
        ax.plot(kmax, loc[proc], color=col, lw=1.8, label=f"{name}, local")
        if nlc is not None:
            ax.plot(kmax, nlc[proc], color=col, lw=1.8, ls="--", label=f"{name}, nonlocal")
        if grc is not None:
            ax.plot(kg, grc[proc], color=_COLORS[2], lw=2.4, ls=":",
                    label=f"{name}, grid dx = {scheme.dx:.3g} (discrete)")
    x_txt = kmax[-1]
    if nonloc is not None:
        for p in nonloc.poles:
            if isinstance(p, NonlocalLorentzPole):
                ax.axhline(p.beta_nl, color=_COLORS[6], lw=0.8, ls=":")
                ax.annotate(r"$\beta_{nl}$", (x_txt, p.beta_nl), xytext=(-14, 3),
                            textcoords="offset points", fontsize=8)
                break
    ax.axhline(1 / math.sqrt(base.eps_inf), color=_COLORS[6], lw=0.8, ls=(0, (1, 3)))
    ax.annotate(r"$1/\sqrt{\varepsilon_\infty}$", (x_txt, 1 / math.sqrt(base.eps_inf)),
                xytext=(-34, 3), textcoords="offset points", fontsize=8)
    if scheme is not None:
        ax.axvline(scheme.k_nyquist, color=_COLORS[2], lw=0.8, ls=":")
        ax.annotate(r"$\pi/\Delta x$", (scheme.k_nyquist, 1.0), xytext=(3, -12),
                    textcoords="offset points", fontsize=8, color=_COLORS[2])
    if geometry.kind == "gap":
        ax.axvline(geometry.k_gap, color=_COLORS[3], lw=1.0, ls="-.")
        ax.annotate(f"gap criterion $k_{{gap}}$ (f = {geometry.coupling:g})", (geometry.k_gap, 1.0),
                    xytext=(3, -24), textcoords="offset points", fontsize=8, color=_COLORS[3])
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel(r"cutoff wavenumber $k_{max}$ [1/$\ell$]"
                  + (f"  ($\\ell$ = {ell:.3g} m)" if ell else ""))
    ax.set_ylabel(r"threshold speed $v_{min}$ [c]")
    ax.set_title(f"{material.name}: bulk threshold speed against the cutoff"
                 + (f" ($\\omega_0$ = {omega0:.3g} c/$\\ell$)" if omega0 else ""), fontsize=9)
    ax.grid(True, which="major", alpha=0.3)
    ax.legend(fontsize=7, loc="lower left", framealpha=0.9)
    if ell:
        sec = ax.secondary_xaxis("top", functions=(lambda k: k / ell * 1e-6, lambda q: q * ell * 1e6))
        sec.set_xlabel(r"$k_{max}$ [1/$\mu$m]")
    out = []
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    for fmt in formats:
        q = p.with_suffix("." + fmt)
        fig.savefig(q, dpi=130)
        out.append(str(q))
    plt.close(fig)
    return out


# ----------------------------------------------------------------------------- inputs
#: Materials known by name without a scenario (normalized with the reference length).
BUILTIN_MATERIALS = ("SiC",)


def _option_value(value, kind: str, key: str, where: str, natural=None) -> float:
    """SI value of an option: a string with units (scenario rules) or a plain number in SI."""
    from fdtd.scenario import quantities as Q

    if isinstance(value, str):
        try:
            value = float(value)
        except ValueError:
            pass
    return Q.parse(value, kind, key, where, natural)


def resolve_inputs(scenario=None, *, material: str | None = None, eps=None, frequency=None,
                   speed=None, height=None, cell=None, courant=None, length=None,
                   dims: int | None = None, beta_nl=None, coupling=None,
                   where: str = "command line") -> dict:
    """Resolve a scenario and/or option values into the arguments of :func:`threshold_report`.

    Values are given as in scenario files (``docs/scenarios.md``): strings with
    units (``"930 1/cm"``, ``"500 nm"``, ``"0.3 c"``) or plain numbers in SI
    (rad/s, metres; speeds as fractions of c).  Options override the scenario.

    Parameters
    ----------
    scenario : path or :class:`fdtd.scenario.Scenario`, optional
        Material (``geometry.material``; slot: the lower one; no geometry: the
        first region's or the background), source frequency, speed and height
        above the surface, grid cell, Courant fraction and cell length.
    material : str
        A material of the scenario or a built-in name (:data:`BUILTIN_MATERIALS`).
    eps : float
        A constant permittivity instead (> 0).
    frequency : rest-frame angular frequency of an oscillator (> 0).
    speed : speed for the Cherenkov band, 0 < v < 1.
    height : distance of the path above the surface (> 0): gap geometry.
    cell : grid cell dx (> 0): adds the grid's own cutoff; ``courant`` (0, 1]
        its fraction of the stability limit (default 0.95); ``length`` the
        periodic cell length (adds the k_m set).
    dims : 1 or 2 for a bulk medium (default 2, or 1 for a "1d" scenario).
    beta_nl : nonlocal speed in [0, 1): adds the physical cutoff.
    coupling : gap criterion fraction f in (0, 1) (default 0.01).

    Returns
    -------
    dict with ``material`` (Material), ``omega0``, ``speed``, ``geometry``,
    ``scheme``, ``period``, ``beta_nl``, ``ell`` (metres) and ``notes`` (list of str).

    Raises
    ------
    fdtd.quantities.ScenarioError / ParameterError
        Naming the option or key, the value and what is allowed.
    """
    from fdtd.scenario.quantities import ScenarioError

    notes: list[str] = []
    res = None
    values = None
    if scenario is not None:
        from fdtd.scenario.schema import Scenario

        sc_obj = scenario if isinstance(scenario, Scenario) else Scenario.load(scenario)
        res = sc_obj.resolve()
        values = sc_obj.values
    natural = None if values is None else sc_obj.natural

    def opt(value, kind, key):
        return _option_value(value, kind, key, where, natural)

    # --- SI values from the options
    w0_si = None
    if frequency is not None:
        w0_si = opt(frequency, "angular_frequency", "--frequency")
        if not w0_si > 0:
            raise ScenarioError(f"{where}: --frequency = {frequency!r}: expected a rest-frame angular "
                                "frequency > 0, e.g. \"2.1 eV\", \"930 1/cm\" or a number in rad/s")
    elif values is not None and values["source"]["kind"] == "dipole":
        w0_si = values["source"]["frequency"]
    ell = res.ell if res is not None else (_C0 / w0_si if w0_si else 1e-6)
    if speed is not None:
        v = opt(speed, "speed", "--speed")
        if not 0.0 < v < 1.0:
            raise ScenarioError(f"{where}: --speed = {speed!r}: expected a speed 0 < v < 1 c "
                                "(e.g. \"0.3 c\" or 0.3)")
    else:
        v = values["source"]["speed"] if values is not None else None
        if v is not None and not 0.0 < v < 1.0:
            v = None
    # --- material
    mats = dict(res.materials) if res is not None else {}
    if eps is not None and material is not None:
        raise ScenarioError(f"{where}: give either --material or --eps, not both")
    h_scn = None
    if eps is not None:
        e = opt(eps, "dimensionless", "--eps")
        if not e > 0:
            raise ScenarioError(f"{where}: --eps = {eps!r}: expected a constant permittivity > 0")
        mat = Material(e, (), f"eps = {e:g}")
    elif material is not None:
        if material in mats:
            mat = mats[material]
        elif material in BUILTIN_MATERIALS:
            from fdtd.media.library import silicon_carbide

            mat = silicon_carbide(ell=ell)
        else:
            allowed = sorted(set(mats) - {"vacuum"} - set(BUILTIN_MATERIALS)) + list(BUILTIN_MATERIALS)
            raise ScenarioError(f"{where}: --material = {material!r}: expected one of {allowed} "
                                "(the scenario's materials or a built-in), or give --eps")
    elif values is not None:
        g, s = values["geometry"], values["source"]
        y_src = res.L(s["height"])
        if g["kind"] in ("half-space", "slab"):
            mat = mats[g["material"]]
            h_scn = y_src - res.L(g["surface"])
        elif g["kind"] == "slot":
            mat = mats[g["lower"]]
            if s.get("gap_fraction") is not None:
                y_src = res.L(g["surface"]) + s["gap_fraction"] * res.L(g["gap"])
            h_scn = y_src - res.L(g["surface"])
            notes.append(f"slot: thresholds of the lower material {g['lower']!r}; use --material "
                         f"{g['upper']!r} --height ... for the upper one")
        elif values["regions"]:
            name = values["regions"][0]["material"]
            mat = mats[name]
            notes.append(f"regions: thresholds for a source moving through {name!r} (bulk); use "
                         "--material and --height for other cases")
        else:
            mat = mats[g["background"]]
        if h_scn is not None and h_scn <= 0:
            notes.append("the source moves inside the material: bulk thresholds")
            h_scn = None
    else:
        raise ScenarioError(f"{where}: no material: give a scenario file, --material NAME "
                            f"(built-in: {list(BUILTIN_MATERIALS)}) or --eps VALUE")
    # --- geometry
    if height is not None:
        h_si = opt(height, "length", "--height")
        if not h_si > 0:
            raise ScenarioError(f"{where}: --height = {height!r}: expected the distance of the path "
                                "above the surface, a length > 0 (e.g. \"500 nm\")")
        h = h_si / ell
    else:
        h = h_scn
    if coupling is not None:
        try:
            f_c = float(coupling)
        except (TypeError, ValueError):
            f_c = math.nan
        if not 0.0 < f_c < 1.0:
            raise ScenarioError(f"{where}: --coupling = {coupling!r}: expected a fraction 0 < f < 1 "
                                "(the gap criterion exp(-2 kappa h) >= f)")
    else:
        f_c = 0.01
    if dims is None:
        dims = 1 if (values is not None and values["grid"]["polarization"] == "1d") else 2
    elif dims not in (1, 2):
        raise ScenarioError(f"{where}: --dims = {dims!r}: expected 1 or 2")
    if h is not None:
        if dims == 1:
            raise ScenarioError(f"{where}: a height above a surface needs a 2D grid, but the "
                                "polarization / --dims is 1D")
        geometry = Geometry.gap(h, f_c)
    else:
        geometry = Geometry.bulk(dims)
    # --- grid
    scheme, period = None, None
    if cell is not None:
        dx = opt(cell, "length", "--cell") / ell
        if not dx > 0:
            raise ScenarioError(f"{where}: --cell = {cell!r}: expected a grid cell size > 0 "
                                "(e.g. \"20 nm\")")
    elif values is not None and values["grid"].get("cell") is not None:
        dx = res.L(values["grid"]["cell"])
    else:
        dx = None
        if values is not None:
            notes.append("the scenario gives grid.cells_per_wavelength, not grid.cell: no grid row "
                         "(pass --cell)")
    if courant is not None:
        try:
            cf = float(courant)
        except (TypeError, ValueError):
            cf = math.nan
        if not 0.0 < cf <= 1.0:
            raise ScenarioError(f"{where}: --courant = {courant!r}: expected a fraction of the "
                                "stability limit in 0 < value <= 1")
    else:
        cf = values["grid"]["courant"] if values is not None else 0.95
    if dx is not None:
        from fdtd.space.stability import max_stable_dt

        from fdtd.media.materials import VACUUM

        media = list(mats.values()) + [mat, VACUUM]
        dt = cf * max_stable_dt((dx,) * dims, [local_version(m) for m in media])
        scheme = Scheme(dx, dt)
        notes.append(f"grid: dx = {dx:.4g} ell, dt = {cf:g} x the stability limit = {dt:.4g} ell/c "
                     "(a co-moving run's commensurate dt is at most a few tenths of a percent smaller)")
        L = None
        if length is not None:
            L = opt(length, "length", "--length") / ell
            if not L > 0:
                raise ScenarioError(f"{where}: --length = {length!r}: expected a periodic cell "
                                    "length > 0")
        elif values is not None and values["run"]["kind"] == "comoving":
            L = res.L(values["grid"]["length"])
            notes.append("periodic cell: grid.length as given (the run may adjust it slightly to keep "
                         "harmonics off the vacuum light-line crossing)")
        if L is not None:
            period = max(int(round(L / dx)), 1) * dx
    elif length is not None:
        raise ScenarioError(f"{where}: --length needs --cell (the periodic k_m set is a grid property)")
    if beta_nl is not None:
        try:
            b = float(beta_nl)
        except (TypeError, ValueError):
            b = math.nan
        if not 0.0 <= b < 1.0:
            raise ScenarioError(f"{where}: --beta-nl = {beta_nl!r}: expected a nonlocal speed "
                                "0 <= beta_nl < 1 (fraction of c)")
        beta_nl = b
    omega0 = w0_si * ell / _C0 if w0_si else None
    return {"material": mat, "omega0": omega0, "speed": v, "geometry": geometry, "scheme": scheme,
            "period": period, "beta_nl": beta_nl, "ell": ell, "notes": notes}
