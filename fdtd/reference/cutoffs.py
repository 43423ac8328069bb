"""Which wavenumbers count, and where the source is: the set-up of a threshold search.

* :class:`Cutoff`: none, a wavenumber ``k_max``, the grid's own ``k <= pi/dx``
  (with the discrete dispersion of a :class:`~fdtd.reference.modes.Scheme`), the
  well-resolved ``k dx <= RESOLVED_KDX``, and a periodic cell's ``k_m = 2 pi m / L``;
* :class:`Geometry`: a source moving through the bulk (1D or 2D), or at height h
  above a half-space across a vacuum gap, with the gap's coupling criterion.

Units: normalized (wavenumbers in 1/ell, lengths in ell).  A *physical* cutoff
is not a Cutoff but a material with a nonlocal pole (:mod:`fdtd.reference.modes`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.reference.modes import Scheme

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
    :class:`~fdtd.media.materials.NonlocalLorentzPole` (see :func:`fdtd.reference.modes.with_nonlocal`).
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
