"""Thresholds beyond the band: per-period and path probabilities."""

from __future__ import annotations

import csv
import json
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

import riskreport
from riskreport.laws import thresholds
from riskreport.laws.distributions import Distribution
from tests.conftest import Case, Result


def test_per_period_probabilities_are_the_cdf_and_path_a_direct_count() -> None:
    # Oracle: scipy.stats.norm.cdf for each margin, and a direct count of paths that cross.
    rng = np.random.default_rng(3)
    margins = [stats.norm(1.0 + 0.2 * h, 0.5 + 0.1 * h) for h in range(4)]
    draws = rng.normal(1.0, 0.8, size=(5000, 4)).cumsum(axis=1) / 2
    labels = ["2025-01", "2025-02", "2025-03", "2025-04"]
    dists: list[Distribution] = margins  # type: ignore[assignment]
    (low, high) = thresholds.evaluate([0.0, 2.5], dists, draws, labels)
    for h, m in enumerate(margins):
        assert low.horizons[h].p_below == pytest.approx(m.cdf(0.0), abs=1e-12)
        assert high.horizons[h].p_above == pytest.approx(m.sf(2.5), abs=1e-12)
        assert low.horizons[h].p_below + low.horizons[h].p_above == pytest.approx(1.0)
        count_below = np.mean([np.any(row[: h + 1] < 0.0) for row in draws])
        count_above = np.mean([np.any(row[: h + 1] > 2.5) for row in draws])
        assert low.path[h].p_below_at_least_once == pytest.approx(count_below, abs=1e-12)
        assert high.path[h].p_above_at_least_once == pytest.approx(count_above, abs=1e-12)
    # at least once can only grow along the path
    assert np.all(np.diff([p.p_below_at_least_once for p in low.path]) >= 0)


def _with_thresholds(case: Case, line: str) -> Path:
    case.config = case.config.replace("tolerance = 1.0\n", f"tolerance = 1.0\n{line}\n")
    return case.write()


def test_assessment_agrees_with_band_edges_and_percentiles(case: Case) -> None:
    # Thresholds at the band edges must give the band's own F(lower) and 1 - F(upper);
    # a threshold between them must agree with the 99 stored percentiles by interpolation.
    config = _with_thresholds(case, "thresholds = [1.0, 1.6, 3.0]")
    a = riskreport.assess(config)
    lower, mid, upper = a.thresholds
    levels = np.arange(1, 100) / 100
    compared = 0
    for r in a.horizons:
        assert lower.horizons[r.h].p_below == pytest.approx(r.p_below, abs=1e-12)
        assert upper.horizons[r.h].p_above == pytest.approx(r.p_above, abs=1e-12)
        if r.percentiles[0] < mid.threshold < r.percentiles[-1]:
            interpolated = np.interp(mid.threshold, np.array(r.percentiles), levels)
            assert mid.horizons[r.h].p_below == pytest.approx(interpolated, abs=2e-3)
            compared += 1
    assert compared == len(a.horizons)
    # h = 0: "at least once by h = 0" is the per-period probability, up to simulation error
    # (2000 draws: standard error below 0.012)
    assert mid.path[0].p_below_at_least_once == pytest.approx(mid.horizons[0].p_below, abs=0.04)


def test_json_and_csv_carry_the_thresholds(
    case: Case, run: Callable[..., Result], tmp_path: Path
) -> None:
    config = _with_thresholds(case, "thresholds = [0.0, 3.5]")
    out = tmp_path / "o"
    assert run("build", config, "--out", out, "-q").code == 0
    data = json.loads((out / "assessment-2024-12.json").read_text())
    assert [t["threshold"] for t in data["thresholds"]] == [0.0, 3.5]
    first = data["thresholds"][0]
    assert set(first["horizons"][0]) == {"period", "h", "p_below", "p_above"}
    assert set(first["path"][0]) == {
        "period",
        "h",
        "p_below_at_least_once",
        "p_above_at_least_once",
    }
    with (out / "tables/thresholds-2024-12.csv").open() as handle:
        rows = list(csv.DictReader(handle))
    assert len(rows) == 2 * 4
    assert float(rows[5]["p_above"]) == pytest.approx(
        data["thresholds"][1]["horizons"][1]["p_above"]
    )


@pytest.mark.parametrize(
    ("line", "expected"),
    [
        ('thresholds = ["zero"]', "expected a list of numbers"),
        ("thresholds = [0.0, 0.0]", "expected distinct numbers"),
        ("thresholds = [500.0]", "between -100 and 100"),
        ("thresholds = [1, 2, 3, 4, 5, 6, 7, 8, 9]", "at most 8"),
        ("thresholds = 0.0", "expected a list of numbers"),
    ],
)
def test_bad_thresholds_exit_2_with_one_line(
    case: Case, run: Callable[..., Result], tmp_path: Path, line: str, expected: str
) -> None:
    config = _with_thresholds(case, line)
    result = run("build", config, "--out", tmp_path / "o")
    assert result.code == 2
    assert expected in result.stderr
    assert "[target] thresholds" in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1
    assert not (tmp_path / "o").exists()
