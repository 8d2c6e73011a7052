"""Probabilities for calendar-year targets: the calendar-year average and the year-end value.

From the joint simulation of the reported periods (one draw = one path); periods of the year
already observed enter as their known outcomes, so a partly observed year mixes known and
simulated values. A year with a period neither observed nor reported is left out.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from riskreport._typing import Frequency
from riskreport.reading import periods
from riskreport.reading.config import Band


@dataclass(frozen=True)
class AnnualResult:
    """Band probabilities for one calendar year on one basis."""

    year: int
    basis: str
    band: tuple[float, float]
    p_below: float
    p_inside: float
    p_above: float
    observed_periods: int
    simulated_periods: int


def _shares(values: np.ndarray, band: Band) -> tuple[float, float, float]:
    below = float(np.mean(values < band.lower))
    above = float(np.mean(values > band.upper))
    return below, 1.0 - below - above, above


def annual(
    draws: np.ndarray,
    ordinals: list[int],
    known: dict[int, float],
    frequency: Frequency,
    band_for: Callable[[int], Band],
) -> tuple[AnnualResult, ...]:
    """Calendar-year-average and year-end probabilities for every year the draws reach.

    Parameters
    ----------
    draws
        n x reported periods joint draws of the outcome.
    ordinals
        The reported periods (ordinals), in the order of the draws' columns.
    known
        Observed outcomes by period ordinal (only those known at as_of).
    frequency
        Monthly or quarterly.
    band_for
        Callable period ordinal -> Band; the band of a year is the one in force in its last
        period.
    """
    per_year = periods.PERIODS_PER_YEAR[frequency]
    column = {o: i for i, o in enumerate(ordinals)}
    years = sorted({periods.year_of(o, frequency) for o in ordinals})
    results: list[AnnualResult] = []
    for year in years:
        start = periods.parse(f"{year}-01" if frequency == "monthly" else f"{year}-Q1")
        assert start is not None
        members = [start.ordinal + i for i in range(per_year)]
        if not all(o in column or o in known for o in members):
            continue
        band = band_for(members[-1])
        simulated = [o for o in members if o in column]
        observed = [o for o in members if o not in column]
        total = draws[:, [column[o] for o in simulated]].sum(axis=1) + sum(
            known[o] for o in observed
        )
        below, inside, above = _shares(total / per_year, band)
        results.append(
            AnnualResult(
                year,
                "calendar-year-average",
                (band.lower, band.upper),
                below,
                inside,
                above,
                len(observed),
                len(simulated),
            )
        )
        last = members[-1]
        if last in column:
            below, inside, above = _shares(draws[:, column[last]], band)
            results.append(
                AnnualResult(year, "year-end", (band.lower, band.upper), below, inside, above, 0, 1)
            )
    return tuple(results)
