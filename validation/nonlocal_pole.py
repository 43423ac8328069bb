"""Validation of the spatially dispersive (nonlocal) Lorentz pole.

Writes validation/report/nonlocal_pole.md with figures.  Run:
    python validation/nonlocal_pole.py            (about a minute on 2 cores)

Model: the exciton model with spatial dispersion of J. J. Hopfield and D. G. Thomas,
Phys. Rev. 132, 563 (1963), with Pekar's additional boundary condition P = 0 at the surface
(S. I. Pekar, Sov. Phys. JETP 6, 785 (1958)); both from memory; the boundary-condition problem
is reviewed in V. M. Agranovich and V. L. Ginzburg, Sov. Phys. Usp. 5, 675 (1963), sec. 3e.
The discrete relations are derived in docs/theory/nonlocal-pole.md.
"""

from __future__ import annotations

import os
import sys

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.dirname(HERE))
sys.path.insert(0, HERE)
sys.path.insert(0, os.path.join(os.path.dirname(HERE), "tests"))

import fdtd as f  # noqa: E402
from _report import COLORS, Report, figure, save  # noqa: E402
from helpers import frequencies_from_roots, loglog_slope, prony_roots  # noqa: E402
from test_nonlocal import _pekar_reflection, _record, _simulated_reflection  # noqa: E402

EPS_INF, DELTA_EPS, OMEGA, GAMMA, BETA = 1.0, 2.0, 1.0, 0.05, 0.2


def medium(gamma=GAMMA, beta=BETA):
    return f.Material(EPS_INF, (f.NonlocalLorentzPole(DELTA_EPS, OMEGA, gamma, beta),), "nonlocal")


def continuum_branches(mat, k):
    """Lossless transverse branches w_-(k) < w_+(k) of w^2 eps(w, k) = k^2 (one pole)."""
    (p,) = mat.poles
    a0 = p.omega0**2 + p.laplacian_coefficient() * k**2
    b = p.delta_eps * p.omega0**2
    B = mat.eps_inf * a0 + b + k**2
    disc = np.sqrt(B**2 - 4 * mat.eps_inf * k**2 * a0)
    return np.sqrt((B - disc) / (2 * mat.eps_inf)), np.sqrt((B + disc) / (2 * mat.eps_inf))


def dispersion(rep: Report) -> None:
    rep.section("Polariton branches: local against nonlocal, continuum against the grid",
                f"Lossless medium eps_inf = {EPS_INF}, delta_eps = {DELTA_EPS}, Omega = {OMEGA}, "
                f"beta_nl = {BETA} (normalized units, c = 1).  Points: frequencies measured from "
                "standing waves in a periodic 1D grid (dx = 0.1, Courant 0.9, Prony's method); "
                "lines: the continuum relation w^2 eps(w, k) = k^2.  The local lower branch flattens "
                "at Omega (phase velocity -> 0); the nonlocal one bends up towards w = beta_nl k.")
    nl, loc = medium(0.0), f.Material(EPS_INF, (medium(0.0).poles[0].local(),), "local")
    k = np.linspace(0.01, 30.0, 600)
    fig, (ax, bx) = figure(1, 2, figsize=(11, 4.2))
    for mat, c, name in ((loc, COLORS[1], "local"), (nl, COLORS[0], "nonlocal")):
        lo, hi = continuum_branches(mat, k)
        ax.plot(k, lo, color=c, label=f"{name}, continuum")
        ax.plot(k, hi, color=c)
        bx.plot(k, lo / k, color=c, label=f"{name}: lower branch w/k")
    n, dx = 200, 0.1
    L = n * dx
    rows = []
    for mat, c, mk in ((loc, COLORS[1], "s"), (nl, COLORS[0], "o")):
        ks, ws = [], []
        for m in (2, 10, 25, 45, 70, 95):
            g = f.Grid((n,), (dx,), "1d")
            s = f.Solver(f.Model(g, background=mat, edges=f.Periodic()), courant=0.9, ledger=False)
            kk = 2 * np.pi * m / L
            s.fields["Ey"][:] = np.cos(kk * g.axis_coordinates("Ey", 0))
            w = np.sort(frequencies_from_roots(prony_roots(_record(s, "Ey", 0, 800), 4), s.dt).real)
            ks += [kk, kk]
            ws += list(w)
            lo, hi = continuum_branches(mat, np.array([kk]))
            rows.append([mat.name, f"{kk:.3f}", f"{w[0]:.5f}", f"{lo[0]:.5f}", f"{w[1]:.5f}", f"{hi[0]:.5f}"])
        ax.plot(ks, ws, mk, color=c, ms=4, mfc="none", label=f"{mat.name}, measured on the grid")
        # the scheme's own relation: k -> K (curl and Laplacian alike), w^2 -> w~^2
        K = 2 / dx * np.sin(k * dx / 2)
        dt = s.dt
        for i, u in enumerate(continuum_branches(mat, K)):
            ok = u * dt / 2 < 1
            ax.plot(k[ok], 2 / dt * np.arcsin(u[ok] * dt / 2), "--", color=c, lw=0.8,
                    label=f"{mat.name}, discrete relation" if i == 0 else None)
    ax.axhline(OMEGA, color="0.5", lw=0.6, ls=":")
    ax.set(xlabel="k (1/length unit)", ylabel="omega (1/time unit)", ylim=(0, 8), xlim=(0, 30),
           title="transverse branches")
    ax.legend(fontsize=8)
    bx.axhline(BETA, color=COLORS[0], lw=0.8, ls="--", label="beta_nl")
    bx.set(xlabel="k (1/length unit)", ylabel="phase velocity (c)", yscale="log", ylim=(1e-2, 1.1),
           title="lower branch: phase velocity")
    bx.legend(fontsize=8)
    rep.image(save(fig, "nonlocal_dispersion.png"), "Branches and the lower branch's phase velocity")
    rep.table(["medium", "k", "measured w_-", "continuum w_-", "measured w_+", "continuum w_+"], rows)
    rep.para("The measured frequencies equal the discrete relation to round-off "
             "(tests/test_nonlocal.py); the table shows the grid's own departure from the continuum "
             "at these k (dx = 0.1), largest where k dx approaches pi.")


