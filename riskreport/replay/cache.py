"""The cache beside a brief's outputs: later rounds and identical re-runs reuse earlier work.

Two things are kept in a hidden folder ``.riskreport.cache/`` of the output folder (safe to
delete at any time; written only by the command line, never by :func:`riskreport.assess`
unless it is handed a cache):

- ``replay.npz``: the replayed scores of past origins. The replay fits every candidate
  method at every past origin from the errors known there; round t's replay is round
  t - 1's plus the origins whose outcome arrived since. Each replayed origin is stored
  under a digest of everything its result is computed from: the training sample (its
  values and NaN padding, i.e. the error window), the test error, the band edges relative
  to the forecast, the volatility (time-varying spread), the family, the spread option and
  the centre option. A result is reused only for byte-identical inputs, so a revised
  forecast or outcome changes exactly the digests of the origins it enters, and those are
  refitted; nothing else is. This relies on each origin's fit being independent of the
  other origins fitted in the same batch (``tests/test_replay_cache.py`` checks it for
  every family).
- ``builds.json``: for each recent build, a digest of everything its files are made from
  (config, inputs, the earlier brief compared with, the software) and the manifest it
  wrote. A build with the same digest into a folder whose round still has exactly those
  files has nothing to compute: it writes only its run record.

Both are stamped with a fingerprint of the software (riskreport's own source, Python,
numpy, scipy and the rest of the stack); another fingerprint makes the cache start empty.
A cache that cannot be read (damaged, truncated, a link) is ignored with a log line; it is
never an error. Files are written under the output folder's lock, to a temporary name and
renamed, never through a symbolic link, and hold arrays and JSON only (no pickle).
"""

from __future__ import annotations

import dataclasses
import functools
import hashlib
import io
import json
import logging
import platform
from collections.abc import Mapping
from dataclasses import dataclass, field
from importlib import metadata, resources
from pathlib import Path
from typing import Any

import numpy as np

from riskreport._typing import Family
from riskreport.files import jsonfile, round_files
from riskreport.replay import calibration
from riskreport.replay.calibration import HorizonData, HorizonReplay

log = logging.getLogger("riskreport")

FOLDER = ".riskreport.cache"  # not ".riskreport-*": those are the writer's staging folders
REPLAY_NAME = "replay.npz"
BUILDS_NAME = "builds.json"
FORMAT = 1  # the layout of the files; a change makes old caches start empty
KEEP_RUNS = 12  # a replayed origin unused for this many saves is dropped
KEEP_BUILDS = 64  # build records kept (the most recent)
DIGEST_SIZE = 16
VALUES = 6  # pit, p_below, p_inside, p_above, log_score, crps
SOFTWARE = ("numpy", "scipy", "pandas", "statsmodels", "matplotlib", "jinja2", "weasyprint")


@functools.cache
def fingerprint() -> str:
    """A digest of the software a cached result was computed with.

    riskreport's own source files and templates (so an edited checkout never reuses
    results of the code before the edit), the versions of Python and the libraries, and
    the machine type.
    """
    digest = hashlib.sha256(f"format {FORMAT}\n".encode())
    package = Path(__file__).resolve().parents[1]  # riskreport/, from riskreport/replay/
    templates = Path(str(resources.files("riskreport.report_templates")))
    for root in (package, templates):
        for path in sorted(root.rglob("*")):
            if path.suffix in (".py", ".html", ".css") and path.is_file():
                digest.update(path.relative_to(root).as_posix().encode() + b"\0")
                digest.update(path.read_bytes())
    versions = [platform.python_version(), platform.machine()]
    for name in SOFTWARE:
        try:
            versions.append(f"{name} {metadata.version(name)}")
        except metadata.PackageNotFoundError:
            versions.append(f"{name} absent")
    digest.update("\n".join(versions).encode())
    return digest.hexdigest()


def folder_of(out_dir: Path) -> Path | None:
    """The cache folder of ``out_dir``, or None (with a log line) when it is a link or not a
    folder, in which case nothing is read from or written to it."""
    path = out_dir / FOLDER
    if path.is_symlink() or (path.exists() and not path.is_dir()):
        log.warning("ignored the cache %s: not a plain folder (it may be deleted)", path)
        return None
    return path


