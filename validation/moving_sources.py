"""Validation of moving sources: 2D Frank-Tamm, threshold, angle, Lorentz bands, dipoles.

Writes validation/report/moving_sources.md with figures.  Run:
    NUMBA_NUM_THREADS=1 python validation/moving_sources.py       (about 1.5 minutes on one core)

Every figure compared with a closed form (Frank-Tamm harmonics, the threshold scan, the
Cherenkov angle, the moving dipole's power) comes from a scenario (natural units,
validation/_cases.py) run through ``fdtd.run`` -- the experiment procedure of ``gapwake
run`` -- and read back from its results file.  Only the dipole-against-charge-pair check,
which needs sources the scenario layer does not offer (two charges on prescribed world
lines), drives the solver directly.

References: 2D analogue of the Frank-Tamm formula (I. Frank and I. Tamm, Dokl. Akad.
Nauk SSSR 14, 109 (1937); J. D. Jackson, Classical Electrodynamics, 3rd ed., sec. 13.4,
for the 3D original; from memory), derived in docs/theory/frank-tamm-2d.md and coded in
fdtd/reference/closed_forms.py; threshold beta = 1/n and angle cos(theta) = 1/(n beta)
(Jackson sec. 13.4, from memory); the radiated power of a line dipole at rest,
omega^3 p^2/16 in plane and /8 out of plane (from the 2D Green's function (i/4) H0(k rho),
fdtd/reference/closed_forms.py); Lorentz invariance of the radiated power (Jackson
sec. 14.1, from memory).
"""

from __future__ import annotations

import math
import os
import sys
import time
import warnings

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from _cases import constant, lorentz, run, scenario, with_scan  # noqa: E402
from _report import COLORS, Report, figure, save  # noqa: E402

import fdtd as f  # noqa: E402
from fdtd.reference import closed_forms as theory  # noqa: E402
from fdtd.sources.moving import MovingCharge, MovingDipole  # noqa: E402
from fdtd.sources.shapes import Shape  # noqa: E402
from fdtd.sources.worldlines import CallableWorldLine, UniformMotion  # noqa: E402

L = 4.0


def charge_case(medium: dict, v, length, cell, shape, transits=10, record=None, run_=None):
    """A line charge crossing a uniform medium in a co-moving cell (as tests/test_cherenkov.py):
    interior half height 2, absorbing layers 1.2, speed ramp 2 from an electrostatic start."""
    return scenario({"medium": medium}, {"background": "medium"},
                    {"cell": cell, "length": length, "height": 2.0, "absorber": 1.2},
                    {"kind": "charge", "speed": v, "speed_ramp": 2.0, "shape_order": shape.order,
                     "shape_scale": shape.scale},
                    run=dict({"transits": transits}, **(run_ or {})), record=record)


def _harmonics(spec):
    sel = spec.kx > 0
    return spec.kx[sel], spec.omega[sel], spec.power[sel]


