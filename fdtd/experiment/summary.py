r"""Summarise: an experiment's records become figures with SI units, errors and warnings.

Every figure is a dict ``{"value", "error", "units", "normalized"}`` (SI value, its
estimated error or None, the SI unit, the normalized value).  The summary also carries
the planar reference on the cell's k set and for an isolated emitter where the geometry
is planar, the equivalent two-level rates (:mod:`fdtd.reference.rates`), and warnings
(grid cutoff, unresolved work, row of emitters vs an isolated one).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from fdtd.errors import GapwakeError
from fdtd.io.results import si_of
from fdtd.recording.steady import at_zero
from fdtd.reference.thresholds import RESOLVED_KDX
from fdtd.sources.shapes import Shape

#: anomalous power at k_x dx above this (fewer than 12 cells per wavelength) counts as "near
#: the grid's cutoff" pi/dx: there the scheme's phase error is several per cent and the
#: lower polariton's discrete branch departs from the continuum one (common practice: 10-20
#: cells per wavelength for a few per cent of phase error on a Yee grid); the same constant
#: as the threshold calculator's "resolved" wavenumbers
GRID_CUTOFF_KDX = RESOLVED_KDX
GRID_CUTOFF_SHARE = 0.5

#: a row of emitters whose decay rate differs from an isolated emitter's by more than this
#: (relative) is flagged
ROW_VS_SINGLE = 0.1


@dataclass
class Outcome:
    """What one point produced, in normalized units, ready to be written and reported."""

    status: str
    summary: dict
    ledger_samples: list
    grid: dict
    spectrum: object = None            # DopplerSpectrum (co-moving) or passage spectrum (open)
    fluxes: list = field(default_factory=list)
    reference: dict | None = None      # branch -> (k, power) on the cell's k set
    material_map: np.ndarray | None = None
    material_names: list = field(default_factory=list)
    outlines: list = field(default_factory=list)
    material_curves: dict = field(default_factory=dict)


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


class _Figures:
    """Builds the summary dict of one point."""

    def __init__(self, units):
        self.units = units
        self.d: dict = {}

    def fig(self, name, value, quantity, error=None):
        si_name, factor = si_of(self.units, quantity)
        self.d[name] = {"value": None if value is None else float(value) * factor,
                        "error": None if error is None else float(error) * factor,
                        "units": si_name, "normalized": None if value is None else float(value)}

    def plain(self, name, value, units="", error=None, normalized=None):
        self.d[name] = {"value": value, "error": error, "units": units, "normalized": normalized}


#: a grid error above this fraction of a figure is flagged in the summary
GRID_WARNING = 0.1


def summarise(exp, status: str, grid: dict | None = None, isolated: dict | None = None) -> Outcome:
    """The outcome of an executed :class:`~fdtd.experiment.procedure.Experiment`; ``grid``
    is the result of :func:`fdtd.experiment.grid_check.run_grid_check` (its errors are
    added in quadrature to the time errors)."""
    p, s = exp.plan, exp.solver
    F = _Figures(p.units)
    led = s.ledger
    if len(led.samples) >= 2:
        a, b = led.samples[0], led.samples[-1]
        scale = max(abs(b.source_work - a.source_work), abs(b.stored), abs(a.stored), 1e-300)
        resid = ((b.stored - a.stored) - (b.source_work - a.source_work) + (b.bath.sum() - a.bath.sum())
                 + (b.outflow - a.outflow)) / scale
        F.plain("ledger_residual", float(resid), "1", normalized=float(resid))
    out = Outcome(status=status, summary=F.d, ledger_samples=list(led.samples), grid=_grid_info(exp))
    spec = exp.last_spectrum
    if spec is not None:
        spec.meta["partial"] = status != "complete" or exp.state.get("steady") is False
        out.spectrum = spec
        drift = exp.state.get("time_errors") or {}
        grid_errors = (grid or {}).get("errors") or {}

        at_zero_figures: set = set()

        def error(attr):
            # time: the larger of the drift between windows and the spread within the last one
            # (and, for the total, the work not on the recorded Doppler points); grid: the
            # coarse companion's estimate; independent, so added in quadrature
            e = spec.error(attr)
            d = drift.get(attr)
            e_time = max(e, d) if d is not None else e
            if attr in ("total", "normal", "anomalous") and at_zero(getattr(spec, attr), e_time, exp.zero_level):
                # settled at the zero level (fdtd.recording.steady.at_zero): zero within that level
                e_time = exp.zero_level
                at_zero_figures.add(attr)
            return math.hypot(e_time, grid_errors.get(attr, 0.0))

        for name, attr, q in (("total_power", "total", "power"), ("normal_power", "normal", "power"),
                              ("anomalous_power", "anomalous", "power"), ("drag_force", "drag_force", "force"),
                              ("motion_power", "motion_power", "power"),
                              ("internal_power", "internal_power", "power")):
            if attr == "motion_power":
                err = p.speed * error("drag_force")
            elif attr in ("normal", "anomalous") and p.source_kind != "dipole":
                continue                       # a charge has one line per harmonic, no branches
            else:
                err = error(attr)
            F.fig(name, getattr(spec, attr), q, err)
            if attr == "total" and "total" in at_zero_figures:
                p.notes.append(f"the total power is zero to within the zero level "
                               f"{exp.zero_level * p.units.power:.3g} {si_of(p.units, 'power')[0]}, its error bar: "
                               "below that level a power counts as zero (fdtd.recording.steady)")
        F.fig("unresolved_power", spec.unresolved, "power")
        if grid is not None:
            _grid_figures(p, spec, grid, F)
        if isolated is not None:
            _isolated_figures(p, spec, grid, isolated, F)
        _grid_cutoff_check(p, spec, F)
        if p.source_kind == "dipole" and p.speed > 0:
            _quantum_rates(p, spec, F)
    if exp.last_fluxes:
        out.fluxes = exp.last_fluxes
        for y, fl in zip(p.flux_heights, out.fluxes):
            F.fig(f"flux_up_at_{y * p.ell * 1e9:.4g}nm", fl.total, "power")
    if exp.passage is not None and np.all(exp.passage.filled == exp.passage.n_win):
        pspec = exp.passage.result()
        out.spectrum = pspec
        for name, attr in (("total_power", "total"), ("normal_power", "normal"), ("anomalous_power", "anomalous")):
            F.fig(name, getattr(pspec, attr), "power")
        F.fig("drag_force", pspec.drag_force, "force")
    if p.stack is not None and p.reference and p.speed > 0 and p.kind == "comoving" and spec is not None:
        _reference(p, out, F)
    _run_facts(exp, F)
    F.plain("steady", exp.state.get("steady"))
    F.plain("status", status)
    F.plain("speed", p.speed, "c", normalized=p.speed)
    if p.omega0:
        F.fig("rest_frequency", p.omega0, "angular_frequency")
    F.fig("height", p.height, "length")
    F.plain("steps", s.step_count, normalized=s.step_count)
    _geometry(exp, out)
    out.material_curves = _material_curves(p)
    return out


def _isolated_figures(p, spec, grid, iso: dict, F: _Figures) -> None:
    """The isolated emitter (phased rows integrated over k0, fdtd.experiment.isolated): its
    figures with the quadrature error and the row run's relative grid error in quadrature."""
    gerr = (grid or {}).get("errors") or {}
    vals, errs = iso["values"], iso["errors"]

    def rel_grid(name):
        # the row run's relative grid error of the same figure (rest-frame powers: of the branch)
        src = {"rest_down": "normal", "rest_up": "anomalous"}.get(name, name)
        row = abs(getattr(spec, src)) if hasattr(spec, src) else 0.0
        return gerr.get(src, 0.0) / row if row > 0 else 0.0

    def err(name):
        return math.hypot(errs[name], rel_grid(name) * abs(vals[name]))

    for name, attr, q in (("isolated_total_power", "total", "power"), ("isolated_normal_power", "normal", "power"),
                          ("isolated_anomalous_power", "anomalous", "power"),
                          ("isolated_drag_force", "drag_force", "force"),
                          ("isolated_internal_power", "internal_power", "power")):
        if attr in ("normal", "anomalous") and p.source_kind != "dipole":
            continue
        F.fig(name, vals[attr], q, err(attr))
    if p.source_kind == "dipole":
        from fdtd.reference.rates import free_space_power

        P0 = free_space_power(p.omega0, abs(p.moment), p.dims, p.axis if p.dims == 2 else "y")
        for name, attr in (("isolated_decay_rate_ratio", "rest_down"), ("isolated_excitation_rate_ratio", "rest_up")):
            F.plain(name, vals[attr] / P0, "1", err(attr) / P0, vals[attr] / P0)
    F.plain("isolated_runs", iso["runs"], "phased-row runs", normalized=iso["runs"])
    F.plain("isolated_steps", iso["steps"], "time steps of those runs", normalized=iso["steps"])
    F.plain("isolated_converged", iso["converged"])
    if not iso["converged"]:
        F.plain("warning_isolated",
                f"the k0 integral of the isolated emitter did not reach run.isolated_tolerance = "
                f"{p.isolated_tol:g} within run.isolated_max_runs = {p.isolated_max_runs} phased runs: its error "
                "bars say how far off it may be; raise run.isolated_max_runs or lengthen grid.length")


