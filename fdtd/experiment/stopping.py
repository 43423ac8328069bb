"""Stop requests (Ctrl-C, SIGTERM) honoured at safe points of a run.

Python's default SIGINT handler raises KeyboardInterrupt at whatever bytecode runs when
the signal arrives.  If that is a weakref callback or a ``__del__`` (the garbage collector
runs them at any allocation), the exception is printed as "Exception ignored in ..." and
*lost*: the run goes on to its max_time as if nothing had been asked (seen in CI: a run
interrupted during the recording phase did not stop within 180 s).  During a session the
handler below only records the request; the experiment procedure raises KeyboardInterrupt
itself between blocks of steps (:func:`check`), where the state is consistent.  A second
Ctrl-C raises at once, for a user who does not want to wait for the block to end.
"""

from __future__ import annotations

import signal
from contextlib import contextmanager

_pending: list[int] = []      # signal numbers received and not yet honoured
_installed = False


def _on_signal(signum, frame):
    if _pending:               # asked twice: stop now, wherever we are
        raise KeyboardInterrupt
    _pending.append(signum)


def check() -> None:
    """Raise KeyboardInterrupt if a stop was requested (and clear the request)."""
    if _pending:
        _pending.clear()
        raise KeyboardInterrupt


def requested() -> bool:
    """True if a stop was requested and not yet honoured."""
    return bool(_pending)


@contextmanager
def deferred_stops():
    """Within the block, SIGINT and SIGTERM record a stop request instead of raising.

    Outside the main thread (signal handlers cannot be set there) this does nothing and
    the default behaviour stays.  Nested use is harmless."""
    global _installed
    if _installed:
        yield
        return
    old = {}
    try:
        for sig in (signal.SIGINT, signal.SIGTERM):
            old[sig] = signal.signal(sig, _on_signal)
    except ValueError:         # not the main thread
        for sig, h in old.items():
            signal.signal(sig, h)
        old = {}
    _installed = bool(old)
    _pending.clear()
    try:
        yield
    finally:
        for sig, h in old.items():
            signal.signal(sig, h)
        if old:
            _installed = False
        _pending.clear()
