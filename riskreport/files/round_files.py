"""The files a round owns, and the one rule for removing or replacing one.

A round is the set of files one build writes for one ``as_of``. Their names follow a fixed
pattern, decided here in code and never read from the folder:

- ``brief-<as_of>.pdf``, ``brief-<as_of>.html``, ``annex-<as_of>.pdf``,
  ``assessment-<as_of>.json``, ``manifest-<as_of>.json``, ``workbook-<as_of>.xlsx``;
- ``tables/<name>-<as_of>.csv``, ``charts/<name>-<as_of>.svg|png|txt`` and
  ``slides/<name>-<as_of>.png|txt|csv``, where ``<name>`` is lower-case words of letters
  and digits joined by hyphens, each starting with a letter (``density-h6``).

A file of the folder is removed or replaced only when both hold: its name is one of the
round's (:func:`is_round_file`) and its content still has the SHA-256 recorded when the tool
wrote it (:func:`clear`). A manifest or a staging journal only supplies that recorded
digest; it is a hint (anyone can write a digest), never the authority on which names may
go, so ``runs.jsonl``, the lock, the cache and every other file are out of reach whatever a
manifest or journal lists. A file of the round whose content no longer matches (an edited
PDF, a file put there by hand) is moved aside under a new name that no round uses
(``brief-2024-12.kept-1.pdf``) and named in a warning, never deleted.
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import logging
import os
import re
from pathlib import Path

log = logging.getLogger("riskreport")

# A round's label as the tool writes it: YYYY-MM or YYYY-Qn (riskreport.reading.periods).
AS_OF = re.compile(r"\d{4}-(?:\d{2}|Q[1-4])")
_NAME = r"[a-z][a-z0-9]*(?:-[a-z][a-z0-9]*)*"
_TOP = ("brief-{}.pdf", "brief-{}.html", "annex-{}.pdf", "assessment-{}.json",
        "manifest-{}.json", "workbook-{}.xlsx")  # fmt: skip
_FOLDERS = {"tables": ("csv",), "charts": ("svg", "png", "txt"), "slides": ("png", "txt", "csv")}
KEPT = "kept"


def is_as_of(label: str) -> bool:
    """True when ``label`` is a round label as the tool writes it (``2024-12``, ``2024-Q4``)."""
    return AS_OF.fullmatch(label) is not None


def is_round_file(name: str, as_of: str) -> bool:
    """True when ``name`` (relative to the output folder, ``/``-separated) is a name the
    tool gives a file of round ``as_of``.

    >>> is_round_file("tables/density-h6-2024-12.csv", "2024-12")
    True
    >>> [is_round_file(n, "2024-12") for n in ("runs.jsonl", "brief-2024-11.pdf", "keep.txt")]
    [False, False, False]
    """
    if not is_as_of(as_of):
        return False
    if name in (top.format(as_of) for top in _TOP):
        return True
    folder, _, rest = name.partition("/")
    endings = _FOLDERS.get(folder)
    if endings is None:
        return False
    stem, dot, ending = rest.rpartition(".")
    suffix = f"-{as_of}"
    return (
        bool(dot)
        and ending in endings
        and stem.endswith(suffix)
        and re.fullmatch(_NAME, stem.removesuffix(suffix)) is not None
    )


def digest(content: bytes) -> str:
    """The SHA-256 of ``content`` as hex (the digest manifests record)."""
    return hashlib.sha256(content).hexdigest()


def content_no_follow(path: Path) -> bytes | None:
    """The bytes of the regular file ``path``, not following a link; None if absent."""
    try:
        fd = os.open(path, os.O_RDONLY | os.O_NOFOLLOW)
    except FileNotFoundError:
        return None
    with os.fdopen(fd, "rb") as handle:
        return handle.read()


def kept_name(out_dir: Path, name: str) -> str:
    """The first free name ``<stem>.kept-<n><suffix>`` beside ``name`` (no round uses it)."""
    path = Path(name)
    for n in range(1, 100_000):
        candidate = path.with_name(f"{path.stem}.{KEPT}-{n}{path.suffix}").as_posix()
        if not os.path.lexists(out_dir / candidate):
            return candidate
    raise FileExistsError(errno.EEXIST, "no free name to keep a file under", str(out_dir / name))


def set_aside(out_dir: Path, name: str) -> str:
    """Move ``out_dir/name`` to a new name that no file has (never replacing one).

    A hard link to the new name, made only if that name is free, then the old name
    removed; where the file system has no hard links, a rename after checking the name is
    free (the folder's lock keeps other riskreport runs out meanwhile).
    """
    while True:
        new = kept_name(out_dir, name)
        try:
            os.link(out_dir / name, out_dir / new, follow_symlinks=False)
        except FileExistsError:
            continue  # taken meanwhile: the next free name
        except OSError as exc:
            if exc.errno not in (errno.EPERM, errno.EXDEV, errno.ENOTSUP, errno.EMLINK):
                raise
            os.rename(out_dir / name, out_dir / new)
            return new
        os.unlink(out_dir / name)
        return new


def clear(out_dir: Path, name: str, recorded: str | None, as_of: str) -> str | None:
    """Make way for a new file of round ``as_of`` at ``name``, or remove a stale one.

    The file is removed only when ``name`` is one of the round's and its content has the
    ``recorded`` digest; any other content is moved aside (:func:`set_aside`). Returns the
    name it was kept under, or None (nothing there, or removed).

    Raises
    ------
    ValueError
        ``name`` is not a file of round ``as_of``: nothing of the kind is ever touched.
    """
    if not is_round_file(name, as_of):
        raise ValueError(f"{name!r} is not a file of the round {as_of!r}")
    content = content_no_follow(out_dir / name)
    if content is None:
        return None
    if recorded is not None and digest(content) == recorded:
        with contextlib.suppress(FileNotFoundError):
            (out_dir / name).unlink()
        return None
    kept = set_aside(out_dir, name)
    log.warning(
        "%s was not as riskreport wrote it (edited, or put there by hand): kept as %s",
        name,
        kept,
    )
    return kept
