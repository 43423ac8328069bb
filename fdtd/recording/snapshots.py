"""Copies of whole-grid field components at requested times (:class:`SnapshotRecorder`).

Time levels, shapes and positions: see :mod:`fdtd.recording.observer`.
"""

from __future__ import annotations

import h5py
import numpy as np

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.recording.observer import (
    _AXES,
    TIME_TOL,
    _kind_of,
    _level_time,
    _Observer,
    _open_h5,
)


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
    resuming : bool
        Built to continue a checkpointed record (:meth:`restore_state` follows): times
        already past are allowed.
    max_memory : int
        In-memory limit (bytes); without ``path`` a request whose size
        (n_times x components x grid) exceeds it is refused.
    """

    def __init__(self, solver, components, times, path=None, max_memory=256 * 2**20, resuming=False):
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
        if req[0] < oldest - TIME_TOL * self.dt and not resuming:
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

    def _wants(self, n: int) -> bool:
        tol = TIME_TOL * self.dt
        req = self.times_requested
        return any(self._next[k] < req.size and _level_time(k, n, self.dt) >= req[self._next[k]] - tol
                   for k in self.kinds)

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
                    field = self._field(c)
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