def frank_tamm(rep: Report) -> None:
    v, shape = 0.8, Shape(2, 1)
    cells = [0.1, 0.05, 0.025]
    fig, (ax, bx) = figure(1, 2, figsize=(11, 4))
    err_raw, err_ff, rows = [], [], []
    for c, d in zip(COLORS, cells):
        r = run(charge_case(constant(2.25), v, L, d, shape), "ft")
        with r.results() as res:
            spec = res.spectrum()
        k, w, P = _harmonics(spec)
        an = theory.row_harmonic_power(v, L, 2.25)
        ff = shape.form_factor(k, d) ** 2 * shape.form_factor(k * math.sqrt(v * v * 2.25 - 1), d) ** 2
        ax.plot(w[:12], P[:12] / an, "o-", color=c, ms=4, label=f"dx = {d} (raw)")
        ax.plot(w[:12], P[:12] / (an * ff[:12]), "s--", color=c, ms=3, alpha=0.7,
                label=f"dx = {d} (with form factor)")
        err_raw.append(abs(P[1] / an - 1))
        err_ff.append(abs(P[1] / (an * ff[1]) - 1))
        lam = 2 * np.pi / (w * 1.5) / d
        res20 = lam >= 20
        rows.append((d, f"{P[0] / an:.4f}", f"{P[1] / an:.4f}", f"{P[2] / an:.4f}", f"{lam[2]:.0f}",
                     f"{np.max(np.abs(P[res20] / (an * ff[res20]) - 1)):.1e} ({res20.sum()})",
                     f"{spec.unresolved / spec.total:.1e}", "yes" if r.value("steady") else "no",
                     f"{r.seconds:.0f}"))
    slope_raw = np.polyfit(np.log(cells), np.log(err_raw), 1)[0]
    ax.axhline(1, color="k", lw=0.8)
    ax.set(xlabel="omega (normalized, c/ell)", ylabel="simulated / analytic power per harmonic",
           title="per-harmonic power ratio")
    ax.legend(fontsize=7)
    bx.loglog(cells, err_raw, "o-", label="m = 2, point-charge formula")
    bx.loglog(cells, err_ff, "s-", label="m = 2, with form factor")
    bx.loglog(cells, err_raw[0] * (np.array(cells) / cells[0]) ** 2, "k:", label="slope 2")
    bx.set(xlabel="cell size dx (normalized length)", ylabel="relative error", title="convergence")
    bx.legend(fontsize=8)
    rep.section("2D Frank-Tamm, uniform dielectric n = 1.5, beta = 0.8",
                "Scenarios: a line charge (quadratic x1 shape) in a uniform medium eps = 2.25, co-moving "
                "cell L = 4, interior half height 2, absorbing layers 1.2, speed ramp 2 from the "
                "electrostatic start, 10 transits recorded.  Power per harmonic k_m = 2 pi m/L against "
                "P_m = (v lambda^2/L) sqrt(beta^2 eps - 1)/eps (point charge) and against the same "
                "times the deposited shape's form factor |F(k_x) F(k_y)|^2 (like for like).  "
                f"The m = 2 error against the point-charge formula falls with slope {slope_raw:.2f}.")
    rep.image(save(fig, "frank_tamm.png"), "2D Frank-Tamm: simulated over analytic power per harmonic, "
              "and the convergence of the m = 2 error")
    rep.table(["dx", "m=1 ratio", "m=2 ratio", "m=3 ratio", "cells per wavelength (m=3)",
               "max error with form factor, >= 20 cells per wavelength (harmonics)", "unresolved/total",
               "steady", "run s"], rows)


def lorentz_band(rep: Report) -> None:
    W0, v, Lz, d = 4.0, 0.6, 6.0, 0.04
    med = f.Material(1.0, (f.LorentzPole(1.25, W0, 0.0),), "lossless Lorentz")
    r = run(charge_case(lorentz(1.0, (1.25, W0, 0.0)), v, Lz, d, Shape(2, 1)), "band")
    with r.results() as res:
        spec = res.spectrum()
    _k, w, P = _harmonics(spec)
    edges = theory.cherenkov_band_edges(med, v, 9.0)
    wd = np.linspace(0.01, 9.0, 4000)
    an = theory.row_harmonic_power(v, Lz, np.real(med.permittivity(wd)))
    fig, ax = figure(figsize=(7, 4))
    ax.plot(wd, an, "-", color=COLORS[0], label="2D Frank-Tamm (per harmonic)")
    ax.plot(w, P, "o", color=COLORS[1], label="simulation, dx = 0.04")
    for e in edges:
        ax.axvline(e, color="k", ls=":", lw=1)
    ax.axvline(W0 * 1.5, color=COLORS[2], ls="--", lw=1, label="omega_L (eps = 0)")
    ax.set(xlim=(0, 9), ylim=(-0.1 * P.max(), 1.3 * P.max()), xlabel="omega (normalized)",
           ylabel="power per harmonic (normalized)",
           title="line charge, beta = 0.6, lossless Lorentz medium\n(Omega = 4, delta_eps = 1.25)")
    ax.legend(fontsize=8)
    rep.section("Dispersive medium: Cherenkov band",
                f"Scenario as above with a lossless Lorentz medium (eps_inf 1, delta_eps 1.25, Omega 4), "
                f"L = 6, dx = 0.04.  Analytic band edges {np.round(edges, 4).tolist()} (omega_1 from "
                "eps = 1/beta^2, the resonance Omega).  Near omega_L the charge excites the longitudinal "
                "resonance of the lossless medium (not part of the transverse Frank-Tamm formula; the "
                "harmonics next to omega_L carry a little power that the closed form does not have).  "
                f"The run {'met' if r.value('steady') else 'did not meet'} the default settling "
                f"tolerance and took {r.seconds:.0f} s.")
    rep.image(save(fig, "lorentz_band.png"), "Emission only inside the band where beta^2 eps(omega) > 1")
    rows = []
    for wi, Pi in zip(w[:12], P[:12]):
        e = float(np.real(med.permittivity(wi)))
        a = float(theory.row_harmonic_power(v, Lz, e))
        lam = 2 * np.pi / (wi * math.sqrt(abs(e))) / d
        rows.append((f"{wi:.3f}", f"{e:.3f}", f"{lam:.1f}", f"{Pi:.3e}", f"{a:.3e}",
                     f"{Pi / a:.4f}" if a > 0 else "-"))
    rep.table(["omega", "eps", "cells per wavelength", "simulated", "analytic", "ratio"], rows)


