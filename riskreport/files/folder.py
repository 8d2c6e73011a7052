"""The output folder: one writer at a time, rounds that switch over as a unit, no links.

A round is the set of files of one ``as_of``. Its ``manifest-<as_of>.json`` lists each
file's name and SHA-256 and is written last; readers (change detection, ``--previous``,
the run record) trust a round's files only when its manifest is present and every file
matches it.

A write holds an exclusive ``fcntl.flock`` on ``.riskreport.lock`` in the folder for the
whole check-stage-switch sequence, so a second run waits (up to ``RISKREPORT_LOCK_TIMEOUT``
seconds) and then fails with :class:`~riskreport.errors.FolderBusy`. The switch:

1. every changed file and the new manifest are written into a hidden staging folder
   ``.riskreport-*`` inside the output folder and flushed to disk;
2. a journal is written into the staging folder: from here on the round is committed;
3. the old manifest is removed, the files are renamed into place, stale files of the
   replaced round are removed, and the new manifest is renamed into place last;
4. the staging folder is removed.

A run killed before step 2 leaves the old round untouched; one killed after it leaves a
round without a manifest (trusted by no reader). The next run, under the lock, removes
staging folders without a journal and completes those with one (roll forward). A stop
(SIGTERM, SIGINT) waits until steps 1 to 4 are over (:func:`riskreport.processes.stopping.critical`),
so only SIGKILL or a crash leaves such a round for the next run to complete.

What is removed or replaced follows one rule, :mod:`riskreport.files.round_files`: only a file
named as one of the round's own, and only while its content still has the digest the tool
recorded; anything else of the round's is moved aside under a new name, and no other file
(``runs.jsonl``, the lock, the cache, a user's file) is ever touched, whatever a manifest or
a journal lists. Manifests and journals are read through :mod:`riskreport.files.jsonfile`.

Nothing is written through a symbolic link: a link among the folder's children that a
write would use is refused (:class:`~riskreport.errors.LinkRefused`), and files are opened
with ``O_NOFOLLOW``. The output folder itself may be a link.
"""

from __future__ import annotations

import contextlib
import errno
import fcntl
import json
import logging
import os
import secrets
import shutil
import tempfile
import time
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from riskreport.errors import (
    EnvironmentFailure,
    FolderBusy,
    InputError,
    LinkRefused,
    OverwriteRefused,
)
from riskreport.files import jsonfile, round_files
from riskreport.processes import stopping

log = logging.getLogger("riskreport")

LOCK_NAME = ".riskreport.lock"
STAGING_PREFIX = ".riskreport-"
RUNS_NAME = "runs.jsonl"
JOURNAL_NAME = "journal.json"
PAYLOAD = "payload"
LOCK_TIMEOUT_VARIABLE = "RISKREPORT_LOCK_TIMEOUT"
DEFAULT_LOCK_TIMEOUT = 300.0
# For tests only: the name of a step at which the writer ends the process abruptly.
CRASH_VARIABLE = "RISKREPORT_TEST_CRASH_AT"
CRASH_POINTS = ("staged", "committed", "switching", "switched", "manifest")

_held: dict[Path, tuple[int, int]] = {}


@dataclass(frozen=True)
class Round:
    """The files of one round as written: paths in the output folder and their SHA-256,
    and the files of the round that were moved aside rather than replaced (old name, new
    name; see :mod:`riskreport.files.round_files`)."""

    paths: tuple[Path, ...]
    sha256: tuple[str, ...]
    kept: tuple[tuple[str, str], ...] = ()


def manifest_name(as_of: str) -> str:
    """The name of a round's manifest, ``manifest-<as_of>.json``."""
    return f"manifest-{as_of}.json"


_digest = round_files.digest


def _crash_point(step: str) -> None:
    if os.environ.get(CRASH_VARIABLE) == step:
        os._exit(70)


