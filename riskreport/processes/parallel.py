"""Independent pieces of one run on the machine's second core: a forked child computes one
piece while this process computes the other, and the results are the ones the serial path
gives (the same functions on the same inputs; each piece only returns values, the files
are still written by this process alone).

The child is forked (``multiprocessing`` "fork" context), so it starts with this process's
memory: nothing is imported or read again and nothing has to be pickled on the way in; its
result comes back pickled through a pipe. The command line turns this on
(:func:`configure`); the serial path is taken otherwise, where fork is unavailable
(Windows), on one core, inside a child of ``multiprocessing`` (a worker of
``batch --jobs``, or such a child itself), while another thread runs, and with
``RISKREPORT_WORKERS=1``.

Errors: a piece that fails in the child is run again here, so it raises exactly what the
serial path raises (an :class:`~riskreport.errors.InputError` stays a one-line error with
exit code 2); when the piece run here fails first, the child is stopped and that error is
raised, as in the serial order. A child never outlives the call, nor (on Linux) a killed
parent. Warnings a piece emits in
the child are emitted again here, in order.
"""

from __future__ import annotations

import ctypes
import logging
import multiprocessing
import os
import pickle
import signal
import sys
import threading
import warnings
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from multiprocessing.connection import Connection
from typing import Any, TypeVar

from riskreport.processes import stopping

T = TypeVar("T")

ENV = "RISKREPORT_WORKERS"
PR_SET_PDEATHSIG = 1  # from <linux/prctl.h>
log = logging.getLogger("riskreport")


_state = {"enabled": False}


def configure(*, enabled: bool) -> None:
    """Allow the child for this process (the command line does; a library caller that
    does not, or sets ``RISKREPORT_WORKERS``, stays serial: forking inside someone else's
    program, a notebook with its threads say, is not ours to decide)."""
    _state["enabled"] = enabled


def workers() -> int:
    """How many processes a run may use: 1 (serial) or 2.

    ``RISKREPORT_WORKERS`` (a whole number; 1 turns the child off) where set, else 2 when
    :func:`configure` allowed it and this process may run on two cores or more. Always 1
    where fork is unavailable, inside a ``multiprocessing`` child, or while another
    thread runs (a fork copies only the calling thread, and a lock another thread holds
    would stay locked in the child).
    """
    if "fork" not in multiprocessing.get_all_start_methods():
        return 1
    if multiprocessing.parent_process() is not None or threading.active_count() > 1:
        return 1
    text = os.environ.get(ENV, "").strip()
    if text:
        try:
            wanted = int(text)
        except ValueError:
            log.warning("%s=%r is not a whole number; running serially", ENV, text)
            return 1
        return max(1, min(wanted, 2))
    if not _state["enabled"]:
        return 1
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        cores = os.cpu_count() or 1
    return 2 if cores >= 2 else 1


@dataclass(frozen=True)
class _Outcome:
    """What the child sends back: a result and its warnings, or a failure."""

    ok: bool
    value: Any
    warned: tuple[tuple[str, type[Warning]], ...]


def die_with_parent(parent: int) -> None:
    """Ask Linux to send this child SIGTERM when its parent dies (prctl PR_SET_PDEATHSIG),
    so a killed run leaves no process behind; elsewhere nothing is done. ``parent`` is the
    parent's pid, to catch a parent that died before the request took effect."""
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(PR_SET_PDEATHSIG, signal.SIGTERM)
    except (OSError, AttributeError):  # not Linux
        return
    if os.getppid() != parent:  # the parent died before the request took effect
        os._exit(1)


def _child(task: Callable[[], Any], pipe: Connection, parent: int) -> None:
    """Run ``task`` in the forked child and send its outcome (any failure only as a flag)."""
    # The child writes nothing, so SIGTERM may end it at once, as before the command
    # line's handler (riskreport.processes.stopping) was inherited through the fork.
    stopping.restore_default_term()
    die_with_parent(parent)
    try:
        with warnings.catch_warnings(record=True) as caught:
            value = task()
        warned = tuple((str(w.message), w.category) for w in caught)
        payload = pickle.dumps(_Outcome(True, value, warned), protocol=pickle.HIGHEST_PROTOCOL)
    except BaseException:  # the parent runs the piece again and raises what it raises
        payload = pickle.dumps(_Outcome(False, None, ()))
    pipe.send_bytes(payload)
    pipe.close()


def _receive(pipe: Connection) -> _Outcome:
    try:
        outcome = pickle.loads(pipe.recv_bytes())
    except (EOFError, OSError, pickle.UnpicklingError):  # the child died: redo it here
        return _Outcome(False, None, ())
    assert isinstance(outcome, _Outcome)
    return outcome


def both(here: Callable[[], T], there: Callable[[], Any]) -> tuple[T, Any]:
    """Run ``here`` in this process and ``there`` in a forked child, at the same time.

    Returns the two results, as ``(here(), there())`` would in this order; serially
    (exactly that) when :func:`workers` is 1. ``there`` must return a picklable value and
    change nothing this process needs (its side effects stay in the child).
    """
    if workers() < 2:
        first = here()
        return first, there()
    context = multiprocessing.get_context("fork")
    receiver, sender = context.Pipe(duplex=False)
    for stream in (sys.stdout, sys.stderr):  # the child must not repeat buffered output
        stream.flush()
    child = context.Process(target=_child, args=(there, sender, os.getpid()), daemon=True)
    child.start()
    sender.close()
    outcome: _Outcome | None = None
    try:
        first = here()
        outcome = _receive(receiver)
    finally:
        receiver.close()
        if outcome is None:  # this side failed (or was interrupted): stop the child
            child.terminate()
        child.join()
    if not outcome.ok:
        log.debug("the parallel piece failed in the child; running it here")
        return first, there()
    for text, category in outcome.warned:
        warnings.warn(text, category, stacklevel=2)
    return first, outcome.value


def split(items: Sequence[T]) -> tuple[list[T], list[T]]:
    """Alternate items between two halves (every other one), so pieces of similar cost
    that come in order are shared evenly."""
    return list(items[0::2]), list(items[1::2])
