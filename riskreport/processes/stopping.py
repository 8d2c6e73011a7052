"""Stopping a run on SIGTERM or SIGINT without cutting a round's switch in half.

The command line turns SIGTERM into :class:`Stopped`, a ``KeyboardInterrupt`` as Ctrl-C's
SIGINT is, so a stop unwinds like Ctrl-C: the run's failure line is recorded, the workers of
``batch`` are stopped and waited for (:mod:`riskreport.processes.workers`), nothing prints a traceback.

The few steps that must not be cut in half (a round's staging and switch, and recovery's
completion of an interrupted one: :mod:`riskreport.files.folder`) run inside :func:`critical`. A
stop that arrives meanwhile waits until the block ends, then takes effect. Two mechanisms
serve two kinds of process: the handler installed by :func:`handled` notes a stop that
comes inside the block instead of raising it; and the block holds SIGTERM and SIGINT
blocked in its thread (``pthread_sigmask``), so a process with the default disposition (a
library caller; a single-threaded program) receives them only once it ends.
"""

from __future__ import annotations

import contextlib
import signal
import threading
from collections.abc import Iterator
from types import FrameType

SIGNALS = (signal.SIGINT, signal.SIGTERM)

_state: dict[str, int] = {"depth": 0, "pending": 0}


class Stopped(KeyboardInterrupt):
    """The run was asked to stop (SIGTERM)."""


def _stop(signum: int) -> KeyboardInterrupt:
    if signum == signal.SIGINT:
        return KeyboardInterrupt()
    return Stopped(f"stopped by {signal.Signals(signum).name}")


def _on_signal(signum: int, frame: FrameType | None) -> None:
    if _state["depth"] > 0:
        _state["pending"] = signum  # taken up when the critical block ends
        return
    raise _stop(signum)


@contextlib.contextmanager
def handled() -> Iterator[None]:
    """Within the block, SIGTERM raises :class:`Stopped` and SIGINT ``KeyboardInterrupt``,
    each held back while a :func:`critical` block runs. Only the main thread can install
    signal handlers; elsewhere the block changes nothing."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = {s: signal.getsignal(s) for s in SIGNALS}
    for s in SIGNALS:
        signal.signal(s, _on_signal)
    try:
        yield
    finally:
        for s, handler in previous.items():
            signal.signal(s, handler)


def restore_default_term() -> None:
    """SIGTERM ends this process at once again (a forked helper that writes nothing)."""
    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGTERM, signal.SIG_DFL)


def ignore_stops() -> None:
    """SIGTERM and SIGINT change nothing from now on (a worker whose task is over)."""
    if threading.current_thread() is threading.main_thread():
        for s in SIGNALS:
            signal.signal(s, signal.SIG_IGN)


@contextlib.contextmanager
def critical() -> Iterator[None]:
    """Run the block to its end even if a stop arrives; the stop takes effect after it.

    A stop held back is raised when the outermost block ends (replacing an error the
    block raised: the run stops either way).
    """
    masking = hasattr(signal, "pthread_sigmask")
    before = signal.pthread_sigmask(signal.SIG_BLOCK, SIGNALS) if masking else set()
    _state["depth"] += 1
    try:
        yield
    finally:
        _state["depth"] -= 1
        if masking:
            # A signal the kernel held while blocked is delivered here; with the handler
            # installed it raises now, the block being over.
            signal.pthread_sigmask(signal.SIG_SETMASK, before)
        pending = _state["pending"] if _state["depth"] == 0 else 0
        if pending:
            _state["pending"] = 0
            raise _stop(pending)
