r"""Yee grids in 1D and 2D, with the staggering of every field component.

All arrays of a grid have the same shape, ``(nx,)`` in 1D and ``(nx, ny)`` in
2D, indexed ``[i]`` or ``[i, j]`` with x first.  A component stored at index
``[i, j]`` sits at position ``origin + ((i + ox) dx, (j + oy) dy)`` where
``(ox, oy)`` is its offset in cells (0 or 1/2):

.. code-block:: text

    1D (Ey, Hz along x)            TE_z (Ex, Ey, Hz)          TM_z (Ez, Hx, Hy)

    Ey   Hz   Ey   Hz                Ey--Hz--Ey                Hx------Hx
    i   i+1/2 i+1  ...               |        |                |        |
                                     Ex  (cell)                Ez--Hy--Ez
                                     |        |                |        |
                                     (i,j)-Ex--                (i,j)-Hy-

    component   1D      TE_z              TM_z
    Ey          (0,)    (0, 1/2)          -
    Ex          -       (1/2, 0)          -
    Ez          -       -                 (0, 0)
    Hz          (1/2,)  (1/2, 1/2)        -
    Hx          -       -                 (0, 1/2)
    Hy          -       -                 (1/2, 0)

Index ``n`` along an axis is identified with index 0 (the kernels wrap).  On a
periodic axis that is the periodic image; on a closed axis the nodes of the
tangential electric field at index 0 are held at zero (a perfect electric
conductor), so the wrapped neighbour of the last cell is that same zero.
Material interfaces normal to an axis are placed best on integer nodes, where
the tangential electric field lives (see :mod:`fdtd.space.geometry`).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from fdtd import _checks
from fdtd.errors import ParameterError

POLARIZATIONS = ("1d", "te", "tm")

#: Electric and magnetic components of each polarization, in kernel order.
E_COMPONENTS = {"1d": ("Ey",), "te": ("Ex", "Ey"), "tm": ("Ez",)}
H_COMPONENTS = {"1d": ("Hz",), "te": ("Hz",), "tm": ("Hx", "Hy")}

#: Offsets (in cells) of every component from its storage index.
OFFSETS = {
    "1d": {"Ey": (0.0,), "Hz": (0.5,)},
    "te": {"Ex": (0.5, 0.0), "Ey": (0.0, 0.5), "Hz": (0.5, 0.5)},
    "tm": {"Ez": (0.0, 0.0), "Hx": (0.0, 0.5), "Hy": (0.5, 0.0)},
}


@dataclass(frozen=True)
class Grid:
    """A uniform Yee grid.

    Parameters
    ----------
    shape : tuple of int
        Number of cells ``(nx,)`` or ``(nx, ny)``.
    spacing : tuple of float
        Cell sizes ``(dx,)`` or ``(dx, dy)`` in normalized length units.
    polarization : {"1d", "te", "tm"}
        "1d": Ey, Hz varying along x.  "te": TE_z, (Ex, Ey, Hz).
        "tm": TM_z, (Ez, Hx, Hy).
    origin : tuple of float, optional
        Position of storage index 0 (integer node), default all zeros.
    """

    shape: tuple[int, ...]
    spacing: tuple[float, ...]
    polarization: str
    origin: tuple[float, ...] = field(default=())

    def __post_init__(self) -> None:
        pol = _checks.one_of("polarization", self.polarization, POLARIZATIONS)
        dims = 1 if pol == "1d" else 2
        shape = tuple(self.shape) if np.ndim(self.shape) else (self.shape,)
        spacing = tuple(self.spacing) if np.ndim(self.spacing) else (self.spacing,)
        if len(shape) != dims:
            raise ParameterError(
                f"grid shape = {shape} has {len(shape)} entries: polarization {pol!r} needs {dims}")
        if len(spacing) != dims:
            raise ParameterError(
                f"grid spacing = {spacing} has {len(spacing)} entries: polarization {pol!r} needs {dims}")
        names = "xy"
        shape = tuple(_checks.positive_int(f"grid shape n{names[a]}", n, minimum=2)
                      for a, n in enumerate(shape))
        spacing = tuple(_checks.positive(f"cell size d{names[a]}", d) for a, d in enumerate(spacing))
        origin = tuple(self.origin) if self.origin else (0.0,) * dims
        if len(origin) != dims:
            raise ParameterError(f"grid origin = {origin}: expected {dims} entries")
        origin = tuple(_checks.finite_number(f"grid origin {names[a]}0", o) for a, o in enumerate(origin))
        object.__setattr__(self, "shape", shape)
        object.__setattr__(self, "spacing", spacing)
        object.__setattr__(self, "origin", origin)

    # ------------------------------------------------------------------
    @property
    def dims(self) -> int:
        return len(self.shape)

    @property
    def n_cells(self) -> int:
        return int(np.prod(self.shape))

    @property
    def e_components(self) -> tuple[str, ...]:
        return E_COMPONENTS[self.polarization]

    @property
    def h_components(self) -> tuple[str, ...]:
        return H_COMPONENTS[self.polarization]

    @property
    def extent(self) -> tuple[float, ...]:
        """Physical size along each axis, ``n * d``."""
        return tuple(n * d for n, d in zip(self.shape, self.spacing))

    @property
    def cell_volume(self) -> float:
        """dx (1D) or dx*dy (2D): the measure that turns a density into a total."""
        return float(np.prod(self.spacing))

    def offsets(self, component: str) -> tuple[float, ...]:
        try:
            return OFFSETS[self.polarization][component]
        except KeyError:
            raise ParameterError(
                f"component = {component!r} does not exist in polarization {self.polarization!r}: "
                f"expected one of {list(OFFSETS[self.polarization])}") from None

    def axis_coordinates(self, component: str, axis: int) -> np.ndarray:
        """1D array of positions of ``component`` along ``axis`` (length n_axis)."""
        off = self.offsets(component)[axis]
        n = self.shape[axis]
        return self.origin[axis] + (np.arange(n) + off) * self.spacing[axis]

    def coordinates(self, component: str) -> tuple[np.ndarray, ...]:
        """Open mesh of positions of ``component`` (broadcastable to ``shape``)."""
        axes = [self.axis_coordinates(component, a) for a in range(self.dims)]
        if self.dims == 1:
            return (axes[0],)
        return (axes[0][:, None], axes[1][None, :])

    def index_of(self, component: str, position: tuple[float, ...]) -> tuple[int, ...]:
        """Nearest storage index of ``component`` to a physical position."""
        idx = []
        for a in range(self.dims):
            off = self.offsets(component)[a]
            k = int(np.rint((position[a] - self.origin[a]) / self.spacing[a] - off))
            idx.append(k)
        return tuple(idx)
