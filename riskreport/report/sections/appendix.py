"""The appendix: probabilities for every reported period and the data behind the calibration
charts."""

from __future__ import annotations

from dataclasses import dataclass

from riskreport.assessment import Assessment
from riskreport.report import formatting as fmt
from riskreport.report.sections.common import ProbabilityRow, probability_row

PIT_BINS = tuple(str(k) for k in range(1, 11))  # the ten tenths of the PIT histograms


@dataclass(frozen=True)
class PitRow:
    """PIT counts by tenth for one horizon group."""

    group: str
    counts: tuple[str, ...]
    n: str


@dataclass(frozen=True)
class ReliabilityRow:
    """One bin of said versus happened for the probability of being inside."""

    said: str
    happened: str
    n: str


def all_rows(a: Assessment) -> tuple[ProbabilityRow, ...]:
    """Below / inside / above for every reported period."""
    return tuple(probability_row(r, a.policy_horizon) for r in a.horizons)


def pit_rows(a: Assessment) -> tuple[PitRow, ...]:
    """The PIT counts behind the histograms."""
    return tuple(
        PitRow(
            f"{g.h_from}\u2013{g.h_to}" if g.h_from != g.h_to else str(g.h_from),
            tuple(str(c) for c in g.counts),
            str(g.n),
        )
        for g in a.calibration.pit
    )


def reliability_rows(a: Assessment) -> tuple[ReliabilityRow, ...]:
    """The bins behind the reliability chart."""
    return tuple(
        ReliabilityRow(
            fmt.single_percent(r.forecast_mean),
            fmt.single_percent(r.observed_frequency),
            str(r.n),
        )
        for r in a.calibration.brier.reliability
    )
