"""The board's next questions, in words and tables: how robust is the call (page 1), how
did such statements hold in situations like today's (the "how sure" page), and which
models moved the centre (the change section); the annex tables behind each.

Numbers come from ``Assessment.sensitivity_to_centre``, ``record_by_situation``,
``attribution`` and ``leave_one_out``; this module only picks, rounds and phrases them.
"""

from __future__ import annotations

from dataclasses import dataclass

from riskreport.assessment import Assessment
from riskreport.laws.sensitivity import SensitivityRow
from riskreport.replay.situations import TOO_SMALL, SituationRow
from riskreport.report import formatting as fmt
from riskreport.report.sections.common import Table

# A model term smaller than this (pp) did not move the centre in any sense a reader would
# notice: the centre is printed to 0.1 pp (common practice, no source).
NOTICEABLE = 0.005
SIDE_WORDS = {"below": "below", "inside": "inside", "above": "above"}
# The situations as the annex table names them (the JSON's ``description`` is the long form).
SHORT_LABELS = {
    "all": "All rounds",
    "below": "Latest outcome below the band",
    "inside": "Latest outcome inside the band",
    "above": "Latest outcome above the band",
    "wide_disagreement": "Models disagreed widely",
    "recent_five_years": "Last five years",
}


def _ahead(a: Assessment, h: int) -> str:
    unit = "month" if a.frequency == "monthly" else "quarter"
    return f"{h} {unit}{'s' if h != 1 else ''} ahead"


def _policy_sensitivity(a: Assessment) -> SensitivityRow | None:
    return next((r for r in a.sensitivity_to_centre if r.h == a.policy_horizon), None)


def _pp(value: float) -> str:
    """A size in percentage points for a sentence: "0.3 pp", "less than 0.05 pp"."""
    text = fmt.number(abs(value))
    return "less than 0.05 pp" if text == "0.0" else f"{text} pp"


def robustness_text(a: Assessment) -> str:
    """Page 1: how far the whole path must move to make inside as likely as not."""
    r = _policy_sensitivity(a)
    if r is None:
        return ""
    if r.shift_to_even is None:
        way = "higher" if r.shift_to_max > 0 else "lower"
        return (
            f"No move of the path makes inside in {r.period} as likely as not: at best "
            f"({_pp(r.shift_to_max)} {way}) it is {fmt.single_percent(r.p_inside_max)}."
        )
    way = "higher" if r.shift_to_even > 0 else "lower"
    became = "become as likely as not" if r.p_inside < 0.5 else "stop being more likely than not"
    return f"Inside in {r.period} would {became} if the path were {_pp(r.shift_to_even)} {way}."


def _held(r: SituationRow, ahead: str) -> str:
    """How one situation's 90% ranges held, with n, n effective and the interval or the
    plain word that n is too small."""
    assert r.coverage_90 is not None
    said = (
        f"the 90% ranges {ahead} held in {fmt.single_percent(r.coverage_90)} of {r.n} rounds "
        f"(about {round(r.n_effective)} independent outcomes"
    )
    if r.too_small:
        return said + "): too few to tell how they hold in this situation"
    assert r.coverage_90_interval is not None
    lo, hi = r.coverage_90_interval
    return said + f"; 90% interval {fmt.single_percent(lo)} to {fmt.single_percent(hi)})"


def situation_text(a: Assessment) -> str:
    """The "how sure" page: how statements held in today's situation at the policy horizon."""
    rows = [r for r in a.record_by_situation if r.h == a.policy_horizon and r.today]
    side = next((r for r in rows if r.situation in SIDE_WORDS), None)
    if side is None:
        return ""
    where = SIDE_WORDS[side.situation]
    ahead = _ahead(a, a.policy_horizon)
    if side.n == 0:
        text = (
            f"No replayed round started with the latest outcome {where} the band, as it is "
            f"now, so there is no record {ahead} for situations like today's."
        )
    else:
        text = (
            f"In past rounds that started with the latest outcome {where} the band, as now, "
            f"{_held(side, ahead)}."
        )
    wide = next((r for r in rows if r.situation == "wide_disagreement"), None)
    if wide is not None and wide.n > 0:
        text += (
            f" The models disagree widely today; in past rounds when they did, "
            f"{_held(wide, ahead)}."
        )
    return text


def _model_terms(a: Assessment) -> list[tuple[str, float]]:
    rows = [
        r
        for r in a.attribution
        if r.h == a.policy_horizon and r.model is not None and abs(r.centre_change) >= NOTICEABLE
    ]
    rows.sort(key=lambda r: -abs(r.centre_change))
    return [(r.model or "", r.centre_change) for r in rows[:2]]


def movers_text(a: Assessment) -> str:
    """The change section: the one or two models that moved the policy period's centre most
    (the date of the previous brief is in the sentence before)."""
    rows = [r for r in a.attribution if r.h == a.policy_horizon]
    if not rows:
        return ""
    first = rows[0]
    head = (
        f"The centre for {first.period} moved "
        f"{fmt.number(first.centre_now - first.centre_before, 2, signed=True)} pp"
    )
    movers = _model_terms(a)
    if not movers:
        return head + "; no single model moved it by 0.01 pp or more."
    named = " and ".join(f"{m} ({fmt.number(x, 2, signed=True)} pp)" for m, x in movers)
    return head + f", most through {named}."


