"""The output folder: rounds switch as a unit, one writer at a time, no writing through
links, environment errors named, and one run-record line per run (failures included)."""

from __future__ import annotations

import errno
import fcntl
import hashlib
import json
import os
import subprocess
import sys
import threading
from collections.abc import Callable
from pathlib import Path

import pytest

from riskreport.files import folder
from riskreport.replay import cache as replay_cache
from tests.conftest import REPO, Case, Result

AS_OF = "2024-12"
HIDDEN = (folder.LOCK_NAME, folder.RUNS_NAME)


def _round(out: Path) -> dict[str, bytes]:
    """The files of the folder a reader could see, without the run record, the lock and the
    cache (not part of any round)."""
    return {
        p.relative_to(out).as_posix(): p.read_bytes()
        for p in sorted(out.rglob("*"))
        if p.is_file()
        and p.name not in HIDDEN
        and not p.relative_to(out).parts[0].startswith(folder.STAGING_PREFIX)
        and p.relative_to(out).parts[0] != replay_cache.FOLDER
    }


def _staging(out: Path) -> list[Path]:
    return sorted(out.glob(folder.STAGING_PREFIX + "*"))


def _records(out: Path) -> list[dict[str, object]]:
    lines = (out / folder.RUNS_NAME).read_text("utf-8").splitlines()
    return [json.loads(line) for line in lines]


def _manifest_matches(out: Path, files: dict[str, bytes]) -> bool:
    """Recompute every SHA-256 with hashlib (not through the module) and compare."""
    manifest = json.loads(files[f"manifest-{AS_OF}.json"])
    listed = {e["path"]: e["sha256"] for e in manifest["files"]}
    actual = {
        name: hashlib.sha256(content).hexdigest()
        for name, content in files.items()
        if not name.startswith("manifest-")
    }
    return listed == actual


@pytest.fixture
def two_rounds(case: Case, tmp_path: Path, run: Callable[..., Result]) -> tuple[Path, Path]:
    """A folder holding round A, and the config changed so that round B differs.

    Returns the config and the folder; round B built cleanly elsewhere is in ``tmp_path/b``.
    """
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--out", out, "-q").code == 0
    case.config = case.config.replace("tolerance = 1.0", "tolerance = 1.3")
    case.write()
    assert run("build", config, "--out", tmp_path / "b", "-q").code == 0
    return config, out


@pytest.mark.parametrize("step", folder.CRASH_POINTS)
def test_a_kill_at_any_step_leaves_one_whole_round(
    two_rounds: tuple[Path, Path], tmp_path: Path, run: Callable[..., Result], step: str
) -> None:
    config, out = two_rounds
    old, new = _round(out), _round(tmp_path / "b")
    assert old != new
    assert _manifest_matches(out, old)
    assert _manifest_matches(tmp_path / "b", new)
    process = subprocess.run(
        [sys.executable, "-m", "riskreport", "build", str(config), "--out", str(out), "--force"],
        env={**os.environ, "MPLBACKEND": "Agg", folder.CRASH_VARIABLE: step},
        cwd=REPO,
        capture_output=True,
        check=False,
        timeout=300,
    )
    assert process.returncode == 70, process.stderr  # ended by the hook, as a kill would
    after = _round(out)
    manifest = f"manifest-{AS_OF}.json"
    # Whatever is on disk, a manifest that is there matches its files, and it is the old
    # round's or the new one's; the mixed state of a switch in progress has no manifest.
    if manifest in after:
        assert after in (old, new), sorted(k for k in after if after.get(k) != old.get(k))
    else:
        assert step in ("switching", "switched")
        assert folder.verified(out, AS_OF) is None
    committed = folder.CRASH_POINTS.index(step) >= folder.CRASH_POINTS.index("committed")
    # The next run completes a committed round (then finds it identical: exit 0) or
    # discards an uncommitted one (then refuses to replace round A without --force: exit 2).
    result = run("build", config, "--out", out, "-q")
    assert result.code == (0 if committed else 2), result.stderr
    assert _staging(out) == []
    assert _round(out) == (new if committed else old)


