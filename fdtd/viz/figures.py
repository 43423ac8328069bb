r"""Figures from a results file (never from solver internals): PNG and PDF.

* ``geometry``  -- the media, the absorbing layers and the source path;
* ``spectra``   -- the k_x-resolved work on the normal and anomalous Doppler
  branches (distinct colour-blind-safe colours and markers), with the planar
  reference when the geometry is planar;
* ``kw_map``    -- the (k_x, omega) intensity of the recorded line, with the
  Doppler lines omega = k_x v +- Omega/gamma... (lab Omega) and the media's
  bulk and surface polariton dispersion drawn over it;
* ``ledger``    -- the energy ledger over time.

Axes carry physical units: positions in nm or um, wavenumbers in 1/um,
frequencies as photon energies hbar omega in eV, powers in W/m (2D).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import scipy.constants as sc

from fdtd.io.results import Results

# Okabe-Ito colour-blind-safe palette
NORMAL = "#0072B2"      # blue
ANOMALOUS = "#D55E00"   # vermillion
REFERENCE = "#000000"
ACCENT = ["#009E73", "#CC79A7", "#E69F00", "#56B4E9"]


def _mpl():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    plt.rcParams.update({"font.size": 10, "axes.grid": True, "grid.alpha": 0.25, "axes.spines.top": False,
                         "axes.spines.right": False, "figure.dpi": 110})
    return plt


def _length_scale(ell_m: float, extent_norm: float):
    span = ell_m * extent_norm
    if span < 2e-6:
        return ell_m * 1e9, "nm"
    if span < 2e-3:
        return ell_m * 1e6, "um"
    return ell_m * 1e3, "mm"


def _ev(units) -> float:
    """hbar omega in eV of one normalized angular frequency."""
    return units["angular_frequency"] * sc.hbar / sc.e


#: a warning printed across the top of every figure while plot_all draws a point whose run
#: did not converge (or was interrupted)
_BANNER = {"text": ""}


def _status_banner(res: Results) -> str:
    status = res.summary.get("status", {}).get("value", res.status) if res.has("summary") else res.status
    if status == "complete":
        return ""
    return f"{str(status).upper()}: {res.f.attrs.get('stop_reason', '')} - not a final result"


def _save(fig, outdir: Path, stem: str, formats) -> list[str]:
    if _BANNER["text"]:
        fig.text(0.5, 1.0, _BANNER["text"], ha="center", va="bottom", color="#D55E00", fontsize=9,
                 fontweight="bold")
    paths = []
    for fmt in formats:
        p = outdir / f"{stem}.{fmt}"
        fig.savefig(p, bbox_inches="tight")
        paths.append(str(p))
    import matplotlib.pyplot as plt

    plt.close(fig)
    return paths


def plot_geometry(res: Results, outdir: Path, formats=("png", "pdf"), stem="geometry") -> list[str]:
    plt = _mpl()
    u = res.units()
    grid = res.attrs("grid")
    plan = json.loads(res.root.attrs["plan"])
    if plan["polarization"] == "1d":
        return _plot_geometry_1d(res, plan, grid, u, outdir, formats, stem)
    nx, ny = grid["shape"][:2] if len(grid["shape"]) == 2 else (grid["shape"][0], 1)
    dx = grid["spacing"][0]
    x0, y0 = grid["origin"][0], (grid["origin"][1] if len(grid["origin"]) > 1 else 0.0)
    scale, lab = _length_scale(u["length"], nx * dx)
    fig, ax = plt.subplots(figsize=(7, 4))
    X0, X1 = x0 * scale, (x0 + nx * dx) * scale
    Y0, Y1 = y0 * scale, (y0 + ny * dx) * scale if ny > 1 else (1.0, 1.0)
    npml = int(round(max(plan["absorber"], 10 * dx) / dx))
    ax.add_patch(plt.Rectangle((X0, Y0), X1 - X0, npml * dx * scale, color="0.85", zorder=0))
    ax.add_patch(plt.Rectangle((X0, Y1 - npml * dx * scale), X1 - X0, npml * dx * scale, color="0.85", zorder=0,
                               label="absorbing layers"))
    if plan["kind"] == "open":
        ax.add_patch(plt.Rectangle((X0, Y0), npml * dx * scale, Y1 - Y0, color="0.85", zorder=0))
        ax.add_patch(plt.Rectangle((X1 - npml * dx * scale, Y0), npml * dx * scale, Y1 - Y0, color="0.85",
                                   zorder=0))
    if res.has("geometry/material_map"):
        mm = res.array("geometry/material_map").astype(float)
        names = json.loads(res.root["geometry"].attrs["material_names"])
        if mm.ndim == 2 and mm.max() > 0:
            xs = x0 + (np.arange(mm.shape[0]) + 0.5) * dx
            ys_ = y0 + np.arange(mm.shape[1]) * dx
            shade = np.where(mm > 0, mm, np.nan)
            ax.pcolormesh(xs * scale, ys_ * scale, shade.T, cmap="Pastel2", vmin=0.5, vmax=8.5,
                          shading="auto", zorder=0.5, alpha=0.8)
            import matplotlib.patches as mpatches

            cm = plt.get_cmap("Pastel2")
            for i in range(1, len(names)):
                if np.any(mm == i):
                    ax.add_patch(mpatches.Rectangle((0, 0), 0, 0, color=cm((i - 0.5) / 8), label=names[i]))
    for k, ys in enumerate(plan.get("surfaces", [])):
        ax.axhline(ys * scale, color=ACCENT[0], lw=1.5, label="material surfaces" if k == 0 else None)
    if res.has("geometry"):
        for name in res.root["geometry"]:
            if not name.startswith("outline"):
                continue
            xy = res.array(f"geometry/{name}")
            ax.plot(xy[:, 0] * scale, xy[:, 1] * scale, color=ACCENT[1], lw=1.2)
    ys = plan["height"] * scale
    ax.annotate("", xy=(X0 + 0.8 * (X1 - X0), ys), xytext=(X0 + 0.2 * (X1 - X0), ys),
                arrowprops=dict(arrowstyle="->", color=ANOMALOUS, lw=2))
    ax.plot([], [], color=ANOMALOUS, lw=2, label=f"source path, v = {plan['speed']:.3g} c")
    ax.set(xlim=(X0, X1), ylim=(Y0, Y1), xlabel=f"x ({lab})", ylabel=f"y ({lab})",
           title=("co-moving periodic cell" if plan["kind"] == "comoving" else "open domain")
           + f", {plan['polarization'].upper()} grid {nx} x {ny}")
    ax.set_aspect("equal", adjustable="box")
    ax.legend(loc="upper right", fontsize=8, framealpha=0.9)
    return _save(fig, outdir, stem, formats)


def _plot_geometry_1d(res, plan, grid, u, outdir, formats, stem) -> list[str]:
    """A 1D cell: the uniform medium along x, periodic ends, the sheet's path."""
    plt = _mpl()
    nx, dx = grid["shape"][0], grid["spacing"][0]
    scale, lab = _length_scale(u["length"], nx * dx)
    names = json.loads(res.root["geometry"].attrs["material_names"]) if res.has("geometry") else []
    mm = res.array("geometry/material_map") if res.has("geometry/material_map") else None
    medium = names[int(np.max(mm))] if (mm is not None and names) else "vacuum"
    fig, ax = plt.subplots(figsize=(7, 2.6))
    X1 = nx * dx * scale
    ax.add_patch(plt.Rectangle((0, 0), X1, 1, color="#CCE5F2", zorder=0, label=f"uniform medium: {medium}"))
    for xe in (0, X1):
        ax.axvline(xe, color="0.3", ls="--", lw=1)
    ax.annotate("", xy=(0.8 * X1, 0.5), xytext=(0.2 * X1, 0.5),
                arrowprops=dict(arrowstyle="->", color=ANOMALOUS, lw=2))
    ax.plot([], [], color=ANOMALOUS, lw=2, label=f"dipole sheet (moment along y), v = {plan['speed']:.3g} c")
    ax.plot([], [], color="0.3", ls="--", lw=1, label="periodic ends (co-moving cell)")
    ax.set(xlim=(-0.02 * X1, 1.02 * X1), ylim=(0, 1), xlabel=f"x ({lab})", yticks=[],
           title=f"1D co-moving periodic cell, {nx} cells; fields depend on x only")
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.35), ncol=2, fontsize=8)
    return _save(fig, outdir, stem, formats)


