"""Resource guards: what a planned run will need (memory, disk, cell updates) against what
this machine has, checked before any array is allocated.

The memory estimate counts the arrays the solver allocates per Yee cell -- field
components, two time levels of every polarization slot per E component, the CPML memory
and the per-cell tables -- for real fields (a phased row of the isolated emitter uses
complex ones: twice as much), and adds what the recorders hold.  Tested against the
allocations of built experiments (tests/test_resources.py): within a factor 1.5.
"""

from __future__ import annotations

import math
import os
import shutil
from pathlib import Path

from fdtd.errors import ParameterError
# the planner's own cell limit, held here also against plans made without the planner (the
# refined grid of the grid check)
from fdtd.scenario.plan import MAX_CELLS

#: bytes of one float64
F8 = 8
#: the largest part of the available memory a run may plan to use
MEMORY_SHARE = 0.8
#: above this many cell updates in total a run is refused unless forced (on a 2-core
#: machine at ~100 Mcell/s this is about a month)
MAX_CELL_UPDATES = 3e14


class ResourceError(ParameterError):
    """A planned run does not fit this machine (memory, disk) or is absurdly long; the message
    names what was asked and what is available.  ``force=True`` (``gapwake run --force``)
    goes ahead anyway where that can make sense."""


def plan_cells(p) -> int:
    """Yee cells of a planned run (1D: nx; 2D: nx * ny)."""
    return int(p.nx) * (1 if p.polarization == "1d" else int(p.ny))


def plan_poles(p) -> int:
    """Polarization slots per cell: the most poles of any material the plan uses."""
    mats = [p.background] + [m for _r, m in (p.placements or [])]
    return max((len(getattr(m, "poles", ()) or ()) for m in mats if m is not None), default=0)


def memory_estimate(p, records: bool = True) -> int:
    """Bytes a planned run allocates: solver arrays plus what its recorders keep in memory.

    Per cell: 3 field components in 2D (2 in 1D), 2 time levels of each pole slot for each
    E component (2 in TE, 1 in TM and 1D), about 6 words of tables (material and mixture
    maps, coefficients, ledger and source work arrays).  Records that stream to the results
    file (snapshots, the field line) are counted on disk (:func:`disk_estimate`), not here."""
    cells = plan_cells(p)
    n_e = 2 if p.polarization == "te" else 1
    n_f = 2 if p.polarization == "1d" else 3
    words = n_f + 2 * n_e * plan_poles(p) + 6
    factor = 2 if getattr(p, "bloch_phase", 0.0) else 1
    total = cells * words * F8 * factor
    # the CPML memory: two strips of absorber cells per absorbing direction
    if p.polarization != "1d":
        npml = max(int(round(p.absorber / p.cell)), 10)
        total += 4 * npml * (p.nx + p.ny) * F8 * factor
    return int(total)


def disk_estimate(p) -> int:
    """Bytes the results file of a planned point will take (snapshots, the field line)."""
    cells = plan_cells(p)
    total = (p.snapshots or 0) * cells * F8
    if p.line_component:
        # co-moving: the line of the last recording window only (each window replaces it)
        steps = expected_steps(p) if p.kind != "comoving" else \
            int(math.ceil(p.transits * p.transit / _dt_bound(p)))
        total += p.nx * F8 * max(int(steps // max(p.line_every, 1)), 1)
    return int(total)


def expected_steps(p) -> int:
    """Time steps up to run.max_time (co-moving) or run.time (open), from the Courant number of
    the vacuum Yee scheme (an upper bound of the time step, so a lower bound of the steps)."""
    dt = _dt_bound(p)
    t = p.max_time if p.kind == "comoving" else (p.open_time or 0.0)
    return int(math.ceil(max(t, 0.0) / dt))


def _dt_bound(p) -> float:
    """Upper bound of the time step: the vacuum Yee limit times the Courant number."""
    dims = 1 if p.polarization == "1d" else 2
    return p.courant * p.cell / math.sqrt(dims)


def memory_available() -> int:
    """Bytes of memory this process can use now: MemAvailable of /proc/meminfo (Linux), else
    the physical memory."""
    try:
        with open("/proc/meminfo") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    try:
        return int(os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE"))
    except (ValueError, OSError, AttributeError):
        return 2**62


def _gib(n: float) -> str:
    return f"{n / 2**30:.3g} GiB" if n >= 2**28 else f"{n / 2**20:.3g} MiB"


def guard(p, where: str, out: Path | None = None, force: bool = False, points: int = 1) -> None:
    """Refuse (ResourceError) a planned point whose grid, memory, disk or total work does not
    fit this machine; ``force`` lets through what might fit (memory over the share, disk,
    very long runs), never a grid beyond :data:`MAX_CELLS`."""
    cells = plan_cells(p)
    hint = (" (a plain number is read in SI units: metres, seconds, rad/s -- give units, e.g. "
            "\"40 nm\")")
    if cells > MAX_CELLS:
        raise ResourceError(f"{where}: the grid has {cells:.3g} cells ({p.nx} x {p.ny}, cell "
                            f"{p.cell * p.ell:.3g} m): at most {MAX_CELLS:.3g} are allowed; enlarge "
                            f"grid.cell or shrink the domain{hint}")
    if force:
        return
    need = memory_estimate(p)
    have = memory_available()
    if need > MEMORY_SHARE * have:
        raise ResourceError(f"{where}: the run needs about {_gib(need)} of memory ({cells:,} cells, cell "
                            f"{p.cell * p.ell:.3g} m), this machine has {_gib(have)} available "
                            f"(at most {MEMORY_SHARE:.0%} may be planned): enlarge grid.cell or shrink the "
                            f"domain{hint}, or pass --force (force=True) to try anyway")
    if out is not None:
        disk = disk_estimate(p) * points
        parent = Path(out).resolve().parent
        try:
            free = shutil.disk_usage(parent if parent.exists() else Path.cwd()).free
        except OSError:
            free = None
        if free is not None and disk > free:
            raise ResourceError(f"{where}: the results file would take about {_gib(disk)} (record.snapshots "
                                f"= {p.snapshots}, record.line_component = {p.line_component!r}), the disk "
                                f"holding {parent} has {_gib(free)} free: store fewer snapshots or a "
                                "sparser line (record.line_every), or pass --force")
    updates = cells * expected_steps(p) * points
    if updates > MAX_CELL_UPDATES:
        raise ResourceError(f"{where}: the run would make about {updates:.3g} cell updates ({cells:,} cells x "
                            f"{expected_steps(p):,} steps x {points} point(s); at most {MAX_CELL_UPDATES:.0e} "
                            "without --force): shorten run.time / run.max_time, coarsen grid.cell or "
                            "scan fewer points")