def test_an_interrupted_round_is_not_compared_with(
    case: Case, run: Callable[..., Result], monkeypatch: pytest.MonkeyPatch
) -> None:
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--as-of", "2024-10", "--out", out, "-q").code == 0
    assert run("build", config, "--as-of", "2024-11", "--out", out, "-q").code == 0
    horizons = out / "tables" / "horizons-2024-11.csv"
    horizons.write_bytes(horizons.read_bytes() + b"\n")  # no longer what the manifest lists
    assert run("build", config, "--out", out, "-q").code == 0
    data = json.loads((out / f"assessment-{AS_OF}.json").read_text("utf-8"))
    assert data["change"]["previous_as_of"] == "2024-10"
    result = run(
        "build", config, "--out", case.folder / "o2", "--previous", out / "assessment-2024-11.json"
    )
    assert result.code == 2
    assert "incomplete" in result.stderr
    assert "assessment-2024-11.json" in result.stderr


def test_identical_rebuild_touches_nothing(case: Case, run: Callable[..., Result]) -> None:
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--out", out, "-q").code == 0
    before = {p: p.stat().st_mtime_ns for p in out.rglob("*") if p.name != folder.RUNS_NAME}
    assert run("build", config, "--out", out, "-q").code == 0
    after = {p: p.stat().st_mtime_ns for p in out.rglob("*") if p.name != folder.RUNS_NAME}
    assert after == before
    assert [r["exit_status"] for r in _records(out)] == [0, 0]


def test_forced_round_replaces_the_whole_round(case: Case, run: Callable[..., Result]) -> None:
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--out", out, "-q").code == 0
    assert (out / f"tables/horizons-{AS_OF}.csv").is_file()
    case.config = case.config.replace('formats = ["json", "csv"]', 'formats = ["json"]')
    case.config = case.config.replace("tolerance = 1.0", "tolerance = 1.3")
    case.write()
    assert run("build", config, "--out", out, "--force", "-q").code == 0
    # The tables of the replaced round would mix two briefs: they are gone.
    assert not list((out / "tables").glob(f"*-{AS_OF}.csv"))
    files = _round(out)
    assert set(files) == {f"assessment-{AS_OF}.json", f"manifest-{AS_OF}.json"}
    assert _manifest_matches(out, files)


@pytest.mark.parametrize("name", ["../precious.txt", "ABSOLUTE"])
def test_force_never_removes_a_file_outside_the_folder(
    case: Case, run: Callable[..., Result], name: str
) -> None:
    # Regression: an edited manifest listing "../x" or an absolute path made --force
    # unlink that file as a "stale" file of the replaced round (Path / "/abs" is "/abs").
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--out", out, "-q").code == 0
    precious = case.folder / "precious.txt"
    precious.write_text("a user's file", "utf-8")
    listed = str(precious) if name == "ABSOLUTE" else name
    manifest = out / f"manifest-{AS_OF}.json"
    data = json.loads(manifest.read_text("utf-8"))
    data["files"].append({"path": listed, "sha256": "0" * 64})
    manifest.write_text(json.dumps(data), "utf-8")
    case.config = case.config.replace("tolerance = 1.0", "tolerance = 1.3")
    case.write()
    assert run("build", config, "--out", out, "--force", "-q").code == 0
    assert precious.read_text("utf-8") == "a user's file"
    assert _manifest_matches(out, _round(out))


def test_recovery_ignores_a_journal_naming_a_file_outside_the_folder(
    case: Case, run: Callable[..., Result]
) -> None:
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--out", out, "-q").code == 0
    precious = case.folder / "precious.txt"
    precious.write_text("a user's file", "utf-8")
    staging = out / (folder.STAGING_PREFIX + "edited")
    (staging / folder.PAYLOAD).mkdir(parents=True)
    (staging / folder.PAYLOAD / "m.json").write_text("{}", "utf-8")
    plan = {"as_of": AS_OF, "manifest": "m.json", "files": [], "remove": ["../precious.txt"]}
    (staging / folder.JOURNAL_NAME).write_text(json.dumps(plan), "utf-8")
    assert run("build", config, "--out", out, "-q").code == 0
    assert precious.read_text("utf-8") == "a user's file"
    assert _staging(out) == []


def _hold_lock(out: Path) -> int:
    """Take the folder's lock as another process would: a separate open file description."""
    out.mkdir(parents=True, exist_ok=True)
    fd = os.open(out / folder.LOCK_NAME, os.O_RDWR | os.O_CREAT)
    fcntl.flock(fd, fcntl.LOCK_EX)
    return fd


