"""The calibration section: would past probability statements have held?"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from riskreport.assessment import Assessment
from riskreport.replay.calibration import MIN_TEST_ROUNDS, CoverageResult
from riskreport.report import formatting as fmt
from riskreport.report.sections import questions
from riskreport.report.sections.common import (
    FAMILY_NAMES,
    SIGNIFICANCE,
    ChartBlock,
    Table,
    ahead_label,
    chart,
    declined,
    join_h,
    summary_horizons,
    too_few_text,
    units,
)


def coverage(a: Assessment, h: int, nominal: float) -> CoverageResult | None:
    return next((c for c in a.calibration.coverage if c.h == h and c.nominal == nominal), None)


COVERAGE_TOO_NARROW = 0.85  # 90% ranges holding less often than this were too narrow


COVERAGE_TOO_WIDE = 0.97  # and more often than this, too wide (common practice, no source)


def coverage_lines(a: Assessment, shown: tuple[int, ...]) -> list[str]:
    """What the replayed 90% ranges say, naming only the horizons that could be checked."""
    checked = {h: cv for h in shown if (cv := coverage(a, h, 0.9)) is not None}
    if not checked:
        return [
            "There are too few past rounds to replay the method, so how its 90% ranges held "
            "cannot be checked."
        ]
    narrow = [h for h, cv in checked.items() if cv.observed < COVERAGE_TOO_NARROW]
    wide = [h for h, cv in checked.items() if cv.observed > COVERAGE_TOO_WIDE]
    lines = []
    if narrow:
        lines.append(
            f"The 90% ranges held the outcome clearly less often than 90% at {join_h(a, narrow)}: "
            "past uncertainty at those horizons was larger than the fitted distributions said."
        )
    if wide:
        lines.append(
            f"The 90% ranges held the outcome more often than 90% at {join_h(a, wide)}: "
            "the fitted distributions there were wider than past errors needed."
        )
    fine = [h for h in checked if h not in narrow and h not in wide]
    if fine:
        lines.append(
            f"The 90% ranges held the outcome about as often as they should at {join_h(a, fine)}."
        )
    unchecked = [h for h in shown if h not in checked]
    if unchecked:
        lines.append(f"Too few past rounds to check the ranges at {join_h(a, unchecked)}.")
    return lines


@dataclass(frozen=True)
class CoverageRow:
    """How often the 50% and 90% ranges held the outcome at one horizon."""

    horizon: str
    half: str
    ninety: str
    rounds: str


def calibration(
    a: Assessment, shown: tuple[int, ...]
) -> tuple[tuple[str, ...], tuple[CoverageRow, ...]]:
    c = a.calibration
    rows = []
    for h in shown:
        half, ninety = coverage(a, h, 0.5), coverage(a, h, 0.9)
        if half and ninety:
            rows.append(
                CoverageRow(
                    str(h),
                    fmt.single_percent(half.observed),
                    fmt.single_percent(ninety.observed),
                    str(ninety.n),
                )
            )
    lines = [
        f"The replay fits the {FAMILY_NAMES.get(c.distribution, c.distribution)} error distribution at every past round "
        "from the errors known then and scores the outcome that followed; staff judgement "
        "is not replayed."
    ]
    lines.extend(coverage_lines(a, shown))
    tests = {(t.name, t.horizon): t for t in c.tests}
    berk = tests.get(("berkowitz", 0))
    if berk and not math.isfinite(berk.pvalue):
        lines.append(
            "For the nowcast, the Berkowitz test could not be computed: "
            + "; ".join(berk.notes)
            + "."
        )
    elif berk:
        verdict = "rejects" if berk.pvalue < SIGNIFICANCE else "does not reject"
        lines.append(
            f"For the nowcast, the Berkowitz test {verdict} well-calibrated, independent PITs "
            f"({fmt.p_value(berk.pvalue)})."
        )
    knuppel = [h for h in shown if ("knuppel", h) in tests]
    # A test with no value supports neither verdict: it declined (too few independent
    # outcomes for it to hold its size) or the PITs did not vary.
    run = [h for h in knuppel if math.isfinite(tests[("knuppel", h)].pvalue)]
    too_few = [h for h in knuppel if declined(tests[("knuppel", h)].notes)]
    undefined = [h for h in knuppel if h not in run and h not in too_few]
    rejected = [h for h in run if tests[("knuppel", h)].pvalue < SIGNIFICANCE]
    if too_few:
        lines.append(too_few_text(a, too_few, "calibration (raw-moment test)"))
    if undefined:
        lines.append(
            f"The raw-moment calibration test could not be computed at {join_h(a, undefined)}: "
            "the PITs there do not vary enough."
        )
    if run:
        lines.append(
            "A raw-moment test that allows for the overlap of multi-step errors (Knueppel 2015) "
            + (
                f"rejects calibration at {join_h(a, rejected)}."
                if rejected
                else f"does not reject calibration at {join_h(a, run)}; it has little "
                "power far ahead, so this is weak evidence that the ranges are right."
            )
        )
    elif not undefined and not too_few:
        lines.append(
            "The calibration tests were not run: they need at least "
            f"{MIN_TEST_ROUNDS} replayed rounds at a horizon."
        )
    skill = {r.h: r.skill for r in c.rps.by_horizon}
    scored = [h for h in shown if h in skill]
    better = [h for h in scored if skill[h] > 0]
    if scored:
        lines.append(
            "Against a benchmark that always says the historical shares of below, inside and "
            "above, the ranked probability score is "
            + (f"better at {join_h(a, better)}" if better else f"no better at {join_h(a, scored)}")
            + "."
        )
    return tuple(lines), tuple(rows)


PIT_CAPTION = (
    "PIT histograms of past rounds by horizon group (replay of the model-based method). "
    "Bars above the dashed line mark outcomes that fell there more often than the "
    "distributions said."
)
RELIABILITY_CAPTION = (
    "Said versus happened: the probability of being inside the band, against how "
    "often it was (labels: cases, one per past round and horizon)."
)


def pit_alt(a: Assessment) -> str:
    """Alt text of the PIT histograms."""
    parts = []
    for g in a.calibration.pit:
        counts = g.counts
        n = sum(counts)
        parts.append(
            f"{g.h_from} to {g.h_to} {units(a)} ahead: {fmt.single_percent(counts[0] / n)} in the lowest tenth and "
            f"{fmt.single_percent(counts[-1] / n)} in the highest (10% each if calibrated)"
        )
    return (
        "Histograms of the probability integral transforms of past outcomes. "
        + "; ".join(parts)
        + "."
    )


def reliability_alt(a: Assessment) -> str:
    """Alt text of the reliability chart."""
    rows = a.calibration.brier.reliability
    parts = [
        f"said {fmt.single_percent(r.forecast_mean)}, happened {fmt.single_percent(r.observed_frequency)} ({r.n} rounds)"
        for r in rows
    ]
    return "Reliability of the probability of being inside the band: " + "; ".join(parts) + "."


@dataclass(frozen=True)
class CalibrationContext:
    """The calibration section as printed: would past probability statements have held?"""

    heading: str
    text: tuple[str, ...]
    pit: ChartBlock | None
    reliability: ChartBlock | None
    coverage: Table[CoverageRow]
    situation_heading: str
    situation_text: str


def context(a: Assessment, charts: Mapping[str, ChartBlock]) -> CalibrationContext:
    """The calibration section at the horizons the compact tables show."""
    lines, rows = calibration(a, summary_horizons(a))
    return CalibrationContext(
        heading="Would past probability statements have held?",
        text=lines,
        pit=chart(charts, "pit"),
        reliability=chart(charts, "reliability"),
        coverage=Table(
            "How often the central ranges held the outcome in past rounds",
            CoverageRow(
                horizon=ahead_label(a), half="50% range", ninety="90% range", rounds="Rounds"
            ),
            rows,
        ),
        situation_heading="In situations like today's",
        situation_text=questions.situation_text(a),
    )
