"""Validation: Doppler-branch powers of a moving dipole, simulator against the exact planar
reference (co-moving periodic cell, like for like), the open-domain analysis, the 1D bulk
case, and the convergence with the cell size.

Every simulated figure comes from a scenario (natural units, validation/_cases.py) run
through ``fdtd.run`` -- the experiment procedure of ``gapwake run``: ramp, settle to the
default tolerance, record -- and read back from its results file.  The reference is computed
here from the case's known parameters (fdtd.reference.planar: the exact layered-medium
solution of a moving line source, Fourier-transformed along the motion; Bulk1D for the 1D
sheet), on the cell length the plan chose (light-line safe, ``res.plan["length"]``).

Writes validation/report/doppler_branches.md with figures.  Run:
    NUMBA_NUM_THREADS=1 python validation/doppler_branches.py
(about 2 minutes on one core of a quiet machine, 4-7 minutes when it is shared)
"""

from __future__ import annotations

import os
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from _cases import lorentz, run, scenario, spectra, with_scan  # noqa: E402
from _report import COLORS, Report, figure, save  # noqa: E402

import fdtd as f  # noqa: E402
from fdtd.reference.planar import Bulk1D, MovingLineSource, PlanarReference, Stack  # noqa: E402
from fdtd.sources.shapes import Shape  # noqa: E402

LZ = f.Material(1.0, (f.LorentzPole(2.0, 1.0, 0.1),), "lossy Lorentz (eps_inf 1, de 2, Omega 1, gamma 0.1)")
LZ2 = f.Material(2.0, (f.LorentzPole(1.5, 1.3, 0.15),), "second lossy Lorentz")
MATERIALS = {"lz": lorentz(1.0, (2.0, 1.0, 0.1)), "lz2": lorentz(2.0, (1.5, 1.3, 0.15))}
W0 = 1.2
SHAPE = Shape(3, 2)          # the scenario default (source.shape_order = 3, shape_scale = 2)

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


def stack(kind):
    return Stack.half_space(LZ) if kind == "half" else Stack.slot(LZ, LZ2, 1.5)


def geometry(kind):
    if kind == "half":
        return {"kind": "half-space", "material": "lz", "surface": 0.0}
    return {"kind": "slot", "lower": "lz", "upper": "lz2", "gap": 1.5, "surface": 0.0}


def dipole_case(v, h, axis, kind, d, length=9.0, transits=8, **extra):
    return scenario(MATERIALS, geometry(kind), {"cell": d, "length": length},
                    {"kind": "dipole", "speed": v, "height": h, "frequency": W0, "axis": axis},
                    run={"transits": transits}, **extra)


def run_case(v, h, axis, kind, d):
    """(Run, spectrum, like-for-like reference on the plan's k set, L)."""
    r = run(dipole_case(v, h, axis, kind, d), "branch")
    with r.results() as res:
        sim = res.spectrum()
        L = res.plan["length"]
    ref = PlanarReference.like_simulation(stack(kind), MovingLineSource("dipole", v, h, 1.0, W0, axis), SHAPE, d)
    return r, sim, ref.periodic(L), L


