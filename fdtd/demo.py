"""A one-minute demonstration of the core solver.

A short in-plane current pulse (TE_z) 1.2 units above a lossy Lorentz half-space,
CPML on every side.  Prints the energy ledger and writes a snapshot figure.
"""

from __future__ import annotations

import os

import numpy as np

from . import CPML, GaussianPulse, Grid, HalfSpace, LorentzPole, Material, Model, Solver, line_current


def run_demo(outdir: str = "gapwake-demo", progress: bool | None = None) -> dict:
    os.makedirs(outdir, exist_ok=True)
    medium = Material(2.0, (LorentzPole(3.0, 4.0, 0.3),), "demo-lorentz")
    grid = Grid((300, 240), (0.025, 0.025), "te", origin=(-3.75, -3.0))
    model = Model(grid, [(HalfSpace("y", below=0.0), medium)], edges=CPML(16))
    solver = Solver(model, courant=0.95)
    solver.add_source(line_current(solver, "Ex", (0.0, 1.2), 1.0,
                                   GaussianPulse(t0=0.8, width=0.12, derivative=True)))
    solver.run(until=3.2, progress=progress, ledger_every=5)
    snap = solver.fields["Hz"].copy()
    solver.run(until=8.0, progress=progress, ledger_every=5)
    print(model.describe())
    print(f"dt = {solver.dt:.5g} (stability limit {model.max_stable_dt():.5g}), "
          f"{solver.step_count} steps, {solver.wall_time:.2f} s for the last leg")
    print(solver.ledger.table())

    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, (ax0, ax1) = plt.subplots(1, 2, figsize=(10, 4), constrained_layout=True)
    x = grid.axis_coordinates("Hz", 0)
    y = grid.axis_coordinates("Hz", 1)
    lim = np.max(np.abs(snap)) * 0.6
    im = ax0.pcolormesh(x, y, snap.T, cmap="RdBu_r", vmin=-lim, vmax=lim, shading="auto")
    ax0.axhline(0.0, color="k", lw=0.8)
    ax0.plot([0.0], [1.2], marker="o", color="k", ms=4)
    ax0.set(xlabel="x (length units)", ylabel="y (length units)", aspect="equal",
            title="Hz at t = 3.2 (normalized units)")
    fig.colorbar(im, ax=ax0, label="Hz (normalized)")
    led = solver.ledger.samples
    t = np.array([s.time for s in led])
    ax1.plot(t, [s.stored for s in led], label="stored")
    ax1.plot(t, [s.source_work for s in led], "--", label="net work by source")
    ax1.plot(t, [s.bath.sum() for s in led], "-.", label="heat into bath")
    ax1.plot(t, [s.outflow for s in led], ":", label="into absorbing layers")
    ax1.set_yscale("log")
    ax1.set_ylim(1e-4, 3 * max(s.stored for s in led))
    ax1.set(xlabel="t (normalized time)", ylabel="energy per unit length (normalized)",
            title=f"ledger, residual {solver.ledger.residual():.1e}")
    ax1.legend()
    path = os.path.join(outdir, "demo_snapshot_and_ledger.png")
    fig.savefig(path, dpi=120)
    plt.close(fig)
    print(f"figure written to {path}")
    return {"figure": path, "ledger": solver.ledger.summary()}
