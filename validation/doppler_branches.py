"""Validation: Doppler-branch powers of a moving dipole, simulator against the exact planar
reference (co-moving periodic cell, like for like), the open-domain analysis, the 1D bulk
case, and the convergence with the cell size.

Writes validation/report/doppler_branches.md with figures.  Run:
    python validation/doppler_branches.py          (about 5 minutes on 2 cores)
"""

from __future__ import annotations

import os
import sys
import time
import warnings

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import fdtd as f  # noqa: E402
from _report import COLORS, Report, figure, save  # noqa: E402
from fdtd.sources.moving import MovingDipole  # noqa: E402
from fdtd.reference.planar import Bulk1D, MovingLineSource, PlanarReference, Stack  # noqa: E402
from fdtd.experiment.cell import dipole_in_comoving_cell, dipole_sheet_in_bulk, light_line_safe_length  # noqa: E402
from fdtd.sources.shapes import Shape  # noqa: E402
from fdtd.recording.doppler import PassageWorkRecorder  # noqa: E402
from fdtd.sources.worldlines import UniformMotion  # noqa: E402

LZ = f.Material(1.0, (f.LorentzPole(2.0, 1.0, 0.1),), "lossy Lorentz (eps_inf 1, de 2, Omega 1, gamma 0.1)")
LZ2 = f.Material(2.0, (f.LorentzPole(1.5, 1.3, 0.15),), "second lossy Lorentz")
W0 = 1.2
SHAPE = Shape(3, 2)


def geometry(kind):
    if kind == "half":
        return [(f.HalfSpace("y", below=0.0), LZ)], Stack.half_space(LZ)
    return ([(f.HalfSpace("y", below=0.0), LZ), (f.HalfSpace("y", above=1.5), LZ2)],
            Stack.slot(LZ, LZ2, 1.5))


CASES = [
    ("half-space, v=0.3, h=0.5", 0.3, 0.5, "y", "half"),
    ("half-space, v=0.6, h=0.5", 0.6, 0.5, "y", "half"),
    ("half-space, v=0.3, h=1.0", 0.3, 1.0, "y", "half"),
    ("half-space, v=0.6, h=1.0", 0.6, 1.0, "y", "half"),
    ("half-space, v=0.6, h=0.5, x-dipole", 0.6, 0.5, "x", "half"),
    ("half-space, v=0.6, h=0.5, z-dipole (TM)", 0.6, 0.5, "z", "half"),
    ("slot 1.5, v=0.6, h=0.5", 0.6, 0.5, "y", "slot"),
    ("slot 1.5, v=0.3, h=0.75", 0.3, 0.75, "y", "slot"),
]


def run_case(v, h, axis, kind, d):
    regions, stack = geometry(kind)
    Omega = W0 * np.sqrt(1 - v * v)
    L = light_line_safe_length(9.0, d, v, Omega)
    out = dipole_in_comoving_cell(v, h, W0, axis, L, d, regions=regions, transits=8)
    ref = PlanarReference.like_simulation(stack, MovingLineSource("dipole", v, h, 1.0, W0, axis), SHAPE, d)
    return out, ref.periodic(L), L


