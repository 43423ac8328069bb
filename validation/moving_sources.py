"""Validation of moving sources: 2D Frank-Tamm, threshold, angle, Lorentz bands, dipoles.

Writes validation/report/moving_sources.md with figures.  Run:
    python validation/moving_sources.py            (about 5 minutes on 2 cores)

References: 2D analogue of the Frank-Tamm formula (I. Frank and I. Tamm, Dokl. Akad.
Nauk SSSR 14, 109 (1937); J. D. Jackson, Classical Electrodynamics, 3rd ed., sec. 13.4,
for the 3D original; from memory), derived in docs/theory/frank-tamm-2d.md; Lorentz
invariance of the radiated power (Jackson sec. 14.1, from memory).
"""

from __future__ import annotations

import math
import os
import sys
import warnings

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import fdtd as f  # noqa: E402
from _report import COLORS, Report, figure, save  # noqa: E402
from fdtd import theory  # noqa: E402
from fdtd.sources.electrostatics import electrostatic_start  # noqa: E402
from fdtd.sources.moving import MovingCharge, MovingDipole  # noqa: E402
from fdtd.experiment.cell import charge_in_comoving_cell, comoving_cell  # noqa: E402
from fdtd.sources.shapes import Shape  # noqa: E402
from fdtd.sources.worldlines import CallableWorldLine, UniformMotion  # noqa: E402

GLASS = f.Material(2.25, (), "n=1.5")
L = 4.0


def frank_tamm(rep: Report) -> None:
    v = 0.8
    rep.section("2D Frank-Tamm, uniform dielectric n = 1.5, beta = 0.8",
                "Co-moving cell L = 4; power per harmonic k_m = 2 pi m/L against "
                "P_m = (v lambda^2/L) sqrt(beta^2 eps - 1)/eps (point charge) and against the same "
                "times the deposited shape's form factor |F(k_x) F(k_y)|^2 (like for like).")
    fig, (ax, bx) = figure(1, 2, figsize=(11, 4))
    cells = [0.1, 0.05, 0.025]
    err_raw, err_ff = [], []
    rows = []
    for c, d in zip(COLORS, cells):
        for shape, style in ((Shape(2, 1), "o-"),):
            spec, _ = charge_in_comoving_cell(GLASS, v, L, d, shape=shape)
            sel = spec.kx > 0
            k, w, P = spec.kx[sel], spec.omega[sel], spec.power[sel]
            an = theory.row_harmonic_power(v, L, 2.25)
            ff = shape.form_factor(k, d) ** 2 * shape.form_factor(k * math.sqrt(v * v * 2.25 - 1), d) ** 2
            m = np.arange(1, k.size + 1)
            ax.plot(w[:12], P[:12] / an, style, color=c, ms=4, label=f"dx = {d} (raw)")
            ax.plot(w[:12], P[:12] / (an * ff[:12]), "s--", color=c, ms=3, alpha=0.7,
                    label=f"dx = {d} (with form factor)")
            err_raw.append(abs(P[1] / an - 1))
            err_ff.append(abs(P[1] / (an * ff[1]) - 1))
            lam = 2 * np.pi / (w * 1.5) / d
            rows.append((d, f"{P[0] / an:.4f}", f"{P[1] / an:.4f}", f"{P[2] / an:.4f}",
                         f"{lam[2]:.0f}", f"{spec.unresolved / spec.total:.1e}"))
            _ = m
    ax.axhline(1, color="k", lw=0.8)
    ax.set(xlabel="omega (normalized, c/ell)", ylabel="simulated / analytic power per harmonic",
           title="per-harmonic power ratio")
    ax.legend(fontsize=7)
    bx.loglog(cells, err_raw, "o-", label="m = 2, point-charge formula")
    bx.loglog(cells, err_ff, "s-", label="m = 2, with form factor")
    bx.loglog(cells, err_raw[0] * (np.array(cells) / cells[0]) ** 2, "k:", label="slope 2")
    bx.set(xlabel="cell size dx (normalized length)", ylabel="relative error", title="convergence")
    bx.legend(fontsize=8)
    rep.image(save(fig, "frank_tamm.png"), "2D Frank-Tamm: simulated over analytic power per harmonic, "
              "and the convergence of the m = 2 error")
    rep.table(["dx", "m=1 ratio", "m=2 ratio", "m=3 ratio", "cells per wavelength (m=3)",
               "unresolved/total"], rows)


