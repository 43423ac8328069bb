"""Stop requests are recorded by the signal handler and honoured at safe points."""

import os
import signal

import pytest

from fdtd.experiment import stopping


def test_a_signal_during_a_session_is_recorded_not_raised():
    with stopping.deferred_stops():
        os.kill(os.getpid(), signal.SIGINT)      # delivered before kill returns (same thread)
        assert stopping.requested()
        with pytest.raises(KeyboardInterrupt):
            stopping.check()
        assert not stopping.requested()          # honoured once
        stopping.check()


def test_a_second_signal_raises_at_once():
    with stopping.deferred_stops():
        os.kill(os.getpid(), signal.SIGTERM)
        with pytest.raises(KeyboardInterrupt):
            os.kill(os.getpid(), signal.SIGINT)


def test_handlers_are_restored_after_the_session():
    before = signal.getsignal(signal.SIGINT), signal.getsignal(signal.SIGTERM)
    with stopping.deferred_stops():
        assert signal.getsignal(signal.SIGINT) is not before[0]
    assert (signal.getsignal(signal.SIGINT), signal.getsignal(signal.SIGTERM)) == before
    assert not stopping.requested()
