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

from fdtd.errors import ParameterError

FORMAT = "gapwake-checkpoint"



class CheckpointError(ParameterError):
    """A checkpoint cannot be used for this run: not a gapwake checkpoint, unreadable, or made
    by another scenario (the command line exits 2: the input is wrong, nothing is run)."""


def scenario_digest(plans) -> str:
    """Fingerprint of the planned points a checkpoint belongs to: every point's plan without
    the checkpoint cadence (resuming with another cadence is allowed)."""
    import hashlib

    h = hashlib.sha256()
    for p in plans:
        d = json.loads(p.to_json())
        d.pop("checkpoint_every", None)
        h.update(json.dumps(d, sort_keys=True).encode())
    return h.hexdigest()


def point_file(path, k: int) -> Path:
    """Where a checkpoint keeps the finished scan point ``k`` (its results group and summary)."""
    path = Path(path)
    return path.with_name(f"{path.name}.point{k}")


def _atomic(path):
    """An HDF5 file written under a temporary name (rename it with os.replace when done)."""
    path = Path(path)
    return path.with_name(path.name + ".incomplete")


def save_point(path, k: int, group, summary: dict, digest: str) -> None:
    """Keep the finished scan point ``k`` next to the checkpoint, then mark the checkpoint as
    "point k + 1, not started" (a resume starts there and copies the kept points)."""
    dest = point_file(path, k)
    tmp = _atomic(dest)
    with h5py.File(tmp, "w") as f:
        f.attrs["format"] = FORMAT + "-point"
        f.attrs["digest"] = digest
        f.attrs["summary"] = json.dumps(summary, default=_jsonable)
        group.file.copy(group, f, name="point")
    os.replace(tmp, dest)
    tmp = _atomic(path)
    with h5py.File(tmp, "w") as f:
        f.attrs["format"] = FORMAT
        f.attrs["digest"] = digest
        f.attrs["point"] = k + 1
        f.attrs["fresh"] = True
    os.replace(tmp, path)


def _jsonable(x):
    if isinstance(x, np.ndarray):
        return x.tolist()
    if isinstance(x, np.generic):
        return x.item()
    return str(x)


def read_header(path) -> dict:
    """{"point": scan point the checkpoint is in, "fresh": no solver state (the point has
    not started), "digest": what it belongs to}; CheckpointError if it is not one of ours."""
    p = Path(path)
    what = "expected a checkpoint file written by gapwake run --checkpoint for this scenario"
    if not p.exists():
        raise CheckpointError(f"--resume {path}: no such file: {what}")
    if not p.is_file():
        raise CheckpointError(f"--resume {path}: not a file: {what}")
    if not h5py.is_hdf5(p):
        raise CheckpointError(f"--resume {path}: not a gapwake checkpoint (not an HDF5 file"
                              f"{', it is empty' if p.stat().st_size == 0 else ''}): {what}")
    try:
        f = h5py.File(p, "r")
    except OSError as exc:
        raise CheckpointError(f"--resume {path}: cannot read it ({exc}): {what}") from None
    with f:
        if f.attrs.get("format") != FORMAT:
            raise CheckpointError(f"--resume {path}: not a gapwake checkpoint (format {f.attrs.get('format')!r}; a "
                                  f"results file? resume takes the file given to --checkpoint): {what}")
        return {"point": int(f.attrs.get("point", 0)), "fresh": bool(f.attrs.get("fresh", False)),
                "digest": str(f.attrs.get("digest", ""))}


def load_point(path, k: int, dest_group_parent, name: str, digest: str) -> dict:
    """Copy the kept scan point ``k`` into ``dest_group_parent[name]``; return its summary."""
    src = point_file(path, k)
    try:
        f = h5py.File(src, "r")
    except OSError as exc:
        raise CheckpointError(f"--resume: scan point {k} finished before the interruption but its kept "
                              f"results {src} cannot be read ({exc})") from None
    with f:
        if f.attrs.get("digest") != digest:
            raise CheckpointError(f"--resume: {src} belongs to a different scenario")
        if name in dest_group_parent:
            del dest_group_parent[name]
        f.copy(f["point"], dest_group_parent, name=name)
        return json.loads(f.attrs["summary"])


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
    """Write the complete state of an :class:`~fdtd.experiment.procedure.Experiment`
    (``exp.session``: {"point", "digest"} of the scan point it runs, set by the session)."""
    path = Path(path)
    tmp = _atomic(path)
    s = exp.solver
    info = getattr(exp, "session", None) or {"point": 0, "digest": ""}
    with h5py.File(tmp, "w") as f:
        f.attrs["format"] = FORMAT
        f.attrs["point"] = int(info["point"])
        f.attrs["digest"] = info["digest"]
        f.attrs["fresh"] = False
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


def _without_cadence(text: str) -> str:
    try:
        d = json.loads(text)
    except ValueError:
        return text
    if isinstance(d, dict):
        d.pop("checkpoint_every", None)
    return json.dumps(d, sort_keys=True)


def load_checkpoint(path, exp, text: str | None = None) -> None:
    """Put the state of a checkpoint into a freshly built experiment of the same scenario."""
    from fdtd.solver.ledger import LedgerSample

    s = exp.solver
    read_header(path)
    with h5py.File(path, "r") as f:
        if f.attrs.get("fresh", False):
            raise CheckpointError(f"{path}: the checkpoint holds no solver state (its point had not started)")
        if _without_cadence(f.attrs["scenario_text"]) != _without_cadence(exp.plan_text if text is None else text):
            raise CheckpointError(f"--resume {path}: the checkpoint belongs to a different scenario (or the "
                                  "scenario was edited since): resume with the scenario and --set values it "
                                  "was made with")
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
                raise CheckpointError(f"{path}: the checkpoint has a {name!r} recorder this run does not have")
            recs[name].restore_state(_load_values(f["recorders"][name]))
