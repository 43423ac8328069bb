"""Ready-made set-ups shared by the tests, the validation scripts and the scenario layer.

* :func:`comoving_cell` -- a cell periodic along the motion (x) with absorbing
  layers across it: the steady emission of a uniformly moving source, equivalent
  to an infinite row of sources spaced by the cell length (k_x = 2 pi m / L);
* :func:`commensurate_dt` -- a stable time step that divides a given period
  exactly (transit time L/v, or pi/Omega), so that demodulation windows hold
  whole periods.
"""

from __future__ import annotations

import math

from . import _checks
from .boundaries import CPML, Periodic
from .errors import ParameterError
from .grid import Grid
from .materials import VACUUM, Material
from .model import Model


def comoving_cell(length: float, half_height: float, cell: float, polarization: str = "te",
                  background: Material = VACUUM, regions=(), absorber: float = 1.0,
                  absorber_min_cells: int = 10, y_center: float = 0.0, **model_kw) -> Model:
    """Periodic-x cell of ``length`` with interior ``|y - y_center| <= half_height``.

    The absorbing layers have physical thickness ``absorber`` (normalized
    length; at least ``absorber_min_cells`` cells), so that they stay as thick
    in wavelengths when the cell is refined.  Cell edges sit on integer nodes at
    x = 0 and y = y_center.
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
    return Model(g, regions, background=background, edges=[Periodic(), CPML(npml)], **model_kw)


def commensurate_dt(model: Model, period: float, courant: float = 0.95) -> float:
    """Largest dt <= courant * (stability limit) with period/dt an integer."""
    period = _checks.positive("period", period)
    limit = courant * model.max_stable_dt()
    n = math.ceil(period / limit - 1e-12)
    return period / n


def charge_in_comoving_cell(medium: Material, speed: float, length: float, cell: float,
                            half_height: float = 2.0, shape=None, ramp: float = 2.0,
                            settle: float = 10.0, transits: int = 10, charge: float = 1.0,
                            absorber: float = 1.2, regions=(), height: float = 0.0):
    """Steady Cherenkov emission of a line charge in a co-moving periodic cell (TE_z).

    The charge starts at rest with its electrostatic field, reaches ``speed``
    along +x after a smooth ``ramp``, and the Doppler-resolved work is recorded
    from ``ramp + settle`` over ``transits`` whole transit times L/v with a Hann
    taper.  Returns ``(spectrum, solver)``; ``spectrum`` is a
    :class:`fdtd.spectral.DopplerSpectrum` (one entry per harmonic k_m > 0).
    """
    from .electrostatics import electrostatic_start
    from .moving import MovingCharge
    from .shapes import Shape
    from .spectral import DopplerWorkRecorder
    from .solver import Solver
    from .worldlines import UniformMotion

    model = comoving_cell(length, half_height, cell, "te", background=medium, regions=regions,
                          absorber=absorber)
    transit = length / speed
    solver = Solver(model, dt=commensurate_dt(model, transit))
    q = MovingCharge(charge, UniformMotion((0.0, height), (speed, 0.0), ramp=ramp),
                     shape if shape is not None else Shape(3, 2))
    solver.add_source(q)
    electrostatic_start(solver, [q])
    t0 = ramp + settle
    rec = DopplerWorkRecorder(solver, q, speed, 0.0, start=t0, duration=transits * transit)
    solver.run(until=t0 + transits * transit)
    return rec.result(), solver