def branch_table(rep):
    d = 0.05
    rows = []
    fig, axes = figure(4, 2, figsize=(11, 13))
    worst = {"total": 0.0, "normal": 0.0}
    for ax, (name, v, h, axis, kind) in zip(axes.ravel(), CASES):
        r, sim, per, L = run_case(v, h, axis, kind, d)
        tr = sum(p.sum() for _k, p in per.values())
        rn, ra = per[1][1].sum(), per[-1][1].sum()
        worst["total"] = max(worst["total"], abs(sim.total / tr - 1))
        worst["normal"] = max(worst["normal"], abs(sim.normal / rn - 1))
        rows.append((name, f"{L:.3f}", f"{sim.total:.5f} ± {sim.error('total'):.0e}", f"{tr:.5f}",
                     f"{sim.total / tr:.4f}", f"{sim.normal / rn:.4f}",
                     f"{sim.anomalous / ra:.4f}" if ra > 0 else "-", f"{ra / tr:.2%}",
                     f"{sim.drag_force:.5f}", "yes" if r.value("steady") else "no",
                     f"{r.value('steps'):.0f}", f"{r.seconds:.0f}"))
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
                "with a second lossy medium above (eps_inf = 2, delta_eps = 1.5, Omega = 1.3, gamma = 0.15).  "
                "Each case is a scenario with `grid.length = 9`, `run.transits = 8` and otherwise the "
                "defaults (interior height, absorbing layers, settling tolerance 0.002), run through "
                "`fdtd.run`; L is the light-line-safe cell length the plan chose.  The reference is "
                "evaluated on the same k_x set with the same source form factors.")
    rep.table(["case", "L", "simulated total", "reference total", "total ratio", "normal ratio",
               "anomalous ratio", "anomalous share", "drag force", "steady", "steps", "run s"], rows)
    rep.para(f"Largest deviation of the total {worst['total']:.2%}, of the normal branch "
             f"{worst['normal']:.2%}.  The anomalous ratio is loose where the branch carries well "
             "under 1 % of the power (there its absolute error is below 1e-4 of the total).")
    rep.image(save(fig, "doppler_spectra.png"),
              "k_x spectra of both solvers: normal branch (circles / blue), anomalous (squares / orange)")


def _dissipation_per_transit(r, transits):
    """Dissipated power (outflow + bath) per block of one transit over the last ``transits``
    blocks, from the ledger of the results file."""
    with r.results() as res:
        t = res.array("ledger/time")
        d = res.array("ledger/outflow") + res.array("ledger/bath")
    rate = np.diff(d) / np.diff(t)
    return rate[-transits:]


def convergence(rep):
    v, h, axis, kind = 0.6, 0.5, "y", "half"
    cells = [0.1, 0.05, 0.025]
    err_point, err_like, est, diss = [], [], [], {}
    point_ref = PlanarReference(stack(kind), MovingLineSource("dipole", v, h, 1.0, W0, axis))
    rows = []
    for d in cells:
        r, sim, per, L = run_case(v, h, axis, kind, d)
        pp = point_ref.periodic(L)
        k, p = pp[1]
        i = int(np.argmax(p))                     # the dominant point of the spectrum
        sel = (sim.branch == 1) & np.isclose(sim.kx, k[i])
        err_point.append(abs(sim.power[sel].sum() / p[i] - 1))
        like = sum(q.sum() for _k, q in per.values())
        err_like.append(abs(sim.total / like - 1))
        est.append(sim.error("total") / sim.total)
        diss[d] = (_dissipation_per_transit(r, 8), sim.halves[0].sum(), sim.halves[1].sum(), sim.total, like)
        rows.append((d, f"{L:.3f}", f"{k[i]:.3f}", f"{err_point[-1]:.2e}", f"{err_like[-1]:.2e}",
                     f"{est[-1]:.1e}", f"{sim.halves[0].sum() / like - 1:+.1e} / {sim.halves[1].sum() / like - 1:+.1e}",
                     f"{np.ptp(diss[d][0]) / np.mean(diss[d][0]):.1e}", f"{r.seconds:.0f}"))
    slope = np.polyfit(np.log(cells), np.log(err_point), 1)[0]
    fig, ax = figure(figsize=(6, 4.2))
    ax.loglog(cells, err_point, "o-", label="dominant k_x point vs point-source reference")
    ax.loglog(cells, err_like, "s-", label="total vs like-for-like reference")
    ax.loglog(cells, est, "^:", label="the run's own error estimate (relative)")
    ax.loglog(cells, err_point[0] * (np.array(cells) / cells[0]) ** 2, "k:", label="slope 2")
    ax.set(xlabel="cell size dx (normalized)", ylabel="relative error", title="convergence, v = 0.6, h = 0.5")
    ax.legend(fontsize=8)
    fine = diss[cells[-1]][0]
    rep.section("Convergence with the cell size",
                "Against the point-source reference the error is dominated by the source's finite size "
                f"and falls at second order (log-log slope {slope:.2f} over the three cells).  Against the "
                "like-for-like reference (same form factors) the total is off by "
                + ", ".join(f"{e:.1e}" for e in err_like) + f" at dx = {', '.join(map(str, cells))}: not "
                "monotonic, and not tracked by the run's error estimate (the larger of the spread "
                "between the two half-windows and the unresolved part of the ledger's work), which is "
                + ", ".join(f"{e:.1e}" for e in est) + ".  The half-windows on their own (column 'halves') "
                "are mostly further from the reference than the full window.  The dissipated power per transit "
                "over the 8 recorded transits is not constant: at dx = "
                f"{cells[-1]} it runs " + ", ".join(f"{x / np.mean(fine) - 1:+.1%}" for x in fine)
                + " about its mean, an oscillation over a few transits that an 8-transit record does not "
                "hold a whole number of times; this is the likeliest cause of the 0.5 % at the finest "
                "cell (not proven here).")
    rep.table(["dx", "L", "k_x of dominant point", "error vs point source", "total error vs like-for-like",
               "run's error estimate", "halves vs like-for-like", "dissipation per transit, peak-to-peak / mean",
               "run s"], rows)
    rep.image(save(fig, "doppler_convergence.png"), "Convergence with the cell size")


