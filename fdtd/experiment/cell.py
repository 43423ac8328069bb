"""The co-moving cell and its time step (the "set up" step of the experiment procedure).

* :func:`comoving_cell` -- a cell periodic along the motion (x) with absorbing
  layers across it: the steady emission of a uniformly moving source, equivalent
  to an infinite row of sources spaced by the cell length (k_x = 2 pi m / L);
* :func:`commensurate_dt` -- a stable time step that divides a given period
  exactly (the transit time L/v), so that demodulation windows hold whole periods.
"""

from __future__ import annotations

import math


from fdtd import _checks
from fdtd.space.edges import CPML, Periodic
from fdtd.errors import ParameterError
from fdtd.space.grid import Grid
from fdtd.media.materials import VACUUM, Material
from fdtd.space.model import Model


def comoving_cell(length: float, half_height: float, cell: float, polarization: str = "te",
                  background: Material = VACUUM, regions=(), absorber: float = 1.0,
                  absorber_min_cells: int = 10, y_center: float = 0.0, absorber_params=None,
                  x_edge=None, **model_kw) -> Model:
    """Periodic-x cell of ``length`` with interior ``|y - y_center| <= half_height``.

    The absorbing layers have physical thickness ``absorber`` (normalized
    length; at least ``absorber_min_cells`` cells), so that they stay as thick
    in wavelengths when the cell is refined.  Cell edges sit on integer nodes at
    x = 0 and y = y_center.  ``x_edge``: the x edge (default periodic; a
    :class:`fdtd.space.edges.Bloch` edge for a phased row).
    """
    length = _checks.positive("cell length", length)
    half_height = _checks.positive("cell half_height", half_height)
    cell = _checks.positive("cell size", cell)
    nx = int(round(length / cell))
    if abs(nx * cell - length) > 1e-9 * length:
        raise ParameterError(
            f"cell length = {length!r} is not a whole number of cells of size {cell!r}")
    npml = max(int(round(absorber / cell)), absorber_min_cells)
    nyi = int(round(half_height / cell))
    ny = 2 * nyi + 2 * npml
    g = Grid((nx, ny), (cell, cell), polarization, origin=(0.0, y_center - (nyi + npml) * cell))
    return Model(g, regions, background=background,
                 edges=[x_edge if x_edge is not None else Periodic(), CPML(npml, **(absorber_params or {}))],
                 **model_kw)


def commensurate_dt(model: Model, period: float, courant: float = 0.95) -> float:
    """Largest dt <= courant * (stability limit) with period/dt an integer."""
    period = _checks.positive("period", period)
    limit = courant * model.max_stable_dt()
    n = math.ceil(period / limit - 1e-12)
    return period / n