def plot_spectra(res: Results, outdir: Path, formats=("png", "pdf"), stem="spectra") -> list[str]:
    if not res.has("doppler"):
        return []
    plt = _mpl()
    u = res.units()
    kx = res.array("doppler/kx") / (u["length"] * 1e6)       # 1/um
    br = res.array("doppler/branch")
    pw = res.array("doppler/power") * res.root["doppler/power"].attrs["si_factor"]
    si = res.root["doppler/power"].attrs["units"]
    fig, ax = plt.subplots(figsize=(7, 4.2))
    floor = 1e-7 * max(np.abs(pw).max(), 1e-300)
    styles = {1: (NORMAL, "o", "normal Doppler branch"), -1: (ANOMALOUS, "s", "anomalous Doppler branch"),
              0: (NORMAL, "o", "Cherenkov (charge)")}
    for b, (c, mk, lab) in styles.items():
        sel = (br == b) & (pw > floor)
        if np.any(sel):
            ax.semilogy(kx[sel], pw[sel], mk, mfc="none", color=c, ms=5, label=f"simulation, {lab}")
        ref_name = {1: "normal", -1: "anomalous", 0: "charge"}[b]
        if res.has(f"reference/kx_{ref_name}"):
            rk = res.array(f"reference/kx_{ref_name}") / (u["length"] * 1e6)
            rp = res.array(f"reference/power_{ref_name}") * res.root[f"reference/power_{ref_name}"].attrs["si_factor"]
            ok = rp > floor
            ax.semilogy(rk[ok], rp[ok], "-", color=c, lw=1.2, alpha=0.8, label=f"planar reference, {ref_name}")
    summ = res.summary
    tot = summ.get("total_power", {}).get("value")
    ax.set(xlabel="k_x (1/um)", ylabel=f"power per k_x point ({si})",
           title=f"Doppler-resolved work, v = {summ.get('speed', {}).get('value', 0):.3g} c"
           + (f", total {tot:.3e} {si}" if tot else ""))
    ax.legend(fontsize=8)
    return _save(fig, outdir, stem, formats)