def _fsync_dir(path: Path) -> None:
    fd = os.open(path, os.O_RDONLY | os.O_DIRECTORY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _refuse_links(out_dir: Path, name: str) -> None:
    """Raise :class:`LinkRefused` when ``name`` or a folder on its way is a symbolic link."""
    parts = Path(name).parts
    for i in range(1, len(parts) + 1):
        path = out_dir.joinpath(*parts[:i])
        if path.is_symlink():
            # The message names the folder holding the link (e.g. .../out/tables), and
            # says what was not written: a failed build still records its failure line.
            raise LinkRefused(
                f"is a symbolic link in {path.parent}; riskreport does not write "
                "through links (remove the link; no file of the round was written)",
                file=path,
            )


def _read(path: Path) -> bytes | None:
    """The bytes of a regular file opened without following a link; None if absent."""
    try:
        fd = os.open(path, os.O_RDONLY | os.O_NOFOLLOW)
    except FileNotFoundError:
        return None
    except OSError as exc:
        if exc.errno == errno.ELOOP:
            return None
        raise
    with os.fdopen(fd, "rb") as handle:
        return handle.read()


def _write_new(path: Path, content: bytes) -> None:
    """Create ``path`` (which must not exist), write, flush and fsync it."""
    fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL | os.O_NOFOLLOW, 0o644)
    with os.fdopen(fd, "wb") as handle:
        handle.write(content)
        handle.flush()
        os.fsync(handle.fileno())


def replace_file(directory: Path, name: str, content: bytes) -> None:
    """Write ``directory/name`` atomically: a new file under a temporary name in the same
    folder (created exclusively, never through a link), flushed, then renamed over ``name``
    (a link there is replaced, not followed). Readers see the old content or the new."""
    temporary = directory / f".{name}.{os.getpid()}-{secrets.token_hex(4)}.tmp"
    _write_new(temporary, content)
    try:
        os.replace(temporary, directory / name)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            temporary.unlink()
        raise


def _lock_timeout() -> float:
    text = os.environ.get(LOCK_TIMEOUT_VARIABLE)
    if text is None:
        return DEFAULT_LOCK_TIMEOUT
    try:
        value = float(text)
    except ValueError:
        value = -1.0
    if not value >= 0:
        raise FolderBusy(f"{LOCK_TIMEOUT_VARIABLE}: expected seconds >= 0, got {text!r}")
    return value


@contextlib.contextmanager
def environment(path: Path) -> Iterator[None]:
    """Turn an ``OSError`` into :class:`EnvironmentFailure` naming ``path`` (or its own)."""
    try:
        yield
    except OSError as exc:
        raise EnvironmentFailure(Path(exc.filename) if exc.filename else path, exc) from exc


@contextlib.contextmanager
def locked(out_dir: Path) -> Iterator[None]:
    """Hold the output folder's exclusive lock (re-entrant within one process).

    Creates the folder if needed. On first entry, interrupted rounds are completed or
    removed (see the module notes).

    Raises
    ------
    FolderBusy
        Another process holds the lock beyond ``RISKREPORT_LOCK_TIMEOUT`` seconds.
    LinkRefused
        The lock file is a symbolic link.
    EnvironmentFailure
        The folder cannot be created or the lock file cannot be opened.
    """
    key = out_dir.resolve()
    if key in _held:
        fd, count = _held[key]
        _held[key] = (fd, count + 1)
        try:
            yield
        finally:
            fd, count = _held[key]
            _held[key] = (fd, count - 1)
        return
    timeout = _lock_timeout()
    if key.exists() and not key.is_dir():
        raise InputError(f"expected an output folder, found a file: {key}", file=key)
    with environment(key):
        key.mkdir(parents=True, exist_ok=True)
        for name in (LOCK_NAME, RUNS_NAME, "tables", "charts"):  # fail early, before work
            _refuse_links(key, name)
        fd = os.open(key / LOCK_NAME, os.O_RDWR | os.O_CREAT | os.O_NOFOLLOW, 0o644)
    try:
        deadline = time.monotonic() + timeout
        while True:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                break
            except BlockingIOError:
                if time.monotonic() >= deadline:
                    raise FolderBusy(
                        f"output folder {key} is in use by another riskreport run "
                        f"(waited {timeout:g} s; set {LOCK_TIMEOUT_VARIABLE} to wait longer; "
                        "no file of the round was written)"
                    ) from None
                time.sleep(0.05)
        _held[key] = (fd, 1)
        try:
            with environment(key):
                recover(key)
            yield
        finally:
            del _held[key]
    finally:
        os.close(fd)  # closing the descriptor releases the lock


