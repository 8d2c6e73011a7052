"""Benchmark forecasts built from the outcomes alone, in pseudo-real time.

At origin o the information set holds the outcomes up to o - 1 (the outcome of period o is
what the nowcast h = 0 forecasts), so both benchmarks use only those.
"""

from __future__ import annotations

import numpy as np

from riskreport.reading.panel import Panel

AR_LAGS = 2  # a low-order autoregression; common practice, no source
AR_MIN_ROWS = 24


def no_change(panel: Panel) -> np.ndarray:
    """origins x horizons: the last known outcome, for every horizon."""
    return np.repeat(panel.last_outcome[:, None], panel.max_h + 1, axis=1)


def autoregression(panel: Panel, lags: int = AR_LAGS) -> np.ndarray:
    """origins x horizons: iterated forecasts of an AR(lags) with intercept, fitted by OLS on
    the outcomes known at each origin (expanding window).

    Notes
    -----
    y_t = c + sum_j a_j y_{t-j} + u_t. The regressions at every origin come from cumulative
    sums of the cross-products (one batched solve), not one fit per origin.
    """
    y = panel.series
    n = y.size
    # Row t of the regression: target y_t, regressors (1, y_{t-1}, ..., y_{t-lags}).
    x = np.full((n, lags + 1), np.nan)
    x[:, 0] = 1.0
    for j in range(1, lags + 1):
        x[j:, j] = y[:-j]
    valid = np.isfinite(y) & np.all(np.isfinite(x), axis=1)
    xz = np.where(valid[:, None], x, 0.0)
    yz = np.where(valid, y, 0.0)
    xx = np.cumsum(xz[:, :, None] * xz[:, None, :], axis=0)
    xy = np.cumsum(xz * yz[:, None], axis=0)
    count = np.cumsum(valid)

    last = panel.origins - 1 - panel.series_start  # index of the last known outcome
    ok = (last >= lags) & (count[np.clip(last, 0, n - 1)] >= AR_MIN_ROWS)
    idx = np.clip(last, 0, n - 1)
    beta = np.einsum("oij,oj->oi", np.linalg.pinv(xx[idx]), xy[idx])
    history = np.stack([y[np.clip(idx - j, 0, n - 1)] for j in range(lags)], axis=1)
    out = np.full((panel.origins.size, panel.max_h + 1), np.nan)
    for h in range(panel.max_h + 1):
        step = beta[:, 0] + np.einsum("oj,oj->o", beta[:, 1:], history)
        out[:, h] = step
        history = np.concatenate([step[:, None], history[:, :-1]], axis=1)
    out[~ok] = np.nan
    return out