def threshold(rep: Report) -> None:
    shape = Shape(3, 4)
    speeds = [0.60, 0.62, 0.64, 0.65, 0.66, 0.67, 0.68, 0.69, 0.70, 0.72, 0.75]
    r = run(with_scan(charge_case(constant(2.25), speeds[0], L, 0.05, shape), "source.speed", speeds),
            "threshold")
    P = np.array([r.value("total_power", k) for k in range(len(speeds))])
    steady = [r.value("steady", k) for k in range(len(speeds))]
    m = np.arange(1, 41)
    k = 2 * np.pi * m / L

    def analytic(v):
        ff = shape.form_factor(k, 0.05) ** 2 * shape.form_factor(k * math.sqrt(max(v * v * 2.25 - 1, 0)), 0.05) ** 2
        return float(np.sum(theory.row_harmonic_power(v, L, 2.25) * ff))

    vd = np.linspace(0.6, 0.76, 400)
    fig, ax = figure(figsize=(6.5, 4))
    ax.plot(vd, [analytic(v) for v in vd], "-", label="analytic (sum over harmonics, with form factor)")
    ax.plot(speeds, P, "o", label="simulation")
    ax.axvline(1 / 1.5, color="k", ls=":", label="beta = 1/n")
    ax.set(xlabel="beta", ylabel="power per unit length (normalized)",
           title="Cherenkov threshold, n = 1.5, cubic x4 shape, dx = 0.05")
    ax.legend(fontsize=8)
    on = [v for v, p in zip(speeds, P) if p > 0.1 * P[-1]]
    off = [v for v, p in zip(speeds, P) if p <= 0.1 * P[-1]]
    rep.section("Threshold scan",
                "One scenario (charge in eps = 2.25, cubic x4 shape, dx = 0.05, L = 4) with a `[scan]` "
                "over `source.speed`, run through `fdtd.run`.  Below the threshold the dissipated power "
                "is ~0, so its relative settling test cannot pass: those points run to the default "
                "`run.max_time` (60 transits) and are marked not steady.  "
                f"Silent (below 10 % of P(0.75)) up to {max(off):.2f} c, radiating from {min(on):.2f} c; "
                f"the threshold 1/n = {1 / 1.5:.4f} c lies between.  Largest silent |P| / P(0.75): "
                f"{max(abs(p) for v, p in zip(speeds, P) if v in off) / P[-1]:.1e}.  The scan took "
                f"{r.seconds:.0f} s.")
    rep.image(save(fig, "threshold.png"), "Cherenkov threshold at beta = 1/n")
    rep.table(["beta", "simulated", "simulated / P(0.75)", "analytic", "simulated / analytic", "steady"],
              [(f"{v:.2f}", f"{p:.3e}", f"{p / P[-1]:.2e}", f"{analytic(v):.3e}",
                f"{p / analytic(v):.4f}" if analytic(v) > 0 else "-", "yes" if s else "no")
               for v, p, s in zip(speeds, P, steady)])


