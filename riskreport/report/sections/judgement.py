"""The staff judgement and scenarios section."""

from __future__ import annotations

from dataclasses import dataclass

from riskreport.assessment import Assessment, HorizonResult, ScenarioHorizon
from riskreport.report import formatting as fmt
from riskreport.report.sections.common import triple


@dataclass(frozen=True)
class OverlayRow:
    """Model-based against adjusted probabilities for one period the overlay moved."""

    period: str
    model_based: str
    adjusted: str
    change: str


@dataclass(frozen=True)
class OverlayEntry:
    """One judgement entry as the brief prints it."""

    periods: str
    terms: str
    reason: str


def overlay(a: Assessment) -> tuple[tuple[OverlayEntry, ...], tuple[OverlayRow, ...], str]:
    if not a.judgement:
        return (), (), "No staff judgement overlay is applied in this brief."
    entries = tuple(
        OverlayEntry(
            periods=f"{j.start} to {j.end}",
            terms=(
                f"centre {fmt.number(j.shift, 2, signed=True)} pp; spread \u00d7{fmt.number(j.scale, 2)}; "
                f"skew {fmt.number(j.skew, 2, signed=True)} pp (mean minus mode)"
            ),
            reason=j.reason,
        )
        for j in a.judgement
    )
    moved = {p for j in a.judgement for p in j.periods}
    rows = []
    for base, final in zip(a.model_based_horizons, a.horizons, strict=True):
        if base.period not in moved:
            continue
        rows.append(
            OverlayRow(
                period=base.period,
                model_based=" / ".join(triple(base)),
                adjusted=" / ".join(triple(final)),
                change=fmt.points(final.p_inside - base.p_inside),
            )
        )
    text = (
        "The overlay maps the model-based distribution of each period it covers: the shift "
        "moves the centre, the scale multiplies the spread, and the skew adds to the mean "
        "minus the mode (positive tilts the risks upwards), the published method of Britton, "
        "Fisher and Whitley (1998) and Wallis (2004). Both sets of probabilities are shown; "
        "the model-based ones are what the track record alone implies."
    )
    return entries, tuple(rows), text


@dataclass(frozen=True)
class ScenarioRow:
    """One scenario (or the baseline) at two horizons: below / inside / above, printed."""

    name: str
    reason: str
    first: str
    second: str


def scenario_horizons(a: Assessment) -> tuple[int, int]:
    """The two horizons the scenario table shows: one year ahead and the policy horizon."""
    per_year = 12 if a.frequency == "monthly" else 4
    first = min(per_year, a.horizons[-1].h)
    return (
        (first, a.policy_horizon)
        if first != a.policy_horizon
        else (max(first // 2, 0), a.policy_horizon)
    )


def _scenario_cell(row: ScenarioHorizon, base: HorizonResult) -> str:
    texts = fmt.outcome_texts(row.p_below, row.p_inside, row.p_above)
    return " / ".join(texts) + f" (inside {fmt.points(row.p_inside - base.p_inside)})"


def scenario_rows(a: Assessment) -> tuple[ScenarioRow, ...]:
    h1, h2 = scenario_horizons(a)
    b1, b2 = a.horizon_result(h1), a.horizon_result(h2)
    rows = [
        ScenarioRow(
            "Baseline (after judgement)", "", " / ".join(triple(b1)), " / ".join(triple(b2))
        )
    ]
    for sc in a.scenarios:
        by_h = {x.h: x for x in sc.horizons}
        rows.append(
            ScenarioRow(
                sc.name,
                " ".join(sc.reasons),
                _scenario_cell(by_h[h1], b1),
                _scenario_cell(by_h[h2], b2),
            )
        )
    return tuple(rows)


def title(a: Assessment) -> str:
    """The section's heading: it names only what the brief has."""
    if a.judgement and a.scenarios:
        return "Staff judgement and scenarios"
    return "Staff judgement" if a.judgement else "Scenarios"