def _listed(content: bytes | None) -> dict[str, str] | None:
    """Every (name, SHA-256) a manifest lists; None when absent or not a manifest."""
    if content is None:
        return None
    try:
        data = jsonfile.parse(content)
        entries = {str(e["path"]): str(e["sha256"]) for e in data["files"]}
    except (ValueError, KeyError, TypeError, AttributeError):
        return None
    return entries


def _own(entries: Mapping[str, object], as_of: str) -> bool:
    """True when every name is one of round ``as_of``'s files (the manifest aside)."""
    manifest = manifest_name(as_of)
    return all(n != manifest and round_files.is_round_file(n, as_of) for n in entries)


def _recorded(entries: Mapping[str, str] | None, as_of: str) -> dict[str, str]:
    """The digests a manifest records for files of round ``as_of``; any other name it
    lists (``runs.jsonl``, ``../x``, a user's file) is not the round's and is ignored."""
    return {n: d for n, d in (entries or {}).items() if _own({n: d}, as_of)}


def _manifest_bytes(as_of: str, entries: Mapping[str, str]) -> bytes:
    files = [{"path": name, "sha256": entries[name]} for name in sorted(entries)]
    return (json.dumps({"as_of": as_of, "files": files}, indent=1) + "\n").encode("utf-8")


def verified(out_dir: Path, as_of: str) -> dict[str, str] | None:
    """The files of round ``as_of`` (name to SHA-256) if its manifest is complete, else None.

    Complete means: the manifest is present and readable, it lists only files of the
    round (:func:`riskreport.files.round_files.is_round_file`), and every file it lists is a
    regular file (not a link) whose SHA-256 matches.
    """
    entries = _listed(_read(out_dir / manifest_name(as_of)))
    if entries is None or not _own(entries, as_of):
        return None  # absent, unreadable, or edited to list files that are not the round's
    for name, digest in entries.items():
        try:
            _refuse_links(out_dir, name)
        except LinkRefused:
            return None
        content = _read(out_dir / name)
        if content is None or _digest(content) != digest:
            return None
    return entries


def rounds(out_dir: Path) -> list[str]:
    """The ``as_of`` of every round with a manifest in ``out_dir``, in order (a manifest
    kept aside, ``manifest-2024-12.kept-1.json``, is no round's)."""
    if not out_dir.is_dir():
        return []
    names = (p.name for p in out_dir.glob("manifest-*.json"))
    labels = (n.removeprefix("manifest-").removesuffix(".json") for n in names)
    return sorted(label for label in labels if round_files.is_as_of(label))


def check_listed(path: Path) -> None:
    """Raise :class:`~riskreport.errors.InputError` when ``path`` belongs to a round
    (a manifest sits beside it) that is incomplete or does not list it with this content.

    A file with no manifest beside it (e.g. one copied out of an output folder) is
    accepted as it is.
    """
    as_of = path.name.removeprefix("assessment-").removesuffix(".json")
    if not (path.parent / manifest_name(as_of)).exists():
        return
    entries = verified(path.parent, as_of)
    if entries is None or path.name not in entries:
        raise InputError(
            f"the round {as_of} is incomplete: its {manifest_name(as_of)} does not match "
            "its files (an interrupted run; a build into that folder completes it)",
            file=path,
        )


def recover(out_dir: Path) -> None:
    """Complete or remove interrupted rounds' staging folders (call under the lock).

    A journal is followed only as far as :mod:`riskreport.files.round_files` allows: it names
    files of one round, and a file it would replace or remove goes only if its content has
    the digest the journal recorded (else it is moved aside).
    """
    for staging in sorted(out_dir.glob(STAGING_PREFIX + "*")):
        if not staging.is_dir() or staging.is_symlink():
            continue
        with stopping.critical():
            plan = _parse_journal(_read(staging / JOURNAL_NAME))
            if plan is None:
                log.info("removed the staging folder of an interrupted run: %s", staging.name)
            else:
                log.info("completed the round %s of an interrupted run", plan["as_of"])
                _switch(out_dir, staging, plan)
            shutil.rmtree(staging, ignore_errors=True)