def lorentz_band(rep: Report) -> None:
    W0, v, Lz, d = 4.0, 0.6, 6.0, 0.04
    med = f.Material(1.0, (f.LorentzPole(1.25, W0, 0.0),), "lossless Lorentz")
    spec, _ = charge_in_comoving_cell(med, v, Lz, d, shape=Shape(2, 1), settle=28.0)
    sel = spec.kx > 0
    w, P = spec.omega[sel], spec.power[sel]
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
                f"Analytic band edges {np.round(edges, 4).tolist()} (omega_1 from eps = 1/beta^2, the "
                "resonance Omega).  Near omega_L the charge excites the longitudinal resonance of the "
                "lossless medium (not part of the transverse Frank-Tamm formula).")
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
    speeds = np.array([0.60, 0.62, 0.64, 0.65, 0.66, 0.67, 0.68, 0.69, 0.70, 0.72, 0.75])
    P = []
    for v in speeds:
        spec, _ = charge_in_comoving_cell(GLASS, v, L, 0.05, shape=shape, settle=60.0)
        P.append(spec.total)
    vd = np.linspace(0.6, 0.76, 400)
    m = np.arange(1, 41)
    k = 2 * np.pi * m / L
    an = []
    for v in vd:
        ff = shape.form_factor(k, 0.05) ** 2 * shape.form_factor(k * math.sqrt(max(v * v * 2.25 - 1, 0)), 0.05) ** 2
        an.append(np.sum(theory.row_harmonic_power(v, L, 2.25) * ff))
    fig, ax = figure(figsize=(6.5, 4))
    ax.plot(vd, an, "-", label="analytic (sum over harmonics, with form factor)")
    ax.plot(speeds, P, "o", label="simulation")
    ax.axvline(1 / 1.5, color="k", ls=":", label="beta = 1/n")
    ax.set(xlabel="beta", ylabel="power per unit length (normalized)",
           title="Cherenkov threshold, n = 1.5, cubic x4 shape, dx = 0.05")
    ax.legend(fontsize=8)
    rep.section("Threshold scan", "Power radiated by a line charge against speed; the threshold "
                "lies between the last silent and the first radiating speed of the scan.")
    rep.image(save(fig, "threshold.png"), "Cherenkov threshold at beta = 1/n")
    rep.table(["beta", "simulated", "simulated / P(0.75)"],
              [(f"{v:.2f}", f"{p:.3e}", f"{p / P[-1]:.2e}") for v, p in zip(speeds, P)])


def cone(rep: Report) -> None:
    v, d, half = 0.8, 0.025, 2.0
    model = comoving_cell(L, half, d, "te", background=GLASS, absorber=1.2)
    s = f.Solver(model, courant=0.95, ledger=False)
    q = MovingCharge(1.0, UniformMotion((0.0, 0.0), (v, 0.0), ramp=2.0), Shape(2, 1))
    s.attach(q)
    electrostatic_start(s, [q])
    s.advance(to_time=25.0)
    g = model.grid
    x = g.axis_coordinates("Hz", 0)
    y = g.axis_coordinates("Hz", 1)
    Hz = s.fields["Hz"]
    xc = q.worldline.position(s.time)[0] % L
    theta = theory.cherenkov_angle(v, 1.5)
    rows = (y > 0.4) & (y < half - 0.2)
    Hk = np.fft.fft(Hz[:, rows], axis=0)
    ang, wts = [], []
    for mm in range(1, 6):
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
    rep.section("Cherenkov angle", f"Wave-vector angle from the phase of the wake harmonics: "
                f"{meas:.3f} deg, cos(theta) = 1/(n beta) gives {math.degrees(theta):.3f} deg. The "
                "dashed lines are the Mach lines of the theory (perpendicular to the wave vector).")
    rep.image(save(fig, "cone.png"), "Cherenkov wake (two periods of the co-moving cell)")


