r"""What the field recorders share: time levels, windows, chunked series, the observer hooks.

The recorders: :mod:`fdtd.recording.line` (field lines over time),
:mod:`fdtd.recording.snapshots` (whole-grid copies), :mod:`fdtd.recording.dft` (running DFTs).

All three are solver observers: the constructor appends the recorder to
``solver.observers`` and the solver calls ``before_step`` / ``after_step``
around every step.  :meth:`close` detaches it again.

Units
    Everything is in the solver's normalized units (c = eps0 = mu0 = 1):
    fields as the solver stores them, times and positions as normalized
    numbers, angular frequencies in radians per unit of normalized time.
    HDF5 files carry the attribute ``units = "normalized"``.

Time stamps
    After ``n`` steps the solver holds ``E^n`` at time ``n dt`` and
    ``H^{n-1/2}`` at time ``(n - 1/2) dt``.  Every sample is stamped with its
    component's own time level, so the H stamps of a state are half a step
    earlier than the E stamps.  Times are therefore kept per *kind* (E or H):
    all electric components of one recorder share one time array, all
    magnetic ones another.  The state present when the first step after
    construction starts is recorded as well (so ``E^0`` at t = 0 is part of
    a record started on a fresh solver; ``H^{-1/2}`` at t = -dt/2 is not when
    ``start = 0``).  A time ``t`` counts as inside ``[start, stop]`` to within
    ``1e-9 dt``.

Shapes
    Grid arrays have shape ``grid.shape``: ``(nx,)`` in 1D, ``(nx, ny)`` in
    2D, x first.  A line record is ``(n_samples, n_points)``, a stack of
    snapshots ``(n_taken, *grid.shape)``, a spectrum
    ``(n_frequencies, *region_shape)``.

Positions
    Components are staggered (see :mod:`fdtd.space.grid`): a "line at y = 1.0" is,
    for each component separately, the storage row whose own y is nearest
    1.0, and the positions along the line differ by component.  Both are
    reported per component.
"""

from __future__ import annotations

import math
from pathlib import Path

import h5py
import numpy as np

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.solver.stepper import Solver

#: relative tolerance (in steps) when comparing a time level with start/stop/requested times
TIME_TOL = 1e-9

#: target size of one buffered chunk of a line record (bytes)
CHUNK_BYTES = 2**20

_AXES = "xy"


# ----------------------------------------------------------------------
# helpers shared by the recorders
# ----------------------------------------------------------------------
def _kind_shift(kind: str) -> float:
    """Time level of a kind in steps behind E: 0 for E, 1/2 for H."""
    return 0.0 if kind == "E" else 0.5


def _level_time(kind: str, n: int, dt: float) -> float:
    """Time (normalized) of the ``kind`` field held after ``n`` steps."""
    return (n - _kind_shift(kind)) * dt


def _components(grid, components) -> tuple[str, ...]:
    """Validated, de-duplicated component names (order kept)."""
    allowed = list(grid.e_components + grid.h_components)
    if isinstance(components, str):
        components = (components,)
    try:
        names = list(components)
    except TypeError:
        raise ParameterError(f"components = {components!r}: expected a name or a sequence of "
                             f"names out of {allowed}") from None
    if not names:
        raise ParameterError(f"components = {components!r} is empty: expected some of {allowed}")
    out: list[str] = []
    for c in names:
        if c not in allowed:
            raise ParameterError(f"components: {c!r} is not a field of polarization "
                                 f"{grid.polarization!r}: expected some of {allowed}")
        if c not in out:
            out.append(c)
    return tuple(out)


def _kind_of(grid, component: str) -> str:
    return "E" if component in grid.e_components else "H"


def _check_solver(solver) -> None:
    if not isinstance(solver, Solver):
        raise ParameterError(f"solver = {solver!r}: expected an fdtd.Solver")


def _window(start, stop) -> tuple[float, float]:
    start = _checks.finite_number("start", start)
    if stop is None:
        return start, math.inf
    stop = _checks.finite_number("stop", stop)
    if stop < start:
        raise ParameterError(
            f"stop = {stop!r} is not allowed: expected a time >= start = {start!r}")
    return start, stop


