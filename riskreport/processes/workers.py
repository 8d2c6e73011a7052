"""``batch --jobs N``: tasks run in worker processes that never outlive the run.

Each task (one config's briefs) runs in its own forked worker, at most ``jobs`` at a time,
so a worker's memory (weasyprint's above all) goes with it. The guarantees:

- A worker asks Linux to stop it when its parent dies (``prctl(PR_SET_PDEATHSIG)``, as the
  single build's child does: :func:`riskreport.processes.parallel.die_with_parent`), so not even a
  SIGKILL of the parent leaves one running.
- A stop of the parent (SIGTERM or SIGINT, turned into exceptions by
  :func:`riskreport.processes.stopping.handled`) sends SIGTERM to every running worker and waits for
  each. A worker stops between two steps, never inside a round's switch
  (:func:`riskreport.processes.stopping.critical`), so every round in the folder is whole.
- Workers talk to the parent through pipes only: no semaphore, so no resource tracker and
  no "leaked semaphore" warning, however the run ends.

Where fork is unavailable the tasks run one after another in this process.
"""

from __future__ import annotations

import contextlib
import multiprocessing
import os
import pickle
import sys
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from multiprocessing.connection import Connection, wait
from typing import Any

from riskreport.processes import parallel, stopping


@dataclass(frozen=True)
class Outcome:
    """What one task gave: its value, or (``ok`` false) why there is none."""

    ok: bool
    value: Any
    error: str = ""


def _worker(
    task: Callable[[], Any], pipe: Connection, parent: int, receiver: Connection | None = None
) -> None:
    """Run ``task`` in the worker and send its outcome; a stop ends it quietly (a second
    stop too: Ctrl-C reaches the worker, then the parent's SIGTERM). The pipe's reading
    end, inherited, is closed first: once the parent closes its own, a send fails at once
    instead of waiting for ever for a reader."""
    if receiver is not None:
        receiver.close()
    parallel.die_with_parent(parent)
    try:
        try:
            outcome = Outcome(True, task())
        except KeyboardInterrupt as exc:  # SIGTERM (stopping.Stopped) or SIGINT
            outcome = Outcome(False, None, str(exc) or "interrupted")
        except BaseException as exc:
            outcome = Outcome(False, None, f"{type(exc).__name__}: {exc}")
        stopping.ignore_stops()  # the task is over: a late stop changes nothing
        with contextlib.suppress(OSError):  # the parent may have stopped reading
            pipe.send_bytes(pickle.dumps(outcome, protocol=pickle.HIGHEST_PROTOCOL))
        pipe.close()
    except KeyboardInterrupt:  # a second stop while the first was handled: just end
        pass


def _collect(process: multiprocessing.process.BaseProcess, pipe: Connection) -> Outcome:
    try:
        outcome = pickle.loads(pipe.recv_bytes())
    except (EOFError, OSError, pickle.UnpicklingError):
        process.join()
        return Outcome(False, None, f"the worker ended without a result (exit {process.exitcode})")
    finally:
        pipe.close()
    process.join()
    assert isinstance(outcome, Outcome)
    return outcome


def run_each(tasks: Sequence[Callable[[], Any]], jobs: int) -> list[Outcome]:
    """Run every task, at most ``jobs`` at once, each in its own worker process.

    Returns the outcomes in the order of ``tasks``. A task that raises gives an outcome
    with ``ok`` false; the others go on. ``KeyboardInterrupt`` (and so
    :class:`riskreport.processes.stopping.Stopped`) in this process stops and waits for every
    running worker, then propagates.
    """
    if "fork" not in multiprocessing.get_all_start_methods() or jobs < 2:
        return [_here(task) for task in tasks]
    context = multiprocessing.get_context("fork")
    waiting = list(enumerate(tasks))
    running: dict[int, tuple[multiprocessing.process.BaseProcess, Connection]] = {}
    outcomes: dict[int, Outcome] = {}
    try:
        while waiting or running:
            while waiting and len(running) < jobs:
                i, task = waiting.pop(0)
                receiver, sender = context.Pipe(duplex=False)
                for stream in (sys.stdout, sys.stderr):  # not repeated by the child
                    stream.flush()
                process: multiprocessing.process.BaseProcess = context.Process(
                    target=_worker, args=(task, sender, os.getpid(), receiver), daemon=True
                )
                process.start()
                sender.close()
                running[i] = (process, receiver)
            ready = wait([pipe for _, pipe in running.values()])
            for i, (process, pipe) in list(running.items()):
                if pipe in ready:
                    outcomes[i] = _collect(process, pipe)
                    del running[i]
    finally:
        _stop_all(list(running.values()))
    return [outcomes[i] for i in range(len(tasks))]


def _stop_all(running: list[tuple[multiprocessing.process.BaseProcess, Connection]]) -> None:
    """SIGTERM to every worker still running, then wait for each. Their pipes are closed
    first, so a worker never blocks sending a result nobody reads."""
    for process, pipe in running:
        pipe.close()
        process.terminate()
    for process, _ in running:
        process.join()


def _here(task: Callable[[], Any]) -> Outcome:
    try:
        return Outcome(True, task())
    except Exception as exc:
        return Outcome(False, None, f"{type(exc).__name__}: {exc}")


@dataclass
class Started:
    """One task running in a worker started by :func:`start`."""

    process: multiprocessing.process.BaseProcess | None
    pipe: Connection | None
    here: Outcome | None = None  # the outcome, when the task ran in this process

    def outcome(self) -> Outcome:
        """Wait for the task's outcome (the worker then ends)."""
        if self.here is not None:
            return self.here
        assert self.process is not None
        assert self.pipe is not None
        outcome = _collect(self.process, self.pipe)  # interrupted: stop() still stops it
        self.process = None
        return outcome


def stop(started: Sequence[Started]) -> None:
    """SIGTERM to every one of these workers still running, then wait for each (all at
    once: a worker may hold the pipe of one started before it, so waiting for that one
    alone could wait for ever)."""
    running = [s for s in started if s.process is not None and s.pipe is not None]
    _stop_all([(s.process, s.pipe) for s in running])  # type: ignore[misc]
    for s in running:
        s.process = None


def start(task: Callable[[], Any]) -> Started:
    """Run ``task`` in one worker (with the guarantees of :func:`run_each`) while this
    process goes on; where fork is unavailable it runs here, now. The caller calls
    :meth:`Started.outcome`, or :func:`stop` when it stops first (in a ``finally``). Never start one while holding the output folder's lock: the worker
    would hold it too."""
    if "fork" not in multiprocessing.get_all_start_methods():
        return Started(None, None, _here(task))
    context = multiprocessing.get_context("fork")
    receiver, sender = context.Pipe(duplex=False)
    for stream in (sys.stdout, sys.stderr):  # not repeated by the child
        stream.flush()
    process = context.Process(
        target=_worker, args=(task, sender, os.getpid(), receiver), daemon=True
    )
    process.start()
    sender.close()
    return Started(process, receiver)
