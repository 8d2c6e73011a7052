"""Forecast combination: the stable public name ``riskreport.combination``.

The implementation lives in :mod:`riskreport.forecasts.combination`; this module
re-exports its public names.
"""

from riskreport.forecasts.combination import (
    Combination,
    combine,
    linear_weights,
    min_history,
    shrinkage_factor,
    weights,
)

__all__ = [
    "Combination",
    "combine",
    "linear_weights",
    "min_history",
    "shrinkage_factor",
    "weights",
]
