"""gapwake: FDTD simulation of moving sources beside dispersive, lossy dielectrics.

The import package is ``fdtd``.  Data flows one way:
scenario -> :class:`Model` -> :class:`Solver` -> recorders -> analysis -> results.
"""

from ._version import __version__
from .boundaries import CPML, PEC, Periodic
from .errors import (GapwakeError, GeometryError, InstabilityError, ParameterError, ShapeError,
                     StabilityError)
from .geometry import Everywhere, HalfSpace, Polygon, Rectangle, Slab
from .grid import Grid
from .materials import VACUUM, DrudePole, LorentzPole, Material, NonlocalLorentzPole, lorentz_material
from .model import Model
from .solver import Solver
from .sources import ContinuousWave, GaussianPulse, PrescribedCurrent, line_current
from .units import UnitSystem

__all__ = [
    "__version__", "CPML", "PEC", "Periodic", "GapwakeError", "GeometryError", "InstabilityError",
    "ParameterError", "ShapeError", "StabilityError", "Everywhere", "HalfSpace", "Polygon",
    "Rectangle", "Slab", "Grid", "VACUUM", "DrudePole", "LorentzPole", "NonlocalLorentzPole", "Material",
    "lorentz_material", "Model", "Solver", "ContinuousWave", "GaussianPulse", "PrescribedCurrent",
    "line_current", "UnitSystem", "load", "check", "run", "open_results", "as_arrays",
]

_API = ("load", "check", "run", "open_results", "as_arrays")


def __getattr__(name):
    # The scenario API pulls in pint, h5py and the runner: load it on first use only.
    if name in _API:
        from . import api

        return getattr(api, name)
    raise AttributeError(f"module 'fdtd' has no attribute {name!r}")