def branch_table(rep):
    d = 0.05
    rows = []
    fig, axes = figure(4, 2, figsize=(11, 13))
    for ax, (name, v, h, axis, kind) in zip(axes.ravel(), CASES):
        t0 = time.time()
        out, per, L = run_case(v, h, axis, kind, d)
        sim = out["spectrum"]
        tr = sum(p.sum() for _k, p in per.values())
        rn, ra = per[1][1].sum(), per[-1][1].sum()
        rows.append((name, f"{sim.total:.5f} ± {sim.error('total'):.0e}", f"{tr:.5f}",
                     f"{sim.total / tr:.4f}", f"{sim.normal / rn:.4f}",
                     f"{sim.anomalous / ra:.4f}" if ra > 0 else "-", f"{ra / tr:.2%}",
                     f"{sim.drag_force:.5f}", f"{time.time() - t0:.0f}"))
        for b, c, lab in ((1, COLORS[0], "normal"), (-1, COLORS[1], "anomalous")):
            k, p = per[b]
            sel = p > 1e-6 * tr
            ax.semilogy(k[sel], p[sel], "-", color=c, lw=1.2, label=f"reference, {lab}")
            m = (sim.branch == b) & (sim.power > 1e-6 * tr)
            ax.semilogy(sim.kx[m], sim.power[m], "o" if b == 1 else "s", mfc="none", color=c, ms=5,
                        label=f"simulation, {lab}")
        ax.set(title=name, xlabel="k_x (normalized, 1/ell)", ylabel="power per point (normalized)")
        ax.legend(fontsize=7)
    rep.section("Branch powers, co-moving cell, dx = 0.05",
                f"Dipole omega0 = {W0} (rest frame), default cubic x2 shape; lossy Lorentz half-space "
                "(eps_inf = 1, delta_eps = 2, Omega = 1, gamma = 0.1) below y = 0, or a slot of width 1.5 "
                "with a second lossy medium above.  The reference is evaluated on the same k_x set with "
                "the same source form factors.")
    rep.table(["case", "simulated total", "reference total", "total ratio", "normal ratio",
               "anomalous ratio", "anomalous share", "drag force", "run s"], rows)
    rep.image(save(fig, "doppler_spectra.png"),
              "k_x spectra of both solvers: normal branch (circles / blue), anomalous (squares / orange)")


def convergence(rep):
    v, h, axis, kind = 0.6, 0.5, "y", "half"
    cells = [0.1, 0.05, 0.025]
    err_point, err_like = [], []
    regions, stack = geometry(kind)
    point_ref = PlanarReference(stack, MovingLineSource("dipole", v, h, 1.0, W0, axis))
    rows = []
    for d in cells:
        out, per, L = run_case(v, h, axis, kind, d)
        sim = out["spectrum"]
        pp = point_ref.periodic(L)
        # the dominant point of the spectrum
        k, p = pp[1]
        i = int(np.argmax(p))
        sel = (sim.branch == 1) & np.isclose(sim.kx, k[i])
        err_point.append(abs(sim.power[sel].sum() / p[i] - 1))
        kl, pl = per[1]
        err_like.append(abs(sim.total / sum(q.sum() for _k, q in per.values()) - 1))
        rows.append((d, f"{L:.3f}", f"{k[i]:.3f}", f"{err_point[-1]:.2e}", f"{err_like[-1]:.2e}"))
    fig, ax = figure(figsize=(6, 4.2))
    ax.loglog(cells, err_point, "o-", label="dominant k_x point vs point-source reference")
    ax.loglog(cells, err_like, "s-", label="total vs like-for-like reference")
    ax.loglog(cells, err_point[0] * (np.array(cells) / cells[0]) ** 2, "k:", label="slope 2")
    ax.set(xlabel="cell size dx (normalized)", ylabel="relative error", title="convergence, v = 0.6, h = 0.5")
    ax.legend(fontsize=8)
    rep.section("Convergence with the cell size",
                "Against the point-source reference the error is dominated by the source's finite size "
                "and falls at second order; against the like-for-like reference (same form factors) "
                "what remains is small at every resolution.")
    rep.table(["dx", "L", "k_x of dominant point", "error vs point source", "total error vs like-for-like"],
              rows)
    rep.image(save(fig, "doppler_convergence.png"), "Second-order convergence")