def dipole_pair(rep: Report) -> None:
    v, w0, d = 0.5, 2 * np.pi, 0.05
    wl = UniformMotion((0.0, 0.0), (v, 0.0))

    def run(make):
        g = f.Grid((120, 80), (d, d), "te", origin=(-1.5, -2.0))
        s = f.Solver(f.Model(g, edges=f.CPML(10)), courant=0.9, ledger=False)
        for src in make():
            s.attach(src)
        s.advance(steps=160)
        return s.fields["Hz"].copy()

    fig, ax = figure(figsize=(5.5, 4))
    seps = np.array([0.4, 0.2, 0.1, 0.05])
    for axis, c in (("x", COLORS[0]), ("y", COLORS[1])):
        ref = run(lambda: [MovingDipole(1.0, w0, wl, axis=axis, phase=-np.pi / 2, ramp=0.5)])
        errs = []
        for sep in seps * d:
            q = 1.0 / sep
            mk = MovingDipole(1.0, w0, wl, axis=axis, phase=-np.pi / 2, ramp=0.5)

            def pos(sign, t, mk=mk, q=q):
                return np.asarray(wl.position(t)) + sign * 0.5 * mk.lab_moment(t)[:2] / q

            out = run(lambda: [MovingCharge(q, CallableWorldLine(lambda t: pos(1, t))),
                               MovingCharge(-q, CallableWorldLine(lambda t: pos(-1, t)))])
            errs.append(np.abs(out - ref).max() / np.abs(ref).max())
        ax.loglog(seps, errs, "o-", color=c, label=f"dipole along {axis} (motion along x)")
    ax.loglog(seps, 0.5 * errs[0] * (seps / seps[0]) ** 2, "k:", label="slope 2")
    ax.set(xlabel="charge separation / dx", ylabel="max |Hz(pair) - Hz(dipole)| / max |Hz|",
           title="dipole current vs two charges, beta = 0.5")
    ax.legend(fontsize=8)
    rep.section("Dipole current against two opposite charges",
                "The P + curl(P x v) current against the same dipole built from +q and -q on their own "
                "world lines (lab separation p_lab/q): the difference falls as the square of the separation.")
    rep.image(save(fig, "dipole_pair.png"), "Convergence of the charge pair to the dipole current")


def moving_dipole_power(rep: Report) -> None:
    w0, p0, v = 2 * np.pi, 1.0, 0.5
    rows = []
    for pol, axis in (("te", "y"), ("te", "x"), ("tm", "z")):
        P0 = theory.line_dipole_power(w0, p0, in_plane=(pol == "te"))
        for speed in (0.0, v):
            vals = []
            for d in (1 / 20, 1 / 40, 1 / 80):
                npml = 16
                nx, ny = int(round(9.0 / d)) + 2 * npml, int(round(5.0 / d)) + 2 * npml
                g = f.Grid((nx, ny), (d, d), pol, origin=(-3.5 - npml * d, -2.5 - npml * d))
                s = f.Solver(f.Model(g, edges=f.CPML(npml)), courant=0.95)
                gs = 1 / math.sqrt(1 - speed * speed)
                T = 2 * np.pi * gs / w0
                s.attach(MovingDipole(p0, w0, UniformMotion((-2.5, 0.0), (speed, 0.0)), axis=axis,
                                          ramp=2.0 * T / gs))
                s.advance(to_time=6 * T)
                w, t = s.source_work, s.time
                s.advance(to_time=12 * T)
                vals.append((s.source_work - w) / (s.time - t) / P0)
            rich = (4 * vals[2] - vals[1]) / 3
            rows.append((f"{pol} {axis}", speed, *(f"{x:.4f}" for x in vals), f"{rich:.4f}"))
    rep.section("Moving dipole in vacuum: lab power = rest power",
                "Open domain, dipole omega0 = 2 pi, beta = 0.5, default cubic x2 shape.  Ratio of the "
                "lab work rate to the closed-form rest-frame power omega^3 p^2/16 (in plane) or /8 "
                "(out of plane); the shape's form factor lowers it at O(dx^2), removed by Richardson "
                "extrapolation of the two finest grids.")
    rep.table(["dipole", "beta", "dx = 1/20", "dx = 1/40", "dx = 1/80", "extrapolated"], rows)


def main() -> None:
    warnings.simplefilter("ignore")
    rep = Report("Moving sources: validation", "moving_sources.md")
    for fn in (frank_tamm, lorentz_band, threshold, cone, dipole_pair, moving_dipole_power):
        print("running", fn.__name__, flush=True)
        fn(rep)
    print("report written to", rep.write())


if __name__ == "__main__":
    main()
