"""The staff judgement and scenarios section."""

from __future__ import annotations

from dataclasses import dataclass

from riskreport.assessment import Assessment, HorizonResult, ScenarioHorizon
from riskreport.report import formatting as fmt
from riskreport.report.sections.common import Table, triple


@dataclass(frozen=True)
class JudgementRow:
    """Model-based against adjusted probabilities for one period the judgement moved."""

    period: str
    model_based: str
    adjusted: str
    change: str


@dataclass(frozen=True)
class JudgementEntry:
    """One judgement entry as the brief prints it."""

    periods: str
    terms: str
    reason: str


def applied(a: Assessment) -> tuple[tuple[JudgementEntry, ...], tuple[JudgementRow, ...], str]:
    if not a.judgement:
        return (), (), "No staff judgement is applied in this brief."
    entries = tuple(
        JudgementEntry(
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
            JudgementRow(
                period=base.period,
                model_based=" / ".join(triple(base)),
                adjusted=" / ".join(triple(final)),
                change=fmt.points(final.p_inside - base.p_inside),
            )
        )
    text = (
        "Each judgement maps the model-based distribution of each period it covers: the shift "
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


SCENARIOS_TEXT = (
    "Each scenario is a further judgement on the baseline, stated by staff. Below / inside / above the "
    "band, and the change in inside against the baseline."
)


@dataclass(frozen=True)
class JudgementContext:
    """The staff judgement and scenarios section as printed (``shown`` is False when the
    brief has neither)."""

    shown: bool
    heading: str
    text: str
    entries: Table[JudgementEntry]
    moves: Table[JudgementRow]
    scenarios_heading: str
    scenarios_text: str
    scenarios: Table[ScenarioRow]


def context(a: Assessment) -> JudgementContext:
    """The staff judgement and scenarios section."""
    entries, moves, text = applied(a)
    first, second = scenario_horizons(a)
    return JudgementContext(
        shown=bool(a.judgement or a.scenarios),
        heading=title(a),
        text=text,
        entries=Table(
            "Judgement applied, with the reasons given by staff",
            JudgementEntry(periods="Periods", terms="Terms", reason="Reason"),
            entries,
        ),
        moves=Table(
            "Below / inside / above: model-based and after judgement",
            JudgementRow(
                period="Period",
                model_based="Model-based",
                adjusted="After judgement",
                change="Change in inside",
            ),
            moves,
        ),
        scenarios_heading="Alternative scenarios",
        scenarios_text=SCENARIOS_TEXT,
        scenarios=Table(
            "Scenarios next to the baseline",
            ScenarioRow(
                name="Scenario",
                reason="",
                first=a.horizon_result(first).period,
                second=f"{a.horizon_result(second).period} (policy horizon)",
            ),
            scenario_rows(a) if a.scenarios else (),
        ),
    )
