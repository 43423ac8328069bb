"""Inputs of ``gapwake threshold``: a scenario and/or option values -> the report's arguments.

:func:`resolve_inputs` reads values the way scenario files write them (strings
with units, or plain SI numbers; see ``docs/scenarios.md``) and returns the
normalized arguments of :func:`fdtd.reference.thresholds.threshold_report`:
material, oscillator frequency, speed, geometry, grid scheme, periodic cell
length, nonlocal speed and the reference length.  The analytic code itself
(:mod:`fdtd.reference`) knows nothing of scenarios or units; this module is the bridge.
"""

from __future__ import annotations

import math

import scipy.constants as _sc

from fdtd.media.materials import VACUUM, Material
from fdtd.reference.cutoffs import Geometry
from fdtd.reference.modes import Scheme, local_version
from fdtd.scenario import quantities as Q
from fdtd.scenario.quantities import ScenarioError

_C0 = _sc.c                          # m/s

#: Materials known by name without a scenario (normalized with the reference length).
BUILTIN_MATERIALS = ("SiC",)


def _option_value(value, kind: str, key: str, where: str, natural=None) -> float:
    """SI value of an option: a string with units (scenario rules) or a plain number in SI."""
    if isinstance(value, str):
        try:
            value = float(value)
        except ValueError:
            pass
    return Q.parse(value, kind, key, where, natural)