def _run_facts(exp, F: _Figures) -> None:
    """What was run: cell, step, harmonics, window, every automatic change, per-harmonic powers."""
    p, s = exp.plan, exp.solver
    F.fig("cell_length", p.length, "length")
    F.fig("cell_size", p.cell, "length")
    F.fig("time_step", s.dt, "time")
    if p.kind == "comoving":
        F.plain("window_transits", p.transits, "transit times L/v", normalized=p.transits)
        if p.window_beats:
            F.plain("window_beat_periods", p.window_beats, "beat periods pi/Omega", normalized=p.window_beats)
        F.plain("windows_recorded", len(exp.state["windows"]), normalized=len(exp.state["windows"]))
    spec = exp.last_spectrum
    if spec is not None:
        sel = spec.kx > 0 if p.source_kind != "dipole" else np.ones(spec.kx.size, dtype=bool)
        F.plain("harmonics", int(np.unique(np.abs(np.round(spec.kx * p.length / (2 * np.pi)))).size))
        u = p.units
        F.plain("per_harmonic", {"kx": (spec.kx[sel] / u.length).tolist(),
                                 "omega": (spec.omega[sel] * u.angular_frequency).tolist(),
                                 "branch": spec.branch[sel].astype(int).tolist(),
                                 "power": (spec.power[sel] * u.power).tolist()},
                "kx 1/m, omega rad/s, branch +1/-1/0, power " + si_of(u, "power")[0])
    F.plain("adjustments", list(p.adjustments))
    F.plain("notes", list(p.notes))


