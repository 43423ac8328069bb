r"""Exact planar reference: a line charge or line dipole moving past layered media.

Geometry: media stratified along y (a bottom half-space, any number of layers,
a top half-space), each constant or dispersive (Lorentz/Drude, with loss); a
source moving at v along x at height y = h.  Both 2D polarizations:
TE_z (line charge, in-plane dipole along x or y) and TM_z (dipole along z).
Normalized units (c = eps0 = mu0 = 1); powers per unit length along z.

Method (derivation in docs/theory/planar-reference.md).  A source
moving at v with internal lab frequency Omega has, at each k_x, current only at
``omega = k_x v + s Omega``.  Each k_x component is a sheet source at y = h
that imposes jumps on the tangential fields (E_t, H_t) = (E_x, H_z) (TE) or
(E_z, H_x) (TM); the media above and below act through the admittances
``Y = H_t / E_t`` at y = h+ and h-, built from the outgoing half-spaces with a
reflection recursion that is stable for evanescent waves.  The power the sheet
hands to the field is the net Poynting flux out of it,
``P_sheet = S_y(h+) - S_y(h-)``.  Summing the components gives

.. math::  P = \int \frac{dk_x}{2\pi}\,\Big[ P_{sheet}(k_x, k_x v + \Omega)\,\theta(k_xv+\Omega)
             + P_{sheet}(k_x, k_x v - \Omega)\,\theta(k_xv-\Omega) \Big]

for a dipole (first term: normal Doppler branch, second: anomalous), and
``P = int_0^inf dk/(2 pi) 4 P_sheet(k, k v)`` for a charge.  The branch of
``k_y = sqrt(eps omega^2 - k_x^2)`` has Im k_y >= 0 (evanescent waves decay,
outgoing waves leave).  The integral uses a vectorised adaptive Gauss-Kronrod
rule split at light-line crossings and at the (lossless) guided-mode poles, so
that narrow polariton peaks at small loss are resolved.  A periodic cell of
length L replaces ``int dk/(2 pi)`` by ``(1/L) sum_m`` over k_m = 2 pi m / L.

The media and their admittances are :mod:`fdtd.reference.layered`; the quadrature
:mod:`fdtd.reference.quadrature`.  The 1D bulk case (a transverse dipole sheet
moving along x through a uniform medium) is :class:`Bulk1D`.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from fdtd import _checks
from fdtd.errors import GeometryError, ParameterError
from fdtd.media.materials import Material
from fdtd.reference.layered import (Stack, admittances, ky_branch, line_breakpoints,
                                    lossless_material, permittivity)
from fdtd.reference.quadrature import adaptive_integral

__all__ = ["Stack", "MovingLineSource", "sheet_power", "sheet_fluxes", "PlanarResult", "PlanarReference", "Bulk1D"]

# --------------------------------------------------------------------- sources


@dataclass(frozen=True)
class MovingLineSource:
    """A line source moving at ``speed`` along +x at height ``height``.

    kind "charge": line charge ``strength`` (TE).  kind "dipole": lab-frame
    moment amplitude from the rest-frame ``strength`` p0 at rest-frame
    frequency ``omega0`` along ``axis`` ("x", "y": TE; "z": TM).  kind
    "current": a line current of amplitude ``strength`` at frequency omega0
    along ``axis`` ("z": TM, "x"/"y": TE), only at rest (speed 0).
    """

    kind: str
    speed: float
    height: float
    strength: float = 1.0
    omega0: float = 0.0
    axis: str = "y"

    def __post_init__(self) -> None:
        _checks.one_of("source kind", self.kind, ("charge", "dipole", "current"))
        v = _checks.in_range("source speed", self.speed, 0.0, 1.0, hi_open=True)
        _checks.finite_number("source height", self.height)
        _checks.finite_number("source strength", self.strength)
        _checks.one_of("source axis", self.axis, ("x", "y", "z"))
        if self.kind == "charge" and v == 0.0:
            raise ParameterError("a charge at rest does not radiate: give speed > 0")
        if self.kind in ("dipole", "current"):
            _checks.positive("source omega0", self.omega0)
        if self.kind == "current" and v != 0.0:
            raise ParameterError("kind 'current' is for sources at rest (speed 0)")

    @property
    def polarization(self) -> str:
        if self.kind == "charge":
            return "te"
        return "tm" if self.axis == "z" else "te"

    @property
    def gamma(self) -> float:
        return 1.0 / math.sqrt(1.0 - self.speed**2)

    @property
    def internal_frequency(self) -> float:
        """Lab-frame internal frequency Omega (omega0/gamma; 0 for a charge)."""
        if self.kind == "charge":
            return 0.0
        return self.omega0 / self.gamma

    @property
    def lab_amplitude(self) -> float:
        """Lab moment (parallel component / gamma), charge, or current amplitude."""
        if self.kind == "dipole" and self.axis == "x":
            return self.strength / self.gamma
        return self.strength

    def jumps(self, k, omega, eps_h):
        """Field jumps (Delta E_t, Delta H_t) across the sheet of one (k, omega) component."""
        v, a = self.speed, self.lab_amplitude
        k = np.asarray(k, dtype=float)
        omega = np.asarray(omega, dtype=float)
        zero = np.zeros_like(omega, dtype=complex)
        if self.kind == "charge":                      # K_x = lambda v
            return zero, zero + a * v
        if self.kind == "current":
            if self.axis == "z":
                return zero, zero - a                  # [H_x] = -K_z
            if self.axis == "x":
                return zero, zero + a                  # [H_z] = K_x
            return k * a / (omega * eps_h), zero       # [E_x] = k K_y / (omega eps)
        # dipole: J = -i omega P + curl(P x v)
        if self.axis == "x":                           # [H_z] = -i omega P_x ; M_z = P_x v_y = 0
            return zero, -1j * omega * a + zero
        if self.axis == "y":                           # [E_x] = -i k P_y/eps - i omega M_z, M_z = -P_y v
            return -1j * a * (k / eps_h - omega * v) + zero, zero
        return zero, 1j * (omega - k * v) * a + zero   # z: [H_x] = i (omega - k v) P_z


def sheet_power(stack: Stack, source: MovingLineSource, k, omega):
    """(P_sheet, flux_up, flux_down) per (k, omega) point, 1/2 Re convention, omega > 0."""
    pol = source.polarization
    Yu, Yd, eps_h = admittances(stack, pol, k, omega, source.height)
    dE, dH = source.jumps(k, omega, eps_h)
    return sheet_fluxes(pol, Yu, Yd, dE, dH)


def sheet_fluxes(pol: str, Yu, Yd, dE, dH):
    """(P_sheet, flux_up, flux_down) of a sheet with tangential-field jumps (dE, dH).

    ``pol`` "te" ((E_t, H_t) = (E_x, H_z)) or "tm" ((E_z, H_x)); ``Yu``, ``Yd`` the
    admittances at y = h+ and h- (:func:`~fdtd.reference.layered.admittances`);
    the jumps [E_t] = E_t(h+) - E_t(h-), [H_t] likewise.  All broadcast to one
    shape; 1/2 Re convention for complex amplitudes."""
    Ep = (dH - Yd * dE) / (Yu - Yd)
    Em = Ep - dE
    Hp, Hm = Yu * Ep, Yd * Em
    sign = -1.0 if pol == "te" else 1.0               # S_y = -Ex Hz* (TE), Ez Hx* (TM)
    S_up = sign * 0.5 * np.real(Ep * np.conj(Hp))
    S_dn = sign * 0.5 * np.real(Em * np.conj(Hm))
    return S_up - S_dn, S_up, -S_dn


# --------------------------------------------------------------------- the solver


@dataclass
class PlanarResult:
    """Powers (normalized, per unit length along z) from :class:`PlanarReference`.

    ``total = normal + anomalous``; ``drag_force`` is the x-momentum handed to
    the field per unit time (the force that keeps the source at constant
    speed); ``internal_power`` the part of the lab power drawn from the
    internal oscillation (negative: pumped); ``motion_power = v * drag``.
    ``error`` holds quadrature error estimates.

    ``branch`` holds per-branch figures keyed by branch (+1 normal, -1
    anomalous, 0 charge): ``branch["power"][b]`` the lab power,
    ``branch["internal_power"][b]`` the internal power sum P s Omega / omega of
    that branch (used by :mod:`fdtd.reference.rates`: the rest-frame power of branch b is
    gamma^2 |internal_power[b]|), ``branch["error"][b]`` the quadrature error
    estimate of that branch's power (controlled on the power; the internal
    power is integrated on the same panels).
    """

    total: float
    normal: float
    anomalous: float
    drag_force: float
    internal_power: float
    motion_power: float
    flux_up: float
    flux_down: float
    error: float
    branch: dict = field(default_factory=dict)


class PlanarReference:
    """Exact powers of a moving line source beside a planar stack.

    Parameters
    ----------
    stack : Stack
    source : MovingLineSource
    form_factor : callable k -> F(k), optional
        Amplitude form factor of a finite-width source (multiplies the
        spectrum by |F(k_x)|^2), e.g. ``fdtd.sources.shapes.Shape(3, 2).form_factor(k, dx)``.
    vertical_form_factor : callable q -> F(q), optional
        Transform of the source's (symmetric) profile along y, called with the
        complex k_y of the source layer.  Every term of the layered response
        (direct, reflected up, reflected down, multiply reflected) then carries
        F(k_y)^2, with F real for real and imaginary k_y alike, so the power
        of the finite-height source is P_sheet F(k_y)^2 exactly (source inside
        one homogeneous layer).  :meth:`like_simulation` sets both factors
        from a simulator shape.
    """

    def __init__(self, stack: Stack, source: MovingLineSource,
                 form_factor: Callable[[np.ndarray], np.ndarray] | None = None,
                 k_max: float | None = None,
                 vertical_form_factor: Callable[[np.ndarray], np.ndarray] | None = None):
        if not isinstance(stack, Stack):
            raise ParameterError(f"stack = {stack!r}: expected a Stack (fdtd.reference.planar.Stack)")
        if not isinstance(source, MovingLineSource):
            raise ParameterError(f"source = {source!r}: expected MovingLineSource")
        for m in stack.media:
            if m.is_nonlocal:
                # the layered solution takes one transverse wave per layer and no additional
                # boundary condition: a spatially dispersive layer has two and needs Pekar's
                raise ParameterError(
                    f"material {m.name!r} has a spatially dispersive (nonlocal) pole: the layered "
                    "reference treats every layer as local; use Bulk1D for one uniform medium, or "
                    "compare with the local limit (pole.local())")
        self.stack = stack
        self.source = source
        self.form_factor = form_factor
        self.vertical_form_factor = vertical_form_factor
        src_region = stack.region_of(source.height)
        yi = stack.interfaces
        dist = np.abs(yi - source.height)
        d_min = float(dist.min()) if dist.size else math.inf
        self._d_min = d_min
        self._k_max = k_max
        self.src_region = src_region

    @classmethod
    def like_simulation(cls, stack: Stack, source: MovingLineSource, shape, cell: float,
                        **kw) -> PlanarReference:
        """A reference with the simulator's source shape (``fdtd.sources.shapes.Shape``) on cells ``cell``.

        Along x the node-shape transform; along y the node shape, or the
        half-node shape for a dipole along y (its P_y sits on half nodes in y).
        """
        half_y = source.kind == "dipole" and source.axis == "y"
        reach = (shape.half_support + (0.5 if half_y else 0.0)) * cell
        gaps = np.abs(stack.interfaces - source.height) if len(stack.interfaces) else np.array([np.inf])
        if np.min(gaps) < reach:
            # The transfer-matrix solution assumes the whole source lies in one layer;
            # a deposit straddling an interface drives both media and has no planar twin.
            raise GeometryError(
                f"the source shape reaches {reach:.4g} (normalized length) from its path at height "
                f"{source.height:.4g}, but an interface lies {np.min(gaps):.4g} away: the source overlaps "
                "a material, so the planar reference does not apply (raise the height or refine the cell)")
        return cls(stack, source, form_factor=lambda k: shape.form_factor(k, cell),
                   vertical_form_factor=lambda q: shape.form_factor(q, cell, half=half_y), **kw)

    # -- spectra -----------------------------------------------------------
    def branches(self) -> list[int]:
        if self.source.kind == "charge":
            return [0]
        if self.source.speed == 0.0:
            return [1]
        return [1, -1]

    def omega_of(self, k, branch: int):
        s = self.source
        return np.asarray(k) * s.speed + (branch if branch else 0) * s.internal_frequency

    def density(self, k, branch: int, what: str = "power"):
        """Spectral density p(k) with P = int dk/(2 pi) p(k) on one branch (0 for a charge).

        ``what`` = "power", "up" or "down" (flux leaving upward / downward).
        Points with omega <= 0 give zero.
        """
        return self.densities(k, branch)[("power", "up", "down").index(what)]

    def densities(self, k, branch: int):
        """(power, flux up, flux down) spectral densities on one branch, from one
        evaluation of the sheet solution (see :meth:`density`); each of shape k.shape."""
        k = np.asarray(k, dtype=float)
        w = self.omega_of(k, branch)
        out = np.zeros((3,) + k.shape)
        ok = w > 0
        if np.any(ok):
            vals = np.array(sheet_power(self.stack, self.source, k[ok], w[ok]))
            if self.source.kind == "charge":
                vals = 4.0 * vals
            if self.form_factor is not None:
                vals = vals * np.abs(self.form_factor(k[ok])) ** 2
            if self.vertical_form_factor is not None:
                med = self.stack.media[self.src_region]
                ky = ky_branch(permittivity(med, w[ok]), w[ok], k[ok])
                # deep in the evanescent range the factor overflows where the sheet gives
                # nothing (a lossless medium): there the density is zero
                with np.errstate(over="ignore", invalid="ignore"):
                    ff2 = np.real(self.vertical_form_factor(ky) ** 2)
                    vals = np.where(vals == 0, 0.0, vals * ff2)
            out[:, ok] = vals
        return out

    def _k_range(self, branch: int) -> tuple[float, float]:
        s = self.source
        if self._k_max is not None:
            kmax = self._k_max
        else:
            # evanescent coupling to the nearest interface decays as exp(-2 k d): stop at 1e-16
            kmax = 18.5 / max(self._d_min, 1e-6)
            w_scale = s.internal_frequency if s.kind != "charge" else 1.0
            kmax = max(kmax, 40.0 * w_scale / max(1 - s.speed, 1e-3))
        if s.speed == 0.0:
            return -kmax, kmax
        if branch == 0:
            return 0.0, kmax
        return (-s.internal_frequency / s.speed if branch == 1 else s.internal_frequency / s.speed), kmax

    def _breakpoints(self, branch: int) -> np.ndarray:
        """Light-line crossings and lossless guided-mode poles on one branch (cached)."""
        cache = self.__dict__.setdefault("_bp_cache", {})
        if branch not in cache:
            lo, hi = self._k_range(branch)
            cache[branch] = line_breakpoints(
                self.stack, lambda k: self.omega_of(k, branch), (self.source.polarization,),
                self.source.height, lo, hi)
        return cache[branch]

    def _integrand(self, branch: int):
        s = self.source

        def f(x):
            w = self.omega_of(x, branch)
            P, up, dn = self.densities(x, branch)
            with np.errstate(divide="ignore", invalid="ignore"):
                kw = np.where(w > 0, x / np.where(w > 0, w, 1.0), 0.0)
                iw = np.where(w > 0, branch * s.internal_frequency / np.where(w > 0, w, 1.0), 0.0)
            return np.stack([P, up, dn, P * kw, P * iw]) / (2 * np.pi)

        return f

    def branch_integrals(self, branch: int, rtol: float = 1e-8):
        """[power, flux up, flux down, drag force, internal power] on one branch, and error."""
        return adaptive_integral(self._integrand(branch), self._breakpoints(branch), rtol=rtol)

    def branch_power(self, branch: int, rtol: float = 1e-8):
        vals, err = self.branch_integrals(branch, rtol)
        return vals[0], err

    def solve(self, rtol: float = 1e-8) -> PlanarResult:
        """Total, normal and anomalous power, drag force, internal power, fluxes."""
        s = self.source
        out = {}
        internal_b, err_b = {}, {}
        err = 0.0
        drag = internal = up = down = 0.0
        for b in self.branches():
            vals, e = self.branch_integrals(b, rtol)
            out[b] = float(vals[0])
            internal_b[b] = float(vals[4])
            err_b[b] = float(e)
            up += vals[1]
            down += vals[2]
            drag += vals[3]
            internal += vals[4]
            err += e
        total = sum(out.values())
        normal = out.get(1, 0.0) + out.get(0, 0.0)
        anomalous = out.get(-1, 0.0)
        return PlanarResult(total, normal, anomalous, float(drag), float(internal),
                            s.speed * float(drag), float(up), float(down), err,
                            branch={"power": out, "internal_power": internal_b, "error": err_b})

    def periodic(self, length: float, m_max: int = 400, what: str = "power") -> dict:
        """Like-for-like with a co-moving periodic cell: values at k_m = 2 pi m / length.

        Returns a dict branch -> (k_m array, value per point array), the value of
        each point being density(k_m) / length (the m, -m twins are separate points
        for a dipole; for a charge the density already holds both).  ``what`` =
        "power", "up" (flux leaving upward) or "down" (flux leaving downward).
        """
        L = _checks.positive("cell length", length)
        m = np.arange(-m_max, m_max + 1)
        k = 2 * np.pi * m / L
        res = {}
        for b in self.branches():
            w = self.omega_of(k, b)
            sel = w > 0
            if b == 0:
                sel &= k > 0
            res[b] = (k[sel], self.density(k[sel], b, what) / L)
        return res


# --------------------------------------------------------------------- 1D bulk


class Bulk1D:
    """A transverse dipole sheet (moment p0 per unit area along y, rest frequency
    omega0) moving at v along x through a uniform medium, 1D (fields depend on x).

    Its current is J_y = dp/dt S(x - vt) (the convective and magnetization parts
    cancel for a dipole transverse to the motion), so on branch s the sheet
    amplitude is |K| = Omega p with Omega = omega0/gamma, and with
    E = i omega J / (k^2 - omega^2 eps) the power density is

        P_sheet(k, omega) = 1/2 Omega^2 p^2 omega^3 Im eps(omega) / |k^2 - omega^2 eps|^2,

    P = int dk/(2 pi) [P_sheet(k, kv + Omega) + P_sheet(k, kv - Omega)] over the
    points with positive frequency (normal, anomalous).  A lossless medium gives
    delta functions at the modes k^2 = omega^2 eps on the Doppler lines; with small
    loss these are the narrow peaks the adaptive rule resolves (breakpoints at the
    lossless mode positions).  Powers per unit transverse area.
    """

    def __init__(self, material: Material, speed: float, omega0: float, moment: float = 1.0,
                 form_factor: Callable[[np.ndarray], np.ndarray] | None = None,
                 k_max: float | None = None):
        if not isinstance(material, Material):
            raise ParameterError(f"material = {material!r}: expected a Material")
        self.material = material
        self.speed = _checks.in_range("source speed", speed, 0.0, 1.0, lo_open=True, hi_open=True)
        self.omega0 = _checks.positive("source omega0", omega0)
        self.moment = _checks.finite_number("dipole moment", moment)
        self.gamma = 1.0 / math.sqrt(1.0 - self.speed**2)
        self.Omega = self.omega0 / self.gamma
        self.form_factor = form_factor
        self.k_max = k_max

    def omega_of(self, k, branch: int):
        return np.asarray(k) * self.speed + branch * self.Omega

    def density(self, k, branch: int):
        k = np.asarray(k, dtype=float)
        w = self.omega_of(k, branch)
        out = np.zeros(k.shape)
        ok = w > 0
        if np.any(ok):
            ww = w[ok]
            eps = self._eps(ww, k[ok])
            D = k[ok] ** 2 - ww**2 * eps
            val = 0.5 * self.Omega**2 * self.moment**2 * ww**3 * eps.imag / np.abs(D) ** 2
            if self.form_factor is not None:
                val = val * np.abs(self.form_factor(k[ok])) ** 2
            out[ok] = val
        return out

    def _eps(self, omega, k):
        """eps(omega, k): a spatially dispersive pole sees the sheet's wavenumber k."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.asarray(self.material.permittivity(np.asarray(omega, dtype=float),
                                                         k if self.material.is_nonlocal else None),
                              dtype=complex)

    def _range(self, branch):
        kmax = self.k_max if self.k_max is not None else 60.0 * (self.Omega + 1.0) / self.speed
        lo = -self.Omega / self.speed if branch == 1 else self.Omega / self.speed
        return lo, kmax

    def _breakpoints(self, branch):
        lo, hi = self._range(branch)
        kk = np.linspace(lo, hi, 200001)[1:-1]
        w = self.omega_of(kk, branch)
        lossless = lossless_material(self.material)
        with np.errstate(divide="ignore", invalid="ignore"):
            e = np.real(np.asarray(lossless.permittivity(w, kk if lossless.is_nonlocal else None),
                                   dtype=complex))
        g = kk * kk - w * w * e
        idx = np.nonzero(np.sign(g[1:]) * np.sign(g[:-1]) < 0)[0]
        pts = [lo, hi]
        for i in idx:
            if np.isfinite(g[i]) and np.isfinite(g[i + 1]) and abs(g[i] - g[i + 1]) < 1e6:
                pts.append(kk[i] - g[i] * (kk[i + 1] - kk[i]) / (g[i + 1] - g[i]))
        pts = np.unique(np.array(pts))
        extra = []
        for p in pts[1:-1]:
            for dd in (1e-8, 1e-6, 1e-4, 1e-2):
                extra.extend([p - dd * (1 + abs(p)), p + dd * (1 + abs(p))])
        return np.unique(np.clip(np.concatenate([pts, extra]), lo, hi))

    def solve(self, rtol: float = 1e-8) -> PlanarResult:
        out = {}
        internal_b, err_b = {}, {}
        drag = internal = err = 0.0
        for b in (1, -1):
            def f(x, b=b):
                w = self.omega_of(x, b)
                P = self.density(x, b)
                with np.errstate(divide="ignore", invalid="ignore"):
                    kw = np.where(w > 0, x / np.where(w > 0, w, 1.0), 0.0)
                    iw = np.where(w > 0, b * self.Omega / np.where(w > 0, w, 1.0), 0.0)
                return np.stack([P, P * kw, P * iw]) / (2 * np.pi)
            vals, e = adaptive_integral(f, self._breakpoints(b), rtol=rtol)
            out[b] = float(vals[0])
            internal_b[b] = float(vals[2])
            err_b[b] = float(e)
            drag += vals[1]
            internal += vals[2]
            err += e
        total = out[1] + out[-1]
        return PlanarResult(total, out[1], out[-1], float(drag), float(internal),
                            self.speed * float(drag), float("nan"), float("nan"), err,
                            branch={"power": out, "internal_power": internal_b, "error": err_b})

    def periodic(self, length: float, m_max: int = 2000) -> dict:
        L = _checks.positive("cell length", length)
        m = np.arange(-m_max, m_max + 1)
        k = 2 * np.pi * m / L
        res = {}
        for b in (1, -1):
            w = self.omega_of(k, b)
            sel = w > 0
            res[b] = (k[sel], self.density(k[sel], b) / L)
        return res
