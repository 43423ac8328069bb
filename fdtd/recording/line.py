"""A field line recorded over time (:class:`FieldLineRecorder`).

Time levels, shapes and positions: see :mod:`fdtd.recording.observer`.
"""

from __future__ import annotations

import math
import warnings

import h5py
import numpy as np

from fdtd import _checks
from fdtd.errors import GeometryError, ParameterError
from fdtd.recording.observer import (
    _AXES,
    CHUNK_BYTES,
    _Clock,
    _kind_of,
    _level_time,
    _Observer,
    _open_h5,
    _Series,
    _window,
)


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
    def _wants(self, n: int) -> bool:
        return not (self.truncated or self._clock.past_stop(n)) and \
            any(self._clock.takes(k, n) for k in self.kinds)

    def block_keeps(self, solver, m: int) -> np.ndarray:
        levels = int(solver.step_count) + 1 + np.arange(m)
        if self.closed or self.truncated:
            return np.zeros(m, dtype=np.bool_)
        out = np.zeros(m, dtype=np.bool_)
        for k in self.kinds:
            out |= self._clock.takes_many(k, levels)
        return out

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
        for k in takes:
            wrote |= self._time_series[k].append(_level_time(k, n, self.dt))
        for c in self.components:
            if self._kind[c] in takes:
                wrote |= self._series[c].append(self._field(c)[self._index[c]])
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
        # the decimation is anchored at the level the recording began with
        self._clock = _Clock(self.dt, self._n_begin, self.start, self.stop, self.every)
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
