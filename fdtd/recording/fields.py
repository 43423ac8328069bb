r"""Recorders: field lines over time, whole-grid snapshots, running DFTs.

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
    Components are staggered (see :mod:`fdtd.grid`): a "line at y = 1.0" is,
    for each component separately, the storage row whose own y is nearest
    1.0, and the positions along the line differ by component.  Both are
    reported per component.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from pathlib import Path

import h5py
import numpy as np

from fdtd import _checks
from fdtd.errors import GeometryError, ParameterError
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


# ----------------------------------------------------------------------
# line recorder
# ----------------------------------------------------------------------
class FieldLineRecorder(_Observer):
    """Record field components along one grid line over time.

    Parameters
    ----------
    solver : Solver
    components : str or sequence of str
        Components to record, e.g. ``("Ey", "Hz")``.
    axis : {"x", "y"}
        Direction of the line.  "x": the row of constant y nearest
        ``position``, ``nx`` points; "y": the column of constant x nearest
        ``position``, ``ny`` points.  In 1D only "x" (the whole grid).
    position : float
        y (axis "x") or x (axis "y") of the line, normalized length, inside
        the grid's extent ``[origin, origin + n d]``; ignored in 1D.  Each
        component uses its own nearest storage row (staggering).
    start, stop : float
        Window: a sample is stored when its time level lies in
        ``[start, stop]`` (normalized time); ``stop=None`` leaves it open.
    every : int
        Decimation: sample every ``every`` steps (>= 1), anchored at the first
        level whose E time reaches ``start``.
    path : str or Path, optional
        Stream to this HDF5 file (overwritten): datasets ``<component>``
        (n_samples, n_points), ``time_E`` / ``time_H`` (n_samples,),
        ``coord_<component>`` (n_points,); chunked, resizable, flushed after
        every chunk.  Without it the record is kept in memory.
    max_memory : int
        In-memory limit (bytes) for the recorded samples; without ``path`` a
        record whose planned size (known from ``stop``) exceeds it is refused,
        and an open-ended one stops with a RuntimeWarning when it would.
    chunk : int, optional
        Samples per buffered chunk (default: about 1 MiB per component).

    Attributes
    ----------
    coordinates : dict component -> float array (n_points,)
        Positions along the line (normalized length).
    line_position : dict component -> float or None
        The transverse coordinate of the row actually used (None in 1D).
    line_index : dict component -> int or None
        Its storage index.
    truncated : bool
        True when the memory guard stopped the record.
    """

    def __init__(self, solver, components, axis="x", position=None, start=0.0, stop=None,
                 every=1, path=None, max_memory=256 * 2**20, chunk=None):
        super().__init__(solver, components)
        g = self.grid
        if g.dims == 1:
            axis = _checks.one_of("axis", axis, ("x",))
        else:
            axis = _checks.one_of("axis", axis, ("x", "y"))
        self.axis = axis
        along = _AXES.index(axis)
        self.start, self.stop = _window(start, stop)
        self.every = _checks.positive_int("every", every)
        self.max_memory = _checks.positive("max_memory", max_memory)
        self.n_points = g.shape[along]
        self._index: dict[str, tuple] = {}
        self.coordinates: dict[str, np.ndarray] = {}
        self.line_position: dict[str, float | None] = {}
        self.line_index: dict[str, int | None] = {}
        if g.dims == 1:
            self.position = None
            for c in self.components:
                self._index[c] = (slice(None),)
                self.line_position[c] = None
                self.line_index[c] = None
        else:
            across = 1 - along
            name = _AXES[across]
            if position is None:
                raise ParameterError(f"position = None: a line along {axis} needs the {name} "
                                     f"of the line (a number in the grid's {name} extent)")
            position = _checks.finite_number("position", position)
            lo = g.origin[across]
            hi = lo + g.extent[across]
            if not lo <= position <= hi:
                raise GeometryError(
                    f"position = {position!r} lies outside the grid: a line along {axis} needs "
                    f"{name} in [{lo:.6g}, {hi:.6g}] (the grid's {name} extent)")
            self.position = position
            for c in self.components:
                yc = g.axis_coordinates(c, across)
                j = int(np.argmin(np.abs(yc - position)))
                self._index[c] = (slice(None), j) if along == 0 else (j, slice(None))
                self.line_position[c] = float(yc[j])
                self.line_index[c] = j
        for c in self.components:
            self.coordinates[c] = g.axis_coordinates(c, along)

        row_bytes = 8 * self.n_points
        if chunk is None:
            chunk = int(min(4096, max(1, CHUNK_BYTES // row_bytes)))
        self.chunk = _checks.positive_int("chunk", chunk)
        self._clock = _Clock(self.dt, self._n_begin, self.start, self.stop, self.every)
        self._row_bytes = row_bytes
        self._bytes = 0
        self.truncated = False

        self.path = None
        self._file = None
        if path is None:
            self._check_planned_memory()
        else:
            self._create_file(path)
        ds = self._file
        self._series = {c: _Series((self.n_points,), self.chunk, None if ds is None else ds[c])
                        for c in self.components}
        self._time_series = {k: _Series((), self.chunk, None if ds is None else ds[f"time_{k}"])
                             for k in self.kinds}
        self._kind = {c: _kind_of(g, c) for c in self.components}
        self._attach()

    # -- construction helpers -----------------------------------------------
    def _sample_bytes(self, kind: str) -> int:
        """Bytes one sampling level adds for a kind (rows plus the time stamp)."""
        n = sum(1 for c in self.components if _kind_of(self.grid, c) == kind)
        return n * self._row_bytes + 8

    def _advice(self) -> str:
        stop = "open" if math.isinf(self.stop) else f"{self.stop:.6g}"
        return (f"give path='record.h5' to stream to disk, raise every= (now {self.every}), "
                f"shorten the window start..stop (now {self.start:.6g}..{stop}), "
                f"or raise max_memory")

    def _check_planned_memory(self) -> None:
        total = 0
        for k in self.kinds:
            n = self._clock.planned(k)
            if n is None:
                return
            total += n * self._sample_bytes(k)
        if total > self.max_memory:
            raise ParameterError(
                f"FieldLineRecorder of {list(self.components)} would keep {total} bytes "
                f"({total / 2**20:.1f} MiB) in memory, more than max_memory = "
                f"{self.max_memory:.0f} bytes: {self._advice()}")

    def _create_file(self, path) -> None:
        g = self.grid
        desc = (f"field components {list(self.components)} along a line in {self.axis} "
                f"(rows: samples in time, columns: points along the line)")
        self.path, f = _open_h5(path, "FieldLineRecorder", desc, self.solver)
        f.attrs["axis"] = self.axis
        f.attrs["position"] = np.nan if self.position is None else self.position
        f.attrs["start"] = self.start
        f.attrs["stop"] = self.stop if math.isfinite(self.stop) else np.nan
        f.attrs["every"] = self.every
        for k in self.kinds:
            d = f.create_dataset(f"time_{k}", shape=(0,), maxshape=(None,), chunks=(self.chunk,),
                                 dtype="f8")
            d.attrs["units"] = "normalized"
            d.attrs["description"] = (f"time level of the {k} components of each sample "
                                      "(H half a step behind E)")
        for c in self.components:
            k = _kind_of(g, c)
            d = f.create_dataset(c, shape=(0, self.n_points), maxshape=(None, self.n_points),
                                 chunks=(self.chunk, self.n_points), dtype="f8")
            d.attrs["units"] = "normalized"
            d.attrs["description"] = f"{c} on the line: (n_samples, n_points)"
            d.attrs["time"] = f"time_{k}"
            d.attrs["coordinate"] = f"coord_{c}"
            d.attrs["line_position"] = (np.nan if self.line_position[c] is None
                                        else self.line_position[c])
            d.attrs["line_index"] = -1 if self.line_index[c] is None else self.line_index[c]
            cd = f.create_dataset(f"coord_{c}", data=self.coordinates[c])
            cd.attrs["units"] = "normalized"
            cd.attrs["description"] = f"position of {c} along {self.axis} at each point of the line"
        f.file.flush()
        self._file = f

    # -- recording ----------------------------------------------------------
    def _observe(self, n: int) -> None:
        if self.truncated or self._clock.past_stop(n):
            return
        takes = [k for k in self.kinds if self._clock.takes(k, n)]
        if not takes:
            return
        if self._file is None:
            add = sum(self._sample_bytes(k) for k in takes)
            if self._bytes + add > self.max_memory:
                self.truncated = True
                warnings.warn(
                    f"FieldLineRecorder stopped recording at t = {n * self.dt:.6g} "
                    f"(step {n}): the record would exceed max_memory = {self.max_memory:.0f} "
                    f"bytes; {self._advice()}", RuntimeWarning, stacklevel=4)
                return
            self._bytes += add
        wrote = False
        fields = self.solver.fields
        for k in takes:
            wrote |= self._time_series[k].append(_level_time(k, n, self.dt))
        for c in self.components:
            if self._kind[c] in takes:
                wrote |= self._series[c].append(fields[c][self._index[c]])
        if wrote:
            self._file.file.flush()

    # -- accessors ----------------------------------------------------------
    def _spill_all(self) -> None:
        wrote = False
        for s in list(self._series.values()) + list(self._time_series.values()):
            wrote |= s.spill()
        if wrote and self._file is not None:
            self._file.file.flush()

    def _read(self, name: str, series: _Series) -> np.ndarray:
        if self._file is not None:
            self._spill_all()
            return self._file[name][...]
        if self.path is None:
            return series.array()
        with h5py.File(self.path, "r") as f:
            return f[name][...]

    def times(self, component: str) -> np.ndarray:
        """Time levels (normalized) of the samples of ``component``, shape (n_samples,)."""
        k = _kind_of(self.grid, self._check_component(component))
        return self._read(f"time_{k}", self._time_series[k])

    def data(self, component: str) -> np.ndarray:
        """Samples of ``component``: float array (n_samples, n_points), normalized field units.

        Read back from the file when streamed.
        """
        c = self._check_component(component)
        return self._read(c, self._series[c])

    def n_samples(self, component: str) -> int:
        """Number of samples of ``component`` so far."""
        return self._series[self._check_component(component)].count

    _STATE = _Observer._STATE + ("truncated", "_bytes")

    def checkpoint_state(self) -> dict:
        state = super().checkpoint_state()
        for k in self.kinds:
            state[f"time_{k}"] = self._read(f"time_{k}", self._time_series[k])
        for c in self.components:
            state[f"data_{c}"] = self.data(c)
        return state

    def restore_state(self, state: dict) -> None:
        super().restore_state(state)
        for k in self.kinds:
            self._time_series[k].restore(state[f"time_{k}"])
        for c in self.components:
            self._series[c].restore(state[f"data_{c}"])
        if self._file is not None:
            self._file.file.flush()

    def close(self) -> None:
        """Stop recording, write what is buffered, close the file, detach (idempotent).

        A group of an open file (a results file being written) is flushed, not closed."""
        if self.closed:
            return
        self._detach()
        if self._file is not None:
            self._spill_all()
            self._file.attrs["truncated"] = self.truncated
            if self.path is None:
                self._file.file.flush()
            else:
                self._file.close()
            self._file = None


# ----------------------------------------------------------------------
# snapshots
# ----------------------------------------------------------------------
class SnapshotRecorder(_Observer):
    """Copies of whole-grid components at requested times.

    For every requested time ``t`` and listed component, the state of the
    first step level whose time level (E: n dt, H: (n - 1/2) dt) is >= t
    (within 1e-9 dt) is copied; its actual time is in :attr:`times_taken`.

    Parameters
    ----------
    solver : Solver
    components : str or sequence of str
    times : sequence of float
        Requested times (normalized), non-decreasing, none earlier than the
        oldest time level the solver holds (``solver.time - dt/2``).
    path : str or Path, optional
        Stream to this HDF5 file (overwritten): datasets ``<component>``
        (n_taken, *grid.shape), ``time_E`` / ``time_H`` (n_taken,),
        ``requested_times`` (n_times,), ``coord_<component>_<axis>``; flushed
        after every snapshot.  Without it the snapshots are kept in memory.
    max_memory : int
        In-memory limit (bytes); without ``path`` a request whose size
        (n_times x components x grid) exceeds it is refused.
    """

    def __init__(self, solver, components, times, path=None, max_memory=256 * 2**20):
        super().__init__(solver, components)
        g = self.grid
        req = _checks.finite_array("times", np.atleast_1d(times))
        if req.ndim != 1 or req.size == 0:
            raise ParameterError(f"times = {times!r}: expected a non-empty 1D sequence of times")
        if np.any(np.diff(req) < 0):
            i = int(np.nonzero(np.diff(req) < 0)[0][0]) + 1
            raise ParameterError(f"times[{i}] = {float(req[i])!r} is smaller than times[{i - 1}] = "
                                 f"{float(req[i - 1])!r}: expected non-decreasing times")
        oldest = _level_time("H", self._n_begin, self.dt)
        if req[0] < oldest - TIME_TOL * self.dt:
            raise ParameterError(
                f"times[0] = {float(req[0])!r} is earlier than the oldest state the solver holds "
                f"(t = {oldest:.6g}, half a step before solver.time): expected times >= "
                f"{oldest:.6g}")
        self.times_requested = req
        self.max_memory = _checks.positive("max_memory", max_memory)
        self._kind = {c: _kind_of(g, c) for c in self.components}
        self._next = {k: 0 for k in self.kinds}
        self._times = {k: [] for k in self.kinds}
        self._shots: dict[str, list[np.ndarray]] = {c: [] for c in self.components}
        self.path = None
        self._file = None
        planned = req.size * len(self.components) * g.n_cells * 8
        if path is None:
            if planned > self.max_memory:
                raise ParameterError(
                    f"SnapshotRecorder would keep {planned} bytes ({planned / 2**20:.1f} MiB) in "
                    f"memory ({req.size} times x {len(self.components)} components x "
                    f"{g.n_cells} cells), more than max_memory = {self.max_memory:.0f} bytes: "
                    "give path='snapshots.h5' to stream to disk, request fewer times or "
                    "components, or raise max_memory")
        else:
            self._create_file(path)
        self._attach()

    def _create_file(self, path) -> None:
        g = self.grid
        n = self.times_requested.size
        desc = f"snapshots of {list(self.components)} over the whole grid at requested times"
        self.path, f = _open_h5(path, "SnapshotRecorder", desc, self.solver)
        d = f.create_dataset("requested_times", data=self.times_requested)
        d.attrs["units"] = "normalized"
        d.attrs["description"] = "times asked for"
        for k in self.kinds:
            d = f.create_dataset(f"time_{k}", shape=(0,), maxshape=(n,), dtype="f8")
            d.attrs["units"] = "normalized"
            d.attrs["description"] = f"time level of the {k} snapshots actually taken"
        for c in self.components:
            d = f.create_dataset(c, shape=(0,) + g.shape, maxshape=(n,) + g.shape,
                                 chunks=(1,) + g.shape, dtype="f8")
            d.attrs["units"] = "normalized"
            d.attrs["description"] = f"{c} on the whole grid: (n_taken, *grid_shape)"
            d.attrs["time"] = f"time_{self._kind[c]}"
            for a in range(g.dims):
                cd = f.create_dataset(f"coord_{c}_{_AXES[a]}", data=g.axis_coordinates(c, a))
                cd.attrs["units"] = "normalized"
                cd.attrs["description"] = f"position of {c} along {_AXES[a]} per storage index"
        f.file.flush()
        self._file = f

    def _observe(self, n: int) -> None:
        tol = TIME_TOL * self.dt
        req = self.times_requested
        wrote = False
        for k in self.kinds:
            t = _level_time(k, n, self.dt)
            while self._next[k] < req.size and t >= req[self._next[k]] - tol:
                self._next[k] += 1
                self._times[k].append(t)
                for c in self.components:
                    if self._kind[c] != k:
                        continue
                    field = self.solver.fields[c]
                    if self._file is None:
                        self._shots[c].append(field.copy())
                    else:
                        d = self._file[c]
                        d.resize(d.shape[0] + 1, axis=0)
                        d[-1] = field
                        wrote = True
                if self._file is not None:
                    d = self._file[f"time_{k}"]
                    d.resize(d.shape[0] + 1, axis=0)
                    d[-1] = t
        if wrote:
            self._file.file.flush()

    @property
    def times_taken(self) -> dict[str, np.ndarray]:
        """Component -> actual time levels (normalized) of its snapshots, shape (n_taken,)."""
        return {c: np.asarray(self._times[self._kind[c]], dtype=float) for c in self.components}

    def snapshots(self, component: str) -> np.ndarray:
        """Snapshots of ``component`` taken so far: float array (n_taken, *grid.shape).

        n_taken equals the number of requested times once the run has passed
        the last of them.  Read back from the file when streamed.
        """
        c = self._check_component(component)
        if self._file is not None:
            return self._file[c][...]
        if self.path is None:
            return np.array(self._shots[c]).reshape((-1,) + self.grid.shape)
        with h5py.File(self.path, "r") as f:
            return f[c][...]

    def checkpoint_state(self) -> dict:
        state = super().checkpoint_state()
        for k in self.kinds:
            state[f"next_{k}"] = self._next[k]
            state[f"times_{k}"] = np.asarray(self._times[k], dtype=float)
        for c in self.components:
            state[f"data_{c}"] = self.snapshots(c)
        return state

    def restore_state(self, state: dict) -> None:
        super().restore_state(state)
        for k in self.kinds:
            self._next[k] = int(state[f"next_{k}"])
            self._times[k] = [float(x) for x in np.asarray(state[f"times_{k}"])]
            if self._file is not None:
                d = self._file[f"time_{k}"]
                d.resize(len(self._times[k]), axis=0)
                d[...] = self._times[k]
        for c in self.components:
            shots = np.asarray(state[f"data_{c}"], dtype=float).reshape((-1,) + self.grid.shape)
            if self._file is None:
                self._shots[c] = [s.copy() for s in shots]
            else:
                d = self._file[c]
                d.resize(shots.shape[0], axis=0)
                d[...] = shots
        if self._file is not None:
            self._file.file.flush()

    def close(self) -> None:
        """Stop, close the file (if any; a group of an open file is flushed), detach (idempotent)."""
        if self.closed:
            return
        self._detach()
        if self._file is not None:
            if self.path is None:
                self._file.file.flush()
            else:
                self._file.close()
            self._file = None


# ----------------------------------------------------------------------
# running DFT
# ----------------------------------------------------------------------
@dataclass(frozen=True)
class DFTWindow:
    """Span actually summed for one component: first and last sample time, sample count."""

    start: float
    stop: float
    samples: int


class DFTRecorder(_Observer):
    r"""Running discrete Fourier transforms of field components.

    For each listed component and angular frequency omega,

    .. math:: X(\omega) = \sum_n X(t_n)\, e^{i \omega t_n}\, \Delta t

    over the samples whose own time level ``t_n`` (E: n dt, H: (n - 1/2) dt)
    lies in ``[start, stop]``.  A field ``Re(A e^{-i omega t})`` recorded
    over whole periods T gives ``X(omega) = A T / 2``.  Cost per step:
    one complex multiply-add of size n_freq x region per component.

    Parameters
    ----------
    solver : Solver
    components : str or sequence of str
    frequencies : 1D array of float
        Angular frequencies (normalized, rad per unit time), each with
        ``|omega| <= pi / dt`` (the sampling limit).
    start, stop : float
        Window (normalized time); ``stop=None`` leaves it open.
    region : tuple of slices / index arrays, optional
        Storage indices to transform, applied as ``field[region]`` to every
        component (so staggered components are at their own positions; see
        :meth:`region_coordinates`).  None: the whole grid.
    """

    def __init__(self, solver, components, frequencies, start=0.0, stop=None, region=None):
        super().__init__(solver, components)
        g = self.grid
        om = _checks.finite_array("frequencies", np.atleast_1d(frequencies))
        if om.ndim != 1 or om.size == 0:
            raise ParameterError(f"frequencies = {frequencies!r}: expected a non-empty 1D array "
                                 "of angular frequencies")
        nyq = math.pi / self.dt
        if np.any(np.abs(om) > nyq * (1 + 1e-12)):
            bad = float(om[np.argmax(np.abs(om))])
            raise ParameterError(
                f"frequencies: {bad!r} is not allowed: expected |omega| <= pi/dt = {nyq:.6g}, "
                "above which samples every dt cannot tell it from a lower frequency")
        self.frequencies = om.copy()
        self.start, self.stop = _window(start, stop)
        self.region = self._region(region)
        self.region_shape = np.empty(g.shape)[self.region].shape
        self._clock = _Clock(self.dt, self._n_begin, self.start, self.stop, 1)
        self._kind = {c: _kind_of(g, c) for c in self.components}
        self._acc = {c: np.zeros((om.size,) + self.region_shape, dtype=np.complex128)
                     for c in self.components}
        self._count = {k: 0 for k in self.kinds}
        self._first = {k: math.nan for k in self.kinds}
        self._last = {k: math.nan for k in self.kinds}
        # broadcast the per-frequency phase over the region axes
        self._bshape = (om.size,) + (1,) * len(self.region_shape)
        self._attach()

    def _region(self, region) -> tuple:
        g = self.grid
        if region is None:
            return (slice(None),) * g.dims
        if not isinstance(region, tuple):
            region = (region,)
        if len(region) > g.dims:
            raise GeometryError(f"region = {region!r} has {len(region)} entries: the grid has "
                                f"{g.dims} axes (shape {g.shape})")
        region = tuple(r if isinstance(r, slice) else np.asarray(r) for r in region)
        try:
            sel = np.empty(g.shape)[region]
        except IndexError as exc:
            raise GeometryError(f"region = {region!r} does not fit the grid of shape {g.shape} "
                                f"({exc}): expected slices or index arrays within it") from None
        if sel.size == 0:
            raise GeometryError(f"region = {region!r} selects no node of the grid of shape "
                                f"{g.shape}: expected a non-empty selection")
        return region

    def _observe(self, n: int) -> None:
        for k in self.kinds:
            if not self._clock.takes(k, n):
                continue
            t = _level_time(k, n, self.dt)
            w = (np.exp(1j * self.frequencies * t) * self.dt).reshape(self._bshape)
            for c in self.components:
                if self._kind[c] == k:
                    acc = self._acc[c]
                    acc += w * self.solver.fields[c][self.region]
            if self._count[k] == 0:
                self._first[k] = t
            self._last[k] = t
            self._count[k] += 1

    def spectrum(self, component: str) -> np.ndarray:
        """X(omega) of ``component``: complex array (n_freq, *region_shape).

        Units: field units x normalized time.
        """
        return self._acc[self._check_component(component)].copy()

    @property
    def window(self) -> dict[str, DFTWindow]:
        """Component -> :class:`DFTWindow` (first/last sample time actually summed, count)."""
        return {c: DFTWindow(self._first[k], self._last[k], self._count[k])
                for c in self.components for k in (self._kind[c],)}

    def region_coordinates(self, component: str) -> tuple[np.ndarray, ...]:
        """Positions of the region's nodes of ``component``: one array per axis, region_shape."""
        c = self._check_component(component)
        g = self.grid
        mesh = np.meshgrid(*[g.axis_coordinates(c, a) for a in range(g.dims)], indexing="ij")
        return tuple(m[self.region] for m in mesh)
