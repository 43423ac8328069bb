"""Cost of the Doppler analysis and speed of the planar reference solver.

Prints:
* the time of one (v, h) point of the planar reference (continuum, both branches,
  drag and fluxes), for several geometries (goal: well under a second);
* the share of a co-moving-cell run spent in the Doppler work and flux recorders,
  measured on one solver with the recorders attached and detached, interleaved
  (goal: at most 10 %), for a small and a production-sized cell.

Usage: python benchmarks/bench_analysis.py
"""

from __future__ import annotations

import os
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

import fdtd as f  # noqa: E402
from fdtd.sources.moving import MovingDipole  # noqa: E402
from fdtd.reference.planar import Bulk1D, MovingLineSource, PlanarReference, Stack  # noqa: E402
from fdtd.experiment.cell import auto_sampling, commensurate_dt, comoving_cell  # noqa: E402
from fdtd.recording.doppler import DopplerFluxRecorder, DopplerWorkRecorder  # noqa: E402
from fdtd.sources.worldlines import UniformMotion  # noqa: E402

LZ = f.Material(1.0, (f.LorentzPole(2.0, 1.0, 0.1),), "lz")


def reference_timing():
    cases = [("half-space", Stack.half_space(LZ)), ("slab 0.5", Stack.slab(LZ, 0.5)),
             ("slot 1.5", Stack.slot(LZ, LZ, 1.5))]
    print("planar reference, one (v, h) point:")
    for name, st in cases:
        for v in (0.3, 0.6):
            src = MovingLineSource("dipole", v, 0.5, 1.0, 1.2, "y")
            best = np.inf
            for _ in range(3):
                t0 = time.perf_counter()
                PlanarReference(st, src).solve()
                best = min(best, time.perf_counter() - t0)
            print(f"  {name:11s} v = {v}: {1e3 * best:7.1f} ms")
    t0 = time.perf_counter()
    Bulk1D(f.Material(1.0, (f.LorentzPole(2.0, 1.0, 0.01),)), 0.5, 0.6).solve()
    print(f"  1D bulk (gamma 0.01):  {1e3 * (time.perf_counter() - t0):7.1f} ms")


def recorder_overhead(length, cell, steps=200, repeats=3, m_max=None, every=1, half_height=3.0):
    v, w0 = 0.6, 1.2
    model = comoving_cell(length, half_height, cell, "te", regions=[(f.HalfSpace("y", below=0.0), LZ)],
                          absorber=1.5)
    s = f.Solver(model, dt=commensurate_dt(model, length / v))
    src = MovingDipole(1.0, w0, UniformMotion((0.0, 0.5), (v, 0.0)), axis="y", ramp=5.0)
    s.attach(src)
    s.step(5)
    rows = [model.grid.index_of("Ex", (0, y))[1] for y in (1.2, 0.0)]
    recs = [DopplerWorkRecorder(s, src, v, src.lab_frequency(), start=0.0, m_max=m_max, every=every),
            DopplerFluxRecorder(s, v, src.lab_frequency(), rows, start=0.0, m_max=m_max, every=every)]
    s.observers = []
    best = {False: np.inf, True: np.inf}
    for _ in range(repeats):
        for on in (False, True):
            s.observers = list(recs) if on else []
            t0 = time.perf_counter()
            s.step(steps)
            best[on] = min(best[on], (time.perf_counter() - t0) / steps)
    share = (best[True] - best[False]) / best[True]
    what = f"m_max {'all' if m_max is None else m_max}, every {every}"
    print(f"  cell {length} x {2 * half_height:g} + layers, dx = {cell} ({model.grid.shape[0]} x {model.grid.shape[1]}), "
          f"{what}: step {1e3 * best[False]:.2f} ms, with recorders {1e3 * best[True]:.2f} ms: "
          f"share {share:.1%} (goal <= 10%)")


def main():
    reference_timing()
    print("Doppler work + flux recorders:")
    for length, cell, steps, hh in ((9.2, 0.1, 200, 3.0), (9.15, 0.025, 60, 3.0), (20.0, 0.02, 30, 3.0),
                                    (20.0, 0.02, 20, 10.0)):
        nx = int(round(length / cell))
        recorder_overhead(length, cell, steps, half_height=hh)
        # the settings dipole_in_comoving_cell chooses ("auto"): k_x dx <= pi/3, every near Nyquist
        model = comoving_cell(length, hh, cell, "te")
        dt = commensurate_dt(model, length / 0.6)
        every = auto_sampling(dt, cell, 0.6, 0.96, 2 * np.pi * (nx // 6) / length)
        recorder_overhead(length, cell, steps, m_max=nx // 6, every=every, half_height=hh)


if __name__ == "__main__":
    main()