def resolve_inputs(scenario=None, *, material: str | None = None, eps=None, frequency=None,
                   speed=None, height=None, cell=None, courant=None, length=None,
                   dims: int | None = None, beta_nl=None, coupling=None,
                   where: str = "command line") -> dict:
    """Resolve a scenario and/or option values into the arguments of
    :func:`fdtd.reference.thresholds.threshold_report`.

    Values are given as in scenario files (``docs/scenarios.md``): strings with
    units (``"930 1/cm"``, ``"500 nm"``, ``"0.3 c"``) or plain numbers in SI
    (rad/s, metres; speeds as fractions of c).  Options override the scenario.

    Parameters
    ----------
    scenario : path or :class:`fdtd.scenario.schema.Scenario`, optional
        Material (``geometry.material``; slot: the lower one; no geometry: the
        first region's or the background), source frequency, speed and height
        above the surface, grid cell, Courant fraction and cell length.
    material : str
        A material of the scenario or a built-in name (:data:`BUILTIN_MATERIALS`).
    eps : float
        A constant permittivity instead (> 0).
    frequency : rest-frame angular frequency of an oscillator (> 0).
    speed : speed for the Cherenkov band, 0 < v < 1.
    height : distance of the path above the surface (> 0): gap geometry.
    cell : grid cell dx (> 0): adds the grid's own cutoff; ``courant`` (0, 1]
        its fraction of the stability limit (default 0.95); ``length`` the
        periodic cell length (adds the k_m set).
    dims : 1 or 2 for a bulk medium (default 2, or 1 for a "1d" scenario).
    beta_nl : nonlocal speed in [0, 1): adds the physical cutoff.
    coupling : gap criterion fraction f in (0, 1) (default 0.01).

    Returns
    -------
    dict with ``material`` (Material), ``omega0``, ``speed``, ``geometry``,
    ``scheme``, ``period``, ``beta_nl``, ``ell`` (metres) and ``notes`` (list of str).

    Raises
    ------
    fdtd.scenario.quantities.ScenarioError / ParameterError
        Naming the option or key, the value and what is allowed.
    """
    notes: list[str] = []
    res = None
    values = None
    if scenario is not None:
        from fdtd.scenario.schema import Scenario     # only with a scenario (pulls in its resolver)

        sc_obj = scenario if isinstance(scenario, Scenario) else Scenario.load(scenario)
        res = sc_obj.resolve()
        values = sc_obj.values
    natural = None if values is None else sc_obj.natural

    def opt(value, kind, key):
        return _option_value(value, kind, key, where, natural)

    # --- SI values from the options
    w0_si = None
    if frequency is not None:
        w0_si = opt(frequency, "angular_frequency", "--frequency")
        if not w0_si > 0:
            raise ScenarioError(f"{where}: --frequency = {frequency!r}: expected a rest-frame angular "
                                "frequency > 0, e.g. \"2.1 eV\", \"930 1/cm\" or a number in rad/s")
    elif values is not None and values["source"]["kind"] == "dipole":
        w0_si = values["source"]["frequency"]
    ell = res.ell if res is not None else (_C0 / w0_si if w0_si else 1e-6)
    if speed is not None:
        v = opt(speed, "speed", "--speed")
        if not 0.0 < v < 1.0:
            raise ScenarioError(f"{where}: --speed = {speed!r}: expected a speed 0 < v < 1 c "
                                "(e.g. \"0.3 c\" or 0.3)")
    else:
        v = values["source"]["speed"] if values is not None else None
        if v is not None and not 0.0 < v < 1.0:
            v = None
    # --- material
    mats = dict(res.materials) if res is not None else {}
    if eps is not None and material is not None:
        raise ScenarioError(f"{where}: give either --material or --eps, not both")
    h_scn = None
    if eps is not None:
        e = opt(eps, "dimensionless", "--eps")
        if not e > 0:
            raise ScenarioError(f"{where}: --eps = {eps!r}: expected a constant permittivity > 0")
        mat = Material(e, (), f"eps = {e:g}")
    elif material is not None:
        if material in mats:
            mat = mats[material]
        elif material in BUILTIN_MATERIALS:
            from fdtd.media.formulas import silicon_carbide

            mat = silicon_carbide(ell=ell)
        else:
            allowed = sorted(set(mats) - {"vacuum"} - set(BUILTIN_MATERIALS)) + list(BUILTIN_MATERIALS)
            raise ScenarioError(f"{where}: --material = {material!r}: expected one of {allowed} "
                                "(the scenario's materials or a built-in), or give --eps")
    elif values is not None:
        g, s = values["geometry"], values["source"]
        y_src = res.L(s["height"])
        if g["kind"] in ("half-space", "slab"):
            mat = mats[g["material"]]
            h_scn = y_src - res.L(g["surface"])
        elif g["kind"] == "slot":
            mat = mats[g["lower"]]
            if s.get("gap_fraction") is not None:
                y_src = res.L(g["surface"]) + s["gap_fraction"] * res.L(g["gap"])
            h_scn = y_src - res.L(g["surface"])
            notes.append(f"slot: thresholds of the lower material {g['lower']!r}; use --material "
                         f"{g['upper']!r} --height ... for the upper one")
        elif values["regions"]:
            name = values["regions"][0]["material"]
            mat = mats[name]
            notes.append(f"regions: thresholds for a source moving through {name!r} (bulk); use "
                         "--material and --height for other cases")
        else:
            mat = mats[g["background"]]
        if h_scn is not None and h_scn <= 0:
            notes.append("the source moves inside the material: bulk thresholds")
            h_scn = None
    else:
        raise ScenarioError(f"{where}: no material: give a scenario file, --material NAME "
                            f"(built-in: {list(BUILTIN_MATERIALS)}) or --eps VALUE")
    # --- geometry
    if height is not None:
        h_si = opt(height, "length", "--height")
        if not h_si > 0:
            raise ScenarioError(f"{where}: --height = {height!r}: expected the distance of the path "
                                "above the surface, a length > 0 (e.g. \"500 nm\")")
        h = h_si / ell
    else:
        h = h_scn
    if coupling is not None:
        try:
            f_c = float(coupling)
        except (TypeError, ValueError):
            f_c = math.nan
        if not 0.0 < f_c < 1.0:
            raise ScenarioError(f"{where}: --coupling = {coupling!r}: expected a fraction 0 < f < 1 "
                                "(the gap criterion exp(-2 kappa h) >= f)")
    else:
        f_c = 0.01
    if dims is None:
        dims = 1 if (values is not None and values["grid"]["polarization"] == "1d") else 2
    elif dims not in (1, 2):
        raise ScenarioError(f"{where}: --dims = {dims!r}: expected 1 or 2")
    if h is not None:
        if dims == 1:
            raise ScenarioError(f"{where}: a height above a surface needs a 2D grid, but the "
                                "polarization / --dims is 1D")
        geometry = Geometry.gap(h, f_c)
    else:
        geometry = Geometry.bulk(dims)
    # --- grid
    scheme, period = None, None
    if cell is not None:
        dx = opt(cell, "length", "--cell") / ell
        if not dx > 0:
            raise ScenarioError(f"{where}: --cell = {cell!r}: expected a grid cell size > 0 "
                                "(e.g. \"20 nm\")")
    elif values is not None and values["grid"].get("cell") is not None:
        dx = res.L(values["grid"]["cell"])
    else:
        dx = None
        if values is not None:
            notes.append("the scenario gives grid.cells_per_wavelength, not grid.cell: no grid row "
                         "(pass --cell)")
    if courant is not None:
        try:
            cf = float(courant)
        except (TypeError, ValueError):
            cf = math.nan
        if not 0.0 < cf <= 1.0:
            raise ScenarioError(f"{where}: --courant = {courant!r}: expected a fraction of the "
                                "stability limit in 0 < value <= 1")
    else:
        cf = values["grid"]["courant"] if values is not None else 0.95
    if dx is not None:
        # imported here: the stability module pulls in scipy.optimize (~0.25 s), which a
        # threshold without a grid never needs
        from fdtd.space.stability import max_stable_dt

        media = list(mats.values()) + [mat, VACUUM]
        dt = cf * max_stable_dt((dx,) * dims, [local_version(m) for m in media])
        scheme = Scheme(dx, dt)
        notes.append(f"grid: dx = {dx:.4g} ell, dt = {cf:g} x the stability limit = {dt:.4g} ell/c "
                     "(a co-moving run's commensurate dt is at most a few tenths of a percent smaller)")
        L = None
        if length is not None:
            L = opt(length, "length", "--length") / ell
            if not L > 0:
                raise ScenarioError(f"{where}: --length = {length!r}: expected a periodic cell "
                                    "length > 0")
        elif values is not None and values["run"]["kind"] == "comoving":
            L = res.L(values["grid"]["length"])
            notes.append("periodic cell: grid.length as given (the run may adjust it slightly to keep "
                         "harmonics off the vacuum light-line crossing)")
        if L is not None:
            period = max(int(round(L / dx)), 1) * dx
    elif length is not None:
        raise ScenarioError(f"{where}: --length needs --cell (the periodic k_m set is a grid property)")
    if beta_nl is not None:
        try:
            b = float(beta_nl)
        except (TypeError, ValueError):
            b = math.nan
        if not 0.0 <= b < 1.0:
            raise ScenarioError(f"{where}: --beta-nl = {beta_nl!r}: expected a nonlocal speed "
                                "0 <= beta_nl < 1 (fraction of c)")
        beta_nl = b
    omega0 = w0_si * ell / _C0 if w0_si else None
    return {"material": mat, "omega0": omega0, "speed": v, "geometry": geometry, "scheme": scheme,
            "period": period, "beta_nl": beta_nl, "ell": ell, "notes": notes}