def _parse_journal(content: bytes | None) -> dict[str, Any] | None:
    """The plan in a staging folder's journal; None when absent or not one this module
    wrote: unreadable, or naming as a file to move or remove anything but a file of its
    round (``runs.jsonl``, ``../x``, a user's file: see :mod:`riskreport.files.round_files`)."""
    if content is None:
        return None
    try:
        plan = jsonfile.parse(content)
        as_of, files, remove = plan["as_of"], plan["files"], plan["remove"]
        manifest, recorded = plan["manifest"], plan.get("recorded", {})
    except (ValueError, KeyError, TypeError, AttributeError):
        return None
    if not (
        isinstance(as_of, str)
        and isinstance(files, list)
        and isinstance(remove, list)
        and isinstance(recorded, dict)
        and manifest == manifest_name(as_of)
        and all(isinstance(n, str) for n in [*files, *remove])
        and _own(dict.fromkeys([*files, *remove], ""), as_of)
    ):
        return None
    digests = {n: d for n, d in recorded.items() if isinstance(n, str) and isinstance(d, str)}
    return {"as_of": as_of, "manifest": manifest, "files": files, "remove": remove,
            "recorded": digests}  # fmt: skip


def _switch(out_dir: Path, staging: Path, plan: Mapping[str, Any]) -> list[tuple[str, str]]:
    """Step 3 of the module notes; idempotent, so recovery can run it again. Returns the
    files moved aside (old name, new name)."""
    payload = staging / PAYLOAD
    as_of: str = plan["as_of"]
    manifest: str = plan["manifest"]
    recorded: Mapping[str, str] = plan["recorded"]
    kept: list[tuple[str, str]] = []
    if not (payload / manifest).exists():
        return kept  # the new manifest is in place: the switch was complete

    def make_way(name: str) -> None:
        _refuse_links(out_dir, name)
        new = round_files.clear(out_dir, name, recorded.get(name), as_of)
        if new is not None:
            kept.append((name, new))

    make_way(manifest)
    _fsync_dir(out_dir)
    for i, name in enumerate(plan["files"]):
        source = payload / name
        if source.is_symlink() or not source.is_file():
            continue  # moved before an interruption (or not a file this module staged)
        target = out_dir / name
        _refuse_links(out_dir, name)
        target.parent.mkdir(parents=True, exist_ok=True)
        make_way(name)
        os.replace(source, target)
        _fsync_dir(target.parent)
        if i == 0:
            _crash_point("switching")
    for name in plan["remove"]:
        make_way(name)
    _crash_point("switched")
    os.replace(payload / manifest, out_dir / manifest)
    _fsync_dir(out_dir)
    _crash_point("manifest")
    return kept


@dataclass(frozen=True)
class _Plan:
    """What a write changes: the files to write, the stale files of the replaced round,
    the digests recorded for what is there now, and the new manifest."""

    changed: dict[str, bytes]
    stale: list[str]
    recorded: dict[str, str]
    manifest: bytes
    any_change: bool


def _plan(
    out_dir: Path, files: Mapping[str, bytes], as_of: str, force: bool, replace: bool
) -> _Plan:
    """What to write. Raises OverwriteRefused before anything is written."""
    manifest = manifest_name(as_of)
    for name in (*files, manifest, RUNS_NAME):
        _refuse_links(out_dir, name)
    changed: dict[str, bytes] = {}
    for name, content in files.items():
        existing = _read(out_dir / name)
        if existing == content:
            continue
        if existing is not None and not force:
            where = Path(out_dir.name, name).parent.as_posix()
            raise OverwriteRefused(
                f"already exists in {where}/ with different content; use --force to "
                "replace it (no file of the round was written)",
                file=out_dir / name,
            )
        changed[name] = content
    old_bytes = _read(out_dir / manifest)
    listed = _listed(old_bytes)
    recorded = _recorded(listed, as_of)
    stale = sorted(set(recorded) - set(files)) if replace and force and changed else []
    for name in stale:
        _refuse_links(out_dir, name)
    entries = {n: d for n, d in recorded.items() if n not in stale}
    entries.update({name: _digest(content) for name, content in files.items()})
    new_bytes = _manifest_bytes(as_of, entries)
    if old_bytes is not None and listed is not None and _own(listed, as_of):
        if old_bytes == _manifest_bytes(as_of, listed):  # exactly as this module writes one
            recorded[manifest] = _digest(old_bytes)
    any_change = bool(changed or stale or new_bytes != old_bytes)
    return _Plan(changed, stale, recorded, new_bytes, any_change)


