"""Layered media along y: the stack, and its admittances seen from a sheet at height h.

A :class:`Stack` is a bottom half-space, any number of layers and a top
half-space, each a (possibly dispersive, lossy) :class:`~fdtd.media.materials.Material`.
For a field component ``exp(i (k_x x - omega t))`` the media above and below a
height h act on a sheet there through the admittances ``Y = H_t / E_t`` at
y = h+ and h- (:func:`admittances`; ``(E_t, H_t) = (E_x, H_z)`` for TE_z,
``(E_z, H_x)`` for TM_z).  They are built from the outgoing half-spaces by a
reflection recursion (:func:`transfer_down`, :func:`transfer_up`) in which every
propagation factor is ``exp(2 i k_y d)`` with ``Im k_y >= 0``, so evanescent
waves never overflow.  Normalized units (c = eps0 = mu0 = 1).  The sources on
top, and the powers, are :mod:`fdtd.reference.planar`; the derivation is in
docs/theory/planar-reference.md.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from fdtd import _checks
from fdtd.errors import GeometryError, ParameterError
from fdtd.media.materials import VACUUM, Material


@dataclass(frozen=True)
class Stack:
    """Media stratified along y.

    Parameters
    ----------
    bottom : Material
        Half-space y < y0.
    layers : sequence of (Material, thickness)
        From bottom to top, starting at y0.
    top : Material
        Half-space above the last layer.
    y0 : float
        Position of the lowest interface.
    """

    bottom: Material = VACUUM
    layers: tuple = ()
    top: Material = VACUUM
    y0: float = 0.0

    def __post_init__(self) -> None:
        lay = []
        for k, item in enumerate(self.layers):
            mat, t = item
            if not isinstance(mat, Material):
                raise ParameterError(f"layer {k} material {mat!r}: expected a Material")
            lay.append((mat, _checks.positive(f"layer {k} thickness", t)))
        object.__setattr__(self, "layers", tuple(lay))
        for name in ("bottom", "top"):
            if not isinstance(getattr(self, name), Material):
                raise ParameterError(f"stack {name}: expected a Material")

    @property
    def interfaces(self) -> np.ndarray:
        y = [self.y0]
        for _m, t in self.layers:
            y.append(y[-1] + t)
        return np.array(y)

    @property
    def media(self) -> list[Material]:
        return [self.bottom] + [m for m, _t in self.layers] + [self.top]

    def region_of(self, y: float) -> int:
        """Index into :attr:`media` of the region holding y (an interface is refused)."""
        yi = self.interfaces
        if np.any(np.isclose(y, yi, rtol=0, atol=1e-12)):
            raise GeometryError(f"source height y = {y!r} lies on an interface {yi.tolist()}")
        return int(np.searchsorted(yi, y))

    @classmethod
    def half_space(cls, material: Material, surface: float = 0.0) -> Stack:
        """``material`` below y = surface, vacuum above."""
        return cls(material, (), VACUUM, surface)

    @classmethod
    def slab(cls, material: Material, thickness: float, top_surface: float = 0.0) -> Stack:
        """A slab of ``material`` with its top at ``top_surface``, vacuum on both sides."""
        return cls(VACUUM, ((material, thickness),), VACUUM, top_surface - thickness)

    @classmethod
    def slot(cls, lower: Material, upper: Material, gap: float, lower_surface: float = 0.0,
             lower_thickness: float | None = None, upper_thickness: float | None = None) -> Stack:
        """A vacuum gap of width ``gap`` between two media (half-spaces unless thicknesses given)."""
        layers = []
        bottom = lower
        if lower_thickness is not None:
            bottom = VACUUM
            layers.append((lower, lower_thickness))
        layers.append((VACUUM, gap))
        top = upper
        if upper_thickness is not None:
            layers.append((upper, upper_thickness))
            top = VACUUM
        y0 = lower_surface - (lower_thickness or 0.0)
        return cls(bottom, tuple(layers), top, y0)


def ky_branch(eps, omega, k):
    """k_y = sqrt(eps omega^2 - k^2) on the branch Im >= 0 (and Re >= 0 when real)."""
    ky = np.sqrt(eps * omega * omega - k * k + 0j)
    ky = np.where(ky.imag < 0, -ky, ky)
    # on a light line (k_y -> 0, which rounding can hit exactly near a breakpoint): keep
    # |k_y| above 1e-12 of the wavenumber scale; such nodes carry negligible weight
    floor = 1e-12 * (np.abs(k) + np.abs(omega) + 1e-300)
    return np.where(np.abs(ky) < floor, floor * (1 + 1j) / np.sqrt(2), ky)


def permittivity(material: Material, omega) -> np.ndarray:
    """Complex eps of ``material`` at the angular frequencies ``omega`` (any shape); inf on a
    lossless resonance, without a warning."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.asarray(material.permittivity(np.asarray(omega, dtype=float)), dtype=complex)


