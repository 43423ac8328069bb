"""Figure of a passive pole fit: data against fit (Re eps, Im eps) and the relative error.

Drawn on its own Agg canvas: no display, no pyplot state, no change of matplotlib's
backend or rcParams.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from fdtd.media.pole_fit import PoleFit


def plot_pole_fit(fit: PoleFit, path, title: str | None = None) -> Path:
    """Write a figure of ``fit`` (a :class:`~fdtd.media.pole_fit.PoleFit`) to ``path``.

    Three panels over the fitted normalized frequencies omega (c/ell): Re eps and
    Im eps (data as points, the fitted material as a line on a grid of at least
    400 frequencies) and the per-point relative error (log axis).  The format
    follows the file extension (``.png``, ``.pdf``, ...); ``title`` replaces the
    default (material name, rms and largest error).  Returns the path.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    path = Path(path)
    fig = Figure(figsize=(6.0, 7.0), layout="constrained")
    FigureCanvasAgg(fig)
    ax_re, ax_im, ax_err = fig.subplots(3, 1, sharex=True)
    w = fit.omega
    wd = np.linspace(w.min(), w.max(), max(400, 4 * w.size))
    ef = np.asarray(fit.material.permittivity(wd))
    ax_re.plot(w, fit.eps_data.real, "o", ms=3, label="data")
    ax_re.plot(wd, ef.real, "-", label="fit")
    ax_re.set_ylabel(r"Re $\varepsilon$")
    ax_re.legend()
    ax_im.plot(w, fit.eps_data.imag, "o", ms=3)
    ax_im.plot(wd, ef.imag, "-")
    ax_im.set_ylabel(r"Im $\varepsilon$")
    err = np.maximum(fit.point_errors, 1e-17)     # log axis: keep exact zeros visible
    ax_err.semilogy(w, err, ".-")
    ax_err.set_ylabel("relative error")
    ax_err.set_xlabel(r"$\omega$ [c/$\ell$]")
    fig.suptitle(title or f"{fit.material.name}: rms {fit.residual:.2g}, max {fit.max_error:.2g}")
    fig.savefig(path)
    return path
