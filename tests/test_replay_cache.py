"""The cache beside the outputs: a cached build gives exactly the numbers of a fresh one.

The oracle throughout is the fresh computation (an independent route: the same replay run
without the cache, in a folder of its own, with ``--no-cache``).
"""

from __future__ import annotations

import json
import re
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest

from riskreport.pipeline import assess
from riskreport.replay import cache as replay_cache
from riskreport.replay import calibration
from tests.conftest import Case, Result

FAMILIES = ("normal", "two-piece-normal", "skew-normal", "empirical")


def _horizon_data(
    rng: np.random.Generator, n: int = 90, width: int = 40
) -> calibration.HorizonData:
    """Skewed samples with ragged NaN padding, like early replay origins."""
    train = rng.gamma(3.0, 0.5, size=(n, width)) - 1.5 + rng.normal(0, 0.5, size=(n, width))
    sizes = rng.integers(20, width + 1, size=n)
    train[np.arange(width)[None, :] >= sizes[:, None]] = np.nan
    test = rng.normal(0, 1.5, size=n)
    point = rng.normal(0, 0.5, size=n)
    return calibration.HorizonData(
        h=2,
        tests=np.arange(n) + 30,
        train=train,
        test=test,
        lower=-1 - point,
        upper=1 - point,
        category=rng.integers(0, 3, size=n),
        climatology=np.full((n, 3), 1 / 3),
    )


@pytest.mark.parametrize("family", FAMILIES)
@pytest.mark.parametrize("mode", [None, 0.0])
def test_an_origin_scores_the_same_in_any_batch(
    family: str, mode: float | None, rng: np.random.Generator
) -> None:
    """The cache reuses single origins, so an origin's replayed scores must not depend on
    the other origins fitted with it: the whole batch, split at arbitrary rows, gives
    identical bits (independent route: the unsplit batch)."""
    data = _horizon_data(rng)
    scale = rng.uniform(0.5, 2.0, size=data.tests.size)
    for spread in (None, scale):
        whole = calibration.replay_horizon(family, data, mode=mode, scale=spread)  # type: ignore[arg-type]
        for rows in (np.arange(0, 7), np.arange(7, 61), np.array([61]), np.arange(62, 90)):
            part = calibration.replay_horizon(
                family,  # type: ignore[arg-type]
                replay_cache._rows(data, rows),
                mode=mode,
                scale=None if spread is None else spread[rows],
            )
            for name in ("pit", "probabilities", "log_score", "crps"):
                np.testing.assert_array_equal(getattr(part, name), getattr(whole, name)[rows])


AUTO = 'distribution = "auto"\nspread = "auto"\nwindow_choice = "auto"\nrecalibrate = true\n'


def _auto(case: Case) -> Path:
    # Every adaptive path the cache must get right, the bias-corrected replays included.
    case.config = case.config.replace('distribution = "normal"\n', AUTO).replace(
        'centre = "forecast"\n', 'centre = "auto"\n'
    )
    return case.write()


def _reused(stderr: str) -> tuple[int, int]:
    found = re.search(r"replay: (\d+) past origins reused, (\d+) fitted", stderr)
    assert found, stderr
    return int(found.group(1)), int(found.group(2))


def _json(out: Path, as_of: str) -> bytes:
    return (out / f"assessment-{as_of}.json").read_bytes()


def test_a_later_round_and_a_rerun_equal_fresh_builds(
    case: Case, tmp_path: Path, run: Callable[..., Result]
) -> None:
    config = _auto(case)
    cached, fresh = tmp_path / "cached", tmp_path / "fresh"
    for as_of in ("2024-11", "2024-12"):
        assert run("build", config, "--out", fresh, "--as-of", as_of, "--no-cache").code == 0
        result = run("build", config, "--out", cached, "--as-of", as_of, "-v")
        assert result.code == 0
        assert _json(cached, as_of) == _json(fresh, as_of)
    reused, fitted = _reused(result.stderr)
    assert reused > 0
    assert fitted < reused / 10  # only the origins whose outcome arrived in 2024-11
    assert not (fresh / replay_cache.FOLDER).exists()
    # An identical re-run: nothing is computed, the round is untouched, the run recorded.
    before = {p: p.read_bytes() for p in cached.rglob("*") if p.is_file()}
    again = run("build", config, "--out", cached, "--as-of", "2024-12", "--json")
    assert again.code == 0
    assert "up to date" in again.stderr
    summary = json.loads(again.stdout)
    first = json.loads(run("build", config, "--out", fresh, "--as-of", "2024-12", "--json").stdout)
    assert summary["headline"] == first["headline"]
    assert [o["sha256"] for o in summary["outputs"]] == [o["sha256"] for o in first["outputs"]]
    after = {p: p.read_bytes() for p in cached.rglob("*") if p.is_file()}
    runs = cached / "runs.jsonl"
    assert {p: c for p, c in after.items() if p != runs} == {
        p: c for p, c in before.items() if p != runs
    }
    last = json.loads(runs.read_text("utf-8").splitlines()[-1])
    assert last["exit_status"] == 0
    assert len(last["outputs"]) == len(summary["outputs"])


def test_a_revised_past_outcome_is_refitted(
    case: Case, tmp_path: Path, run: Callable[..., Result]
) -> None:
    config = _auto(case)
    cached, fresh = tmp_path / "cached", tmp_path / "fresh"
    assert run("build", config, "--out", cached, "--as-of", "2024-11").code == 0
    assert run("build", config, "--out", fresh, "--as-of", "2024-11", "--no-cache").code == 0
    row = next(i for i, r in enumerate(case.actuals) if r[0] == "2021-06")
    case.actuals[row] = ["2021-06", f"{float(case.actuals[row][1]) + 0.8:.3f}"]
    case.write()
    result = run("build", config, "--out", cached, "--as-of", "2024-12", "-v")
    assert result.code == 0
    assert run("build", config, "--out", fresh, "--as-of", "2024-12", "--no-cache").code == 0
    assert _json(cached, "2024-12") == _json(fresh, "2024-12")
    _, fitted = _reused(result.stderr)
    assert fitted > 100  # every origin whose window holds the revised outcome was refitted