def _open_h5(path, recorder: str, description: str, solver) -> tuple[Path | None, h5py.Group]:
    """Create (overwrite) an HDF5 file -- or take an open group of one, such as a point of a
    results file being written -- with the attributes every recorder record carries.

    Returns (path or None for a group, the group to write into)."""
    if isinstance(path, h5py.Group):
        f = path
        path = None
    else:
        path = Path(path)
        try:
            f = h5py.File(path, "w")
        except OSError as exc:
            raise ParameterError(f"path = {str(path)!r}: cannot create the HDF5 file ({exc}); "
                                 "give a path in an existing, writable directory") from None
    g = solver.model.grid
    f.attrs["units"] = "normalized"
    f.attrs["description"] = description
    f.attrs["recorder"] = recorder
    f.attrs["polarization"] = g.polarization
    f.attrs["grid_shape"] = np.asarray(g.shape, dtype=np.int64)
    f.attrs["grid_spacing"] = np.asarray(g.spacing, dtype=float)
    f.attrs["grid_origin"] = np.asarray(g.origin, dtype=float)
    f.attrs["dt"] = solver.dt
    return path, f


def _is_group_sink(path) -> bool:
    return isinstance(path, h5py.Group)


class _Series:
    """Append-only sequence of equally shaped samples, buffered in chunks.

    Full chunks go to a list of blocks (memory) or to a resizable HDF5
    dataset (streaming); the caller flushes the file after a spill, so the
    buffer -- at most one chunk -- is all a crash can lose.
    """

    def __init__(self, sample_shape: tuple[int, ...], chunk: int, dataset=None):
        self.sample_shape = tuple(sample_shape)
        self.dataset = dataset
        self._buf = np.empty((chunk,) + self.sample_shape)
        self._fill = 0
        self._blocks: list[np.ndarray] = []
        self.count = 0

    def append(self, value) -> bool:
        """Store one sample; return True when a chunk went to the dataset."""
        self._buf[self._fill] = value
        self._fill += 1
        self.count += 1
        if self._fill == self._buf.shape[0]:
            return self.spill()
        return False

    def spill(self) -> bool:
        """Move the buffered samples out of the buffer; True if the file was written."""
        if self._fill == 0:
            return False
        part = self._buf[: self._fill]
        self._fill = 0
        if self.dataset is None:
            self._blocks.append(part.copy())
            return False
        n0 = self.dataset.shape[0]
        self.dataset.resize(n0 + part.shape[0], axis=0)
        self.dataset[n0:] = part
        return True

    def array(self) -> np.ndarray:
        """All samples so far, shape (count, *sample_shape) (memory mode only)."""
        return np.concatenate(self._blocks + [self._buf[: self._fill]], axis=0)

    def restore(self, samples: np.ndarray) -> None:
        """Start again from ``samples`` (count, *sample_shape): a resumed run."""
        samples = np.asarray(samples, dtype=float).reshape((-1,) + self.sample_shape)
        self._fill = 0
        self._blocks = []
        self.count = samples.shape[0]
        if self.dataset is None:
            if samples.shape[0]:
                self._blocks.append(samples.copy())
            return
        self.dataset.resize(samples.shape[0], axis=0)
        self.dataset[...] = samples


