"""``batch --months``: each round handed to the next in memory, rendered by a worker while the
next is assessed. The files must be exactly those of rounds built one after another, each
reading the previous round's file (the reference here is the tool's own older path,
``in_memory=False``, which builds each round on its own)."""

from __future__ import annotations

import hashlib
import json
import os
import re
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from riskreport.commands import batch
from riskreport.files import folder
from riskreport.report import outputs
from tests import test_batch_stop as stop_test
from tests.conftest import DEMO

MONTHS = ["2026-09", "2026-10", "2026-11"]


def _config(where: Path) -> Path:
    """A lighter copy of the demo writing JSON and CSV (quick) into ``where/out``."""
    shutil.copytree(DEMO, where, ignore=shutil.ignore_patterns("__pycache__", "*.py"))
    config = where / "config.toml"
    text = config.read_text("utf-8")
    text = re.sub(r"(?m)^directory = .*$", 'directory = "out"', text)
    text = re.sub(r"(?m)^formats = .*$", 'formats = ["json", "csv"]', text)
    # Fewer horizons and draws than the demo: the rounds' handing-over is what is tested.
    text = re.sub(r"(?m)^horizons = .*$", "horizons = 14", text)
    text = re.sub(r"(?m)^policy_horizon = .*$", "policy_horizon = 12", text)
    text = re.sub(r"(?m)^density_horizons = .*$", "density_horizons = [6, 12]", text)
    text += '\n[uncertainty]\nspread = "constant"\ncentre = "forecast"\nbootstrap_replicates = 50\nsimulations = 1000\n'
    config.write_text(text, "utf-8")
    return config


def _digests(out: Path) -> dict[str, str]:
    """SHA-256 of every file in the folder but the run record (it holds times) and the
    replay cache (it records at which save each past origin was last used, and a round
    assessed before the previous one is written uses it one save earlier; the scores it
    holds are the same)."""
    return {
        str(p.relative_to(out)): hashlib.sha256(p.read_bytes()).hexdigest()
        for p in sorted(out.rglob("*"))
        if p.is_file() and p.name not in ("runs.jsonl", "replay.npz")
    }


def _run(config: Path, **options: object) -> tuple[list[dict[str, object]], dict[str, str]]:
    """One batch into a fresh ``out`` beside the config; its results and files' digests."""
    out = config.parent / "out"
    shutil.rmtree(out, ignore_errors=True)
    results = batch.one_config(config, MONTHS, None, False, False, **options)  # type: ignore[arg-type]
    return results, _digests(out)


def _whole(out: Path) -> list[str]:
    """Every round in ``out`` is whole (its manifest matches its files), none half-staged,
    and every line of the run record is complete; the rounds."""
    assert list(out.glob(folder.STAGING_PREFIX + "*")) == []
    rounds = folder.rounds(out)
    for as_of in rounds:
        assert folder.verified(out, as_of) is not None, as_of
    for line in (out / "runs.jsonl").read_text("utf-8").splitlines():
        json.loads(line)
    return rounds


def test_in_memory_and_pipelined_rounds_write_the_files_of_separate_builds(tmp_path: Path) -> None:
    config = _config(tmp_path / "demo")
    _, separate = _run(config, in_memory=False)
    _, in_memory = _run(config, in_memory=True, jobs=1)
    results, pipelined = _run(config, in_memory=True, jobs=2)
    assert "assessment-2026-11.json" in separate
    assert in_memory == separate
    assert pipelined == separate
    assert [r["exit_code"] for r in results] == [0, 0, 0]
    assert _whole(config.parent / "out") == MONTHS
    last = json.loads((config.parent / "out" / "assessment-2026-11.json").read_text("utf-8"))
    assert last["change"]["previous_as_of"] == "2026-10"  # the handed-over round was used
    assert len(last["round_history"]) == 3


@pytest.mark.parametrize("jobs", [1, 2])
def test_a_failing_round_in_the_middle_fails_alone(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, jobs: int
) -> None:
    config = _config(tmp_path / "demo")
    files_for = outputs.files_for

    def failing(assessment, formats):  # type: ignore[no-untyped-def]
        if assessment.as_of == "2026-10":
            raise RuntimeError("render failed")
        return files_for(assessment, formats)

    monkeypatch.setattr(outputs, "files_for", failing)  # a forked worker inherits it
    _, separate = _run(config, in_memory=False)
    results, files = _run(config, in_memory=True, jobs=jobs)
    assert [r["exit_code"] for r in results] == [0, 1, 0]
    assert "render failed" in str(results[1]["error"])
    out = config.parent / "out"
    assert _whole(out) == ["2026-09", "2026-11"]
    # The round after the failure compares with the last round in the folder, as a
    # build of its own does, not with the assessment that failed to be written.
    last = json.loads((out / "assessment-2026-11.json").read_text("utf-8"))
    assert last["change"]["previous_as_of"] == "2026-09"
    assert files == separate


@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="needs the Linux process table")
def test_a_stopped_pipelined_batch_leaves_no_worker_and_whole_rounds(tmp_path: Path) -> None:
    config = _config(tmp_path / "demo")
    out = config.parent / "out"
    process = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "riskreport",
            "batch",
            str(config),
            "--months",
            "2026-07..2026-11",
            "--jobs",
            "2",
        ],
        cwd=tmp_path,
        env={**os.environ, "MPLBACKEND": "Agg"},
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        start_new_session=True,
    )
    seen: set[int] = set()
    try:
        deadline = time.monotonic() + 600
        while not folder.rounds(out):  # stop it once a round is written
            assert process.poll() is None, process.communicate()
            assert time.monotonic() < deadline, "the batch never wrote a round"
            seen |= stop_test._children(process.pid)
            time.sleep(0.1)
        seen |= stop_test._children(process.pid)
        process.send_signal(signal.SIGTERM)
        _, stderr = process.communicate(timeout=300)
    finally:
        if process.poll() is None:
            process.kill()
    assert [pid for pid in seen if stop_test._alive(pid)] == []
    assert process.returncode == 1, stderr
    assert "stopped by SIGTERM" in stderr
    assert "Traceback" not in stderr
    assert 1 <= stop_test._whole(out) < 5  # stopped part-way, every round whole
