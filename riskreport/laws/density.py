"""The predictive density of the outcome at chosen horizons (``[brief] density_horizons``).

The curves are the outcome distributions' own densities, f(x) = exp(logpdf(x)), on one grid
per horizon that spans both the model-based and the final (after judgement) distribution
from their 0.01% to their 99.99% quantile, so the curves hold 99.98% or more of the mass.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from riskreport.laws.distributions import Distribution

GRID_POINTS = 241
TAIL = 1e-4


@dataclass(frozen=True)
class DensityCurve:
    """The outcome density in one period: after judgement and model-based, on one grid."""

    period: str
    h: int
    x: tuple[float, ...]
    pdf: tuple[float, ...]
    model_based_pdf: tuple[float, ...]


def curve(final: Distribution, model_based: Distribution, period: str, h: int) -> DensityCurve:
    """The two densities of one period on a shared grid.

    Parameters
    ----------
    final, model_based
        The outcome distribution after the staff judgement, and before it.
    period, h
        The period's label and horizon.

    Returns
    -------
    DensityCurve
        ``GRID_POINTS`` evenly spaced points and both densities there (per pp).
    """
    ends = np.concatenate(
        [np.asarray(d.ppf(np.array([TAIL, 1 - TAIL])), dtype=float) for d in (final, model_based)]
    )
    x = np.linspace(float(ends.min()), float(ends.max()), GRID_POINTS)
    with np.errstate(divide="ignore", under="ignore"):
        f = np.exp(np.asarray(final.logpdf(x), dtype=float))
        g = np.exp(np.asarray(model_based.logpdf(x), dtype=float))
    return DensityCurve(
        period,
        h,
        tuple(float(v) for v in x),
        tuple(float(v) for v in f),
        tuple(float(v) for v in g),
    )