def cone(rep: Report) -> None:
    v, d, half = 0.8, 0.025, 2.0
    r = run(charge_case(constant(2.25), v, L, d, Shape(2, 1), transits=2,
                        record={"snapshots": 1, "snapshot_component": "Hz"}), "cone")
    with r.results() as res:
        Hz = res.array("snapshots/Hz")[-1]
        x, y = res.array("snapshots/x"), res.array("snapshots/y")
        t_snap = float(res.array("snapshots/time")[-1])
    # where the charge is at the snapshot: the scenario's world line (x0 = 0, speed ramp 2)
    xc = UniformMotion((0.0, 0.0), (v, 0.0), ramp=2.0).position(t_snap)[0] % L
    theta = theory.cherenkov_angle(v, 1.5)
    rows = (y > 0.4) & (y < half - 0.2)
    Hk = np.fft.fft(Hz[:, rows], axis=0)
    ang, wts = [], []
    for mm in range(1, 6):   # each harmonic is a plane wave exp(i(kx x + ky y)) above the path
        ky = np.polyfit(y[rows], np.unwrap(np.angle(Hk[mm])), 1)[0]
        ang.append(np.degrees(np.arctan2(abs(ky), 2 * np.pi * mm / L)))
        wts.append(np.abs(Hk[mm]).mean())
    meas = float(np.average(ang, weights=wts))
    fig, ax = figure(figsize=(8, 4))
    tiled = np.concatenate([Hz, Hz], axis=0)
    xt = np.concatenate([x, x + L])
    lim = np.percentile(np.abs(tiled[:, (y > -half) & (y < half)]), 99)
    ax.pcolormesh(xt, y, tiled.T, cmap="RdBu_r", vmin=-lim, vmax=lim, shading="auto")
    for xx in (xc, xc + L):
        for sgn in (1, -1):
            yy = np.linspace(0, sgn * half, 10)
            ax.plot(xx - np.abs(yy) * math.tan(theta), yy, "k--", lw=1)
    ax.set(xlim=(0, 2 * L), ylim=(-half, half), aspect="equal", xlabel="x (normalized length)",
           ylabel="y", title=f"Hz, beta = 0.8, n = 1.5: wake angle {meas:.2f} deg "
                             f"(theory {math.degrees(theta):.2f} deg)")
    rep.section("Cherenkov angle",
                "Scenario as in the Frank-Tamm section at dx = 0.025, two transits recorded, one Hz "
                "snapshot (`record.snapshots = 1`) at the end of the record.  Wave-vector angle from "
                f"the phase of the wake harmonics m = 1-5: {meas:.3f} deg (per harmonic "
                f"{', '.join(f'{a:.2f}' for a in ang)}), cos(theta) = 1/(n beta) gives "
                f"{math.degrees(theta):.3f} deg; difference {meas - math.degrees(theta):+.3f} deg.  The "
                "dashed lines are the Mach lines of the theory (perpendicular to the wave vector).  "
                f"{r.seconds:.0f} s.")
    rep.image(save(fig, "cone.png"), "Cherenkov wake (two periods of the co-moving cell)")


def dipole_pair(rep: Report) -> None:
    """Component level (the solver directly): the dipole's current against two charges on
    their own world lines, which no scenario can describe."""
    v, w0, d = 0.5, 2 * np.pi, 0.05
    wl = UniformMotion((0.0, 0.0), (v, 0.0))

    def fields(make):
        g = f.Grid((120, 80), (d, d), "te", origin=(-1.5, -2.0))
        s = f.Solver(f.Model(g, edges=f.CPML(10)), courant=0.9, ledger=False)
        for src in make():
            s.attach(src)
        s.advance(steps=160)
        return s.fields["Hz"].copy()

    fig, ax = figure(figsize=(5.5, 4))
    seps = np.array([0.4, 0.2, 0.1, 0.05])
    slopes = {}
    for axis, c in (("x", COLORS[0]), ("y", COLORS[1])):
        ref = fields(lambda axis=axis: [MovingDipole(1.0, w0, wl, axis=axis, phase=-np.pi / 2, ramp=0.5)])
        errs = []
        for sep in seps * d:
            q = 1.0 / sep
            mk = MovingDipole(1.0, w0, wl, axis=axis, phase=-np.pi / 2, ramp=0.5)

            def pos(sign, t, mk=mk, q=q):
                return np.asarray(wl.position(t)) + sign * 0.5 * mk.lab_moment(t)[:2] / q

            out = fields(lambda q=q, pos=pos: [MovingCharge(q, CallableWorldLine(lambda t: pos(1, t))),
                                               MovingCharge(-q, CallableWorldLine(lambda t: pos(-1, t)))])
            errs.append(np.abs(out - ref).max() / np.abs(ref).max())
        slopes[axis] = np.polyfit(np.log(seps), np.log(errs), 1)[0]
        ax.loglog(seps, errs, "o-", color=c, label=f"dipole along {axis} (motion along x)")
    ax.loglog(seps, 0.5 * errs[0] * (seps / seps[0]) ** 2, "k:", label="slope 2")
    ax.set(xlabel="charge separation / dx", ylabel="max |Hz(pair) - Hz(dipole)| / max |Hz|",
           title="dipole current vs two charges, beta = 0.5")
    ax.legend(fontsize=8)
    rep.section("Dipole current against two opposite charges",
                "Component level, on the solver directly (two charges on prescribed world lines are not "
                "a scenario source).  The P + curl(P x v) current against the same dipole built from +q "
                "and -q on their own world lines (lab separation p_lab/q): the difference falls as the "
                f"square of the separation (log-log slopes {slopes['x']:.2f} along x, "
                f"{slopes['y']:.2f} along y).")
    rep.image(save(fig, "dipole_pair.png"), "Convergence of the charge pair to the dipole current")


