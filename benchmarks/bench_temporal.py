"""Temporally blocked 2D kernel against the single-pass kernel, same run, same threads.

A 4096^2 TE_z (or TM_z) grid with one Lorentz pole everywhere and CPML on every side is
advanced with the single-pass kernel (one sweep over the rows per step) and with the
temporally blocked kernel (L steps per sweep, docs/theory/temporal-blocking.md), both
with the same thread count; timings are interleaved and the best of the repeats is
kept.  Before timing, both are run the same number of steps from the same random state
and compared bit for bit.

Prints Mcell/s per kernel and L, and the ratio blocked / single-pass (goal >= 1.5x at
4096^2 with 2 threads).  Shared machines drift by +-30 %: compare figures of one run only.

Usage:  python benchmarks/bench_temporal.py [--n 4096] [--threads 2] [--pol te] [--levels 2,4,6,8]
"""

from __future__ import annotations

import argparse
import os
import sys
import time

import numba
import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.dirname(HERE))

import fdtd as f  # noqa: E402

LORENTZ = f.Material(2.0, (f.LorentzPole(3.0, 0.3, 0.01),), "bench-lorentz")


def build(n: int, pol: str, threads: int, levels: int) -> f.Solver:
    g = f.Grid((n, n), (1.0, 1.0), pol)
    model = f.Model(g, [(f.HalfSpace("y", below=2.0 * n), LORENTZ)], edges=f.CPML(16))
    s = f.Solver(model, courant=0.95, threads=threads, ledger=False)
    rng = np.random.default_rng(1)
    for c in s.fields:
        s.fields[c][...] = 1e-3 * rng.standard_normal(s.fields[c].shape)
    s.temporal_levels = levels
    return s


def same_bits(a: f.Solver, b: f.Solver) -> bool:
    return (all(np.array_equal(a.fields[c], b.fields[c]) for c in a.fields)
            and all(np.array_equal(a.polarization[c][k], b.polarization[c][k])
                    for c in a.polarization for k in (0, 1))
            and all(np.array_equal(a.psi[c], b.psi[c]) for c in a.psi))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=4096, help="grid size n (n x n cells; default 4096)")
    ap.add_argument("--threads", type=int, default=min(2, numba.config.NUMBA_NUM_THREADS),
                    help="threads for both kernels (default 2)")
    ap.add_argument("--pol", choices=("te", "tm"), default="te", help="polarization (default te)")
    ap.add_argument("--levels", default="2,4,6,8", help="steps per sweep to try (default 2,4,6,8)")
    ap.add_argument("--repeats", type=int, default=3, help="interleaved repeats (default 3)")
    args = ap.parse_args()
    levels = [int(x) for x in args.levels.split(",")]
    steps = int(np.lcm.reduce(levels)) if len(levels) > 1 else levels[0]
    steps = max(steps, 24)
    print(f"machine: {os.cpu_count()} CPUs, numba {numba.__version__}; {args.n}^2 {args.pol.upper()}_z, "
          f"one Lorentz pole everywhere, CPML 16 cells, {args.threads} thread(s), {steps} steps per timing")
    for L in levels:                                    # compile, and the bit-for-bit check
        check = build(args.n, args.pol, args.threads, 1)
        b = build(args.n, args.pol, args.threads, L)
        assert b.temporal_levels_now() == L, (L, b.temporal_levels_now())
        check.step(2 * L + 1)
        b.step(2 * L + 1)                              # two sweeps and one single step
        print(f"  L = {L}: bit-identical to single-pass stepping after {2 * L + 1} steps: {same_bits(b, check)}")
        del b, check
    single = build(args.n, args.pol, args.threads, 1)
    single.step(2)
    blocked = {L: build(args.n, args.pol, args.threads, L) for L in levels}
    for s in blocked.values():
        s.step(2)
    best = {k: np.inf for k in [1] + levels}
    for _ in range(args.repeats):
        for k in [1] + levels:
            s = single if k == 1 else blocked[k]
            t0 = time.perf_counter()
            s.step(steps)
            best[k] = min(best[k], (time.perf_counter() - t0) / steps)
    cells = args.n * args.n
    base = cells / best[1] / 1e6
    print(f"  single-pass kernel: {base:8.1f} Mcell/s")
    for L in levels:
        rate = cells / best[L] / 1e6
        print(f"  blocked, L = {L:2d}   : {rate:8.1f} Mcell/s   ratio {rate / base:5.2f}x  (goal >= 1.5x)")
    print(f"  the solver's automatic choice: L = {f.Solver.TEMPORAL_LEVELS} from "
          f"{f.Solver.TEMPORAL_MIN_CELLS} cells on")


if __name__ == "__main__":
    main()
