r"""Run a scenario: plan -> build -> advance (resumable) -> results file.

A run is a small state machine so that it can be checkpointed and resumed
bit for bit (same machine and thread count):

co-moving cell (``run.kind = "comoving"``)
    ``ramp``   the dipole's oscillation (or the charge's speed) switches on;
    ``settle`` blocks of one transit time until the dissipated power (outflow +
               bath, Hann-weighted per block) settles to ``run.settle_tolerance``
               or ``run.max_time`` passes (then the results are marked partial);
    ``record`` the Doppler-resolved work and fluxes over ``run.transits``
               transits, snapshots and a line record for the (k_x, omega) map;
open domain (``run.kind = "open"``)
    ``record`` the run itself, with snapshots, the ledger, and a column-passage
               analysis where the source moves uniformly across the domain.

Checkpoints (``run.checkpoint_every`` steps, written at block boundaries)
hold the whole state: fields, polarization, CPML memory, ledger, recorder
accumulators and the runner's own state.
"""

from __future__ import annotations

import json
import math
import signal
import sys
import time
import warnings
from dataclasses import asdict, dataclass, field
from pathlib import Path

import h5py
import numpy as np

from fdtd.io import results as R
from fdtd.errors import GapwakeError
from fdtd.space.geometry import Grating, HalfSpace, Polygon, Rectangle, Slab
from fdtd.space.model import Model
from fdtd.sources.moving import MovingCharge, MovingDipole, NumericalCherenkovWarning, numerical_phase_velocity_limit
from fdtd.scenario.schema import Resolved, Scenario
from fdtd.experiment.cell import auto_sampling, commensurate_dt, comoving_cell, light_line_safe_length
from fdtd.sources.shapes import Shape
from fdtd.solver.stepper import Solver
from fdtd.recording.doppler import DopplerFluxRecorder, DopplerWorkRecorder, PassageWorkRecorder
from fdtd.reference.thresholds import RESOLVED_KDX
from fdtd.sources.worldlines import UniformMotion


# ----------------------------------------------------------------------------- plan
@dataclass
class Plan:
    """Everything a run needs, in normalized units (lengths in ell)."""

    kind: str
    polarization: str
    cell: float
    length: float
    half_height: float
    absorber: float
    nx: int
    ny: int
    courant: float
    speed: float
    height: float
    x0: float
    source_kind: str
    omega0: float | None
    Omega: float
    axis: str
    moment: float
    charge: float
    ramp: float
    speed_ramp: float
    shape: tuple
    transits: int
    settle_tol: float
    max_time: float
    open_time: float | None
    flux_heights: list
    snapshots: int
    snapshot_component: str
    line_component: str | None
    line_height: float | None
    line_every: int
    doppler: bool
    reference: bool
    checkpoint_every: int
    threads: int | None
    passage_span: tuple | None
    subsamples: int
    surfaces: list = field(default_factory=list)
    warnings: list = field(default_factory=list)
    notes: list = field(default_factory=list)

    @property
    def transit(self) -> float:
        return self.length / self.speed if self.speed > 0 else math.inf

    def to_json(self) -> str:
        return json.dumps(asdict(self), default=str)


def _placements(res: Resolved):
    """(placements list, planar Stack or None, surfaces) in normalized units."""
    from fdtd.reference.planar import Stack

    v = res.scenario.values
    g = v["geometry"]
    M = res.materials
    bg = M[g["background"]]
    pl, surfaces, stack = [], [], None
    surf = res.L(g["surface"])
    if g["kind"] == "half-space":
        pl.append((HalfSpace("y", below=surf), M[g["material"]]))
        surfaces = [surf]
        stack = Stack(M[g["material"]], (), bg, surf)
    elif g["kind"] == "slab":
        t = res.L(g["thickness"])
        pl.append((Slab("y", surf - t, surf), M[g["material"]]))
        surfaces = [surf - t, surf]
        stack = Stack(bg, ((M[g["material"]], t),), bg, surf - t)
    elif g["kind"] == "slot":
        gap = res.L(g["gap"])
        lt, ut = res.L(g["lower_thickness"]), res.L(g["upper_thickness"])
        lower, upper = M[g["lower"]], M[g["upper"]]
        pl.append((Slab("y", surf - lt, surf) if lt else HalfSpace("y", below=surf), lower))
        pl.append((Slab("y", surf + gap, surf + gap + ut) if ut else HalfSpace("y", above=surf + gap), upper))
        surfaces = [surf, surf + gap] + ([surf - lt] if lt else []) + ([surf + gap + ut] if ut else [])
        layers, bottom, top = [], lower, upper
        if lt:
            bottom, layers = bg, [(lower, lt)]
        layers.append((bg, gap))
        if ut:
            layers.append((upper, ut))
            top = bg
        stack = Stack(bottom, tuple(layers), top, surf - (lt or 0.0))
    for r in v["regions"]:
        mat = M[r["material"]]
        sh = r["shape"]
        if sh == "half-space":
            reg = HalfSpace("y", below=res.L(r["below"])) if r["below"] is not None else \
                HalfSpace("y", above=res.L(r["above"]))
        elif sh == "slab":
            reg = Slab("y", res.L(r["lo"]), res.L(r["hi"]))
        elif sh == "rectangle":
            reg = Rectangle(res.L(r["x0"]), res.L(r["x1"]), res.L(r["y0"]), res.L(r["y1"]))
        elif sh == "polygon":
            from fdtd.scenario import quantities as Q
            verts = [[Q.parse(c, "length", "regions.vertices", res.scenario.where, res.scenario.natural)
                      / res.ell for c in pt] for pt in r["vertices"]]
            reg = Polygon(tuple(map(tuple, verts)))
        else:
            reg = Grating(res.L(r["period"]), r["duty"], res.L(r["top"]), res.L(r["depth"]))
        pl.append((reg, mat))
        stack = None          # no longer planar in the reference's sense
    if g["kind"] == "none" and not v["regions"]:
        from fdtd.reference.planar import Stack as _S
        stack = _S(bg, (), bg, -1e6) if bg is not None else None
    return pl, stack, surfaces, bg