def plot_kw_map(res: Results, outdir: Path, formats=("png", "pdf"), stem="kx_omega") -> list[str]:
    if not res.has("line"):
        return []
    from fdtd.recording.kx_omega import doppler_lines, kx_omega_map

    plt = _mpl()
    u = res.units()
    data = res.array("line/data")
    t = res.array("line/time")
    x = res.array("line/x")
    if data.shape[0] < 8:
        return []
    kx, om, inten = kx_omega_map(data, x[1] - x[0], t[1] - t[0], periodic=bool(res.root["line"].attrs["periodic"]))
    ev = _ev(u)
    kscale = 1 / (u["length"] * 1e6)
    fig, ax = plt.subplots(figsize=(7, 4.6))
    lev = np.log10(inten + inten.max() * 1e-8)
    pcm = ax.pcolormesh(kx * kscale, om * ev, lev, shading="auto", cmap="cividis")
    fig.colorbar(pcm, ax=ax, label="log10 intensity (arb.)")
    plan = json.loads(res.root.attrs["plan"])
    kk = np.linspace(kx.min(), kx.max(), 800)
    lines = doppler_lines(kk, plan["speed"], plan["Omega"])
    ax.plot(kk * kscale, lines["normal"] * ev, "-", color=NORMAL, lw=1.5, label="omega = k v + Omega")
    ax.plot(kk * kscale, lines["anomalous"] * ev, "--", color=ANOMALOUS, lw=1.5, label="omega = k v - Omega")
    ax.plot(kk * kscale, np.abs(kk) * ev, ":", color="w", lw=1.0, label="vacuum light line")
    # media dispersion from the stored permittivities (bulk polaritons, surface polariton)
    from fdtd.media.materials import Material  # noqa: F401

    if res.has("materials"):
        for i, name in enumerate(res.root["materials"]):
            if name == "vacuum":
                continue
            w = res.array(f"materials/{name}/omega")
            e = res.array(f"materials/{name}/eps_real") + 1j * res.array(f"materials/{name}/eps_imag")
            if res.has(f"materials/{name}/branch_omega"):
                kb = res.array(f"materials/{name}/branch_k")
                for j, wb in enumerate(np.atleast_2d(res.array(f"materials/{name}/branch_omega"))):
                    for sgn in (1, -1):
                        ax.plot(sgn * kb * kscale, wb * ev, "-", color=ACCENT[(i + 1) % 4], lw=1,
                                label=f"bulk polariton (lossless), {name}" if j == 0 and sgn == 1 else None)
            else:
                n = np.sqrt(e)
                ok = np.abs(n.imag) < 0.2 * np.abs(n.real)
                ax.plot(np.where(ok, w * n.real, np.nan) * kscale, w * ev, "-", color=ACCENT[(i + 1) % 4], lw=1,
                        label=f"bulk polariton, {name}")
            if plan["polarization"] == "1d":
                continue          # no surface in the 1D bulk case
            bound = e.real < -1
            ks = w * np.sqrt(np.where(bound, e.real / (e.real + 1), np.nan))
            ax.plot(ks * kscale, w * ev, "-.", color=ACCENT[(i + 2) % 4], lw=1, label=f"surface polariton, {name}")
    # show a few times the highest Doppler frequency of vacuum radiation, not the whole grid band
    w_top = min(om.max(), 1.5 * max(plan["Omega"], 1e-6) / max(1 - plan["speed"], 0.05)) if plan["Omega"] else om.max()
    k_top = min(kx.max(), 1.5 * w_top / max(plan["speed"], 0.2))
    ax.set(xlim=(-k_top * kscale, k_top * kscale), ylim=(0, w_top * ev),
           xlabel="k_x (1/um)", ylabel="hbar omega (eV)",
           title=f"{res.root['line'].attrs['component']} " + (
               "along x (1D)" if plan["polarization"] == "1d" else
               f"on the line y = {res.root['line'].attrs['height'] * u['length'] * 1e9:.4g} nm"))
    ax.legend(fontsize=7, loc="upper left")
    return _save(fig, outdir, stem, formats)