def test_a_busy_folder_fails_after_the_wait(
    case: Case, run: Callable[..., Result], monkeypatch: pytest.MonkeyPatch
) -> None:
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--out", out, "-q").code == 0
    before = _round(out)
    case.config = case.config.replace("tolerance = 1.0", "tolerance = 1.3")
    case.write()
    monkeypatch.setenv(folder.LOCK_TIMEOUT_VARIABLE, "0.2")
    fd = _hold_lock(out)
    try:
        result = run("build", config, "--out", out, "--force")
    finally:
        os.close(fd)
    assert result.code == 2
    assert "in use by another riskreport run" in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1
    assert _round(out) == before
    last = _records(out)[-1]
    assert last["exit_status"] == 2
    assert last["outputs"] == []
    assert "in use" in str(last["error"])


def test_a_second_build_waits_for_the_first(
    case: Case, run: Callable[..., Result], monkeypatch: pytest.MonkeyPatch
) -> None:
    config = case.write()
    out = case.folder / "out"
    monkeypatch.setenv(folder.LOCK_TIMEOUT_VARIABLE, "120")
    fd = _hold_lock(out)
    released = threading.Event()

    def release() -> None:
        released.wait(timeout=1.0)
        os.close(fd)

    thread = threading.Thread(target=release)
    thread.start()
    try:
        result = run("build", config, "--out", out, "-q")
    finally:
        released.set()
        thread.join()
    assert result.code == 0, result.stderr
    assert _manifest_matches(out, _round(out))


@pytest.mark.parametrize(
    "link", [folder.RUNS_NAME, "tables", f"assessment-{AS_OF}.json", folder.LOCK_NAME]
)
def test_nothing_is_written_through_a_link(
    case: Case, tmp_path: Path, run: Callable[..., Result], link: str
) -> None:
    config = case.write()
    out = case.folder / "out"
    out.mkdir()
    victim = tmp_path / "elsewhere"
    victim.mkdir()
    target = victim if link == "tables" else victim / "file"
    if link != "tables":
        target.write_text("keep\n")
    (out / link).symlink_to(target)
    result = run("build", config, "--out", out, "--force")
    assert result.code == 2, result.stderr
    assert "symbolic link" in result.stderr
    assert link in result.stderr
    assert "Traceback" not in result.stderr
    assert (out / link).is_symlink()
    if link == "tables":
        assert list(victim.iterdir()) == []
    else:
        assert target.read_text() == "keep\n"
    assert not (out / f"manifest-{AS_OF}.json").exists()
    if link != folder.RUNS_NAME:  # the failure is recorded in the real run record
        assert [r["exit_status"] for r in _records(out)] == [2]


def _failing(original: Callable[..., object], out: Path, code: int) -> Callable[..., object]:
    is_open = original is os.open

    def replacement(*args: object, **kwargs: object) -> object:
        # Writes fail (os.replace, os.open with O_CREAT); reads and removals still work.
        # As the system call would, the error names the first path it was given.
        creating = not is_open or int(str(args[1])) & os.O_CREAT
        if creating and str(args[0]).startswith(str(out)):
            raise OSError(code, os.strerror(code), str(args[0]))
        return original(*args, **kwargs)

    return replacement


@pytest.mark.parametrize(("function", "code"), [("replace", errno.EROFS), ("open", errno.ENOSPC)])
def test_a_refusing_file_system_is_an_environment_error(
    two_rounds: tuple[Path, Path],
    run: Callable[..., Result],
    monkeypatch: pytest.MonkeyPatch,
    function: str,
    code: int,
) -> None:
    config, out = two_rounds
    before = _round(out)
    original = getattr(os, function)
    # Only writes into the staging folder fail, so the run record can still be written.
    staging = out / folder.STAGING_PREFIX
    monkeypatch.setattr(folder.os, function, _failing(original, staging, code))
    result = run("build", config, "--out", out, "--force", "-q")
    monkeypatch.undo()
    assert result.code == 3, result.stderr
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert lines[0].startswith("riskreport: environment error: cannot write ")
    assert str(out) in lines[0]
    assert os.strerror(code) in lines[0]
    assert errno.errorcode[code] in lines[0]
    assert _round(out) == before
    assert _staging(out) == [], [list(p.rglob("*")) for p in _staging(out)]
    last = _records(out)[-1]
    assert last["exit_status"] == 3
    assert errno.errorcode[code] in str(last["error"])


