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

import numpy as np

from fdtd import _checks
from fdtd.space.edges import CPML, Periodic
from fdtd.errors import ParameterError
from fdtd.space.grid import Grid
from fdtd.media.materials import VACUUM, Material
from fdtd.space.model import Model


def comoving_cell(length: float, half_height: float, cell: float, polarization: str = "te",
                  background: Material = VACUUM, regions=(), absorber: float = 1.0,
                  absorber_min_cells: int = 10, y_center: float = 0.0, absorber_params=None,
                  **model_kw) -> Model:
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
    return Model(g, regions, background=background, edges=[Periodic(), CPML(npml, **(absorber_params or {}))],
                 **model_kw)


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
    from fdtd.sources.electrostatics import electrostatic_start
    from fdtd.sources.moving import MovingCharge
    from fdtd.sources.shapes import Shape
    from fdtd.recording.doppler import DopplerWorkRecorder
    from fdtd.solver.stepper import Solver
    from fdtd.sources.worldlines import UniformMotion

    model = comoving_cell(length, half_height, cell, "te", background=medium, regions=regions,
                          absorber=absorber)
    transit = length / speed
    solver = Solver(model, dt=commensurate_dt(model, transit))
    q = MovingCharge(charge, UniformMotion((0.0, height), (speed, 0.0), ramp=ramp),
                     shape if shape is not None else Shape(3, 2))
    solver.attach(q)
    electrostatic_start(solver, [q])
    t0 = ramp + settle
    rec = DopplerWorkRecorder(solver, q, speed, 0.0, start=t0, duration=transits * transit)
    solver.advance(to_time=t0 + transits * transit)
    return rec.result(), solver


def light_line_safe_length(approx_length: float, cell: float, speed: float, internal_frequency: float,
                           search: float = 0.2) -> float:
    """A cell length near ``approx_length`` (a whole number of cells) whose harmonics
    k_m = 2 pi m / L keep away from the vacuum light-line crossings of the normal
    Doppler line, k = Omega/(1 - v) and k = -Omega/(1 + v).

    A harmonic right at a crossing radiates at grazing incidence: its field
    builds up and leaks out slowly, and a periodic cell then needs very long
    runs (see DEVELOPERS.md, "Periodic cell pitfalls").
    """
    best, best_score = None, -1.0
    n0 = int(round(approx_length / cell))
    span = max(int(round(search * n0)), 1)
    crossings = [internal_frequency / (1 - speed), -internal_frequency / (1 + speed)]
    for n in range(max(n0 - span, 4), n0 + span + 1):
        L = n * cell
        dk = 2 * np.pi / L
        score = min(abs(((c / dk) % 1.0) - 0.5) for c in crossings)
        score = 0.5 - score                      # distance (in units of dk) to the nearest harmonic
        if score > best_score:
            best, best_score = L, score
    return best


def auto_sampling(dt: float, cell: float, speed: float, internal_frequency: float, k_top: float,
                  max_alias_order: int = 3, margin: float = 0.15) -> int:
    """Sampling interval (in steps) for the Doppler recorders.

    At most 80 % of the Nyquist limit of the highest recorded line
    ``k_top v + Omega``, and such that the deposit's grid-crossing aliases, at
    ``2 pi p v / dx`` from each line, do not fold back onto the lines: the
    sampling frequency must not divide them, i.e. ``p k v dt / dx`` stays at
    least ``margin`` away from whole numbers for p = 1..max_alias_order.
    """
    k_nyq = max(int(0.8 * math.pi / ((k_top * speed + internal_frequency) * dt)), 1)
    c = speed * dt / cell
    for k in range(k_nyq, 0, -1):
        ok = True
        for p in range(1, max_alias_order + 1):
            x = p * k * c
            if abs(x - round(x)) < margin:
                ok = False
                break
        if ok:
            return k
    return 1


