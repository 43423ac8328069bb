"""The ``gapwake`` command line: a thin layer over :mod:`fdtd.api`.

Exit codes: 0 success; 1 a run failed (e.g. numerical instability); 2 the
scenario or the command line is wrong (nothing is written); 3 the run completed
but its figures did not settle (results written and marked "not converged");
130 interrupted (partial results written and marked so).
"""

from __future__ import annotations

import argparse
import json
import sys
import warnings

from fdtd._version import __version__


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="gapwake",
        description="Time-domain (Yee grid) simulation of moving charges and dipoles beside dispersive, "
                    "lossy dielectrics: Cherenkov and Doppler-branch emission, drag and energy balance. "
                    "Describe a situation in a TOML scenario file (see scenarios/ and docs/scenarios.md), "
                    "check it, run it, plot and animate the results.")
    p.add_argument("--version", action="version", version=f"gapwake {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    c = sub.add_parser("check", help="validate a scenario and print the resolved grid, estimates and warnings",
                       description="Validate a scenario file against the schema and print, for each scan "
                                   "point, the resolved grid (cells, time step, steps), a memory estimate, "
                                   "a run-time estimate from a quick calibration on this machine, and "
                                   "warnings (too few cells per wavelength, numerical Cherenkov, source close "
                                   "to the absorbing layer, run too short to settle). Exit 2 on errors.")
    c.add_argument("file")
    c.add_argument("--set", action="append", default=[], metavar="KEY=VALUE",
                   help='override a value, e.g. --set source.speed="0.4 c"')

    r = sub.add_parser("run", help="run a scenario and write an HDF5 results file",
                       description="Run a scenario (all points of a scan) and write one HDF5 file (layout in "
                                   "docs/results.md), then print a summary table. Ctrl-C stops cleanly and "
                                   "writes what was measured, marked partial.")
    r.add_argument("file")
    r.add_argument("-o", "--output", help="results file (default: the scenario's name with .h5)")
    r.add_argument("--json", action="store_true", help="print the summary as JSON (values with units)")
    r.add_argument("--quiet", action="store_true", help="no progress output")
    r.add_argument("--checkpoint", help="checkpoint file (written every run.checkpoint_every steps)")
    r.add_argument("--resume", metavar="CHECKPOINT", help="continue a run from a checkpoint")
    r.add_argument("--force", action="store_true",
                   help="run even when the memory, disk or work estimate exceeds what this machine has")
    r.add_argument("--parents", action="store_true", help="create missing folders of --output and --checkpoint")
    r.add_argument("--set", action="append", default=[], metavar="KEY=VALUE", help="override a value")

    pl = sub.add_parser("plot", help="figures (PNG and PDF) from a results file",
                        description="Geometry with the source path, k_x-resolved Doppler-branch spectra "
                                    "(with the planar reference when available), the (k_x, omega) map with "
                                    "Doppler lines and dispersion curves, the energy ledger over time, and a "
                                    "scan overview.")
    pl.add_argument("results")
    pl.add_argument("-o", "--outdir", help="folder for the figures (default: next to the results file)")
    pl.add_argument("--format", default="png,pdf",
                    help=f"comma-separated formats among {', '.join(FIGURE_FORMATS)} (default png,pdf)")

    a = sub.add_parser("animate", help="animation of a field component from the stored snapshots",
                       description="MP4 (through imageio-ffmpeg) or GIF of the stored snapshots, with a "
                                   "fixed symmetric colour scale, the source marked and the surfaces drawn.")
    a.add_argument("results")
    a.add_argument("-o", "--output", help="movie.mp4 or movie.gif (default: the results name with .gif)")
    a.add_argument("--component", choices=COMPONENTS, metavar="COMPONENT",
                   help=f"field component, one of {', '.join(COMPONENTS)} that the file stores "
                        "(default: the one stored)")
    a.add_argument("--energy", action="store_true", help="show the squared field instead")
    a.add_argument("--fps", type=_fps, default=12, help="frames per second of the movie, 1 to 120 (default 12)")

    t = sub.add_parser(
        "threshold", help="analytic speed thresholds (Cherenkov, anomalous Doppler) for a material",
        description="Minimum speeds for Cherenkov emission of a charge and for anomalous-Doppler "
                    "emission of an oscillator, from the lossless mode branches of the material: "
                    "without a wavenumber cutoff, with the grid's own cutoff (discrete dispersion, "
                    "k <= pi/dx; the periodic cell's k_m) and with a physical one (a nonlocal pole, "
                    "--beta-nl).  Takes a scenario file and/or options; values as in scenario files "
                    "(strings with units, or plain numbers in SI).  Answers without running the "
                    "solver.  Exit 2 on bad input.")
    t.add_argument("file", nargs="?", help="scenario TOML (optional)")
    t.add_argument("--material", help="a material of the scenario, or a built-in: SiC")
    t.add_argument("--eps", help="a constant permittivity instead of --material")
    t.add_argument("--frequency", help='oscillator rest-frame frequency, e.g. "930 1/cm", "1.2 eV"')
    t.add_argument("--speed", help='speed for the Cherenkov band, e.g. "0.3 c"')
    t.add_argument("--height", help='distance of the path above the surface (gap geometry), e.g. "500 nm"')
    t.add_argument("--coupling", help="gap criterion: count wavenumbers with exp(-2 kappa h) >= this "
                                      "fraction (default 0.01)")
    t.add_argument("--cell", help='grid cell: adds the grid\'s own cutoff, e.g. "20 nm"')
    t.add_argument("--courant", help="time step as a fraction of the stability limit (default 0.95)")
    t.add_argument("--length", help="periodic cell length (with --cell): only k_m = 2 pi m / L")
    t.add_argument("--dims", type=int, choices=(1, 2), help="bulk: 1D (k = k_x) or 2D (default)")
    t.add_argument("--beta-nl", help="nonlocal speed (fraction of c, 0 <= beta_nl < 1): adds the "
                                     "physical cutoff of a Hopfield-Thomas pole")
    t.add_argument("-o", "--output", help="write the figure v_min against the cutoff (PNG and PDF)")
    t.add_argument("--json", action="store_true", help="print the result as JSON (values with units)")
    t.add_argument("--set", action="append", default=[], metavar="KEY=VALUE",
                   help="override a scenario value")

    d = sub.add_parser("demo", help="run a one-minute example scenario, plot and animate it",
                       description="Copies the demo scenario (a dipole gliding above a "
                                   "lossy Lorentz half-space, about half a minute) into the output folder, runs "
                                   "it, writes the results, the figures and an animation, and prints where "
                                   "they went.")
    d.add_argument("-o", "--outdir", default="gapwake-demo", help="folder for the outputs")
    d.add_argument("--quiet", action="store_true", help="no progress output")
    return p


