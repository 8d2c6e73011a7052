"""Error distributions: the stable public name ``riskreport.distributions``.

The implementation lives in :mod:`riskreport.laws.distributions`; this module re-exports
its public names (fits and the maps staff judgement and the spread options apply).
"""

from riskreport.laws.distributions import (
    FAMILIES,
    Adjusted,
    Distribution,
    Fit,
    GivenQuantiles,
    Tilted,
    fit,
    fit_batch,
    mean,
    rebase,
    scale_about_zero,
    spread,
)

__all__ = [
    "FAMILIES",
    "Adjusted",
    "Distribution",
    "Fit",
    "GivenQuantiles",
    "Tilted",
    "fit",
    "fit_batch",
    "mean",
    "rebase",
    "scale_about_zero",
    "spread",
]