def plot_ledger(res: Results, outdir: Path, formats=("png", "pdf"), stem="ledger") -> list[str]:
    plt = _mpl()
    u = res.units()
    t = res.array("ledger/time") * u["time"] * 1e15
    fac = res.root["ledger/stored"].attrs["si_factor"]
    si = res.root["ledger/stored"].attrs["units"]
    fig, ax = plt.subplots(figsize=(7, 4))
    for name, sty, c in (("stored", "-", REFERENCE), ("source_work", "--", NORMAL), ("bath", "-.", ACCENT[0]),
                         ("outflow", ":", ANOMALOUS)):
        ax.plot(t, res.array(f"ledger/{name}") * fac, sty, color=c,
                label={"stored": "stored", "source_work": "work by the source", "bath": "heat into the bath",
                       "outflow": "into the absorbing layers"}[name])
    resid = res.summary.get("ledger_residual", {}).get("value")
    ax.set(xlabel="t (fs)", ylabel=f"energy ({si})",
           title="energy ledger" + (f", relative residual {resid:.1e}" if resid is not None else ""))
    ax.legend(fontsize=8)
    return _save(fig, outdir, stem, formats)


def plot_scan(res: Results, outdir: Path, formats=("png", "pdf"), stem="scan") -> list[str]:
    if "scan" not in res.f:
        return []
    plt = _mpl()
    key = res.f["scan"].attrs["key"]
    vals = json.loads(res.f["scan"].attrs["values"])
    rows = [res.point(k).summary for k in range(res.n_points)]
    xs = np.arange(len(rows))
    fig, ax = plt.subplots(figsize=(6.5, 4))
    for name, c, mk in (("normal_power", NORMAL, "o"), ("anomalous_power", ANOMALOUS, "s")):
        y = [r.get(name, {}).get("value") or np.nan for r in rows]
        ax.semilogy(xs, y, mk + "-", color=c, label=name.replace("_", " "))
    units = rows[0].get("total_power", {}).get("units", "")
    ax.set_xticks(xs, [str(v) for v in vals])
    ax.set(xlabel=key, ylabel=f"power ({units})", title="Doppler-branch powers over the scan")
    ax.legend(fontsize=8)
    return _save(fig, outdir, stem, formats)


def plot_all(path, outdir=None, formats=("png", "pdf")) -> list[str]:
    """All figures of a results file; returns the written paths."""
    path = Path(path)
    outdir = Path(outdir) if outdir else path.with_suffix("")
    written = []
    with Results(path) as res:          # a file that is not ours is refused before the folder is made
        outdir.mkdir(parents=True, exist_ok=True)
        points = range(res.n_points) if "scan" in res.f else [None]
        for k in points:
            r = res if k is None else res.point(k)
            tag = "" if k is None else f"_point{k}"
            _BANNER["text"] = _status_banner(r)
            written += plot_geometry(r, outdir, formats, "geometry" + tag)
            written += plot_spectra(r, outdir, formats, "spectra" + tag)
            written += plot_kw_map(r, outdir, formats, "kx_omega" + tag)
            written += plot_ledger(r, outdir, formats, "ledger" + tag)
        _BANNER["text"] = _status_banner(res)
        try:
            written += plot_scan(res, outdir, formats)
        finally:
            _BANNER["text"] = ""
    return written
