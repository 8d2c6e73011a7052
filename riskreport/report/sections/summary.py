"""Page 1 of the brief: the headline, the key messages, the change since the last brief and the track record in brief."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

from riskreport.assessment import Assessment
from riskreport.replay.calibration import ReliabilityBin
from riskreport.report import formatting as fmt
from riskreport.report import verbal
from riskreport.report.sections.calibration import COVERAGE_TOO_NARROW, COVERAGE_TOO_WIDE, coverage
from riskreport.report.sections.common import (
    INTERVAL_TEXT,
    SHORT_BAND_TEXT,
    ProbabilityRow,
    Table,
    band_label,
    band_varies,
    inside_split,
    method_was_chosen,
    period_table,
    phrase,
    printed_points,
    probability_row,
    scale_of,
    shown_probability,
    straddle_text,
    threshold_label,
    todays_law_is_baseline,
)
from riskreport.report.sections.outlook import YEARS_HEAD, AnnualRow, annual_rows
from riskreport.report.sections.questions import movers_text, robustness_text

if TYPE_CHECKING:
    from riskreport.laws.thresholds import ThresholdResult

CAUTIONS: tuple[str, ...] = (
    "These probabilities are model estimates built from the errors of past forecasts; they "
    "are not a measure of certainty.",
    "Future errors may differ from past ones: regime changes and unprecedented shocks are "
    "not in the track record.",
    "The track record is a small sample, so the tail probabilities (far below or far above "
    "the band) are especially uncertain.",
    "This brief supports, and does not replace, the judgement of the policy committee and "
    "its staff.",
)


# A change in P(inside) smaller than this is reported as essentially unchanged: it is within
# the rounding of the printed percentages and the simulation noise of the path probabilities
# (common practice, no source).
CHANGE_NOISE = 0.02

# A past statement whose outcome share is within this of what was said held "about as often
# as stated" (common practice, no source).
RELIABILITY_TOLERANCE = 0.05


def ahead(a: Assessment, h: int) -> str:
    """ "18 months ahead", "1 quarter ahead"."""
    unit = "month" if a.frequency == "monthly" else "quarter"
    return f"{h} {unit}{'s' if h != 1 else ''} ahead"


def headline(a: Assessment) -> str:
    """The first sentence: how likely inside at the policy horizon, on the target basis."""
    if a.headline.basis != "period":
        return _basis_headline(a)
    r = a.policy
    row = probability_row(r, a.policy_horizon)
    return (
        f"At the policy horizon ({r.period}, {ahead(a, r.h)}) inflation is "
        f"{inside_split(a, (row.below, row.inside, row.above), f'the {band_label(r.band)} target band')}."
    )


def _basis_headline(a: Assessment) -> str:
    """The headline when the target is defined on a calendar-year basis."""
    head = a.headline
    texts = fmt.outcome_texts(head.p_below, head.p_inside, head.p_above)
    policy_year = a.policy.period[:4]
    which = (
        f"the calendar year of the policy horizon ({a.policy.period})"
        if str(head.year) == policy_year
        else "the last calendar year in view"
    )
    if head.basis == "calendar-year-average":
        subject = f"Averaged over {head.year}, {which}, inflation"
    else:
        subject = f"At the end of {head.year} ({head.period}), {which}, inflation"
    return f"{subject} is {inside_split(a, texts, f'the {band_label(head.band)} target band')}."


def judgement_terms(shift: float, scale: float, skew: float) -> str:
    """What a judgement does, in words: "centre +0.20 pp, spread \u00d71.10, skew +0.15 pp"
    (terms that change nothing are left out)."""
    parts = []
    if shift:
        parts.append(f"centre {fmt.number(shift, 2, signed=True)} pp")
    if scale != 1:
        parts.append(f"spread \u00d7{fmt.number(scale, 2)}")
    if skew:
        parts.append(
            f"risks tilted {'up' if skew > 0 else 'down'} ({fmt.number(skew, 2, signed=True)} pp)"
        )
    return ", ".join(parts) or "no change"


def _judgement_message(a: Assessment) -> str:
    """What the staff judgement is and why (its content and reason), where it moves P(inside)
    most, and whether it reaches the policy horizon."""
    said = "; ".join(
        f"{j.start} to {j.end}: {judgement_terms(j.shift, j.scale, j.skew)}"
        + (f", because {_reason(j.reason)}" if j.reason.strip() else "")
        for j in a.judgement
    )
    pairs = list(zip(a.model_based_horizons, a.horizons, strict=True))
    base, final = max(pairs, key=lambda p: abs(p[1].p_inside - p[0].p_inside))
    text = (
        f"Staff judgement ({said}) moves the probability of being inside most in {final.period}: "
        f"from {fmt.single_percent(base.p_inside)} (model-based) to {fmt.single_percent(final.p_inside)}."
    )
    policy_base = a.horizon_result(a.policy_horizon, model_based=True)
    if any(a.policy.period in j.periods for j in a.judgement):
        text += (
            f" At the policy horizon: {fmt.single_percent(policy_base.p_inside)} model-based, "
            f"{fmt.single_percent(a.policy.p_inside)} after judgement."
        )
    else:
        text += " It does not cover the policy horizon."
    return text


def _reason(text: str) -> str:
    """A stated reason as a clause: its first letter lower-cased (unless it opens with an
    acronym) and its closing full stop dropped."""
    text = " ".join(text.split()).rstrip(".")
    if len(text) > 1 and text[0].isupper() and not text[1].isupper():
        text = text[0].lower() + text[1:]
    return text


def centre_label(a: Assessment) -> str:
    """What the one centre number printed on page 1 is."""
    policy = a.policy
    moved = policy.centre - policy.point_forecast
    judged = any(policy.period in j.periods for j in a.judgement)
    if a.uncertainty.centre == "estimated":
        scaled = a.adjustments is not None and a.adjustments.spread != "constant"
        # The centre is the mode of the fitted error law: the average miss only for the
        # normal law; a skewed law's most likely miss can even differ in sign from it.
        miss = (
            "their average past miss"
            if policy.distribution == "normal"
            else "the most likely past miss of the fitted error distribution"
        )
        why = (
            miss
            + (", scaled to today's error size" if scaled else "")
            + (" and staff judgement" if judged else "")
        )
        size = (
            f"under 0.05 pp in {policy.period}"
            if fmt.number(abs(moved)) == "0.0"
            else f"{fmt.number(moved, signed=True)} percentage points, pp, in {policy.period}"
        )
        return f"the models' forecast corrected by {why} ({size})"
    if a.uncertainty.centre == "auto":
        # The learned bias correction (the model-based law's centre off the point forecast),
        # before any judgement.
        model = next((r for r in a.model_based_horizons if r.h == policy.h), policy)
        if fmt.number(abs(model.centre - model.point_forecast)) != "0.0":
            return (
                "the models' forecast corrected for their recent bias (learned from past "
                "errors, weighted by how well such corrections scored)"
                + (" and moved by staff judgement" if judged else "")
                + f" ({fmt.number(moved, signed=True)} percentage points, pp, in {policy.period})"
            )
    if judged and fmt.number(moved) not in ("0.0", "\u22120.0"):
        return (
            f"the models' forecast moved by staff judgement "
            f"({fmt.number(moved, signed=True)} percentage points, pp)"
        )
    return "the models' forecast"


def _inside_now(a: Assessment) -> tuple[str, bool] | None:
    """The last observed outcome in words and whether it was inside the band, if any."""
    if not a.history:
        return None
    last = a.history[-1]
    lo, hi = a.horizons[0].band
    where = "inside" if lo <= last.value <= hi else "above" if last.value > hi else "below"
    return (
        f"Inflation was {where} the band in {last.period} ({fmt.number(last.value)}%)",
        where == "inside",
    )


def _path_message(a: Assessment) -> str:
    """Where inflation stands now and, when it is outside the band, how likely it is to get
    back inside at least once by the policy horizon.

    The chance of staying inside in every single period up to the policy horizon is not
    said here: it is always far smaller than any one period's chance (a single month's
    noise outside the band breaks the run), so on page 1 it reads as an alarm; the annex
    gives it with that explanation.
    """
    policy = a.policy
    path = next(p for p in a.path if p.h == a.policy_horizon)
    now = _inside_now(a)
    if now is None:
        return f"There is no observed outcome before {a.horizons[0].period} in the inputs."
    said, inside = now
    if inside:
        return f"{said}."
    back = (
        f"getting back inside at least once by {policy.period} is "
        f"{phrase(a, fmt.single_percent(path.p_back_inside_by))}"
    )
    return f"{said}; {back}."


def messages(a: Assessment) -> tuple[str, ...]:
    """The key messages under the headline."""
    policy = a.policy
    head = a.headline
    tilt = "above" if head.p_above > head.p_below else "below"
    subject = "at the policy horizon" if head.basis == "period" else f"to the {head.label}"
    # The same three shares as the headline (largest remainder: they add to 100), not each
    # rounded on its own, which could print 29% here beside the headline's 30%.
    below, _, above = fmt.outcome_texts(head.p_below, head.p_inside, head.p_above)
    lines = [
        f"Risks {subject} lean {tilt} the band: the chance of inflation above the band is "
        f"{above}, below it {below}. "
        f"The centre (most likely value) is {fmt.number(policy.centre)}% in {policy.period}: {centre_label(a)}.",
        _path_message(a),
    ]
    if a.judgement:
        lines.append(_judgement_message(a))
    else:
        lines.append("No staff judgement was applied: the probabilities are model-based.")
    return tuple(lines)


def nearest_bin(a: Assessment) -> ReliabilityBin | None:
    """The reliability bin whose stated probability is nearest today's headline P(inside)."""
    rows = a.calibration.brier.reliability
    if not rows:
        return None
    today = a.headline.p_inside
    return min(rows, key=lambda r: abs(r.forecast_mean - today))


