"""The one progress display: a tqdm bar on stderr, counting steps.

Shown when stderr is a terminal (or when asked for); tqdm itself limits redraws to a
few per second, so callers may update after every block of steps.
"""

from __future__ import annotations

import sys


def progress_bar(total: int, description: str = "", enabled: bool | None = None, unit: str = "step"):
    """A tqdm bar over ``total`` steps, or a do-nothing stand-in when not enabled."""
    from tqdm.auto import tqdm

    show = sys.stderr.isatty() if enabled is None else bool(enabled)
    return tqdm(total=max(int(total), 1), desc=description, unit=unit, unit_scale=True,
                disable=not show, file=sys.stderr, mininterval=0.25, dynamic_ncols=True,
                leave=False)