def _diagnostics(quiet: bool) -> None:
    """Route the ``fdtd`` logger's messages (settling, scan points, warnings) to stderr."""
    import logging

    logger = logging.getLogger("fdtd")
    for h in list(logger.handlers):
        if getattr(h, "_gapwake_cli", False):
            logger.removeHandler(h)
    handler = logging.StreamHandler(sys.stderr)
    handler.setFormatter(logging.Formatter("%(message)s"))
    handler._gapwake_cli = True
    logger.addHandler(handler)
    logger.setLevel(logging.WARNING if quiet else logging.INFO)
    logger.propagate = False


#: field components a snapshot can hold (which of them a file has depends on its polarization)
COMPONENTS = ("Ex", "Ey", "Ez", "Hx", "Hy", "Hz")
#: movie formats of ``gapwake animate``
MOVIE_SUFFIXES = (".gif", ".mp4")
#: figure formats of ``gapwake plot``
FIGURE_FORMATS = ("png", "pdf", "svg", "eps", "ps")


def _fps(text: str) -> int:
    """``--fps``: a whole number of frames per second, 1 to 120."""
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"--fps = {text!r}: expected a whole number of frames per second "
                                         "from 1 to 120") from None
    if not 1 <= value <= 120:
        raise argparse.ArgumentTypeError(f"--fps = {value}: expected a whole number of frames per second "
                                         "from 1 to 120")
    return value


