"""The appendix: probabilities for every reported period, the thresholds beyond the band and
the data behind the calibration charts."""

from __future__ import annotations

from dataclasses import dataclass

from riskreport.assessment import Assessment
from riskreport.report import formatting as fmt
from riskreport.report.sections import questions
from riskreport.report.sections.common import (
    BAND_TEXT,
    INTERVAL_TEXT,
    ProbabilityRow,
    Table,
    ahead_label,
    probability_head,
    probability_row,
    summary_horizons,
    threshold_label,
)
from riskreport.report.sections.summary import centre_label

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


@dataclass(frozen=True)
class ThresholdRow:
    """One row of the thresholds table: a threshold in one period, every number as printed."""

    threshold: str
    period: str
    h: str
    below: str
    above: str
    below_once: str
    above_once: str
    is_policy: bool


def threshold_rows(a: Assessment, shown: tuple[int, ...]) -> tuple[ThresholdRow, ...]:
    """Each ``[target] thresholds`` line at the brief's summary horizons."""
    rows = []
    for t in a.thresholds:
        for at, path in zip(t.horizons, t.path, strict=True):
            if at.h not in shown:
                continue
            rows.append(
                ThresholdRow(
                    threshold=threshold_label(t.threshold),
                    period=at.period,
                    h=str(at.h),
                    below=fmt.single_percent(at.p_below),
                    above=fmt.single_percent(at.p_above),
                    below_once=fmt.single_percent(path.p_below_at_least_once),
                    above_once=fmt.single_percent(path.p_above_at_least_once),
                    is_policy=at.h == a.policy_horizon,
                )
            )
    return tuple(rows)


THRESHOLD_TEXT = (
    "Below means strictly below the line and above strictly above it (the line itself has "
    "no probability of its own). \u201cAt least once\u201d is counted on the same simulated "
    "paths as the band\u2019s path probabilities, from the first reported period up to the "
    "one shown."
)


@dataclass(frozen=True)
class AppendixContext:
    """The appendix as printed: every period, the thresholds and the calibration data."""

    heading: str
    data_heading: str
    text: str
    periods: Table[ProbabilityRow]
    thresholds_heading: str
    thresholds_text: str
    thresholds: Table[ThresholdRow]
    calibration_heading: str
    pit: Table[PitRow]
    reliability: Table[ReliabilityRow]
    questions_heading: str
    sensitivity: Table[questions.SensitivityTableRow]
    situations: Table[questions.SituationTableRow]
    attribution: Table[questions.AttributionTableRow]
    leave_one_out: Table[questions.LeaveOneOutTableRow]


def lead(a: Assessment) -> str:
    """The paragraph under the appendix heading."""
    return (
        "The data behind the outlook and probability charts. Models' forecast: the combined "
        f"forecast of the models. Centre: the most likely value, {centre_label(a)}. "
        f"{INTERVAL_TEXT} {BAND_TEXT}"
    )


def context(a: Assessment) -> AppendixContext:
    """The appendix."""
    ahead = ahead_label(a)
    return AppendixContext(
        heading="Probabilities by period",
        data_heading="Thresholds and the data behind the calibration charts",
        text=lead(a),
        periods=Table(
            "Below, inside and above the band for every reported period, after judgement",
            probability_head(a),
            all_rows(a),
        ),
        thresholds_heading="Thresholds beyond the band",
        thresholds_text=THRESHOLD_TEXT,
        thresholds=Table(
            "Probability of inflation below or above each threshold, and of crossing it at "
            "least once, after judgement",
            ThresholdRow(
                threshold="Threshold",
                period="Period",
                h=ahead,
                below="Below",
                above="Above",
                below_once="Below at least once",
                above_once="Above at least once",
                is_policy=False,
            ),
            threshold_rows(a, summary_horizons(a)),
        ),
        calibration_heading="Data behind the calibration charts",
        pit=Table(
            "PIT counts by tenth of the distribution, by horizon group",
            PitRow(group=ahead, counts=PIT_BINS, n="n"),
            pit_rows(a),
        ),
        reliability=Table(
            "Said versus happened, probability of inside",
            ReliabilityRow(said="Said", happened="Happened", n="Cases"),
            reliability_rows(a),
        ),
        questions_heading="How robust the call is, the record by situation, who moved the centre",
        sensitivity=questions.sensitivity_table(a),
        situations=questions.situation_table(a),
        attribution=questions.attribution_table(a),
        leave_one_out=questions.leave_one_out_table(a),
    )
