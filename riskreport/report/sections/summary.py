"""Page 1 of the brief: the headline, the key messages, the change since the last brief and the track record in brief."""

from __future__ import annotations

import dataclasses

from riskreport.assessment import Assessment
from riskreport.report import formatting as fmt
from riskreport.report.sections.calibration import coverage
from riskreport.report.sections.common import ProbabilityRow, band_label, phrase, probability_row
from riskreport.report.sections.outlook import AnnualRow, annual_rows

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


def headline(a: Assessment) -> tuple[str, ProbabilityRow]:
    r = a.policy
    row = probability_row(r, a.policy_horizon)
    head = a.headline
    if head.basis != "period":
        return _basis_headline(a), row
    unit = "month" if a.frequency == "monthly" else "quarter"
    ahead = f"{r.h} {unit}{'s' if r.h != 1 else ''} ahead"
    text = (
        f"At the policy horizon ({r.period}, {ahead}) inflation is "
        f"{phrase(a, row.inside)} to be inside the {band_label(r.band)} target band; "
        f"the chance that it is above the band is {row.above} and below it {row.below}."
    )
    return text, row


def _basis_headline(a: Assessment) -> str:
    """The headline when the target is defined on a calendar-year basis."""
    head = a.headline
    below, inside, above = fmt.outcome_texts(head.p_below, head.p_inside, head.p_above)
    policy_year = a.policy.period[:4]
    which = (
        f"the calendar year of the policy horizon ({a.policy.period})"
        if str(head.year) == policy_year
        else "the last calendar year in view"
    )
    if head.basis == "calendar-year-average":
        subject = f"Averaged over {head.year}, {which}, inflation"
        measure = f"the {head.year} average"
    else:
        subject = f"At the end of {head.year} ({head.period}), {which}, inflation"
        measure = "the year-end rate"
    return (
        f"{subject} is {phrase(a, inside)} to be inside the {band_label(head.band)} target "
        f"band; the chance that {measure} is above the band is {above} and below it {below}."
    )