def _override(pair: str):
    """(key, value) of one ``--set KEY=VALUE``: the value read as a TOML value; a bare word or a
    quantity without quotes (``0.4 c``) is taken as that string, anything else that is not a
    whole TOML value (an unbalanced quote or bracket) is refused."""
    import tomllib

    from fdtd.scenario.quantities import ScenarioError

    example = 'expected KEY=VALUE, e.g. --set source.speed="0.4 c"'
    if "=" not in pair:
        raise ScenarioError(f"--set {pair!r}: no '=': {example}")
    key, _, raw = pair.partition("=")
    if not key.strip():
        raise ScenarioError(f"--set {pair!r}: the key before '=' is empty: {example}")
    if not raw.strip():
        raise ScenarioError(f"--set {pair!r}: the value after '=' is empty: {example}")
    if "\n" in raw or "\r" in raw:
        raise ScenarioError(f"--set {pair!r}: the value spans several lines: {example}")
    try:
        parsed = tomllib.loads(f"v = {raw}")
    except (tomllib.TOMLDecodeError, RecursionError) as exc:
        if any(ch in raw for ch in "\"'[]{}#="):
            raise ScenarioError(f"--set {pair!r}: the value {raw.strip()!r} is not a TOML value "
                                f"({str(exc) or 'nested too deeply'}): {example} (a string in matching "
                                "quotes, a number, true/false, or a list [..])") from None
        return key.strip(), raw.strip()          # a bare word or quantity: source.speed=0.4 c
    if list(parsed) != ["v"]:
        raise ScenarioError(f"--set {pair!r}: the value {raw.strip()!r} holds more than one value: {example}")
    return key.strip(), parsed["v"]


def _overrides(scenario, pairs):
    for pair in pairs:
        key, value = _override(pair)
        scenario = scenario.set(key, value)
    return scenario


