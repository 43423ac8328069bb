"""A whole step of a run as users make it, against the bare kernel step, in the same run.

The cells are built by the product: a scenario (natural units) is planned and set up by
:class:`fdtd.experiment.procedure.Experiment` (model, commensurate time step, moving dipole),
and the procedure's own recorders of a recording window are attached (Doppler work
recorder; ledger).  A whole step is ``Solver.advance`` with the energy ledger sampled every
10 steps; the bare kernel step is one call of the Yee + ADE kernel on the same arrays.

Prints, per case, microseconds per step and the ratio whole / bare kernel, with the goals:

* 1D, 480 cells, moving dipole + Doppler recorder + ledger: <= 3x;
* 2D co-moving cell of about 0.2 M cells, same: <= 1.3x; at 1.2 M cells: <= 1.1x.

Usage: NUMBA_NUM_THREADS=1 python benchmarks/bench_whole_step.py [--quick]
(2D cells of this size run on one thread by default: fdtd.solver.stepper.SMALL_GRID_CELLS.)
Shared machines drift: compare figures of one run only; each figure is the best of
interleaved repeats.
"""

from __future__ import annotations

import argparse
import os
import sys
import time

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

from fdtd.experiment.procedure import Experiment  # noqa: E402
from fdtd.scenario.plan import plan as make_plan  # noqa: E402
from fdtd.scenario.schema import Scenario  # noqa: E402

LORENTZ = {"kind": "poles", "eps_inf": 1.0,
           "poles": [{"kind": "lorentz", "delta_eps": 2.0, "omega": 1.0, "gamma": 0.1}]}


def sheet_1d(cells: int = 480) -> Experiment:
    length = 12.0
    sc = Scenario({"units": {"mode": "natural", "frequency": "1 eV"}, "materials": {"lz": LORENTZ},
                   "geometry": {"background": "lz"},
                   "grid": {"polarization": "1d", "cell": length / cells, "length": length},
                   "source": {"kind": "dipole", "speed": "0.5 c", "frequency": 0.3}}, where="bench 1D")
    return Experiment(make_plan(sc.resolve()), progress=False)


def cell_2d(cell: float) -> Experiment:
    sc = Scenario({"units": {"mode": "natural", "frequency": "1 eV"}, "materials": {"lz": LORENTZ},
                   "geometry": {"kind": "half-space", "material": "lz"},
                   "grid": {"cell": cell, "length": 10.0, "height": 3.0, "absorber": 1.5},
                   "source": {"kind": "dipole", "speed": 0.6, "height": 0.5, "frequency": 1.2, "axis": "y"}},
                  where="bench 2D")
    return Experiment(make_plan(sc.resolve()), progress=False)


def recording(exp: Experiment) -> Experiment:
    """Attach the recorders of a recording window, as the procedure does."""
    s = exp.solver
    s.advance(steps=4, progress=False)
    exp.state["record_start_step"] = s.step_count
    exp._start_recording()
    return exp


def per_step(fn, steps: int) -> float:
    t0 = time.perf_counter()
    fn(steps)
    return (time.perf_counter() - t0) / steps


def measure(exp: Experiment, steps: int, repeats: int) -> tuple[float, float]:
    s = exp.solver

    def whole(n):
        s.advance(steps=n, progress=False, ledger_every=10)

    def bare(n):
        for _ in range(n):
            s._local_kernel()

    whole(min(steps, 300))
    bare(3)
    w = b = float("inf")
    for _ in range(repeats):                  # interleaved: the same machine state for both
        w = min(w, per_step(whole, steps))
        b = min(b, per_step(bare, steps))
    return w, b


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="fewer steps and no 1.2 M-cell case")
    args = ap.parse_args()
    cases = [("1D, 480 cells", lambda: sheet_1d(480), 20000, 3.0),
             ("2D, ~0.2 M cells", lambda: cell_2d(0.0212), 300, 1.3)]
    if not args.quick:
        cases.append(("2D, ~1.2 M cells", lambda: cell_2d(0.00866), 120, 1.1))
    print(f"{'case':18s} {'cells':>9s} {'whole us':>10s} {'kernel us':>10s} {'ratio':>7s} {'goal':>6s}")
    for name, make, steps, goal in cases:
        t0 = time.perf_counter()
        exp = recording(make())
        setup = time.perf_counter() - t0
        n = max(steps // (4 if args.quick else 1), 50)
        w, b = measure(exp, n, 3)
        print(f"{name:18s} {exp.solver.grid.n_cells:9,d} {w * 1e6:10.1f} {b * 1e6:10.1f} {w / b:7.2f} "
              f"{'<= ' + format(goal, 'g'):>6s}   (set-up and compile {setup:.1f} s)")


if __name__ == "__main__":
    main()
