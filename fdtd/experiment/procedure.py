r"""The experiment procedure: set up -> ramp -> record windows until steady -> summarise.

This is the one path from a plan to a result: ``gapwake run``, :func:`fdtd.run`, the
physics tests and the validation scripts all go through :class:`Experiment`.

co-moving cell (``run.kind = "comoving"``)
    ``ramp``    the dipole's oscillation (or the charge's speed) switches on;
    ``window``  successive recording windows of ``plan.transits`` transit times (whole
                transits and whole beat periods of the Doppler lines), each demodulated
                into its Doppler-branch powers; after each window the reported figures of
                the last windows are compared (:func:`fdtd.recording.steady.window_convergence`)
                and the run stops when they have settled to ``run.settle_tolerance`` or
                ``run.max_time`` has passed (then it is marked not converged).  The last
                window is the result; snapshots and the line record are of that window.
open domain (``run.kind = "open"``)
    ``record``  the run itself, with snapshots, the ledger, and a column-passage
                analysis where the source moves uniformly across the domain.

The state is a small dictionary plus the solver's arrays and the recorders'
accumulators, so that a checkpoint (:mod:`fdtd.io.checkpoint`) taken at any block
boundary continues bit for bit.  Large records (snapshots, the line record) stream into
``sink``, a group of the results file being written, when one is given.
"""

from __future__ import annotations

import logging
import math
import warnings

from fdtd._progress import progress_bar
from fdtd.errors import GapwakeError
from fdtd.experiment import stopping
from fdtd.experiment.build import build
from fdtd.recording.doppler import DopplerFluxRecorder, DopplerWorkRecorder, auto_sampling
from fdtd.recording.line import FieldLineRecorder
from fdtd.recording.passage import PassageWorkRecorder
from fdtd.recording.snapshots import SnapshotRecorder
from fdtd.recording.steady import (CHARGE_FIGURES, DIPOLE_FIGURES, ZERO_CHARGE, ZERO_DIPOLE,
                                   SteadyStateWarning, describe, window_convergence)
from fdtd.scenario.plan import M_MAX_FRACTION_2D, Plan

log = logging.getLogger("fdtd.experiment")

