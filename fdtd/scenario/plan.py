r"""Sizing rules: a resolved scenario becomes a :class:`Plan`, everything one run needs.

A plan holds numbers in the solver's normalized units (lengths in ell, times in ell/c,
frequencies in c/ell) and the material objects and regions to paint, so that the
experiment procedure (:mod:`fdtd.experiment.procedure`) never reads the scenario file
again.  Every automatic choice that changes what the user asked (cell length, cell
size) is listed in :attr:`Plan.adjustments` and reported in the run summary.
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict, dataclass, field

import numpy as np
import scipy.constants as sc

from fdtd.errors import GapwakeError
from fdtd.media.materials import Material
from fdtd.scenario import quantities as Q
from fdtd.scenario.quantities import ScenarioError
from fdtd.scenario.resolve import Resolved
from fdtd.space.geometry import Grating, HalfSpace, Polygon, Rectangle, Slab
from fdtd.space.grid import E_COMPONENTS, H_COMPONENTS

#: 1D grids keep every harmonic; 2D grids record harmonics up to k_x dx = pi/3 (the rest
#: is reported as unresolved work): fewer than six cells per wavelength beyond it
#: (common practice: 10-20 cells per wavelength for a few per cent of phase error)
M_MAX_FRACTION_2D = 6


@dataclass
class Plan:
    """Everything a run needs, in normalized units (lengths in ell).

    ``placements`` are (region, material) pairs painted in order over ``background``;
    ``stack`` is the planar layered stack for the exact reference (None when the
    geometry is not planar); ``surfaces`` the y of the planar interfaces.
    """

    kind: str                     # "comoving" or "open"
    polarization: str             # "te", "tm" or "1d"
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
    source_kind: str              # "dipole" or "charge"
    omega0: float | None          # rest-frame angular frequency (dipole)
    Omega: float                  # lab internal frequency omega0 / gamma (0 for a charge)
    axis: str
    moment: float
    charge: float
    ramp: float                   # proper time of the dipole's switch-on
    speed_ramp: float             # lab time for a charge to reach its speed
    shape: tuple
    transits: int                 # the recording window, in transit times
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
    grid_check: bool
    grid_tol: float
    grid_refinements: int
    isolated: bool
    isolated_tol: float
    isolated_max_runs: int
    threads: int | None
    passage_span: tuple | None
    subsamples: int
    window_beats: int = 0         # beat periods pi/Omega in the window (0: a charge)
    bloch_phase: float = 0.0      # k0 L of a phased row (0: the ordinary periodic cell)
    window_mismatch: float = 0.0  # fraction of a beat by which the window misses whole beats
    ell: float = 1.0              # the reference length in metres
    where: str = "scenario"
    transition_dipole: float | None = None    # SI (C or C m^-1 per length); None: half the moment
    surfaces: list = field(default_factory=list)
    warnings: list = field(default_factory=list)
    notes: list = field(default_factory=list)
    adjustments: list = field(default_factory=list)
    # objects (not part of the JSON record)
    background: Material | None = field(default=None, repr=False)
    placements: list = field(default_factory=list, repr=False)
    stack: object = field(default=None, repr=False)
    units: object = field(default=None, repr=False)
    material_table: dict = field(default_factory=dict, repr=False)

    _OBJECTS = ("background", "placements", "stack", "units", "material_table")

    @property
    def gamma(self) -> float:
        return 1.0 / math.sqrt(1.0 - self.speed * self.speed)

    @property
    def transit(self) -> float:
        """Time for the source to cross the cell, L / v (normalized)."""
        return self.length / self.speed if self.speed > 0 else math.inf

    @property
    def switch_on(self) -> float:
        """Lab time by which the source is fully switched on (oscillation and speed)."""
        return self.ramp * self.gamma + self.speed_ramp

    @property
    def dims(self) -> int:
        return 1 if self.polarization == "1d" else 2

    def seconds(self, t: float) -> float:
        return t * self.ell / sc.c

    def as_dict(self) -> dict:
        d = asdict(self)
        for k in self._OBJECTS:
            d.pop(k, None)
        return d

    def to_json(self) -> str:
        return json.dumps(self.as_dict(), default=str)


# ----------------------------------------------------------------------------- geometry
def placements(res: Resolved):
    """(placements, planar stack or None, surfaces, background) in normalized units."""
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
            verts = [[Q.parse(c, "length", "regions.vertices", res.scenario.where, res.scenario.natural)
                      / res.ell for c in pt] for pt in r["vertices"]]
            reg = Polygon(tuple(map(tuple, verts)))
        else:
            reg = Grating(res.L(r["period"]), r["duty"], res.L(r["top"]), res.L(r["depth"]))
        pl.append((reg, mat))
        stack = None          # no longer planar in the reference's sense
    if g["kind"] == "none" and not v["regions"]:
        stack = Stack(bg, (), bg, -1e6)
    return pl, stack, surfaces, bg


# ----------------------------------------------------------------------------- sizing
def light_line_score(length: float, speed: float, internal_frequency: float) -> float:
    """Distance, in units of the harmonic spacing 2 pi / L, from the vacuum light-line
    crossings of the normal Doppler line, k = Omega/(1 - v) and k = -Omega/(1 + v), to the
    nearest harmonic k_m = 2 pi m / L, m != 0 (0: a harmonic on a crossing; at most 0.5).

    A harmonic right at a crossing radiates at grazing incidence: its field builds up and
    leaks out slowly, and a periodic cell then needs very long runs
    (docs/theory/periodic-cell.md)."""
    dk = 2 * np.pi / length
    crossings = [internal_frequency / (1 - speed), -internal_frequency / (1 + speed)]
    score = 0.5
    for c in crossings:
        n = c / dk
        # the nearest harmonic other than m = 0: k = 0 radiates straight up (omega = Omega),
        # however close the crossing -Omega/(1 + v) comes to it for a slow oscillator
        m = round(n) if round(n) != 0 else (1 if n >= 0 else -1)
        score = min(score, abs(n - m))
    return float(score)


#: a cell whose harmonics keep at least this far (in harmonic spacings) from a light-line
#: crossing counts as safe
LIGHT_LINE_SAFE = 0.2
#: largest relative change of the cell length the plan makes on its own (a short cell has few
#: harmonics below a light-line crossing: moving them by a fifth of their spacing can take 20 %)
MAX_LENGTH_CHANGE = 0.2
#: recording windows that fit into the default run.max_time at least
DEFAULT_WINDOWS = 8
#: fewest beat periods pi/Omega in a recording window: two in each half-window, whose
#: spread is part of the error estimate
MIN_BEATS = 4


#: most cells a plan sizes (beyond it planning stops: 1e9 cells of a 2D grid without poles
#: already hold 24 GB of fields); the memory guard of the run is stricter and machine-dependent
MAX_CELLS = 10**9
#: most transit times in one recording window (a window this long is a mistake in the inputs)
MAX_WINDOW_TRANSITS = 10**6
#: most (M, K) pairs the window search tries (ordinary cells need a few hundred)
WINDOW_SEARCH_BUDGET = 200_000


@dataclass(frozen=True)
class Window:
    """The recording window: ``transits`` transit times L/v that are also ``beats`` whole beat
    periods pi/Omega of the two Doppler lines (``mismatch``: the fraction of a beat period by
    which they miss, 0 when the cell length could be chosen)."""

    length: float
    transits: int
    beats: int
    mismatch: float


def recording_window(length: float, speed: float, Omega: float, min_transits: int,
                     adjust: bool, check_light_line: bool, max_transits: int | None = None) -> Window:
    """Choose the cell length (if ``adjust``) and the window so that the window is a whole
    number of transit times and of beat periods pi/Omega (docs/theory/doppler-work.md,
    "Windows").

    The Hann-tapered demodulation then nulls exactly the cross terms between the two
    Doppler lines of each harmonic (frequency difference 2 Omega) and the grid-crossing
    aliases (multiples of 2 pi v / dx).  With ``adjust`` the length becomes
    L' = K pi v / (M Omega) for the smallest M >= ``min_transits`` (and >= two beat
    periods, MIN_BEATS) and an integer K, within MAX_LENGTH_CHANGE of ``length`` and, for a 2D cell
    beside vacuum, with its harmonics away from the light-line crossings.  Without it, M
    is chosen (up to ``max_transits``) to miss a whole number of beats by the least."""
    if Omega <= 0 or speed <= 0:
        return Window(length, min_transits, 0, 0.0)
    transit_over_beat = length * Omega / (math.pi * speed)      # beat periods per transit
    m_need = MIN_BEATS / transit_over_beat if transit_over_beat > 0 else math.inf
    if not (max(min_transits, m_need) <= MAX_WINDOW_TRANSITS):
        raise ScenarioError(
            f"the recording window needs at least {max(min_transits, m_need):.3g} transit times (run.transits = "
            f"{min_transits}, and {MIN_BEATS} beat periods pi/Omega of the Doppler lines at {transit_over_beat:.3g} "
            f"beat periods per transit): expected at most {MAX_WINDOW_TRANSITS:g}; lower run.transits, or raise "
            "grid.length, source.frequency or source.speed")
    m0 = max(min_transits, math.ceil(m_need - 1e-9))
    m_hi = max_transits or 4 * m0
    budget = WINDOW_SEARCH_BUDGET          # bounds the search whatever the inputs
    if adjust:
        best = None
        for M in range(m0, m_hi + 1):
            k_lo = max(int(math.ceil(M * transit_over_beat * (1 - MAX_LENGTH_CHANGE))), 2)
            k_hi = max(int(math.floor(M * transit_over_beat * (1 + MAX_LENGTH_CHANGE))), k_lo)
            budget -= k_hi - k_lo + 1
            if budget < 0:
                break
            for K in range(k_lo, k_hi + 1):
                L = K * math.pi * speed / (M * Omega)
                change = abs(L / length - 1)
                if change > MAX_LENGTH_CHANGE:
                    continue
                score = light_line_score(L, speed, Omega) if check_light_line else 0.5
                key = (score < LIGHT_LINE_SAFE, M, change)
                if best is None or key < best[0]:
                    best = (key, Window(L, M, K, 0.0))
            if best is not None and not best[0][0]:
                return best[1]
        if best is not None:
            return best[1]
    best = None
    for M in range(m0, min(m_hi, m0 + WINDOW_SEARCH_BUDGET) + 1):
        beats = M * transit_over_beat
        miss = abs(beats - round(beats))
        if best is None or miss < best.mismatch - 1e-12:
            best = Window(length, M, max(int(round(beats)), 1), miss)
        if miss < 1e-9:
            break
    return best


#: an evanescent harmonic must have decayed to this (amplitude) at the absorbing layer: the
#: layer absorbs evanescent fields too (its complex stretch), which the run would count as
#: emitted power (measured: 0.8 % of a vacuum dipole's power at e^{-kappa d} = 0.5)
EVANESCENT_FLOOR = 1e-3


def _harmonics(length: float, cell: float) -> np.ndarray:
    nx = int(round(length / cell))
    m = np.arange(1, max(nx // M_MAX_FRACTION_2D, 1) + 1)
    return 2 * np.pi * np.concatenate([m, -m]) / length


def light_line_detuning(length: float, cell: float, speed: float, Omega: float) -> float:
    """Smallest distance, in frequency, of a recorded Doppler line from the vacuum light line
    of its own harmonic, min | |k v + s Omega| - |k| |.

    The switch-on leaves free waves at the light line (grazing, k_y ~ 0) that the absorbing
    layers take only slowly; a window demodulating a line this close to them must be long
    and the switch-on slow compared with 1/detuning (docs/theory/periodic-cell.md)."""
    k = _harmonics(length, cell)
    d = [np.abs(np.abs(k * speed + s_ * Omega) - np.abs(k)) for s_ in (1, -1)]
    return float(np.min(np.concatenate(d)))


#: the switch-on lasts at least this many periods of the smallest light-line detuning, and the
#: recording window at least WINDOW_DETUNING_CYCLES of them (Hann leakage of a free wave at
#: detuning delta falls as (delta T)^-3; the switch-on excites it as its spectrum at delta)
RAMP_DETUNING_CYCLES = 4.0
WINDOW_DETUNING_CYCLES = 2.0


def evanescent_reach(length: float, cell: float, speed: float, Omega: float) -> float:
    """Distance over which the slowest-decaying evanescent harmonic of a dipole in vacuum
    falls to EVANESCENT_FLOOR: kappa = sqrt(k^2 - omega^2) over the cell's harmonics (both
    Doppler lines, k_x dx <= pi/3), the propagating ones excluded."""
    k = _harmonics(length, cell)
    kappa = []
    for s_ in (1, -1):
        w = k * speed + s_ * Omega
        ev = np.abs(w) < np.abs(k)
        kappa.append(np.sqrt(k[ev] ** 2 - w[ev] ** 2))
    kappa = np.concatenate(kappa)
    if kappa.size == 0:
        return 0.0
    return float(np.log(1.0 / EVANESCENT_FLOOR) / kappa.min())


def _cell_size(res: Resolved, grid: dict, w_hi, height, surfaces, notes) -> float:
    if grid.get("cell") is not None:
        return res.L(grid["cell"])
    n_max = 1.0
    if w_hi is not None:
        for m in res.materials.values():
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
    return cell


def plan(res: Resolved) -> Plan:
    """Apply the sizing rules to a resolved scenario (raises ScenarioError)."""
    v = res.scenario.values
    grid, s, run, rec = v["grid"], v["source"], v["run"], v["record"]
    where = res.scenario.where
    speed = float(s["speed"])
    pol = grid["polarization"]
    gam = 1.0 / math.sqrt(1 - speed * speed)
    allowed = E_COMPONENTS[pol] + H_COMPONENTS[pol]
    for key in ("snapshot_component", "line_component"):
        if rec.get(key) is not None and rec[key] not in allowed:
            raise ScenarioError(f"{where}: record.{key} = {rec[key]!r} is not a field of the "
                                f"{pol.upper()} grid: expected one of {', '.join(allowed)}")
    if s["kind"] == "dipole":
        omega0 = res.W(s["frequency"])
        Omega = omega0 / gam
        w_hi = Omega / max(1 - speed, 1e-3)
    else:
        omega0, Omega = None, 0.0
        w_hi = res.W(s["max_frequency"]) if s.get("max_frequency") else None
    pl, stack, surfaces, bg = placements(res)
    notes, adjustments = list(res.notes), []
    if pol == "1d":
        _check_1d(res, notes)
    height = res.L(s["height"])
    if s.get("gap_fraction") is not None:
        g = v["geometry"]
        height = res.L(g["surface"]) + s["gap_fraction"] * res.L(g["gap"])
    cell = _cell_size(res, grid, w_hi, height, surfaces, notes)
    cell_asked = cell
    length = res.L(grid["length"])
    # 2D grids have at least 20 rows (the absorbing layers): refuse here what cannot fit, before
    # any search over cell lengths or harmonics
    _check_cells(res, length / cell if cell > 0 else math.inf, 1 if pol == "1d" else 20, cell)
    nx = max(int(round(length / cell)), 8)
    window = Window(length, run["transits"], 0, 0.0)
    if run["kind"] == "comoving":
        if s["kind"] == "dipole" and speed > 0:
            asked = length
            adjust = grid["adjust_length"]
            periods = [res.L(r["period"]) for r in v["regions"] if r["shape"] == "grating"]
            if periods and adjust:
                # a structure periodic along x fixes the cell: it must hold whole periods
                adjust = False
                notes.append("cell length kept as given: a grating fixes it (whole periods per cell)")
            for per in periods:
                if abs(length / per - round(length / per)) > 1e-6:
                    raise ScenarioError(
                        f"{where}: grid.length = {length * res.ell:.6g} m is not a whole number of grating "
                        f"periods ({per * res.ell:.6g} m): a periodic cell must hold whole periods")
            window = recording_window(length, speed, Omega, run["transits"], adjust,
                                      check_light_line=pol != "1d")     # 1D: a uniform medium
            if pol != "1d":
                # long enough to tell each line from the grazing free waves next to it
                detuning = light_line_detuning(window.length, cell_asked, speed, Omega)
                need = math.ceil(WINDOW_DETUNING_CYCLES * 2 * math.pi / max(detuning, 1e-12)
                                 / (window.length / speed) - 1e-9)
                if need > MAX_WINDOW_TRANSITS:
                    raise ScenarioError(
                        f"{where}: a Doppler line of this cell lies {detuning:.3g} (c/ell) from the vacuum light "
                        f"line of its harmonic (the cell length {window.length * res.ell:.6g} m puts a harmonic on "
                        f"a light-line crossing at {speed:.4g} c): telling it from the grazing free waves would "
                        f"take a window of {need:.3g} transits, expected at most {MAX_WINDOW_TRANSITS:g}; change "
                        "grid.length or source.speed a little")
                if need > window.transits:
                    window = recording_window(window.length, speed, Omega, need, False, True)
                    notes.append(f"window of {window.transits} transits: {WINDOW_DETUNING_CYCLES:g} periods of "
                                 f"the smallest detuning {detuning:.3g} (c/ell) of a Doppler line from the "
                                 "light line")
            length = window.length
            nx = max(int(round(length / cell_asked)), 8)
            if abs(length - asked) > 1e-9 * asked:
                adjustments.append(
                    f"cell length {asked * res.ell:.6g} m -> {length * res.ell:.6g} m "
                    f"({100 * (length / asked - 1):+.2f} %): the window of {window.transits} transits holds "
                    f"{window.beats} whole beat periods pi/Omega"
                    + (" and no harmonic sits on a vacuum light-line crossing" if pol != "1d" else ""))
            if window.transits > run["transits"]:
                adjustments.append(f"window {run['transits']} -> {window.transits} transits: at least {MIN_BEATS} "
                                   "beat periods of the Doppler lines, whole transits and whole beats")
            if window.mismatch > 1e-9:
                notes.append(f"the window of {window.transits} transits misses a whole number of beat "
                             f"periods by {window.mismatch:.2f} of one (the cell length is fixed): the two "
                             "Doppler lines are separated by solving for their cross-talk instead")
        cell = length / nx
        if abs(cell - cell_asked) > 1e-6 * cell:
            adjustments.append(f"cell size {cell_asked * res.ell:.6g} m -> {cell * res.ell:.6g} m: "
                               f"a whole number of cells ({nx}) in the cell length")
    # default interior: the source and the surfaces with room to spare, and at least ten
    # cells beyond the source's deposit
    shape_reach = 0.5 * (s["shape_order"] + 1) * s["shape_scale"] * cell
    if grid.get("height") is not None:
        half_height = res.L(grid["height"])
    else:
        half_height = max(2.0 * max([abs(height)] + [abs(y) for y in surfaces]) + 1.0, 2.0,
                          abs(height) + shape_reach + 10 * cell)
        if run["kind"] == "comoving" and s["kind"] == "dipole" and pol != "1d" and speed > 0:
            reach = evanescent_reach(length, cell, speed, Omega)
            if abs(height) + reach > half_height:
                half_height = abs(height) + reach
                notes.append(f"interior half height {half_height * res.ell:.4g} m: the slowest-decaying "
                             "evanescent harmonic falls to 1e-3 before the absorbing layer")
    lam0 = 2 * math.pi / (omega0 if omega0 else (w_hi or 1.0))
    # half a rest-frame wavelength: the layers must also take the grazing waves of harmonics
    # next to a light-line crossing (measured: at lambda0/4 a harmonic at |k|/omega = 0.994
    # lost 1e-3 of its power to the reflection, at lambda0/2 nothing above 1e-6)
    absorber = res.L(grid["absorber"]) if grid.get("absorber") is not None else max(lam0 / 2, 10 * cell)
    if pol != "1d":      # sizes as floats first: an absurd height or absorber must not overflow int()
        rows = 2 * half_height / cell + 2 * max(absorber / cell, 10)
        _check_cells(res, nx + (2 * max(absorber / cell, 10) if run["kind"] == "open" else 0), rows, cell)
    if pol == "1d":
        ny, half_height, absorber, height = 1, cell, 0.0, 0.0
    elif run["kind"] == "comoving":
        ny = 2 * int(round(half_height / cell)) + 2 * max(int(round(absorber / cell)), 10)
    else:
        ny = int(round(2 * half_height / cell)) + 2 * max(int(round(absorber / cell)), 10)
        nx = nx + 2 * max(int(round(absorber / cell)), 10)
    _check_cells(res, nx, ny, cell)
    _check_recorders(res, rec, run["kind"], pol, half_height, length, cell)
    if run["kind"] == "open":
        _check_open_path(res, s, run, pol, speed, length, half_height, absorber, cell)
    ramp = s["ramp_periods"] * 2 * math.pi / omega0 if omega0 else 0.0
    ramp_given = "ramp_periods" in res.scenario.raw.get("source", {})
    if omega0 and pol != "1d" and run["kind"] == "comoving" and not ramp_given:
        # slow enough not to ring the grazing free waves next to a Doppler line
        slow = RAMP_DETUNING_CYCLES * 2 * math.pi / max(light_line_detuning(length, cell, speed, Omega), 1e-12) / gam
        if slow > ramp:
            notes.append(f"switch-on over {slow * omega0 / (2 * math.pi):.3g} rest-frame periods (not "
                         f"{s['ramp_periods']:g}): slow against the smallest light-line detuning of a Doppler line")
            ramp = slow
    speed_ramp = res.T(s["speed_ramp"]) if s.get("speed_ramp") is not None else (
        2.0 * lam0 / (2 * math.pi) if s["kind"] == "charge" else 0.0)
    transit = length / speed if speed > 0 else 1.0
    # default: 60 transit times, and at least DEFAULT_WINDOWS recording windows
    max_time = res.T(run["max_time"]) if run.get("max_time") is not None else \
        (ramp * gam + speed_ramp + max(60, DEFAULT_WINDOWS * window.transits) * transit)
    flux = [res.L(Q.parse(y, "length", "record.flux_heights", where, res.scenario.natural))
            for y in rec.get("flux_heights") or ()]
    moment = (s["moment"] / res.units.dipole_moment) if s.get("moment") is not None else 1.0
    charge = (s["charge"] / res.units.charge) if s.get("charge") is not None else 1.0
    order, scale = s["shape_order"], s["shape_scale"]
    reach = (0.5 * (order + 1) * scale + 1.5) * cell
    if pol != "1d" and abs(height) + reach > half_height:
        raise ScenarioError(
            f"{where}: source.height = {height * res.ell:.4g} m does not fit in the interior: "
            f"grid.height = {half_height * res.ell:.4g} m must exceed |height| plus the source's reach "
            f"({reach * res.ell:.4g} m with cell {cell * res.ell:.4g} m and shape {order}x{scale}); "
            "raise grid.height or refine grid.cell")
    p = Plan(kind=run["kind"], polarization=pol, cell=cell, length=length, half_height=half_height,
             absorber=absorber, nx=nx, ny=ny, courant=grid["courant"], speed=speed, height=height,
             x0=res.L(s["x0"]), source_kind=s["kind"], omega0=omega0, Omega=Omega, axis=s["axis"],
             moment=moment, charge=charge, ramp=ramp, speed_ramp=speed_ramp,
             shape=(order, scale), transits=window.transits, window_beats=window.beats,
             window_mismatch=window.mismatch,
             settle_tol=run["settle_tolerance"], max_time=max_time, open_time=res.T(run.get("time")),
             flux_heights=flux if pol != "1d" else [], snapshots=rec["snapshots"],
             snapshot_component=rec.get("snapshot_component") or ("Hz" if pol != "tm" else "Ez"),
             line_component=rec.get("line_component"), line_height=res.L(rec.get("line_height")),
             line_every=rec["line_every"], doppler=rec["doppler"], reference=rec["reference"],
             checkpoint_every=run["checkpoint_every"], grid_check=run["grid_check"],
             grid_tol=run["grid_tolerance"], grid_refinements=run["grid_refinements"],
             isolated=run["isolated_emitter"], isolated_tol=run["isolated_tolerance"],
             isolated_max_runs=run["isolated_max_runs"],
             threads=grid.get("threads"),
             passage_span=(res.L(rec["passage_start"]), res.L(rec["passage_stop"]))
             if rec.get("passage_start") is not None and rec.get("passage_stop") is not None else None,
             subsamples=grid["subsamples"], ell=res.ell, where=where,
             transition_dipole=s.get("transition_dipole"), surfaces=surfaces, notes=notes,
             adjustments=adjustments, background=bg, placements=pl, stack=stack, units=res.units,
             material_table=dict(res.materials))
    if pol == "1d":
        p.stack = stack            # the uniform medium: Bulk1D uses stack.bottom
    plan_warnings(p, res)
    return p


def _given(res: Resolved, section: str, key: str) -> str:
    """``section.key = <value as written>`` (or ``section.key`` at its default)."""
    raw = res.scenario.raw.get(section, {})
    return f"{section}.{key} = {raw[key]!r}" if key in raw else f"{section}.{key} (default)"


def _check_cells(res: Resolved, nx: float, ny: float, cell: float) -> None:
    """Refuse a grid of more than MAX_CELLS cells (before anything sizes arrays or loops over them)."""
    try:
        nx, ny = float(nx), float(ny)
    except OverflowError:
        nx, ny = math.inf, math.inf
    n = nx * ny
    if n <= MAX_CELLS:
        return
    ell = res.ell
    how = _given(res, "grid", "cell") if res.scenario.values["grid"].get("cell") is not None else \
        _given(res, "grid", "cells_per_wavelength")
    raise ScenarioError(
        f"{res.scenario.where}: the grid would have {n:.3g} cells ({nx:.3g} x {ny:.3g}, cell "
        f"{cell * ell:.3g} m from {how}, {_given(res, 'grid', 'length')}, {_given(res, 'grid', 'height')}): "
        f"expected at most {MAX_CELLS:.0e} cells; a plain number is read in metres (SI) unless "
        "units.mode = \"natural\" -- give lengths with units, e.g. \"20 nm\"")


def _check_recorders(res: Resolved, rec: dict, kind: str, pol: str, half_height: float, length: float,
                     cell: float) -> None:
    """Recorder lines and spans inside the interior of the grid (the absorbing layers excluded)."""
    where, ell = res.scenario.where, res.ell
    if pol == "1d":
        return
    inside = f"the interior |y| <= {half_height * ell:.4g} m (grid.height; the absorbing layers lie beyond)"
    if rec.get("line_height") is not None and abs(res.L(rec["line_height"])) > half_height:
        raise ScenarioError(f"{where}: {_given(res, 'record', 'line_height')} lies outside {inside}")
    for i, y in enumerate(rec.get("flux_heights") or ()):
        y_si = Q.parse(y, "length", f"record.flux_heights[{i}]", where, res.scenario.natural)
        if abs(res.L(y_si)) > half_height:
            raise ScenarioError(f"{where}: record.flux_heights[{i}] = {y!r} lies outside {inside}")
    if kind == "open" and rec.get("passage_start") is not None and rec.get("passage_stop") is not None:
        for key in ("passage_start", "passage_stop"):
            x = res.L(rec[key])
            if not 0.0 <= x <= length:
                raise ScenarioError(f"{where}: {_given(res, 'record', key)} lies outside the interior "
                                    f"0 <= x <= {length * ell:.4g} m (grid.length)")


def _check_open_path(res: Resolved, s: dict, run: dict, pol: str, speed: float, length: float,
                     half_height: float, absorber: float, cell: float) -> None:
    """An open domain: the source starts inside the interior and never leaves the grid."""
    where, ell = res.scenario.where, res.ell
    x0 = res.L(s["x0"])
    if not 0.0 <= x0 <= length:
        raise ScenarioError(f"{where}: {_given(res, 'source', 'x0')} lies outside the interior "
                            f"0 <= x <= {length * ell:.4g} m (grid.length)")
    reach = (0.5 * (s["shape_order"] + 1) * s["shape_scale"] + 1.5) * cell
    x_end = x0 + speed * res.T(run["time"])
    edge = length + max(absorber, 10 * cell) - reach
    if x_end > edge:
        raise ScenarioError(
            f"{where}: the source leaves the grid: from {_given(res, 'source', 'x0')} at {speed:.4g} c for "
            f"{_given(res, 'run', 'time')} it reaches x = {x_end * ell:.4g} m, beyond the grid's end at "
            f"{edge * ell:.4g} m (interior, absorbing layer, less the source's reach): expected a path that "
            "stays on the grid; shorten run.time or lengthen grid.length")


def _check_1d(res: Resolved, notes: list) -> None:
    """The 1D grid (Ey, Hz along x) runs one case: a transverse dipole sheet moving along x
    through a uniform medium in a co-moving periodic cell (the bulk anomalous-Doppler set-up)."""
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
    if v["record"].get("flux_heights"):
        notes.append("1D: no flux lines (record.flux_heights is ignored); the whole line is the medium")


# ----------------------------------------------------------------------------- warnings
def _anomalous_grid_warning(p: Plan, res: Resolved) -> None:
    """Warn (before the run) when the anomalous branch at this speed can only come from
    under-resolved wavenumbers near the grid's cutoff.

    The grid allows anomalous emission from v_grid on (its discrete dispersion, k <= pi/dx);
    the well-resolved wavenumbers, k dx <= pi/6 (at least 12 cells per wavelength, the
    criterion of the run summary), only from v_res on.  Between the two, whatever the run
    shows on the anomalous branch is a property of the grid (docs/theory/thresholds.md)."""
    if p.source_kind != "dipole" or not p.speed or not p.omega0:
        return
    from fdtd.reference import thresholds as th

    g = res.scenario.values["geometry"]
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
    except (GapwakeError, ArithmeticError, RuntimeError, ValueError) as exc:
        # a material the calculator cannot treat (e.g. a resonance far below the source's
        # frequency, where its root search does not converge): no warning, no failure
        p.notes.append(f"no check of the grid's cutoff against the anomalous-Doppler threshold: {exc}")
        return


def _media_on_path(p: Plan) -> list:
    """Names of the placed media (not the background) the source's path crosses: the whole cell
    length for a co-moving cell, from x0 to where the run ends for an open domain."""
    if p.kind == "comoving":
        xs = np.linspace(0.0, p.length, 65)[:-1]
    else:
        xs = np.linspace(p.x0, p.x0 + p.speed * (p.open_time or 0.0), 65)
    ys = np.full_like(xs, p.height)
    hit = np.zeros(xs.shape, dtype=int) - 1
    for k, (region, _mat) in enumerate(p.placements):
        c = np.asarray(region.contains(xs, ys), dtype=bool)
        c = np.full(xs.shape, bool(c.flat[0])) if c.size == 1 else c.reshape(xs.shape)
        hit[c] = k                                      # later placements paint over earlier ones
    names = []
    for k in sorted(set(hit[hit >= 0].tolist())):
        mat = p.placements[k][1]
        if mat is not p.background and mat.name not in names:
            names.append(mat.name)
    return names


def plan_warnings(p: Plan, res: Resolved) -> None:
    """Warnings a user should see before the run (resolution, numerical Cherenkov, overlap,
    absorber distance, settling time)."""
    from fdtd.sources.moving import numerical_phase_velocity_limit
    from fdtd.sources.shapes import Shape

    _anomalous_grid_warning(p, res)
    to_rad_s = sc.c / p.ell
    freqs = []
    if p.omega0:
        freqs = [p.Omega, p.Omega / max(1 - p.speed, 1e-3)]
    elif res.scenario.values["source"].get("max_frequency"):
        freqs = [res.W(res.scenario.values["source"]["max_frequency"])]
    for name, m in res.materials.items():
        for w in freqs:
            with np.errstate(all="ignore"):
                n = abs(np.real(np.sqrt(complex(m.permittivity(w)))))
                cpw = 2 * math.pi / (w * n) / p.cell if w * n > 0 else math.inf
            if n > 0:
                if cpw < 10:
                    p.warnings.append(f"only {cpw:.1f} cells per wavelength in {name!r} at omega = "
                                      f"{w * to_rad_s:.4g} rad/s: refine grid.cell (>= 10 advised)")
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
    if p.surfaces and min(abs(y - p.height) for y in p.surfaces) < reach:
        p.warnings.append(f"the source's deposit reaches {reach * p.ell:.3g} m from its path, beyond the "
                          f"nearest surface {min(abs(y - p.height) for y in p.surfaces) * p.ell:.3g} m away: "
                          "the source overlaps a material (raise source.height or refine grid.cell); "
                          "no planar reference for such a point")
    inside = _media_on_path(p)
    if inside:
        p.warnings.append(
            f"the source's path at y = {p.height * p.ell:.4g} m runs inside {', '.join(map(repr, inside))}, not "
            f"in the background {p.background.name!r}: the source moves through that medium (intended for "
            "emission inside a medium; otherwise move source.height out of it)")
    margin = p.half_height - abs(p.height)
    if margin < max(5 * p.cell, 2 * math.pi / (p.omega0 or 1.0) / 8):
        p.warnings.append(f"the source runs {margin * p.ell:.3g} m from the absorbing layer: raise grid.height")
    if p.kind == "comoving" and p.speed > 0:
        need = p.switch_on + 5 * p.transit
        if p.max_time < need:
            p.warnings.append(f"run.max_time = {p.seconds(p.max_time):.3g} s leaves less than five transit "
                              "times to settle: the run may stop before a steady state")
