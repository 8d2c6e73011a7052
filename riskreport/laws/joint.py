"""Joint estimation of the error spread across horizons from a monotone missing pattern.

At a forecast origin j, the error e(o, h) of the forecast made at origin o for horizon h is
known only once its outcome is, o + h <= j - 1: over the recent origins the short-horizon
errors are known and the long-horizon ones are not yet. Estimating each horizon's spread
from its own errors alone ignores what the recent short-horizon errors say about the long
ones (the idea of Knueppel 2014, "Efficient estimation of forecast uncertainty based on
recent forecast errors", International Journal of Forecasting 30(2), who estimates the
mean squared errors of all horizons jointly; the estimator below is another one).

With the errors of one origin jointly normal across horizons, the pattern is monotone
(every row that holds horizon h holds every shorter one) and the maximum-likelihood mean
and covariance have the closed form of Anderson (1957, "Maximum likelihood estimates for a
multivariate normal distribution when some observations are missing", JASA 52(278)):
the shortest horizon's mean and variance from all its rows; then each horizon's error
regressed (least squares, with an intercept) on the shorter horizons' errors over the rows
where it is observed, combined with the shorter horizons' estimates:

    mu_h = a + B' mu_<h,   Sigma_<h,h = Sigma_<h B,   Sigma_hh = s2 + B' Sigma_<h B,

with s2 the mean squared residual (divisor n). The spread option ``joint`` rescales each
horizon's law, fitted to its own errors as for a constant spread, by
sqrt(Sigma_hh / v_h), v_h the ML variance of the horizon's own errors on the same rows.

Everything is computed for all origins at once from cumulative sums of cross-products of
the errors (cost linear in the origins, no optimiser).
"""

from __future__ import annotations

import numpy as np

MARGIN = 10  # rows beyond the parameters a horizon's regression needs (common practice, no source)


def _solve(xtx: np.ndarray, xty: np.ndarray) -> np.ndarray:
    """Batched least-squares coefficients; a singular system gets the pseudo-inverse."""
    try:
        return np.linalg.solve(xtx, xty[..., None])[..., 0]
    except np.linalg.LinAlgError:
        return np.einsum("mij,mj->mi", np.linalg.pinv(xtx), xty)


def anderson(
    sums: list[np.ndarray],
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """ML mean and covariance under a monotone pattern, batched over m samples.

    Parameters
    ----------
    sums
        Per column i (k columns in all), the m x (i + 2) x (i + 2) sums over the rows where
        column i is observed of x x', x = (1, e_0, ..., e_i).

    Returns
    -------
    mean, cov, own, valid
        m x k ML means, m x k x k ML covariances, m x k ML variances of each column on its
        own rows, and m x k flags: False where a regression had fewer than its parameters
        plus ``MARGIN`` rows (the column then gets its own variance and no covariance with
        the shorter ones).
    """
    k = len(sums)
    m = sums[0].shape[0]
    mean = np.zeros((m, k))
    cov = np.zeros((m, k, k))
    own = np.full((m, k), np.nan)
    valid = np.zeros((m, k), dtype=bool)
    with np.errstate(invalid="ignore", divide="ignore"):
        for i, s in enumerate(sums):
            n = s[:, 0, 0]
            safe = np.maximum(n, 1.0)
            mu_own = s[:, 0, -1] / safe
            own[:, i] = np.where(n > 0, s[:, -1, -1] / safe - mu_own**2, np.nan)
            ok = n >= i + 2 + MARGIN  # intercept, i slopes and the residual variance
            valid[:, i] = ok
            if i == 0:
                mean[:, 0], cov[:, 0, 0] = mu_own, own[:, 0]
                continue
            xtx = np.where(ok[:, None, None], s[:, :-1, :-1], np.eye(i + 1))
            xty = np.where(ok[:, None], s[:, :-1, -1], 0.0)
            coef = _solve(xtx, xty)
            resid = (s[:, -1, -1] - np.einsum("mi,mi->m", coef, xty)) / safe
            slopes = np.where(ok[:, None], coef[:, 1:], 0.0)
            shorter = cov[:, :i, :i]
            cross = np.einsum("mij,mj->mi", shorter, slopes)
            mean[:, i] = np.where(
                ok, coef[:, 0] + np.einsum("mi,mi->m", slopes, mean[:, :i]), mu_own
            )
            cov[:, :i, i] = cross
            cov[:, i, :i] = cross
            cov[:, i, i] = np.where(ok, resid + np.einsum("mi,mi->m", slopes, cross), own[:, i])
    return mean, cov, own, valid


def covariance(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """ML mean and covariance of the columns of one sample (rows x columns, NaN missing,
    monotone: a row observed in column i is observed in every earlier column)."""
    sums = []
    for i in range(x.shape[1]):
        rows = np.isfinite(x[:, : i + 1]).all(axis=1)
        aug = np.column_stack([np.ones(int(rows.sum())), x[rows, : i + 1]])
        sums.append((aug.T @ aug)[None])
    mean, cov, _, _ = anderson(sums)
    return mean[0], cov[0]


def ratios(errors: np.ndarray, windows: np.ndarray) -> np.ndarray:
    """Per origin row and horizon, sqrt(joint ML variance / own ML variance).

    Parameters
    ----------
    errors
        Origins x horizons, consecutive origins (NaN where unknown).
    windows
        Per origin row, the number of past origins the estimate at that origin rests on
        (0: all). At origin j the rows are the origins j - window ... j - 1, and horizon h
        is observed on those with o + h <= j - 1 (known then: no look-ahead).

    Returns
    -------
    numpy.ndarray
        Origins x horizons; 1 where the joint estimate cannot be formed (too few rows,
        horizons before the first one with any known error, or a degenerate variance).
    """
    n, k = errors.shape
    known = np.flatnonzero(np.isfinite(errors).any(axis=0))
    out = np.ones((n, k))
    if known.size == 0:
        return out
    base = int(known[0])
    e = errors[:, base:]
    j = np.arange(n)
    lo = np.where(windows > 0, np.maximum(j - windows, 0), 0)
    sums = []
    for i in range(e.shape[1]):
        rows = np.isfinite(e[:, : i + 1]).all(axis=1)
        aug = np.column_stack([np.ones(n), np.where(rows[:, None], e[:, : i + 1], 0.0)])
        aug = aug * rows[:, None]
        cum = np.concatenate(
            [np.zeros((1, i + 2, i + 2)), np.cumsum(aug[:, :, None] * aug[:, None, :], axis=0)]
        )
        hi = np.clip(j - (base + i), 0, n)  # origins o <= j - 1 - h
        sums.append(np.where((hi > lo)[:, None, None], cum[hi] - cum[np.minimum(lo, hi)], 0.0))
    _, cov, own, valid = anderson(sums)
    joint = np.diagonal(cov, axis1=1, axis2=2)
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = np.sqrt(joint / own)
    good = valid & np.isfinite(ratio) & (own > 1e-12) & (ratio > 0)
    out[:, base:] = np.where(good, ratio, 1.0)
    return out
