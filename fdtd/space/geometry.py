r"""Regions of space and their rasterisation onto the staggered Yee grid.

A *placement* pairs a :class:`Region` with a :class:`~fdtd.media.materials.Material`;
later placements are painted over earlier ones, and the background material
fills the rest.  Each electric-field component is assigned the material found
in its *dual cell* (the cell of size dx (x dy) centred on the component),
estimated with ``subsamples`` midpoint samples per axis.  A part-filled dual
cell gets the arithmetic mixture ``sum_m f_m eps_m(omega)`` (the
volume-averaged permittivity, exact for the field component tangential to a
planar interface).  Consequences worth knowing:

* a planar interface normal to y placed on an integer node (``y = y0 + j dy``)
  is represented to second order: the tangential component on the interface
  gets the average of the two media, the normal component half a cell away is
  in one medium only;
* with ``subsamples=1`` the assignment is a plain staircase.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from fdtd import _checks
from fdtd.errors import GeometryError, ParameterError
from fdtd.space.grid import Grid
from fdtd.media.materials import Material

AXES = {"x": 0, "y": 1}


def _axis_index(axis: str | int, dims: int) -> int:
    a = AXES.get(axis, axis) if isinstance(axis, str) else axis
    if a not in range(dims):
        raise ParameterError(f"axis = {axis!r} is not allowed: expected one of {list('xy'[:dims])}")
    return int(a)


class Region:
    """A set of points; ``contains(*coords)`` broadcasts over open meshes."""

    def contains(self, *coords: np.ndarray) -> np.ndarray:  # pragma: no cover - abstract
        raise NotImplementedError

    def outline(self) -> list[np.ndarray]:
        """Polylines (arrays of shape (m, 2)) for plots; empty if unbounded."""
        return []


@dataclass(frozen=True)
class Everywhere(Region):
    """All of space."""

    def contains(self, *coords):
        return np.ones((1,) * len(coords), dtype=bool)


@dataclass(frozen=True)
class Slab(Region):
    """Points with ``lo <= coordinate < hi`` along ``axis`` ("x" or "y").

    ``lo=-inf`` or ``hi=+inf`` make a half-space.
    """

    axis: str = "y"
    lo: float = -np.inf
    hi: float = np.inf

    def __post_init__(self) -> None:
        if self.axis not in AXES:
            raise ParameterError(f"slab axis = {self.axis!r} is not allowed: expected 'x' or 'y'")
        if not (self.lo < self.hi):
            raise GeometryError(f"slab along {self.axis}: lo = {self.lo!r} must be below hi = {self.hi!r}")

    def contains(self, *coords):
        a = AXES[self.axis]
        if a >= len(coords):
            raise GeometryError(f"slab along {self.axis!r} on a {len(coords)}D grid")
        c = coords[a]
        return (c >= self.lo) & (c < self.hi)


def HalfSpace(axis: str = "y", below: float | None = None, above: float | None = None) -> Slab:
    """The half-space ``coordinate < below`` or ``coordinate >= above``."""
    if (below is None) == (above is None):
        raise ParameterError("HalfSpace needs exactly one of below= or above=")
    if below is not None:
        return Slab(axis, -np.inf, _checks.finite_number("half-space below", below))
    return Slab(axis, _checks.finite_number("half-space above", above), np.inf)


@dataclass(frozen=True)
class Rectangle(Region):
    """Axis-aligned rectangle ``x0 <= x < x1, y0 <= y < y1`` (2D)."""

    x0: float
    x1: float
    y0: float
    y1: float

    def __post_init__(self) -> None:
        if not (self.x0 < self.x1 and self.y0 < self.y1):
            raise GeometryError(
                f"rectangle needs x0 < x1 and y0 < y1, got x0={self.x0}, x1={self.x1}, "
                f"y0={self.y0}, y1={self.y1}")

    def contains(self, *coords):
        if len(coords) != 2:
            raise GeometryError("a rectangle needs a 2D grid")
        x, y = coords
        return (x >= self.x0) & (x < self.x1) & (y >= self.y0) & (y < self.y1)

    def outline(self):
        return [np.array([[self.x0, self.y0], [self.x1, self.y0], [self.x1, self.y1],
                          [self.x0, self.y1], [self.x0, self.y0]])]


@dataclass(frozen=True)
class Polygon(Region):
    """Simple polygon given by its vertices, shape (m, 2) (2D)."""

    vertices: tuple[tuple[float, float], ...]

    def __post_init__(self) -> None:
        v = np.asarray(self.vertices, dtype=float)
        if v.ndim != 2 or v.shape[1] != 2 or v.shape[0] < 3:
            raise GeometryError(f"polygon vertices have shape {v.shape}: expected (m >= 3, 2)")
        _checks.finite_array("polygon vertices", v)
        object.__setattr__(self, "vertices", tuple(map(tuple, v)))

    def contains(self, *coords):
        """Even-odd (crossing-number) rule: a point is inside when a ray along +x from it
        crosses the boundary an odd number of times (half-open edges, so a vertex on the
        ray counts once)."""
        if len(coords) != 2:
            raise GeometryError("a polygon needs a 2D grid")
        x, y = np.broadcast_arrays(*(np.asarray(c, dtype=float) for c in coords))
        v = np.asarray(self.vertices)
        inside = np.zeros(x.shape, dtype=bool)
        for (x0, y0), (x1, y1) in zip(v, np.roll(v, -1, axis=0)):
            if y0 == y1:
                continue
            straddles = (y0 <= y) != (y1 <= y)
            x_cross = x0 + (y - y0) * (x1 - x0) / (y1 - y0)
            inside ^= straddles & (x < x_cross)
        return inside

    def outline(self):
        v = np.asarray(self.vertices)
        return [np.vstack([v, v[:1]])]


@dataclass(frozen=True)
class Grating(Region):
    """Teeth of width ``duty * period`` repeated along x, for ``top - depth <= y < top``.

    A tooth starts at x = x_offset + n * period.  Periodic along x with
    ``period``; choose a co-moving cell length that is a multiple of it.
    """

    period: float
    duty: float
    top: float
    depth: float
    x_offset: float = 0.0

    def __post_init__(self) -> None:
        _checks.positive("grating period", self.period)
        _checks.in_range("grating duty", self.duty, 0.0, 1.0, lo_open=True)
        _checks.positive("grating depth", self.depth)
        _checks.finite_number("grating top", self.top)

    def contains(self, *coords):
        if len(coords) != 2:
            raise GeometryError("a grating needs a 2D grid")
        x, y = coords
        frac = np.mod((x - self.x_offset) / self.period, 1.0)
        return (frac < self.duty) & (y >= self.top - self.depth) & (y < self.top)


@dataclass(frozen=True)
class Placement:
    region: Region
    material: Material


# ---------------------------------------------------------------------------
def sample_offsets(subsamples: int) -> np.ndarray:
    """Midpoint sample offsets in (-1/2, 1/2), in units of the cell size."""
    s = _checks.positive_int("subsamples", subsamples)
    return -0.5 + (np.arange(s) + 0.5) / s


def material_fractions(grid: Grid, component: str, placements: Sequence[Placement],
                       background: Material, subsamples: int = 4
                       ) -> tuple[list[Material], np.ndarray]:
    """Fill fractions of every material in the dual cell of ``component``.

    Returns
    -------
    materials : list of Material
        Distinct materials, background first.
    counts : ndarray of uint16, shape (n_materials, *reduced_shape)
        Number of samples (out of ``subsamples**dims``) in each material; the
        trailing shape broadcasts to ``grid.shape`` (an axis the geometry does
        not depend on has length 1).
    """
    materials: list[Material] = [background]
    labels_of: list[int] = []
    for p in placements:
        if not isinstance(p.material, Material):
            raise ParameterError(f"placement material {p.material!r}: expected a Material")
        for k, m in enumerate(materials):
            # equal by value (same name, eps_inf and poles) is the same medium: one pole group,
            # so that a spatially dispersive medium split into two regions has no inner surface
            if m is p.material or m == p.material:
                labels_of.append(k)
                break
        else:
            materials.append(p.material)
            labels_of.append(len(materials) - 1)

    base = grid.coordinates(component)
    offs = sample_offsets(subsamples)
    dims = grid.dims
    # The geometry may not depend on every axis: find the reduced shape first.
    probe = [p.region.contains(*base) for p in placements]
    red_shape = np.broadcast_shapes(*(np.shape(x) for x in probe), (1,) * dims) if probe else (1,) * dims
    red_shape = tuple(grid.shape[a] if red_shape[a] != 1 else 1 for a in range(dims))
    red_base = []
    for a in range(dims):
        c = grid.axis_coordinates(component, a)
        if red_shape[a] == 1:
            c = c[:1]
        red_base.append(c.reshape([-1 if b == a else 1 for b in range(dims)]))
    counts = np.zeros((len(materials),) + red_shape, dtype=np.uint16)
    grids = np.meshgrid(*([offs] * dims), indexing="ij")
    for sample in zip(*(g.ravel() for g in grids)):
        pts = tuple(red_base[a] + sample[a] * grid.spacing[a] for a in range(dims))
        label = np.zeros(red_shape, dtype=np.int16)
        for p, lab in zip(placements, labels_of):
            inside = np.broadcast_to(p.region.contains(*pts), red_shape)
            label[inside] = lab
        for k in range(len(materials)):
            counts[k] += (label == k)
    return materials, counts


def cell_map_fractions(grid: Grid, component: str, cell_map: np.ndarray, n_materials: int,
                       periodic: Sequence[bool]) -> np.ndarray:
    """Fill fractions of ``component`` from an explicit per-cell material map.

    ``cell_map[i, j]`` is the index of the material filling cell (i, j), the
    square ``[i, i+1] x [j, j+1]`` in cells.  A component at offset 0 along an
    axis sits on the face between cells ``k-1`` and ``k`` and takes half of
    each; at offset 1/2 it lies inside cell ``k``.  Returns counts of shape
    ``(n_materials, *grid.shape)`` in units of 1/2**dims.
    """
    cell_map = np.asarray(cell_map)
    if cell_map.shape != grid.shape:
        from fdtd.errors import ShapeError

        raise ShapeError(f"material map has shape {cell_map.shape}: expected the grid shape {grid.shape}")
    if not np.issubdtype(cell_map.dtype, np.integer):
        raise ParameterError(f"material map has dtype {cell_map.dtype}: expected integers")
    if cell_map.size and (cell_map.min() < 0 or cell_map.max() >= n_materials):
        raise ParameterError(
            f"material map values span [{cell_map.min()}, {cell_map.max()}]: expected indices in "
            f"[0, {n_materials - 1}] into the materials list")
    offs = grid.offsets(component)
    counts = np.zeros((n_materials,) + grid.shape, dtype=np.uint16)
    onehot_all = [(cell_map == k).astype(np.uint16) for k in range(n_materials)]
    for k in range(n_materials):
        acc = onehot_all[k]
        for a in range(grid.dims):
            if offs[a] == 0.0:
                # node on the face between cells k-1 and k (wrap at the edge: the
                # edge node is periodic or a conductor wall)
                acc = acc + np.roll(acc, 1, axis=a)
            else:
                acc = acc * 2
        counts[k] = acc
    return counts