def test_bad_input_into_an_existing_folder_is_recorded(
    case: Case, run: Callable[..., Result]
) -> None:
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--out", out, "-q").code == 0
    before = _round(out)
    case.actuals[3][1] = "abc"
    case.write()
    result = run("build", config, "--out", out)
    assert result.code == 2
    records = _records(out)
    assert [r["exit_status"] for r in records] == [0, 2]
    assert records[1]["error"] == result.stderr.strip().removeprefix("riskreport: error: ")
    assert records[1]["as_of"] == AS_OF
    assert _round(out) == before


def test_an_output_folder_that_is_a_file_is_bad_input(
    case: Case, run: Callable[..., Result]
) -> None:
    config = case.write()
    out = case.folder / "out"
    out.write_text("a file, not a folder\n")
    result = run("build", config, "--out", out)
    assert result.code == 2, result.stderr
    assert "expected an output folder" in result.stderr
    assert out.read_text() == "a file, not a folder\n"


def test_refusal_messages_name_the_subfolder_and_do_not_claim_nothing_was_written(
    tmp_path: Path,
) -> None:
    # A refused build records its failure line in runs.jsonl, so "nothing was written"
    # was untrue; a link or a changed file in tables/ was reported as if in the folder.
    out = tmp_path / "out"
    folder.write_round(out, {"tables/t-2024-12.csv": b"a\n"}, as_of=AS_OF)
    with pytest.raises(folder.OverwriteRefused) as refused:
        folder.write_round(out, {"tables/t-2024-12.csv": b"b\n"}, as_of=AS_OF)
    assert "out/tables/" in str(refused.value)
    assert "nothing was written" not in str(refused.value)
    (out / "tables" / "t-2024-12.csv").unlink()
    (out / "tables" / "t-2024-12.csv").symlink_to(tmp_path / "elsewhere.csv")
    with pytest.raises(folder.LinkRefused) as linked:
        folder.write_round(out, {"tables/t-2024-12.csv": b"b\n"}, as_of=AS_OF, force=True)
    assert str(out / "tables") in str(linked.value)
    assert "nothing was written" not in str(linked.value)
    assert not (tmp_path / "elsewhere.csv").exists()


def test_a_backtest_is_recorded_like_any_run(case: Case, run: Callable[..., Result]) -> None:
    # Every run appends one line to runs.jsonl, failures included (the product's record
    # of runs); `backtest` wrote its tables without one, and without the folder's lock.
    config = case.write()
    out = case.folder / "out"
    assert run("backtest", config, "--out", out, "-q").code == 0
    (line,) = _records(out)
    assert line["command"] == "backtest"
    assert line["exit_status"] == 0
    listed = {o["path"]: o["sha256"] for o in line["outputs"]}  # type: ignore[attr-defined]
    assert listed == {
        name: hashlib.sha256(content).hexdigest()
        for name, content in _round(out).items()
        if not name.startswith("manifest-")
    }
    (case.folder / "actuals.csv").write_text("period,value\n2020-01,abc\n", encoding="utf-8")
    failed = run("backtest", config, "--out", out, "-q")
    assert failed.code == 2
    assert _records(out)[-1]["exit_status"] == 2
    assert "abc" in str(_records(out)[-1]["error"])


def test_a_refused_build_records_its_line_while_it_holds_the_lock(
    case: Case, run: Callable[..., Result], monkeypatch: pytest.MonkeyPatch
) -> None:
    # Regression: a refused build appended its runs.jsonl line after the lock was released,
    # so another run could come between its work and its record. Oracle: a second open file
    # description of the lock file (as another process has) cannot take the lock while the
    # line is written.
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--out", out, "-q").code == 0
    case.config = case.config.replace("tolerance = 1.0", "tolerance = 1.3")
    case.write()
    held: list[bool] = []
    append = folder.append_record

    def observed(out_dir: Path, record: dict[str, object]) -> None:
        fd = os.open(out_dir / folder.LOCK_NAME, os.O_RDWR)
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            held.append(False)
        except BlockingIOError:
            held.append(True)
        finally:
            os.close(fd)
        append(out_dir, record)

    monkeypatch.setattr(folder, "append_record", observed)
    result = run("build", config, "--out", out)
    assert result.code == 2
    assert "use --force" in result.stderr
    assert held == [True]
    assert [r["exit_status"] for r in _records(out)] == [0, 2]
