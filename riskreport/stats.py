"""Forecast comparison and calibration tests: the stable public name ``riskreport.stats``.

The implementation lives in :mod:`riskreport.forecasts.stats` and
:mod:`riskreport.forecasts.pit_tests`; this module re-exports their public functions. ``h`` counts steps ahead, as the literature does.
"""

from riskreport.forecasts.pit_tests import berkowitz, knuppel
from riskreport.forecasts.stats import (
    TestResult,
    diebold_mariano,
    encompassing,
    encompassing_multiple,
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