def _read(path: Path) -> bytes | None:
    """The bytes of a cache file opened without following a link; None when absent."""
    return round_files.content_no_follow(path)


def _write(out_dir: Path, name: str, content: bytes) -> None:
    """Replace ``<out_dir>/.riskreport.cache/<name>`` atomically; a failure is logged only."""
    from riskreport.files import folder

    path = folder_of(out_dir)
    if path is None:
        return
    try:
        path.mkdir(exist_ok=True)
        folder.replace_file(path, name, content)
    except OSError as exc:
        log.warning("the cache was not saved (%s: %s); the brief is unaffected", path, exc)


# --- the replay ---------------------------------------------------------------------------


@dataclass
class _Table:
    """The stored results of one method: row digests, their values and last use."""

    keys: list[bytes]
    values: np.ndarray  # rows x VALUES
    used: np.ndarray  # the save count at which each row was last used
    index: dict[bytes, int] = field(default_factory=dict)

    def __post_init__(self) -> None:
        self.index = {k: i for i, k in enumerate(self.keys)}


def _row_digests(data: HorizonData, scale: np.ndarray | None) -> list[bytes]:
    """One digest per evaluation origin of everything its fit and scores are computed from."""
    n = data.tests.size
    extra = np.column_stack(
        [data.test, data.lower, data.upper, np.ones(n) if scale is None else scale]
    )
    blob = np.ascontiguousarray(np.concatenate([data.train, extra], axis=1), dtype=np.float64)
    width = str(data.train.shape[1]).encode()
    return [
        hashlib.blake2b(row.tobytes(), digest_size=DIGEST_SIZE, person=width[:16]).digest()
        for row in blob
    ]


def _rows(data: HorizonData, rows: np.ndarray) -> HorizonData:
    return dataclasses.replace(
        data,
        tests=data.tests[rows],
        train=data.train[rows],
        test=data.test[rows],
        lower=data.lower[rows],
        upper=data.upper[rows],
        category=data.category[rows],
        climatology=data.climatology[rows],
    )


def _check_values(name: str, values: np.ndarray) -> None:
    """Refuse cached scores no replay could have made: a PIT or a probability outside
    [0, 1], probabilities of below, inside and above not adding to 1, a log score that is
    not finite (the replay floors those) or a negative or non-finite CRPS. Damage of that
    kind makes the whole cache start afresh rather than move published numbers."""
    pit, below, inside, above, log_score, crps = values.T
    probabilities = np.stack([pit, below, inside, above])
    if (
        # (1 - F(upper) can round to -2e-16: a tolerance well above rounding, far below damage)
        not np.all((probabilities >= -1e-9) & (probabilities <= 1 + 1e-9))
        or not np.allclose(below + inside + above, 1.0, atol=1e-6)
        or not np.all(np.isfinite(log_score))
        or not np.all(np.isfinite(crps) & (crps >= 0))
    ):
        raise ValueError(f"table {name!r} holds values no replay makes")


