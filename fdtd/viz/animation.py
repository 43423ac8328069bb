"""Field animations from the snapshots of a results file.

A fixed, symmetric colour scale over all frames (the 99.5th percentile of |field|
across the whole movie, so a single hot pixel cannot wash it out) keeps the
picture from flickering; the source is marked, material surfaces and region
outlines drawn.  MP4 through imageio-ffmpeg (which ships its own encoder); GIF
(Pillow) always works and is the fallback.
"""

from __future__ import annotations

import json
import logging
from pathlib import Path

import numpy as np

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.io.results import Results
from fdtd.viz.figures import ANOMALOUS, _length_scale, _mpl


def render_frames(res: Results, component: str | None = None, max_frames: int | None = None,
                  energy: bool = False) -> list[np.ndarray]:
    """RGB frames (uint8, (h, w, 3)) of the stored snapshots."""
    plt = _mpl()
    if not res.has("snapshots"):
        raise ValueError(f"{res.path}: no snapshots stored (set record.snapshots > 0 in the scenario)")
    stored = [k for k in res.root["snapshots"] if k in ("Ex", "Ey", "Ez", "Hx", "Hy", "Hz")]
    comp = component or str(res.root["snapshots"].attrs["component"])
    if comp not in stored:
        raise ParameterError(f"component = {comp!r}: {res.path} stores snapshots of {', '.join(stored)} only: "
                             f"expected one of them")
    data = res.array(f"snapshots/{comp}").astype(float)
    if energy:
        data = data**2
    times = res.array("snapshots/time")
    u = res.units()
    plan = json.loads(res.root.attrs["plan"])
    x = res.array("snapshots/x")
    frames = []
    lim = float(np.percentile(np.abs(data), 99.5)) or 1.0
    n = data.shape[0] if max_frames is None else min(max_frames, data.shape[0])
    if data.ndim == 2:       # 1D grid
        scale, lab = _length_scale(u["length"], x[-1] - x[0])
        for k in range(n):
            fig, ax = plt.subplots(figsize=(6, 3))
            ax.plot(x * scale, data[k], color="#0072B2")
            ax.set(ylim=(-lim if not energy else 0, lim), xlabel=f"x ({lab})", ylabel=comp,
                   title=f"t = {times[k] * u['time'] * 1e15:.1f} fs")
            frames.append(_to_rgb(fig))
        return frames
    y = res.array("snapshots/y")
    attrs = res.root[f"snapshots/{comp}"].attrs
    si = float(attrs.get("si_factor", 1.0)) ** (2 if energy else 1)
    unit = str(attrs.get("units", "")) + ("^2" if energy else "")
    scale, lab = _length_scale(u["length"], x[-1] - x[0])
    L = plan["length"]
    for k in range(n):
        fig, ax = plt.subplots(figsize=(7, 4))
        cmap = "RdBu_r" if not energy else "magma"
        pcm = ax.pcolormesh(x * scale, y * scale, data[k].T * si, cmap=cmap,
                            vmin=(-lim if not energy else 0) * si, vmax=lim * si, shading="auto")
        fig.colorbar(pcm, ax=ax, shrink=0.85, label=f"{comp}{'^2' if energy else ''} ({unit})")
        absorb = plan.get("absorber")
        if plan["kind"] == "comoving" and absorb:
            for edge in (y[0] + absorb, y[-1] - absorb):   # inner edges of the absorbing layers
                ax.axhline(edge * scale, color="0.5", lw=0.6, ls="--")
        for ys in plan.get("surfaces", []):
            ax.axhline(ys * scale, color="k", lw=0.8)
        xs = plan["x0"] + plan["speed"] * times[k]
        if plan["kind"] == "comoving":
            xs = np.mod(xs, L)
        ax.plot([xs * scale], [plan["height"] * scale], "o", mfc="none", mec=ANOMALOUS, ms=9, mew=2)
        ax.set(xlabel=f"x ({lab})", ylabel=f"y ({lab})", aspect="equal",
               title=f"{comp}{'^2' if energy else ''}, t = {times[k] * u['time'] * 1e15:.1f} fs")
        frames.append(_to_rgb(fig))
    return frames


def _to_rgb(fig) -> np.ndarray:
    import matplotlib.pyplot as plt

    fig.canvas.draw()
    img = np.asarray(fig.canvas.buffer_rgba())[..., :3].copy()
    plt.close(fig)
    return img


def animate(path, out=None, component: str | None = None, fps: int = 12, energy: bool = False) -> str:
    """Write an MP4 (or GIF) of the snapshots; returns the path written."""
    import imageio.v2 as imageio

    path = Path(path)
    out = Path(out) if out else path.with_suffix(".gif")
    if out.suffix.lower() not in (".gif", ".mp4"):
        raise ParameterError(f"output = {str(out)!r}: expected a movie file ending in .gif or .mp4")
    fps = _checks.positive_int("fps (frames per second)", fps, minimum=1)
    with Results(path) as res:
        frames = render_frames(res, component, energy=energy)
    h = min(f.shape[0] for f in frames)
    w = min(f.shape[1] for f in frames)
    frames = [f[:h, :w] for f in frames]
    if out.suffix.lower() == ".mp4":
        try:
            # even sizes for the encoder
            frames = [f[: h - h % 2, : w - w % 2] for f in frames]
            imageio.mimsave(out, frames, fps=fps, codec="libx264", quality=7, macro_block_size=1)
            return str(out)
        except Exception as exc:  # no ffmpeg: fall back to GIF
            out = out.with_suffix(".gif")
            logging.getLogger("fdtd.viz").warning("MP4 encoding unavailable (%s); writing %s", exc, out)
    imageio.mimsave(out, frames, duration=1.0 / fps, loop=0)
    return str(out)
