"""Probabilities of crossing thresholds other than the band edges (``[target] thresholds``).

Per horizon, P(below t) = F(t) and P(above t) = 1 - F(t) from the final (after any
judgement) outcome distribution; the edge itself has probability zero for a continuous
distribution. For the path, P(below t at least once by h) and P(above t at least once by
h) are counted on the same joint simulation draws as the band's path probabilities.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:  # annotations only: `check` reads the config without scipy.stats
    from riskreport.laws.distributions import Distribution

MAX_THRESHOLDS = 8  # more lines than this no longer fit one table of the brief
LIMIT = 100.0  # |threshold| in percent; beyond it a value is almost surely a typing error


@dataclass(frozen=True)
class ThresholdHorizon:
    """P(below / above one threshold) in one reported period."""

    period: str
    h: int
    p_below: float
    p_above: float


@dataclass(frozen=True)
class ThresholdPath:
    """P(below / above one threshold at least once from the first period up to this one)."""

    period: str
    h: int
    p_below_at_least_once: float
    p_above_at_least_once: float


@dataclass(frozen=True)
class ThresholdResult:
    """One threshold: its per-period and its path probabilities."""

    threshold: float
    horizons: tuple[ThresholdHorizon, ...]
    path: tuple[ThresholdPath, ...]


def evaluate(
    thresholds: Sequence[float],
    dists: Sequence[Distribution],
    draws: np.ndarray,
    labels: Sequence[str],
) -> tuple[ThresholdResult, ...]:
    """Threshold probabilities per horizon and for the path.

    Parameters
    ----------
    thresholds
        Inflation rates in percent.
    dists
        The final outcome distribution of each reported period (h = 0, 1, ...).
    draws
        ``n x horizons`` joint draws of the outcome path (Gaussian copula).
    labels
        The period label of each horizon.

    Returns
    -------
    tuple of ThresholdResult
        One per threshold, in the order given.
    """
    results = []
    for t in thresholds:
        cdf = np.array([float(np.asarray(d.cdf(np.array([t])))[0]) for d in dists])
        below_once = np.logical_or.accumulate(draws < t, axis=1).mean(axis=0)
        above_once = np.logical_or.accumulate(draws > t, axis=1).mean(axis=0)
        results.append(
            ThresholdResult(
                threshold=float(t),
                horizons=tuple(
                    ThresholdHorizon(label, h, float(c), float(1.0 - c))
                    for h, (label, c) in enumerate(zip(labels, cdf, strict=True))
                ),
                path=tuple(
                    ThresholdPath(label, h, float(b), float(a))
                    for h, (label, b, a) in enumerate(
                        zip(labels, below_once, above_once, strict=True)
                    )
                ),
            )
        )
    return tuple(results)