def _print_summary(out, stream=None) -> None:
    stream = stream or sys.stdout
    if out.status != "complete":
        stream.write(f"{out.status.upper()}: {out.stop_reason} -- the figures below are not final results\n")
    for k, pt in enumerate(out.points):
        if len(out.points) > 1:
            stream.write(f"point {k}\n")
        for name, v in pt.items():
            val = v.get("value")
            if isinstance(val, float):
                err = v.get("error")
                es = f" +- {err:.2e}" if isinstance(err, float) else ""
                stream.write(f"  {name:28s} {val: .6e}{es} {v.get('units', '')}\n")
            elif isinstance(val, dict):
                n = len(next(iter(val.values()), []))
                stream.write(f"  {name:28s} ({n} points: arrays {', '.join(val)} in --json and the results file)\n")
            elif isinstance(val, list):
                if val:
                    stream.write(f"  {name:28s} " + "\n  {:28s} ".format("").join(map(str, val)) + "\n")
            else:
                stream.write(f"  {name:28s} {val} {v.get('units', '')}\n")
    stream.write(f"results: {out.file} ({out.status}: {out.stop_reason})\n")


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 0
    if args.command == "threshold":
        # analytic only: keep the solver, h5py and the experiment procedure out of this path
        return _threshold(args)
    from fdtd import api
    from fdtd.errors import GapwakeError, ParameterError
    from fdtd.scenario.quantities import ScenarioError

    try:
        if args.command == "check":
            sc = _overrides(api.load(args.file), args.set)
            for rep in api.check(sc):
                print(rep.text)
            return 0
        if args.command == "run":
            sc = _overrides(api.load(args.file), args.set)
            quiet = args.quiet or args.json
            progress = None if not quiet else False
            _diagnostics(quiet)
            with warnings.catch_warnings():
                if quiet:
                    warnings.simplefilter("ignore")
                out = api.run(sc, args.output, progress=progress, checkpoint=args.checkpoint,
                              resume=args.resume, force=args.force, make_parents=args.parents)
            if args.json:
                print(json.dumps({"file": out.file, "status": out.status, "stop_reason": out.stop_reason,
                                  "points": out.points}, indent=1, default=float))
            else:
                _print_summary(out)
            if out.stop_reason.startswith("interrupted"):
                return 130
            return 3 if out.status == "not converged" else 0
        if args.command == "plot":
            from fdtd.viz.figures import plot_all

            formats = tuple(x.strip().lower() for x in args.format.split(","))
            bad = [x for x in formats if x not in FIGURE_FORMATS]
            if bad or not formats:
                raise ParameterError(f"--format = {args.format!r}: expected comma-separated formats among "
                                     f"{', '.join(FIGURE_FORMATS)}")
            paths = plot_all(args.results, args.outdir, formats)
            for pth in paths:
                print(pth)
            return 0
        if args.command == "animate":
            from pathlib import Path

            from fdtd.viz.animation import animate

            if args.output is not None and Path(args.output).suffix.lower() not in MOVIE_SUFFIXES:
                raise ParameterError(f"--output = {args.output!r}: expected a movie file ending in "
                                     f"{' or '.join(MOVIE_SUFFIXES)}")
            print(animate(args.results, args.output, args.component, fps=args.fps, energy=args.energy))
            return 0
        if args.command == "demo":
            return _demo(args)
    except ScenarioError as exc:
        print(f"gapwake: scenario error:\n{exc}", file=sys.stderr)
        return 2
    except FileNotFoundError as exc:
        print(f"gapwake: {exc}", file=sys.stderr)
        return 2
    except ParameterError as exc:          # bad input (geometry, shape, time step, ...): nothing run
        print(f"gapwake: {type(exc).__name__}: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:              # outside a run's own handling (planning, plotting, the final act)
        print(f"gapwake {args.command}: interrupted", file=sys.stderr)
        return 130
    except GapwakeError as exc:            # the run itself failed (e.g. an instability)
        print(f"gapwake: {type(exc).__name__}: {exc}", file=sys.stderr)
        return 1
    except ValueError as exc:              # plot/animate: a results file without what was asked
        if args.command not in ("plot", "animate"):
            raise
        print(f"gapwake {args.command}: {exc}", file=sys.stderr)
        return 2
    return 0


def _threshold(args) -> int:
    from fdtd.errors import ParameterError
    from fdtd.reference.threshold_report import threshold_report
    from fdtd.scenario.threshold_inputs import resolve_inputs

    try:
        scenario = None
        if args.file is not None:
            from fdtd.scenario.schema import Scenario

            scenario = _overrides(Scenario.load(args.file), args.set)
        elif args.set:
            raise ParameterError(f"--set {args.set[0]!r} needs a scenario file")
        inp = resolve_inputs(scenario, material=args.material, eps=args.eps, frequency=args.frequency,
                             speed=args.speed, height=args.height, cell=args.cell,
                             courant=args.courant, length=args.length, dims=args.dims,
                             beta_nl=args.beta_nl, coupling=args.coupling)
        notes = inp.pop("notes")
        rep = threshold_report(**inp, notes=notes)
        figs = []
        if args.output:
            from fdtd.viz.thresholds import plot_threshold_vs_cutoff     # the plotting stack only when asked

            figs = plot_threshold_vs_cutoff(inp["material"], args.output, omega0=inp["omega0"],
                                            beta_nl=inp["beta_nl"], geometry=inp["geometry"],
                                            scheme=inp["scheme"], ell=inp["ell"])
    except FileNotFoundError as exc:
        print(f"gapwake: {exc}", file=sys.stderr)
        return 2
    except ParameterError as exc:          # includes ScenarioError: bad input, nothing written
        print(f"gapwake threshold: {exc}", file=sys.stderr)
        return 2
    if args.json:
        d = rep.as_dict()
        d["figures"] = figs
        print(json.dumps(d, indent=1, default=float))
    else:
        print(rep.table())
        for pth in figs:
            print(f"figure: {pth}")
    return 0


def _demo(args) -> int:
    from importlib import resources
    from pathlib import Path

    from fdtd import api
    from fdtd.viz.animation import animate
    from fdtd.viz.figures import plot_all

    out = Path(args.outdir)
    out.mkdir(parents=True, exist_ok=True)
    # a copy next to the results, so that the user can edit it and rerun it with `gapwake run`
    here = out / "demo.toml"
    here.write_text((resources.files("fdtd") / "data" / "demo.toml").read_text())
    sc = api.load(here)
    print(f"running {here} (a dipole gliding above a lossy Lorentz half-space) ...")
    _diagnostics(args.quiet)
    res = api.run(sc, out / "demo.h5", progress=None if not args.quiet else False)
    _print_summary(res)
    figs = plot_all(res.file, out / "figures", ("png",))
    movie = animate(res.file, out / "demo.gif")
    print("figures:\n  " + "\n  ".join(figs))
    print(f"animation: {movie}")
    print(f"edit {here} (e.g. source.speed) and rerun it with: gapwake run {here}")
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
