"""Output paths checked before a run starts: a results or checkpoint file that cannot be
written is refused at once, not after hours of simulation."""

from __future__ import annotations

import os
from pathlib import Path

from fdtd.errors import ParameterError


class OutputPathError(ParameterError):
    """An output path (results file, checkpoint) cannot be written."""


def check_output(path, option: str = "--output", make_parents: bool = False) -> Path:
    """Refuse (OutputPathError) a file path that cannot be created or replaced.

    Checks: not a directory; no component of the parent is a file; the parent exists (or is
    created when ``make_parents``) and is writable; the temporary ``<name>.incomplete`` next
    to it is not a directory.  Returns the path."""
    path = Path(path)
    if str(path).endswith(os.sep) or (path.exists() and path.is_dir()):
        raise OutputPathError(f"{option} {path}: is a directory; give a file name, e.g. {path / 'run.h5'}")
    parent = path.parent if str(path.parent) else Path(".")
    # the first existing ancestor must be a directory
    probe = parent
    while not probe.exists() and probe != probe.parent:
        probe = probe.parent
    if probe.exists() and not probe.is_dir():
        raise OutputPathError(f"{option} {path}: {probe} is a file, not a directory")
    if not parent.exists():
        if not make_parents:
            raise OutputPathError(f"{option} {path}: the folder {parent} does not exist (create it, or pass "
                                  "--parents to create it)")
        try:
            parent.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise OutputPathError(f"{option} {path}: cannot create the folder {parent} ({exc.strerror})") from None
    if not os.access(parent, os.W_OK | os.X_OK):
        raise OutputPathError(f"{option} {path}: the folder {parent} is not writable")
    if path.exists() and not os.access(path, os.W_OK):
        raise OutputPathError(f"{option} {path}: exists and is not writable")
    tmp = path.with_name(path.name + ".incomplete")
    if tmp.exists() and tmp.is_dir():
        raise OutputPathError(f"{option} {path}: the temporary file {tmp} would be a directory")
    return path
