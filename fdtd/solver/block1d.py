"""A block of 1D steps in compiled code, with the sources' currents of the block and the
observers that accept blocks (:class:`Block`).

:meth:`fdtd.solver.stepper.Solver.step` comes here when the grid is 1D, the fields real,
there is no nonlocal pole, every source hands block currents and every observer accepts
blocks; otherwise it steps one by one.  Both give the same physics to round-off (tested:
tests/test_block_stepping.py).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fdtd.solver.kernels.block1d import advance_1d


@dataclass
class Block:
    """What observers see of a block of ``m`` steps starting at ``step0``.

    ``sample`` (m,) bool: the steps whose mean field was kept; ``ebar`` (n_sampled, n)
    E-bar of those steps (the one E component: Ey); ``flat``, ``J`` (m, w): the sources'
    nodes and currents; ``work_before`` (m + 1,): the solver's cumulative source work
    before each step (and after the last); ``keep`` (m,) bool: the steps after which the
    state was kept, ``kept`` {"Ey", "Hz"} -> (n_kept, n) the fields after those steps."""

    step0: int
    m: int
    sample: np.ndarray
    ebar: np.ndarray
    flat: np.ndarray
    J: np.ndarray
    work_before: np.ndarray
    keep: np.ndarray
    kept: dict

    def fields_after(self, s: int) -> dict:
        """The fields after step ``s`` of the block (0-based; ``keep[s]`` must be True)."""
        r = int(np.count_nonzero(self.keep[:s]))
        return {c: a[r] for c, a in self.kept.items()}


def advance_block_1d(solver, m: int, pre, ledger_every: int = 0, ledger_origin: int = 0) -> None:
    """Advance ``solver`` by ``m`` steps with the sources' block currents ``pre``.

    ``ledger_every`` > 0: the energy ledger is sampled inside the block at every level n with
    (n - ledger_origin) % ledger_every == 0 (the samples :meth:`EnergyLedger.sample` would
    take there; the solver has no nonlocal pole, :meth:`Solver.ledger_in_blocks`)."""
    s = solver
    flat = np.ascontiguousarray(np.concatenate([f for cur in pre for _c, f, _j in cur], axis=1))
    J = np.ascontiguousarray(np.concatenate([j for cur in pre for _c, _f, j in cur], axis=1))
    sample = np.zeros(m, dtype=np.bool_)
    for obs in s.observers:
        sample |= obs.block_samples(s, m)
    keep = np.zeros(m, dtype=np.bool_)
    for obs in s.observers:
        wants = getattr(obs, "block_keeps", None)
        if wants is not None:
            keep |= wants(s, m)
    nx = s.grid.shape[0]
    ebar = np.empty((int(sample.sum()), nx))
    n_kept = int(keep.sum())
    kept_e, kept_h = np.empty((n_kept, nx)), np.empty((n_kept, nx))
    work = np.empty(m)
    flux = np.empty(m)
    if s.ledger is not None and s.ledger._flux:
        (_ec, _hc, fe, fh, fw), = s.ledger._flux
    else:
        fe = fh = np.zeros(0, np.int64)
        fw = np.zeros(0)
    Py, Pyo = s.polarization["Ey"]
    f, psi = s.fields, s.psi
    nl_flow = np.zeros(m)
    led = s.ledger
    levels = s.step_count + 1 + np.arange(m)
    ledger_at = (levels - ledger_origin) % ledger_every == 0 if ledger_every and led is not None \
        else np.zeros(m, dtype=np.bool_)
    n_led = int(ledger_at.sum())
    t = s.tables
    if led is not None:
        eq, hq = led.ranges["Ey"][0], led.ranges["Hz"][0]
    else:
        eq = hq = (0, 0)
    ledger_args = (t["eps_inf"], t["n_poles"], t["kin"], t["pot"], t["gid"], eq[0], eq[1], hq[0], hq[1],
                   s.dt / s.grid.spacing[0])
    n_gid = led.n_gid if led is not None else 1
    ledger_e = np.empty((n_led, 3))
    ledger_wp = np.zeros((n_led, n_gid))
    ledger_bath = np.empty((n_led, s.bath_rows.shape[1]))
    advance_1d(m, f["Ey"], f["Hz"], Py, Pyo, s._segs["Ey"], s._coef, s._prof[0], psi["hz_x"], psi["ey_x"],
               s._tally, s.bath_rows[0], s._gid, s._bathc, s._tally_boxes["Ey"], *s._scratch_1d,
               flat, J, s.dt, s.tables["inv_eps"], s._flat_mix["Ey"], s.grid.cell_volume,
               fe, fh, fw, sample, ebar, keep, kept_e, kept_h, work, flux, nl_flow, _nonlocal_args(s),
               ledger_at, ledger_args, ledger_e, ledger_wp, ledger_bath)
    step0 = s.step_count
    before = np.empty(m + 1)
    dV = s.grid.cell_volume
    row = 0
    for k in range(m):                      # the same sequence of sums as step by step
        before[k] = s.source_work
        s.source_work += work[k]
        s.injected_abs += abs(work[k])
        s.nonlocal_outflow += nl_flow[k]
        if led is not None:
            led.outflow += nl_flow[k]
            led.source_work += work[k]
            led.outflow += flux[k]
            if ledger_at[k]:
                we, wx, wh = ledger_e[row]
                led.record(s.step_count + k + 1, we * dV, wh * dV, wx * dV, ledger_wp[row] * dV,
                           ledger_bath[row])
                row += 1
    before[m] = s.source_work
    s.step_count += m
    block = Block(step0, m, sample, ebar, flat, J, before, keep, {"Ey": kept_e, "Hz": kept_h})
    for obs in s.observers:
        obs.after_block(s, block)


def _nonlocal_args(s) -> tuple:
    """The one nonlocal pole slot of a 1D solver as the compiled loop takes it (or 'off'
    with placeholder arrays of the same types)."""
    t = s.tables
    entries = s.nonlocal_entries.get("Ey", [])
    if entries:
        slot, mix2, rows, Q, Pold, diag = entries[0]
        return (True, slot, mix2, t["nlg"], t["c4"], diag, s.nonlocal_inv_h2, s.nonlocal_periodic, rows, Q, Pold,
                s._bathc_all, s.bath_rows, t["kappa"])
    z2 = np.zeros((1, 1))
    mix2 = np.ascontiguousarray(s.model.mix_maps["Ey"].reshape(1, -1))
    return (False, 0, mix2, t["nlg"], t["c4"], z2, (0.0, 0.0), (True, True), (0, 0), z2, z2, s._bathc_all,
            s.bath_rows, t["kappa"])
