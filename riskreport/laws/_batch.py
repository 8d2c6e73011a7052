"""What the four error families' batched fits share: samples as NaN-padded rows, their
means and quantiles, the spread rule for a constant sample, and the shared constants.

Each fit (``laws/normal.py``, ``laws/two_piece_normal.py``, ``laws/skew_normal.py``,
``laws/empirical.py``) is a frozen dataclass whose parameters are floats for one fit, or
arrays with one entry per sample when many samples are fitted at once (the bootstrap and the
backtest replay). ``cdf`` and ``logpdf`` broadcast over that batch axis; ``ppf`` and ``rvs``
are for single fits. Batched fits take a 2-d array of samples with NaN padding (rows may
differ in length) and use closed forms or grid searches: no generic optimiser runs per
sample. Every batched fitter is named ``fit_<family>_batch``; ``fit_skew_normal`` is the one
single-sample fitter (the batch on one row, with a note at the skewness boundary).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike

SQRT_2_PI = math.sqrt(2.0 / math.pi)
SKEW_BOUND = 0.9952717  # |skewness| of the half-normal: the bound of TPN and skew-normal
# A constant sample (every error equal) has no spread to estimate. Every fit then uses
# this spread (percentage points, a millionth of a point): degenerate but finite, and
# flagged with CONSTANT_NOTE. Our rule, no source.
MIN_SCALE = 1e-6
CONSTANT_NOTE = (
    "all the errors are equal, so their spread cannot be estimated; the fit is degenerate "
    "(a negligible spread) and its probabilities are not meaningful"
)
# Two-piece normal: the mode stays between the k-th smallest and the k-th largest error,


def rows_of(samples: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    """Samples as a 2-d float array (NaN = missing) and the count per row."""
    x = np.atleast_2d(np.asarray(samples, dtype=float))
    return x, np.sum(np.isfinite(x), axis=1)


def nanmean_rows(x: np.ndarray, n: np.ndarray) -> np.ndarray:
    """Mean of each row over its finite entries (``n`` of them)."""
    return np.where(np.isfinite(x), x, 0.0).sum(axis=1) / np.maximum(n, 1)


def constant_notes(x: np.ndarray) -> tuple[str, ...]:
    """CONSTANT_NOTE when some row has no spread at all."""
    with np.errstate(invalid="ignore"):
        spread = np.nanmax(x, axis=1) - np.nanmin(x, axis=1)
    return (CONSTANT_NOTE,) if np.any(spread == 0) else ()


def row_quantiles(x: np.ndarray, n: np.ndarray, probs: tuple[float, ...]) -> list[np.ndarray]:
    """Linear-interpolation quantiles of each row (NaN padded), from one sort."""
    xs = np.sort(x, axis=1)
    rows = np.arange(x.shape[0])
    out = []
    for p in probs:
        pos = p * (n - 1)
        lo = np.floor(pos).astype(int)
        hi = np.minimum(lo + 1, n - 1)
        out.append(xs[rows, lo] + (pos - lo) * (xs[rows, hi] - xs[rows, lo]))
    return out