class ReplayCache:
    """Replayed scores of past origins, reused by digest of their inputs.

    Pass one to :func:`riskreport.pipeline.assess_config` (or :func:`riskreport.assess`)
    to reuse the replay of earlier builds; :meth:`save` writes it back (the command line
    does this under the output folder's lock). ``hits`` and ``misses`` count the origins
    reused and fitted.
    """

    def __init__(self, out_dir: Path | None = None) -> None:
        self.out_dir = out_dir
        self.hits = 0
        self.misses = 0
        self._tables: dict[str, _Table] = {}
        self._generation = 0

    @classmethod
    def load(cls, out_dir: Path) -> ReplayCache:
        """The cache of ``out_dir`` (empty when absent, unreadable or of other software)."""
        cache = cls(out_dir)
        path = folder_of(out_dir)
        if path is None:
            return cache
        try:
            content = _read(path / REPLAY_NAME)
            if content is not None:
                cache._restore(content)
        except Exception as exc:  # a damaged cache is ignored, whatever the damage
            log.warning("ignored the replay cache %s: unreadable (%s)", path / REPLAY_NAME, exc)
            cache._tables = {}
            cache._generation = 0
        return cache

    def _restore(self, content: bytes) -> None:
        with np.load(io.BytesIO(content), allow_pickle=False) as data:
            if str(data["fingerprint"]) != fingerprint():
                log.info("the replay cache was made by other software; starting afresh")
                return
            generation = int(data["generation"])
            names = [str(n) for n in data["names"]]
            tables = {}
            for i, name in enumerate(names):
                keys, values, used = data[f"keys{i}"], data[f"values{i}"], data[f"used{i}"]
                if (
                    keys.dtype != np.uint8
                    or keys.ndim != 2
                    or keys.shape[1] != DIGEST_SIZE
                    or values.dtype != np.float64
                    or values.shape != (keys.shape[0], VALUES)
                    or used.shape != (keys.shape[0],)
                ):
                    raise ValueError(f"table {name!r} has an unexpected shape")
                _check_values(name, values)
                raw = keys.tobytes()
                digests = [raw[j : j + DIGEST_SIZE] for j in range(0, len(raw), DIGEST_SIZE)]
                tables[name] = _Table(digests, values, used.astype(np.int64))
        self._tables, self._generation = tables, generation

    def _content(self) -> bytes:
        generation = self._generation + 1
        arrays: dict[str, Any] = {
            "fingerprint": np.array(fingerprint()),
            "generation": np.array(generation),
        }
        names: list[str] = []
        for name, table in self._tables.items():
            keep = np.flatnonzero(table.used > generation - KEEP_RUNS)
            if keep.size == 0:
                continue
            i = len(names)
            names.append(name)
            keys = b"".join(table.keys[j] for j in keep)
            arrays[f"keys{i}"] = np.frombuffer(keys, dtype=np.uint8).reshape(-1, DIGEST_SIZE)
            arrays[f"values{i}"] = table.values[keep]
            arrays[f"used{i}"] = table.used[keep]
        arrays["names"] = np.array(names, dtype=str)
        buffer = io.BytesIO()
        np.savez(buffer, **arrays)
        return buffer.getvalue()

    def save(self) -> None:
        """Write the cache into its output folder (call under the folder's lock)."""
        if self.out_dir is None:
            return
        _write(self.out_dir, REPLAY_NAME, self._content())
        self._generation += 1  # as if loaded again: ``batch`` keeps one cache for its rounds

    def replay_horizon(
        self,
        family: Family,
        data: HorizonData,
        *,
        mode: float | None,
        scale: np.ndarray | None = None,
        label: str | None = None,
        predictive: bool = False,
    ) -> HorizonReplay:
        """:func:`riskreport.replay.calibration.replay_horizon`, fitting only origins not cached."""
        replayed, pending = self.lookup(
            family, data, mode=mode, scale=scale, label=label, predictive=predictive
        )
        self.record(pending)
        return replayed

    def lookup(
        self,
        family: Family,
        data: HorizonData,
        *,
        mode: float | None,
        scale: np.ndarray | None = None,
        label: str | None = None,
        predictive: bool = False,
    ) -> tuple[HorizonReplay, Pending]:
        """:meth:`replay_horizon` without changing the cache: the replay and what
        :meth:`record` adds to the cache (so a forked child can replay and the parent
        record)."""
        name = f"{label or family}|mode={mode!r}"
        if predictive and family == "normal":
            # the t predictive's degrees of freedom depend on the horizon too
            name += f"|student-t h={data.h}"
        table = self._tables.get(name)
        index = table.index if table is not None else {}
        digests = _row_digests(data, scale)
        found = np.array([index.get(d, -1) for d in digests], dtype=np.int64)
        missing = np.flatnonzero(found < 0)
        values = np.empty((len(digests), VALUES))
        have = found >= 0
        if table is not None:
            values[have] = table.values[found[have]]
        if missing.size:
            fresh = calibration.replay_horizon(
                family,
                _rows(data, missing),
                mode=mode,
                scale=None if scale is None else scale[missing],
                label=label,
                predictive=predictive,
            )
            values[missing] = np.column_stack(
                [fresh.pit, fresh.probabilities, fresh.log_score, fresh.crps]
            )
        replayed = HorizonReplay(
            family=label or family,
            h=data.h,
            origins=data.tests,
            pit=values[:, 0].copy(),
            probabilities=np.ascontiguousarray(values[:, 1:4]),
            category=data.category,
            climatology=data.climatology,
            log_score=values[:, 4].copy(),
            crps=values[:, 5].copy(),
        )
        return replayed, Pending(name, digests, values, ~have)

    def record(self, pending: Pending) -> None:
        """Add a :meth:`lookup`'s fitted origins to the cache and mark all its origins used
        (an origin another lookup added meanwhile is not added twice)."""
        table = self._tables.get(pending.name)
        if table is None:
            table = self._tables[pending.name] = _Table(
                [], np.empty((0, VALUES)), np.empty(0, np.int64)
            )
        found = np.array([table.index.get(d, -1) for d in pending.digests], dtype=np.int64)
        new = np.flatnonzero(found < 0)
        if new.size:
            start = len(table.keys)
            for j, row in enumerate(new):
                table.keys.append(pending.digests[row])
                table.index[pending.digests[row]] = start + j
            table.values = np.concatenate([table.values, pending.values[new]])
            table.used = np.concatenate([table.used, np.zeros(new.size, np.int64)])
            found[new] = start + np.arange(new.size)
        table.used[found] = self._generation + 1
        self.hits += int((~pending.fitted).sum())
        self.misses += int(pending.fitted.sum())