def open_domain(rep):
    v, h, d = 0.6, 0.5, 0.05
    x_lo, x_hi, half = 45.0, 65.0, 12.0
    sc = scenario(MATERIALS, geometry("half"), {"cell": d, "length": 80.0, "height": 3.0, "absorber": 1.5},
                  {"kind": "dipole", "speed": v, "height": h, "frequency": W0, "axis": "y", "x0": 2.0,
                   "ramp_periods": 10.0 * W0 / (2 * np.pi)},
                  run={"kind": "open", "time": (x_hi + half - 2.0) / v + 1.0},
                  record={"passage_start": x_lo, "passage_stop": x_hi})
    r = run(sc, "open")
    with r.results() as res:
        sim = res.spectrum()
        window = res.attrs("doppler")["window"]
    ref = PlanarReference.like_simulation(Stack.half_space(LZ), MovingLineSource("dipole", v, h, 1.0, W0, "y"),
                                          SHAPE, d)
    rr = ref.solve()
    fig, ax = figure(figsize=(7, 4))
    dk = 2 * np.pi / (v * window)      # bin width in k_x of the passage analysis (window: time)
    for b, c, lab in ((1, COLORS[0], "normal"), (-1, COLORS[1], "anomalous")):
        kk = np.linspace(-3, 12, 3000)
        ax.plot(kk, ref.density(kk, b) / (2 * np.pi), "-", color=c, label=f"reference density, {lab}")
        m = sim.branch == b
        ax.plot(sim.kx[m], sim.power[m] / dk, ".", color=c, ms=4, label=f"open-domain simulation, {lab}")
    ax.set(xlim=(-3, 12), xlabel="k_x (normalized)", ylabel="dP/dk_x (normalized)",
           title="open domain (no periodicity), v = 0.6, h = 0.5, dx = 0.05")
    ax.legend(fontsize=8)
    tot, nor, ano = (r.value(n) for n in ("total_power", "normal_power", "anomalous_power"))
    rep.section("Open domain",
                "A scenario with `run.kind = \"open\"`: a domain 80 long and 6 high inside absorbing "
                "layers 1.5 thick, the dipole starting at x = 2 and switched on over 10 rest-frame time "
                f"units; `record.passage_start/stop` = {x_lo}/{x_hi}.  The procedure's passage "
                "analysis takes the work done on the columns the source passes, Hann-averaged over "
                f"that span, each over the longest window the run allows (here +-{window * v / 2:.2f}).  "
                f"Total {tot:.5f} (continuum reference {rr.total:.5f}, ratio {tot / rr.total:.4f}), normal "
                f"{nor:.5f} ({rr.normal:.5f}, {nor / rr.normal:.4f}), anomalous {ano:.6f} "
                f"({rr.anomalous:.6f}, {ano / rr.anomalous:.4f}).  {r.value('steps'):.0f} steps, "
                f"{r.seconds:.0f} s.")
    rep.image(save(fig, "open_domain.png"), "Continuous k_x spectrum from the open domain")