def reflection(rep: Report) -> None:
    mat = medium()
    rep.section("Reflection from a nonlocal half-space: Pekar's boundary condition",
                f"Normal incidence from vacuum, gamma = {GAMMA}, beta_nl = {BETA}.  Analytic: two "
                "transmitted waves (k^2 = w^2 eps(w, k), a quadratic in k^2), continuity of E_y and H_z, "
                "P = 0 at the surface.  Simulated: broadband pulse in 1D, reflected part at a probe "
                "divided by the incident part, phase referred to the surface; surface on a node and "
                "between two nodes.")
    ws = np.linspace(0.4, 1.6, 25)
    r_ana = np.array([_pekar_reflection(w, mat) for w in ws])
    n_loc = np.sqrt(f.Material(EPS_INF, (mat.poles[0].local(),)).permittivity(ws))
    r_loc = (1 - n_loc) / (1 + n_loc)
    fig, (ax, bx) = figure(1, 2, figsize=(11, 4.2))
    ax.plot(ws, np.abs(r_ana), color="k", lw=1.5, label="Pekar (analytic)")
    ax.plot(ws, np.abs(r_loc), color="0.5", ls=":", label="local Fresnel (no spatial dispersion)")
    cells = [0.1, 0.05, 0.025]
    errs = {0.0: [], 0.5: []}
    for c, dx in zip(COLORS, cells):
        for off, mk in ((0.0, "o"), (0.5, "x")):
            r = _simulated_reflection(mat, dx, ws, off)
            e = np.abs(r - r_ana) / np.abs(r_ana)
            errs[off].append(float(e.max()))
            if off == 0.0:
                ax.plot(ws, np.abs(r), mk, color=c, ms=4, mfc="none", label=f"simulated, dx = {dx}")
    ax.set(xlabel="omega (1/time unit)", ylabel="|r|", title="reflection coefficient")
    ax.legend(fontsize=8)
    for off, mk in ((0.0, "o-"), (0.5, "x--")):
        bx.loglog(cells, errs[off], mk, label=f"surface {'on a node' if off == 0 else 'between nodes'}, "
                                             f"slope {loglog_slope(cells, errs[off]):.2f}")
    bx.loglog(cells, [errs[0.0][0] * (d / cells[0]) ** 2 for d in cells], ":", color="0.5", label="second order")
    bx.set(xlabel="dx (length unit)", ylabel="max relative error of r over 0.4 <= w <= 1.6",
           title="convergence to Pekar")
    bx.legend(fontsize=8)
    rep.image(save(fig, "nonlocal_reflection.png"), "Reflection coefficient and its convergence")
    rep.table(["dx", "max error (surface on a node)", "max error (between nodes)"],
              [[d, f"{a:.2e}", f"{b:.2e}"] for d, a, b in zip(cells, errs[0.0], errs[0.5])])


def main() -> None:
    rep = Report("Nonlocal (spatially dispersive) Lorentz pole", "nonlocal_pole.md")
    dispersion(rep)
    reflection(rep)
    print(rep.write())


if __name__ == "__main__":
    main()