def write_round(
    out_dir: Path,
    files: Mapping[str, bytes],
    *,
    as_of: str,
    force: bool = False,
    replace: bool = True,
) -> Round:
    """Write the files of round ``as_of`` into ``out_dir`` as a unit (see the module notes).

    Parameters
    ----------
    out_dir
        The output folder (created if needed).
    files
        Content by path relative to ``out_dir``; every name one of the round's
        (:func:`riskreport.files.round_files.is_round_file`).
    as_of
        The round; its manifest is ``manifest-<as_of>.json``.
    force
        Replace files that exist with other content (a file whose content is not what
        the tool recorded is moved aside instead: :mod:`riskreport.files.round_files`).
    replace
        The files are the whole round: with ``force``, files of the earlier round that
        this one does not have are removed. False adds to the round (e.g. tables only).

    Raises
    ------
    ValueError
        A name is not one of the round's files.
    OverwriteRefused
        A file exists with other content and ``force`` is false; nothing is written.
    LinkRefused
        A file, a folder on its way, the manifest or ``runs.jsonl`` is a symbolic link.
    FolderBusy
        Another run holds the folder's lock too long.
    EnvironmentFailure
        The file system refused a write (read-only, full, no permission).
    """
    if not _own(files, as_of):  # checked before the folder is made or locked
        strays = sorted(n for n in files if not _own({n: ""}, as_of))
        raise ValueError(f"not files of the round {as_of}: {strays}")
    kept: list[tuple[str, str]] = []
    with locked(out_dir):
        out_dir = out_dir.resolve()
        with environment(out_dir):
            plan = _plan(out_dir, files, as_of, force, replace)
            if plan.any_change:
                kept = _stage_and_switch(out_dir, plan, as_of)
    names = list(files)
    return Round(
        paths=tuple(out_dir / n for n in names),
        sha256=tuple(_digest(files[n]) for n in names),
        kept=tuple(kept),
    )


def _stage_and_switch(out_dir: Path, plan: _Plan, as_of: str) -> list[tuple[str, str]]:
    with stopping.critical():  # a stop waits: the round is never left half switched
        staging = Path(tempfile.mkdtemp(prefix=STAGING_PREFIX, dir=out_dir))
        committed = False
        try:
            payload = staging / PAYLOAD
            for name, content in {**plan.changed, manifest_name(as_of): plan.manifest}.items():
                path = payload / name
                path.parent.mkdir(parents=True, exist_ok=True)
                _write_new(path, content)
            for folder in {(payload / n).parent for n in plan.changed} | {payload}:
                _fsync_dir(folder)
            _crash_point("staged")
            touched = {*plan.changed, *plan.stale, manifest_name(as_of)}
            journal = {
                "as_of": as_of,
                "manifest": manifest_name(as_of),
                "files": list(plan.changed),
                "remove": plan.stale,
                "recorded": {n: d for n, d in plan.recorded.items() if n in touched},
            }
            temporary = staging / (JOURNAL_NAME + ".tmp")
            _write_new(temporary, json.dumps(journal).encode("utf-8"))
            os.replace(temporary, staging / JOURNAL_NAME)
            _fsync_dir(staging)
            committed = True
            _crash_point("committed")
            kept = _switch(out_dir, staging, journal)
            shutil.rmtree(staging)
        except BaseException:
            if not committed:
                shutil.rmtree(staging, ignore_errors=True)
            # A committed round is left for the next run to complete under the lock.
            raise
    return kept


def append_record(out_dir: Path, record: Mapping[str, object]) -> None:
    """Append one line to ``runs.jsonl`` with a single write, never through a link.

    Raises
    ------
    LinkRefused
        ``runs.jsonl`` is a symbolic link.
    EnvironmentFailure
        The line could not be written.
    """
    line = (json.dumps(dict(record), ensure_ascii=False, sort_keys=True) + "\n").encode("utf-8")
    path = out_dir / RUNS_NAME
    _refuse_links(out_dir, RUNS_NAME)
    with environment(path):
        fd = os.open(path, os.O_WRONLY | os.O_APPEND | os.O_CREAT | os.O_NOFOLLOW, 0o644)
        try:
            os.write(fd, line)
            os.fsync(fd)
        finally:
            os.close(fd)
