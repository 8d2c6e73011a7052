"""The calibration replay: correct and mis-specified simulated worlds, and real data.

Real data: US quarterly CPI inflation (annualised quarter-on-quarter, column ``infl``) from
the macrodata set shipped with statsmodels (``statsmodels.datasets.macrodata``, US macro
series 1959Q1-2009Q3 compiled from the Federal Reserve Bank of St. Louis FRED and the BLS).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy import stats

import riskreport
from tests.conftest import constant_forecast_world


def _world(tmp_path: Path, errors: np.ndarray) -> dict:
    """Forecast 2.0 for every period; outcome 2.0 + error; iid errors at every horizon."""
    config = constant_forecast_world(tmp_path, errors, horizons=2, policy_horizon=1, window=120)
    return riskreport.assess(config).calibration


def test_correctly_specified_world_is_calibrated(tmp_path: Path) -> None:
    errors = np.random.default_rng(42).normal(0.0, 0.8, 500)
    cal = _world(tmp_path, errors)
    for row in cal.coverage:
        se = np.sqrt(row.nominal * (1 - row.nominal) / row.n)
        # Fitted (not known) parameters make predictive ranges a little narrow while the
        # training samples are short, hence the small allowance beyond sampling error.
        assert abs(row.observed - row.nominal) < 3 * se + 0.02
    for group in cal.pit:
        # A description, not a test (no p-value): pooled over dependent horizons, the
        # chi-square distance stays within a few times its 99.9% point for 9 d.f. (scipy).
        assert group.chi2 < 2 * stats.chi2.ppf(0.999, 9)
        assert "not a test" in group.note
    for test in cal.tests:
        assert test.pvalue > 0.001, test
    reliability = cal.brier.reliability
    big = [r for r in reliability if r.n >= 50]
    assert all(abs(r.forecast_mean - r.observed_frequency) < 0.12 for r in big)


def test_errors_that_widen_halfway_are_detected(tmp_path: Path) -> None:
    rng = np.random.default_rng(43)
    errors = np.concatenate([rng.normal(0.0, 0.4, 250), rng.normal(0.0, 1.6, 250)])
    cal = _world(tmp_path, errors)
    ninety = [r for r in cal.coverage if r.nominal == 0.9]
    assert all(r.observed < 0.85 for r in ninety)
    assert any(t.pvalue < 0.01 for t in cal.tests)
    assert any(g.chi2 > 2 * stats.chi2.ppf(0.999, 9) for g in cal.pit)


def test_the_default_spread_follows_errors_that_widen_halfway(tmp_path: Path) -> None:
    # The same world under the default spread (pooled over a constant spread and spreads
    # that follow recent errors): the replay learns the change, so its 90% ranges hold
    # closer to nominal than the constant spread's, and it scores better.
    rng = np.random.default_rng(43)
    errors = np.concatenate([rng.normal(0.0, 0.4, 250), rng.normal(0.0, 1.6, 250)])
    kept = constant_forecast_world(tmp_path, errors, horizons=2, policy_horizon=1, window=120)
    constant = riskreport.assess(kept)
    pooled = riskreport.assess(
        constant_forecast_world(
            tmp_path, errors, horizons=2, policy_horizon=1, window=120, spread="auto"
        )
    )

    def gap(a: riskreport.Assessment) -> float:
        return float(
            np.mean([abs(r.observed - 0.9) for r in a.calibration.coverage if r.nominal == 0.9])
        )

    assert gap(pooled) < gap(constant) - 0.02  # measured: 0.027 against 0.058
    assert pooled.adjustments is not None
    assert constant.adjustments is not None
    # Measured: -1.307 against -1.366.
    assert pooled.adjustments.verdict.log_score > constant.adjustments.verdict.log_score + 0.03


def _macrodata_case(tmp_path: Path) -> tuple[Path, np.ndarray]:
    import statsmodels.api as sm

    data = sm.datasets.macrodata.load_pandas().data
    infl = data["infl"].to_numpy()
    labels = [f"{int(y)}-Q{int(q)}" for y, q in zip(data["year"], data["quarter"], strict=True)]
    rows = ["origin,period,model,value"]
    for o in range(12, len(infl)):
        last, mean8 = infl[o - 1], infl[o - 8 : o].mean()
        for h in range(5):
            if o + h < len(infl) + 4:
                period = labels[o + h] if o + h < len(labels) else None
                if period is None:
                    continue
                rows.append(f"{labels[o]},{period},last-value,{last:.4f}")
                rows.append(f"{labels[o]},{period},mean8,{mean8:.4f}")
    as_of = len(infl) - 1
    # The outcome of the last quarter (the current round's nowcast target) is not known yet.
    actuals = ["period,value"] + [f"{labels[i]},{infl[i]:.4f}" for i in range(as_of)]
    (tmp_path / "f.csv").write_text("\n".join(rows) + "\n")
    (tmp_path / "a.csv").write_text("\n".join(actuals) + "\n")
    (tmp_path / "c.toml").write_text(
        f'[brief]\ntitle = "US CPI"\ninstitution = "test"\nas_of = "{labels[as_of]}"\n'
        'frequency = "quarterly"\nhorizons = 0\npolicy_horizon = 0\n'
        '[inputs]\nforecasts = "f.csv"\nactuals = "a.csv"\n[target]\nlower = 1.0\nupper = 3.0\n'
        '[uncertainty]\ndistribution = "normal"\nwindow = 40\nbootstrap_replicates = 50\n'
        'centre = "estimated"\npredictive = "plug-in"\nspread = "constant"\n'
        "simulations = 1000\n"
    )
    return tmp_path / "c.toml", infl


def test_us_cpi_replay_matches_an_independent_recomputation(tmp_path: Path) -> None:
    config, infl = _macrodata_case(tmp_path)
    cal = riskreport.assess(config).calibration

    # Independent route: equal-weight combination of the two forecasters, errors, and at each
    # origin a normal MLE (scipy) on the last 40 errors whose outcome came before it.
    def r4(value: float) -> float:  # the CSV files hold 4 decimals
        return float(f"{value:.4f}")

    origins = np.arange(12, len(infl) - 1)
    outcome = np.array([r4(infl[o]) for o in origins])
    point_forecast = np.array([(r4(infl[o - 1]) + r4(infl[o - 8 : o].mean())) / 2 for o in origins])
    errors = outcome - point_forecast
    pits, inside_p, inside_o = [], [], []
    for j in range(20, errors.size):
        loc, scale = stats.norm.fit(errors[max(0, j - 40) : j])
        pits.append(stats.norm.cdf(errors[j], loc, scale))
        point = point_forecast[j]
        inside_p.append(
            stats.norm.cdf(3.0 - point, loc, scale) - stats.norm.cdf(1.0 - point, loc, scale)
        )
        inside_o.append(1.0 <= outcome[j] <= 3.0)
    pits_arr = np.array(pits)
    ninety = next(r for r in cal.coverage if r.h == 0 and r.nominal == 0.9)
    assert ninety.n == pits_arr.size
    assert ninety.observed == pytest.approx(np.mean(np.abs(pits_arr - 0.5) <= 0.45), abs=1e-12)
    brier = cal.brier.by_horizon[0]
    expected = np.mean((np.array(inside_p) - np.array(inside_o, dtype=float)) ** 2)
    assert brier.brier == pytest.approx(expected, abs=1e-10)
    counts = next(g for g in cal.pit if g.h_from == 0).counts
    assert list(counts) == np.histogram(pits_arr, bins=10, range=(0, 1))[0].tolist()
    knuppel = next(t for t in cal.tests if t.name == "knuppel" and t.horizon == 0)
    u = np.sqrt(12) * (pits_arr - 0.5)
    d = np.column_stack([u, u**2 - 1])
    omega = np.cov(d.T, bias=True)
    wald = d.shape[0] * d.mean(0) @ np.linalg.solve(omega, d.mean(0))
    # One step ahead: Hotelling's F = (T - q)/(q T) W ~ F(q, T - q) (Anderson 2003, Thm 5.2.2).
    t = d.shape[0]
    assert knuppel.statistic == pytest.approx((t - 2) / (2 * t) * wald, rel=1e-9)
    assert knuppel.pvalue == pytest.approx(stats.f.sf((t - 2) / (2 * t) * wald, 2, t - 2), rel=1e-9)