def bulk(rep):
    med = f.Material(1.0, (f.LorentzPole(2.0, 1.0, 0.3),), "lz")
    speeds = [0.2, 0.35, 0.5, 0.7]
    w0, L, d = 0.6, 12.0, 0.05
    sc = scenario({"lz": lorentz(1.0, (2.0, 1.0, 0.3))}, {"background": "lz"},
                  {"polarization": "1d", "cell": d, "length": L},
                  {"kind": "dipole", "speed": speeds[0], "frequency": w0,
                   "ramp_periods": 40.0 * w0 / (2 * np.pi)}, run={"transits": 10})
    r = run(with_scan(sc, "source.speed", speeds), "bulk")
    rows = []
    for k, (v, sim) in enumerate(zip(speeds, spectra(r))):
        with r.results(k) as res:          # the cell, cell size and shape the point ran with
            plan = res.plan
        shape, d_run, L_run = Shape(*plan["shape"]), plan["cell"], plan["length"]
        per = Bulk1D(med, v, w0, form_factor=lambda q, s=shape, dd=d_run: s.form_factor(q, dd)).periodic(L_run)
        tr = sum(p.sum() for _k, p in per.values())
        cont = Bulk1D(med, v, w0).solve()
        rows.append((v, f"{sim.total / tr:.4f}", f"{sim.normal / per[1][1].sum():.4f}",
                     f"{sim.anomalous / per[-1][1].sum():.4f}", f"{per[-1][1].sum() / tr:.2%}",
                     f"{cont.anomalous / cont.total:.2%}", "yes" if r.value("steady", k) else "no",
                     f"{r.value('steps', k):.0f}", f"{L_run:.4g}", f"{d_run:.4g}"))
    rep.section("1D bulk: a dipole sheet through a lossy Lorentz medium (gamma = 0.3)",
                "A 1D scenario (`grid.polarization = \"1d\"`, periodic cell L = 12, dx = 0.05, the "
                "oscillation switched on over 40 rest-frame time units, 10 transits recorded) with a "
                "`[scan]` over `source.speed`; ratios simulated / reference (Bulk1D with the shape's "
                "form factor) on the same k set, and the anomalous share of the continuum reference.  "
                f"The scan took {r.seconds:.0f} s.")
    rep.table(["beta", "total ratio", "normal ratio", "anomalous ratio", "anomalous share (cell)",
               "anomalous share (continuum)", "steady", "steps", "L", "dx"], rows)


def reference_speed(rep):
    rows = []
    for name, v, h, axis, kind in CASES:
        t0 = time.perf_counter()
        r = PlanarReference(stack(kind), MovingLineSource("dipole", v, h, 1.0, W0, axis)).solve()
        rows.append((name, f"{r.total:.6f}", f"{r.normal:.6f}", f"{r.anomalous:.6f}",
                     f"{r.drag_force:.6f}", f"{1e3 * (time.perf_counter() - t0):.0f}"))
    rep.section("Reference solver (continuum, point source)",
                "Total, normal and anomalous power, drag force; time per (v, h) point on this machine.")
    rep.table(["case", "total", "normal", "anomalous", "drag force", "ms"], rows)


def main():
    rep = Report("Doppler branches: simulator against the planar reference", "doppler_branches.md")
    for fn in (reference_speed, branch_table, convergence, open_domain, bulk):
        t0 = time.time()
        print("running", fn.__name__, flush=True)
        fn(rep)
        print(f"  {fn.__name__}: {time.time() - t0:.0f} s", flush=True)
    print("report written to", rep.write())


if __name__ == "__main__":
    main()