def _grid_figures(p, spec, grid: dict, F: _Figures) -> None:
    """The grid check's figures: the estimated discretization error of the total power,
    relative, and a warning when it is large."""
    errs = grid.get("errors") or {}
    if not errs:
        if grid.get("note"):
            p.notes.append(grid["note"])
        return
    rel = errs["total"] / abs(spec.total) if spec.total else float("nan")
    F.plain("grid_error_of_total", rel, "1", normalized=rel)
    order = grid.get("order", 2.0)
    if order < 1:
        p.notes.append(f"grid error estimated at first order: between the last two grids the difference shrank "
                       f"more slowly than first order (observed order {order:.2g}: a resonance or surface mode "
                       "the grid moves); refine grid.cell further to trust these figures")
    elif order < 2:
        p.notes.append(f"grid error estimated at the observed order {order:.2g} of the last three grids")
    F.fig("coarse_grid_total_power", grid["coarse"]["total"], "power")
    if rel > GRID_WARNING:
        F.plain("warning_grid_resolution",
                f"the total power changes by {100 * grid['differences']['total'] / abs(spec.total):.0f} % "
                f"between this grid and one twice "
                f"as coarse (estimated discretization error {100 * rel:.0f} %): refine grid.cell")


def _grid_info(exp) -> dict:
    s = exp.solver
    return {"polarization": exp.plan.polarization, "shape": s.grid.shape, "spacing": s.grid.spacing,
            "origin": s.grid.origin, "dt": s.dt, "courant": s.courant_number}


