"""The effective number of independent outcomes among overlapping multi-step errors."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from riskreport.forecasts.overlap import effective_sample_size


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.integers(0, 300), min_size=1, max_size=60, unique=True),
    st.integers(1, 25),
)
def test_matches_the_double_sum_and_stays_between_its_bounds(origins, steps):
    # The definition written out as the full double sum (Hansen & Hodrick 1980, JPE 88(5):
    # efficient s-step errors k origins apart share s - k shocks).
    o = np.asarray(origins)
    rho = np.maximum(0.0, 1.0 - np.abs(o[:, None] - o[None, :]) / steps)
    expected = o.size**2 / rho.sum()
    got = effective_sample_size(o, steps)
    assert np.isclose(got, expected, rtol=1e-12)
    assert o.size / steps - 1e-9 <= got <= o.size + 1e-9


def test_variance_of_the_mean_of_overlapping_errors_matches_the_count():
    # Monte Carlo: errors that are sums of `steps` iid shocks (efficient multi-step errors);
    # the variance of their mean is sigma^2 / n_eff, with sigma^2 = steps.
    rng = np.random.default_rng(7)
    n, steps, reps = 80, 7, 20000
    shocks = rng.standard_normal((reps, n + steps - 1))
    kernel = np.ones(steps)
    errors = np.stack([np.convolve(row, kernel, mode="valid") for row in shocks])
    implied = steps / errors.mean(axis=1).var()
    assert abs(implied - effective_sample_size(n, steps)) / implied < 0.03


def test_consecutive_origins_tend_to_the_non_overlapping_count():
    assert abs(effective_sample_size(2400, 12) - 200) < 2
    assert effective_sample_size(0, 5) == 0.0


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 400), st.integers(1, 30))
def test_consecutive_origins_counted_in_closed_form_as_by_search(n: int, steps: int) -> None:
    # The count for n consecutive origins (an int) has a closed form; it must agree with the
    # general count over the same origins given one by one.
    assert effective_sample_size(n, steps) == pytest.approx(
        effective_sample_size(np.arange(n), steps), rel=1e-12, abs=0.0
    )