@dataclass(frozen=True)
class SensitivityTableRow:
    """One period of the annex's sensitivity table, as printed."""

    period: str
    inside: str
    shift_to_even: str
    minus_1: str
    minus_0_5: str
    minus_0_25: str
    plus_0_25: str
    plus_0_5: str
    plus_1: str


@dataclass(frozen=True)
class SituationTableRow:
    """One situation at one horizon in the annex's record by situation, as printed."""

    situation: str
    h: str
    n: str
    n_effective: str
    coverage_50: str
    coverage_90: str
    brier: str
    today: str
    verdict: str


@dataclass(frozen=True)
class AttributionTableRow:
    """One term of the centre's change at the policy period, as printed."""

    term: str
    change: str


@dataclass(frozen=True)
class LeaveOneOutTableRow:
    """P(inside) at the policy horizon with one model left out, as printed."""

    model: str
    centre: str
    inside: str
    change: str


def _shift_text(r: SensitivityRow) -> str:
    if r.shift_to_even is None:
        return "none"
    return f"{fmt.number(r.shift_to_even, 2, signed=True)} pp"


def sensitivity_table(a: Assessment) -> Table[SensitivityTableRow]:
    """Annex: P(inside) by period under moves of the whole distribution."""
    head = SensitivityTableRow(
        "Period",
        "Inside",
        "Move to 50%",
        "\u22121 pp",
        "\u22120.5",
        "\u22120.25",
        "+0.25",
        "+0.5",
        "+1 pp",
    )
    rows = tuple(
        SensitivityTableRow(
            r.period,
            fmt.single_percent(r.p_inside),
            _shift_text(r),
            *(
                fmt.single_percent(p)
                for p in (
                    r.p_inside_shift_minus_1,
                    r.p_inside_shift_minus_0_5,
                    r.p_inside_shift_minus_0_25,
                    r.p_inside_shift_plus_0_25,
                    r.p_inside_shift_plus_0_5,
                    r.p_inside_shift_plus_1,
                )
            ),
        )
        for r in a.sensitivity_to_centre
    )
    return Table(
        "Probability of being inside if the whole distribution moved by a few fixed amounts, "
        "and the smallest move that makes it 50% (\u201cnone\u201d: the spread is too wide "
        "for any move to reach 50%)",
        head,
        rows,
    )


def _coverage_text(share: float | None, interval: tuple[float, float] | None) -> str:
    if share is None:
        return "\u2013"
    if interval is None:
        return fmt.single_percent(share)
    lo, hi = interval
    return f"{fmt.single_percent(share)} ({fmt.single_percent(lo)}\u2013{fmt.single_percent(hi)})"


def situation_table(a: Assessment) -> Table[SituationTableRow]:
    """Annex: the record by situation at the first and the policy horizon."""
    shown = sorted({min((r.h for r in a.record_by_situation), default=0), a.policy_horizon})
    head = SituationTableRow(
        "Situation at the origin",
        "h",
        "n",
        "n eff.",
        "50% range held",
        "90% range held",
        "Brier",
        "Today",
        "Enough to tell",
    )
    rows = tuple(
        SituationTableRow(
            SHORT_LABELS.get(r.situation, r.description),
            str(r.h),
            str(r.n),
            fmt.number(r.n_effective),
            _coverage_text(r.coverage_50, r.coverage_50_interval),
            _coverage_text(r.coverage_90, r.coverage_90_interval),
            "\u2013" if r.brier is None else fmt.number(r.brier, 3),
            "yes" if r.today else "",
            "too few" if r.too_small else "yes",
        )
        for r in a.record_by_situation
        if r.h in shown
    )
    return Table(
        "How past statements held, by the situation at the time they were made: rows n, "
        "independent outcomes n eff. (overlapping multi-step outcomes counted once), the "
        "share held with Wilson\u2019s 90% interval on n eff.; fewer than "
        f"{round(TOO_SMALL)} independent outcomes are too few to tell",
        head,
        rows,
    )


def attribution_table(a: Assessment) -> Table[AttributionTableRow]:
    """Annex: the change of the policy period's centre, term by term."""
    rows = tuple(
        AttributionTableRow(
            r.term if r.model is None else f"{r.model} ({r.term})",
            f"{fmt.number(r.centre_change, 3, signed=True)} pp",
        )
        for r in a.attribution
        if r.h == a.policy_horizon
    )
    period = next((r.period for r in a.attribution if r.h == a.policy_horizon), "")
    return Table(
        f"The change of the centre for {period} since the previous brief, split by model "
        "(Shapley average over the orders of replacing each model\u2019s forecast and weight) "
        "and the remaining parts; the terms add up to the change",
        AttributionTableRow("Term", "Change of the centre"),
        rows,
    )


def leave_one_out_table(a: Assessment) -> Table[LeaveOneOutTableRow]:
    """Annex: P(inside) at the policy horizon with each model left out."""
    now = a.policy.p_inside
    rows = tuple(
        LeaveOneOutTableRow(
            r.model,
            f"{fmt.number(r.centre)}%",
            fmt.single_percent(r.p_inside),
            fmt.points(r.p_inside - now),
        )
        for r in a.leave_one_out
    )
    return Table(
        f"The probability of being inside in {a.policy.period} with each model left out "
        "(the combination re-estimated without it; the published distribution moved with "
        "the centre)",
        LeaveOneOutTableRow("Model left out", "Centre", "Inside", "Change"),
        rows,
    )
