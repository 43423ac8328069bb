r"""The experiment procedure: set up -> ramp -> settle -> record -> summarise.

This is the one path from a plan to a result: ``gapwake run``, :func:`fdtd.run`, the
physics tests and the validation scripts all go through :class:`Experiment`.

co-moving cell (``run.kind = "comoving"``)
    ``ramp``   the dipole's oscillation (or the charge's speed) switches on;
    ``settle`` blocks of one transit time until the dissipated power (outflow + bath,
               Hann-weighted per block) settles to ``run.settle_tolerance``, or
               ``run.max_time`` passes (then the results are marked not steady);
    ``record`` the Doppler-resolved work and fluxes over ``run.transits`` transits,
               snapshots and a line record for the (k_x, omega) map;
open domain (``run.kind = "open"``)
    ``record`` the run itself, with snapshots, the ledger, and a column-passage
               analysis where the source moves uniformly across the domain.

The state is a small dictionary plus the solver's arrays and the recorders'
accumulators, so that a checkpoint (:mod:`fdtd.io.checkpoint`) taken at any block
boundary continues bit for bit.  Large records (snapshots, the line record) stream into
``sink``, a group of the results file being written, when one is given.
"""

from __future__ import annotations

import logging
import math

from fdtd._progress import progress_bar
from fdtd.errors import GapwakeError
from fdtd.experiment.build import build
from fdtd.recording.doppler import DopplerFluxRecorder, DopplerWorkRecorder, auto_sampling
from fdtd.recording.line import FieldLineRecorder
from fdtd.recording.snapshots import SnapshotRecorder
from fdtd.recording.passage import PassageWorkRecorder
from fdtd.recording.steady import DissipationMonitor, SteadyStateWarning, settled, spread
from fdtd.scenario.plan import M_MAX_FRACTION_2D, Plan

log = logging.getLogger("fdtd.experiment")

#: open-domain runs advance in this many blocks (progress, checkpoints, ledger samples)
OPEN_BLOCKS = 50


