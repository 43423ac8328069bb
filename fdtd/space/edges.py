r"""Edges of the domain: periodic, Bloch-periodic, perfect electric conductor, and CPML.

Bloch-periodic edge (x axis only): the fields obey ``u(x + L) = e^{i theta} u(x)``
with ``theta = k0 L``, so the cell samples the wavenumbers ``k0 + 2 pi m / L``.
The solver then carries complex fields; the boundary condition, the phased
source mapping and the energy bookkeeping are in docs/theory/bloch-cell.md.

CPML (convolutional perfectly matched layer; J. A. Roden and S. D. Gedney,
"Convolution PML (CPML): an efficient FDTD implementation of the CFS-PML for
arbitrary media", Microw. Opt. Technol. Lett. 27, 334 (2000); Taflove &
Hagness, *Computational Electrodynamics*, 3rd ed., sec. 7.9-7.11; formulas
from memory; Roden-Gedney reference checked).  Each derivative normal to the layer becomes

.. math:: \partial_x \to \frac{1}{\kappa}\partial_x + \psi, \qquad
          \psi^{n} = b\,\psi^{n-1} + c\,\partial_x F,

with the complex-frequency-shifted stretch ``s = kappa + sigma/(alpha - i omega)``
and (normalized units, eps0 = 1)

.. math:: b = e^{-(\sigma/\kappa + \alpha)\Delta t}, \qquad
          c = \frac{\sigma}{\sigma\kappa + \kappa^2\alpha}\,(b-1).

Only the curl is changed, so the layer works unmodified next to and inside
dispersive media (a Lorentz slab may run into it).  Grading with depth ``rho``
(0 at the inner face, ``d`` at the outer wall):

``sigma = sigma_max (rho/d)^m``, ``kappa = 1 + (kappa_max - 1)(rho/d)^m``,
``alpha = alpha_max (1 - rho/d)^m_alpha``, and by default
``sigma_max = sigma_factor * 0.8 (m + 1) / Delta`` (the usual optimum for a
polynomial grading, Taflove & Hagness eq. 7.67, from memory; eta = 1 in
normalized units).  Behind every layer sits a conducting wall.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdtd import _checks
from fdtd.errors import ParameterError


class Boundary:
    """One side of one axis."""

    kind = "boundary"


@dataclass(frozen=True)
class Periodic(Boundary):
    """Periodic edge (both sides of the axis must be periodic)."""

    kind = "periodic"


@dataclass(frozen=True)
class Bloch(Periodic):
    """Bloch-periodic edge: ``u(x + L) = exp(i phase) u(x)`` (both ends of the x axis).

    Parameters
    ----------
    phase : float
        theta = k0 L in radians (any finite number; only theta modulo 2 pi matters).
        ``Bloch(0.0)`` is the ordinary periodic edge run with complex fields.

    Allowed on the x axis of 1D and 2D models, with the same phase on both ends;
    refused on y and beside a spatially dispersive (nonlocal) pole
    (docs/theory/bloch-cell.md).
    """

    phase: float = 0.0

    kind = "bloch"

    def __post_init__(self) -> None:
        _checks.finite_number("Bloch phase", self.phase)

    @property
    def wrap_phase(self) -> float:
        """theta reduced to [-pi, pi] (``math.remainder``; exactly 0 for multiples of 2 pi)."""
        return math.remainder(float(self.phase), 2.0 * math.pi)

    @property
    def wrap_factor(self) -> complex:
        """exp(i theta): the factor a field picks up from one cell to the next along +x."""
        th = self.wrap_phase
        return complex(math.cos(th), math.sin(th))


@dataclass(frozen=True)
class PEC(Boundary):
    """Perfect electric conductor: the tangential E on the wall is held at zero."""

    kind = "pec"


@dataclass(frozen=True)
class CPML(Boundary):
    """Convolutional PML backed by a conducting wall.

    Parameters
    ----------
    cells : int
        Thickness in cells (>= 1; 10-20 is typical).
    order : float
        Polynomial grading exponent m for sigma and kappa (>= 0; 3 is typical).
    sigma_factor : float
        sigma_max in units of the polynomial optimum 0.8 (m + 1) / Delta (> 0).
    kappa_max : float
        Largest real coordinate stretch (>= 1); > 1 helps evanescent fields.
    alpha_max : float
        Complex-frequency shift at the inner face, normalized angular
        frequency (>= 0); absorbs low-frequency and evanescent content.
    alpha_order : float
        Grading exponent of alpha (>= 0).
    """

    cells: int = 16
    order: float = 3.0
    sigma_factor: float = 1.0
    kappa_max: float = 1.0
    alpha_max: float = 0.0
    alpha_order: float = 1.0

    kind = "cpml"

    def __post_init__(self) -> None:
        _checks.positive_int("CPML cells", self.cells)
        _checks.non_negative("CPML order", self.order)
        _checks.positive("CPML sigma_factor", self.sigma_factor)
        k = _checks.finite_number("CPML kappa_max", self.kappa_max)
        if k < 1.0:
            raise ParameterError(f"CPML kappa_max = {k!r} is not allowed: expected a number >= 1")
        _checks.non_negative("CPML alpha_max", self.alpha_max)
        _checks.non_negative("CPML alpha_order", self.alpha_order)


BOUNDARY_KINDS = {"periodic": Periodic, "bloch": Bloch, "pec": PEC, "cpml": CPML}


def normalize_edges(edges, dims: int) -> tuple[tuple[Boundary, Boundary], ...]:
    """Turn a user spec into ``((lo, hi), ...)`` per axis, with checks.

    Accepts a single Boundary (used everywhere), a sequence per axis, or a
    sequence of (lo, hi) pairs.  A Bloch edge is accepted on the x axis only,
    on both ends with one phase.
    """
    if isinstance(edges, Boundary):
        edges = [edges] * dims
    edges = list(edges)
    if len(edges) != dims:
        raise ParameterError(f"edges = {edges!r}: expected {dims} entries (one per axis)")
    out = []
    for a, e in enumerate(edges):
        pair = (e, e) if isinstance(e, Boundary) else tuple(e)
        if len(pair) != 2 or not all(isinstance(b, Boundary) for b in pair):
            raise ParameterError(f"edges for axis {'xy'[a]} = {e!r}: expected a Boundary or (lo, hi)")
        if isinstance(pair[0], Periodic) != isinstance(pair[1], Periodic):
            raise ParameterError(
                f"edges for axis {'xy'[a]}: periodic must be set on both sides, got {pair}")
        if isinstance(pair[0], Bloch) or isinstance(pair[1], Bloch):
            if a != 0:
                raise ParameterError(
                    f"edges for axis y = {e!r}: a Bloch edge is not allowed on y: expected it on "
                    "the x axis only (Periodic, PEC or CPML on y)")
            if not (isinstance(pair[0], Bloch) and isinstance(pair[1], Bloch)
                    and pair[0].wrap_phase == pair[1].wrap_phase):
                raise ParameterError(
                    f"edges for axis x = {pair!r}: a Bloch edge must be set on both ends of x with "
                    "the same phase: expected Bloch(theta) or (Bloch(theta), Bloch(theta))")
        out.append(pair)
    return tuple(out)


@dataclass
class AxisProfile:
    """CPML coefficients along one axis, at integer and half-integer nodes.

    Arrays have length ``n`` (the axis size).  ``inv_kappa_*`` multiplies the
    plain difference; ``b_*``, ``c_*`` advance psi (``c`` already divided by the
    cell size).  ``n_lo``/``n_hi`` are the layer thicknesses (0 = no layer);
    psi arrays along this axis have ``n_lo + n_hi`` entries: index ``i`` for
    ``i < n_lo`` and ``i - (n - n_hi) + n_lo`` for ``i >= n - n_hi``.
    """

    n: int
    n_lo: int
    n_hi: int
    inv_kappa_int: np.ndarray
    b_int: np.ndarray
    c_int: np.ndarray
    inv_kappa_half: np.ndarray
    b_half: np.ndarray
    c_half: np.ndarray
    sigma_int: np.ndarray
    sigma_half: np.ndarray

    @property
    def n_pml(self) -> int:
        return self.n_lo + self.n_hi


def axis_profile(n: int, spacing: float, dt: float, lo: Boundary, hi: Boundary) -> AxisProfile:
    """Build the CPML coefficient arrays of one axis for time step ``dt``."""
    x_int = np.arange(n, dtype=float)
    x_half = x_int + 0.5
    sig = {"int": np.zeros(n), "half": np.zeros(n)}
    kap = {"int": np.ones(n), "half": np.ones(n)}
    alp = {"int": np.zeros(n), "half": np.zeros(n)}
    n_lo = lo.cells if isinstance(lo, CPML) else 0
    n_hi = hi.cells if isinstance(hi, CPML) else 0
    if n_lo + n_hi >= n:
        raise ParameterError(
            f"absorbing layers of {n_lo} + {n_hi} cells do not fit an axis of {n} cells")
    for side, layer, count in (("lo", lo, n_lo), ("hi", hi, n_hi)):
        if not count:
            continue
        assert isinstance(layer, CPML)
        smax = layer.sigma_factor * 0.8 * (layer.order + 1.0) / spacing
        for key, x in (("int", x_int), ("half", x_half)):
            rho = (count - x) if side == "lo" else (x - (n - count))
            inside = (rho > 0.0) & (rho <= count)
            r = np.where(inside, rho / count, 0.0)
            sig[key] = np.where(inside, smax * r**layer.order, sig[key])
            kap[key] = np.where(inside, 1.0 + (layer.kappa_max - 1.0) * r**layer.order, kap[key])
            alp[key] = np.where(inside, layer.alpha_max * (1.0 - r) ** layer.alpha_order, alp[key])
    out = {}
    for key in ("int", "half"):
        s, k, a = sig[key], kap[key], alp[key]
        b = np.exp(-(s / k + a) * dt)
        denom = s * k + k * k * a
        c = np.where(s > 0.0, s / np.where(denom > 0, denom, 1.0) * (b - 1.0), 0.0) / spacing
        out[key] = (1.0 / k, np.where(s > 0.0, b, 1.0), c)
    return AxisProfile(n, n_lo, n_hi, out["int"][0], out["int"][1], out["int"][2],
                       out["half"][0], out["half"][1], out["half"][2], sig["int"], sig["half"])
