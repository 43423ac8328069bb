"""Set up: a :class:`~fdtd.scenario.plan.Plan` becomes a model, a solver and a moving source.

Three cases, chosen by the plan:

* 1D: a periodic line of the uniform medium (a dipole sheet crosses it);
* co-moving cell: periodic in x with absorbing layers in y (:func:`fdtd.experiment.cell.comoving_cell`),
  the time step commensurate with the transit time;
* open domain: absorbing layers on every side.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

from fdtd.experiment.cell import commensurate_dt, comoving_cell
from fdtd.scenario.plan import Plan
from fdtd.solver.stepper import Solver
from fdtd.sources.moving import MovingCharge, MovingDipole, NumericalCherenkovWarning
from fdtd.sources.shapes import Shape
from fdtd.sources.worldlines import UniformMotion
from fdtd.space.edges import CPML, Bloch, Periodic
from fdtd.space.grid import Grid
from fdtd.space.model import Model

#: the absorbing layers' complex frequency shift, as a fraction of the source's lab
#: frequency: the Doppler lines reach low frequencies (omega = k v + Omega -> 0 at
#: k = -Omega/v), whose quasi-static evanescent fields a CPML with alpha = 0 handles badly;
#: measured, the work rate then drifts by about 1 % over hundreds of periods
#: (docs/theory/cpml.md)
CPML_ALPHA_FRACTION = 0.2


@dataclass
class Setup:
    model: Model
    solver: Solver
    source: MovingDipole | MovingCharge


def build(p: Plan) -> Setup:
    """Model, solver (ledger on) and the source for a plan (normalized units)."""
    # the lowest frequency the source drives: its internal one, or for a charge in a
    # co-moving cell the first harmonic's k_1 v = 2 pi v / L
    if p.Omega > 0:
        w_low = p.Omega
    elif p.kind == "comoving" and p.speed > 0:
        w_low = 2 * math.pi * p.speed / p.length
    else:
        w_low = 0.0
    alpha = CPML_ALPHA_FRACTION * w_low
    # a phased row (Bloch edge, complex fields) for the isolated emitter's k_x integral
    x_edge = Bloch(p.bloch_phase) if p.bloch_phase else Periodic()
    if p.polarization == "1d":
        model = Model(Grid((p.nx,), (p.cell,), "1d"), background=p.background, edges=x_edge)
        dt = commensurate_dt(model, p.transit, p.courant)
    elif p.kind == "comoving":
        params = {"alpha_max": alpha} if alpha > 0 else {}
        model = comoving_cell(p.length, p.half_height, p.cell, p.polarization, background=p.background,
                              regions=p.placements, absorber=p.absorber, absorber_params=params,
                              subsamples=p.subsamples, x_edge=x_edge)
        dt = commensurate_dt(model, p.transit, p.courant) if p.speed > 0 else None
    else:
        npml = max(int(round(p.absorber / p.cell)), 10)
        nyi = p.ny - 2 * npml
        g = Grid((p.nx, p.ny), (p.cell, p.cell), p.polarization,
                 origin=(-npml * p.cell, -(nyi // 2 + npml) * p.cell))
        model = Model(g, p.placements, background=p.background, edges=CPML(npml, alpha_max=alpha),
                      subsamples=p.subsamples)
        dt = None
    solver = Solver(model, dt=dt, courant=None if dt else p.courant, threads=p.threads)
    shape = Shape(*p.shape)
    if p.source_kind == "dipole":
        wl = UniformMotion((p.x0, p.height), (p.speed, 0.0)) if p.polarization != "1d" else \
            UniformMotion((p.x0,), (p.speed,))
        src = MovingDipole(p.moment, p.omega0, wl, axis=p.axis, ramp=p.ramp, shape=shape)
    else:
        wl = UniformMotion((p.x0, p.height), (p.speed, 0.0), ramp=p.speed_ramp)
        src = MovingCharge(p.charge, wl, shape)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", NumericalCherenkovWarning)   # reported by the plan instead
        solver.attach(src)
    if p.source_kind == "charge":
        from fdtd.sources.electrostatics import electrostatic_start

        electrostatic_start(solver, [src])
    return Setup(model, solver, src)