class Experiment:
    """One point of a scenario, from a :class:`~fdtd.scenario.plan.Plan` to its records.

    Parameters
    ----------
    plan : Plan
    progress : bool, optional
        Show the progress bar (default: when stderr is a terminal).
    checkpoint : str or Path, optional
        Checkpoint file, written every ``plan.checkpoint_every`` steps at block ends.
    sink : h5py.Group, optional
        Where large records stream to (a point group of the results file being
        written); without it they are kept in memory.
    """

    def __init__(self, plan: Plan, progress: bool | None = None, checkpoint=None, sink=None):
        self.plan = plan
        #: what a checkpoint must belong to: the plan as resolved, before the run adds notes
        self.plan_text = plan.to_json()
        setup = build(plan)
        self.model, self.solver, self.source = setup.model, setup.solver, setup.source
        self.progress = progress
        self.checkpoint = checkpoint
        self.sink = sink
        self.state = {"phase": "ramp" if plan.kind == "comoving" else "record", "settle_rates": [],
                      "settle_start_step": None, "record_start_step": None, "steady": None,
                      "interrupted": False, "last_checkpoint": 0}
        if plan.kind != "comoving":
            self.state["record_start_step"] = 0
        self.monitor: DissipationMonitor | None = None
        self.work = self.flux = self.passage = None
        self.snapshots: SnapshotRecorder | None = None
        self.line: FieldLineRecorder | None = None
        if self.state["phase"] == "record":
            self._start_recording()

    # -- step counts ------------------------------------------------------------
    @property
    def steps_transit(self) -> int:
        return max(int(round(self.plan.transit / self.solver.dt)), 1)

    @property
    def ramp_steps(self) -> int:
        return int(math.ceil(self.plan.switch_on / self.solver.dt))

    @property
    def record_steps(self) -> int:
        p = self.plan
        if p.kind == "comoving":
            return p.transits * self.steps_transit
        return int(math.ceil(p.open_time / self.solver.dt))

    @property
    def block_steps(self) -> int:
        if self.plan.kind == "comoving":
            return self.steps_transit
        return max(self.record_steps // OPEN_BLOCKS, 1)

    def expected_steps(self) -> int:
        """Best current guess of the total step count (settling ends when it ends)."""
        st = self.state
        if st["record_start_step"] is not None:
            return st["record_start_step"] + self.record_steps
        settle = max(len(st["settle_rates"]) + 1, 6) * self.steps_transit
        return self.ramp_steps + settle + self.record_steps

    def max_steps(self) -> int:
        """Upper bound of the total step count (settling up to run.max_time)."""
        if self.plan.kind != "comoving":
            return self.record_steps
        settle = max(int(self.plan.max_time / self.solver.dt) - self.ramp_steps, 6 * self.steps_transit)
        return self.ramp_steps + settle + self.record_steps

    # -- recorders --------------------------------------------------------------
    def _group(self, name: str):
        return None if self.sink is None else self.sink.require_group(name)

    def _start_settling(self) -> None:
        st = self.state
        if st["settle_start_step"] is None:
            st["settle_start_step"] = self.solver.step_count
        self.monitor = DissipationMonitor(self.solver, self.steps_transit, origin=st["settle_start_step"])

    def _start_recording(self) -> None:
        """Attach the recorders of the record phase (also when resuming inside it)."""
        p, s, st = self.plan, self.solver, self.state
        n0 = st["record_start_step"]
        t0 = n0 * s.dt
        T = self.record_steps * s.dt
        g = self.model.grid
        if p.kind == "comoving" and p.doppler and p.speed > 0:
            nx = g.shape[0]
            m_max = (nx // M_MAX_FRACTION_2D if p.polarization != "1d" else nx // 2) \
                if p.source_kind == "dipole" else None
            # 2D: sample near the Nyquist rate of the highest recorded line (a fraction of a
            # step's cost); 1D records every step: it is cheap, and sub-sampling would fold
            # the free waves of all harmonics onto the demodulated lines
            every = auto_sampling(s.dt, p.cell, p.speed, p.Omega, 2 * math.pi * m_max / p.length) \
                if (m_max and p.polarization != "1d") else 1
            self.work = DopplerWorkRecorder(s, self.source, p.speed, p.Omega, start=t0, duration=T,
                                            m_max=m_max, every=every)
            rows = [g.index_of(g.e_components[0], (0.0, y))[1] for y in p.flux_heights] \
                if p.polarization != "1d" else []
            if rows:
                self.flux = DopplerFluxRecorder(s, p.speed, p.Omega, rows, start=t0, duration=T,
                                                m_max=m_max, every=every)
        if p.kind == "open" and p.speed > 0 and p.polarization != "1d":
            self._start_passage()
        if p.snapshots:
            every = max(self.record_steps // p.snapshots, 1)
            # one step before each mark: H lags E by half a step, and the last mark is the
            # last step of the record
            times = [(n0 + (k + 1) * every - 1) * s.dt for k in range(p.snapshots)]
            self.snapshots = SnapshotRecorder(s, p.snapshot_component, times, path=self._group("snapshots"))
        if p.line_component:
            self.line = FieldLineRecorder(s, p.line_component, axis="x",
                                          position=None if g.dims == 1 else (p.line_height or 0.0),
                                          start=t0, stop=t0 + T, every=p.line_every,
                                          path=self._group("line"))

    def _start_passage(self) -> None:
        """Columns passed while the motion is uniform, each over the longest window the run allows.

        The work done on one column counts from ``half_window`` (a length along the path)
        before the source passes it to ``half_window`` after: long enough for the wake to
        die down, so it is as long as the switch-on before and the end of the run after
        allow (docs/theory/open-domain.md)."""
        p, s = self.plan, self.solver
        x_on = p.x0 + p.speed * p.switch_on            # fully switched on from here
        x_end = p.x0 + p.speed * p.open_time           # where the run ends
        margin = 2 * p.cell
        if p.passage_span is not None:
            x_lo, x_hi = p.passage_span
            half = min(x_lo - x_on, x_end - x_hi) - margin
        else:
            half = 0.3 * (x_end - x_on)
            x_lo, x_hi = x_on + half + margin, x_end - half - margin
        if half <= 2 * p.cell or x_hi - x_lo <= 4 * p.cell:
            p.notes.append("no passage analysis: the run is too short for a column span with a window "
                           "around each passage (lengthen run.time or move record.passage_start/stop)")
            return
        if p.Omega > 0 and (x_hi - x_lo) / p.speed <= 2 * math.pi / p.Omega:
            p.notes.append("no passage analysis: the column span is passed in less than one internal "
                           "period (widen record.passage_start/stop or lengthen run.time)")
            return
        try:
            self.passage = PassageWorkRecorder(s, self.source, p.speed, p.Omega, x_lo, x_hi, half_window=half)
        except GapwakeError as exc:
            p.notes.append(f"no passage analysis: {exc}")

    def recorders(self) -> dict:
        """Name -> attached recorder (for checkpoints)."""
        out = {"work": self.work, "flux": self.flux, "passage": self.passage, "snapshots": self.snapshots,
               "line": self.line, "monitor": self.monitor}
        return {k: v for k, v in out.items() if v is not None}

    def resume_recorders(self) -> None:
        """After the state was loaded from a checkpoint: attach the recorders of its phase."""
        st = self.state
        if st["phase"] == "settle":
            self._start_settling()
        elif st["phase"] in ("record", "done") and self.plan.kind == "comoving":
            self._start_recording()

    # -- advancing ----------------------------------------------------------------
    def _advance(self, n: int, bar) -> None:
        if n > 0:
            self.solver.advance(steps=n, progress=False)
            bar.update(n)

    def _maybe_checkpoint(self) -> None:
        p, s, st = self.plan, self.solver, self.state
        if self.checkpoint and p.checkpoint_every and s.step_count - st["last_checkpoint"] >= p.checkpoint_every:
            from fdtd.io.checkpoint import save_checkpoint

            st["last_checkpoint"] = s.step_count
            save_checkpoint(self.checkpoint, self)

    def _seconds(self, t: float) -> float:
        return self.plan.seconds(t)

    def execute(self, stop_after_steps: int | None = None) -> str:
        """Advance to the end of the record phase.

        Returns "completed", "interrupted" (Ctrl-C or SIGTERM: what was measured is
        kept) or "stopped" (``stop_after_steps`` total steps reached: for tests of
        checkpoints)."""
        p, s, st = self.plan, self.solver, self.state
        if not s.ledger.samples:
            s.ledger.sample()
        bar = progress_bar(self.expected_steps(), st["phase"], enabled=self.progress)
        bar.update(s.step_count)
        try:
            while st["phase"] != "done":
                if stop_after_steps is not None and s.step_count >= stop_after_steps:
                    return "stopped"
                bar.set_description(st["phase"], refresh=False)
                if st["phase"] == "ramp":
                    n = min(self.block_steps, self.ramp_steps - s.step_count)
                    if n <= 0:
                        st["phase"] = "settle"
                        self._start_settling()
                        continue
                    self._advance(n, bar)
                elif st["phase"] == "settle":
                    self._settle_block(bar)
                else:
                    end = st["record_start_step"] + self.record_steps
                    n = min(self.block_steps, end - s.step_count)
                    if n <= 0:
                        st["phase"] = "done"
                        self._close_recorders()
                        continue
                    self._advance(n, bar)
                    if p.kind == "open":
                        log.debug("t = %.5g fs of %.5g fs", self._seconds(s.time) * 1e15,
                                  self._seconds(p.open_time) * 1e15)
                s.ledger.sample()          # one point per block (a transit), in every phase
                bar.total = max(self.expected_steps(), s.step_count)
                self._maybe_checkpoint()
        except KeyboardInterrupt:
            st["interrupted"] = True
            return "interrupted"
        finally:
            bar.close()
        return "completed"

    def _settle_block(self, bar) -> None:
        p, s, st = self.plan, self.solver, self.state
        self._advance(self.steps_transit, bar)
        rate = self.monitor.take()
        st["settle_rates"].append(rate)
        log.info("settling: t = %.5g fs, dissipated power %.6g %s", self._seconds(s.time) * 1e15,
                 rate * p.units.power, "W/m^2" if p.dims == 1 else "W/m")
        if settled(st["settle_rates"], p.settle_tol):
            st["steady"] = True
        elif s.time >= p.max_time:
            st["steady"] = False
            import warnings

            warnings.warn(
                f"{p.where}: the dissipated power did not settle to run.settle_tolerance = "
                f"{p.settle_tol:g} by t = {self._seconds(s.time) * 1e15:.5g} fs (spread of the last "
                f"blocks {spread(st['settle_rates']):.2e}): raise run.max_time, add loss, or accept a "
                "larger tolerance; the results are marked not steady", SteadyStateWarning, stacklevel=3)
        if st["steady"] is not None:
            self.monitor.close()
            self.monitor = None
            st["phase"] = "record"
            st["record_start_step"] = s.step_count
            s.ledger.sample()
            self._start_recording()

    def _close_recorders(self) -> None:
        for rec in (self.snapshots, self.line):
            if rec is not None:
                rec.close()
