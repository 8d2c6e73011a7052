"""Combining the models' forecasts, per horizon, from each origin's own past.

:func:`weights` estimates one set of weights from a track record (the public API).
:func:`combine` builds the combined forecast for every origin and the current round, each
origin's weights estimated only from errors whose outcome was known at that origin
(pseudo-real time); its history feeds the error distribution.

All weight methods work on the sample moments of the track record (F'F, F'y, ...), so the
expanding-window estimates at every origin come from cumulative sums and batched solves
instead of thousands of separate regressions.

Methods: ``equal``; ``median`` and ``trimmed`` (drop the highest and the lowest forecast,
average the rest) are not fixed weights, so :func:`weights` reports the average share each
model received; ``inverse-mse`` (Bates & Granger 1969); ``rank`` (inverse rank of MSE,
Aiolfi & Timmermann 2006; ties share the lower rank, scipy ``rankdata(method="min")``);
``ols`` (Granger & Ramanathan 1984, with intercept); ``ols-sum-to-one`` (no intercept,
weights sum to one); ``ols-nonnegative`` (also non-negative; exact, by enumerating active
sets); ``shrink`` (sum-to-one OLS weights shrunk toward equal, see :func:`shrinkage_factor`);
``given`` (one combined forecast).

Estimated weights can be negative and put the combined forecast outside the range of the
models' own forecasts; :func:`combine` records both for the current round
(``Combination.negative``, ``Combination.outside``) so the brief can say so.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from riskreport._typing import CombinationMethod
from riskreport.reading.panel import Panel

SHRINKAGE = 0.25  # kappa of the shrink method (Stock & Watson 2004 consider 0.25, 0.5, 1)
SHRINKAGE_BOUNDS = (0.0, 10.0)  # 0: no shrinkage; common practice, no source, for the top
TOLERANCE = 1e-9  # numerical zero for negative weights and for leaving the range


def min_history(method: CombinationMethod, k: int) -> int:
    """Fewest past rows a method needs before it is used instead of equal weights.

    Common practice, no source: the regression methods need a few rows per parameter.
    """
    if method in ("ols", "ols-sum-to-one", "ols-nonnegative", "shrink"):
        return 3 * (k + 1)
    if method in ("inverse-mse", "rank"):
        return 6
    return 0


@dataclass(frozen=True)
class Moments:
    """Sample moments of a track record, stacked over any number of samples (first axis).

    ``gram`` = F'F (m x k x k), ``cross`` = F'y (m x k), ``sums`` = F'1 (m x k),
    ``y_sum`` = 1'y, ``yy`` = y'y and ``n`` rows (each m).
    """

    gram: np.ndarray
    cross: np.ndarray
    sums: np.ndarray
    y_sum: np.ndarray
    yy: np.ndarray
    n: np.ndarray

    @classmethod
    def of(cls, forecasts: np.ndarray, outcomes: np.ndarray) -> Moments:
        """The moments of one T x k track record (m = 1)."""
        f, y = forecasts, outcomes
        return cls(
            gram=(f.T @ f)[None],
            cross=(f.T @ y)[None],
            sums=f.sum(axis=0)[None],
            y_sum=np.array([y.sum()]),
            yy=np.array([y @ y]),
            n=np.array([float(y.size)]),
        )

    @property
    def mse(self) -> np.ndarray:
        """m x k mean squared error of each model: (y'y - 2 f_i'y + f_i'f_i) / n."""
        diag = np.diagonal(self.gram, axis1=1, axis2=2)
        return (self.yy[:, None] - 2 * self.cross + diag) / np.maximum(self.n, 1)[:, None]


def _solve(matrix: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    # pinv rather than solve: nearly collinear forecasts give singular systems.
    return np.einsum("mij,mj->mi", np.linalg.pinv(matrix), rhs)


def _sum_to_one(gram: np.ndarray, cross: np.ndarray) -> np.ndarray:
    """argmin ||y - F w||^2 subject to 1'w = 1, by the KKT system, for each sample."""
    m, k, _ = gram.shape
    kkt = np.zeros((m, k + 1, k + 1))
    kkt[:, :k, :k] = 2 * gram
    kkt[:, :k, k] = 1.0
    kkt[:, k, :k] = 1.0
    rhs = np.concatenate([2 * cross, np.ones((m, 1))], axis=1)
    return _solve(kkt, rhs)[:, :k]


def _sse(w: np.ndarray, mom: Moments) -> np.ndarray:
    return (
        mom.yy - 2 * np.einsum("mi,mi->m", w, mom.cross) + np.einsum("mi,mij,mj->m", w, mom.gram, w)
    )


def _nonnegative(mom: Moments) -> np.ndarray:
    """Non-negative weights summing to one: the best feasible solution over active sets.

    Exact for small k (2^k - 1 subsets); the optimum of a convex problem is the sum-to-one
    solution on its support, so enumerating supports finds it.
    """
    m, k = mom.cross.shape
    best = np.full((m, k), 1.0 / k)
    best_sse = np.full(m, np.inf)
    for size in range(1, k + 1):
        for subset in itertools.combinations(range(k), size):
            idx = np.array(subset)
            sub = _sum_to_one(mom.gram[:, idx][:, :, idx], mom.cross[:, idx])
            w = np.zeros((m, k))
            w[:, idx] = sub
            sse = _sse(w, mom)
            better = np.all(sub >= -1e-10, axis=1) & (sse < best_sse - 1e-12)
            best[better] = np.clip(w[better], 0.0, None)
            best_sse[better] = sse[better]
    return best / best.sum(axis=1, keepdims=True)


def _ols(mom: Moments) -> tuple[np.ndarray, np.ndarray]:
    """Intercept and slopes of y on (1, F), for each sample."""
    m, k = mom.cross.shape
    zz = np.zeros((m, k + 1, k + 1))
    zz[:, 0, 0] = mom.n
    zz[:, 0, 1:] = mom.sums
    zz[:, 1:, 0] = mom.sums
    zz[:, 1:, 1:] = mom.gram
    zy = np.concatenate([mom.y_sum[:, None], mom.cross], axis=1)
    beta = _solve(zz, zy)
    return beta[:, 0], beta[:, 1:]


def shrinkage_factor(rows: ArrayLike, k: int, kappa: float = SHRINKAGE) -> np.ndarray:
    """Weight on the estimated weights in ``shrink``: max(0, 1 - kappa k / (rows - k)).

    Stock & Watson (2004, "Combination forecasts of output growth in a seven-country data
    set", J. Forecasting 23, section 3) shrink the estimated weights toward 1/k with
    lambda = max(0, 1 - kappa k / (t - h - T0 - k)), where t - h - T0 is the number of
    observations in the weight regression: the forecasts made from T0 on whose h-step
    outcome is known at the forecast date t (the reading of the paper's indexing is
    recalled from memory). ``rows`` is that count, so the horizon is not subtracted again:
    the rows whose outcome is still unknown are already left out of it. The denominator is
    the regression's residual degrees of freedom; with none left, the weights are equal.

    Parameters
    ----------
    rows
        Observations in the weight regression (any shape).
    k
        Number of models.
    kappa
        The shrinkage constant (the paper uses 0.25, 0.5 and 1).

    Returns
    -------
    numpy.ndarray
        lambda, in [0, 1], with the shape of ``rows``.

    Examples
    --------
    >>> float(shrinkage_factor(12, 3, 0.25))  # 1 - 0.75 / 9
    0.9166666666666666
    """
    n = np.asarray(rows, dtype=float)
    dof = n - k
    factor = 1 - kappa * k / np.where(dof > 0, dof, 1.0)
    return np.where(dof > 0, np.clip(factor, 0.0, 1.0), 0.0)


def linear_weights(
    method: CombinationMethod, mom: Moments, *, shrinkage: float = SHRINKAGE
) -> tuple[np.ndarray, np.ndarray]:
    """Weights (m x k) and intercepts (m) of a linear method from stacked moments."""
    m, k = mom.cross.shape
    zero = np.zeros(m)
    if method == "equal":
        return np.full((m, k), 1.0 / k), zero
    if method == "inverse-mse":
        inverse = 1.0 / np.maximum(mom.mse, 1e-300)
        return inverse / inverse.sum(axis=1, keepdims=True), zero
    if method == "rank":
        from scipy import stats  # imported here: `check` loads this module without scipy.stats

        ranks = stats.rankdata(mom.mse, method="min", axis=1)
        inverse = 1.0 / ranks
        return inverse / inverse.sum(axis=1, keepdims=True), zero
    if method == "ols":
        intercept, slopes = _ols(mom)
        return slopes, intercept
    if method == "ols-sum-to-one":
        return _sum_to_one(mom.gram, mom.cross), zero
    if method == "ols-nonnegative":
        return _nonnegative(mom), zero
    if method == "shrink":
        psi = shrinkage_factor(mom.n, k, shrinkage)
        base = _sum_to_one(mom.gram, mom.cross)
        return psi[:, None] * base + (1 - psi[:, None]) / k, zero
    raise ValueError(f"method: {method!r} is not a linear combination method")


def _effective_shares(method: CombinationMethod, f: np.ndarray) -> np.ndarray:
    """T x k shares each model gets in the median or trimmed mean of each row."""
    t, k = f.shape
    order = np.argsort(f, axis=1, kind="stable")
    shares = np.zeros((t, k))
    rows = np.arange(t)[:, None]
    if method == "median":
        if k % 2:
            shares[rows, order[:, [k // 2]]] = 1.0
        else:
            shares[rows, order[:, [k // 2 - 1, k // 2]]] = 0.5
    else:  # trimmed: drop one lowest and one highest
        if k < 3:
            return np.full((t, k), 1.0 / k)
        shares[rows, order[:, 1:-1]] = 1.0 / (k - 2)
    return shares


def weights(
    method: CombinationMethod,
    forecasts: ArrayLike,
    outcomes: ArrayLike,
    *,
    shrinkage: float = SHRINKAGE,
) -> np.ndarray:
    """Combination weights estimated from a track record.

    Parameters
    ----------
    method
        One of the methods in the module docstring.
    forecasts
        T x k past forecasts of k models.
    outcomes
        T outcomes. All T rows enter the regression methods, so for ``shrink`` they are
        the T - h observations of Stock & Watson (2004) (see :func:`shrinkage_factor`).
    shrinkage
        kappa of ``shrink``.

    Returns
    -------
    numpy.ndarray
        k weights (for ``ols`` the slopes; the intercept is left out; for ``median`` and
        ``trimmed`` the average share each model received).

    Examples
    --------
    >>> weights("equal", [[1.0, 2.0, 3.0]], [2.0]).tolist()
    [0.3333333333333333, 0.3333333333333333, 0.3333333333333333]
    """
    f = np.atleast_2d(np.asarray(forecasts, dtype=float))
    y = np.asarray(outcomes, dtype=float)
    if y.shape != (f.shape[0],):
        raise ValueError("outcomes: expected one outcome per row of forecasts")
    if not (np.all(np.isfinite(f)) and np.all(np.isfinite(y))):
        raise ValueError("forecasts, outcomes: expected finite values")
    k = f.shape[1]
    if method == "given":
        if k != 1:
            raise ValueError(f"method 'given' expects one combined forecast, got {k} columns")
        return np.ones(1)
    if method in ("median", "trimmed"):
        return _effective_shares(method, f).mean(axis=0)
    w, _ = linear_weights(method, Moments.of(f, y), shrinkage=shrinkage)
    return w[0]


@dataclass(frozen=True)
class Combination:
    """The combined forecast for every origin and horizon, and the current weights.

    Attributes
    ----------
    method
        The method asked for.
    combined
        origins x horizons; NaN where no included model forecast.
    current_weights
        models x horizons: the current round's weights (0 for models left out).
    intercepts
        horizons: the current round's intercept (non-zero only for ``ols``).
    included
        models x horizons: models with a current-round forecast at that horizon.
    fallback
        horizons: True where the current round fell back to equal weights.
    rows
        horizons: past rows behind the current round's weights.
    negative
        horizons: True where a current weight is negative.
    outside
        horizons: True where the current combined forecast lies outside the range of the
        included models' current forecasts.
    """

    method: CombinationMethod
    combined: np.ndarray
    current_weights: np.ndarray
    intercepts: np.ndarray
    included: np.ndarray
    fallback: np.ndarray
    rows: np.ndarray
    negative: np.ndarray
    outside: np.ndarray


def _cumulative_moments(f: np.ndarray, y: np.ndarray, valid: np.ndarray) -> Moments:
    """Moments of rows 0..i for every i (rows where ``valid`` is False contribute zero)."""
    fz = np.where(valid[:, None], f, 0.0)
    yz = np.where(valid, y, 0.0)
    return Moments(
        gram=np.cumsum(fz[:, :, None] * fz[:, None, :], axis=0),
        cross=np.cumsum(fz * yz[:, None], axis=0),
        sums=np.cumsum(fz, axis=0),
        y_sum=np.cumsum(yz),
        yy=np.cumsum(yz**2),
        n=np.cumsum(valid.astype(float)),
    )


def _window(cum: Moments, end: np.ndarray, window: int) -> Moments:
    """Moments of the rows (end - window, end] from cumulative sums (end = -1: no rows)."""

    def take(a: np.ndarray, idx: np.ndarray) -> np.ndarray:
        out = np.zeros((idx.size, *a.shape[1:]))
        ok = idx >= 0
        out[ok] = a[idx[ok]]
        return out

    parts = {}
    for name in ("gram", "cross", "sums", "y_sum", "yy", "n"):
        a = getattr(cum, name)
        value = take(a, end)
        if window > 0:
            value = value - take(a, end - window)
        parts[name] = value
    return Moments(**parts)


def _history_rows(
    method: CombinationMethod,
    f: np.ndarray,
    y: np.ndarray,
    h: int,
    window: int,
    shrinkage: float,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per origin: weights (n x k), intercepts and rows, from origins o' <= o - h - 1 only."""
    n, k = f.shape
    valid = np.all(np.isfinite(f), axis=1) & np.isfinite(y)
    cum = _cumulative_moments(np.nan_to_num(f), np.nan_to_num(y), valid)
    # The last past row whose outcome period came before each origin: o' + h <= o - 1.
    end = np.arange(n) - h - 1
    mom = _window(cum, end, window)
    w, b = linear_weights(method, mom, shrinkage=shrinkage)
    short = mom.n < max(min_history(method, k), 1)
    w[short] = 1.0 / k
    b[short] = 0.0
    return w, b, mom.n


def combine(
    method: CombinationMethod,
    panel: Panel,
    *,
    window: int = 0,
    shrinkage: float = SHRINKAGE,
) -> Combination:
    """Combine the panel's models without look-ahead.

    At each horizon the models with a current-round forecast are combined. At a past origin
    the weights come from the rows whose outcome period is before that origin (within
    ``window`` rows, 0 = all); where a model did not forecast then, or the history is too
    short for the method, the available models are averaged with equal weights.
    ``shrinkage`` is kappa of ``shrink`` (see :func:`shrinkage_factor`).
    """
    models, _, horizons = panel.forecasts.shape
    included = ~np.isnan(panel.current)
    combined = np.full((panel.origins.size, horizons), np.nan)
    current = np.zeros((models, horizons))
    intercepts = np.zeros(horizons)
    fallback = np.zeros(horizons, dtype=bool)
    rows = np.zeros(horizons, dtype=int)
    for h in range(horizons):
        idx = np.flatnonzero(included[:, h])
        if idx.size == 0:
            continue
        f = panel.forecasts[idx, :, h].T  # origins x k
        y = panel.outcomes[:, h]
        available = np.isfinite(f)
        with np.errstate(invalid="ignore"):
            equal = np.where(
                available.any(axis=1),
                np.nansum(f, axis=1) / np.maximum(available.sum(axis=1), 1),
                np.nan,
            )
        if method in ("median", "trimmed"):
            values = _robust(method, f)
            shares = _effective_shares(method, f[-1:, :])[0]
            combined[:, h], current[idx, h] = values, shares
            rows[h] = int(np.sum(np.all(available, axis=1) & np.isfinite(y)))
            continue
        if method in ("equal", "given") or idx.size == 1:
            combined[:, h] = equal
            current[idx, h] = 1.0 / idx.size
            continue
        w, b, n = _history_rows(method, f, y, h, window, shrinkage)
        complete = np.all(available, axis=1)
        linear = np.einsum("ok,ok->o", w, np.nan_to_num(f)) + b
        combined[:, h] = np.where(complete, linear, equal)
        current[idx, h], intercepts[h] = w[-1], b[-1]
        fallback[h] = n[-1] < min_history(method, idx.size)
        rows[h] = int(n[-1])
    negative = np.any(current < -TOLERANCE, axis=0)
    return Combination(
        method,
        combined,
        current,
        intercepts,
        included,
        fallback,
        rows,
        negative,
        _outside(combined[-1], panel.current, included),
    )


def _outside(combined: np.ndarray, current: np.ndarray, included: np.ndarray) -> np.ndarray:
    """horizons: True where the combination leaves the included models' current range."""
    low = np.min(np.where(included, current, np.inf), axis=0)
    high = np.max(np.where(included, current, -np.inf), axis=0)
    with np.errstate(invalid="ignore"):
        return (combined < low - TOLERANCE) | (combined > high + TOLERANCE)


def _robust(method: CombinationMethod, f: np.ndarray) -> np.ndarray:
    """Row-wise median or trimmed mean over the available models."""
    out = np.full(f.shape[0], np.nan)
    for i, row in enumerate(f):
        values = np.sort(row[np.isfinite(row)])
        if values.size == 0:
            continue
        if method == "median":
            out[i] = float(np.median(values))
        else:
            out[i] = float(values[1:-1].mean()) if values.size >= 3 else float(values.mean())
    return out
