"""Track records that real institutions have: short histories, gaps, identical forecasts.

The long-run variance of h-step errors uses h - 1 autocovariances, and gamma_k needs
k < T (statsmodels.tsa.stattools.acovf only returns lags below the sample size); with
fewer rows than that the tests used to crash the whole brief.
"""

from __future__ import annotations

import dataclasses
import json
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest

import riskreport
from riskreport.forecasts.fixed_smoothing import TOO_FEW
from riskreport.laws import probabilities
from riskreport.report import tables
from riskreport.report.sections import calibration, track_record
from tests.conftest import Case, Result, constant_forecast_world


def test_short_history_skips_long_horizon_tests_with_a_note(tmp_path: Path) -> None:
    # 40 months of history and 20 horizons: at h = 20 only 19 rounds have an outcome, fewer
    # than the 20 lags the 21-step test needs. It crashed (exit 1); now it is skipped and
    # the brief says so.
    errors = np.random.default_rng(5).normal(0, 0.5, 40)
    config = constant_forecast_world(tmp_path, errors, horizons=20)
    a = riskreport.assess(config)
    tested = {t.horizon for t in a.tests}
    assert 0 in tested
    # Far ahead the few rounds hold too few independent outcomes: the tests decline (no
    # p-value, a note) and the brief says so in words, never a verdict.
    far = [t for t in a.tests if t.horizon >= 10]
    assert far
    assert all(np.isnan(t.pvalue) and t.notes[0].startswith(TOO_FEW) for t in far)
    lines = track_record.tests_text(a, (0, 12, 18))
    assert any(line.startswith("Too few independent outcomes at 12 and 18") for line in lines)


def test_gap_in_the_actuals_builds(tmp_path: Path) -> None:
    # Three years of outcomes missing in the middle of a 70-month record: at h = 20 only 13
    # rounds have an outcome, fewer than the test's 20 lags (it crashed; now skipped).
    errors = np.random.default_rng(6).normal(0, 0.5, 70)
    config = constant_forecast_world(tmp_path, errors, horizons=24)
    actuals = (tmp_path / "a.csv").read_text().splitlines()
    kept = actuals[:31] + actuals[67:]
    (tmp_path / "a.csv").write_text("\n".join(kept) + "\n")
    a = riskreport.assess(config)
    assert len(a.horizons) == 25
    assert all(np.isnan(t.pvalue) for t in a.tests if t.horizon == 20)


def test_bootstrap_interval_is_not_a_point_for_a_thin_far_horizon() -> None:
    # 20 errors at h = 24: blocks of h + 1 = 25 rows were cut to the whole sample, so every
    # replicate was the sample itself and the interval had zero width.
    from riskreport.laws import distributions

    errors = np.random.default_rng(7).normal(0, 1, 20)
    fit = distributions.fit("normal", errors)
    lo, hi = probabilities.bootstrap_p_inside(
        errors,
        fit,
        -1.0,
        1.0,
        h=24,
        family="normal",
        mode=None,
        replicates=200,
        rng=np.random.default_rng(0),
    )
    assert hi - lo > 0.01
    p = float(fit.cdf(1.0) - fit.cdf(-1.0))
    assert lo <= p <= hi or p == pytest.approx(lo, abs=0.05)


def test_identical_forecasts_are_reported_as_undefined(case: Case, tmp_path: Path) -> None:
    # Three models with identical forecasts: each equals the equal-weight combination, so
    # every loss differential against it is 0 at every round. DM is 0/0 (Diebold & Mariano
    # 1995): the brief used to print p = 1 and blame a negative long-run variance.
    values = {(r[0], r[1]): r[3] for r in case.forecasts[1:] if r[2] == "a"}
    case.forecasts = [case.forecasts[0]] + [
        [r[0], r[1], r[2], values[(r[0], r[1])]] for r in case.forecasts[1:]
    ]
    a = riskreport.assess(case.write())
    against = [t for t in a.tests if t.name == "diebold-mariano" and t.models[1] == "combination"]
    assert against
    assert all(np.isnan(t.pvalue) for t in against)
    assert all(np.isnan(t.pvalue) for t in a.tests if t.name == "mariano-preve")
    text = " ".join(track_record.tests_text(a, (0, 1, 2, 3)))
    assert "could not be computed" in text
    assert "came out negative" not in text
    # Undefined tests support no verdict (the brief used to add "no model's accuracy
    # differs significantly", "not rejected" and "encompasses every model").
    assert "differs significantly" not in text
    assert "not rejected" not in text
    assert "encompasses every model" not in text
    data = json.loads(a.to_json())
    assert all(t["pvalue"] is None for t in data["tests"] if t["models"][1] == "combination")
    assert any("undefined" in line for line in tables.track_record_text(a))