def dipole_in_comoving_cell(speed: float, height: float, omega0: float, axis: str, length: float,
                            cell: float, regions=(), background: Material = VACUUM,
                            half_height: float = 3.0, absorber: float = 1.5, moment: float = 1.0,
                            shape=None, ramp: float | None = None, settle_tol: float = 2e-3,
                            max_settle: float = 400.0, transits: int = 8, flux_heights=(),
                            polarization: str | None = None, absorber_params=None,
                            m_max: int | str | None = "auto", every: int | str = "auto"):
    """Steady emission of a moving dipole in a co-moving periodic cell.

    The dipole's oscillation is switched on over ``ramp`` (proper time; default
    three lab periods); :func:`fdtd.spectral.run_until_steady` then waits for the
    work rate to settle (``settle_tol``), and the Doppler-resolved work (and the
    fluxes through the lines nearest ``flux_heights``) are recorded over
    ``transits`` transit times with a Hann taper.  Returns a dict with
    ``spectrum`` (:class:`~fdtd.spectral.DopplerSpectrum`), ``fluxes`` (one per
    height), ``steady`` (bool), ``settle_rates``, ``ledger`` (balance over the
    window) and ``solver``.

    ``m_max="auto"`` records the harmonics with k_x dx <= pi/3 (beyond, fewer than
    six cells per wavelength: the grid's phase error is several per cent there,
    and the default cubic x2 shape's form factor sinc^8(k_x dx) is below 0.22
    and falling fast); the ledger's total still counts everything,
    so any power left out shows as the unresolved part.  ``every="auto"``
    samples every k-th step, k at 80 % of the Nyquist limit of the highest
    recorded Doppler line: the recording then costs a fraction of a step.

    The absorbing layers default to a complex frequency shift alpha_max = 0.2 Omega:
    the Doppler lines reach low frequencies (omega = k v + Omega -> 0 at
    k = -Omega/v), whose quasi-static evanescent fields a CPML with alpha = 0
    handles badly (the stretch 1 + i sigma/omega diverges); measured, the work
    rate then drifts by about 1 % over hundreds of periods (DEVELOPERS.md).
    """
    import math

    from fdtd.sources.moving import MovingDipole
    from fdtd.sources.shapes import Shape
    from fdtd.solver.stepper import Solver
    from fdtd.recording.doppler import DopplerFluxRecorder, DopplerWorkRecorder, run_until_steady
    from fdtd.sources.worldlines import UniformMotion

    pol = polarization or ("tm" if axis == "z" else "te")
    gam = 1.0 / math.sqrt(1.0 - speed * speed)
    Omega = omega0 / gam
    if absorber_params is None:
        absorber_params = {"alpha_max": 0.2 * Omega}
    model = comoving_cell(length, half_height, cell, pol, background=background, regions=regions,
                          absorber=absorber, absorber_params=absorber_params)
    transit = length / speed
    solver = Solver(model, dt=commensurate_dt(model, transit))
    if ramp is None:
        ramp = 3 * 2 * math.pi / omega0
    src = MovingDipole(moment, omega0, UniformMotion((0.0, height), (speed, 0.0)), axis=axis,
                       ramp=ramp, shape=shape if shape is not None else Shape(3, 2))
    solver.attach(src)
    solver.advance(to_time=ramp * gam)
    steady, rates = run_until_steady(solver, transit, tol=settle_tol, max_time=max_settle)
    t0 = solver.time
    T = transits * transit
    nx = model.grid.shape[0]
    if m_max == "auto":
        m_max = nx // 6
    if every == "auto":
        every = auto_sampling(solver.dt, cell, speed, Omega,
                              2 * math.pi * (m_max if m_max is not None else nx // 2) / length)
    rec = DopplerWorkRecorder(solver, src, speed, Omega, start=t0, duration=T, m_max=m_max, every=every)
    rows = [model.grid.index_of(model.grid.e_components[0], (0.0, y))[1] for y in flux_heights]
    frec = DopplerFluxRecorder(solver, speed, Omega, rows, start=t0, duration=T, m_max=m_max,
                               every=every) if rows else None
    solver.ledger.sample()
    a = solver.ledger.samples[-1]
    solver.advance(to_time=t0 + T)
    b = solver.ledger.sample()
    led = {"source_work": b.source_work - a.source_work, "outflow": b.outflow - a.outflow,
           "bath": float(b.bath.sum() - a.bath.sum()), "stored_change": b.stored - a.stored,
           "window": b.time - a.time}
    led["residual"] = (led["source_work"] - led["outflow"] - led["bath"] - led["stored_change"]) / \
        max(abs(led["source_work"]), 1e-300)
    spectrum = rec.result()
    spectrum.meta["partial"] = not steady
    fluxes = frec.result() if frec else []
    for fl in fluxes:
        fl.meta["partial"] = not steady
    return {"spectrum": spectrum, "fluxes": fluxes, "steady": steady,
            "settle_rates": rates, "ledger": led, "solver": solver, "source": src,
            "flux_rows": rows}


def dipole_sheet_in_bulk(medium: Material, speed: float, omega0: float, length: float, cell: float,
                         shape=None, ramp: float = 10.0, start: float = 0.0, transits: float = 2.0,
                         m_max: int | None = None, model: Model | None = None, moment: float = 1.0):
    """The 1D bulk case: a dipole sheet (moment along y, rest frequency ``omega0``) moving at
    ``speed`` through a uniform ``medium`` in a periodic cell of ``length`` (``cell`` per node).

    The oscillation switches on over ``ramp`` (proper time); the Doppler-resolved work is
    recorded from ``start`` (lab time, at least the ramp) over ``transits`` transit times with
    the time step commensurate with the transit.  ``m_max`` limits the recorded harmonics
    (default: all).  Returns ``(spectrum, solver)``, ``spectrum`` a
    :class:`fdtd.spectral.DopplerSpectrum`.  Pass ``model`` to reuse one across a scan.
    """
    from fdtd.space.edges import Periodic
    from fdtd.sources.moving import MovingDipole
    from fdtd.sources.shapes import Shape
    from fdtd.solver.stepper import Solver
    from fdtd.recording.doppler import DopplerWorkRecorder
    from fdtd.sources.worldlines import UniformMotion

    n = int(round(length / cell))
    if model is None:
        model = Model(Grid((n,), (cell,), "1d"), background=medium, edges=Periodic())
    transit = length / speed
    solver = Solver(model, dt=commensurate_dt(model, transit))
    src = MovingDipole(moment, omega0, UniformMotion((0.0,), (speed,)), axis="y", ramp=ramp,
                       shape=shape if shape is not None else Shape(3, 2))
    solver.attach(src)
    t0 = max(start, ramp / math.sqrt(1.0 - speed * speed))
    rec = DopplerWorkRecorder(solver, src, speed, src.lab_frequency(), start=t0,
                              duration=transits * transit, m_max=m_max if m_max is not None else n // 2)
    solver.advance(to_time=t0 + transits * transit)
    return rec.result(), solver