class _Observer:
    """Common machinery: time levels of the hooks, lazy first sample, detaching.

    The level of the state after a step is taken from the step count seen in
    ``before_step`` plus one, so it does not depend on whether the solver
    increments its counter before or after calling ``after_step``.  The first
    sample is the state present when the first step starts (not when the
    recorder was built), so fields set after construction are recorded.
    """

    def __init__(self, solver, components):
        _check_solver(solver)
        self.solver = solver
        self.grid = solver.model.grid
        self.dt = float(solver.dt)
        self.components = _components(self.grid, components)
        self.kinds = tuple(k for k in ("E", "H")
                           if any(_kind_of(self.grid, c) == k for c in self.components))
        self._n_begin = int(solver.step_count)
        self._primed = False
        self._level_after = self._n_begin
        self.closed = False

    def _attach(self) -> None:
        self.solver.observers.append(self)

    # -- checkpoints ------------------------------------------------------
    _STATE = ("_n_begin", "_primed", "_level_after")

    def checkpoint_state(self) -> dict:
        """Everything needed to continue bit for bit: scalars and arrays by name."""
        return {name: getattr(self, name) for name in self._STATE}

    def restore_state(self, state: dict) -> None:
        """Continue from :meth:`checkpoint_state` of a recorder built with the same arguments."""
        for name in self._STATE:
            cur = getattr(self, name)
            setattr(self, name, type(cur)(state[name]) if not isinstance(cur, np.ndarray) else state[name])

    # -- observer hooks ---------------------------------------------------
    def before_step(self, solver) -> None:
        if self.closed:
            return
        n = int(solver.step_count)
        if not self._primed:
            self._primed = True
            self._observe(n)
        self._level_after = n + 1

    def after_step(self, solver, injections) -> None:
        if self.closed:
            return
        self._observe(self._level_after)

    def _observe(self, n: int) -> None:  # pragma: no cover - abstract
        raise NotImplementedError

    # -- blocks of 1D steps (fdtd.solver.block1d) ---------------------------
    #: the fields of the level being observed: the solver's, or a block's kept copy
    _block_fields: dict | None = None

    def _field(self, component: str) -> np.ndarray:
        """The array of ``component`` at the level being observed."""
        kept = self._block_fields
        return self.solver.fields[component] if kept is None else kept[component]

    def _wants(self, n: int) -> bool:
        """Whether :meth:`_observe` at level ``n`` may store something (no side effects;
        True when unsure: an unneeded copy only costs time)."""
        return True

    @property
    def accepts_blocks(self) -> bool:
        """Real 1D runs can hand this recorder a block of steps at once."""
        return self.grid.dims == 1 and not getattr(self.solver, "complex_fields", False)

    def block_samples(self, solver, m: int) -> np.ndarray:
        """No mean fields needed (field records store the state at a level).  The first
        sample, the state before the first step, is taken here: it is the current one."""
        if not self.closed and not self._primed:
            self._primed = True
            self._observe(int(solver.step_count))
        return np.zeros(m, dtype=np.bool_)

    def block_keeps(self, solver, m: int) -> np.ndarray:
        """The steps of the next block after which this recorder needs the state."""
        n0 = int(solver.step_count)
        if self.closed:
            return np.zeros(m, dtype=np.bool_)
        return np.fromiter((self._wants(n0 + s + 1) for s in range(m)), dtype=np.bool_, count=m)

    def after_block(self, solver, block) -> None:
        """Observe the kept levels of a block, in order (the same records as step by step)."""
        if self.closed:
            return
        for s in np.nonzero(block.keep)[0]:
            n = block.step0 + int(s) + 1
            if self._wants(n):
                self._block_fields = block.fields_after(int(s))
                try:
                    self._observe(n)
                finally:
                    self._block_fields = None
        self._level_after = block.step0 + block.m

    # -- lifetime ---------------------------------------------------------
    def _detach(self) -> None:
        self.closed = True
        obs = self.solver.observers
        if any(o is self for o in obs):
            obs[:] = [o for o in obs if o is not self]

    def close(self) -> None:
        """Stop recording and detach from the solver (idempotent)."""
        self._detach()

    def __enter__(self):
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def _check_component(self, component: str) -> str:
        if component not in self.components:
            raise ParameterError(f"component = {component!r} was not recorded: this recorder "
                                 f"holds {list(self.components)}")
        return component


class _Clock:
    """Which step levels a windowed, decimated record samples.

    The decimation phase is anchored at ``n0``, the first level at or after
    construction whose E time reaches ``start``; level ``n`` is a sampling
    level when ``n >= n0`` and ``(n - n0) % every == 0``, and a kind is stored
    there when its own time lies in ``[start, stop]``.
    """

    def __init__(self, dt: float, n_begin: int, start: float, stop: float, every: int):
        self.dt = dt
        self.start = start
        self.stop = stop
        self.every = every
        self.n0 = max(n_begin, math.ceil(start / dt - TIME_TOL))

    def takes(self, kind: str, n: int) -> bool:
        if n < self.n0 or (n - self.n0) % self.every:
            return False
        t = _level_time(kind, n, self.dt)
        tol = TIME_TOL * self.dt
        return self.start - tol <= t <= self.stop + tol

    def takes_many(self, kind: str, n: np.ndarray) -> np.ndarray:
        """:meth:`takes` for an array of levels (bool array of the same shape)."""
        n = np.asarray(n)
        t = (n - _kind_shift(kind)) * self.dt
        tol = TIME_TOL * self.dt
        return (n >= self.n0) & ((n - self.n0) % self.every == 0) & (t >= self.start - tol) & \
            (t <= self.stop + tol)

    def past_stop(self, n: int) -> bool:
        """True once even the H time (the later stop) of level n is beyond stop."""
        return _level_time("H", n, self.dt) > self.stop + TIME_TOL * self.dt

    def planned(self, kind: str) -> int | None:
        """Number of samples of a kind the window will take (None if stop is open)."""
        if math.isinf(self.stop):
            return None
        s = _kind_shift(kind)
        lo = max(self.n0, math.ceil(self.start / self.dt + s - TIME_TOL))
        hi = math.floor(self.stop / self.dt + s + TIME_TOL)
        first = self.n0 + -(-(lo - self.n0) // self.every) * self.every
        return 0 if first > hi else (hi - first) // self.every + 1