def held_words(said: float, happened: float) -> str:
    gap = happened - said
    if abs(gap) <= RELIABILITY_TOLERANCE:
        return "about as often as stated"
    ratio = happened / said if said > 0 else math.inf
    if ratio >= 1.75:
        return f"about {fmt.number(ratio, 1)} times as often as stated"
    return "more often than stated" if gap > 0 else "less often than stated"


def coverage_sentence(a: Assessment) -> str:
    """How the 90% ranges of past rounds held at the policy horizon, in plain words."""
    cover = coverage(a, a.policy_horizon, 0.9)
    if cover is None:
        return "There are too few past rounds to check how past probability statements held."
    held = cover.observed
    ranges = (
        "too narrow: read today's probabilities as less certain than they look"
        if held < COVERAGE_TOO_NARROW
        else "too wide"
        if held > COVERAGE_TOO_WIDE
        else "about right"
    )
    return (
        f"{ahead(a, a.policy_horizon).capitalize()}, the 90% ranges of past rounds held "
        f"{fmt.single_percent(held)} of {cover.n} outcomes: {ranges}."
    )


def bin_words(edges: tuple[float, float]) -> str:
    """A reliability bin's edges in words: "30% to 40%", "90% or more", "under 10%"."""
    lo, hi = (round(100 * edge) for edge in edges)
    if hi >= 100:
        return f"{lo}% or more"
    if lo <= 0:
        return f"under {hi}%"
    return f"{lo}% to {hi}%"


