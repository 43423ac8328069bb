"""Checkpoints: the complete state of an experiment, written atomically, read back bit for bit.

A checkpoint holds the solver's arrays (fields, polarization, CPML memory, bath tally),
its counters, the energy ledger's samples, the procedure's state and every attached
recorder's accumulators (including the records streamed so far), and the scenario text
it belongs to.  Resuming on the same machine and thread count continues bit for bit.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import h5py
import numpy as np

from fdtd.errors import GapwakeError

FORMAT = "gapwake-checkpoint"

_SOLVER_SCALARS = ("step_count", "source_work", "injected_abs", "_energy0")
_LEDGER_FIELDS = ("step", "time", "field_e", "field_h", "cross", "source_work", "outflow")


def _save_values(group, values: dict) -> None:
    """Numbers, None, strings and arrays of a recorder's state as attributes / datasets."""
    for name, val in values.items():
        if val is None:
            group.attrs[name + "__none"] = True
        elif isinstance(val, np.ndarray):
            group.create_dataset(name, data=val)
        elif isinstance(val, (list, tuple)):
            group.create_dataset(name, data=np.asarray(val, dtype=float))
        else:
            group.attrs[name] = val


def _load_values(group) -> dict:
    out = {}
    for name, val in group.attrs.items():
        if name.endswith("__none"):
            out[name[: -len("__none")]] = None
        else:
            out[name] = val.item() if isinstance(val, np.generic) else val
    for name in group:
        out[name] = np.asarray(group[name])
    return out


def save_checkpoint(path, exp, text: str | None = None) -> None:
    """Write the complete state of an :class:`~fdtd.experiment.procedure.Experiment`."""
    path = Path(path)
    tmp = path.with_name(path.name + ".incomplete")
    s = exp.solver
    with h5py.File(tmp, "w") as f:
        f.attrs["format"] = FORMAT
        f.attrs["scenario_text"] = exp.plan_text if text is None else text
        f.attrs["state"] = json.dumps(exp.state)
        f.attrs["threads"] = s.threads
        g = f.create_group("solver")
        for c, a in s.fields.items():
            g.create_dataset("field_" + c, data=a)
        for c, (P, Po) in s.polarization.items():
            g.create_dataset("P_" + c, data=P)
            g.create_dataset("Po_" + c, data=Po)
        for k, a in s.psi.items():
            g.create_dataset("psi_" + k, data=a)
        g.create_dataset("bath_rows", data=s.bath_rows)
        _save_values(g, {n: getattr(s, n) for n in _SOLVER_SCALARS})
        g.attrs["nonlocal_outflow"] = s.nonlocal_outflow
        led = f.create_group("ledger")
        led.attrs["source_work"] = s.ledger.source_work
        led.attrs["outflow"] = s.ledger.outflow
        samples = s.ledger.samples
        for name in _LEDGER_FIELDS:
            led.create_dataset(name, data=np.array([getattr(x, name) for x in samples]))
        led.create_dataset("poles", data=np.array([x.poles for x in samples]))
        led.create_dataset("bath", data=np.array([x.bath for x in samples]))
        rg = f.create_group("recorders")
        for name, rec in exp.recorders().items():
            _save_values(rg.create_group(name), rec.checkpoint_state())
    os.replace(tmp, path)


def load_checkpoint(path, exp, text: str | None = None) -> None:
    """Put the state of a checkpoint into a freshly built experiment of the same scenario."""
    from fdtd.solver.ledger import LedgerSample

    s = exp.solver
    try:
        f = h5py.File(path, "r")
    except OSError as exc:
        raise GapwakeError(f"{path}: cannot read the checkpoint ({exc})") from None
    with f:
        if f.attrs.get("format") != FORMAT:
            raise GapwakeError(f"{path}: not a gapwake checkpoint")
        if f.attrs["scenario_text"] != (exp.plan_text if text is None else text):
            raise GapwakeError(f"{path}: the checkpoint belongs to a different scenario text")
        exp.state = json.loads(f.attrs["state"])
        g = f["solver"]
        for c, a in s.fields.items():
            a[...] = g["field_" + c][...]
        for c, (P, Po) in s.polarization.items():
            P[...] = g["P_" + c][...]
            Po[...] = g["Po_" + c][...]
        for k, a in s.psi.items():
            a[...] = g["psi_" + k][...]
        s.bath_rows[...] = g["bath_rows"][...]
        vals = _load_values(g)
        for n in _SOLVER_SCALARS:
            setattr(s, n, vals[n])
        s.step_count = int(s.step_count)
        s.nonlocal_outflow = float(g.attrs["nonlocal_outflow"])
        led = f["ledger"]
        s.ledger.source_work = float(led.attrs["source_work"])
        s.ledger.outflow = float(led.attrs["outflow"])
        s.ledger.samples = [LedgerSample(int(st), float(t), float(e), float(h), float(x), np.array(p),
                                         float(w), np.array(b), float(o))
                            for st, t, e, h, x, p, w, b, o in zip(
                                led["step"], led["time"], led["field_e"], led["field_h"], led["cross"],
                                led["poles"], led["source_work"], led["bath"], led["outflow"])]
        exp.resume_recorders()
        recs = exp.recorders()
        for name in f["recorders"]:
            if name not in recs:
                raise GapwakeError(f"{path}: the checkpoint has a {name!r} recorder this run does not have")
            recs[name].restore_state(_load_values(f["recorders"][name]))
