"""The spread implied by the forecasts' own revisions.

An h-step error is the sum of the revisions the forecast of its target goes through before
the outcome, plus the last one, the nowcast's error:

    e(o, h) = sum_{k=1..h} r(o + h - k, k) + e(o + h, 0),   r(o, k) = f(o + 1, k - 1) - f(o, k),

f(o, k) the forecast made at origin o for period o + k. When the forecasts are efficient
(each one uses what is known at its origin, so no revision is predictable from earlier
ones) the terms are uncorrelated, and the mean squared h-step error is the nowcast's plus
the revisions' mean squares: E e_h^2 = E e_0^2 + sum_{k=1..h} E r_k^2 (the decomposition of
multi-horizon errors into forecast updates of Clark, McCracken & Mertens 2020, "Modeling
time-varying uncertainty of multiple-horizon forecast errors", REStat 102(1); recalled from
memory, and theirs is a model with stochastic volatility, this a plain moment identity).

Its value: a revision is known one round after it is made, not h rounds later when its
target's outcome is, and consecutive revisions do not overlap. Over ten years of monthly
rounds the long-horizon spread then rests on about 120 independent pieces of evidence per
horizon instead of the 14 independent outcomes of the 12-month errors themselves. Its risk:
where the forecasts are not efficient (revisions that undo each other, or forecasts that
ignore news) the identity fails, so the spread option ``revisions`` is one member of the
pool, weighted by its past scores like the others.

The spread option rescales each horizon's law, fitted to its own errors as for a constant
spread, by sqrt(implied / own mean square) known at each origin, as the ``joint`` option
does with its own estimate.
"""

from __future__ import annotations

import numpy as np

from riskreport.laws import dynamics


def _window_mean_squares(
    values: np.ndarray, ends: np.ndarray, window: int | np.ndarray
) -> np.ndarray:
    """Per end index j (exclusive): the mean square of the known values among the last
    ``window`` known ones before j (0: all; one window per end index when an array); NaN
    where none is known. ``values`` is one column ordered in time; counting known values
    only, as the error windows do."""
    known = np.isfinite(values)
    squares = np.concatenate([[0.0], np.cumsum(np.where(known, values, 0.0) ** 2)])
    counts = np.concatenate([[0], np.cumsum(known)])
    ends = np.clip(ends, 0, values.size)
    upto = counts[ends]
    window = np.broadcast_to(np.asarray(window), ends.shape)
    # the index after which exactly `window` known values remain before j (0: from the start)
    skip = np.where(window > 0, np.maximum(upto - window, 0), 0)
    first = np.maximum(np.searchsorted(counts, skip, side="right") - 1, 0)
    n = upto - counts[first]
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(n > 0, (squares[ends] - squares[first]) / np.maximum(n, 1), np.nan)


def implied(forecasts: np.ndarray, errors: np.ndarray, window: int | np.ndarray) -> np.ndarray:
    """Origins x horizons: the mean squared error implied at each origin row by the known
    nowcast errors and revisions (NaN before the base horizon or where nothing is known).

    At origin row j the base horizon b's errors count when their outcome is known
    (o + b <= j - 1) and the revision r(o, k) when both forecasts are (o + 1 <= j); each
    term over its last ``window`` known values (0: all; or one window per origin row, as
    chosen by the replay). ``forecasts`` and ``errors`` are
    origins x horizons with consecutive origins (the current round the last row).
    """
    n, width = errors.shape
    b = dynamics.base_horizon(errors)
    rows = np.arange(n)
    out = np.full((n, width), np.nan)
    # the base horizon's errors e(o, b) are known at j when o <= j - 1 - b
    total = _window_mean_squares(errors[:, b], rows - b, window)
    out[:, b] = total
    for k in range(b + 1, width):
        revision = forecasts[1:, k - 1] - forecasts[:-1, k]  # r(o, k) at index o, known at o + 1
        total = total + _window_mean_squares(revision, rows, window)
        out[:, k] = total
    return out


def ratios(forecasts: np.ndarray, errors: np.ndarray, window: int | np.ndarray) -> np.ndarray:
    """Origins x horizons: sqrt(implied mean square / the horizon's own mean square over its
    last ``window`` known errors at that origin; ``window`` an int or one per origin row);
    1 where either cannot be formed."""
    n, width = errors.shape
    rows = np.arange(n)
    implied_ms = implied(forecasts, errors, window)
    own = np.column_stack(
        [_window_mean_squares(errors[:, h], rows - h, window) for h in range(width)]
    )
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = np.sqrt(implied_ms / own)
    return np.where(np.isfinite(ratio) & (ratio > 0), ratio, 1.0)