@dataclass(frozen=True)
class Pending:
    """One :meth:`ReplayCache.lookup`: the method's table name, each origin's digest and
    values, and which origins were fitted (not found in the cache)."""

    name: str
    digests: list[bytes]
    values: np.ndarray
    fitted: np.ndarray


# --- identical re-runs --------------------------------------------------------------------


def build_key(
    config: Path,
    as_of: str,
    inputs: Mapping[str, Path],
    previous: Path | None,
    formats: object,
    previous_content: bytes | None = None,
) -> str:
    """A digest of everything a build's files are made from: the software, the config and
    input files' contents, the round, the earlier brief compared with and the formats.
    ``previous_content`` is the earlier brief's content when it is known before its file
    is written (``batch`` hands a round to the next in memory)."""
    digest = hashlib.sha256(fingerprint().encode())
    parts: list[tuple[str, Path | None]] = [("config", config), *inputs.items()]
    parts.append(("previous", previous))
    for role, path in parts:
        digest.update(f"\0{role}\0{path}\0".encode())
        if path is not None:
            known = previous_content if role == "previous" else None
            content = known if known is not None else path.read_bytes()
            digest.update(hashlib.sha256(content).digest())
    digest.update(f"\0as_of\0{as_of}\0formats\0{formats!r}".encode())
    return digest.hexdigest()


def _builds(out_dir: Path) -> list[dict[str, Any]]:
    path = folder_of(out_dir)
    if path is None:
        return []
    try:
        content = _read(path / BUILDS_NAME)
        if content is None:
            return []
        data = jsonfile.parse(content)
        if data.get("fingerprint") != fingerprint():
            return []
        builds = data["builds"]
        if not isinstance(builds, list) or not all(isinstance(b, dict) for b in builds):
            raise ValueError("builds is not a list of records")
        return builds
    except Exception as exc:  # a damaged cache is ignored, whatever the damage
        log.warning("ignored the build cache %s: unreadable (%s)", path / BUILDS_NAME, exc)
        return []


def unchanged(out_dir: Path, key: str, as_of: str) -> dict[str, Any] | None:
    """The record of an earlier build with this ``key`` whose round in ``out_dir`` still holds
    exactly the files it wrote (else None). Call under the folder's lock."""
    from riskreport.files import folder

    for record in _builds(out_dir):
        if record.get("key") != key or record.get("as_of") != as_of:
            continue
        entries = folder.verified(out_dir, as_of)
        if entries is not None and entries == record.get("files"):
            return record
    return None


def remember(out_dir: Path, key: str, as_of: str, summary: Mapping[str, Any]) -> None:
    """Record a successful build (its manifest and summary) for later identical re-runs.
    Call under the folder's lock, after the round is written."""
    from riskreport.files import folder

    entries = folder.verified(out_dir, as_of)
    if entries is None:
        return
    record = {"key": key, "as_of": as_of, "files": entries, **summary}
    kept = [b for b in _builds(out_dir) if b.get("key") != key]
    builds = [*kept, record][-KEEP_BUILDS:]
    content = json.dumps({"fingerprint": fingerprint(), "builds": builds}, sort_keys=True)
    _write(out_dir, BUILDS_NAME, content.encode("utf-8"))
