"""The spread implied by the forecasts' revisions (riskreport.laws.revisions)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from riskreport.laws import revisions


def _ar1_record(n: int, horizons: int, phi: float, sigma: float, seed: int):  # type: ignore[no-untyped-def]
    """Efficient forecasts of an AR(1) (origin o knows y up to o - 1): forecasts and errors,
    origins x horizons, NaN where the outcome is not known by the last origin."""
    rng = np.random.default_rng(seed)
    y = np.zeros(n + horizons + 200)
    for t in range(1, y.size):
        y[t] = phi * y[t - 1] + sigma * rng.standard_normal()
    y = y[200:]
    hs = np.arange(horizons + 1)
    origins = np.arange(1, n)
    forecasts = phi ** (hs[None, :] + 1) * y[origins - 1][:, None]
    errors = y[origins[:, None] + hs[None, :]] - forecasts
    errors[origins[:, None] + hs[None, :] > n - 2] = np.nan  # outcomes known up to n - 2
    return forecasts, errors


def test_implied_spread_is_the_ar1_forecast_error_variance() -> None:
    # The h-step forecast error variance of an AR(1) is sigma^2 sum_{k<=h} phi^(2k) (Hamilton
    # 1994, Time Series Analysis, section 4.2; Box & Jenkins): the revisions' identity must
    # recover it from nowcast errors and revisions alone.
    phi, sigma, horizons = 0.9, 0.25, 12
    forecasts, errors = _ar1_record(6000, horizons, phi, sigma, seed=1)
    implied = revisions.implied(forecasts, errors, 0)[-1]
    truth = sigma**2 * np.cumsum(phi ** (2 * np.arange(horizons + 1)))
    assert implied == pytest.approx(truth, rel=0.05)
    # ... and the ratio to the horizons' own mean squares is near 1 on so long a record.
    assert revisions.ratios(forecasts, errors, 0)[-1] == pytest.approx(1.0, abs=0.08)


def test_window_mean_squares_against_the_last_known_values() -> None:
    rng = np.random.default_rng(4)
    values = rng.normal(size=80)
    values[rng.random(80) < 0.2] = np.nan
    ends = np.arange(-3, 85)
    for window in (0, 1, 7, 30):
        got = revisions._window_mean_squares(values, ends, window)
        for e, g in zip(ends, got, strict=True):
            known = values[: max(e, 0)]
            known = known[np.isfinite(known)]
            if window:
                known = known[-window:]
            if known.size == 0:
                assert np.isnan(g)
            else:
                assert g == pytest.approx(np.mean(known**2), rel=1e-12)


@settings(max_examples=25, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(10, 60))
def test_a_ratio_never_looks_ahead(seed: int, origin: int) -> None:
    # Changing a forecast made after origin j, or an error whose outcome comes at or after
    # j, leaves the ratios of row j unchanged.
    forecasts, errors = _ar1_record(80, 6, 0.8, 1.0, seed)
    before = revisions.ratios(forecasts, errors, 24)
    rows = np.arange(forecasts.shape[0])[:, None]
    later_forecast = np.broadcast_to(rows > origin, forecasts.shape)
    later_outcome = (rows + np.arange(7)[None, :]) >= origin
    f2 = np.where(later_forecast, forecasts + 3.0, forecasts)
    e2 = np.where(later_outcome & np.isfinite(errors), errors * 2.0, errors)
    after = revisions.ratios(f2, e2, 24)
    np.testing.assert_array_equal(before[: origin + 1], after[: origin + 1])


def test_a_window_per_origin_is_each_origin_s_own_window() -> None:
    # With the window chosen at each origin (window_choice = "auto"), row j's ratios are
    # those of row j computed with that row's window: the law graded is the law published.
    forecasts, errors = _ar1_record(90, 6, 0.8, 1.0, seed=5)
    rows = np.random.default_rng(2).choice([0, 12, 40], size=forecasts.shape[0])
    per_row = revisions.ratios(forecasts, errors, rows)
    for j in range(forecasts.shape[0]):
        np.testing.assert_allclose(
            per_row[j], revisions.ratios(forecasts, errors, int(rows[j]))[j], rtol=1e-12
        )