def _geometry(exp, out: Outcome) -> None:
    model = exp.model
    comp = model.grid.e_components[0]
    dom = np.array([int(np.argmax(m.fractions)) if not m.is_wall else -1 for m in model.mixtures],
                   dtype=np.int16)
    out.material_map = dom[model.mix_maps[comp]].astype(np.int8)
    out.material_names = [m.name for m in model.materials]
    out.outlines = [[line for line in pl.region.outline()] for pl in model.placements]


def _material_curves(p) -> dict:
    """Tabulated eps(omega) of each material and, for dispersive ones, the lossless bulk
    branches omega_j(k) up to the grid's pi/dx (for the map overlays)."""
    from fdtd.reference.thresholds import mode_frequencies

    curves = {}
    for name, m in p.material_table.items():
        w = np.linspace(0.01, 3.0, 600) * (p.omega0 or 1.0)
        e = np.asarray(m.permittivity(w), dtype=complex)
        c = {"omega": w, "eps_real": e.real, "eps_imag": e.imag}
        if m.poles:
            kb = np.linspace(0.0, math.pi / p.cell, 400)
            with np.errstate(all="ignore"):
                c["branch_k"], c["branch_omega"] = kb, mode_frequencies(m, kb)
        curves[name] = c
    return curves


def _grid_cutoff_check(p, spec, F: _Figures) -> None:
    """Warn when the anomalous branch lives mostly near the grid's wavenumber cutoff."""
    if abs(spec.unresolved) > 0.1 * abs(spec.total) and spec.total != 0:
        msg = (f"{100 * abs(spec.unresolved / spec.total):.0f} % of the source's work is not on the recorded "
               "Doppler points (harmonics beyond k_x dx = pi/3, or a transient): part of it may come from "
               "wavenumbers near the grid's cutoff; refine grid.cell or run longer")
        F.plain("warning_unresolved", msg)
    share = grid_cutoff_share(spec, p.cell)
    if share is None:
        return
    F.plain("anomalous_share_near_grid_cutoff", share, "1", normalized=share)
    significant = spec.anomalous > max(1e-6 * abs(spec.total), 2.0 * spec.error("anomalous"))
    if share > GRID_CUTOFF_SHARE and significant:
        msg = (f"{100 * share:.0f} % of the anomalous-branch power comes from k_x dx > pi/6 (fewer than "
               "12 cells per wavelength, near the grid's cutoff pi/dx): there it is a property of the "
               "grid, not of the physics; refine grid.cell and watch whether it moves, or give the "
               "medium a physical cutoff (a pole's beta_nl)")
        if msg not in p.warnings:
            p.warnings.append(msg)
        F.plain("warning_grid_cutoff", msg)


def _quantum_rates(p, spec, F: _Figures) -> None:
    """Equivalent two-level rates (fdtd/reference/rates.py): rest frame, per unit proper time."""
    from fdtd.reference import rates as Q

    u = p.units
    d = p.transition_dipole
    if d is None:
        d = 0.5 * abs(p.moment) * u.dipole_moment      # p0 = 2|d|
    axis = p.axis if p.dims == 2 else "y"
    try:
        r = Q.equivalent_rates(spec, moment=abs(p.moment), dims=p.dims, axis=axis, dipole=d, units=u)
    except GapwakeError as exc:
        p.notes.append(f"no equivalent rates: {exc}")
        return
    unit = Q._SI_RATE[p.dims]

    def put(name, value, err, units, normalized=None):
        F.plain(name, float(value), units, None if not math.isfinite(err) else float(err), normalized)

    def branch_share(branch: str) -> float:
        # a rate is its branch's power reweighted point by point (Omega/omega): it carries the
        # relative error of that branch's power figure (settling and grid), not only the
        # half-window spread the rate module computes from the spectrum alone
        f = F.d.get(f"{branch}_power")
        if not f or f["error"] is None or not f["value"]:
            return 0.0
        return abs(f["error"] / f["value"])

    e_down = max(r.ratio_down_error if math.isfinite(r.ratio_down_error) else 0.0,
                 abs(r.ratio_down) * branch_share("normal"))
    e_up = max(r.ratio_up_error if math.isfinite(r.ratio_up_error) else 0.0,
               abs(r.ratio_up) * branch_share("anomalous"))
    G0 = r.gamma_free
    put("decay_rate", r.gamma_down, e_down * G0 if math.isfinite(G0) else math.nan, unit)
    put("excitation_rate", r.gamma_up, e_up * G0 if math.isfinite(G0) else math.nan, unit)
    put("free_space_decay_rate", r.gamma_free, math.nan, unit)
    put("decay_rate_ratio", r.ratio_down, e_down, "1", float(r.ratio_down))
    put("excitation_rate_ratio", r.ratio_up, e_up, "1", float(r.ratio_up))
    F.plain("transition_dipole", float(d), Q._SI_MOMENT[p.dims].split()[0])


