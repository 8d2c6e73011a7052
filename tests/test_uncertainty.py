"""Uncertainty engine properties: auto choice, thin horizons, given quantiles, annual bases."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

import riskreport
from riskreport.assessment import Quantiles
from riskreport.laws.annual import annual
from riskreport.laws.distributions import FAMILIES, NormalFit, fit_batch
from riskreport.reading.config import Band
from riskreport.reading.periods import parse
from riskreport.replay import calibration, selection
from tests.conftest import Case, Result, constant_forecast_world


def test_auto_prefers_a_skewed_family_for_skewed_errors(rng: np.random.Generator) -> None:
    # Errors from a strongly skewed two-piece normal: out-of-sample log score must rank a
    # skewed family above the normal.
    n = 400
    u = rng.random(n)
    sigma1, sigma2 = 0.3, 1.2
    split = sigma1 / (sigma1 + sigma2)
    z = np.where(
        u < split,
        sigma1 * stats.norm.ppf(u * (sigma1 + sigma2) / (2 * sigma1)),
        sigma2 * stats.norm.ppf((u * (sigma1 + sigma2) + sigma2 - sigma1) / (2 * sigma2)),
    )
    choice = selection.select({(f, 0): _replay(f, z) for f in FAMILIES})
    assert choice.chosen != "normal"
    assert choice.total["two-piece-normal"] > choice.total["normal"]
    assert choice.total["skew-normal"] > choice.total["normal"]
    assert choice.runner_up is not None


def _replay(family: str, errors: np.ndarray) -> calibration.HorizonReplay:
    tests, train, test = calibration.training(errors[:, None], 0, 0)
    fitted = fit_batch(family, train)
    logs = np.asarray(fitted.logpdf(test))
    empty = np.zeros((tests.size, 3))
    return calibration.HorizonReplay(family, 0, tests, test, empty, tests, empty, logs, logs)


def test_replay_trains_only_on_earlier_outcomes() -> None:
    errors = np.arange(100, dtype=float)[:, None].repeat(4, axis=1)
    for window in (0, 30):
        tests, train, test = calibration.training(errors, 3, window)
        assert tests.size == 100 - 4 - calibration.MIN_TRAINING + 1
        for row, value in zip(train, test, strict=True):
            # Test error of origin j is j; training origins o' must satisfy o' + 3 <= j - 1.
            assert np.nanmax(row) == value - 4
            assert window == 0 or np.sum(np.isfinite(row)) <= window


def test_thin_horizon_borrows_with_a_warning(case: Case) -> None:
    # Keep horizon 3 only from 2023-09 on: about 12 known errors, below min_errors = 20,
    # so it borrows from its neighbour h = 2.
    rows = case.forecasts[1:]
    h3 = {tuple(r) for r in rows if int(r[1][-2:]) - int(r[0][-2:]) in (3, -9)}
    case.forecasts = [case.forecasts[0]] + [
        r for r in rows if tuple(r) not in h3 or r[0] >= "2023-09"
    ]
    a = riskreport.assess(case.write())
    assert a.horizons[3].n_errors < 20
    assert any("borrow" in w for w in a.warnings)
    assert "borrowing" in a.uncertainty.families[3].source


def test_error_quantiles_route(case: Case, run: Callable[..., Result]) -> None:
    rows = ["horizon,quantile,value"]
    for h in range(4):
        for q in (0.05, 0.25, 0.5, 0.75, 0.95):
            rows.append(f"{h},{q},{stats.norm.ppf(q, 0.0, 0.5 + 0.1 * h):.6f}")
    (case.folder / "eq.csv").write_text("\n".join(rows) + "\n")
    case.config = case.config.replace(
        'actuals = "actuals.csv"', 'actuals = "actuals.csv"\nerror_quantiles = "eq.csv"'
    )
    a = riskreport.assess(case.write())
    for r in a.horizons:
        assert r.distribution == "given-quantiles"
        assert r.quantiles.q50 == pytest.approx(r.point_forecast, abs=1e-9)
        truth = stats.norm(r.point_forecast, 0.5 + 0.1 * r.h)
        assert r.p_inside == pytest.approx(truth.cdf(r.band[1]) - truth.cdf(r.band[0]), abs=1e-6)
    # Bad quantile files get the usual one-line error.
    (case.folder / "eq.csv").write_text("horizon,quantile,value\n0,0.25,1.0\n0,0.75,0.5\n")
    result = run("check", case.config_path)
    assert result.code == 2
    assert "eq.csv, row 3, column 'value'" in result.stderr
    (case.folder / "eq.csv").write_text("horizon,quantile,value\n0,1.5,1.0\n0,0.75,0.5\n")
    assert "column 'quantile'" in run("check", case.config_path).stderr


def test_calendar_year_average_with_observed_months() -> None:
    # 11 months observed at 2.0; December simulated from N(3, 1): the average is inside
    # [1.5, 2.5] iff December is in [12 * 1.5 - 22, 12 * 2.5 - 22] = [-4, 8] -> scipy.
    dec = parse("2026-12").ordinal
    known = {parse(f"2026-{m:02d}").ordinal: 2.0 for m in range(1, 12)}
    draws = np.random.default_rng(5).normal(3.0, 1.0, (200_000, 1))
    out = annual(draws, [dec], known, "monthly", lambda _: Band(1.5, 2.5))
    average = next(r for r in out if r.basis == "calendar-year-average")
    truth = stats.norm(3, 1)
    assert average.p_inside == pytest.approx(truth.cdf(8) - truth.cdf(-4), abs=1e-3)
    assert average.observed_periods == 11
    year_end = next(r for r in out if r.basis == "year-end")
    assert year_end.p_inside == pytest.approx(truth.cdf(2.5) - truth.cdf(1.5), abs=4e-3)


def test_annual_results_in_the_assessment(case: Case) -> None:
    case.config = case.config.replace(
        "tolerance = 1.0", 'tolerance = 1.0\nbasis = "calendar-year-average"'
    )
    a = riskreport.assess(case.write())
    assert a.target.basis == "calendar-year-average"
    bases = {(r.year, r.basis) for r in a.annual}
    # as_of 2024-12 with h = 0..3: 2024 is complete (Jan-Nov observed, Dec simulated);
    # 2025 is not (only Jan-Mar are reported), so it is left out.
    assert bases == {(2024, "calendar-year-average"), (2024, "year-end")}
    for r in a.annual:
        assert r.p_below + r.p_inside + r.p_above == pytest.approx(1.0)


@pytest.mark.parametrize("family", ["two-piece-normal", "skew-normal", "empirical"])
def test_families_through_the_whole_pipeline(case: Case, family: str) -> None:
    # The spread pinned constant: by default a family with a time-varying spread option
    # (the two-piece normal) is pooled over its spreads, and the horizon's law is the pool.
    case.config = case.config.replace(
        'distribution = "normal"', f'distribution = "{family}"\nspread = "constant"'
    )
    a = riskreport.assess(case.write())
    for r in a.horizons:
        assert r.distribution == family
        assert r.p_below + r.p_inside + r.p_above == pytest.approx(1.0, abs=1e-9)
        lo, hi = r.p_inside_interval
        assert 0 <= lo <= hi <= 1


def test_target_schedule_changes_the_band_from_its_period(case: Case) -> None:
    case.config = case.config.replace(
        "tolerance = 1.0",
        'tolerance = 1.0\nschedule = [{from = "2025-02", midpoint = 1.5, tolerance = 0.5}]',
    )
    a = riskreport.assess(case.write())
    for r in a.horizons:
        expected = (1.0, 3.0) if r.period < "2025-02" else (1.0, 2.0)
        assert r.band == expected
    assert a.target.schedule[0].start == "2025-02"


def test_two_piece_errors_from_a_known_law(tmp_path: Path) -> None:
    """Errors drawn from a two-piece normal (mode 0.2, sigma1 0.4, sigma2 0.9): the fitted
    band probabilities land within sampling error of the true ones (the two-piece normal CDF,
    Wallis 2014, Statistical Science 29(1):106-112)."""
    from riskreport.laws.distributions import Tilted

    rng = np.random.default_rng(99)
    truth = Tilted(NormalFit(loc=0.2, scale=0.65, loglik=0.0, nobs=1), (0.9 - 0.4) / 1.3)
    n = 400
    config = constant_forecast_world(
        tmp_path, truth.rvs(n + 1, rng), distribution="two-piece-normal", band=(1.8, 3.0)
    )
    result = riskreport.assess(config).horizons[0]
    p_true = float(truth.cdf(1.0) - truth.cdf(-0.2))  # band [1.8, 3.0] minus the forecast 2.0
    se = np.sqrt(p_true * (1 - p_true) / n)
    assert result.p_inside == pytest.approx(p_true, abs=3 * se)
    assert result.p_below == pytest.approx(float(truth.cdf(-0.2)), abs=3 * se)


def test_given_error_quantiles_are_used_exactly_as_given(case: Case) -> None:
    # Regression: the monotone-spread rule widened a given range (a given h = 6 range of
    # -3.8 to +1.0 came out as -5.3 to +1.7) and n_errors was printed for it. A given
    # distribution is used as given: its quantiles must reproduce the file. Here h = 2 is
    # given narrower than the learned h = 1, which the old rule would have widened.
    levels = (0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95)
    values = (-0.38, -0.3, -0.17, -0.08, 0.0, 0.07, 0.1)  # the shape, a tenth as wide
    rows = ["horizon,quantile,value"] + [f"2,{q},{v}" for q, v in zip(levels, values, strict=True)]
    (case.folder / "eq.csv").write_text("\n".join(rows) + "\n")
    case.config = case.config.replace(
        'actuals = "actuals.csv"', 'actuals = "actuals.csv"\nerror_quantiles = "eq.csv"'
    )
    a = riskreport.assess(case.write())
    r = a.horizons[2]
    assert r.distribution == "given-quantiles"
    assert Quantiles.levels() == levels
    got = [v - r.point_forecast for _, v in r.quantiles.items()]
    assert got == pytest.approx(values, abs=1e-9)
    assert r.n_errors is None
    assert [x.n_errors is None for x in a.horizons] == [False, False, True, False]
    # The learned horizons still obey the rule among themselves (h = 3 no narrower than h = 1).
    width = {h: a.horizons[h].quantiles.q95 - a.horizons[h].quantiles.q05 for h in (1, 3)}
    assert width[3] >= width[1] - 1e-9
    assert any("given (error_quantiles) for horizons 2" in w and "exactly" in w for w in a.warnings)
    from riskreport.report import context

    c = context.build(a, {}, "run")
    facts = {k.label: k.value for k in c.method.facts.rows}
    assert facts["Given error distribution"].startswith("2 months ahead")
    assert "given at 2 months ahead" in facts["Past errors per horizon"]


@pytest.mark.parametrize("method", ["tracking", "beta"])
def test_recalibration_leaves_a_given_distribution_as_given(case: Case, method: str) -> None:
    # Regression: with recalibrate = true the replay's map (learned on the learned method's
    # PITs) was also applied at a horizon whose distribution the user gave; a given
    # distribution is used exactly as given (its quantiles reproduce the file).
    levels = (0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95)
    values = (-0.38, -0.3, -0.17, -0.08, 0.0, 0.07, 0.1)
    rows = ["horizon,quantile,value"] + [f"2,{q},{v}" for q, v in zip(levels, values, strict=True)]
    (case.folder / "eq.csv").write_text("\n".join(rows) + "\n")
    case.config = case.config.replace(
        'actuals = "actuals.csv"', 'actuals = "actuals.csv"\nerror_quantiles = "eq.csv"'
    ).replace("window = 0", f'window = 0\nrecalibrate = true\nrecalibration = "{method}"')
    a = riskreport.assess(case.write())
    r = a.horizons[2]
    assert Quantiles.levels() == levels
    got = [v - r.point_forecast for _, v in r.quantiles.items()]
    assert got == pytest.approx(values, abs=1e-9)
    assert a.adjustments is not None
    row = next(x for x in a.adjustments.recalibration if x.h == 2)
    assert row.p_inside == row.p_inside_raw
