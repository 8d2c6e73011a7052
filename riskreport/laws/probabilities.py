"""Band probabilities per horizon, their sampling uncertainty, and joint (path) simulation."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats

from riskreport._typing import Family
from riskreport.laws.distributions import Distribution, fit_batch, rebase

QUANTILE_LEVELS: tuple[float, ...] = (0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95)


@dataclass(frozen=True)
class BandProbabilities:
    """P(below), P(inside), P(above) for a band with inclusive edges."""

    p_below: float
    p_inside: float
    p_above: float


def band_probabilities(dist: Distribution, lower: float, upper: float) -> BandProbabilities:
    """Probabilities of landing below, inside (lower <= x <= upper) and above the band.

    Notes
    -----
    p_below = F(lower), p_inside = F(upper) - F(lower), p_above = 1 - F(upper); the
    distributions are continuous, so the edges carry no mass of their own.
    """
    f_lower, f_upper = (float(v) for v in dist.cdf(np.array([lower, upper])))
    return BandProbabilities(f_lower, f_upper - f_lower, 1.0 - f_upper)


def block_indices(n: int, block: int, replicates: int, rng: np.random.Generator) -> np.ndarray:
    """Moving-block bootstrap indices: replicates x n, blocks of ``block`` consecutive rows."""
    block = int(min(max(block, 1), n))
    blocks = -(-n // block)
    starts = rng.integers(0, n - block + 1, size=(replicates, blocks))
    index = (starts[:, :, None] + np.arange(block)[None, None, :]).reshape(replicates, -1)
    return index[:, :n]


def bootstrap_p_inside(
    errors: np.ndarray,
    dist: Distribution,
    lower: float,
    upper: float,
    *,
    h: int,
    family: Family,
    mode: float | None,
    replicates: int,
    rng: np.random.Generator,
    level: float = 0.9,
) -> tuple[float, float]:
    """A moving-block bootstrap interval for P(inside).

    The errors (in origin order) are resampled in blocks of max(h + 1, n^(1/3)) so that
    the overlap of multi-step errors is kept (at most n/2, so replicates differ); each replicate is refitted (all at once, by
    :func:`~riskreport.distributions.fit_batch`) and pushed through the same maps (monotone spread, point forecast, judgement) as the point estimate.

    Returns
    -------
    lo, hi
        The bias-corrected ``level`` interval of the replicated P(inside)
        (:func:`bias_corrected_interval`).
    """
    n = errors.size
    # Blocks of at most half the sample: a block as long as the sample makes every
    # replicate the sample itself and the interval a point (a thin horizon far ahead).
    block = min(max(h + 1, round(n ** (1 / 3))), max(1, n // 2))
    index = block_indices(n, block, replicates, rng)
    chain = rebase(dist, fit_batch(family, errors[index], mode=mode))
    p = chain.cdf(upper) - chain.cdf(lower)
    estimate = float(dist.cdf(upper) - dist.cdf(lower))
    return bias_corrected_interval(np.asarray(p, dtype=float), estimate, level)


def bias_corrected_interval(
    replicated: np.ndarray, estimate: float, level: float
) -> tuple[float, float]:
    """Efron's bias-corrected percentile interval (BC: BCa with no acceleration).

    Parameters
    ----------
    replicated
        The statistic in every bootstrap replicate.
    estimate
        The statistic on the sample itself.
    level
        The coverage of the interval, e.g. 0.9.

    Returns
    -------
    lo, hi
        The replicates' quantiles at Phi(2 z0 -/+ z), z0 = Phi^-1(share of replicates below
        the estimate, ties counted half), z = Phi^-1((1 + level) / 2).

    Notes
    -----
    A moving-block bootstrap understates the spread of dependent errors (resampled blocks
    lose the variation between them; Kuensch 1989, Annals of Statistics 17(3)), so the
    replicates of P(inside) sit mostly on one side of the estimate and a plain percentile
    interval can leave the estimate at its edge. The BC interval recentres on the estimate
    (Efron 1987, JASA 82(397), eq. 2.3 with a = 0; Efron & Tibshirani 1993, An
    Introduction to the Bootstrap, section 14.3). The share is kept within
    [1/(R + 1), R/(R + 1)] so that z0 stays finite.
    """
    r = replicated.size
    below = float(np.sum(replicated < estimate) + 0.5 * np.sum(replicated == estimate))
    share = min(max(below / r, 1 / (r + 1)), r / (r + 1))
    z0 = float(stats.norm.ppf(share))
    z = float(stats.norm.ppf((1 + level) / 2))
    lo, hi = np.quantile(replicated, stats.norm.cdf([2 * z0 - z, 2 * z0 + z]))
    return float(lo), float(hi)


def normal_scores_correlation(errors: np.ndarray) -> np.ndarray:
    """Rank correlation of same-origin errors across horizons (normal scores), PSD.

    Parameters
    ----------
    errors
        origins x horizons, NaN where unknown.

    Notes
    -----
    Each horizon's errors become normal scores Phi^-1(rank / (n + 1)) (van der Waerden);
    pairs use the origins where both are known. The matrix is made positive semi-definite
    by clipping eigenvalues and rescaling to a unit diagonal.
    """
    k = errors.shape[1]
    scores = np.full(errors.shape, np.nan)
    for j in range(k):
        known = np.isfinite(errors[:, j])
        ranks = stats.rankdata(errors[known, j])
        scores[known, j] = stats.norm.ppf(ranks / (known.sum() + 1))
    corr = np.eye(k)
    for i in range(k):
        for j in range(i + 1, k):
            both = np.isfinite(scores[:, i]) & np.isfinite(scores[:, j])
            # A horizon whose errors are all equal has no ranks to correlate: 0.
            if both.sum() >= 3 and np.ptp(scores[both, i]) > 0 and np.ptp(scores[both, j]) > 0:
                value = np.corrcoef(scores[both, i], scores[both, j])[0, 1]
                corr[i, j] = corr[j, i] = value if np.isfinite(value) else 0.0
    values, vectors = np.linalg.eigh(corr)
    fixed = (vectors * np.maximum(values, 1e-8)) @ vectors.T
    d = np.sqrt(np.diag(fixed))
    return fixed / np.outer(d, d)


def simulate_joint(
    dists: list[Distribution], corr: np.ndarray, n: int, rng: np.random.Generator
) -> np.ndarray:
    """n x horizons joint draws: a Gaussian copula with the given correlation, each margin
    its own distribution (X_h = F_h^-1(Phi(Z_h)))."""
    chol = np.linalg.cholesky(corr + 1e-12 * np.eye(corr.shape[0]))
    z = rng.standard_normal((n, corr.shape[0])) @ chol.T
    u = np.clip(stats.norm.cdf(z), 1e-12, 1 - 1e-12)
    return np.column_stack([dist.ppf(u[:, j]) for j, dist in enumerate(dists)])


def path_probabilities(
    draws: np.ndarray, lower: np.ndarray, upper: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Per horizon: P(inside at every period up to it) and P(inside at least once by it)."""
    inside = (draws >= lower[None, :]) & (draws <= upper[None, :])
    throughout = np.logical_and.accumulate(inside, axis=1).mean(axis=0)
    back_by = np.logical_or.accumulate(inside, axis=1).mean(axis=0)
    return throughout, back_by
