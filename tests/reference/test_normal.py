"""The normal error distribution and its band probabilities against scipy and a worked example."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from riskreport.laws import distributions
from riskreport.laws.distributions import Adjusted
from riskreport.laws.probabilities import QUANTILE_LEVELS, band_probabilities

# Worked example of bands from historical errors, computed outside the project with numpy and
# scipy: errors e = actual - forecast, point forecast 2.4, band [1, 3]. The method (a normal
# with sd = RMSE of past errors, centred on the forecast) is the one of Reifschneider & Tulip
# (2019), "Gauging the uncertainty of the economic outlook using historical forecasting
# errors", IJF, doi:10.1016/j.ijforecast.2018.07.016.
E = np.array([-1.1, -0.7, -0.5, -0.4, -0.2, -0.1, 0.0, 0.1, 0.2, 0.3, 0.4, 0.6, 0.8, 1.3, 1.9])


def test_fit_matches_scipy_maximum_likelihood(rng: np.random.Generator) -> None:
    # scipy.stats.norm.fit is the normal MLE (divisor n), an independent implementation.
    sample = rng.normal(0.3, 1.7, size=200)
    fitted = distributions.fit("normal", sample)
    loc, scale = stats.norm.fit(sample)
    assert fitted.loc == pytest.approx(loc, abs=1e-12)
    assert fitted.scale == pytest.approx(scale, abs=1e-12)
    assert fitted.loglik == pytest.approx(stats.norm.logpdf(sample, loc, scale).sum(), abs=1e-9)


def test_fixed_mode_gives_rmse() -> None:
    # RMSE = sqrt(mean(e^2)) = 0.76419893 for these errors (numpy).
    fitted = distributions.fit("normal", E, mode=0.0)
    assert fitted.loc == 0.0
    assert fitted.scale == pytest.approx(0.76419893, abs=1e-8)


def test_worked_example_centred_on_the_forecast() -> None:
    # scipy.stats.norm(2.4, 0.76419893): P(below, inside, above) = (0.033477, 0.750336,
    # 0.216187).
    outcome = Adjusted(distributions.fit("normal", E, mode=0.0), shift=2.4)
    p = band_probabilities(outcome, 1.0, 3.0)
    assert (p.p_below, p.p_inside, p.p_above) == pytest.approx(
        (0.033477, 0.750336, 0.216187), abs=1e-6
    )


def test_estimated_centre_against_scipy() -> None:
    # Bias carried over: N(2.4 + mean(e), MLE sd); scipy.stats.norm gives the oracle.
    outcome = Adjusted(distributions.fit("normal", E), shift=2.4)
    oracle = stats.norm(2.4 + E.mean(), E.std())
    p = band_probabilities(outcome, 1.0, 3.0)
    assert p.p_below == pytest.approx(oracle.cdf(1.0), abs=1e-12)
    assert p.p_inside == pytest.approx(oracle.cdf(3.0) - oracle.cdf(1.0), abs=1e-12)
    assert p.p_above == pytest.approx(oracle.sf(3.0), abs=1e-12)
    assert outcome.ppf(QUANTILE_LEVELS) == pytest.approx(oracle.ppf(QUANTILE_LEVELS), abs=1e-12)


@pytest.mark.parametrize(("lower", "upper"), [(1.0, 3.0), (-5.0, 0.0), (2.0, 2.1), (0.0, 40.0)])
def test_probabilities_sum_to_one(lower: float, upper: float) -> None:
    outcome = Adjusted(distributions.fit("normal", E), shift=2.4, scale=1.3)
    p = band_probabilities(outcome, lower, upper)
    assert min(p.p_below, p.p_inside, p.p_above) >= 0
    assert p.p_below + p.p_inside + p.p_above == pytest.approx(1.0, abs=1e-14)


def test_scaling_about_the_mode_against_scipy() -> None:
    # Spread x1.5 around the mode of N(0.2, 0.5), then shift 2: N(2.2, 0.75).
    base = distributions.NormalFit(loc=0.2, scale=0.5, loglik=0.0, nobs=10)
    moved = Adjusted(base, shift=2.0, scale=1.5)
    xs = np.linspace(-1, 5, 13)
    assert moved.cdf(xs) == pytest.approx(stats.norm.cdf(xs, 2.2, 0.75), abs=1e-14)
    assert moved.mode == pytest.approx(2.2)


def test_fit_rejects_degenerate_samples() -> None:
    with pytest.raises(ValueError, match="at least two"):
        distributions.fit("normal", [1.0])
    # A constant sample is degenerate but fitted (tests/reference/test_families.py).
    assert distributions.fit("normal", [0.5, 0.5, 0.5]).notes


def test_a_law_rescaled_about_zero_keeps_its_meaning_in_every_bootstrap_replicate(
    rng: np.random.Generator,
) -> None:
    # Today's law under a time-varying spread is the law of s * X (errors rescaled to today's
    # error size). A bootstrap replicate refits X on a resample and must give s * X_r: for a
    # normal X_r ~ N(mu, sd^2), s * X_r ~ N(s mu, (s sd)^2) (scipy.stats.norm as the oracle).
    # The replicate used to keep the point estimate's shift, moving its centre by 1 x the
    # change of mode instead of s x (the interval's location spread shrank by s).
    s = 1.6
    today = distributions.scale_about_zero(distributions.fit("normal", rng.normal(0.2, 1, 60)), s)
    replicate = distributions.fit("normal", rng.normal(0.9, 1.3, 60))
    rebased = distributions.rebase(today, replicate)
    x = np.linspace(-6, 8, 29)
    oracle = stats.norm(s * replicate.loc, s * replicate.scale)
    assert rebased.mode == pytest.approx(s * replicate.loc, abs=1e-12)
    np.testing.assert_allclose(rebased.cdf(x), oracle.cdf(x), atol=1e-12)
    # A judgement-style map (shift and scale about the mode) still keeps its fixed shift.
    moved = distributions.rebase(Adjusted(today, shift=0.3, scale=1.2), replicate)
    assert moved.mode == pytest.approx(s * replicate.loc + 0.3, abs=1e-12)


def test_effective_sample_interval_is_the_percentile_interval_widened_on_log_odds() -> None:
    # Percentile interval (Efron & Tibshirani 1993, An Introduction to the Bootstrap,
    # section 13.3): with widen = 1 and replicates whose log-odds are symmetric about the
    # estimate's, the interval is the replicates' own 5% and 95% quantiles. Log-odds and
    # their inverse from scipy.special (logit, expit).
    from scipy.special import expit, logit

    from riskreport.laws.probabilities import effective_sample_interval

    odds = logit(0.6) + 0.3 * stats.norm.ppf((np.arange(10_000) + 0.5) / 10_000)
    replicated = expit(odds)
    lo, hi = effective_sample_interval(replicated, 0.6, 0.9, 1.0)
    assert (lo, hi) == pytest.approx(tuple(np.quantile(replicated, [0.05, 0.95])), abs=1e-6)
    # Widened by 2 (a record holding a quarter as many independent outcomes as errors):
    # twice the log-odds half-widths, 2 x 0.3 x 1.6449 (hand computed), about the estimate.
    lo, hi = effective_sample_interval(replicated, 0.6, 0.9, 2.0)
    assert logit(hi) - logit(0.6) == pytest.approx(2 * 0.3 * 1.644854, abs=2e-3)
    assert logit(0.6) - logit(lo) == pytest.approx(2 * 0.3 * 1.644854, abs=2e-3)
    # Placed at the estimate, not at the replicates' median: a shifted estimate moves it.
    lo2, hi2 = effective_sample_interval(replicated, 0.7, 0.9, 2.0)
    assert logit(lo2) - logit(lo) == pytest.approx(logit(0.7) - logit(0.6), abs=1e-9)
    assert 0 < lo2 < 0.7 < hi2 < 1