def _y_up_wave(pol, eps, omega, ky):
    """Admittance H_t/E_t of an upward (+k_y) wave: TE -omega eps/k_y, TM k_y/omega."""
    return -omega * eps / ky if pol == "te" else ky / omega


def admittances(stack: Stack, pol: str, k, omega, h: float):
    """Admittances seen from a sheet at height ``h`` (not on an interface).

    ``pol`` is "te" or "tm"; ``k`` (1/ell) and ``omega`` (c/ell, > 0) broadcast to
    a common shape S.  Returns ``(Y_up at y = h+, Y_down at y = h-, eps at the
    source)``, each complex of shape S."""
    k = np.asarray(k, dtype=float)
    omega = np.asarray(omega, dtype=float)
    yi = stack.interfaces
    media = stack.media
    src = stack.region_of(h)
    eps = [permittivity(m, omega) for m in media]
    kys = [ky_branch(e, omega, k) for e in eps]
    Y0 = [_y_up_wave(pol, e, omega, q) for e, q in zip(eps, kys)]
    # --- from the top half-space down to the interface above the source
    Y = Y0[-1]                               # only an upward wave in the top half-space
    for r in range(len(media) - 2, src, -1):  # layers strictly above the source region
        d = yi[r] - yi[r - 1]
        Y = transfer_down(Y, Y0[r], kys[r], d)
    if src < len(media) - 1:
        Y_up = transfer_down(Y, Y0[src], kys[src], yi[src] - h)
    else:
        Y_up = Y0[src]
    # --- from the bottom half-space up to the interface below the source
    Y = -Y0[0]                               # only a downward wave in the bottom half-space
    for r in range(1, src):
        d = yi[r] - yi[r - 1]
        Y = transfer_up(Y, Y0[r], kys[r], d)
    if src > 0:
        Y_dn = transfer_up(Y, Y0[src], kys[src], h - yi[src - 1])
    else:
        Y_dn = -Y0[src]
    return Y_up, Y_dn, eps[src]


def transfer_down(Y_top, Yc, ky, d):
    """Admittance at distance d below a point where it is Y_top, inside a medium.

    With Y = Yc (1 - r)/(1 + r), r(y - d) = r(y) exp(2 i k_y d): |exp| <= 1, stable.
    """
    r = (Yc - Y_top) / (Yc + Y_top)
    r = r * np.exp(2j * ky * d)
    return Yc * (1 - r) / (1 + r)


def transfer_up(Y_bot, Yc, ky, d):
    """Admittance at distance d above a point where it is Y_bot (downward wave primary)."""
    Yd = -Yc
    r = (Yd - Y_bot) / (Yd + Y_bot)
    r = r * np.exp(2j * ky * d)
    return Yd * (1 - r) / (1 + r)


def lossless_material(m: Material) -> Material:
    """The material with every pole's damping set to zero (mode positions)."""
    poles = tuple(replace(p, gamma=0.0) if hasattr(p, "gamma") else p for p in m.poles)
    return Material(m.eps_inf, poles, m.name)


def lossless_stack(stack: Stack) -> Stack:
    """The stack with every medium lossless (:func:`lossless_material`)."""
    return Stack(lossless_material(stack.bottom),
                 tuple((lossless_material(m), t) for m, t in stack.layers),
                 lossless_material(stack.top), stack.y0)


def _bisect_sign_changes(g, a, b, n: int = 50) -> np.ndarray:
    """Bisection of every bracket [a_i, b_i] at once (``g`` maps arrays to arrays).

    A light-line crossing is an inverse-square-root point of a sheet's power
    density, and a crossing misplaced by d moves an integral by ~sqrt(d): the
    default 50 halvings take it to round-off."""
    a, b = np.array(a, dtype=float), np.array(b, dtype=float)
    if a.size == 0:
        return a
    ga = np.sign(g(a))
    for _ in range(n):
        c = 0.5 * (a + b)
        same = np.sign(g(c)) == ga
        a = np.where(same, c, a)
        b = np.where(same, b, c)
    return 0.5 * (a + b)