def _ledger_rate(res, t_from: float, omega: float):
    """Mean work rate of the source over t >= t_from from the ledger samples of a results file:
    least squares of W(t) = a + P t + b cos(2 omega t) + c sin(2 omega t) (the reactive exchange
    of a harmonic source with its own field oscillates at twice its lab frequency).
    Returns (P, rms residual / (P * span))."""
    t, W = res.array("ledger/time"), res.array("ledger/source_work")
    sel = t >= t_from
    t, W = t[sel], W[sel]
    A = np.column_stack([np.ones_like(t), t, np.cos(2 * omega * t), np.sin(2 * omega * t)])
    coef, *_ = np.linalg.lstsq(A, W, rcond=None)
    resid = W - A @ coef
    return coef[1], float(np.sqrt(np.mean(resid**2)) / (abs(coef[1]) * (t[-1] - t[0])))


def moving_dipole_power(rep: Report) -> None:
    w0, p0, v = 2 * np.pi, 1.0, 0.5
    rows = []
    t_start = time.perf_counter()
    worst_fit = 0.0
    for pol, axis in (("te", "y"), ("te", "x"), ("tm", "z")):
        P0 = theory.line_dipole_power(w0, p0, in_plane=(pol == "te"))
        for speed in (0.0, v):
            gs = 1 / math.sqrt(1 - speed * speed)
            T = 2 * np.pi * gs / w0                     # lab period
            vals, passage = [], None
            for d in (1 / 20, 1 / 40, 1 / 80):
                # open domain 9 x 5 inside 16-cell absorbing layers, the dipole from x = 1 (one unit
                # from the layers), switched on over two rest periods, 12 lab periods in all
                sc = scenario({}, {}, {"cell": d, "length": 9.0, "height": 2.5, "absorber": 16 * d},
                              {"kind": "dipole", "speed": speed, "frequency": w0, "axis": axis, "x0": 1.0,
                               "ramp_periods": 2.0},
                              run={"kind": "open", "time": 12 * T}, name="moving dipole in vacuum")
                r = run(sc, "dipole_power")
                with r.results() as res:
                    rate, fit = _ledger_rate(res, 6 * T, w0 / gs)
                worst_fit = max(worst_fit, fit)
                vals.append(rate / P0)
                if speed > 0 and "total_power" in r.summary():
                    passage = r.value("total_power") / P0
            rich = (4 * vals[2] - vals[1]) / 3
            rows.append((f"{pol} {axis}", speed, *(f"{x:.4f}" for x in vals), f"{rich:.4f}",
                         f"{passage:.4f}" if passage is not None else "-"))
    rep.section("Moving dipole in vacuum: lab power = rest power",
                "Open-domain scenarios (`run.kind = \"open\"`, no material), dipole omega0 = 2 pi, beta = 0 "
                "and 0.5, default cubic x2 shape, 12 lab periods.  The lab work rate is read from the "
                "results file's energy ledger (`ledger/time`, `ledger/source_work`, sampled 50 times "
                "over the run) by a least-squares fit of a line plus the 2 Omega oscillation over "
                f"the second half of the run (fit residual at most {worst_fit:.1e} of the work over "
                "the span), divided by the closed-form rest-frame power omega^3 p^2/16 (in plane) or /8 "
                "(out of plane); the shape's form factor lowers it at O(dx^2), removed by Richardson "
                "extrapolation of the two finest grids.  Last column: the procedure's own passage "
                "analysis (summary `total_power`, finest grid), where the run is long enough for one.  "
                f"{time.perf_counter() - t_start:.0f} s for the 18 runs.")
    rep.table(["dipole", "beta", "dx = 1/20", "dx = 1/40", "dx = 1/80", "extrapolated",
               "passage analysis (dx = 1/80)"], rows)


def main() -> None:
    warnings.simplefilter("ignore")
    rep = Report("Moving sources: validation", "moving_sources.md")
    for fn in (frank_tamm, lorentz_band, threshold, cone, dipole_pair, moving_dipole_power):
        t0 = time.time()
        print("running", fn.__name__, flush=True)
        fn(rep)
        print(f"  {fn.__name__}: {time.time() - t0:.0f} s", flush=True)
    print("report written to", rep.write())


if __name__ == "__main__":
    main()
