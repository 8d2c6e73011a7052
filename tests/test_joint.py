"""The joint ML spread across horizons (Anderson 1957, monotone missing pattern)."""

from __future__ import annotations

import numpy as np
from scipy import optimize, stats

from riskreport.laws import joint


def _correlated(rng: np.random.Generator, n: int, k: int) -> np.ndarray:
    # Errors of one origin along the horizons: a random walk, so the horizons correlate.
    return np.cumsum(rng.normal(size=(n, k)), axis=1) + rng.normal(size=k)


def test_complete_sample_gives_the_sample_covariance(rng: np.random.Generator) -> None:
    # With nothing missing the ML estimate is the sample mean and the sample covariance
    # with divisor n (Anderson 1957, JASA 52, section 2; numpy's cov with bias=True).
    x = _correlated(rng, 60, 4)
    mean, cov = joint.covariance(x)
    np.testing.assert_allclose(mean, x.mean(axis=0), rtol=1e-12)
    np.testing.assert_allclose(cov, np.cov(x, rowvar=False, bias=True), rtol=1e-10)


def _loglik(x: np.ndarray, mean: np.ndarray, cov: np.ndarray) -> float:
    """Observed-data Gaussian log-likelihood: each row's density of its observed part
    (rows grouped by their pattern of observed columns)."""
    seen = np.isfinite(x)
    total = 0.0
    for pattern in np.unique(seen, axis=0):
        rows = x[(seen == pattern).all(axis=1)][:, pattern]
        law = stats.multivariate_normal(mean[pattern], cov[np.ix_(pattern, pattern)])
        total += float(np.sum(law.logpdf(rows)))
    return total


def test_monotone_sample_matches_direct_maximisation(rng: np.random.Generator) -> None:
    # The closed form against scipy.optimize maximising the observed-data log-likelihood
    # over the mean and a Cholesky factor of the covariance. Tolerance 1e-4 on every
    # entry: the optimiser's own convergence (gtol 1e-9 on a smooth likelihood).
    x = _correlated(rng, 40, 3)
    x[28:, 2] = np.nan  # the last origins' long-horizon errors are not yet known
    x[34:, 1:] = np.nan
    mean, cov = joint.covariance(x)
    k = x.shape[1]
    low = np.tril_indices(k)

    def negative(theta: np.ndarray) -> float:
        factor = np.zeros((k, k))
        factor[low] = theta[k:]
        return -_loglik(x, theta[:k], factor @ factor.T + 1e-12 * np.eye(k))

    start = np.concatenate([np.nanmean(x, axis=0), np.eye(k)[low]])
    found = optimize.minimize(negative, start, method="BFGS", options={"gtol": 1e-9})
    factor = np.zeros((k, k))
    factor[low] = found.x[k:]
    np.testing.assert_allclose(mean, found.x[:k], atol=1e-4)
    np.testing.assert_allclose(cov, factor @ factor.T, atol=1e-4)
    assert _loglik(x, mean, cov) >= -found.fun - 1e-8
    # The closed form differs from the per-column sample variances (so the check can fail).
    assert abs(cov[2, 2] - np.nanvar(x[:, 2])) > 1e-3


def test_ratios_use_only_errors_known_at_each_origin(rng: np.random.Generator) -> None:
    # The ratio at origin j rests on errors with o + h <= j - 1: changing the error of
    # origin 50 at horizon 2 (outcome period 52) moves nothing before origin 53.
    errors = _correlated(rng, 90, 3)
    changed = errors.copy()
    changed[50, 2] += 4.0
    windows = np.full(90, 40)
    a, b = joint.ratios(errors, windows), joint.ratios(changed, windows)
    np.testing.assert_array_equal(a[:53], b[:53])
    assert not np.array_equal(a[53:], b[53:])


def test_ratios_match_the_one_sample_estimate_at_an_origin(rng: np.random.Generator) -> None:
    # The batched cumulative sums against the one-sample closed form on the rows known at
    # origin 70 with a window of 45 origins (25 to 69; horizon h known for o <= 69 - h).
    errors = _correlated(rng, 90, 3)
    ratio = joint.ratios(errors, np.full(90, 45))
    rows = errors[25:70].copy()
    for h in range(3):
        rows[rows.shape[0] - h :, h] = np.nan
    _, cov = joint.covariance(rows)
    own = np.nanvar(rows, axis=0)
    np.testing.assert_allclose(ratio[70], np.sqrt(np.diag(cov) / own), rtol=1e-9)
