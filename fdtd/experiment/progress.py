"""A small progress line for long runs: steps, simulated time, time left.

Writes to stderr, and only when stderr is a terminal (or ``force=True``), so
logs and CI output stay clean.
"""

from __future__ import annotations

import sys
import time


class Progress:
    def __init__(self, total_steps: int, dt: float, time_unit: str = "", enabled: bool | None = None,
                 stream=None, min_interval: float = 0.5):
        self.total = max(int(total_steps), 1)
        self.dt = dt
        self.unit = time_unit
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = (hasattr(self.stream, "isatty") and self.stream.isatty()) if enabled is None else enabled
        self.t_start = time.perf_counter()
        self.t_last = 0.0
        self.min_interval = min_interval

    def update(self, step: int, force: bool = False) -> None:
        if not self.enabled:
            return
        now = time.perf_counter()
        if not force and now - self.t_last < self.min_interval:
            return
        self.t_last = now
        frac = min(step / self.total, 1.0)
        elapsed = now - self.t_start
        left = elapsed * (1.0 - frac) / frac if frac > 0 else float("nan")
        bar = "#" * int(30 * frac) + "-" * (30 - int(30 * frac))
        t_sim = step * self.dt
        self.stream.write(f"\r[{bar}] step {step}/{self.total}  t = {t_sim:.4g}{self.unit}  "
                          f"elapsed {elapsed:.1f} s  left {left:.1f} s ")
        self.stream.flush()

    def close(self) -> None:
        if self.enabled:
            self.update(self.total, force=True)
            self.stream.write("\n")
            self.stream.flush()
