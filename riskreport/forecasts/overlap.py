"""The effective number of independent outcomes in a record of overlapping h-step errors.

An (h)-step-ahead forecast made at origin o and one made at o + 1 share h - 1 of the shocks
that decide their outcomes, so a record of n such errors holds far fewer than n independent
pieces of evidence: 700 statements at 18 months ahead may hold only a few dozen. This module
is the one place that counts them; the tests of equal accuracy and calibration (whether they
may speak), the predictive law (how much its spread is itself uncertain) and the record by
situation (when a subset is too small to tell) all use it.

The count is the sample size whose plain mean has the same variance as the mean of the
record: ``n_eff = n**2 / sum_ij rho(|o_i - o_j|)``, with ``rho`` the autocorrelation of
efficient s-step errors between origins k periods apart. Under efficiency an s-step error is
a sum of the s shocks between its origin and its outcome, so two errors k origins apart
share ``s - k`` of them: ``rho(k) = max(0, 1 - k / s)`` when the shocks have equal variance
(the triangular autocorrelation of an MA(s - 1) with equal weights; e.g. Hansen & Hodrick
1980, Journal of Political Economy 88(5), on overlapping forecast errors). The origins need
not be consecutive: a subset of rounds (a situation, a window with gaps) is counted by the
overlaps it actually has. For consecutive origins and n much larger than s this tends to
``n / s``, the number of non-overlapping outcomes.

Written here rather than taken from a library: statsmodels has long-run variances but no
count of independent outcomes for an arbitrary set of origins.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike


def effective_sample_size(origins: ArrayLike | int, steps: int) -> float:
    """Effective number of independent outcomes among overlapping ``steps``-step errors.

    Parameters
    ----------
    origins
        The origins (integer period ordinals, any order, no duplicates) of the errors in
        the record, or an int n for n consecutive origins.
    steps
        Steps ahead of each forecast, as the literature counts them (1: one step ahead, no
        overlap). The pipeline's horizon h is ``steps = h + 1``
        (:func:`riskreport.reading.panel.steps_ahead`).

    Returns
    -------
    float
        ``n**2 / sum_ij max(0, 1 - |o_i - o_j| / steps)``: between ``n / steps`` (roughly,
        for consecutive origins) and n (origins at least ``steps`` apart); 0.0 for an empty
        record.

    Examples
    --------
    >>> effective_sample_size(10, 1)
    10.0
    >>> round(effective_sample_size(600, 6), 1)  # about 600 / 6
    100.3
    >>> effective_sample_size([0, 12, 24], 12)  # outcomes a full horizon apart: independent
    3.0
    """
    if steps < 1:
        raise ValueError(f"steps must be at least 1, got {steps}")
    if isinstance(origins, int | np.integer):
        # Consecutive origins: lag k pairs n - k of them, so the double sum has a closed
        # form (the same value as the search below, without building the origins).
        n = int(origins)
        if n <= 0:
            return 0.0
        lags = np.arange(1, min(steps, n))
        return n * n / (n + 2.0 * float(np.sum((1.0 - lags / steps) * (n - lags))))
    else:
        index = np.sort(np.asarray(origins, dtype=np.int64).ravel())
    n = index.size
    if n == 0:
        return 0.0
    if steps == 1:
        return float(n)
    # Each pair closer than `steps` overlaps; for sorted origins the partners of i within
    # reach are a contiguous run, so the double sum costs O(n * steps), not O(n**2).
    total = float(n)  # the diagonal, rho(0) = 1
    for lag in range(1, steps):
        # pairs (i, j), j > i, with o_j - o_i == lag, found by searching each o_i + lag
        target = index + lag
        position = np.searchsorted(index, target)
        hits = (position < n) & (index[np.minimum(position, n - 1)] == target)
        total += 2.0 * (1.0 - lag / steps) * int(np.count_nonzero(hits))
    return n * n / total
