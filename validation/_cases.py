"""Scenario helpers shared by the validation scripts (the same as the physics tests').

Every comparison of the simulator with an analytic or semi-analytic result runs a
:class:`fdtd.scenario.schema.Scenario` through :func:`fdtd.run` -- the experiment procedure
of ``gapwake run`` (ramp -> settle -> record) -- and reads the results file it wrote.  The
scenario builders (natural units: c = 1, lengths in c/omega_ref, frequencies in
omega_ref = 1 eV/hbar) are those of ``tests/cases.py``, imported from there so that the
tests and the validation scripts describe a case the same way.

Results files go to a scratch directory (removed at exit unless ``GAPWAKE_KEEP_RUNS`` is
set, which also prints where it is).
"""

from __future__ import annotations

import atexit
import os
import shutil
import sys
import tempfile
import time
import warnings
from dataclasses import dataclass
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
for p in (str(ROOT), str(ROOT / "tests"), str(HERE)):
    if p not in sys.path:
        sys.path.insert(0, p)

import fdtd  # noqa: E402
from cases import constant, lorentz, scenario  # noqa: E402,F401  (tests/cases.py)
from fdtd.scenario.schema import Scenario  # noqa: E402

_SCRATCH: Path | None = None


def scratch() -> Path:
    """The directory the results files of this process go to."""
    global _SCRATCH
    if _SCRATCH is None:
        _SCRATCH = Path(tempfile.mkdtemp(prefix="gapwake-validation-"))
        if os.environ.get("GAPWAKE_KEEP_RUNS"):
            print("results files kept in", _SCRATCH, flush=True)
        else:
            atexit.register(shutil.rmtree, _SCRATCH, True)
    return _SCRATCH


@dataclass
class Run:
    """One :func:`fdtd.run` call: its RunOutput, the results file and the wall time."""

    out: object                 # fdtd.api.RunOutput
    file: str
    seconds: float

    @property
    def n_points(self) -> int:
        return len(self.out.points)

    def results(self, point: int = 0):
        """An open :class:`fdtd.io.results.Results` of one point (use as a context manager)."""
        return fdtd.open_results(self.file, None if self.n_points == 1 else point)

    def value(self, name: str, point: int = 0, normalized: bool = True):
        """A summary figure (normalized units by default; flags such as ``steady`` as stored)."""
        v = self.out.points[point][name]
        return v["normalized"] if normalized and v["normalized"] is not None else v["value"]

    def summary(self, point: int = 0) -> dict:
        return self.out.points[point]


_COUNT = [0]


def run(sc: Scenario, name: str | None = None, quiet: bool = True) -> Run:
    """Run a scenario through :func:`fdtd.run` into the scratch directory."""
    _COUNT[0] += 1
    path = scratch() / f"{name or 'case'}_{_COUNT[0]}.h5"
    t0 = time.perf_counter()
    with warnings.catch_warnings():
        if quiet:
            warnings.simplefilter("ignore")
        out = fdtd.run(sc, path, progress=False)
    return Run(out, out.file, time.perf_counter() - t0)


def with_scan(sc: Scenario, key: str, values) -> Scenario:
    """The scenario with a ``[scan]`` table over ``key`` (one point per value)."""
    data = dict(sc.raw, scan={"key": key, "values": [float(v) if isinstance(v, (int, float)) else v
                                                       for v in values]})
    return Scenario(data, where=f"{sc.where} scan over {key}")


def spectra(r: Run) -> list:
    """The Doppler spectrum (normalized units) of every point of a run."""
    out = []
    for k in range(r.n_points):
        with r.results(k) as res:
            out.append(res.spectrum())
    return out
