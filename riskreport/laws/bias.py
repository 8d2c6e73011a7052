"""The centre through regime change: a bias correction followed prequentially.

B(o, h) is a discounted mean of the h-step errors known at origin o (those whose outcome
period o' + h is at most o - 1), the weights halving every half-life (``HALF_LIVES``, in
years of outcome periods), shrunk toward zero by a prior worth ``PRIOR_OUTCOMES`` independent outcomes:

    B(o, h) = sum_t w_t e_h(t) / (sum_t w_t + PRIOR_OUTCOMES * (h + 1)),

w_t = lambda^(o - 1 - t) over the outcome periods t. Overlapping h-step errors hold about one
independent outcome per h + 1 of them, so the prior counts h + 1 errors per outcome: the long
horizons, whose discounted mean is mostly the noise of a few episodes, are shrunk the most.

The corrected forecast is the point forecast plus B, its errors the errors minus B; the
replay grades the corrected method exactly as it would have been run (B at each origin uses
only outcomes known there), and the optimal prediction pool gives the corrected laws weight
only as far as their past scores earn it (``centre = "auto"``): a short half-life follows a
regime change, a long one estimates a lasting bias precisely, and the pool weighs the two
by past score. An exponentially discounted
mean is the usual way of tracking a drifting level (exponential smoothing: Brown 1959,
"Statistical forecasting for inventory control"; recalled from memory); the half-life and
the prior are our choice (no source), not tuned to any history.
"""

from __future__ import annotations

import numpy as np
from scipy import signal

# An error's weight halves every this many years of outcomes (our choice): two years follow
# a regime change, eight estimate a lasting bias from many outcomes.
HALF_LIVES: tuple[float, ...] = (2.0, 8.0)
PRIOR_OUTCOMES = 2.0  # the zero prior counts as this many independent outcomes (our choice)
LABEL = "bias-corrected"  # in a corrected candidate's label


def label(half_life: float) -> str:
    """The label suffix of a correction, e.g. ``bias-corrected 2y``."""
    return f"{LABEL} {half_life:g}y"


def smoothing(periods_per_year: int, half_life: float) -> float:
    """The discount lambda per period: lambda^(half_life * periods_per_year) = 1/2."""
    return float(0.5 ** (1.0 / (half_life * periods_per_year)))


def corrections(errors: np.ndarray, periods_per_year: int, half_life: float) -> np.ndarray:
    """B(o, h) for every origin row and horizon column of ``errors`` (consecutive origins;
    the current round is the last row); 0 where no error of the horizon is known yet.

    Notes
    -----
    The discounted sums are first-order linear filters (``scipy.signal.lfilter``) over the
    outcome periods, one column per horizon, so the cost is linear in the origins.
    """
    n, width = errors.shape
    lam = smoothing(periods_per_year, half_life)
    # Row t + 1 of the filter's input holds the errors whose outcome period is t (origin
    # row o' = t - h), so its output at row o has seen exactly the outcomes up to o - 1.
    values = np.zeros((n + width + 1, width))
    weights = np.zeros((n + width + 1, width))
    known = np.isfinite(errors)
    rows = np.arange(n)[:, None] + np.arange(width)[None, :] + 1
    columns = np.broadcast_to(np.arange(width), (n, width))
    values[rows, columns] = np.where(known, errors, 0.0)
    weights[rows, columns] = known
    total = signal.lfilter([1.0], [1.0, -lam], values, axis=0)[:n]
    count = signal.lfilter([1.0], [1.0, -lam], weights, axis=0)[:n]
    prior = PRIOR_OUTCOMES * (np.arange(width) + 1.0)
    return np.asarray(total / (count + prior[None, :]))


def corrected(
    combined: np.ndarray, errors: np.ndarray, periods_per_year: int, half_life: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The corrected forecasts combined + B and their errors errors - B (the outcomes are
    unchanged), and B itself; ``combined`` and ``errors`` are origins x horizons."""
    b = corrections(errors, periods_per_year, half_life)
    return combined + b, errors - b, b