def plan(res: Resolved) -> Plan:
    v = res.scenario.values
    grid, s, run, rec = v["grid"], v["source"], v["run"], v["record"]
    speed = float(s["speed"])
    pol = grid["polarization"]
    gam = 1.0 / math.sqrt(1 - speed * speed)
    from fdtd.space.grid import E_COMPONENTS, H_COMPONENTS
    from fdtd.scenario.quantities import ScenarioError

    allowed = E_COMPONENTS[pol] + H_COMPONENTS[pol]
    for key in ("snapshot_component", "line_component"):
        if rec.get(key) is not None and rec[key] not in allowed:
            raise ScenarioError(f"{res.scenario.where}: record.{key} = {rec[key]!r} is not a field of the "
                                f"{pol.upper()} grid: expected one of {', '.join(allowed)}")
    if s["kind"] == "dipole":
        omega0 = res.W(s["frequency"])
        Omega = omega0 / gam
        w_hi = Omega / max(1 - speed, 1e-3)
    else:
        omega0, Omega = None, 0.0
        w_hi = res.W(s["max_frequency"]) if s.get("max_frequency") else None
    _pl, _stack, surfaces, _bg = _placements(res)
    warn, notes = [], list(res.notes)
    if pol == "1d":
        _check_1d(res, notes)
    height = res.L(s["height"])
    if s.get("gap_fraction") is not None:
        g = v["geometry"]
        height = res.L(g["surface"]) + s["gap_fraction"] * res.L(g["gap"])
    # --- cell size
    media = [m for m in res.materials.values()]
    if grid.get("cell") is not None:
        cell = res.L(grid["cell"])
    else:
        n_max = 1.0
        if w_hi is not None:
            for m in media:
                w = np.linspace(0.05 * w_hi, w_hi, 200)
                n = np.abs(np.real(np.sqrt(np.asarray(m.permittivity(w), dtype=complex))))
                n_max = max(n_max, float(np.percentile(n, 90)))
            cell = 2 * math.pi / (w_hi * n_max) / grid["cells_per_wavelength"]
        else:
            cell = 0.05
        if surfaces:
            dmin = min(abs(height - y) for y in surfaces)
            if dmin > 0 and cell > dmin / 8:
                cell = dmin / 8
                notes.append("cell limited to 1/8 of the source's distance to the nearest surface")
    length = res.L(grid["length"])
    nx = max(int(round(length / cell)), 8)
    if run["kind"] == "comoving":
        if s["kind"] == "dipole":
            asked, cell_asked = length, length / nx
            length = light_line_safe_length(length, cell_asked, speed, Omega)
            nx = max(int(round(length / cell_asked)), 8)
            if abs(length - asked) > 1e-9 * asked:
                notes.append(f"cell length adjusted from {asked * res.ell:.4g} m to {length * res.ell:.4g} m "
                             "so that no harmonic sits on the vacuum light-line crossing of a Doppler line")
        cell = length / nx
    half_height = res.L(grid["height"]) if grid.get("height") is not None else \
        max(2.0 * max([abs(height)] + [abs(y) for y in surfaces]) + 1.0, 2.0)
    lam0 = 2 * math.pi / (omega0 if omega0 else (w_hi or 1.0))
    absorber = res.L(grid["absorber"]) if grid.get("absorber") is not None else max(lam0 / 4, 10 * cell)
    if pol == "1d":
        ny, half_height, absorber, height = 1, cell, 0.0, 0.0
    elif run["kind"] == "comoving":
        ny = 2 * int(round(half_height / cell)) + 2 * max(int(round(absorber / cell)), 10)
    else:
        ny = int(round(2 * half_height / cell)) + 2 * max(int(round(absorber / cell)), 10)
        nx = nx + 2 * max(int(round(absorber / cell)), 10)
    ramp = s["ramp_periods"] * 2 * math.pi / omega0 if omega0 else 0.0
    speed_ramp = res.T(s["speed_ramp"]) if s.get("speed_ramp") is not None else (2.0 * lam0 / (2 * math.pi)
                                                                                if s["kind"] == "charge" else 0.0)
    max_time = res.T(run["max_time"]) if run.get("max_time") is not None else \
        (ramp * gam + speed_ramp + 60 * (length / speed if speed > 0 else 1.0))
    flux = [res.L(_q(y, res)) for y in rec.get("flux_heights") or ()]
    moment = (s["moment"] / res.units.dipole_moment) if s.get("moment") is not None else 1.0
    charge = (s["charge"] / res.units.charge) if s.get("charge") is not None else 1.0
    order, scale = s["shape_order"], s["shape_scale"]
    reach = (0.5 * (order + 1) * scale + 1.5) * cell
    if pol != "1d" and abs(height) + reach > half_height:
        raise ScenarioError(
            f"{res.scenario.where}: source.height = {height * res.ell:.4g} m does not fit in the interior: "
            f"grid.height = {half_height * res.ell:.4g} m must exceed |height| plus the source's reach "
            f"({reach * res.ell:.4g} m with cell {cell * res.ell:.4g} m and shape {order}x{scale}); "
            "raise grid.height or refine grid.cell")
    p = Plan(kind=run["kind"], polarization=pol, cell=cell, length=length, half_height=half_height,
             absorber=absorber, nx=nx, ny=ny, courant=grid["courant"], speed=speed, height=height,
             x0=res.L(s["x0"]), source_kind=s["kind"], omega0=omega0, Omega=Omega, axis=s["axis"],
             moment=moment, charge=charge, ramp=ramp, speed_ramp=speed_ramp,
             shape=(s["shape_order"], s["shape_scale"]), transits=run["transits"],
             settle_tol=run["settle_tolerance"], max_time=max_time, open_time=res.T(run.get("time")),
             flux_heights=flux if pol != "1d" else [], snapshots=rec["snapshots"],
             snapshot_component=rec.get("snapshot_component") or ("Hz" if pol != "tm" else "Ez"),
             line_component=rec.get("line_component"), line_height=res.L(rec.get("line_height")),
             line_every=rec["line_every"], doppler=rec["doppler"], reference=rec["reference"],
             checkpoint_every=run["checkpoint_every"], threads=grid.get("threads"),
             passage_span=(res.L(rec["passage_start"]), res.L(rec["passage_stop"]))
             if rec.get("passage_start") is not None and rec.get("passage_stop") is not None else None,
             subsamples=grid["subsamples"], surfaces=surfaces, warnings=warn, notes=notes)
    _plan_warnings(p, res)
    return p


def _check_1d(res: Resolved, notes: list) -> None:
    """The 1D grid (Ey, Hz along x) runs one case: a transverse dipole sheet moving along x
    through a uniform medium in a co-moving periodic cell (the bulk anomalous-Doppler set-up)."""
    from fdtd.scenario.quantities import ScenarioError

    v = res.scenario.values
    where = res.scenario.where
    bad = []
    if v["run"]["kind"] != "comoving":
        bad.append(f"run.kind = {v['run']['kind']!r}: expected 'comoving'")
    if v["geometry"]["kind"] != "none" or v["regions"]:
        bad.append(f"geometry.kind = {v['geometry']['kind']!r} (or [[regions]]): expected 'none' with the "
                   "medium as geometry.background (a uniform medium along the motion)")
    if v["source"]["kind"] != "dipole":
        bad.append(f"source.kind = {v['source']['kind']!r}: expected 'dipole' (a uniformly moving charge "
                   "sheet has no radiation field in 1D)")
    elif v["source"]["axis"] != "y":
        bad.append(f"source.axis = {v['source']['axis']!r}: expected 'y' (the 1D grid carries Ey, Hz)")
    if bad:
        raise ScenarioError(f"{where}: grid.polarization = '1d' runs a dipole sheet in a uniform medium; "
                            + "; ".join(bad))
    rec = v["record"]
    if rec.get("flux_heights"):
        notes.append("1D: no flux lines (record.flux_heights is ignored); the whole line is the medium")


def _q(y, res):
    from fdtd.scenario import quantities as Q

    return Q.parse(y, "length", "record.flux_heights", res.scenario.where, res.scenario.natural)