def against_baseline(a: Assessment) -> str:
    """A warning when the method in use was chosen or adapted and did worse in the replay
    than the plain constant normal law (the annex's method section gives the scores); when
    today's law is that plain normal law, only the past choices can have done worse, and
    that is said as such."""
    adj = a.adjustments
    if adj is None or adj.verdict.against_baseline != "worse" or not method_was_chosen(a):
        return ""
    if todays_law_is_baseline(a):
        return (
            " Choosing the method afresh at each past round scored worse in the replay than "
            "keeping a plain normal law throughout; today's choice is that plain normal law."
        )
    return (
        " The method chosen for these probabilities scored worse in the replay than a plain "
        "normal law with a constant spread (see the annex, method and data)."
    )


def misses_sentence(a: Assessment) -> str:
    """The size and direction of the combined forecast's past misses at the policy horizon."""
    row = next(
        (x for x in a.accuracy if x.model == a.own_names.combination and x.h == a.policy_horizon),
        None,
    )
    if row is None:
        return "There is no track record of the combined forecast at the policy horizon."
    direction = "above" if row.mean_error > 0 else "below"  # errors are actual - forecast
    return (
        f"Over the last {row.n} rounds with a known outcome, the combined forecast "
        f"{ahead(a, a.policy_horizon)} missed by {fmt.number(row.rmse)} pp on average "
        f"(root mean square), with outcomes {fmt.number(abs(row.mean_error))} pp {direction} it "
        "on average."
    )


