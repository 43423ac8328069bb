r"""Figure of the threshold speed against the cutoff wavenumber (``gapwake threshold -o``).

The numbers come from :mod:`fdtd.reference.thresholds` (bulk thresholds as a
function of ``k_max``); this module only draws them.  The figure is drawn on
its own Agg canvas: no pyplot state, no change of matplotlib's backend or rcParams.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from fdtd import _checks
from fdtd.media.materials import Material, NonlocalLorentzPole
from fdtd.reference.cutoffs import Geometry
from fdtd.reference.modes import (Scheme, local_version, lossless, nonlocal_model,
                                  resonance_frequencies)
from fdtd.reference.thresholds import threshold_curves

#: Okabe-Ito colour-blind-safe palette
_COLORS = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000")


def plot_threshold_vs_cutoff(material: Material, path, omega0: float | None = None,
                             beta_nl: float | None = None, geometry: Geometry | None = None,
                             scheme: Scheme | None = None, k_range: tuple | None = None,
                             ell: float | None = None, formats=("png", "pdf")) -> list[str]:
    """Figure: v_min against the cutoff wavenumber k_max, local and nonlocal model.

    Bulk thresholds (the cutoff dependence): solid the local model, dashed the
    nonlocal one (``beta_nl``, or the material's own nonlocal poles); blue
    Cherenkov (charge), vermillion anomalous Doppler (with ``omega0``, c/ell).
    Dotted horizontal lines: the asymptotes beta_nl and 1/sqrt(eps_inf).  With
    ``scheme`` the grid's discrete-dispersion curves (green) up to pi/dx
    (vertical line); for a gap geometry a vertical line marks k_gap, beyond
    which the gap criterion (not the cutoff) sets the threshold.  ``k_range``
    (1/ell) is the (lo, hi) of the k_max axis (default 0.3 to 1000 times the
    material's scale); ``ell`` (metres) adds an axis in 1/um.  Writes ``path``
    with each suffix of ``formats`` and returns the file names.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    geometry = geometry or Geometry()
    bulk = Geometry.bulk(geometry.dims)
    base = lossless(local_version(material))
    nonloc = nonlocal_model(material, beta_nl)
    scale = max(list(resonance_frequencies(base)) + [float(omega0 or 0.0), 1e-3])
    lo, hi = k_range if k_range is not None else (0.3 * scale, 1e3 * scale)
    if scheme is not None and k_range is None:
        hi = max(hi, 3 * scheme.k_nyquist)
    kmax = np.geomspace(lo, hi, 300)
    fig = Figure(figsize=(6.4, 4.6))
    FigureCanvasAgg(fig)
    ax = fig.subplots()
    fig.subplots_adjust(left=0.12, right=0.97, bottom=0.12, top=0.84 if ell else 0.91)
    w0s = {"cherenkov": 0.0}
    names = {"cherenkov": (_COLORS[0], "Cherenkov (charge)"),
             "anomalous": (_COLORS[1], "anomalous Doppler")}
    if omega0 is not None:
        w0s["anomalous"] = _checks.positive("source rest frequency omega0", omega0)
    loc = threshold_curves(base, kmax, w0s, bulk)
    nlc = threshold_curves(nonloc, kmax, w0s, bulk) if nonloc is not None else None
    kg = kmax[kmax <= scheme.k_nyquist] if scheme is not None else np.zeros(0)
    grc = threshold_curves(base, kg, w0s, bulk, scheme) if kg.size else None
    for proc in w0s:
        col, name = names[proc]
        ax.plot(kmax, loc[proc], color=col, lw=1.8, label=f"{name}, local")
        if nlc is not None:
            ax.plot(kmax, nlc[proc], color=col, lw=1.8, ls="--", label=f"{name}, nonlocal")
        if grc is not None:
            ax.plot(kg, grc[proc], color=_COLORS[2], lw=2.4, ls=":",
                    label=f"{name}, grid dx = {scheme.dx:.3g} (discrete)")
    x_txt = kmax[-1]
    if nonloc is not None:
        for p in nonloc.poles:
            if isinstance(p, NonlocalLorentzPole):
                ax.axhline(p.beta_nl, color=_COLORS[6], lw=0.8, ls=":")
                ax.annotate(r"$\beta_{nl}$", (x_txt, p.beta_nl), xytext=(-14, 3),
                            textcoords="offset points", fontsize=8)
                break
    ax.axhline(1 / math.sqrt(base.eps_inf), color=_COLORS[6], lw=0.8, ls=(0, (1, 3)))
    ax.annotate(r"$1/\sqrt{\varepsilon_\infty}$", (x_txt, 1 / math.sqrt(base.eps_inf)),
                xytext=(-34, 3), textcoords="offset points", fontsize=8)
    if scheme is not None:
        ax.axvline(scheme.k_nyquist, color=_COLORS[2], lw=0.8, ls=":")
        ax.annotate(r"$\pi/\Delta x$", (scheme.k_nyquist, 1.0), xytext=(3, -12),
                    textcoords="offset points", fontsize=8, color=_COLORS[2])
    if geometry.kind == "gap":
        ax.axvline(geometry.k_gap, color=_COLORS[3], lw=1.0, ls="-.")
        ax.annotate(f"gap criterion $k_{{gap}}$ (f = {geometry.coupling:g})", (geometry.k_gap, 1.0),
                    xytext=(3, -24), textcoords="offset points", fontsize=8, color=_COLORS[3])
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel(r"cutoff wavenumber $k_{max}$ [1/$\ell$]"
                  + (f"  ($\\ell$ = {ell:.3g} m)" if ell else ""))
    ax.set_ylabel(r"threshold speed $v_{min}$ [c]")
    ax.set_title(f"{material.name}: bulk threshold speed against the cutoff"
                 + (f" ($\\omega_0$ = {omega0:.3g} c/$\\ell$)" if omega0 else ""), fontsize=9)
    ax.grid(True, which="major", alpha=0.3)
    ax.legend(fontsize=7, loc="lower left", framealpha=0.9)
    if ell:
        sec = ax.secondary_xaxis("top", functions=(lambda k: k / ell * 1e-6, lambda q: q * ell * 1e6))
        sec.set_xlabel(r"$k_{max}$ [1/$\mu$m]")
    out = []
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    for fmt in formats:
        q = p.with_suffix("." + fmt)
        fig.savefig(q, dpi=130)
        out.append(str(q))
    return out
