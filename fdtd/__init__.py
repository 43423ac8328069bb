"""gapwake: FDTD simulation of moving sources beside dispersive, lossy dielectrics.

The import package is ``fdtd``.  Data flows one way:
scenario -> :class:`Model` -> :class:`Solver` -> recorders -> analysis -> results.

The names below are loaded on first use, so that light commands (``gapwake threshold``,
``gapwake --version``) do not pay for numba, h5py and the solver.
"""

from fdtd._version import __version__
from fdtd.errors import (GapwakeError, GeometryError, InstabilityError, ParameterError, ShapeError,
                     StabilityError)
from fdtd.media.materials import VACUUM, DrudePole, LorentzPole, Material, NonlocalLorentzPole, lorentz_material

__all__ = [
    "__version__", "CPML", "PEC", "Periodic", "Bloch", "GapwakeError", "GeometryError", "InstabilityError",
    "ParameterError", "ShapeError", "StabilityError", "Everywhere", "HalfSpace", "Polygon",
    "Rectangle", "Slab", "Grid", "VACUUM", "DrudePole", "LorentzPole", "NonlocalLorentzPole", "Material",
    "lorentz_material", "Model", "Solver", "ContinuousWave", "GaussianPulse", "PrescribedCurrent",
    "line_current", "UnitSystem", "Scenario", "load", "check", "run", "open_results", "as_arrays",
]

#: name -> module that defines it (imported on first access)
_LAZY = {
    "CPML": "space.edges", "PEC": "space.edges", "Periodic": "space.edges", "Bloch": "space.edges",
    "Everywhere": "space.geometry", "HalfSpace": "space.geometry", "Polygon": "space.geometry",
    "Rectangle": "space.geometry", "Slab": "space.geometry", "Grid": "space.grid",
    "Model": "space.model", "Solver": "solver.stepper",
    "ContinuousWave": "sources.prescribed", "GaussianPulse": "sources.prescribed",
    "PrescribedCurrent": "sources.prescribed", "line_current": "sources.prescribed",
    "UnitSystem": "units", "Scenario": "scenario.schema",
    # the scenario API pulls in pint, h5py and the experiment procedure
    "load": "api", "check": "api", "run": "api", "open_results": "api", "as_arrays": "api",
}


def __getattr__(name):
    if name in _LAZY:
        import importlib

        value = getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
        globals()[name] = value
        return value
    import importlib.util

    if not name.startswith("_") and importlib.util.find_spec(f"{__name__}.{name}") is not None:
        import importlib

        return importlib.import_module(f".{name}", __name__)     # fdtd.media, fdtd.reference, ...
    raise AttributeError(f"module 'fdtd' has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(__all__))