def _reference_rate_ratios(p, ref: dict, F: _Figures) -> None:
    """Gamma/Gamma_0 of the planar reference on the same k set (like for like)."""
    from fdtd.reference import rates as Q

    ks, bs, ps = [], [], []
    for b, (k, pw) in ref.items():
        ks.append(k)
        bs.append(np.full(k.shape, b))
        ps.append(pw)
    k, b, pw = np.concatenate(ks), np.concatenate(bs), np.concatenate(ps)
    W = Q.rest_frame_branch_powers(k * p.speed + b * p.Omega, b, pw, p.Omega, p.speed)
    P0 = Q.free_space_power(p.omega0, abs(p.moment), p.dims, p.axis if p.dims == 2 else "y")
    for name, s in (("reference_decay_rate_ratio", 1), ("reference_excitation_rate_ratio", -1)):
        F.plain(name, W[s] / P0, "1", normalized=W[s] / P0)


def _reference(p, out: Outcome, F: _Figures) -> None:
    """The exact planar reference on the cell's k set (and for an isolated emitter)."""
    from fdtd.reference.planar import Bulk1D, MovingLineSource, PlanarReference

    kind = "dipole" if p.source_kind == "dipole" else "charge"
    try:
        if p.polarization == "1d":
            shape = Shape(*p.shape)
            ref = Bulk1D(p.stack.bottom, p.speed, p.omega0, p.moment,
                         form_factor=lambda k: shape.form_factor(k, p.cell))
        else:
            src = MovingLineSource(kind, p.speed, p.height, p.moment if kind == "dipole" else p.charge,
                                   p.omega0 or 0.0, p.axis if kind == "dipole" else "y")
            ref = PlanarReference.like_simulation(p.stack, src, Shape(*p.shape), p.cell)
        out.reference = ref.periodic(p.length)
        tot = sum(v[1].sum() for v in out.reference.values())
        F.fig("reference_total_power", tot, "power")
        if 1 in out.reference:
            F.fig("reference_normal_power", out.reference[1][1].sum(), "power")
        if -1 in out.reference:
            F.fig("reference_anomalous_power", out.reference[-1][1].sum(), "power")
        if kind == "dipole":
            _reference_rate_ratios(p, out.reference, F)
            # a single emitter (the continuum k_x integral), not the cell's row of emitters
            from fdtd.reference.rates import equivalent_rates

            one = equivalent_rates(ref)
            for name, val in (("single_emitter_decay_rate_ratio", one.ratio_down),
                              ("single_emitter_excitation_rate_ratio", one.ratio_up)):
                F.plain(name, val, "1", normalized=val)
            row = F.d.get("reference_decay_rate_ratio", {}).get("value")
            if row is not None and abs(row - one.ratio_down) > ROW_VS_SINGLE * abs(one.ratio_down):
                what = "sheets" if p.polarization == "1d" else "emitters"
                msg = (f"the cell's row of {what} (spaced by grid.length) decays at "
                       f"{row:.3g} Gamma_0, an isolated one at {one.ratio_down:.3g} Gamma_0 "
                       "(reference): the cell samples k_x too coarsely for single-emitter "
                       "rates; set run.isolated_emitter = true for the simulator's own isolated "
                       "emitter, or quote the single_emitter_* figures of the reference")
                F.plain("warning_row_of_emitters", msg)
    except GapwakeError as exc:
        p.notes.append(f"no reference: {exc}")