def track_text(a: Assessment) -> str:
    """Page 1's track record: the size of past misses and how the ranges held (page 4 says
    more)."""
    return f"{misses_sentence(a)} {coverage_sentence(a)} More under \u201cHow sure can we be?\u201d"


def _centre_moved(before: float, now: float) -> str:
    """ "fell 0.2 pp (3.5% to 3.3%)", "was unchanged at 3.4%", from the printed numbers."""
    b, n = fmt.number(before), fmt.number(now)
    if b == n:
        return f"was unchanged at {n}%"
    step = float(n.replace("\u2212", "-")) - float(b.replace("\u2212", "-"))
    verb = "rose" if step > 0 else "fell"
    return f"{verb} {fmt.number(abs(step))} pp ({b}% to {n}%)"


def change_text(a: Assessment) -> str:
    """The change since the previous brief at the policy horizon's target period, in words:
    the probability then and now, and what moved underneath (the centre, the spread and
    shape, the band), even when the total is small."""
    if not a.change or not a.change.horizons:
        return "No earlier brief was available for comparison, so the change since the last meeting is not shown."
    rows = {r.period: r for r in a.change.horizons}
    r = rows.get(a.policy.period) or a.change.horizons[-1]
    before, now = fmt.single_percent(r.p_inside_before), fmt.single_percent(r.p_inside_now)
    total = shown_probability(now) - shown_probability(before)
    since = (
        f"Since the brief of {a.change.previous_as_of}, the probability of being inside the "
        f"band in {r.period}"
    )
    centre = (
        f"the centre {_centre_moved(r.centre_before, r.centre_now)}, worth "
        f"{fmt.points(r.due_to_centre)} on its own"
    )
    spread = f"the spread and shape of the errors {fmt.points(r.due_to_spread)}"
    band = f", the band {fmt.points(r.due_to_band)}" if fmt.points(r.due_to_band) != "0 pp" else ""
    if abs(total) < CHANGE_NOISE:
        opposite = r.due_to_centre * r.due_to_spread < 0
        return (
            f"{since} is essentially unchanged: {now} against {before}. Underneath, {centre}; "
            f"{spread}{band}" + ("; the two offset." if opposite else ".")
        )
    parts = {
        "the centre moving": r.due_to_centre,
        "the spread and shape": r.due_to_spread,
        "the band": r.due_to_band,
    }
    main = max(parts, key=lambda k: abs(parts[k]))
    direction = "rose" if total > 0 else "fell"
    return (
        f"{since} {direction} from {before} to {now} ({printed_points(now, before)}): {centre}; "
        f"{spread}{band}. Most of it came from {main}."
    )


def scale_key(a: Assessment) -> str:
    """One line: the verbal scale's words and their ranges as the brief uses them (its
    source is in the annex). A middle word whose range spans 50% is used only at exactly
    50%; either side of it the brief says "more likely than not" or "less likely than not",
    and the key says so in the same place, so the headline's word is in it."""
    parts = []
    for t in scale_of(a).terms:
        lo, hi = round(100 * t.low), round(100 * t.high)
        if t.low < 0.5 < t.high:
            parts.append(
                f"{verbal.MORE_LIKELY} 50\u2013{hi}%, {t.word} 50%, {verbal.LESS_LIKELY} {lo}\u201350%"
            )
        else:
            parts.append(f"{t.word} {lo}\u2013{hi}%")
    return f"Words ({scale_of(a).name}): " + ", ".join(parts) + "."


BASIS_TITLES = {
    "period": "Below, inside and above the band",
    "calendar-year-average": "The calendar-year average: below, inside and above the band",
    "year-end": "The year-end rate: below, inside and above the band",
}


BASIS_CAPTIONS = {
    "period": "",
    "calendar-year-average": "Probability that inflation averaged over the calendar year "
    "(the mean of its period rates) is below, inside or above the target band",
    "year-end": "Probability that inflation at the end of the calendar year is below, inside "
    "or above the target band",
}