def test_tests_not_run_are_not_reported_as_not_significant(tmp_path: Path) -> None:
    # Regression: with every test skipped (too few past rounds) the brief still said no
    # model "differs significantly", that the combination "encompasses every model at these
    # horizons" and beats the no-change forecast at "none of these horizons".
    config = constant_forecast_world(tmp_path, np.random.default_rng(1).normal(size=8), horizons=3)
    a = riskreport.assess(config)
    assert not [t for t in a.tests if np.isfinite(t.pvalue)]
    text = " ".join(track_record.tests_text(a, (0, 1, 2, 3)))
    assert "No accuracy test could be computed" in text
    for claim in ("differs significantly", "these horizons (HLN", "none of these horizons"):
        assert claim not in text
    # Some horizons tested, others skipped: the verdicts name the horizons tested.
    errors = np.random.default_rng(5).normal(0, 0.5, 40)
    (tmp_path / "b").mkdir()
    a = riskreport.assess(constant_forecast_world(tmp_path / "b", errors, horizons=20))
    spoke = {t.horizon for t in a.tests if np.isfinite(t.pvalue)}
    assert 0 in spoke
    assert 20 not in spoke
    text = " ".join(track_record.tests_text(a, (0, 20)))
    assert "Too few independent outcomes at 20 months ahead" in text
    assert "these horizons" not in text
    assert "0 months ahead" in text
    assert "h = 20" not in text


def test_borrowing_skips_a_neighbour_with_no_spread() -> None:
    # A thin horizon borrows its neighbours' errors rescaled by their root mean square; a
    # neighbour whose errors are all 0 gave 0/0 = NaN errors to the fit.
    from riskreport.laws.uncertainty import _borrow

    columns = [np.array([0.3, -0.2, 0.1]), np.zeros(6), np.array([0.5, -0.4, 0.2, -0.1, 0.3])]
    pooled, used = _borrow(columns, 0, 8)
    assert np.all(np.isfinite(pooled))
    assert used == [2]
    rms = np.sqrt(np.mean(columns[0] ** 2))
    assert np.sqrt(np.mean(pooled[3:] ** 2)) == pytest.approx(rms)


def test_too_short_a_record_to_replay_is_said_not_hidden(
    tmp_path: Path, run: Callable[..., Result]
) -> None:
    # Seven past rounds: enough to fit an error law at each horizon, too few for any past
    # round to be replayed. It used to crash (exit 1) and, before that, the brief claimed the
    # 90% ranges "held about as often as they should" with nothing replayed.
    config = constant_forecast_world(tmp_path, np.random.default_rng(1).normal(size=8), horizons=3)
    config.write_text(config.read_text() + '[output]\nformats = ["html", "json"]\n')
    result = run("build", config, "--out", tmp_path / "out", "-q")
    assert result.code == 0, result.stderr
    html = next((tmp_path / "out").glob("brief-*.html")).read_text(encoding="utf-8")
    assert "too few past rounds to replay the method" in html
    assert "about as often as they should" not in html
    assert "does not reject calibration" not in html


def test_undefined_calibration_tests_support_no_verdict(case: Case) -> None:
    # A calibration test with no value (constant PITs: Berkowitz's likelihood ratio is
    # unbounded, Knueppel's covariance singular) must not read as "does not reject": NaN
    # compares false with the 5% level, and the brief used to print exactly that.
    a = riskreport.assess(case.write())
    tests = tuple(
        dataclasses.replace(t, statistic=float("nan"), pvalue=float("nan"), notes=("no variation",))
        for t in a.calibration.tests
    )
    assert tests
    broken = dataclasses.replace(a, calibration=dataclasses.replace(a.calibration, tests=tests))
    shown = tuple(r.h for r in a.horizons)
    text = " ".join(calibration.calibration(broken, shown)[0])
    assert "does not reject" not in text
    assert "rejects" not in text
    assert "could not be computed" in text
    assert "p = nan" not in text


def test_two_assessments_in_two_threads_keep_their_own_warnings(tmp_path: Path) -> None:
    # warnings.catch_warnings swaps process-wide state; two assessments at once in two
    # threads used to take each other's warnings (a brief listing another brief's warning).
    from concurrent.futures import ThreadPoolExecutor

    from tests.conftest import make_case

    (tmp_path / "quiet").mkdir()
    (tmp_path / "warned").mkdir()
    quiet = make_case(tmp_path / "quiet")
    warned = make_case(tmp_path / "warned")
    # Model c gives no forecast in the current round: a warning in that brief only.
    warned.forecasts = [r for r in warned.forecasts if not (r[2] == "c" and r[0] == "2024-12")]
    paths = [quiet.write(), warned.write()]
    with ThreadPoolExecutor(2) as pool:
        for _ in range(4):  # a race: without the lock it failed about one run in three
            a, b = pool.map(riskreport.assess, paths)
            assert not any("has no forecast in the current round" in w for w in a.warnings)
            assert any("has no forecast in the current round" in w for w in b.warnings)
