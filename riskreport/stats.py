"""Forecast comparison and calibration tests: the stable public name ``riskreport.stats``.

The implementation lives in :mod:`riskreport.forecasts.stats`; this module re-exports its
public functions. ``h`` counts steps ahead, as the literature does.
"""

from riskreport.forecasts.stats import (
    TestResult,
    berkowitz,
    diebold_mariano,
    encompassing,
    encompassing_multiple,
    knuppel,
    mariano_preve,
)

__all__ = [
    "TestResult",
    "berkowitz",
    "diebold_mariano",
    "encompassing",
    "encompassing_multiple",
    "knuppel",
    "mariano_preve",
]
