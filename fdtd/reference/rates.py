r"""Equivalent quantum rates of a two-level emitter from classical dipole powers.

A two-level system (ground g, excited e, transition frequency omega0 in its
rest frame, transition dipole d = <g| d_op |e>) coupled weakly to the field
has the same spectral environment as a classical dipole oscillating at omega0:
both couple through the imaginary part of the field's Green's function at the
emitter.  Matching the positive-frequency part of the classical moment
p(t) = p0 cos(omega0 t) = (p0/2) e^{-i omega0 t} + c.c. with the matrix
element d (the positive-frequency part of the dipole operator in the
Heisenberg picture is d sigma e^{-i omega0 t}) gives

    p0 = 2 |d|,      Gamma = P(p0 = 2|d|) / (hbar omega0),

exact in any linear, passive environment at weak coupling (derivation in
docs/theory/rates.md).  For a source moving at v the
field receives energy on two Doppler branches; branch s (+1 normal, -1
anomalous) changes the emitter's rest-frame energy at the rate

    dU'_s/dtau = -gamma^2 P_int,s,     P_int,s = sum_{points of branch s} P s Omega / omega,

(Omega = omega0/gamma; docs/theory/frames-and-drag.md, "Lab and rest frame, drag and internal
power"), so the rest-frame power of branch s is W'_s = gamma^2 s P_int,s
= gamma sum_s P omega0/omega >= 0 and

* normal branch   -> decay rate      Gamma_down = W'_+ / (hbar omega0)   (e -> g, photon emitted),
* anomalous branch -> excitation rate Gamma_up  = W'_- / (hbar omega0)   (g -> e, photon emitted,
  energy taken from the motion),

both in the emitter's rest frame per unit proper time (= gamma sum_s P/(hbar
omega), gamma times the lab photon rate); per unit lab time divide by gamma.
Rates carry the dimensionality of the simulation: in 2D the source is a line
(moment per unit length along z) and a rate is per unit length along z; in 1D
a sheet (moment per unit area) and a rate is per unit transverse area; in 3D a
point dipole and a plain rate.  The ratio Gamma/Gamma_0 to the same system's
free-space decay rate in the same dimensionality does not depend on |d| or
hbar and is the figure to quote.

Units: everything here is normalized (c = eps0 = mu0 = 1, see
:mod:`fdtd.units`) unless the name ends in ``_si``.  hbar in normalized units
is the pure number ``hbar c / (eps0 E0^2 ell^4)`` (:func:`normalized_hbar`);
with it a normalized power P (per normalized length^(3 - dims)) gives
Gamma = P/(hbar omega) per normalized time per normalized length^(3 - dims).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.constants as sc

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.reference.planar import Bulk1D, PlanarReference, PlanarResult

#: Dimensionalities: 1 sheet dipole (1D grid), 2 line dipole (2D grid), 3 point dipole.
DIMENSIONS = (1, 2, 3)
#: Dipole axes.  2D: "x", "y" in plane (TE_z), "z" out of plane (TM_z).
AXES = ("x", "y", "z")

_PER = {1: "per unit transverse area", 2: "per unit length along z", 3: ""}
_SI_RATE = {1: "1/(s m^2)", 2: "1/(s m)", 3: "1/s"}
_SI_MOMENT = {1: "C/m (dipole moment per unit area)", 2: "C (dipole moment per unit length)",
              3: "C m"}

FRAME = "rest frame of the emitter, per unit proper time"
LAB_FRAME = "lab frame, per unit lab time (rest-frame rate / gamma)"


# --------------------------------------------------------------------- checks


def check_dims(dims) -> int:
    """``dims`` as an int in (1, 2, 3); anything else is a ParameterError."""
    is_int = isinstance(dims, (int, np.integer)) and not isinstance(dims, bool)
    if not is_int or int(dims) not in DIMENSIONS:
        raise ParameterError(
            f"dims = {dims!r} is not allowed: expected one of {list(DIMENSIONS)} "
            "(1: dipole sheet, 2: line dipole, 3: point dipole)")
    return int(dims)


def check_axis(axis, dims: int):
    """The dipole axis allowed in ``dims`` dimensions (returned normalized).

    2D needs "x", "y" (in plane) or "z" (out of plane).  1D: a transverse
    sheet, "y" or "z" (or None, read as "y"); "x" (along the propagation
    direction) does not radiate and is refused.  3D: any of x, y, z or None
    (free space is isotropic).
    """
    dims = check_dims(dims)
    if dims == 2:
        return _checks.one_of("dipole axis", axis, AXES)
    if dims == 1:
        if axis is None:
            return "y"
        return _checks.one_of("dipole axis (1D: transverse sheet)", axis, ("y", "z"))
    if axis is None:
        return None
    return _checks.one_of("dipole axis", axis, AXES)


def _number(name: str, value, lo_open: bool) -> float:
    """A finite number > 0 (lo_open) or >= 0; the message always states the range."""
    rng = "a finite number > 0" if lo_open else "a finite number >= 0"
    if isinstance(value, bool):
        raise ParameterError(f"{name} = {value!r} is not allowed: expected {rng}")
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise ParameterError(f"{name} = {value!r} is not a number: expected {rng}") from None
    if not math.isfinite(x) or x < 0.0 or (lo_open and x == 0.0):
        raise ParameterError(f"{name} = {x!r} is not allowed: expected {rng}")
    return x


def _positive(name: str, value) -> float:
    return _number(name, value, True)


def _non_negative(name: str, value) -> float:
    return _number(name, value, False)


def classical_amplitude(dipole) -> float:
    """Classical moment amplitude p0 = 2|d| of a transition dipole |d| (any units).

    ``dipole`` is the modulus |<g|d_op|e>| (>= 0; a complex matrix element
    is accepted and its modulus taken).
    """
    if isinstance(dipole, complex):
        dipole = abs(dipole)
    return 2.0 * _non_negative("transition dipole |d|", dipole)


# --------------------------------------------------------------------- free space


def _geometry_factor(dims: int, axis) -> float:
    """P = factor * omega^(dims+1) * p0^2 in normalized units."""
    if dims == 1:
        return 1.0 / 4.0
    if dims == 2:
        return 1.0 / (8.0 if axis == "z" else 16.0)
    return 1.0 / (12.0 * math.pi)


def free_space_power(omega, moment, dims, axis=None) -> float:
    r"""Time-averaged power radiated in vacuum by p(t) = p0 cos(omega t) (normalized).

    * 1D, sheet of moment p0 per unit area (transverse): its current sheet
      K = omega p0 sends plane waves of amplitude K/2 both ways,
      P = omega^2 p0^2 / 4 per unit area.
    * 2D, line of moment p0 per unit length: a line current I = omega p0
      radiates I^2 omega/8 (out of plane, axis "z") or I^2 omega/16 (in plane,
      "x" or "y") per unit length (2D Green's function (i/4) H0(k rho);
      tests/test_radiation.py), i.e. omega^3 p0^2/8 or /16.
    * 3D, point dipole: Larmor's dipole formula, P = omega^4 p0^2/(12 pi)
      (J. D. Jackson, Classical Electrodynamics, 3rd ed., eq. 9.24,
      P = c^2 Z0 k^4 |p|^2/(12 pi); from memory).

    Parameters: ``omega`` (> 0) normalized angular frequency, ``moment`` p0
    (>= 0; per unit area in 1D, per unit length in 2D), ``dims`` 1, 2 or 3,
    ``axis`` see :func:`check_axis`.  Returns a float (power per unit area in
    1D, per unit length in 2D).
    """
    dims = check_dims(dims)
    axis = check_axis(axis, dims)
    w = _positive("omega0", omega)
    p = _non_negative("dipole moment p0", moment)
    return _geometry_factor(dims, axis) * w ** (dims + 1) * p * p


def free_space_power_si(omega, moment, dims, axis=None) -> float:
    """:func:`free_space_power` in SI units.

    ``omega`` in rad/s, ``moment`` in C m (3D), C (2D: C m per m) or C/m (1D:
    C m per m^2).  Returns W (3D), W/m (2D) or W/m^2 (1D):
    1D mu0 c omega^2 p^2/4, 2D mu0 omega^3 p^2/8 or /16, 3D omega^4 p^2/(12 pi eps0 c^3).
    """
    dims = check_dims(dims)
    axis = check_axis(axis, dims)
    w = _positive("omega0", omega)
    p = _non_negative("dipole moment p0", moment)
    # normalized -> SI: every factor c, eps0, mu0 restored by dimensional analysis
    scale = {1: sc.mu_0 * sc.c, 2: sc.mu_0, 3: 1.0 / (sc.epsilon_0 * sc.c**3)}[dims]
    return scale * _geometry_factor(dims, axis) * w ** (dims + 1) * p * p


def free_space_rate(omega, dipole, dims, axis=None, *, hbar) -> float:
    """Free-space decay rate Gamma_0 = P(p0 = 2|d|)/(hbar omega) in normalized units.

    ``dipole`` |d| normalized (per unit length in 2D, per unit area in 1D);
    ``hbar`` the normalized value of hbar (:func:`normalized_hbar`).  The rate
    is per normalized time unit (and per normalized length along z in 2D, per
    normalized area in 1D).
    """
    h = _positive("hbar (normalized)", hbar)
    P = free_space_power(omega, classical_amplitude(dipole), dims, axis)
    return P / (h * float(omega))


def free_space_rate_si(omega, dipole, dims, axis=None) -> float:
    """Free-space decay rate in SI: P_si(p0 = 2|d|)/(hbar omega), hbar from scipy.constants.

    ``omega`` rad/s; ``dipole`` |d| in C m (3D), C (2D) or C/m (1D).  Returns
    1/s (3D), 1/(s m) (2D, per unit length along z), 1/(s m^2) (1D).
    In 3D this is the Wigner-Weisskopf rate omega^3 |d|^2/(3 pi eps0 hbar c^3).
    """
    P = free_space_power_si(omega, classical_amplitude(dipole), dims, axis)
    return P / (sc.hbar * float(omega))


def normalized_hbar(units) -> float:
    """hbar in the normalized units of ``units`` (a :class:`fdtd.units.UnitSystem`).

    Energy unit eps0 E0^2 ell^3 (per ell^(3 - dims) in lower dimensions),
    time unit ell/c: hbar_n = hbar c / (eps0 E0^2 ell^4), a pure number
    independent of the dimensionality.
    """
    from fdtd.units import UnitSystem

    if not isinstance(units, UnitSystem):
        raise ParameterError(f"units = {units!r}: expected an fdtd.units.UnitSystem")
    return sc.hbar * sc.c / (sc.epsilon_0 * units.field**2 * units.length**4)


# --------------------------------------------------------------------- branch sums


def rest_frame_branch_powers(omega, branch, power, internal_frequency, speed):
    """Rest-frame power W'_s = gamma^2 s P_int,s of each Doppler branch.

    Parameters
    ----------
    omega, branch, power : arrays (n,)
        Lab frequencies (> 0), branch labels (+1 normal, -1 anomalous) and the
        lab power of each point (normalized).
    internal_frequency : float
        Lab internal frequency Omega = omega0/gamma (> 0).
    speed : float
        v in [0, 1).

    Returns ``{+1: W'_+, -1: W'_-}`` (normalized power; per unit length in
    2D).  W'_s = gamma^2 sum_s P Omega/omega = gamma sum_s P omega0/omega.
    """
    Om = _positive("internal frequency Omega", internal_frequency)
    v = _checks.in_range("source speed", speed, 0.0, 1.0, hi_open=True)
    gam2 = 1.0 / (1.0 - v * v)
    w = np.asarray(omega, dtype=float)
    b = np.asarray(branch)
    P = np.asarray(power, dtype=float)
    if not (w.shape == b.shape == P.shape):
        raise ParameterError(
            f"omega, branch, power shapes {w.shape}, {b.shape}, {P.shape}: expected equal shapes")
    out = {}
    for s in (1, -1):
        sel = (b == s) & (w > 0)
        out[s] = float(gam2 * np.sum(P[sel] * Om / w[sel])) + 0.0
    return out


# --------------------------------------------------------------------- result


@dataclass(frozen=True)
class EquivalentRates:
    """Equivalent quantum rates of a two-level emitter (see the module docstring).

    ``ratio_down`` = Gamma_down/Gamma_0 and ``ratio_up`` = Gamma_up/Gamma_0:
    rest-frame rates over the free-space decay rate Gamma_0 of the same system
    at rest, same dimensionality (dimensionless; always filled).
    ``gamma_down``, ``gamma_up``, ``gamma_free`` (Gamma_0): absolute rates in
    ``units`` (NaN when no transition dipole was given), rest frame, per unit
    proper time; ``lab_gamma_*`` the same per unit lab time (/ gamma).
    ``*_error``: error estimates where the input has them (NaN otherwise).
    ``rest_power_down/up`` W'_s and ``free_space_power`` P_0 are the
    normalized classical powers of the simulated moment ``moment`` (P_0 the
    closed form, or the measured free-space power given to
    :func:`rates_at_rest`).  Absolute rates are ratio * Gamma_0 with Gamma_0
    the closed-form free-space rate of the true |d|.
    """

    ratio_down: float
    ratio_up: float
    ratio_down_error: float
    ratio_up_error: float
    gamma_down: float
    gamma_up: float
    gamma_free: float
    gamma_down_error: float
    gamma_up_error: float
    rest_power_down: float
    rest_power_up: float
    free_space_power: float
    moment: float
    omega0: float
    speed: float
    lorentz_factor: float
    dims: int
    axis: str | None
    units: str
    source: str
    frame: str = FRAME
    lab_frame: str = LAB_FRAME

    @property
    def lab_gamma_down(self) -> float:
        """Decay rate per unit lab time (Gamma_down / gamma)."""
        return self.gamma_down / self.lorentz_factor

    @property
    def lab_gamma_up(self) -> float:
        """Excitation rate per unit lab time (Gamma_up / gamma)."""
        return self.gamma_up / self.lorentz_factor

    @property
    def lab_ratio_down(self) -> float:
        """Lab-frame decay rate over the rest rate Gamma_0 (ratio_down / gamma)."""
        return self.ratio_down / self.lorentz_factor

    @property
    def lab_ratio_up(self) -> float:
        return self.ratio_up / self.lorentz_factor

    def summary(self) -> dict:
        """Plain dict of every figure (for JSON output)."""
        out = {k: getattr(self, k) for k in self.__dataclass_fields__}
        for k in ("lab_gamma_down", "lab_gamma_up", "lab_ratio_down", "lab_ratio_up"):
            out[k] = getattr(self, k)
        return out


def _free_rate_and_units(dims, axis, omega0, dipole, units, hbar):
    """(Gamma_0 of the true transition dipole, units text); NaN without a dipole."""
    if dipole is None:
        if units is not None or hbar is not None:
            raise ParameterError(
                "units/hbar given without dipole: give the transition dipole |d| too")
        return math.nan, "ratios only (no transition dipole given: absolute rates are NaN)"
    p_true = classical_amplitude(dipole)
    if (units is None) == (hbar is None):
        raise ParameterError(
            "absolute rates need exactly one of units= (an fdtd.units.UnitSystem: dipole in SI, "
            "rates in SI) or hbar= (hbar in normalized units: dipole and rates normalized)")
    if units is not None:
        from fdtd.units import UnitSystem

        if not isinstance(units, UnitSystem):
            raise ParameterError(f"units = {units!r}: expected an fdtd.units.UnitSystem")
        if units.dims != dims:
            raise ParameterError(
                f"units.dims = {units.dims} does not match dims = {dims}: the unit system must "
                "describe the simulation's dimensionality")
        # SI moment -> normalized, normalized power -> SI, divided by hbar omega0 (SI)
        P0 = free_space_power(omega0, p_true / units.dipole_moment, dims, axis) * units.power
        rate = P0 / (sc.hbar * omega0 * units.angular_frequency)
        return rate, f"SI: {_SI_RATE[dims]} (dipole |d| in {_SI_MOMENT[dims]})"
    h = _positive("hbar (normalized)", hbar)
    per = {1: " per normalized area", 2: " per normalized length along z", 3: ""}[dims]
    rate = free_space_power(omega0, p_true, dims, axis) / (h * omega0)
    return rate, (f"normalized: per normalized time unit{per} "
                  f"(hbar = {h:.6g} normalized, |d| normalized)")


def _build(W_down, W_up, err_down, err_up, *, moment, omega0, speed, dims, axis, dipole, units,
           hbar, source, free_power=None) -> EquivalentRates:
    """Ratios from the simulated powers; absolute rates = ratio * Gamma_0 (closed form, |d|)."""
    moment = _positive("simulated moment p0", moment)
    omega0 = _positive("omega0", omega0)
    P0 = free_space_power(omega0, moment, dims, axis) if free_power is None else \
        _positive("free-space power", free_power)
    G0, text = _free_rate_and_units(dims, axis, omega0, dipole, units, hbar)
    gam = 1.0 / math.sqrt(1.0 - speed * speed)
    r_down, r_up = W_down / P0, W_up / P0
    e_down, e_up = err_down / P0, err_up / P0
    return EquivalentRates(
        ratio_down=r_down, ratio_up=r_up, ratio_down_error=e_down, ratio_up_error=e_up,
        gamma_down=r_down * G0, gamma_up=r_up * G0, gamma_free=G0,
        gamma_down_error=e_down * G0, gamma_up_error=e_up * G0,
        rest_power_down=W_down, rest_power_up=W_up, free_space_power=P0,
        moment=moment, omega0=omega0, speed=speed, lorentz_factor=gam, dims=dims, axis=axis,
        units=text, source=source)


# --------------------------------------------------------------------- public entry points


#: what a Doppler spectrum offers: per-point arrays and the source's speed and Omega
_SPECTRUM_FIELDS = ("omega", "branch", "power", "speed", "internal_frequency")


def _is_spectrum(obj) -> bool:
    """Whether ``obj`` reads as a Doppler spectrum (duck typing: this package does not know
    the recorder that measured it)."""
    return all(hasattr(obj, name) for name in _SPECTRUM_FIELDS)


def equivalent_rates(result, *, dipole=None, units=None, hbar=None, moment=None, dims=None,
                     axis=None, omega0=None, speed=None, rtol: float = 1e-8) -> EquivalentRates:
    """Decay and excitation rates from a Doppler-resolved classical computation.

    ``result`` is one of

    * :class:`~fdtd.reference.planar.PlanarReference` (solved here with ``rtol``)
      or :class:`~fdtd.reference.planar.Bulk1D`: everything (moment, omega0,
      speed, dims, axis) is read from it.  A line current (kind "current", at
      rest) is the dipole p0 = I/omega0.
    * :class:`~fdtd.reference.planar.PlanarResult`: give ``moment`` (rest-frame
      p0 of the source), ``omega0``, ``speed``, ``dims`` and ``axis``.
    * a Doppler spectrum, such as the simulator's DopplerSpectrum: any object
      with arrays ``omega``, ``branch`` and ``power`` of one shape (n,) (lab
      frequency, +1/-1 branch label and power of each point), the floats
      ``speed`` and ``internal_frequency`` (Omega, so omega0 = gamma Omega) and
      optionally ``halves`` (the powers of the two half-windows, each (n,), or
      None).  Give ``moment`` (the rest-frame amplitude the run used),
      ``dims`` (2 or 1) and ``axis``.

    Absolute rates: give the transition dipole ``dipole`` = |d| and either
    ``units`` (a UnitSystem; |d| in SI, see :func:`free_space_rate_si`; rates
    in SI) or ``hbar`` (normalized hbar; |d| and rates normalized).  Without
    ``dipole`` only the ratios are filled.

    Errors: Doppler spectrum -- the spread between the two half-windows of the
    branch's rest-frame power (as the simulator's spectrum does for the branch
    powers; the unresolved part of the ledger's work is not attributed to a
    branch), NaN without ``halves``; planar reference -- the branch's quadrature
    error estimate scaled by W'_s / P_s.
    """

    if isinstance(result, PlanarReference):
        src = result.source
        if src.kind == "charge":
            raise ParameterError("a line charge has no internal transition: equivalent rates "
                                 "need a dipole (or line current) source")
        m = src.strength if src.kind == "dipole" else src.strength / src.omega0
        if m == 0.0:
            raise ParameterError("source strength = 0.0: expected a nonzero dipole moment")
        m = abs(m)
        for name, given in (("moment", moment), ("omega0", omega0), ("speed", speed),
                            ("dims", dims), ("axis", axis)):
            if given is not None:
                raise ParameterError(
                    f"{name} = {given!r}: not accepted with a PlanarReference (read from it)")
        return equivalent_rates(result.solve(rtol), dipole=dipole, units=units, hbar=hbar, moment=m,
                                dims=2, axis=src.axis, omega0=src.omega0, speed=src.speed)
    if isinstance(result, Bulk1D):
        for name, given in (("moment", moment), ("omega0", omega0), ("speed", speed),
                            ("dims", dims)):
            if given is not None:
                raise ParameterError(
                    f"{name} = {given!r}: not accepted with a Bulk1D (read from it)")
        return equivalent_rates(result.solve(rtol), dipole=dipole, units=units, hbar=hbar,
                                moment=abs(result.moment), dims=1, axis=axis or "y",
                                omega0=result.omega0, speed=result.speed)
    if not isinstance(result, PlanarResult) and not _is_spectrum(result):
        raise ParameterError(
            f"result = {type(result).__name__}: expected a PlanarReference, Bulk1D, PlanarResult "
            "or DopplerSpectrum (an object with omega, branch and power arrays, speed and "
            "internal_frequency; for a measured power at rest use rates_at_rest)")
    if dims is None:
        raise ParameterError("dims = None: give the dimensionality (1 or 2) of the computation")
    dims = check_dims(dims)
    axis = check_axis(axis, dims)
    if moment is None:
        raise ParameterError(
            "moment = None: give the rest-frame dipole amplitude p0 the computation used")
    moment = _positive("simulated moment p0", moment)
    if isinstance(result, PlanarResult):
        if omega0 is None or speed is None:
            raise ParameterError("a PlanarResult needs omega0= and speed= (the source's rest "
                                 "frequency and speed)")
        w0 = _positive("omega0", omega0)
        v = _checks.in_range("source speed", speed, 0.0, 1.0, hi_open=True)
        per = result.branch.get("internal_power")
        if per is None:
            raise ParameterError("this PlanarResult has no per-branch internal power "
                                 "(branch['internal_power']): recompute it with the current "
                                 "fdtd.reference.planar")
        if not set(per) <= {1, -1}:
            raise ParameterError(f"PlanarResult branches {sorted(per)}: a line charge (branch 0) "
                                 "has no internal transition; equivalent rates need a dipole "
                                 "source")
        gam2 = 1.0 / (1.0 - v * v)
        W, errs = {}, {}
        for s in (1, -1):
            if s not in per:                # branch absent (a source at rest): exactly zero
                W[s], errs[s] = 0.0, 0.0
                continue
            W[s] = gam2 * s * per[s] + 0.0
            e = result.branch.get("error", {}).get(s, math.nan)
            Ps = result.branch["power"].get(s, 0.0)
            errs[s] = e * abs(W[s] / Ps) if Ps != 0.0 else gam2 * e
        return _build(W[1], W[-1], errs[1], errs[-1], moment=moment, omega0=w0, speed=v, dims=dims,
                      axis=axis, dipole=dipole, units=units, hbar=hbar, source="planar reference")
    # a Doppler spectrum (checked above)
    if omega0 is not None or speed is not None:
        raise ParameterError("omega0/speed are read from the DopplerSpectrum: do not give them")
    v = _checks.in_range("spectrum speed", result.speed, 0.0, 1.0, hi_open=True)
    Om = _positive("spectrum internal_frequency", result.internal_frequency)
    W = rest_frame_branch_powers(result.omega, result.branch, result.power, Om, v)
    errs = {1: math.nan, -1: math.nan}
    if getattr(result, "halves", None) is not None:
        errs = {1: 0.0, -1: 0.0}
        for hp in result.halves:
            Wh = rest_frame_branch_powers(result.omega, result.branch, hp, Om, v)
            for s in (1, -1):
                errs[s] = max(errs[s], abs(Wh[s] - W[s]))
    w0 = Om / math.sqrt(1.0 - v * v)
    return _build(W[1], W[-1], errs[1], errs[-1], moment=moment, omega0=w0, speed=v, dims=dims,
                  axis=axis, dipole=dipole, units=units, hbar=hbar, source="Doppler spectrum")


def rates_at_rest(power, omega0, *, moment, dims, axis=None, free_space_power=None,
                  power_error=None, dipole=None, units=None, hbar=None) -> EquivalentRates:
    """Rates of an emitter at rest from its time-averaged classical power.

    ``power`` is the power (normalized; per unit length in 2D, per unit area in
    1D) delivered by the dipole p0 cos(omega0 t) with p0 = ``moment`` (a line
    current I cos(omega0 t) is the dipole p0 = I/omega0).  At rest every emitted
    wave lies on the normal branch: Gamma_down = P/(hbar omega0), Gamma_up = 0,
    lab and rest frame agree.  ``free_space_power``: the same source's power in
    free space measured the same way (e.g. on the same grid), used as the
    denominator of the ratio so that discretization errors common to both
    cancel; by default the closed form :func:`free_space_power`.
    ``power_error``: optional error estimate of ``power``.  Absolute rates as
    in :func:`equivalent_rates`.
    """
    dims = check_dims(dims)
    axis = check_axis(axis, dims)
    P = _checks.finite_number("power", power)
    err = math.nan if power_error is None else _non_negative("power error", power_error)
    return _build(P, 0.0, err, 0.0, moment=moment, omega0=omega0, speed=0.0, dims=dims, axis=axis,
                  dipole=dipole, units=units, hbar=hbar, source="power at rest",
                  free_power=free_space_power)
