"""Tiny helpers shared by the validation scripts: report folder, figure style, markdown."""

from __future__ import annotations

import os
import subprocess
import time

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402

#: Okabe-Ito colour-blind-safe palette
COLORS = ["#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000"]
HERE = os.path.dirname(os.path.abspath(__file__))


def report_dir() -> str:
    d = os.path.join(HERE, "report")
    os.makedirs(d, exist_ok=True)
    return d


def figure(*args, **kw):
    plt.rcParams.update({"axes.prop_cycle": matplotlib.cycler(color=COLORS), "axes.grid": True,
                         "grid.alpha": 0.3, "font.size": 10})
    return plt.subplots(*args, constrained_layout=True, **kw)


def save(fig, name: str) -> str:
    path = os.path.join(report_dir(), name)
    fig.savefig(path, dpi=130)
    plt.close(fig)
    return name


def product_version() -> str:
    """The commit the simulator code comes from, and whether fdtd/ had uncommitted changes
    (``GAPWAKE_COMMIT`` overrides it, e.g. for a run from a clean export without .git)."""
    if os.environ.get("GAPWAKE_COMMIT"):
        return os.environ["GAPWAKE_COMMIT"]
    root = os.path.dirname(HERE)
    try:
        rev = subprocess.run(["git", "-C", root, "rev-parse", "--short", "HEAD"], capture_output=True,
                             text=True, check=True).stdout.strip()
        dirty = subprocess.run(["git", "-C", root, "status", "--porcelain", "--", "fdtd"],
                               capture_output=True, text=True, check=True).stdout.strip()
    except (OSError, subprocess.CalledProcessError):
        return "unknown (not a git checkout)"
    return f"commit {rev}" + (" with uncommitted changes in fdtd/" if dirty else "")


class Report:
    def __init__(self, title: str, filename: str):
        self.lines = [f"# {title}", "", f"Generated {time.strftime('%Y-%m-%d %H:%M')} by "
                      f"`validation/{filename.replace('.md', '.py')}` (simulator: {product_version()}).", ""]
        self.filename = filename
        self.t0 = time.time()

    def section(self, title: str, text: str = "") -> None:
        self.lines += [f"## {title}", "", text, ""] if text else [f"## {title}", ""]

    def para(self, text: str) -> None:
        self.lines += [text, ""]

    def image(self, name: str, caption: str) -> None:
        self.lines += [f"![{caption}]({name})", "", f"*{caption}*", ""]

    def table(self, header, rows) -> None:
        self.lines.append("| " + " | ".join(header) + " |")
        self.lines.append("|" + "---|" * len(header))
        for r in rows:
            self.lines.append("| " + " | ".join(str(x) for x in r) + " |")
        self.lines.append("")

    def write(self) -> str:
        self.lines.append(f"Run time {time.time() - self.t0:.0f} s.")
        path = os.path.join(report_dir(), self.filename)
        with open(path, "w") as fh:
            fh.write("\n".join(self.lines) + "\n")
        return path
