"""The staff judgement and scenarios section."""

from __future__ import annotations

from dataclasses import dataclass

from riskreport.assessment import Assessment, HorizonResult, ScenarioHorizon
from riskreport.report import formatting as fmt
from riskreport.report.sections.common import (
    Table,
    printed_points,
    summary_horizons,
    triple,
)


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
                change=printed_points(triple(final)[1], triple(base)[1]),
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


BOARD_TEXT = (
    "Model-based: what the track record alone implies. After judgement: with the staff "
    "adjustment below, which shifts, widens or tilts each period's distribution."
)


def key_moves(a: Assessment, rows: tuple[JudgementRow, ...]) -> tuple[JudgementRow, ...]:
    """The rows the board page shows: the period the judgement moves most and the brief's
    summary horizons it covers."""
    pairs = zip(a.model_based_horizons, a.horizons, strict=True)
    largest = max(pairs, key=lambda p: abs(p[1].p_inside - p[0].p_inside))[1].period
    periods = {a.horizon_result(h).period for h in summary_horizons(a)} | {largest}
    return tuple(r for r in rows if r.period in periods)


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
    # The change from the printed numbers: 42% against 41% reads "+1 pp", never "0 pp".
    return " / ".join(texts) + f" (inside {printed_points(texts[1], triple(base)[1])})"


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


def page_title(a: Assessment) -> str:
    """The heading of the board brief's third page: what it holds."""
    parts = [
        p for p, there in (("Staff judgement", a.judgement), ("scenarios", a.scenarios)) if there
    ]
    if not parts:
        return "What changed"
    return " and ".join(parts).capitalize() + (", and what changed" if a.change else "")


SCENARIOS_TEXT = (
    "Each scenario is a further judgement on the baseline, stated by staff. Below / inside / above the "
    "band, and the change in inside against the baseline."
)


@dataclass(frozen=True)
class JudgementContext:
    """The staff judgement and scenarios section as printed (``shown`` is False when the
    brief has neither)."""

    shown: bool
    page_shown: bool  # the board brief's third page: judgement, scenarios or a change
    page_heading: str
    none_text: str
    heading: str
    text: str
    board_text: str
    entries: Table[JudgementEntry]
    moves: Table[JudgementRow]
    key_moves: Table[JudgementRow]
    scenarios_heading: str
    scenarios_text: str
    scenarios: Table[ScenarioRow]


def context(a: Assessment) -> JudgementContext:
    """The staff judgement and scenarios section."""
    entries, moves, text = applied(a)
    first, second = scenario_horizons(a)
    moves_head = JudgementRow(
        period="Period",
        model_based="Model-based",
        adjusted="After judgement",
        change="Change in inside",
    )
    return JudgementContext(
        shown=bool(a.judgement or a.scenarios),
        page_shown=bool(a.judgement or a.scenarios or (a.change and a.change.horizons)),
        page_heading=page_title(a),
        none_text="No staff judgement is applied and no scenario is set in this brief: the "
        "probabilities are the models' and the track record's alone.",
        heading=title(a),
        text=text,
        entries=Table(
            "Judgement applied, with the reasons given by staff",
            JudgementEntry(periods="Periods", terms="Terms", reason="Reason"),
            entries,
        ),
        board_text=BOARD_TEXT,
        moves=Table("Below / inside / above: model-based and after judgement", moves_head, moves),
        key_moves=Table(
            "Below / inside / above: model-based and after judgement, where it moves inside "
            "most and at the brief's horizons (every period in the annex)",
            moves_head,
            key_moves(a, moves),
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