#: open-domain runs advance in this many blocks (progress, checkpoints, ledger samples)
OPEN_BLOCKS = 50
#: a co-moving run records at least this many windows (one comparison)
MIN_WINDOWS = 2


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
    records : bool
        Snapshots and the line record as the plan asks (False: Doppler figures only, e.g.
        for the coarse companion run of the grid check).
    """

    def __init__(self, plan: Plan, progress: bool | None = None, checkpoint=None, sink=None,
                 records: bool = True):
        self.plan = plan
        #: what a checkpoint must belong to: the plan as resolved, before the run adds notes
        self.plan_text = plan.to_json()
        setup = build(plan)
        self.model, self.solver, self.source = setup.model, setup.solver, setup.source
        self.progress = progress
        self.checkpoint = checkpoint
        self.sink = sink
        self.records = records
        comoving = plan.kind == "comoving"
        self.state = {"phase": "ramp" if comoving else "record", "windows": [], "time_errors": {},
                      "record_start_step": None if comoving else 0, "steady": None,
                      "interrupted": False, "last_checkpoint": 0}
        self.work = self.flux = self.passage = None
        self.snapshots: SnapshotRecorder | None = None
        self.line: FieldLineRecorder | None = None
        self.last_spectrum = None          # the demodulated spectrum of the last finished window
        self.last_fluxes: list = []
        if not comoving:
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
        """Steps of one recording window (co-moving) or of the whole run (open)."""
        p = self.plan
        if p.kind == "comoving":
            return p.transits * self.steps_transit
        return int(math.ceil(p.open_time / self.solver.dt))

    @property
    def block_steps(self) -> int:
        if self.plan.kind == "comoving":
            return self.steps_transit
        return max(self.record_steps // OPEN_BLOCKS, 1)

    def max_windows(self) -> int:
        """Windows that fit before run.max_time (at least MIN_WINDOWS)."""
        left = self.plan.max_time / self.solver.dt - self.ramp_steps
        return max(int(left // self.record_steps), MIN_WINDOWS)

    def expected_steps(self) -> int:
        """Best current guess of the total step count (settling ends when it ends)."""
        if self.plan.kind != "comoving":
            return self.record_steps
        n = max(len(self.state["windows"]) + 1, MIN_WINDOWS + 1)
        return self.ramp_steps + min(n, self.max_windows()) * self.record_steps

    def max_steps(self) -> int:
        """Upper bound of the total step count (windows up to run.max_time)."""
        if self.plan.kind != "comoving":
            return self.record_steps
        return self.ramp_steps + self.max_windows() * self.record_steps

    # -- recorders --------------------------------------------------------------
    def _group(self, name: str):
        """A fresh group of the sink for a streamed record (a new window replaces the old)."""
        if self.sink is None:
            return None
        if name in self.sink:
            del self.sink[name]
        return self.sink.create_group(name)

    def _close_window_recorders(self) -> None:
        for rec in (self.work, self.flux, self.snapshots, self.line):
            if rec is not None and hasattr(rec, "close"):
                rec.close()
            elif rec is not None:
                obs = self.solver.observers
                obs[:] = [o for o in obs if o is not rec]
        self.work = self.flux = self.snapshots = self.line = None

    def _start_recording(self, resuming: bool = False) -> None:
        """Attach the recorders of the window starting at state["record_start_step"]
        (also when resuming inside it: then their state is restored next)."""
        p, s, st = self.plan, self.solver, self.state
        n0 = st["record_start_step"]
        t0 = n0 * s.dt
        N = self.record_steps
        T = N * s.dt
        g = self.model.grid
        if p.kind == "comoving" and p.doppler and p.speed > 0:
            nx = g.shape[0]
            # a dipole in 2D: harmonics up to k_x dx = pi/3 (beyond, fewer than six cells per
            # wavelength; their work shows as unresolved); 1D, and a charge, whose Cherenkov
            # spectrum grows with frequency up to the source's form factor: all of them
            m_max = nx // M_MAX_FRACTION_2D if (p.polarization != "1d" and p.source_kind == "dipole") \
                else nx // 2
            # 2D: sample near the Nyquist rate of the highest recorded line (a fraction of a
            # step's cost) with a whole number of samples per window; 1D records every step:
            # it is cheap, and sub-sampling would fold the free waves of all harmonics onto
            # the demodulated lines
            every = auto_sampling(s.dt, p.cell, p.speed, p.Omega, 2 * math.pi * m_max / p.length,
                                  divides=N) if p.polarization != "1d" else 1
            self.work = DopplerWorkRecorder(s, self.source, p.speed, p.Omega, start=t0, duration=T,
                                            m_max=m_max, every=every)
            rows = [g.index_of(g.e_components[0], (0.0, y))[1] for y in p.flux_heights] \
                if p.polarization != "1d" else []
            if rows:
                self.flux = DopplerFluxRecorder(s, p.speed, p.Omega, rows, start=t0, duration=T,
                                                m_max=m_max, every=every)
        if p.kind == "open" and p.speed > 0 and p.polarization != "1d":
            self._start_passage()
        if not self.records:
            return
        if p.snapshots:
            every = max(N // p.snapshots, 1)
            # one step before each mark: H lags E by half a step, and the last mark is the
            # last step of the record
            times = [(n0 + (k + 1) * every - 1) * s.dt for k in range(p.snapshots)]
            self.snapshots = SnapshotRecorder(s, p.snapshot_component, times, path=self._group("snapshots"),
                                              resuming=resuming)
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
               "line": self.line}
        return {k: v for k, v in out.items() if v is not None}

    def resume_recorders(self) -> None:
        """After the state was loaded from a checkpoint: attach the recorders of its phase."""
        if self.state["phase"] == "window" and self.plan.kind == "comoving":
            self._start_recording(resuming=True)

    # -- advancing ----------------------------------------------------------------
    def _advance(self, n: int, bar) -> None:
        if n > 0:
            self.solver.advance(steps=n, progress=False)
            bar.update(n)

    @property
    def checkpoint_every(self) -> int:
        """Steps between checkpoints: run.checkpoint_every, or by default one recording window
        (co-moving) or a tenth of the run (open domain)."""
        if self.plan.checkpoint_every:
            return self.plan.checkpoint_every
        return self.record_steps if self.plan.kind == "comoving" else max(self.record_steps // 10, 1)

    def _maybe_checkpoint(self) -> None:
        s, st = self.solver, self.state
        if self.checkpoint and s.step_count - st["last_checkpoint"] >= self.checkpoint_every:
            from fdtd.io.checkpoint import save_checkpoint

            st["last_checkpoint"] = s.step_count
            save_checkpoint(self.checkpoint, self)

    def _seconds(self, t: float) -> float:
        return self.plan.seconds(t)

    @property
    def zero_power(self) -> float:
        """Below this a power counts as zero in the settling test: a small fraction of a
        dipole's free-space power at rest (same dimensionality), or of a charge's apparent
        power in the last window (fdtd.recording.steady)."""
        p = self.plan
        if p.source_kind == "dipole":
            from fdtd.reference.rates import free_space_power

            return ZERO_DIPOLE * free_space_power(p.omega0, abs(p.moment), p.dims, p.axis if p.dims == 2 else "y")
        spec = self.last_spectrum
        return ZERO_CHARGE * float(spec.meta.get("apparent", 0.0)) if spec is not None else 0.0

    @property
    def zero_level(self) -> float:
        """The level at which a figure may settle *at zero* (value and drift below it,
        :func:`fdtd.recording.steady.at_zero`): a dipole's :attr:`zero_power`.  None for a
        charge (0.0): its zero power is a share of the apparent power, which near a surface
        is mostly the reactive near-field exchange and can exceed what it radiates (measured:
        a charge above a Lorentz half-space radiating a few per cent of it)."""
        return self.zero_power if self.plan.source_kind == "dipole" else 0.0

    def execute(self, stop_after_steps: int | None = None) -> str:
        """Advance to the end of the run.

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
                stopping.check()           # a Ctrl-C or SIGTERM received during the last block
                if stop_after_steps is not None and s.step_count >= stop_after_steps:
                    return "stopped"
                bar.set_description(st["phase"], refresh=False)
                if st["phase"] == "ramp":
                    n = min(self.block_steps, self.ramp_steps - s.step_count)
                    if n <= 0:
                        self._next_window()
                        continue
                    self._advance(n, bar)
                elif st["phase"] == "window":
                    end = st["record_start_step"] + self.record_steps
                    n = min(self.block_steps, end - s.step_count)
                    if n <= 0:
                        self._finish_window()
                        continue
                    self._advance(n, bar)
                else:                                   # record (open domain)
                    end = st["record_start_step"] + self.record_steps
                    n = min(self.block_steps, end - s.step_count)
                    if n <= 0:
                        st["phase"] = "done"
                        self._close_streams()
                        continue
                    self._advance(n, bar)
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

    def _next_window(self) -> None:
        st = self.state
        st["phase"] = "window"
        st["record_start_step"] = self.solver.step_count
        self.solver.ledger.sample()
        self._start_recording()

    def _figures(self, spec) -> dict:
        keys = DIPOLE_FIGURES if self.plan.source_kind == "dipole" else CHARGE_FIGURES
        out = {k: float(getattr(spec, k)) for k in keys}
        out["speed"] = self.plan.speed
        return out

    def _finish_window(self) -> None:
        """Demodulate the window just recorded, test the settling, start the next or stop."""
        p, s, st = self.plan, self.solver, self.state
        if self.work is None:                       # nothing demodulated (record.doppler = false)
            st["windows"].append({})
            st["steady"] = None
            self._stop()
            return
        self.last_spectrum = self.work.result()
        self.last_fluxes = self.flux.result() if self.flux is not None else []
        st["windows"].append(self._figures(self.last_spectrum))
        figures = DIPOLE_FIGURES if p.source_kind == "dipole" else CHARGE_FIGURES
        steady, errors = window_convergence(st["windows"], p.settle_tol, self.zero_power, figures,
                                            zero_level=self.zero_level)
        st["time_errors"] = errors
        k = len(st["windows"])
        log.info("window %d: t = %.5g fs, total power %.6g %s, %s", k, self._seconds(s.time) * 1e15,
                 st["windows"][-1]["total"] * p.units.power, "W/m^2" if p.dims == 1 else "W/m",
                 "settled" if steady else describe(st["windows"], errors, p.settle_tol))
        if steady and k >= MIN_WINDOWS:
            st["steady"] = True
            self._stop()
        elif k >= self.max_windows():
            st["steady"] = False
            warnings.warn(
                f"{p.where}: the reported figures did not settle to run.settle_tolerance = {p.settle_tol:g} "
                f"by t = {self._seconds(s.time) * 1e15:.5g} fs ({describe(st['windows'], errors, p.settle_tol)}): "
                "raise run.max_time, add loss, or accept a larger tolerance; the results are marked not "
                "converged", SteadyStateWarning, stacklevel=3)
            self._stop()
        else:
            self._close_window_recorders()
            self._next_window()

    def _stop(self) -> None:
        self.state["phase"] = "done"
        self._close_streams()

    def _close_streams(self) -> None:
        for rec in (self.snapshots, self.line):
            if rec is not None:
                rec.close()
