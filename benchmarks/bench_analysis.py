"""Cost of the Doppler analysis and speed of the planar reference solver.

Prints:
* the time of one (v, h) point of the planar reference (continuum, both branches,
  drag and fluxes), for several geometries (goal: well under a second);
* the share of a co-moving-cell run spent in the Doppler work and flux recorders,
  measured on one solver with the recorders attached and detached, interleaved
  (goal: at most 10 %), for a small and a production-sized cell: with every harmonic
  recorded at every step (the most it can cost), and with the settings the experiment
  procedure chooses (``Experiment._start_recording`` in fdtd/experiment/procedure.py:
  harmonics up to k_x dx = pi/3, i.e. m_max = nx // M_MAX_FRACTION_2D, sampled every
  ``auto_sampling`` steps near the Nyquist rate of the highest recorded line).

The cells are built by the product: a scenario (natural units) is planned and set up by
:class:`fdtd.experiment.procedure.Experiment` (the same model, CPML frequency shift,
commensurate time step and source as ``gapwake run``), and the procedure's own recorders
are attached by its record-phase method.

Usage: NUMBA_NUM_THREADS=1 python benchmarks/bench_analysis.py
"""

from __future__ import annotations

import os
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

import fdtd as f  # noqa: E402
from fdtd.experiment.procedure import Experiment  # noqa: E402
from fdtd.recording.doppler import DopplerFluxRecorder, DopplerWorkRecorder  # noqa: E402
from fdtd.reference.planar import Bulk1D, MovingLineSource, PlanarReference, Stack  # noqa: E402
from fdtd.scenario.plan import plan as make_plan  # noqa: E402
from fdtd.scenario.schema import Scenario  # noqa: E402

LZ = f.Material(1.0, (f.LorentzPole(2.0, 1.0, 0.1),), "lz")
V, W0, H = 0.6, 1.2, 0.5


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


def experiment(length, cell, half_height):
    """The procedure's set-up of a dipole above the lossy half-space (threads: NUMBA_NUM_THREADS)."""
    sc = Scenario({"units": {"mode": "natural", "frequency": "1 eV"},
                   "materials": {"lz": {"kind": "poles", "eps_inf": 1.0,
                                        "poles": [{"kind": "lorentz", "delta_eps": 2.0, "omega": 1.0,
                                                   "gamma": 0.1}]}},
                   "geometry": {"kind": "half-space", "material": "lz"},
                   "grid": {"cell": cell, "length": length, "height": half_height, "absorber": 1.5},
                   "source": {"kind": "dipole", "speed": V, "height": H, "frequency": W0, "axis": "y"},
                   "record": {"flux_heights": [1.2, 0.0]}}, where="bench")
    return Experiment(make_plan(sc.resolve()), progress=False)


def recorder_overhead(length, cell, steps=200, repeats=3, half_height=3.0):
    exp = experiment(length, cell, half_height)
    s, p = exp.solver, exp.plan
    s.advance(steps=5, progress=False)
    # the procedure's recorders, attached as its record phase does
    exp.state["record_start_step"] = s.step_count
    exp._start_recording()
    auto = [r for r in (exp.work, exp.flux) if r is not None]
    rows = exp.flux.rows if exp.flux is not None else []
    t0 = s.time
    full = [DopplerWorkRecorder(s, exp.source, p.speed, p.Omega, start=t0, m_max=None, every=1),
            DopplerFluxRecorder(s, p.speed, p.Omega, rows, start=t0, m_max=None, every=1)]
    s.observers = []
    nx, ny = exp.model.grid.shape
    label = {"all": "every harmonic, every step",
             "auto": f"procedure: m_max {int(np.max(exp.work.m))}, every {exp.work.every}"}
    best = {"off": np.inf, "all": np.inf, "auto": np.inf}
    for _ in range(repeats):
        for key, recs in (("off", []), ("all", full), ("auto", auto)):
            s.observers = list(recs)
            t1 = time.perf_counter()
            s.advance(steps=steps, progress=False)
            best[key] = min(best[key], (time.perf_counter() - t1) / steps)
    s.observers = []
    print(f"  cell {p.length:g} x {2 * p.half_height:g} + layers, dx = {p.cell:g} ({nx} x {ny}), "
          f"step {1e3 * best['off']:.2f} ms:")
    for key in ("all", "auto"):
        share = (best[key] - best["off"]) / best[key]
        print(f"    {label[key]:34s} with recorders {1e3 * best[key]:.2f} ms, share {share:.1%} "
              f"(ratio {best[key] / best['off']:.3f}; goal share <= 10%)")


def main():
    reference_timing()
    print(f"Doppler work + flux recorders (threads: {os.environ.get('NUMBA_NUM_THREADS', 'all')}):")
    for length, cell, steps, hh in ((9.2, 0.1, 200, 3.0), (9.15, 0.025, 60, 3.0), (20.0, 0.02, 30, 3.0),
                                    (20.0, 0.02, 20, 10.0)):
        recorder_overhead(length, cell, steps, half_height=hh)


if __name__ == "__main__":
    main()
