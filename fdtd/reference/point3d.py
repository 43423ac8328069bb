r"""Exact planar reference in 3D: a point charge or point dipole moving past layered media.

Geometry as in :mod:`fdtd.reference.planar` (media stratified along y; the
source moves at v along +x at height y = h), but the source is a point: its
field is a superposition of plane-wave sheets exp(i (k_x x + k_z z - omega t))
with, on Doppler branch s, omega = k_x v + s Omega (Omega = omega0/gamma; a
charge: omega = k_x v).  Normalized units (c = eps0 = mu0 = 1); powers in
normalized energy per normalized time (a point source: no "per length").

Method (derivation in docs/theory/point-reference.md).  For one (k_x, k_z) the
layered stack is a 2D problem in the plane of incidence spanned by
u = (k_x, 0, k_z)/q and y (q = |(k_x, k_z)|): the admittances of
:func:`fdtd.reference.layered.admittances` at in-plane wavenumber q serve both
polarizations, "te" (E_u, E_y, H_w: E in the plane of incidence, the optics p
wave) and "tm" (E_w, H_u, H_y: the s wave), with w = u x y.  The source's
sheet currents are rotated into (u, y, w):

* a dipole of lab moment p (rest moment p0; the component along the motion is
  p0_x/gamma, the transverse ones are unchanged) carries J = -i omega p and the
  magnetization M = p x v = v (0, p_z, -p_y) (the lab moments of a moving
  electric dipole);
  [E_u] = q K_y/(omega eps) - i omega M_w, [H_w] = K_u (te);
  [E_w] = i omega M_u, [H_u] = -(K_w + i q M_y) (tm);
* a charge e carries K = e v x (both polarizations, [H_w] = K_u, [H_u] = -K_w).

The power is

.. math::  P = \sum_s \int_0^{\pi} d\phi \int_0^\infty \frac{q\,dq}{(2\pi)^2}
             \big[ P_{sheet}(q, \phi) + P_{sheet}(q, -\phi) \big]_{\omega = q v \cos\phi + s\Omega}

(a charge: phi in [0, pi/2], omega = q v cos(phi), and a factor 4 from pairing
(k, omega) with (-k, -omega)).  Along a ray of fixed phi the branch line is the
2D one with the speed v cos(phi), so the 2D breakpoint search
(:func:`fdtd.reference.layered.line_breakpoints`: light-line crossings,
lossless guided-mode poles of both polarizations) and the 2D adaptive
Gauss-Kronrod rule resolve it; the phi integral is adaptive on top, and the
inner rule's error is integrated with it, so the error estimate covers both.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.reference.layered import Stack, admittances, lines_breakpoints, permittivity
from fdtd.reference.planar import PlanarResult, sheet_fluxes
from fdtd.reference.quadrature import adaptive_integral, adaptive_integrals

__all__ = ["MovingPointSource", "PointReference", "point_sheet_power"]

_AXIS_VECTORS = {"x": (1.0, 0.0, 0.0), "y": (0.0, 1.0, 0.0), "z": (0.0, 0.0, 1.0)}


@dataclass(frozen=True)
class MovingPointSource:
    """A point source moving at ``speed`` along +x at height ``height``.

    kind "charge": a point charge ``strength`` (normalized).  kind "dipole": a
    linear dipole of rest-frame amplitude ``strength`` (p0, the classical moment
    p(tau) = p0 n cos(omega0 tau)) oscillating at the rest-frame frequency
    ``omega0``, along ``orientation``: "x", "y", "z" or a real 3-vector (normalized
    here; a complex, circular moment is not supported).
    """

    kind: str
    speed: float
    height: float
    strength: float = 1.0
    omega0: float = 0.0
    orientation: object = "y"

    def __post_init__(self) -> None:
        _checks.one_of("source kind", self.kind, ("charge", "dipole"))
        v = _checks.in_range("source speed", self.speed, 0.0, 1.0, hi_open=True)
        _checks.finite_number("source height", self.height)
        _checks.finite_number("source strength", self.strength)
        if self.kind == "charge" and v == 0.0:
            raise ParameterError("a charge at rest does not radiate: give speed > 0")
        if self.kind == "dipole":
            _checks.positive("source omega0", self.omega0)
        o = self.orientation
        if isinstance(o, str):
            _checks.one_of("dipole orientation", o, tuple(_AXIS_VECTORS))
            vec = np.array(_AXIS_VECTORS[o])
        else:
            try:
                vec = np.asarray(o, dtype=float).reshape(3)
            except (TypeError, ValueError):
                raise ParameterError(
                    f"dipole orientation = {o!r}: expected 'x', 'y', 'z' or a real 3-vector "
                    "(a complex, circular moment is not supported)") from None
            n = float(np.linalg.norm(vec))
            if not np.all(np.isfinite(vec)) or n == 0.0:
                raise ParameterError(f"dipole orientation = {o!r}: expected a finite, nonzero vector")
            vec = vec / n
        object.__setattr__(self, "_unit", vec)

    @property
    def unit_vector(self) -> np.ndarray:
        """Rest-frame direction of the moment (3,)."""
        return self._unit.copy()

    @property
    def axis(self) -> str | None:
        """"x", "y" or "z" when the moment lies along an axis, else None."""
        for name, e in _AXIS_VECTORS.items():
            if np.allclose(self._unit, e, rtol=0, atol=1e-15):
                return name
        return None

    @property
    def gamma(self) -> float:
        return 1.0 / math.sqrt(1.0 - self.speed**2)

    @property
    def internal_frequency(self) -> float:
        """Lab internal frequency Omega = omega0/gamma (0 for a charge)."""
        return 0.0 if self.kind == "charge" else self.omega0 / self.gamma

    @property
    def lab_moment(self) -> np.ndarray:
        """Lab moment vector (3,): the component along the motion divided by gamma."""
        p = self.strength * self._unit
        return np.array([p[0] / self.gamma, p[1], p[2]])


def _jumps(source: MovingPointSource, q, cos_phi, sin_phi, omega, eps_h):
    """((dE_te, dH_te), (dE_tm, dH_tm)) of the sheet at (q, phi, omega), each shape of q."""
    v = source.speed
    zero = np.zeros(np.shape(omega), dtype=complex)
    if source.kind == "charge":
        K = source.strength * v
        return (zero, zero + K * cos_phi), (zero, zero + K * sin_phi)
    px, py, pz = source.lab_moment
    dE_te = -1j * py * (q / eps_h - omega * v * cos_phi)
    dH_te = -1j * omega * (px * cos_phi + pz * sin_phi)
    dE_tm = -1j * omega * v * py * sin_phi
    dH_tm = 1j * omega * (pz * cos_phi - px * sin_phi) - 1j * q * v * pz
    return (dE_te + zero, dH_te + zero), (dE_tm + zero, dH_tm + zero)


def point_sheet_power(stack: Stack, source: MovingPointSource, kx, kz, omega, mirror: bool = False):
    """(P_sheet, flux_up, flux_down) per (k_x, k_z, omega) point, both polarizations.

    Arrays broadcast to one shape; omega > 0.  1/2 Re convention: the power of
    the source is the integral of P_sheet over dk_x dk_z/(2 pi)^2 along its
    Doppler branches (times 4 for a charge, see the module docstring).  At
    k_z = 0 this is the 2D line source's sheet power of the same moment
    (:func:`fdtd.reference.planar.sheet_power`).  ``mirror``: return the sum of
    the points (k_x, k_z) and (k_x, -k_z), which share the stack's admittances."""
    kx, kz, omega = np.broadcast_arrays(np.asarray(kx, dtype=float), np.asarray(kz, dtype=float),
                                        np.asarray(omega, dtype=float))
    q = np.hypot(kx, kz)
    safe = np.where(q > 0, q, 1.0)
    c = np.where(q > 0, kx / safe, 1.0)
    s = np.where(q > 0, kz / safe, 0.0)
    out = np.zeros((3,) + q.shape)
    Ys = {pol: admittances(stack, pol, q, omega, source.height) for pol in ("te", "tm")}
    for sign in ((1.0, -1.0) if mirror else (1.0,)):
        jumps = _jumps(source, q, c, sign * s, omega, Ys["te"][2])
        for pol, (dE, dH) in zip(("te", "tm"), jumps):
            Yu, Yd, _eps = Ys[pol]
            out += np.array(sheet_fluxes(pol, Yu, Yd, dE, dH))
    return out