def basis_table(a: Assessment) -> Table[AnnualRow] | None:
    """The summary table on a calendar-year basis, one row per year in view (None on the
    ``period`` basis, where page 1 shows the table by period)."""
    rows = annual_rows(a, a.basis_results)
    if not rows:
        return None
    return Table(BASIS_CAPTIONS[a.headline.basis], YEARS_HEAD, rows)


def change_caption(a: Assessment) -> str:
    """Caption of the change chart."""
    assert a.change is not None
    return (
        f"Change in the probability of being inside since {a.change.previous_as_of}, "
        "by target period, split into centre, spread and shape, and band (a part that is zero "
        "in every period shown is left out); the diamond is the total."
    )


def change_alt(a: Assessment) -> str:
    """Alt text of the change chart."""
    assert a.change is not None
    parts = [
        f"{r.period}: {printed_points(fmt.single_percent(r.p_inside_now), fmt.single_percent(r.p_inside_before))} "
        f"(centre {fmt.points(r.due_to_centre)}, spread {fmt.points(r.due_to_spread)}, band {fmt.points(r.due_to_band)})"
        for r in a.change.horizons
    ]
    return (
        f"Bar chart of the change in the probability of being inside since {a.change.previous_as_of}: "
        + "; ".join(parts)
        + "."
    )


def _threshold_side(a: Assessment, t: ThresholdResult) -> str:
    """The side of a threshold a board asks about: below a low line, above a high one."""
    lower, upper = a.policy.band
    return "below" if t.threshold < (lower + upper) / 2 else "above"


def threshold_line(a: Assessment) -> str:
    """One sentence on the ``[target] thresholds`` at the policy horizon (empty when none is set)."""
    if not a.thresholds:
        return ""
    policy = a.policy
    parts = []
    for t in a.thresholds:
        at = next(r for r in t.horizons if r.h == a.policy_horizon)
        path = next(r for r in t.path if r.h == a.policy_horizon)
        if _threshold_side(a, t) == "below":
            parts.append(
                f"below {threshold_label(t.threshold)}: {fmt.single_percent(at.p_below)} "
                f"(at least once by then {fmt.single_percent(path.p_below_at_least_once)})"
            )
        else:
            parts.append(
                f"above {threshold_label(t.threshold)}: {fmt.single_percent(at.p_above)} "
                f"(at least once by then {fmt.single_percent(path.p_above_at_least_once)})"
            )
    return (
        f"Beyond the band, in {policy.period}: inflation " + "; ".join(parts) + ". "
        f"\u201cAt least once\u201d counts every period from {a.horizons[0].period}."
    )


CAUTIONS_LABEL = "Cautions"


@dataclass(frozen=True)
class SummaryContext:
    """Page 1 as printed: the headline, the messages, the summary table and the cautions."""

    headline: str
    messages: tuple[str, ...]
    threshold_line: str
    robustness_text: str
    heading: str
    basis: Table[AnnualRow] | None
    periods: Table[ProbabilityRow] | None
    show_band: bool
    note: str
    scale_key: str
    change_heading: str
    change_text: str
    movers_text: str
    track_heading: str
    track_text: str
    cautions_label: str
    cautions_heading: str
    cautions: tuple[str, ...]


def note(a: Assessment) -> str:
    """The note under the summary table: what the centre is, the range and the band's edges."""
    straddle = straddle_text(a)
    return (
        f"Centre: the most likely value, {centre_label(a)}; the models' own "
        f"forecast is in the annex. {INTERVAL_TEXT}"
        + (f" {straddle}" if straddle else "")
        + f" {SHORT_BAND_TEXT}"
    )


def context(a: Assessment) -> SummaryContext:
    """Page 1 of the brief, every number rounded and phrased."""
    basis = basis_table(a)
    return SummaryContext(
        headline=headline(a),
        messages=messages(a),
        threshold_line=threshold_line(a),
        robustness_text=robustness_text(a),
        heading=BASIS_TITLES[a.headline.basis],
        basis=basis,
        periods=period_table(a) if basis is None else None,
        show_band=band_varies(a),
        note=note(a),
        scale_key=scale_key(a),
        change_heading="Since the last brief",
        change_text=change_text(a),
        movers_text=movers_text(a),
        track_heading="Track record",
        track_text=track_text(a),
        cautions_label=CAUTIONS_LABEL,
        cautions_heading="Read with care",
        cautions=CAUTIONS,
    )