def _anomalous_grid_warning(p: Plan, res: Resolved) -> None:
    """Warn (before the run) when the anomalous branch at this speed can only come from
    under-resolved wavenumbers near the grid's cutoff.

    The grid allows anomalous emission from v_grid on (its discrete dispersion, k <= pi/dx);
    the well-resolved wavenumbers, k dx <= pi/6 (at least 12 cells per wavelength, the
    criterion of the run summary), only from v_res on.  Between the two, whatever the run
    shows on the anomalous branch is a property of the grid (DEVELOPERS.md, "Speed
    thresholds")."""
    if p.source_kind != "dipole" or not p.speed or not p.omega0:
        return
    from fdtd.reference import thresholds as th

    v = res.scenario.values
    g = v["geometry"]
    if p.polarization == "1d":
        media, geo = [res.materials[g["background"]]], th.Geometry.bulk(1)
    else:
        names = [g.get("material")] if g["kind"] in ("half-space", "slab") else \
            [g.get("lower"), g.get("upper")] if g["kind"] == "slot" else []
        media = [res.materials[n] for n in names if n]
        dist = [abs(p.height - y) for y in p.surfaces] or [0.0]
        if not media or min(dist) <= 0:
            return
        geo = th.Geometry.gap(min(dist))
    dt = p.courant * p.cell / math.sqrt(1 if p.polarization == "1d" else 2)
    try:
        for m in media:
            if not m.poles:
                continue
            v_grid = th.anomalous_threshold(m, p.omega0, th.Cutoff.grid(p.cell, dt), geo).speed
            v_res = th.anomalous_threshold(m, p.omega0, th.Cutoff.resolved(p.cell, dt), geo).speed
            if np.isfinite(v_grid) and v_grid <= p.speed and not (np.isfinite(v_res) and v_res <= p.speed):
                p.warnings.append(
                    f"anomalous-Doppler emission into {m.name!r} at {p.speed:.3g} c is possible on this grid "
                    f"only through wavenumbers near its cutoff (threshold {v_grid:.3g} c with the grid's "
                    f"k <= pi/dx, above {p.speed:.3g} c with k dx <= pi/6): the anomalous branch of this "
                    "run will be a property of the grid; refine grid.cell or give the medium a physical "
                    "cutoff (beta_nl)")
    except GapwakeError:      # a material the calculator cannot treat: no warning, no failure
        return


def _plan_warnings(p: Plan, res: Resolved) -> None:
    _anomalous_grid_warning(p, res)
    freqs = []
    if p.omega0:
        freqs = [p.Omega, p.Omega / max(1 - p.speed, 1e-3)]
    elif res.scenario.values["source"].get("max_frequency"):
        freqs = [res.W(res.scenario.values["source"]["max_frequency"])]
    for name, m in res.materials.items():
        for w in freqs:
            with np.errstate(all="ignore"):
                n = abs(np.real(np.sqrt(complex(m.permittivity(w)))))
            if n > 0:
                cpw = 2 * math.pi / (w * n) / p.cell
                if cpw < 10:
                    p.warnings.append(f"only {cpw:.1f} cells per wavelength in {name!r} at omega = "
                                      f"{w * 3e8 / res.ell:.4g} rad/s: refine grid.cell (>= 10 advised)")
    shape = Shape(*p.shape)
    dt_guess = p.courant * p.cell / math.sqrt(2 if p.polarization != "1d" else 1)
    lim = numerical_phase_velocity_limit(dt_guess, p.cell, shape)
    if p.speed > lim:
        p.warnings.append(f"source speed {p.speed:.4g} c exceeds the grid's numerical vacuum phase velocity "
                          f"{lim:.4g} c at the wavenumbers it excites: numerical Cherenkov radiation")
    if p.polarization == "1d":
        return
    half_y = p.source_kind == "dipole" and p.axis == "y"
    reach = (shape.half_support + (0.5 if half_y else 0.0)) * p.cell
    surfaces = _placements(res)[2]
    if surfaces and min(abs(y - p.height) for y in surfaces) < reach:
        p.warnings.append(f"the source's deposit reaches {reach * res.ell:.3g} m from its path, beyond the "
                          f"nearest surface {min(abs(y - p.height) for y in surfaces) * res.ell:.3g} m away: "
                          "the source overlaps a material (raise source.height or refine grid.cell); "
                          "no planar reference for such a point")
    npml = max(int(round(p.absorber / p.cell)), 10)
    inner = p.half_height if p.kind == "comoving" else p.half_height
    margin = inner - abs(p.height)
    if margin < max(5 * p.cell, 2 * math.pi / (p.omega0 or 1.0) / 8):
        p.warnings.append(f"the source runs {margin * res.ell:.3g} m from the absorbing layer: raise grid.height")
    if p.kind == "comoving" and p.speed > 0:
        need = p.ramp / math.sqrt(1 - p.speed**2) + p.speed_ramp + 5 * p.transit
        if p.max_time < need:
            p.warnings.append(f"run.max_time = {p.max_time * res.ell / 3e8:.3g} s leaves less than five transit "
                              "times to settle: the run may stop before a steady state")
    _ = npml