class PointReference:
    """Exact powers and rates of a moving point source beside a planar stack.

    Parameters
    ----------
    stack : Stack
        Local media only (a spatially dispersive pole is refused).
    source : MovingPointSource
    k_max : float, optional
        Largest in-plane wavenumber (1/ell).  By default 18.5 over the distance
        to the nearest interface (the evanescent coupling exp(-2 q d) is 1e-16
        there), at least 40 Omega/(1 - v cos phi) along each ray.  A source in
        a uniform lossless medium (no nearby interface) needs it given.
    n_scan : int
        Scan points per ray of the breakpoint search.
    """

    def __init__(self, stack: Stack, source: MovingPointSource, k_max: float | None = None,
                 n_scan: int = 2001):
        if not isinstance(stack, Stack):
            raise ParameterError(f"stack = {stack!r}: expected a Stack (fdtd.reference.layered.Stack)")
        if not isinstance(source, MovingPointSource):
            raise ParameterError(f"source = {source!r}: expected MovingPointSource")
        for m in stack.media:
            if m.is_nonlocal:
                raise ParameterError(
                    f"material {m.name!r} has a spatially dispersive (nonlocal) pole: the layered "
                    "reference treats every layer as local; compare with the local limit "
                    "(pole.local())")
        self.stack = stack
        self.source = source
        self.src_region = stack.region_of(source.height)
        gaps = np.abs(stack.interfaces - source.height)
        self._d_min = float(gaps.min()) if gaps.size else math.inf
        self._k_max = None if k_max is None else _checks.positive("k_max", k_max)
        self.n_scan = int(_checks.in_range("n_scan", n_scan, 101, 10**6))

    # -- geometry of the (q, phi) plane ---------------------------------------
    def branches(self) -> list[int]:
        if self.source.kind == "charge":
            return [0]
        return [1] if self.source.speed == 0.0 else [1, -1]

    def _phi_breaks(self, branch: int) -> list[float]:
        if self.source.kind == "charge":
            return [0.0, 0.5 * math.pi]
        if self.source.speed == 0.0:
            return [0.0, math.pi]
        return [0.0, 0.5 * math.pi, math.pi]

    def _q_range(self, branch: int, cos_phi: float) -> tuple[float, float] | None:
        """[lo, hi] of q on the ray with omega > 0, or None when the ray carries nothing."""
        s = self.source
        Om = s.internal_frequency
        v_eff = s.speed * cos_phi
        if self._k_max is not None:
            kmax = self._k_max
        else:
            w_scale = Om if s.kind == "dipole" else 1.0
            kmax = max(18.5 / max(self._d_min, 1e-6), 40.0 * w_scale / max(1.0 - v_eff, 1e-3))
        if branch == 0:
            return (0.0, kmax) if v_eff > 0 else None
        if branch == 1:
            if v_eff >= 0:
                return 0.0, kmax
            return 0.0, min(kmax, Om / -v_eff)
        if v_eff <= 0:
            return None
        lo = Om / v_eff
        return (lo, kmax) if lo < kmax else None

    def densities(self, q, phi, branch: int):
        """(power, flux up, flux down) densities at in-plane wavenumber q and angle phi.

        The pair (phi, -phi) summed, so that P = sum_branches int_0^pi dphi
        int q dq/(2 pi)^2 density (phi in [0, pi/2] for a charge).  ``q`` (n,),
        ``phi`` scalar or (n,); shape (3, n); zero where omega <= 0."""
        q = np.asarray(q, dtype=float)
        phi = np.broadcast_to(np.asarray(phi, dtype=float), q.shape)
        s = self.source
        w = q * s.speed * np.cos(phi) + (branch if branch else 0) * s.internal_frequency
        out = np.zeros((3,) + q.shape)
        ok = w > 0
        if np.any(ok):
            kx = q[ok] * np.cos(phi[ok])
            kz = q[ok] * np.sin(phi[ok])
            vals = point_sheet_power(self.stack, s, kx, kz, w[ok], mirror=True)
            out[:, ok] = 4.0 * vals if s.kind == "charge" else vals
        return out

    def ray_integrals(self, branch: int, phis, rtol: float = 1e-7) -> np.ndarray:
        """Integrals over q on the rays at angles ``phis`` (n,), all rays in one pass.

        Returns (6, n): [power, up, down, drag, internal, inner error estimate]
        per unit angle (P = int_0^pi dphi row 0); drag is the k_x/omega-weighted
        power, internal the s Omega/omega-weighted power (see PlanarResult)."""
        s = self.source
        phis = np.atleast_1d(np.asarray(phis, dtype=float))
        out = np.zeros((6, phis.size))
        rng = [self._q_range(branch, math.cos(p)) for p in phis]
        idx = np.array([i for i, r in enumerate(rng) if r is not None], dtype=int)
        if idx.size == 0:
            return out
        lo = np.array([rng[i][0] for i in idx])
        hi = np.array([rng[i][1] for i in idx])
        phi = phis[idx]
        cos_phi = np.cos(phi)
        v_eff = s.speed * cos_phi
        Om = (branch if branch else 0) * s.internal_frequency

        def omega_of(q, g):
            return q * v_eff[g] + Om

        bps = lines_breakpoints(self.stack, omega_of, ("te", "tm"), s.height, lo, hi, self.n_scan)

        def f(q, g):
            w = omega_of(q, g)
            P, up, dn = self.densities(q, phi[g], branch)
            with np.errstate(divide="ignore", invalid="ignore"):
                wpos = np.where(w > 0, w, 1.0)
                kw = np.where(w > 0, q * cos_phi[g] / wpos, 0.0)
                iw = np.where(w > 0, Om / wpos, 0.0)
            return np.stack([P, up, dn, P * kw, P * iw]) * (q / (4.0 * np.pi * np.pi))

        vals, errs = adaptive_integrals(f, bps, rtol=rtol)
        out[:5, idx] = vals.T
        out[5, idx] = errs
        return out

    def branch_integrals(self, branch: int, rtol: float = 1e-6):
        """[power, up, down, drag, internal] of one branch and the error estimate of the power."""
        inner = min(rtol * 0.1, 1e-7)
        vals, err_outer = adaptive_integral(lambda p: self.ray_integrals(branch, p, inner),
                                            self._phi_breaks(branch), rtol=rtol)
        return vals[:5], float(err_outer + abs(vals[5]))

    def solve(self, rtol: float = 1e-6) -> PlanarResult:
        """Powers, drag force and internal power (normalized, per point source).

        Same fields as the 2D :class:`~fdtd.reference.planar.PlanarResult` (here
        not per unit length); ``error`` the quadrature error estimate (phi rule
        plus the integrated q-rule errors)."""
        s = self.source
        out, internal_b, err_b = {}, {}, {}
        drag = internal = up = down = err = 0.0
        for b in self.branches():
            vals, e = self.branch_integrals(b, rtol)
            out[b] = float(vals[0])
            internal_b[b] = float(vals[4])
            err_b[b] = e
            up += vals[1]
            down += vals[2]
            drag += vals[3]
            internal += vals[4]
            err += e
        normal = out.get(1, 0.0) + out.get(0, 0.0)
        anomalous = out.get(-1, 0.0)
        return PlanarResult(normal + anomalous, normal, anomalous, float(drag), float(internal),
                            s.speed * float(drag), float(up), float(down), float(err),
                            branch={"power": out, "internal_power": internal_b, "error": err_b})

    # -- spectra -------------------------------------------------------------
    def kx_density(self, kx, branch: int, rtol: float = 1e-8):
        """Density in k_x with the k_z integral done: P = int dk_x/(2 pi) kx_density(k_x).

        ``kx`` (n,) array (1/ell); returns (values (n,), error estimates (n,)).
        The lab frequency is omega = k_x v + s Omega, so the power per unit lab
        angular frequency is kx_density / (2 pi v) (a charge: both signs of k_z,
        factor 4 included; k_x > 0).  The k_z rule is split at the light cones
        of every medium only (a guided mode's peak in k_z at low loss is left
        to the adaptive refinement): for spectra and checks, not for the totals,
        which :meth:`solve` computes on rays that know the poles."""
        s = self.source
        kx = np.atleast_1d(np.asarray(kx, dtype=float))
        vals, errs = np.zeros(kx.shape), np.zeros(kx.shape)
        for i, k in enumerate(kx):
            w = k * s.speed + (branch if branch else 0) * s.internal_frequency
            if w <= 0:
                continue
            kmax = self._k_max if self._k_max is not None else 18.5 / max(self._d_min, 1e-6) + abs(k)
            bps = [0.0, kmax]
            for m in self.stack.media:
                kc2 = float(np.real(permittivity(m, np.array([w]))[0])) * w * w - k * k
                if 0 < kc2 < kmax**2:
                    bps.append(math.sqrt(kc2))

            def f(kz, k=k, w=w):
                P = point_sheet_power(self.stack, s, k, kz, w, mirror=True)[0]
                return (4.0 * P if s.kind == "charge" else P)[None, :] / (2 * np.pi)

            v_, e_ = adaptive_integral(f, bps, rtol=rtol)
            vals[i], errs[i] = v_[0], e_
        return vals, errs

