"""``batch --jobs 2`` stopped by SIGTERM or SIGINT: no worker outlives it, every round in the
folders is whole, and no resource-tracker warning is printed.

Reproduction of the issue: SIGTERM to the parent of ``batch --jobs 2`` ended the parent
(exit 143) while both workers, reparented, went on writing later rounds; under ``timeout``
the run ended with "resource_tracker: 5 leaked semaphore objects". Processes are observed
through /proc (the Linux process table), so the test runs where fork and /proc exist.
"""

from __future__ import annotations

import os
import re
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from riskreport.files import folder
from tests.conftest import DEMO

pytestmark = pytest.mark.skipif(
    not Path("/proc/self/stat").exists(), reason="needs the Linux process table"
)
MONTHS = "2026-07..2026-11"


def _parent_of(pid: int) -> int | None:
    try:
        with open(f"/proc/{pid}/stat", encoding="ascii") as handle:
            fields = handle.read().rsplit(")", 1)[1].split()
    except (FileNotFoundError, ProcessLookupError):
        return None
    return int(fields[1])


def _alive(pid: int) -> bool:
    """True while ``pid`` runs (a zombie waiting for its reaper counts as gone)."""
    try:
        with open(f"/proc/{pid}/stat", encoding="ascii") as handle:
            return handle.read().rsplit(")", 1)[1].split()[0] != "Z"
    except FileNotFoundError:
        return False


def _children(pid: int) -> set[int]:
    found = set()
    for entry in os.listdir("/proc"):
        if entry.isdigit() and _parent_of(int(entry)) == pid:
            found.add(int(entry))
    return found


def _config(folder_path: Path) -> Path:
    """A copy of the demo's inputs whose brief is written (JSON and CSV only, to be quick)
    into its own folder."""
    shutil.copytree(DEMO, folder_path, ignore=shutil.ignore_patterns("__pycache__", "*.py"))
    config = folder_path / "config.toml"
    text = config.read_text("utf-8")
    text = re.sub(r"(?m)^directory = .*$", 'directory = "out"', text)
    text = re.sub(r"(?m)^formats = .*$", 'formats = ["json", "csv"]', text)
    # The plain method and fewer draws: how the batch stops is what is tested.
    text += '\n[uncertainty]\nspread = "constant"\ncentre = "forecast"\nbootstrap_replicates = 100\nsimulations = 2000\n'
    config.write_text(text, "utf-8")
    return config


def _whole(out: Path) -> int:
    """Check every round in ``out`` is whole; return how many there are."""
    if not out.exists():
        return 0
    assert list(out.glob(folder.STAGING_PREFIX + "*")) == []
    rounds = folder.rounds(out)
    for as_of in rounds:
        listed = folder.verified(out, as_of)
        assert listed is not None, as_of  # its manifest matches its files
    for assessment in out.glob("assessment-*.json"):
        as_of = assessment.stem.removeprefix("assessment-")
        assert as_of in rounds, f"{assessment.name} without its manifest: a half-switched round"
    return len(rounds)


@pytest.mark.parametrize("signum", [signal.SIGTERM, signal.SIGINT])
def test_a_stopped_batch_leaves_no_worker_and_whole_rounds(tmp_path: Path, signum: int) -> None:
    configs = [_config(tmp_path / name) for name in ("one", "two")]
    outs = [c.parent / "out" for c in configs]
    command = [sys.executable, "-m", "riskreport", "batch", *map(str, configs)]
    batch = subprocess.Popen(
        [*command, "--months", MONTHS, "--jobs", "2"],
        cwd=tmp_path,
        env={**os.environ, "MPLBACKEND": "Agg"},
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        start_new_session=True,  # its own process group, as a shell gives a command
    )
    workers: set[int] = set()
    try:
        deadline = time.monotonic() + 600
        # Stop it once a round is written and both workers are busy with later ones.
        while not (len(workers) >= 2 and any(folder.rounds(o) for o in outs)):
            assert batch.poll() is None, batch.communicate()
            assert time.monotonic() < deadline, "the batch never wrote a round"
            workers |= _children(batch.pid)
            time.sleep(0.2)
        workers |= _children(batch.pid)
        if signum == signal.SIGINT:
            os.killpg(batch.pid, signum)  # Ctrl-C: the terminal signals the whole group
        else:
            batch.send_signal(signum)  # kill, a scheduler: the parent alone
        _, stderr = batch.communicate(timeout=300)
    finally:
        if batch.poll() is None:
            batch.kill()
    assert len(workers) >= 2
    # The parent waited for its workers: when it is gone, so are they (none reparented).
    assert [pid for pid in workers if _alive(pid)] == []
    assert batch.returncode == 1, stderr
    assert ("stopped by SIGTERM" if signum == signal.SIGTERM else "interrupted") in stderr
    assert "Traceback" not in stderr
    assert "resource_tracker" not in stderr
    assert "leaked" not in stderr
    written = sum(_whole(out) for out in outs)
    assert 1 <= written < 10  # stopped part-way, every round whole