# ----------------------------------------------------------------------------- build
def build(p: Plan, res: Resolved):
    """(model, solver, source, stack) for a plan."""
    placements, stack, _s, bg = _placements(res)
    if p.polarization == "1d":
        from fdtd.space.edges import Periodic
        from fdtd.space.grid import Grid

        model = Model(Grid((p.nx,), (p.cell,), "1d"), background=bg, edges=Periodic())
        dt = commensurate_dt(model, p.transit, p.courant)
    elif p.kind == "comoving":
        params = {"alpha_max": 0.2 * p.Omega} if p.Omega > 0 else {}
        model = comoving_cell(p.length, p.half_height, p.cell, p.polarization, background=bg,
                              regions=placements, absorber=p.absorber, absorber_params=params,
                              subsamples=p.subsamples)
        dt = commensurate_dt(model, p.transit, p.courant) if p.speed > 0 else None
    else:
        from fdtd.space.edges import CPML
        from fdtd.space.grid import Grid

        npml = max(int(round(p.absorber / p.cell)), 10)
        nyi = p.ny - 2 * npml
        g = Grid((p.nx, p.ny), (p.cell, p.cell), p.polarization,
                 origin=(-npml * p.cell, -(nyi // 2 + npml) * p.cell))
        alpha = 0.2 * p.Omega if p.Omega > 0 else 0.0
        model = Model(g, placements, background=bg, edges=CPML(npml, alpha_max=alpha), subsamples=p.subsamples)
        dt = None
    solver = Solver(model, dt=dt, courant=None if dt else p.courant, threads=p.threads)
    shape = Shape(*p.shape)
    y0 = p.height
    if p.source_kind == "dipole":
        wl = UniformMotion((p.x0, y0), (p.speed, 0.0)) if p.polarization != "1d" else \
            UniformMotion((p.x0,), (p.speed,))
        src = MovingDipole(p.moment, p.omega0, wl, axis=p.axis, ramp=p.ramp, shape=shape)
    else:
        wl = UniformMotion((p.x0, y0), (p.speed, 0.0), ramp=p.speed_ramp)
        src = MovingCharge(p.charge, wl, shape)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", NumericalCherenkovWarning)   # reported by check/plan instead
        solver.attach(src)
    if p.source_kind == "charge":
        from fdtd.sources.electrostatics import electrostatic_start

        electrostatic_start(solver, [src])
    return model, solver, src, stack


# ----------------------------------------------------------------------------- state helpers
_SOLVER_SCALARS = ("step_count", "source_work", "injected_abs", "_energy0")


def _save_obj(group, obj, names) -> None:
    for n in names:
        val = getattr(obj, n)
        if val is None:
            group.attrs[n + "__none"] = True
        elif isinstance(val, np.ndarray):
            group.create_dataset(n, data=val)
        else:
            group.attrs[n] = val


def _load_obj(group, obj, names) -> None:
    for n in names:
        if group.attrs.get(n + "__none", False):
            setattr(obj, n, None)
        elif n in group:
            cur = getattr(obj, n)
            if isinstance(cur, np.ndarray) and cur.shape == group[n].shape:
                cur[...] = group[n][...]
            else:
                setattr(obj, n, np.asarray(group[n]))
        else:
            setattr(obj, n, group.attrs[n])


WORK_STATE = ("A", "B", "wsum", "n_samples", "weight_sum", "t_first", "t_last", "work0", "work_last",
              "weighted_work", "weighted_time")
FLUX_STATE = ("_A5", "_B5", "wsum")


def save_checkpoint(path, runner) -> None:
    """Write the complete state of a run (atomically)."""
    path = Path(path)
    tmp = path.with_name(path.name + ".incomplete")
    s = runner.solver
    with h5py.File(tmp, "w") as f:
        f.attrs["format"] = "gapwake-checkpoint"
        f.attrs["scenario_text"] = runner.scenario_text
        f.attrs["runner_state"] = json.dumps(runner.state)
        f.attrs["threads"] = s.threads
        g = f.create_group("solver")
        for c, a in s.fields.items():
            g.create_dataset("field_" + c, data=a)
        for c, (P, Po) in s.polarization.items():
            g.create_dataset("P_" + c, data=P)
            g.create_dataset("Po_" + c, data=Po)
        for k, a in s.psi.items():
            g.create_dataset("psi_" + k, data=a)
        g.create_dataset("bath_rows", data=s.bath_rows)
        _save_obj(g, s, _SOLVER_SCALARS)
        led = f.create_group("ledger")
        led.attrs["source_work"] = s.ledger.source_work
        led.attrs["outflow"] = s.ledger.outflow
        samples = s.ledger.samples
        for name in ("step", "time", "field_e", "field_h", "cross", "source_work", "outflow"):
            led.create_dataset(name, data=np.array([getattr(x, name) for x in samples]))
        led.create_dataset("poles", data=np.array([x.poles for x in samples]))
        led.create_dataset("bath", data=np.array([x.bath for x in samples]))
        if runner.work_rec is not None:
            _save_obj(f.create_group("work_recorder"), runner.work_rec, WORK_STATE)
        if runner.flux_rec is not None:
            _save_obj(f.create_group("flux_recorder"), runner.flux_rec, FLUX_STATE)
        if runner.passage_rec is not None:
            _save_obj(f.create_group("passage_recorder"), runner.passage_rec, ("J", "E", "filled"))
        sn = f.create_group("snapshots")
        sn.create_dataset("data", data=np.array(runner.snaps) if runner.snaps else np.zeros((0,)))
        sn.create_dataset("time", data=np.array(runner.snap_times))
        ln = f.create_group("line")
        ln.create_dataset("data", data=np.array(runner.line_rows) if runner.line_rows else np.zeros((0,)))
        ln.create_dataset("time", data=np.array(runner.line_times))
    import os

    os.replace(tmp, path)


def load_checkpoint(path, runner) -> None:
    from fdtd.solver.ledger import LedgerSample

    s = runner.solver
    with h5py.File(path, "r") as f:
        if f.attrs.get("format") != "gapwake-checkpoint":
            raise GapwakeError(f"{path}: not a gapwake checkpoint")
        if f.attrs["scenario_text"] != runner.scenario_text:
            raise GapwakeError(f"{path}: the checkpoint belongs to a different scenario text")
        runner.state = json.loads(f.attrs["runner_state"])
        g = f["solver"]
        for c, a in s.fields.items():
            a[...] = g["field_" + c][...]
        for c, (P, Po) in s.polarization.items():
            P[...] = g["P_" + c][...]
            Po[...] = g["Po_" + c][...]
        for k, a in s.psi.items():
            a[...] = g["psi_" + k][...]
        s.bath_rows[...] = g["bath_rows"][...]
        _load_obj(g, s, _SOLVER_SCALARS)
        s.step_count = int(s.step_count)
        led = f["ledger"]
        s.ledger.source_work = float(led.attrs["source_work"])
        s.ledger.outflow = float(led.attrs["outflow"])
        s.ledger.samples = [LedgerSample(int(st), float(t), float(e), float(h), float(x), np.array(p),
                                         float(w), np.array(b), float(o))
                            for st, t, e, h, x, p, w, b, o in zip(
                                led["step"], led["time"], led["field_e"], led["field_h"], led["cross"],
                                led["poles"], led["source_work"], led["bath"], led["outflow"])]
        runner._make_recorders()
        if runner.work_rec is not None and "work_recorder" in f:
            _load_obj(f["work_recorder"], runner.work_rec, WORK_STATE)
        if runner.flux_rec is not None and "flux_recorder" in f:
            _load_obj(f["flux_recorder"], runner.flux_rec, FLUX_STATE)
        if runner.passage_rec is not None and "passage_recorder" in f:
            _load_obj(f["passage_recorder"], runner.passage_rec, ("J", "E", "filled"))
        d = np.asarray(f["snapshots/data"])
        runner.snaps = [x for x in d] if d.ndim > 1 else []
        runner.snap_times = list(np.asarray(f["snapshots/time"]))
        d = np.asarray(f["line/data"])
        runner.line_rows = [x for x in d] if d.ndim > 1 else []
        runner.line_times = list(np.asarray(f["line/time"]))


# ----------------------------------------------------------------------------- the runner
def settled(rates, tol: float, group: int = 3) -> bool:
    """Steady: the means of the last two groups of ``group`` blocks agree within ``tol``.

    Comparing group means (not single blocks) tolerates a periodic beat of up to
    ``group`` blocks, e.g. a slow exchange with a weakly damped free wave."""
    if len(rates) < 2 * group:
        return False
    a = float(np.mean(rates[-2 * group:-group]))
    b = float(np.mean(rates[-group:]))
    return abs(a - b) <= tol * max(abs(a), abs(b), 1e-300)



class PointRunner:
    """Run one scenario point (no scan), resumable."""

    def __init__(self, scenario: Scenario, progress: bool | None = None, checkpoint: str | None = None,
                 log=None):
        self.scenario = scenario
        self.scenario_text = scenario.text or json.dumps(scenario.raw, sort_keys=True, default=str)
        self.res = scenario.resolve()
        self.plan = plan(self.res)
        self.model, self.solver, self.source, self.stack = build(self.plan, self.res)
        self.progress = sys.stderr.isatty() if progress is None else bool(progress)
        self.checkpoint = checkpoint
        self.log = log or (lambda msg: None)
        self.state = {"phase": "ramp", "settle_rates": [], "record_start_step": None, "steady": None,
                      "interrupted": False, "last_checkpoint": 0}
        self.work_rec = self.flux_rec = self.passage_rec = None
        self.snaps, self.snap_times = [], []
        self.line_rows, self.line_times = [], []
        self._line_row_index = None

    # -- steps ---------------------------------------------------------------
    @property
    def steps_transit(self) -> int:
        return max(int(round(self.plan.transit / self.solver.dt)), 1)

    def _record_steps(self) -> int:
        if self.plan.kind == "comoving":
            return self.plan.transits * self.steps_transit
        return int(math.ceil(self.plan.open_time / self.solver.dt))

    def _make_recorders(self) -> None:
        st = self.state
        if st["record_start_step"] is None:
            return
        p, s = self.plan, self.solver
        t0 = st["record_start_step"] * s.dt
        T = self._record_steps() * s.dt
        if p.kind == "comoving" and p.doppler and p.speed > 0:
            nx = self.model.grid.shape[0]
            # 2D: harmonics with k_x dx <= pi/3 (the rest shows as unresolved work); 1D is cheap:
            # all of them, so that power near the grid's cutoff is seen and flagged
            m_max = (nx // 6 if p.polarization != "1d" else nx // 2) if p.source_kind == "dipole" else None
            every = auto_sampling(s.dt, p.cell, p.speed, p.Omega,
                                  2 * math.pi * (m_max or nx // 2) / p.length) if m_max else 1
            self.work_rec = DopplerWorkRecorder(s, self.source, p.speed, p.Omega, start=t0, duration=T,
                                                m_max=m_max, every=every)
            rows = [self.model.grid.index_of(self.model.grid.e_components[0], (0.0, y))[1]
                    for y in p.flux_heights] if p.polarization != "1d" else []
            if rows:
                self.flux_rec = DopplerFluxRecorder(s, p.speed, p.Omega, rows, start=t0, duration=T,
                                                    m_max=m_max, every=every)
        if p.kind == "open" and p.speed > 0 and p.polarization != "1d":
            # columns passed while the motion is uniform, well inside the domain
            g = self.model.grid
            if p.passage_span is not None:
                x_lo, x_hi = p.passage_span
                half = min(0.15 * (x_hi - x_lo), 0.5 * (x_lo - p.x0))
                x_lo, x_hi = x_lo - half, x_hi + half
            else:
                x_lo = max(p.x0 + p.speed * (p.speed_ramp + 0.2 * p.open_time), g.origin[0] + 0.3 * p.length)
                x_hi = p.x0 + p.speed * p.open_time - 0.2 * p.open_time * p.speed
                half = 0.15 * (x_hi - x_lo)
            if x_hi - x_lo > 4 * p.cell and (p.Omega == 0 or (x_hi - x_lo) / p.speed > 2 * math.pi / p.Omega):
                try:
                    self.passage_rec = PassageWorkRecorder(s, self.source, p.speed, p.Omega, x_lo + half,
                                                           x_hi - half, half_window=half)
                except GapwakeError as exc:
                    self.plan.notes.append(f"no passage analysis: {exc}")

    def _record_extras(self) -> None:
        """Snapshots and the line record (called once per step during recording)."""
        p, s = self.plan, self.solver
        n0 = self.state["record_start_step"]
        n_rec = self._record_steps()
        k = s.step_count - n0
        if p.snapshots:
            every = max(n_rec // p.snapshots, 1)
            if k % every == 0 and len(self.snaps) < p.snapshots:
                self.snaps.append(np.array(s.fields[p.snapshot_component], dtype=np.float32))
                self.snap_times.append(s.time)
        if p.line_component and k % p.line_every == 0:
            if p.polarization == "1d":
                self.line_rows.append(np.array(s.fields[p.line_component]))
                self.line_times.append(s.time)
                return
            if self._line_row_index is None:
                self._line_row_index = self.model.grid.index_of(p.line_component, (0.0, p.line_height or 0.0))[1]
            self.line_rows.append(np.array(s.fields[p.line_component][:, self._line_row_index]))
            self.line_times.append(s.time)

    def _maybe_checkpoint(self) -> None:
        if self.checkpoint and self.plan.checkpoint_every:
            if self.solver.step_count - self.state["last_checkpoint"] >= self.plan.checkpoint_every:
                self.state["last_checkpoint"] = self.solver.step_count
                save_checkpoint(self.checkpoint, self)

    def _advance(self, n_steps: int, extras: bool = False) -> None:
        s = self.solver
        for _ in range(n_steps):
            s.step()
            if extras:
                self._record_extras()
            if s.step_count % s.check_every == 0:
                s.check_health()

    # -- the state machine -------------------------------------------------------
    def execute(self, stop_after_steps: int | None = None) -> str:
        """Advance to the end (or until ``stop_after_steps`` total steps, for tests)."""
        p, s, st = self.plan, self.solver, self.state
        if s.ledger.samples == []:
            s.ledger.sample()
        block = self.steps_transit if p.kind == "comoving" else max(int(math.ceil(p.open_time / s.dt)) // 50, 1)
        t_wall, step_wall = time.perf_counter(), s.step_count
        try:
            while st["phase"] != "done":
                if stop_after_steps is not None and s.step_count >= stop_after_steps:
                    return "stopped"
                if st["phase"] == "ramp":
                    n_ramp = int(math.ceil((p.ramp / math.sqrt(1 - p.speed**2) + p.speed_ramp) / s.dt))
                    n = min(block, n_ramp - s.step_count)
                    if p.kind == "open" or n <= 0:
                        st["phase"] = "settle" if p.kind == "comoving" else "record"
                        if st["phase"] == "record":
                            st["record_start_step"] = s.step_count
                            self._make_recorders()
                        continue
                    self._advance(n)
                elif st["phase"] == "settle":
                    rate = self._settle_block()
                    st["settle_rates"].append(rate)
                    if not self.progress:
                        self.log(f"  settling: t = {s.time * self.res.units.time * 1e15:.5g} fs, dissipated "
                                 f"power {rate * self.res.units.power:.6g} {self._power_unit}")
                    if settled(st["settle_rates"], p.settle_tol):
                        st["steady"] = True
                    elif s.time >= p.max_time:
                        st["steady"] = False
                        warnings.warn(
                            f"{self.scenario.where}: the dissipated power did not settle to "
                            f"run.settle_tolerance = {p.settle_tol:g} by t = {s.time * self.res.units.time * 1e15:.5g} fs: "
                            "raise run.max_time, add loss, or accept a larger tolerance; the results "
                            "are marked partial", stacklevel=2)
                    if st["steady"] is not None:
                        st["phase"] = "record"
                        st["record_start_step"] = s.step_count
                        s.ledger.sample()
                        self._make_recorders()
                else:   # record
                    end = st["record_start_step"] + self._record_steps()
                    n = min(block, end - s.step_count)
                    if n <= 0:
                        s.ledger.sample()
                        st["phase"] = "done"
                        continue
                    self._advance(n, extras=True)
                    s.ledger.sample()
                    if p.kind == "open" and not self.progress:
                        self.log(f"  t = {s.time * self.res.units.time * 1e15:.5g} fs of "
                                 f"{p.open_time * self.res.units.time * 1e15:.5g} fs")
                s.ledger.sample()       # one point per block (a transit), in every phase
                self._maybe_checkpoint()
                if self.progress:
                    self._show_progress(t_wall, step_wall)
        except KeyboardInterrupt:
            st["interrupted"] = True
            return "interrupted"
        finally:
            if self.progress:
                sys.stderr.write("\n")
        return "completed"

    @property
    def _power_unit(self) -> str:
        return "W/m^2" if self.plan.polarization == "1d" else "W/m"

    def expected_steps(self) -> int:
        """Best current guess of the total step count (the settling length is only known at the end)."""
        p, s, st = self.plan, self.solver, self.state
        if p.kind == "open":
            return self._record_steps()
        n_ramp = int(math.ceil((p.ramp / math.sqrt(1 - p.speed**2) + p.speed_ramp) / s.dt))
        if st["record_start_step"] is not None:
            return st["record_start_step"] + self._record_steps()
        settle = max(len(st["settle_rates"]) + 1, 6) * self.steps_transit
        return n_ramp + settle + self._record_steps()

    def _show_progress(self, t_wall: float, step_wall: int) -> None:
        s, st = self.solver, self.state
        total = max(self.expected_steps(), s.step_count)
        elapsed = time.perf_counter() - t_wall
        done = s.step_count - step_wall
        left = elapsed / done * (total - s.step_count) if done > 0 else float("nan")
        frac = s.step_count / total
        bar = "#" * int(24 * frac) + "-" * (24 - int(24 * frac))
        t_si = s.time * self.res.units.time
        sys.stderr.write(f"\r  [{bar}] {st['phase']:6s} step {s.step_count:,}/~{total:,}  "
                         f"t = {t_si * 1e15:.4g} fs  elapsed {elapsed:.0f} s  left ~{left:.0f} s ")
        sys.stderr.flush()

    def _settle_block(self) -> float:
        s = self.solver
        steps = self.steps_transit
        ws = np.empty(steps)

        def dissipated():
            return s.ledger.outflow + float(s.bath_rows.sum()) * s.model.grid.cell_volume / (4 * s.dt)

        prev = dissipated()
        for n in range(steps):
            s.step()
            if s.step_count % s.check_every == 0:
                s.check_health()
            now = dissipated()
            ws[n] = now - prev
            prev = now
        x = (np.arange(steps) + 0.5) / steps
        w = np.sin(np.pi * x) ** 2
        return float(np.sum(w * ws) / (np.sum(w) * s.dt))

    # -- results -------------------------------------------------------------------
    def _grid_cutoff_check(self, spec, summary: dict) -> None:
        """Warn when the anomalous branch lives mostly near the grid's wavenumber cutoff."""
        p = self.plan
        if abs(spec.unresolved) > 0.1 * abs(spec.total) and spec.total != 0:
            msg = (f"{100 * abs(spec.unresolved / spec.total):.0f} % of the source's work is not on the recorded "
                   "Doppler points (harmonics beyond k_x dx = pi/3, or a transient): part of it may come from "
                   "wavenumbers near the grid's cutoff; refine grid.cell or run longer")
            summary["warning_unresolved"] = {"value": msg, "error": None, "units": "", "normalized": None}
        share = grid_cutoff_share(spec, p.cell)
        if share is None:
            return
        summary["anomalous_share_near_grid_cutoff"] = {
            "value": share, "error": None, "units": "1", "normalized": share}
        significant = spec.anomalous > max(1e-6 * abs(spec.total), 2.0 * spec.error("anomalous"))
        if share > GRID_CUTOFF_SHARE and significant:
            msg = (f"{100 * share:.0f} % of the anomalous-branch power comes from k_x dx > pi/6 (fewer than "
                   "12 cells per wavelength, near the grid's cutoff pi/dx): there it is a property of the "
                   "grid, not of the physics; refine grid.cell and watch whether it moves, or give the "
                   "medium a physical cutoff (a pole's beta_nl)")
            if msg not in p.warnings:
                p.warnings.append(msg)
            summary["warning_grid_cutoff"] = {"value": msg, "error": None, "units": "", "normalized": None}

    def _reference_rate_ratios(self, ref: dict, summary: dict) -> None:
        """Gamma/Gamma_0 of the planar reference on the same k set (like for like)."""
        from fdtd.reference import rates as Q

        p = self.plan
        ks, bs, ps = [], [], []
        for b, (k, pw) in ref.items():
            ks.append(k)
            bs.append(np.full(k.shape, b))
            ps.append(pw)
        k, b, pw = np.concatenate(ks), np.concatenate(bs), np.concatenate(ps)
        W = Q.rest_frame_branch_powers(k * p.speed + b * p.Omega, b, pw, p.Omega, p.speed)
        dims = 1 if p.polarization == "1d" else 2
        P0 = Q.free_space_power(p.omega0, abs(p.moment), dims, p.axis if dims == 2 else "y")
        for name, s in (("reference_decay_rate_ratio", 1), ("reference_excitation_rate_ratio", -1)):
            summary[name] = {"value": W[s] / P0, "error": None, "units": "1", "normalized": W[s] / P0}

    def _quantum_rates(self, spec, summary: dict) -> None:
        """Equivalent two-level rates (fdtd/rates.py): rest frame, per unit proper time."""
        from fdtd.reference import rates as Q

        p, u = self.plan, self.res.units
        d = self.scenario.values["source"].get("transition_dipole")
        if d is None:
            d = 0.5 * abs(p.moment) * u.dipole_moment      # p0 = 2|d|
        dims = 1 if p.polarization == "1d" else 2
        axis = p.axis if dims == 2 else "y"
        try:
            r = Q.equivalent_rates(spec, moment=abs(p.moment), dims=dims, axis=axis, dipole=d, units=u)
        except GapwakeError as exc:
            p.notes.append(f"no equivalent rates: {exc}")
            return
        unit = Q._SI_RATE[dims]

        def put(name, value, err, units):
            summary[name] = {"value": float(value), "units": units, "normalized": None,
                             "error": None if not math.isfinite(err) else float(err)}

        put("decay_rate", r.gamma_down, r.gamma_down_error, unit)
        put("excitation_rate", r.gamma_up, r.gamma_up_error, unit)
        put("free_space_decay_rate", r.gamma_free, math.nan, unit)
        put("decay_rate_ratio", r.ratio_down, r.ratio_down_error, "1")
        put("excitation_rate_ratio", r.ratio_up, r.ratio_up_error, "1")
        for k in ("decay_rate_ratio", "excitation_rate_ratio"):
            summary[k]["normalized"] = summary[k]["value"]
        summary["transition_dipole"] = {"value": float(d), "error": None, "units": Q._SI_MOMENT[dims].split()[0],
                                        "normalized": None}

    def collect(self, status: str) -> dict:
        """Arrays and summary of this point (normalized units + unit labels)."""
        p, s, u = self.plan, self.solver, self.res.units
        out = {"plan": p, "status": status, "ledger": s.ledger}
        summary = {}

        def fig(name, value, quantity, error=None):
            si_name, factor = R.si_of(u, quantity)
            summary[name] = {"value": None if value is None else float(value) * factor,
                             "error": None if error is None else float(error) * factor,
                             "units": si_name, "normalized": None if value is None else float(value)}

        led = s.ledger
        if len(led.samples) >= 2:
            a, b = led.samples[0], led.samples[-1]
            scale = max(abs(b.source_work - a.source_work), abs(b.stored), abs(a.stored), 1e-300)
            resid = ((b.stored - a.stored) - (b.source_work - a.source_work) + (b.bath.sum() - a.bath.sum())
                     + (b.outflow - a.outflow)) / scale
            summary["ledger_residual"] = {"value": float(resid), "error": None, "units": "1", "normalized": float(resid)}
        if self.work_rec is not None and self.work_rec.n_samples:
            spec = self.work_rec.result()
            spec.meta["partial"] = status != "complete" or self.state.get("steady") is False
            out["spectrum"] = spec
            for name, attr, q in (("total_power", "total", "power"), ("normal_power", "normal", "power"),
                                  ("anomalous_power", "anomalous", "power"),
                                  ("drag_force", "drag_force", "force"),
                                  ("motion_power", "motion_power", "power"),
                                  ("internal_power", "internal_power", "power")):
                err = spec.error(attr) if attr != "motion_power" else p.speed * spec.error("drag_force")
                fig(name, getattr(spec, attr), q, err)
            fig("unresolved_power", spec.unresolved, "power")
            self._grid_cutoff_check(spec, summary)
            if p.source_kind == "dipole" and p.speed > 0:
                self._quantum_rates(spec, summary)
        if self.flux_rec is not None and self.flux_rec.wsum[0] > 0:
            out["fluxes"] = self.flux_rec.result()
            for y, fl in zip(p.flux_heights, out["fluxes"]):
                fig(f"flux_up_at_{y * self.res.ell * 1e9:.4g}nm", fl.total, "power")
        if self.passage_rec is not None and np.all(self.passage_rec.filled == self.passage_rec.n_win):
            spec = self.passage_rec.result()
            out["spectrum"] = spec
            for name, attr in (("total_power", "total"), ("normal_power", "normal"),
                               ("anomalous_power", "anomalous")):
                fig(name, getattr(spec, attr), "power")
            fig("drag_force", spec.drag_force, "force")
        if self.stack is not None and p.reference and p.speed > 0 and p.kind == "comoving" and \
                "spectrum" in out:
            from fdtd.reference.planar import Bulk1D, MovingLineSource, PlanarReference

            kind = "dipole" if p.source_kind == "dipole" else "charge"
            try:
                if p.polarization == "1d":
                    shape = Shape(*p.shape)
                    ref = Bulk1D(self.stack.bottom, p.speed, p.omega0, p.moment,
                                 form_factor=lambda k: shape.form_factor(k, p.cell))
                else:
                    src = MovingLineSource(kind, p.speed, p.height, p.moment if kind == "dipole" else p.charge,
                                           p.omega0 or 0.0, p.axis if kind == "dipole" else "y")
                    ref = PlanarReference.like_simulation(self.stack, src, Shape(*p.shape), p.cell)
                out["reference"] = ref.periodic(p.length)
                tot = sum(v[1].sum() for v in out["reference"].values())
                fig("reference_total_power", tot, "power")
                if 1 in out["reference"]:
                    fig("reference_normal_power", out["reference"][1][1].sum(), "power")
                if -1 in out["reference"]:
                    fig("reference_anomalous_power", out["reference"][-1][1].sum(), "power")
                if kind == "dipole":
                    self._reference_rate_ratios(out["reference"], summary)
                    # a single emitter (the continuum k_x integral), not the cell's row of emitters
                    from fdtd.reference.rates import equivalent_rates

                    one = equivalent_rates(ref)
                    for name, val in (("single_emitter_decay_rate_ratio", one.ratio_down),
                                      ("single_emitter_excitation_rate_ratio", one.ratio_up)):
                        summary[name] = {"value": val, "error": None, "units": "1", "normalized": val}
                    row = summary.get("reference_decay_rate_ratio", {}).get("value")
                    if row is not None and abs(row - one.ratio_down) > 0.1 * abs(one.ratio_down):
                        what = "sheets" if p.polarization == "1d" else "emitters"
                        msg = (f"the cell's row of {what} (spaced by grid.length) decays at "
                               f"{row:.3g} Gamma_0, an isolated one at {one.ratio_down:.3g} Gamma_0 "
                               "(reference): the cell samples k_x too coarsely for single-emitter "
                               "rates; lengthen grid.length, or quote the single_emitter_* figures")
                        summary["warning_row_of_emitters"] = {"value": msg, "error": None, "units": "",
                                                              "normalized": None}
            except GapwakeError as exc:
                p.notes.append(f"no reference: {exc}")
        summary["steady"] = {"value": self.state.get("steady"), "error": None, "units": "", "normalized": None}
        summary["status"] = {"value": status, "error": None, "units": "", "normalized": None}
        summary["speed"] = {"value": p.speed, "error": None, "units": "c", "normalized": p.speed}
        if p.omega0:
            fig("rest_frequency", p.omega0, "angular_frequency")
        fig("height", p.height, "length")
        summary["steps"] = {"value": s.step_count, "error": None, "units": "", "normalized": s.step_count}
        out["summary"] = summary
        return out


#: anomalous power at k_x dx above this (fewer than 12 cells per wavelength) counts as "near
#: the grid's cutoff" pi/dx: there the scheme's phase error is several per cent and the
#: lower polariton's discrete branch departs from the continuum one (common practice: 10-20
#: cells per wavelength for a few per cent of phase error on a Yee grid); the same constant
#: as the threshold calculator's "resolved" wavenumbers
GRID_CUTOFF_KDX = RESOLVED_KDX
GRID_CUTOFF_SHARE = 0.5


def grid_cutoff_share(spec, cell: float) -> float | None:
    """Share of the anomalous-branch power (sum of |P| over its points) carried by
    k_x dx > GRID_CUTOFF_KDX (None if the anomalous branch carries no power)."""
    sel = spec.branch == -1
    # |P| per point: points the window could not settle may come out slightly negative
    tot = float(np.sum(np.abs(spec.power[sel])))
    if not sel.any() or tot <= 0:
        return None
    hi = sel & (np.abs(spec.kx) * cell > GRID_CUTOFF_KDX)
    return float(np.sum(np.abs(spec.power[hi]))) / tot


def _field_quantity(component: str) -> str:
    return {"E": "field", "H": "magnetic_field"}.get(component[:1], "energy_density")


def write_point(group, runner: PointRunner, data: dict) -> None:
    """Write one point's results into an HDF5 group (layout in fdtd/results.py)."""
    u = runner.res.units
    p = runner.plan
    s = runner.solver
    g = group.require_group("grid")
    g.attrs.update({"polarization": p.polarization, "shape": s.grid.shape, "spacing": s.grid.spacing,
                    "origin": s.grid.origin, "dt": s.dt, "courant": s.courant_number})
    geo = group.require_group("geometry")
    geo.attrs["surfaces"] = np.array(p.surfaces, dtype=float)
    geo.attrs["source_height"] = p.height
    geo.attrs["kind"] = runner.scenario.values["geometry"]["kind"]
    model = runner.model
    comp = model.grid.e_components[0]
    dom = np.array([int(np.argmax(m.fractions)) if not m.is_wall else -1 for m in model.mixtures], dtype=np.int16)
    mat_map = dom[model.mix_maps[comp]].astype(np.int8)
    R.put(geo, "material_map", mat_map, "dimensionless", u,
          f"index of the dominant material at each {comp} node (-1: conducting wall)")
    geo.attrs["material_names"] = json.dumps([m.name for m in model.materials])
    for k, pl in enumerate(runner.model.placements):
        for j, line in enumerate(pl.region.outline()):
            R.put(geo, f"outline_{k}_{j}", line, "length", u, "region outline (x, y)")
    led = group.require_group("ledger")
    smp = data["ledger"].samples
    R.put(led, "time", [x.time for x in smp], "time", u)
    R.put(led, "stored", [x.stored for x in smp], "energy", u, "stored field and pole energy in the ledger box")
    R.put(led, "source_work", [x.source_work for x in smp], "energy", u, "cumulative work done by the source")
    R.put(led, "bath", [float(x.bath.sum()) for x in smp], "energy", u, "cumulative heat handed to the bath")
    R.put(led, "outflow", [x.outflow for x in smp], "energy", u, "cumulative outflow into the absorbing layers")
    if "spectrum" in data:
        sp = data["spectrum"]
        d = group.require_group("doppler")
        R.put(d, "kx", sp.kx, "wavenumber", u)
        R.put(d, "omega", sp.omega, "angular_frequency", u, "lab frequency of each Doppler point")
        R.put(d, "branch", sp.branch, "dimensionless", u, "+1 normal, -1 anomalous, 0 charge")
        R.put(d, "power", sp.power, "power", u, "work rate per Doppler point")
        if sp.halves is not None:
            R.put(d, "power_half1", sp.halves[0], "power", u, "first half-window estimate")
            R.put(d, "power_half2", sp.halves[1], "power", u, "second half-window estimate")
        d.attrs.update({"speed": p.speed, "internal_frequency": p.Omega, "partial": bool(sp.meta.get("partial"))})
        for k, (fl, y) in enumerate(zip(data.get("fluxes", []), p.flux_heights)):
            fg = d.require_group(f"flux_{k}")
            fg.attrs["height"] = y
            R.put(fg, "kx", fl.kx, "wavenumber", u)
            R.put(fg, "omega", fl.omega, "angular_frequency", u)
            R.put(fg, "branch", fl.branch, "dimensionless", u)
            R.put(fg, "flux", fl.power, "power", u, "upward Poynting flux per Doppler point")
    if "reference" in data:
        rg = group.require_group("reference")
        for b, name in ((1, "normal"), (-1, "anomalous"), (0, "charge")):
            if b in data["reference"]:
                k, pw = data["reference"][b]
                R.put(rg, f"kx_{name}", k, "wavenumber", u)
                R.put(rg, f"power_{name}", pw, "power", u, "planar reference, same k set and source shape")
    if runner.snaps:
        sg = group.require_group("snapshots")
        c = p.snapshot_component
        R.put(sg, c, np.array(runner.snaps), _field_quantity(c), u,
              f"{c} snapshots (H in units of E0/eta0)")
        R.put(sg, "time", runner.snap_times, "time", u)
        R.put(sg, "x", runner.model.grid.axis_coordinates(c, 0), "length", u)
        if runner.model.grid.dims == 2:
            R.put(sg, "y", runner.model.grid.axis_coordinates(c, 1), "length", u)
        sg.attrs["component"] = c
    if runner.line_rows:
        lg = group.require_group("line")
        R.put(lg, "data", np.array(runner.line_rows), _field_quantity(p.line_component), u, f"{p.line_component} on a line over time")
        R.put(lg, "time", runner.line_times, "time", u)
        R.put(lg, "x", runner.model.grid.axis_coordinates(p.line_component, 0), "length", u)
        lg.attrs.update({"component": p.line_component, "height": p.line_height or 0.0,
                         "periodic": p.kind == "comoving"})
    mg = group.require_group("materials")
    for name, m in runner.res.materials.items():
        w = np.linspace(0.01, 3.0, 600) * (p.omega0 or 1.0)
        e = np.asarray(m.permittivity(w), dtype=complex)
        sub = mg.require_group(name)
        R.put(sub, "omega", w, "angular_frequency", u)
        R.put(sub, "eps_real", e.real, "dimensionless", u)
        R.put(sub, "eps_imag", e.imag, "dimensionless", u)
        if m.poles:
            # lossless bulk branches omega_j(k) (spatial dispersion included) for the map overlays
            from fdtd.reference.thresholds import mode_frequencies

            kb = np.linspace(0.0, math.pi / p.cell, 400)
            with np.errstate(all="ignore"):
                wb = mode_frequencies(m, kb)
            R.put(sub, "branch_k", kb, "wavenumber", u, "wavenumbers of the lossless bulk branches")
            R.put(sub, "branch_omega", wb, "angular_frequency", u,
                  "lossless bulk branches omega_j(k), one row per branch (NaN: none)")
    R.write_summary(group, data["summary"])
    group.attrs["plan"] = p.to_json()


def run_scenario(scenario: Scenario, out=None, progress: bool | None = None, checkpoint=None,
                 resume=None, log=print) -> dict:
    """Run a scenario (all scan points) and write the results file. Returns the summary."""
    points = scenario.scan_points()
    out = Path(out) if out else Path(scenario.where).with_suffix(".h5")
    results, status, reason = [], "complete", "completed"
    old_handler = None

    def on_term(signum, frame):    # SIGTERM: stop like Ctrl-C, keep what was measured
        raise KeyboardInterrupt

    try:
        old_handler = signal.signal(signal.SIGTERM, on_term)
    except ValueError:   # not in the main thread
        pass
    try:
        for k, pt in enumerate(points):
            log(f"point {k + 1}/{len(points)}: {pt.where}")
            r = PointRunner(pt, progress=progress, checkpoint=checkpoint, log=log)
            for w in r.plan.warnings:
                log(f"  warning: {w}")
            if resume is not None and k == 0:
                load_checkpoint(resume, r)
                log(f"  resumed from {resume} at step {r.solver.step_count} ({r.state['phase']})")
            why = r.execute()
            st = "complete" if why == "completed" and r.state.get("steady") is not False else "partial"
            if why == "interrupted":
                status, reason = "partial", f"interrupted at step {r.solver.step_count}"
            elif st == "partial" and status == "complete":
                status, reason = "partial", "not steady within run.max_time"
            results.append((r, r.collect(st)))
            if why == "interrupted":
                break
    finally:
        if old_handler is not None:
            signal.signal(signal.SIGTERM, old_handler)
        if results:
            writer = R.AtomicResults(out)
            with writer as f:
                sc_g = f.create_group("scenario")
                sc_g.attrs["text"] = scenario.text or ""
                sc_g.attrs["file"] = str(scenario.where)
                sc_g.attrs["resolved"] = results[0][0].plan.to_json()
                R.write_units(f, results[0][0].res.units)
                f.attrs["scenario_file"] = str(scenario.where)
                if len(points) > 1:
                    sg = f.create_group("scan")
                    sg.attrs["key"] = scenario.values["scan"]["key"]
                    sg.attrs["values"] = json.dumps(scenario.values["scan"]["values"])
                    for k, (r, data) in enumerate(results):
                        write_point(sg.create_group(f"point_{k}"), r, data)
                    R.write_summary(f, {"points": {"value": len(results), "error": None, "units": "",
                                                   "normalized": len(results)}})
                else:
                    write_point(f, results[0][0], results[0][1])
                if len(results) < len(points) and status == "complete":
                    status, reason = "partial", "scan not finished"
                # the rename is the last act: a killed run never leaves a file that looks complete
                writer.commit(status, reason)
    summaries = [d["summary"] for _r, d in results]
    return {"file": str(out), "status": status, "stop_reason": reason, "points": summaries}


