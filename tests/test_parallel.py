"""The second core (riskreport.processes.parallel): a forked child gives exactly the serial results.

The oracle throughout is the serial path (``RISKREPORT_WORKERS=1``): the same functions
run one after the other in one process.
"""

from __future__ import annotations

import multiprocessing
import os
import subprocess
import sys
import threading
import time
import warnings
from collections.abc import Callable
from pathlib import Path

import pytest

from riskreport.errors import InputError, RiskReportWarning
from riskreport.processes import parallel
from tests.conftest import Case, Result

FORKS = "fork" in multiprocessing.get_all_start_methods()
needs_fork = pytest.mark.skipif(not FORKS, reason="no fork on this platform")


@pytest.fixture
def two(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv(parallel.ENV, "2")


@needs_fork
def test_the_other_piece_runs_in_a_child(two: None) -> None:
    here, there = parallel.both(os.getpid, os.getpid)
    assert here == os.getpid()
    assert there != os.getpid()  # it really ran elsewhere
    assert multiprocessing.active_children() == []


def test_one_worker_runs_both_here(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv(parallel.ENV, "1")
    assert parallel.both(os.getpid, os.getpid) == (os.getpid(), os.getpid())
    monkeypatch.setenv(parallel.ENV, "many")
    assert parallel.workers() == 1


def test_library_use_stays_serial_unless_asked(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv(parallel.ENV, raising=False)
    parallel.configure(enabled=False)
    assert parallel.workers() == 1


def test_a_running_thread_keeps_it_serial(two: None) -> None:
    release = threading.Event()
    waiting = threading.Thread(target=release.wait)
    waiting.start()
    try:
        assert parallel.workers() == 1
    finally:
        release.set()
        waiting.join()
    if FORKS:
        assert parallel.workers() == 2


def _bad_period() -> None:
    raise InputError("expected a period like 2024-05", file="forecasts.csv", row=7, column="period")


@pytest.mark.parametrize("workers", ["1", "2"])
def test_an_input_error_in_the_child_surfaces_as_in_the_serial_path(
    monkeypatch: pytest.MonkeyPatch, workers: str
) -> None:
    monkeypatch.setenv(parallel.ENV, workers)
    with pytest.raises(InputError) as raised:
        parallel.both(lambda: 1, _bad_period)
    assert str(raised.value) == str(_capture(_bad_period))
    assert multiprocessing.active_children() == []


def _capture(task: Callable[[], object]) -> BaseException:
    try:
        task()
    except BaseException as exc:
        return exc
    raise AssertionError("no error")


@needs_fork
def test_a_failure_here_stops_the_child(two: None) -> None:
    started = time.perf_counter()

    def fails() -> None:
        raise ValueError("here first")

    with pytest.raises(ValueError, match="here first"):
        parallel.both(fails, lambda: time.sleep(30))
    assert time.perf_counter() - started < 10  # the sleeping child was not waited for
    assert multiprocessing.active_children() == []


@needs_fork
def test_warnings_of_the_child_are_given_here(two: None) -> None:
    def warns() -> int:
        warnings.warn("too few rounds at h = 3", RiskReportWarning, stacklevel=1)
        return 5

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        assert parallel.both(lambda: 4, warns) == (4, 5)
    assert [(str(w.message), w.category) for w in caught] == [
        ("too few rounds at h = 3", RiskReportWarning)
    ]


def test_split_alternates() -> None:
    assert parallel.split([0, 1, 2, 3, 4]) == ([0, 2, 4], [1, 3])


@needs_fork
def test_serial_and_parallel_builds_write_identical_files(
    monkeypatch: pytest.MonkeyPatch, run: Callable[..., Result], case: Case
) -> None:
    # Every candidate replayed (the replay's horizons split between the processes) and
    # both render halves (HTML here, PNG charts and tables in the child).
    case.config = case.config.replace('distribution = "normal"', 'distribution = "auto"')
    case.config = case.config.replace(
        'formats = ["json", "csv"]', 'formats = ["json", "csv", "html", "png"]'
    )
    config = case.write()
    made: dict[str, dict[str, bytes]] = {}
    for workers in ("1", "2"):
        monkeypatch.setenv(parallel.ENV, workers)
        out = case.folder / f"out-{workers}"
        assert run("build", config, "--out", out, "-q", "--no-cache").code == 0
        made[workers] = {
            str(p.relative_to(out)): p.read_bytes()
            for p in sorted(out.rglob("*"))
            if p.is_file() and p.name != "runs.jsonl"
        }
    assert any(name.endswith(".json") for name in made["1"])
    assert any(name.endswith(".html") for name in made["1"])
    assert made["1"] == made["2"]


@needs_fork
def test_the_cache_learns_the_same_from_a_parallel_replay(
    monkeypatch: pytest.MonkeyPatch, run: Callable[..., Result], case: Case
) -> None:
    # The child's fitted origins are recorded in the parent's cache: a second round into
    # the same folder reuses exactly as many origins either way.
    case.config = case.config.replace('distribution = "normal"', 'distribution = "auto"')
    config = case.write()
    reused: dict[str, str] = {}
    for workers in ("1", "2"):
        monkeypatch.setenv(parallel.ENV, workers)
        out = case.folder / f"out-{workers}"
        assert run("build", config, "--out", out, "--as-of", "2024-11", "-q").code == 0
        second = run("build", config, "--out", out, "-v")
        assert second.code == 0
        line = [s for s in second.stderr.splitlines() if "past origins reused" in s]
        assert line, second.stderr
        reused[workers] = line[0].split("replay: ")[1]
    assert reused["1"] == reused["2"]
    assert not reused["1"].startswith("0 ")
    assert Path(case.folder / "out-2" / ".riskreport.cache" / "replay.npz").is_file()


@needs_fork
def test_a_killed_run_leaves_no_child(tmp_path: Path) -> None:
    # A run killed outright (SIGKILL: no clean-up of its own) takes its child with it.
    pid_file = tmp_path / "child.pid"
    script = (
        "import os, time\n"
        "from riskreport.processes import parallel\n"
        "def there():\n"
        f"    open({str(pid_file)!r}, 'w').write(str(os.getpid()))\n"
        "    time.sleep(60)\n"
        "parallel.both(lambda: time.sleep(60), there)\n"
    )
    run = subprocess.Popen([sys.executable, "-c", script], env={**os.environ, parallel.ENV: "2"})
    try:
        deadline = time.monotonic() + 30
        while not pid_file.exists() or not pid_file.read_text():
            assert time.monotonic() < deadline, "the child never started"
            time.sleep(0.05)
        child = int(pid_file.read_text())
        run.kill()
        run.wait()
        deadline = time.monotonic() + 10
        while _alive(child):
            assert time.monotonic() < deadline, "the child outlived its killed parent"
            time.sleep(0.05)
    finally:
        run.kill()


def _alive(pid: int) -> bool:
    """True while ``pid`` runs (a zombie waiting for its reaper counts as gone)."""
    try:
        with open(f"/proc/{pid}/stat", encoding="ascii") as handle:
            return handle.read().rsplit(")", 1)[1].split()[0] != "Z"
    except FileNotFoundError:
        return False
