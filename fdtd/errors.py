"""Exception hierarchy of gapwake.

Every error raised on purpose by the package derives from :class:`GapwakeError`,
so scripts can catch the whole family at once.  Each class lists its typical
causes; messages always name the offending parameter, the value received and
what would have been accepted.
"""

from __future__ import annotations


class GapwakeError(Exception):
    """Base class of all errors raised deliberately by gapwake."""


class ParameterError(GapwakeError, ValueError):
    """A parameter has a value outside its allowed range.

    Typical causes: a non-positive cell size, a NaN, a negative damping rate,
    a pole with negative resonance frequency squared, an unknown option name.
    """


class ShapeError(ParameterError):
    """An array has the wrong shape for the grid or component it belongs to."""


class StabilityError(ParameterError):
    """A requested time step exceeds the stability limit of the scheme.

    Typical causes: a Courant number chosen for vacuum used with a strongly
    dispersive material (the Lorentz/Drude ADE lowers the limit), a resonance
    frequency so high that Omega*dt >= 2.
    """


class InstabilityError(GapwakeError, RuntimeError):
    """A run became numerically unstable (non-finite fields or runaway energy).

    Typical causes: a time step at the stability limit combined with round-off,
    an absorbing layer graded too steeply, a user-supplied current that grows
    without bound.
    """


class GeometryError(ParameterError):
    """A region, source or recorder does not fit the grid.

    Typical causes: a source placed inside the absorbing layer, a path that
    leaves the grid, a recorder line outside the domain.
    """