def _judgement_message(a: Assessment) -> str:
    """Where the staff judgement moves P(inside) most, and whether it reaches the policy horizon."""
    spans = "; ".join(f"{j.start} to {j.end}" for j in a.judgement)
    pairs = list(zip(a.model_based_horizons, a.horizons, strict=True))
    base, final = max(pairs, key=lambda p: abs(p[1].p_inside - p[0].p_inside))
    text = (
        f"Staff judgement ({spans}) moves the probability of being inside most in {final.period}: "
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


def messages(a: Assessment) -> tuple[str, ...]:
    first, policy = a.horizons[0], a.policy
    path = next(p for p in a.path if p.h == a.policy_horizon)
    head = a.headline
    tilt = "above" if head.p_above > head.p_below else "below"
    subject = "at the policy horizon" if head.basis == "period" else f"to the {head.label}"
    messages = [
        f"Risks {subject} lean {tilt} the band: above "
        f"{fmt.single_percent(head.p_above)}, below {fmt.single_percent(head.p_below)}. "
        f"The central path is {fmt.number(policy.centre)}% in {policy.period}.",
        f"Inflation staying inside the band in every period from {first.period} to "
        f"{policy.period} is {phrase(a, fmt.single_percent(path.p_inside_throughout))}; "
        f"being inside at least once by then is "
        f"{phrase(a, fmt.single_percent(path.p_back_inside_by))}.",
    ]
    if a.judgement:
        messages.append(_judgement_message(a))
    else:
        messages.append("No staff judgement overlay is applied: the probabilities are model-based.")
    return tuple(messages)


def _said_70(a: Assessment) -> str | None:
    rows = a.calibration["brier"]["reliability"]
    if not rows:
        return None
    r = min(rows, key=lambda r: abs(r["forecast_mean"] - 0.7))
    return (
        f"when it put the chance of being inside the band at about "
        f"{fmt.single_percent(r['forecast_mean'])}, inflation was inside "
        f"{fmt.single_percent(r['observed_frequency'])} of the time ({r['n']} cases)"
    )


def _calibration_sentence(a: Assessment) -> str:
    """The one honest sentence on the track record of probability statements."""
    cover = coverage(a, a.policy_horizon, 0.9)
    said = _said_70(a)
    if cover is None or said is None:
        return "There are too few past rounds to check how past probability statements held."
    return (
        f"Replaying the method over {cover['n']} past rounds, {said}; at the policy horizon "
        f"the 90% ranges held the outcome {fmt.single_percent(cover['observed'])} of the time."
    )


def track_text(a: Assessment) -> str:
    row = next(
        (x for x in a.accuracy if x.model == "combination" and x.h == a.policy_horizon), None
    )
    if row is None:
        return "There is no track record of the combined forecast at the policy horizon."
    unit = "month" if a.frequency == "monthly" else "quarter"
    direction = "above" if row.mean_error > 0 else "below"  # errors are actual - forecast
    return (
        f"Over the last {row.n} forecast rounds with a known outcome, the combined forecast "
        f"{a.policy_horizon} {unit}s ahead missed by {fmt.number(row.rmse)} pp on average "
        f"(root mean square); outcomes came in {direction} the forecast by "
        f"{fmt.number(abs(row.mean_error))} pp on average. {_calibration_sentence(a)}"
    )


def change_text(a: Assessment) -> str:
    """The change since the previous brief, at the policy horizon's target period, in words."""
    if not a.change or not a.change["horizons"]:
        return "No earlier brief was available for comparison, so the change since the last meeting is not shown."
    rows = {r["period"]: r for r in a.change["horizons"]}
    r = rows.get(a.policy.period) or a.change["horizons"][-1]
    total = r["p_inside_now"] - r["p_inside_before"]
    direction = (
        "rose"
        if fmt.points(total).startswith("+")
        else "fell"
        if total < 0 and fmt.points(total) != "0 pp"
        else "was unchanged"
    )
    parts = {
        "the centre moving": r["due_to_centre"],
        "the spread and shape": r["due_to_spread"],
        "the band": r["due_to_band"],
    }
    main = max(parts, key=lambda k: abs(parts[k]))
    text = (
        f"Since the brief of {a.change['previous_as_of']}, the probability of being inside the "
        f"band in {r['period']} {direction}"
    )
    if direction != "was unchanged":
        text += f" from {fmt.single_percent(r['p_inside_before'])} to {fmt.single_percent(r['p_inside_now'])} ({fmt.points(total)})"
    text += (
        f": centre {fmt.points(r['due_to_centre'])}, spread and shape {fmt.points(r['due_to_spread'])}, "
        f"band {fmt.points(r['due_to_band'])}."
    )
    if direction != "was unchanged":
        text += f" Most of it came from {main}."
    return text


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


def basis_rows(a: Assessment) -> tuple[AnnualRow, ...]:
    """The summary table on a calendar-year basis: one row per year in view."""
    return annual_rows(a, [dataclasses.asdict(r) for r in a.basis_results])


def change_caption(a: Assessment) -> str:
    """Caption of the change chart."""
    assert a.change is not None
    return (
        f"Change in the probability of being inside since {a.change['previous_as_of']}, "
        "by target period, split into centre, spread and shape, and band."
    )


def change_alt(a: Assessment) -> str:
    """Alt text of the change chart."""
    assert a.change is not None
    parts = [
        f"{r['period']}: {fmt.points(r['p_inside_now'] - r['p_inside_before'])} "
        f"(centre {fmt.points(r['due_to_centre'])}, spread {fmt.points(r['due_to_spread'])}, band {fmt.points(r['due_to_band'])})"
        for r in a.change["horizons"]
    ]
    return (
        f"Bar chart of the change in the probability of being inside since {a.change['previous_as_of']}: "
        + "; ".join(parts)
        + "."
    )