def line_breakpoints(stack: Stack, omega_of, pols, h: float, lo: float, hi: float,
                     n_scan: int = 6001) -> np.ndarray:
    """Breakpoints of a sheet's power density along a line omega = omega_of(k), k in [lo, hi].

    The line is a Doppler branch of a moving source (2D: k = k_x; 3D: k the
    in-plane wavenumber along one direction of the (k_x, k_z) plane).  Returns
    the sorted array of: the ends, every light-line crossing eps(omega) omega^2
    = k^2 of every medium, and the guided-mode poles of the lossless stack seen
    from height ``h`` in each polarization of ``pols`` ("te", "tm"), each
    flanked by points at 1e-7, 1e-5 and 1e-3 of the span so that the adaptive
    rule starts with panels that resolve the narrow peaks of a low-loss
    stack.  ``omega_of`` maps an array of k to lab frequencies; points with
    omega <= 0 are not searched.  The one-line case of :func:`lines_breakpoints`."""
    return lines_breakpoints(stack, lambda k, g: omega_of(k), pols, h, [lo], [hi], n_scan)[0]


def lines_breakpoints(stack: Stack, omega_of, pols, h: float, lo, hi,
                      n_scan: int = 6001) -> list[np.ndarray]:
    """:func:`line_breakpoints` of many lines at once.

    Line g runs over k in [lo[g], hi[g]] with omega = omega_of(k, g) (``g`` an
    integer array of the points' line indices); one scan of n_scan points per
    line, all lines in one vectorised pass.  Returns one sorted array per line."""
    lo = np.asarray(lo, dtype=float)
    hi = np.asarray(hi, dtype=float)
    G = lo.size
    t = np.linspace(0.0, 1.0, n_scan)[1:-1]
    kk = lo[:, None] + (hi - lo)[:, None] * t[None, :]          # (G, n)
    gg = np.broadcast_to(np.arange(G)[:, None], kk.shape)
    w = omega_of(kk.ravel(), gg.ravel()).reshape(kk.shape)
    valid = w > 0
    pts_k: list[np.ndarray] = [lo, hi]
    pts_g: list[np.ndarray] = [np.arange(G), np.arange(G)]

    def brackets(val):
        """Indices (line, i) of sign changes between scan points i and i+1 of valid points."""
        ch = (np.sign(val[:, 1:]) * np.sign(val[:, :-1]) < 0) & valid[:, 1:] & valid[:, :-1] \
            & np.isfinite(val[:, 1:]) & np.isfinite(val[:, :-1])
        return np.nonzero(ch)

    wv = np.where(valid, w, 1.0)
    for m in stack.media:
        def g(k, line, m=m):
            ww = omega_of(k, line)
            return np.real(permittivity(m, ww)) * ww * ww - k ** 2
        val = np.real(permittivity(m, wv)) * wv * wv - kk * kk
        r, i = brackets(val)
        pts_k.append(_bisect_sign_changes(lambda k, r=r, g=g: g(k, r), kk[r, i], kk[r, i + 1]))
        pts_g.append(r)
    # guided-mode poles of the lossless stack: zeros of D = Y_up - Y_down (purely
    # imaginary where all waves at the source are evanescent)
    lossless = lossless_stack(stack)
    for pol in pols:
        def D(k, line, pol=pol):
            k = np.atleast_1d(np.asarray(k, dtype=float))
            # the search steps onto poles of the admittances themselves: only signs matter
            with np.errstate(divide="ignore", invalid="ignore"):
                Yu, Yd, _ = admittances(lossless, pol, k, omega_of(k, line), h)
            return Yu - Yd

        Dv = D(kk.ravel(), gg.ravel()).reshape(kk.shape)
        reactive = np.abs(Dv.real) < 1e-9 * np.abs(Dv)
        Di = np.where(reactive, Dv.imag, np.nan)
        r, i = brackets(Di)
        # a pole of the lossless stack only marks where the lossy density peaks (no
        # singularity): 30 halvings, ~1e-13 of the span, are plenty
        roots = _bisect_sign_changes(lambda k, r=r, D=D: D(k, r).imag, kk[r, i], kk[r, i + 1], n=30)
        if roots.size:
            # true zeros (|D| small), not jumps through infinity
            true = np.abs(D(roots, r)) < 1e-6 * np.maximum(np.abs(Di[r, i]), np.abs(Di[r, i + 1]))
            pts_k.append(roots[true])
            pts_g.append(r[true])
    allk, allg = np.concatenate(pts_k), np.concatenate(pts_g)
    out = []
    for line in range(G):
        pts = np.unique(allk[allg == line])
        span = hi[line] - lo[line]
        inner = pts[1:-1]
        extra = [inner + s * dd * span for dd in (1e-7, 1e-5, 1e-3) for s in (-1.0, 1.0)]
        out.append(np.unique(np.clip(np.concatenate([pts] + extra), lo[line], hi[line])))
    return out