def open_domain(rep):
    v, h, d, npml = 0.6, 0.5, 0.05, 30
    g = f.Grid((int(80 / d) + 2 * npml, int(6.0 / d) + 2 * npml), (d, d), "te",
               origin=(-npml * d, -3.0 - npml * d))
    s = f.Solver(f.Model(g, [(f.HalfSpace("y", below=0.0), LZ)], edges=f.CPML(npml, alpha_max=0.2)),
                 courant=0.95, ledger=False)
    src = MovingDipole(1.0, W0, UniformMotion((2.0, h), (v, 0.0)), axis="y", ramp=10.0)
    s.attach(src)
    rec = PassageWorkRecorder(s, src, v, src.lab_frequency(), 45.0, 65.0, half_window=12.0)
    s.advance(to_time=(65.0 + 12.0 - 2.0) / v + 1.0)
    sim = rec.result()
    ref = PlanarReference.like_simulation(Stack.half_space(LZ), MovingLineSource("dipole", v, h, 1.0, W0, "y"),
                                          SHAPE, d)
    r = ref.solve()
    fig, ax = figure(figsize=(7, 4))
    dk = 2 * np.pi / (2 * 12.0)      # bin width in k_x of the passage analysis
    for b, c, lab in ((1, COLORS[0], "normal"), (-1, COLORS[1], "anomalous")):
        kk = np.linspace(-3, 12, 3000)
        ax.plot(kk, ref.density(kk, b) / (2 * np.pi), "-", color=c, label=f"reference density, {lab}")
        m = sim.branch == b
        ax.plot(sim.kx[m], sim.power[m] / dk, ".", color=c, ms=4, label=f"open-domain simulation, {lab}")
    ax.set(xlim=(-3, 12), xlabel="k_x (normalized)", ylabel="dP/dk_x (normalized)",
           title="open domain (no periodicity), v = 0.6, h = 0.5, dx = 0.05")
    ax.legend(fontsize=8)
    rep.section("Open domain",
                f"A long domain with absorbing layers on every side; the work done on the columns the "
                f"source passes, Hann-averaged over a span of several internal periods.  Total "
                f"{sim.total:.5f} (reference {r.total:.5f}), normal {sim.normal:.5f} ({r.normal:.5f}), "
                f"anomalous {sim.anomalous:.6f} ({r.anomalous:.6f}).")
    rep.image(save(fig, "open_domain.png"), "Continuous k_x spectrum from the open domain")


def bulk(rep):
    med = f.Material(1.0, (f.LorentzPole(2.0, 1.0, 0.3),), "lz")
    rows = []
    for v in (0.2, 0.35, 0.5, 0.7):
        w0, L, d = 0.6, 12.0, 0.05
        sim, _s = dipole_sheet_in_bulk(med, v, w0, L, d, shape=SHAPE, ramp=40.0, start=400.0, transits=10)
        per = Bulk1D(med, v, w0, form_factor=lambda k: SHAPE.form_factor(k, d)).periodic(L)
        tr = sum(p.sum() for _k, p in per.values())
        cont = Bulk1D(med, v, w0).solve()
        rows.append((v, f"{sim.total / tr:.4f}", f"{sim.normal / per[1][1].sum():.4f}",
                     f"{sim.anomalous / per[-1][1].sum():.4f}", f"{per[-1][1].sum() / tr:.2%}",
                     f"{cont.anomalous / cont.total:.2%}"))
    rep.section("1D bulk: a dipole sheet through a lossy Lorentz medium (gamma = 0.3)",
                "Periodic 1D cell L = 12, dx = 0.05; ratios simulated / reference on the same k set, and "
                "the anomalous share of the continuum reference.")
    rep.table(["beta", "total ratio", "normal ratio", "anomalous ratio", "anomalous share (cell)",
               "anomalous share (continuum)"], rows)


def reference_speed(rep):
    rows = []
    for name, v, h, axis, kind in CASES:
        _regions, stack = geometry(kind)
        t0 = time.perf_counter()
        r = PlanarReference(stack, MovingLineSource("dipole", v, h, 1.0, W0, axis)).solve()
        rows.append((name, f"{r.total:.6f}", f"{r.normal:.6f}", f"{r.anomalous:.6f}",
                     f"{r.drag_force:.6f}", f"{1e3 * (time.perf_counter() - t0):.0f}"))
    rep.section("Reference solver (continuum, point source)",
                "Total, normal and anomalous power, drag force; time per (v, h) point on this machine.")
    rep.table(["case", "total", "normal", "anomalous", "drag force", "ms"], rows)


def main():
    warnings.simplefilter("ignore")
    rep = Report("Doppler branches: simulator against the planar reference", "doppler_branches.md")
    for fn in (reference_speed, branch_table, convergence, open_domain, bulk):
        print("running", fn.__name__, flush=True)
        fn(rep)
    print("report written to", rep.write())


if __name__ == "__main__":
    main()
