"""The run record: one line per run in the output folder's ``runs.jsonl``, failures included.

A run that fails while it holds the folder's lock (a refused overwrite, a link in the
folder, a stop) appends its failure line before it lets the lock go
(:meth:`RunRecord.locked`), so the record of a refused run never lands after the lines of
a run that came next. A run that fails before it takes the lock (bad input, the folder
busy beyond the wait) appends its line without it: one ``O_APPEND`` write, never waiting
for a lock only to say that it failed.

The exit status and the one-line message of a failure are also what the command line
prints (:func:`exit_code`, :func:`one_line`).
"""

from __future__ import annotations

import contextlib
import errno
import logging
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from riskreport.errors import EnvironmentFailure, InputError
from riskreport.processes.stopping import Stopped

if TYPE_CHECKING:
    from riskreport.files.folder import Round

log = logging.getLogger("riskreport")

EXIT_OK, EXIT_INTERNAL, EXIT_INPUT, EXIT_ENVIRONMENT = 0, 1, 2, 3


def exit_code(exc: BaseException) -> int:
    """The exit code for an exception: 2 bad input, 3 environment, 1 anything else."""
    if isinstance(exc, InputError):
        return EXIT_INPUT
    if isinstance(exc, EnvironmentFailure | OSError):
        return EXIT_ENVIRONMENT
    return EXIT_INTERNAL


def one_line(exc: BaseException) -> str:
    """The one-line message for an exception (as printed on stderr)."""
    if isinstance(exc, InputError | EnvironmentFailure):
        return exc.one_line()
    if isinstance(exc, OSError) and exc.strerror:
        name = errno.errorcode.get(exc.errno or 0, "")
        where = f"{exc.filename}: " if exc.filename else ""
        return f"{where}{exc.strerror}" + (f" ({name})" if name else "")
    if isinstance(exc, Stopped):
        return str(exc) or "stopped"
    if isinstance(exc, KeyboardInterrupt):
        return "interrupted"
    return " ".join(f"{type(exc).__name__}: {exc}".split())


@dataclass
class RunRecord:
    """The line of one run, filled in as the run learns its round; written once."""

    fields: dict[str, Any]
    written: bool = field(default=False)

    def failed(self, out_dir: Path, exc: BaseException) -> None:
        """Append the failure line (exit status and message), unless already written."""
        from riskreport.files import folder

        if self.written:
            return
        self.written = True
        line = {**self.fields, "outputs": [], "exit_status": exit_code(exc), "error": one_line(exc)}
        try:
            folder.append_record(out_dir, line)
        except (InputError, EnvironmentFailure) as problem:
            log.warning("the failure was not recorded in runs.jsonl: %s", problem.one_line())

    def succeeded(self, out_dir: Path, written: Round) -> None:
        """Append the line of a run that wrote the round ``written``."""
        outputs = [
            {"path": str(p.relative_to(out_dir)), "sha256": h}
            for p, h in zip(written.paths, written.sha256, strict=True)
        ]
        self.append(out_dir, {"outputs": outputs})

    def append(self, out_dir: Path, more: dict[str, Any]) -> None:
        """Append the line of a successful run, with ``more`` fields (e.g. its outputs)."""
        from riskreport.files import folder

        folder.append_record(out_dir, {**self.fields, **more, "exit_status": EXIT_OK})
        self.written = True

    @contextlib.contextmanager
    def locked(self, out_dir: Path) -> Iterator[None]:
        """Hold the folder's lock for the block; a failure inside it is recorded before the
        lock is released."""
        from riskreport.files import folder

        with folder.locked(out_dir):
            try:
                yield
            except BaseException as exc:
                self.failed(out_dir, exc)
                raise