def test_the_api_writes_nothing_and_gives_the_same_numbers(case: Case, tmp_path: Path) -> None:
    config = _auto(case)
    out = tmp_path / "out"
    out.mkdir()
    cache = replay_cache.ReplayCache.load(out)
    first = assess(config, as_of="2024-11", cache=cache)
    second = assess(config, as_of="2024-12", cache=cache)
    assert cache.hits > 0
    assert list(out.iterdir()) == []
    plain = assess(config, as_of="2024-12")
    assert second.to_json() == plain.to_json()
    assert first.as_of == "2024-11"


def test_a_damaged_cache_is_ignored(case: Case, tmp_path: Path, run: Callable[..., Result]) -> None:
    config = _auto(case)
    cached, fresh = tmp_path / "cached", tmp_path / "fresh"
    assert run("build", config, "--out", cached, "--as-of", "2024-11").code == 0
    assert run("build", config, "--out", fresh, "--as-of", "2024-11", "--no-cache").code == 0
    folder = cached / replay_cache.FOLDER
    content = (folder / replay_cache.REPLAY_NAME).read_bytes()
    (folder / replay_cache.REPLAY_NAME).write_bytes(content[: len(content) // 2])
    (folder / replay_cache.BUILDS_NAME).write_text("{not json", "utf-8")
    result = run("build", config, "--out", cached, "--as-of", "2024-12")
    assert result.code == 0
    assert "ignored the replay cache" in result.stderr
    assert run("build", config, "--out", fresh, "--as-of", "2024-12", "--no-cache").code == 0
    assert _json(cached, "2024-12") == _json(fresh, "2024-12")
    # The damaged file was replaced by a readable one.
    assert replay_cache.ReplayCache.load(cached)._tables


@pytest.mark.parametrize("column", [0, 2, 4])  # a PIT, P(inside), a log score
def test_cached_values_no_replay_makes_are_not_trusted(
    case: Case, tmp_path: Path, run: Callable[..., Result], column: int
) -> None:
    # A readable cache whose values no replay could make (a PIT of -4, a probability over
    # 1, an infinite log score) was used as it was and moved the published numbers.
    config = _auto(case)
    cached, fresh = tmp_path / "cached", tmp_path / "fresh"
    assert run("build", config, "--out", cached, "--as-of", "2024-11").code == 0
    assert run("build", config, "--out", fresh, "--as-of", "2024-11", "--no-cache").code == 0
    path = cached / replay_cache.FOLDER / replay_cache.REPLAY_NAME
    with np.load(path, allow_pickle=False) as data:
        arrays = {name: data[name] for name in data.files}
    values = arrays["values0"].copy()
    values[:, column] = {0: -4.0, 2: 1.5, 4: -np.inf}[column]
    arrays["values0"] = values
    with path.open("wb") as handle:
        np.savez(handle, **arrays)
    result = run("build", config, "--out", cached, "--as-of", "2024-12")
    assert result.code == 0
    assert "ignored the replay cache" in result.stderr
    assert run("build", config, "--out", fresh, "--as-of", "2024-12", "--no-cache").code == 0
    assert _json(cached, "2024-12") == _json(fresh, "2024-12")


def test_a_cache_folder_that_is_a_link_is_not_used(
    case: Case, tmp_path: Path, run: Callable[..., Result]
) -> None:
    config = case.write()
    out, elsewhere = tmp_path / "out", tmp_path / "elsewhere"
    out.mkdir()
    elsewhere.mkdir()
    (out / replay_cache.FOLDER).symlink_to(elsewhere)
    for _ in range(2):
        result = run("build", config, "--out", out)
        assert result.code == 0
        assert "not a plain folder" in result.stderr
    assert list(elsewhere.iterdir()) == []


def test_an_altered_round_is_built_again(
    case: Case, tmp_path: Path, run: Callable[..., Result]
) -> None:
    """The re-run shortcut trusts a round only while it holds exactly the files it wrote."""
    config = case.write()
    out = tmp_path / "out"
    assert run("build", config, "--out", out).code == 0
    table = next((out / "tables").iterdir())
    content = table.read_bytes()
    table.unlink()
    result = run("build", config, "--out", out)
    assert result.code == 0
    assert "up to date" not in result.stderr
    assert table.read_bytes() == content


def test_a_batch_of_months_equals_fresh_builds(
    case: Case, tmp_path: Path, run: Callable[..., Result]
) -> None:
    config = case.write()
    cached, fresh = tmp_path / "cached", tmp_path / "fresh"
    months = "2024-09..2024-12"
    assert run("batch", config, "--months", months, "--out", cached).code == 0
    assert run("batch", config, "--months", months, "--out", fresh, "--no-cache").code == 0
    for as_of in ("2024-09", "2024-10", "2024-11", "2024-12"):
        assert _json(cached, as_of) == _json(fresh, as_of)


def test_other_software_starts_afresh(
    case: Case, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    config = _auto(case)
    out = tmp_path / "out"
    out.mkdir()
    cache = replay_cache.ReplayCache(out)
    assess(config, as_of="2024-11", cache=cache)
    cache.save()
    assert replay_cache.ReplayCache.load(out)._tables
    monkeypatch.setattr(replay_cache, "fingerprint", lambda: "other software")
    assert not replay_cache.ReplayCache.load(out)._tables
