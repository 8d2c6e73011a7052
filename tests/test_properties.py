"""Property-based tests (hypothesis) of the band probabilities, the quantiles and the
combination, with a fixed example budget and derandomized so that CI is deterministic.

The properties are the axioms of probability (Kolmogorov 1933: probabilities of the three
disjoint outcomes below / inside / above lie in [0, 1] and add up to 1; a CDF is
non-decreasing, so probabilities are monotone in the band edges and quantiles in the level)
and the translation equivariance of location-scale estimators. The normal case is checked
against scipy.stats.norm with the maximum-likelihood mean and standard deviation.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from scipy import stats

from riskreport import assess
from riskreport._typing import COMBINATION_METHODS, CombinationMethod, Family
from riskreport.forecasts import combination
from riskreport.laws import distributions
from riskreport.laws.probabilities import QUANTILE_LEVELS, band_probabilities
from riskreport.reading import panel
from riskreport.reading.inputs import Actuals, Forecasts
from tests.conftest import Case

BUDGET = settings(
    max_examples=30,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much],
)
FAMILIES: tuple[Family, ...] = ("normal", "two-piece-normal", "skew-normal", "empirical")

errors_strategy = st.lists(
    st.floats(-5, 5, allow_nan=False, allow_infinity=False), min_size=8, max_size=40
).map(np.array)
edge = st.floats(-8, 8, allow_nan=False, allow_infinity=False)
width = st.floats(0.01, 6, allow_nan=False, allow_infinity=False)


def _spread(errors: np.ndarray) -> np.ndarray:
    # Rounded so that a spread too small for any fit (all values nearly equal) is rejected.
    assume(np.ptp(np.round(errors, 3)) > 0.05)
    return errors


@BUDGET
@given(errors_strategy, st.sampled_from(FAMILIES), edge, width)
def test_probabilities_in_unit_interval_and_sum_to_one(
    errors: np.ndarray, family: Family, lower: float, w: float
) -> None:
    dist = distributions.fit(family, _spread(errors))
    p = band_probabilities(dist, lower, lower + w)
    values = np.array([p.p_below, p.p_inside, p.p_above])
    assert np.all(values >= -1e-12)
    assert np.all(values <= 1 + 1e-12)
    assert values.sum() == pytest.approx(1.0, abs=1e-12)
    if family == "normal":
        # scipy: the normal with the ML mean and standard deviation (divisor n).
        ref = stats.norm(errors.mean(), errors.std(ddof=0))
        assert p.p_inside == pytest.approx(ref.cdf(lower + w) - ref.cdf(lower), abs=1e-9)


@BUDGET
@given(errors_strategy, st.sampled_from(FAMILIES), edge, width, width)
def test_monotone_in_band_edges(
    errors: np.ndarray, family: Family, lower: float, w: float, more: float
) -> None:
    dist = distributions.fit(family, _spread(errors))
    narrow = band_probabilities(dist, lower, lower + w)
    wider = band_probabilities(dist, lower, lower + w + more)  # upper edge raised
    raised = band_probabilities(dist, lower + more, lower + w + more)  # both edges raised
    tol = 1e-12
    assert wider.p_inside >= narrow.p_inside - tol
    assert wider.p_above <= narrow.p_above + tol
    assert wider.p_below == pytest.approx(narrow.p_below, abs=tol)
    assert raised.p_below >= narrow.p_below - tol
    assert raised.p_above <= narrow.p_above + tol


@BUDGET
@given(errors_strategy, st.sampled_from(FAMILIES), edge, width, st.randoms(use_true_random=False))
def test_invariant_to_row_order(
    errors: np.ndarray, family: Family, lower: float, w: float, random: object
) -> None:
    errors = _spread(errors)
    shuffled = errors.copy()
    random.shuffle(shuffled)  # type: ignore[attr-defined]
    a = band_probabilities(distributions.fit(family, errors), lower, lower + w)
    b = band_probabilities(distributions.fit(family, shuffled), lower, lower + w)
    assert b.p_inside == pytest.approx(a.p_inside, abs=1e-7)
    assert b.p_below == pytest.approx(a.p_below, abs=1e-7)


@BUDGET
@given(
    errors_strategy,
    st.sampled_from(FAMILIES),
    edge,
    width,
    st.floats(-3, 3, allow_nan=False, allow_infinity=False),
    st.floats(-20, 20, allow_nan=False, allow_infinity=False),
)
def test_invariant_to_shifting_forecast_outcomes_and_band(
    errors: np.ndarray, family: Family, lower: float, w: float, point: float, shift: float
) -> None:
    # Outcome = forecast + error. Shifting forecasts and outcomes by c leaves the errors as
    # they are and moves the predictive distribution by c; with the band moved by c too,
    # the probabilities must not change. Shifting the errors themselves (outcomes only)
    # moves a location-equivariant fit by the same amount.
    errors = _spread(errors)
    fitted = distributions.fit(family, errors)
    base = band_probabilities(distributions.Adjusted(fitted, shift=point), lower, lower + w)
    moved = band_probabilities(
        distributions.Adjusted(fitted, shift=point + shift), lower + shift, lower + w + shift
    )
    assert moved.p_inside == pytest.approx(base.p_inside, abs=1e-9)
    assert moved.p_below == pytest.approx(base.p_below, abs=1e-9)
    refit = band_probabilities(
        distributions.fit(family, errors + shift), lower + shift, lower + w + shift
    )
    plain = band_probabilities(fitted, lower, lower + w)
    # Up to the tolerance of the mode search of the two-piece normal and skew-normal fits
    # (1e-5 seen on a sample of seven zeros and a one).
    assert refit.p_inside == pytest.approx(plain.p_inside, abs=1e-4)


@BUDGET
@given(
    errors_strategy,
    st.sampled_from(FAMILIES),
    st.floats(0.2, 5, allow_nan=False),
    st.floats(-0.9, 0.9, allow_nan=False),
)
def test_quantiles_monotone(errors: np.ndarray, family: Family, scale: float, tilt: float) -> None:
    fitted = distributions.fit(family, _spread(errors))
    levels = np.array(QUANTILE_LEVELS)
    for dist in (
        fitted,
        distributions.Adjusted(fitted, shift=1.0, scale=scale),
        distributions.Tilted(fitted, tilt=tilt),
    ):
        q = dist.ppf(levels)
        assert np.all(np.isfinite(q))
        assert np.all(np.diff(q) >= -1e-9), (dist, q)


# Methods whose combination of identical forecasts must be that forecast: the weights sum
# to one (or the method is an order statistic of equal values). Left out: ols, whose
# intercept and free slope make it a regression on the forecast rather than an average,
# and given, which takes exactly one column.
AVERAGING = tuple(m for m in COMBINATION_METHODS if m not in ("ols", "given"))


@settings(
    max_examples=15,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow],
)
@given(
    st.sampled_from(AVERAGING),
    st.integers(2, 4),
    st.lists(st.floats(-3, 6, allow_nan=False), min_size=30, max_size=30),
    st.lists(st.floats(-1, 1, allow_nan=False), min_size=30, max_size=30),
)
def test_combining_identical_models_gives_that_model(
    method: CombinationMethod,
    copies: int,
    path: list[float],
    noise: list[float],
) -> None:
    origins, horizons = 24, 2
    truth = np.array(path)
    origin = np.repeat(np.arange(origins), horizons + 1)
    period = origin + np.tile(np.arange(horizons + 1), origins)
    value = truth[period] + np.array(noise)[period]
    models = tuple(f"m{i}" for i in range(copies))
    fc = Forecasts(
        file=Path("f.csv"),
        models=models,
        model=np.repeat(np.arange(copies), origin.size),
        origin=np.tile(origin, copies),
        period=np.tile(period, copies),
        value=np.tile(value, copies),
        has_model_column=True,
    )
    act = Actuals(file=Path("a.csv"), period=np.arange(origins), value=truth[:origins])
    cube = panel.build(fc, act, as_of=origins - 1, max_h=horizons)
    result = combination.combine(method, cube)
    single = cube.forecasts[0]
    known = np.isfinite(result.combined)
    assert known.any()
    np.testing.assert_allclose(result.combined[known], single[known], rtol=0, atol=1e-8)
    np.testing.assert_allclose(result.current_weights.sum(axis=0), 1.0, atol=1e-8)


def test_whole_assessment_invariant_to_row_order_and_common_shift(case: Case) -> None:
    # One fixed example through the whole method: the rows of both tables shuffled, and
    # every forecast, outcome and the band moved up by 5 points, give the same
    # probabilities (the properties above, end to end).
    before = assess(case.write())
    rng = np.random.default_rng(11)

    def moved(rows: list[list[str]]) -> list[list[str]]:
        body = [[*r[:-1], f"{float(r[-1]) + 5:.3f}"] for r in rows[1:]]
        return [rows[0], *(body[i] for i in rng.permutation(len(body)))]

    case.forecasts = moved(case.forecasts)
    case.actuals = moved(case.actuals)
    case.config = case.config.replace("midpoint = 2.0", "midpoint = 7.0")
    after = assess(case.write())
    assert len(after.horizons) == len(before.horizons)
    for a, b in zip(before.horizons, after.horizons, strict=True):
        assert (b.p_below, b.p_inside, b.p_above) == pytest.approx(
            (a.p_below, a.p_inside, a.p_above), abs=1e-9
        )
        assert b.centre == pytest.approx(a.centre + 5, abs=1e-9)
