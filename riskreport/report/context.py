"""From an assessment to the brief's context: every number already rounded and phrased.

The templates only loop over these values and print them.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any

from riskreport import periods, verbal
from riskreport.assessment import Assessment, HorizonResult, TestRow
from riskreport.calibration import MIN_TEST_ROUNDS
from riskreport.report import adjustment_words, round_history, threshold_text
from riskreport.report import formatting as fmt

VINTAGE_TEXT = {
    "first-release": "the first release of each outcome published by the as_of date "
    "(past errors are measured as they looked when first known)",
    "latest": "the latest release of each outcome published by the as_of date "
    "(revisions known by then are included)",
}
SUMMARY_HORIZONS = (0, 3, 6, 12, 18, 24)  # rows of the summary table (plus the policy horizon)


TESTS_METHOD = (
    "Two forecasts: Diebold-Mariano and encompassing tests with the Harvey-Leybourne-Newbold "
    "correction, Student t; for an h-step horizon the long-run variance uses h-1 lags "
    "(rectangular window, Bartlett when that is negative). Several forecasts (Mariano-Preve) "
    "and the calibration test of overlapping PITs (Knueppel): Hotelling F one step ahead; "
    "further ahead, a weighted-periodogram variance with a fixed-smoothing F, because the "
    "textbook chi-square versions reject a true null two to five times too often in samples "
    "like ours (in simulations the calibration test still rejects too often far ahead in "
    "short samples). Tests are skipped when there are fewer past rounds than twice the steps "
    "ahead; a test with no variation to test has no p-value."
)


def summary_horizons(a: Assessment) -> tuple[int, ...]:
    """The horizons the brief's compact tables show: the standard ones that are reported,
    and the policy horizon."""
    last = a.horizons[-1].h
    return tuple(sorted({h for h in SUMMARY_HORIZONS if h <= last} | {a.policy_horizon}))


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


@dataclass(frozen=True)
class ProbabilityRow:
    """One printed row of below / inside / above (the three add to 100%)."""

    period: str
    h: str
    band: str
    forecast: str
    centre: str
    below: str
    inside: str
    above: str
    interval: str
    is_policy: bool


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


@dataclass(frozen=True)
class AccuracyLine:
    """Accuracy of one forecaster at the horizons shown."""

    model: str
    cells: tuple[str, ...]
    is_combination: bool


@dataclass(frozen=True)
class KeyValue:
    """A labelled value in a table of facts."""

    label: str
    value: str


@dataclass(frozen=True)
class ChartBlock:
    """A chart as the brief embeds it: the SVG as a data URI, its size and alt text."""

    name: str
    uri: str
    width_mm: float
    height_mm: float
    alt: str
    caption: str


@dataclass(frozen=True)
class ScenarioRow:
    """One scenario (or the baseline) at two horizons: below / inside / above, printed."""

    name: str
    reason: str
    first: str
    second: str


@dataclass(frozen=True)
class AnnualRow:
    """Probabilities for one calendar year on one basis, printed."""

    year: str
    basis: str
    band: str
    below: str
    inside: str
    above: str
    observed: str


@dataclass(frozen=True)
class BriefContext:
    """Everything the templates print."""

    title: str
    institution: str
    as_of: str
    language: str
    run_id: str
    headline: str
    messages: tuple[str, ...]
    summary_title: str
    basis_caption: str
    basis_rows: tuple[AnnualRow, ...]
    summary_rows: tuple[ProbabilityRow, ...]
    all_rows: tuple[ProbabilityRow, ...]
    path_rows: tuple[tuple[str, str, str], ...]
    band_varies: bool
    summary_band: str
    annual_rows: tuple[AnnualRow, ...]
    annual_text: str
    change_text: str
    scenario_rows: tuple[ScenarioRow, ...]
    has_scenarios: bool
    scenario_periods: tuple[str, str]
    track_text: str
    cautions: tuple[str, ...]
    band_text: str
    scale_text: str
    charts: dict[str, ChartBlock]
    outlook_text: tuple[str, ...]
    overlay_entries: tuple[OverlayEntry, ...]
    overlay_rows: tuple[OverlayRow, ...]
    overlay_text: str
    accuracy_horizons: tuple[str, ...]
    accuracy_lines: tuple[AccuracyLine, ...]
    accuracy_text: str
    calibration_text: tuple[str, ...]
    pit_rows: tuple[tuple[str, tuple[str, ...], str], ...]
    pit_bins: tuple[str, ...]
    reliability_rows: tuple[tuple[str, str, str], ...]
    coverage_rows: tuple[tuple[str, str, str, str], ...]
    tests_text: tuple[str, ...]
    weight_horizons: tuple[str, ...]
    weight_rows: tuple[AccuracyLine, ...]
    weight_text: str
    models: tuple[KeyValue, ...]
    method: tuple[KeyValue, ...]
    inputs: tuple[tuple[str, str, str, str, str], ...]
    samples: tuple[KeyValue, ...]
    warnings: tuple[str, ...]
    software: str
    adjustment_text: tuple[str, ...] = ()
    sensitivity_rows: tuple[adjustment_words.SensitivityLine, ...] = ()
    sensitivity_caption: str = ""
    threshold_line: str = ""
    threshold_rows: tuple[threshold_text.ThresholdRow, ...] = ()
    threshold_text: str = threshold_text.APPENDIX_TEXT
    density_charts: tuple[str, ...] = ()
    round_rows: tuple[tuple[str, str, str], ...] = ()
    round_text: str = ""


def band_label(band: tuple[float, float]) -> str:
    """The band as printed, e.g. "2.0-4.0%" with an en dash."""
    return f"{fmt.number(band[0])}\u2013{fmt.number(band[1])}%"


def scale_of(a: Assessment) -> verbal.Scale:
    """The verbal probability scale the configuration chose."""
    return verbal.SCALES[a.uncertainty["verbal_scale"]]


def phrase(a: Assessment, whole: str) -> str:
    """The scale's word with the printed number beside it, e.g. "likely (72%)".

    The word is chosen for the printed (rounded) number, so word and number agree.
    """
    shown = float(whole.strip("<>%")) / 100
    return f"{verbal.term(shown, scale_of(a))} ({whole})"


def _row(r: HorizonResult, policy_h: int) -> ProbabilityRow:
    below, inside, above = fmt.outcome_texts(r.p_below, r.p_inside, r.p_above)
    lo, hi = r.p_inside_interval
    return ProbabilityRow(
        period=r.period,
        h=str(r.h),
        band=band_label(r.band),
        forecast=fmt.number(r.point_forecast),
        centre=fmt.number(r.centre),
        below=below,
        inside=inside,
        above=above,
        interval=f"{fmt.single_percent(lo)} to {fmt.single_percent(hi)}",
        is_policy=r.h == policy_h,
    )


def _headline(a: Assessment) -> tuple[str, ProbabilityRow]:
    r = a.policy
    row = _row(r, a.policy_horizon)
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


def _messages(a: Assessment) -> tuple[str, ...]:
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


def _coverage(a: Assessment, h: int, nominal: float) -> dict[str, Any] | None:
    return next(
        (c for c in a.calibration["coverage"] if c["h"] == h and c["nominal"] == nominal), None
    )


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
    cover = _coverage(a, a.policy_horizon, 0.9)
    said = _said_70(a)
    if cover is None or said is None:
        return "There are too few past rounds to check how past probability statements held."
    return (
        f"Replaying the method over {cover['n']} past rounds, {said}; at the policy horizon "
        f"the 90% ranges held the outcome {fmt.single_percent(cover['observed'])} of the time."
    )


COVERAGE_TOO_NARROW = 0.85  # 90% ranges holding less often than this were too narrow
COVERAGE_TOO_WIDE = 0.97  # and more often than this, too wide (common practice, no source)


def _coverage_lines(a: Assessment, shown: tuple[int, ...]) -> list[str]:
    """What the replayed 90% ranges say, naming only the horizons that could be checked."""
    checked = {h: cv for h in shown if (cv := _coverage(a, h, 0.9)) is not None}
    if not checked:
        return [
            "There are too few past rounds to replay the method, so how its 90% ranges held "
            "cannot be checked."
        ]
    narrow = [h for h, cv in checked.items() if cv["observed"] < COVERAGE_TOO_NARROW]
    wide = [h for h, cv in checked.items() if cv["observed"] > COVERAGE_TOO_WIDE]
    lines = []
    if narrow:
        lines.append(
            f"The 90% ranges held the outcome clearly less often than 90% at {_join_h(narrow)}: "
            "past uncertainty at those horizons was larger than the fitted distributions said."
        )
    if wide:
        lines.append(
            f"The 90% ranges held the outcome more often than 90% at {_join_h(wide)}: "
            "the fitted distributions there were wider than past errors needed."
        )
    fine = [h for h in checked if h not in narrow and h not in wide]
    if fine:
        lines.append(
            f"The 90% ranges held the outcome about as often as they should at {_join_h(fine)}."
        )
    unchecked = [h for h in shown if h not in checked]
    if unchecked:
        lines.append(f"Too few past rounds to check the ranges at {_join_h(unchecked)}.")
    return lines


def _calibration(
    a: Assessment, shown: tuple[int, ...]
) -> tuple[tuple[str, ...], tuple[tuple[str, str, str, str], ...]]:
    c = a.calibration
    rows = []
    for h in shown:
        half, ninety = _coverage(a, h, 0.5), _coverage(a, h, 0.9)
        if half and ninety:
            rows.append(
                (
                    f"h = {h}",
                    fmt.single_percent(half["observed"]),
                    fmt.single_percent(ninety["observed"]),
                    str(ninety["n"]),
                )
            )
    lines = [
        f"The replay fits the {FAMILY_NAMES.get(c['distribution'], c['distribution'])} error distribution at every past round "
        "from the errors known then and scores the outcome that followed; the judgement "
        "overlay is not replayed."
    ]
    lines.extend(_coverage_lines(a, shown))
    tests = {(t["name"], t["h"]): t for t in c["tests"]}
    berk = tests.get(("berkowitz", 0))
    if berk:
        verdict = "rejects" if berk["pvalue"] < SIGNIFICANCE else "does not reject"
        lines.append(
            f"For the nowcast, the Berkowitz test {verdict} well-calibrated, independent PITs "
            f"(p = {fmt.number(berk['pvalue'], 3)})."
        )
    run = [h for h in shown if ("knuppel", h) in tests]
    rejected = [h for h in run if tests[("knuppel", h)]["pvalue"] < SIGNIFICANCE]
    if run:
        lines.append(
            "A raw-moment test that allows for the overlap of multi-step errors (Knueppel 2015) "
            + (
                f"rejects calibration at {_join_h(rejected)}."
                if rejected
                else f"does not reject calibration at {_join_h(run)}."
            )
        )
    else:
        lines.append(
            "The calibration tests were not run: they need at least "
            f"{MIN_TEST_ROUNDS} replayed rounds at a horizon."
        )
    skill = {r["h"]: r["skill"] for r in c["rps"]["by_horizon"]}
    scored = [h for h in shown if h in skill]
    better = [h for h in scored if skill[h] > 0]
    if scored:
        lines.append(
            "Against a benchmark that always says the historical shares of below, inside and "
            "above, the ranked probability score is "
            + (f"better at {_join_h(better)}" if better else f"no better at {_join_h(scored)}")
            + "."
        )
    return tuple(lines), tuple(rows)


def _track_text(a: Assessment) -> str:
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


def _overlay(a: Assessment) -> tuple[tuple[OverlayEntry, ...], tuple[OverlayRow, ...], str]:
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
                model_based=" / ".join(_triple(base)),
                adjusted=" / ".join(_triple(final)),
                change=fmt.points(final.p_inside - base.p_inside),
            )
        )
    text = (
        "The overlay maps the model-based distribution of each period it covers: the shift "
        "moves the centre, the scale multiplies the spread, and the skew adds to the mean "
        "minus the mode (positive tilts the risks upwards). Both sets of probabilities are "
        "shown; the model-based ones are what the track record alone implies."
    )
    return entries, tuple(rows), text


def _triple(r: HorizonResult) -> tuple[str, str, str]:
    return fmt.outcome_texts(r.p_below, r.p_inside, r.p_above)


def _accuracy(a: Assessment) -> tuple[tuple[str, ...], tuple[AccuracyLine, ...], str]:
    shown = summary_horizons(a)
    by_key = {(r.model, r.h): r for r in a.accuracy}
    names = list(dict.fromkeys(r.model for r in a.accuracy))
    lines = []
    for name in names:
        cells = tuple(
            fmt.number(by_key[(name, h)].rmse, 2) if (name, h) in by_key else "\u2013"
            for h in shown
        )
        lines.append(AccuracyLine(name, cells, name == "combination"))
    current = {m.model for m in a.models if m.in_current_round}
    left_out = [m.model for m in a.models if not m.in_current_round and m.model in names]
    best: dict[str, list[str]] = {}
    for h in shown:
        candidates = [by_key[(n, h)] for n in names if (n, h) in by_key and n in current]
        if candidates:
            winner = min(candidates, key=lambda r: r.rmse)
            best.setdefault(winner.model, []).append(str(h))
    leaders = "; ".join(f"{model} (h = {', '.join(hs)})" for model, hs in best.items())
    text = (
        "Root mean square error (pp) over the error window; each forecaster is scored on the "
        "rounds in that window where it gave a forecast. Lowest among the models in the "
        f"current round: {leaders}. "
        "Significance is discussed below."
    )
    if left_out:
        text += (
            f" Not in the current round, and scored on a shorter, older sample, so not "
            f"comparable: {', '.join(left_out)}."
        )
    return tuple(f"h = {h}" for h in shown), tuple(lines), text


FAMILY_NAMES = {
    "normal": "normal",
    "two-piece-normal": "two-piece normal",
    "skew-normal": "skew-normal",
    "empirical": "kernel-smoothed empirical",
    "given-quantiles": "given error quantiles",
}


def _change_text(a: Assessment) -> str:
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


def scenario_horizons(a: Assessment) -> tuple[int, int]:
    """The two horizons the scenario table shows: one year ahead and the policy horizon."""
    per_year = 12 if a.frequency == "monthly" else 4
    first = min(per_year, a.horizons[-1].h)
    return (
        (first, a.policy_horizon)
        if first != a.policy_horizon
        else (max(first // 2, 0), a.policy_horizon)
    )


def _scenario_cell(row: dict[str, Any], base: HorizonResult) -> str:
    texts = fmt.outcome_texts(row["p_below"], row["p_inside"], row["p_above"])
    return " / ".join(texts) + f" (inside {fmt.points(row['p_inside'] - base.p_inside)})"


def _scenario_rows(a: Assessment) -> tuple[ScenarioRow, ...]:
    h1, h2 = scenario_horizons(a)
    b1, b2 = a.horizon_result(h1), a.horizon_result(h2)
    rows = [
        ScenarioRow(
            "Baseline (after judgement)", "", " / ".join(_triple(b1)), " / ".join(_triple(b2))
        )
    ]
    for sc in a.scenarios:
        by_h = {x["h"]: x for x in sc["horizons"]}
        rows.append(
            ScenarioRow(
                sc["name"],
                " ".join(sc["reasons"]),
                _scenario_cell(by_h[h1], b1),
                _scenario_cell(by_h[h2], b2),
            )
        )
    return tuple(rows)


def _basis_rows(a: Assessment) -> tuple[AnnualRow, ...]:
    """The summary table on a calendar-year basis: one row per year in view."""
    return _annual_rows(a, [dataclasses.asdict(r) for r in a.basis_results])


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


def _basis_text(a: Assessment) -> str:
    """How the target's basis is measured, for the method page."""
    basis = a.target["basis"]
    if basis == "period":
        return "per period: the rate of each reported period against the band in force then"
    rates = "12 monthly" if a.frequency == "monthly" else "4 quarterly"
    known = (
        f"periods before {a.as_of} enter as their known outcomes, the others as simulated "
        "values from the joint paths"
    )
    if basis == "calendar-year-average":
        return (
            f"calendar-year average: the mean of the year's {rates} rates; {known}; a year is "
            "shown only when every period of it is observed or reported; the band is the one in "
            "force in the year's last period"
        )
    last = "December" if a.frequency == "monthly" else "the fourth quarter"
    return f"year end: the rate of {last}, from the joint paths; {known}"


def _annual_rows(
    a: Assessment, results: list[dict[str, Any]] | None = None
) -> tuple[AnnualRow, ...]:
    rows = []
    unit = "months" if a.frequency == "monthly" else "quarters"
    for r in a.annual if results is None else results:
        texts = fmt.outcome_texts(r["p_below"], r["p_inside"], r["p_above"])
        rows.append(
            AnnualRow(
                year=str(r["year"]),
                basis="calendar-year average"
                if r["basis"] == "calendar-year-average"
                else "year end",
                band=band_label(tuple(r["band"])),
                below=texts[0],
                inside=texts[1],
                above=texts[2],
                observed=f"{r['observed_periods']} {unit} observed"
                if r["observed_periods"]
                else "none observed",
            )
        )
    return tuple(rows)


def _annual_text(a: Assessment) -> str:
    if not a.annual:
        return "No calendar year is fully covered by observed and reported periods."
    return (
        "The calendar-year average (the mean of the year's period rates) and the year-end "
        f"value, from the same simulated paths; periods before {a.as_of} enter as their known "
        "outcomes. Only years fully observed or reported are shown."
    )


def _distribution_text(a: Assessment) -> str:
    """How the error distribution was chosen and fitted, in words."""
    u = a.uncertainty
    used = sorted({FAMILY_NAMES[r.distribution] for r in a.horizons})
    how = {
        "normal": "maximum likelihood",
        "two-piece normal": "maximum likelihood (mode profiled)",
        "skew-normal": "maximum penalised likelihood",
        "kernel-smoothed empirical": "Gaussian kernel, Silverman bandwidth",
        "given error quantiles": "as given",
    }
    text = "; ".join(f"{name} ({how[name]})" for name in used) + ", per horizon"
    selection = u.get("selection")
    if selection:
        runner = selection["runner_up"]
        text += (
            f". Chosen automatically by out-of-sample log score over past rounds "
            f"(runner-up: {FAMILY_NAMES.get(runner, runner)})"
        )
    return text + "."


SIGNIFICANCE = 0.05  # conventional test level (common practice, no source)


def _span(values: list[int]) -> str:
    """ "120" when all are equal, else "96 to 120"."""
    return str(min(values)) if min(values) == max(values) else f"{min(values)} to {max(values)}"


def _join_h(hs: list[int]) -> str:
    return "h = " + ", ".join(str(h) for h in hs)


def _tests_text(a: Assessment, shown: tuple[int, ...]) -> tuple[str, ...]:
    """Plain sentences on the comparative tests at the horizons shown.

    Only tests that were run and have a p-value speak: a test skipped (too few past
    rounds) or undefined (no variation) supports no "not significant" statement.
    """
    ran = [t for t in a.tests if t.h in shown and math.isfinite(t.pvalue)]
    if not ran:
        return (
            "No accuracy test could be computed at these horizons (too few past rounds, or "
            "no variation to test), so no difference in accuracy is established either way.",
            *_undefined_text(a),
        )
    # Statements about "these horizons" only when every shown horizon's tests ran.
    whole = {t.h for t in ran} == set(shown) and all(
        math.isfinite(t.pvalue) for t in a.tests if t.h in shown
    )
    dm = [t for t in ran if t.name == "diebold-mariano"]
    better: dict[str, list[int]] = {}
    worse: dict[str, list[int]] = {}
    for t in dm:
        if t.models[1] != "combination" or not t.pvalue < SIGNIFICANCE:
            continue
        # statistic > 0: the first forecaster has the larger loss.
        (worse if t.statistic > 0 else better).setdefault(t.models[0], []).append(t.h)
    level = f"{int(100 * SIGNIFICANCE)}%"
    lines = []
    if not any(t.models[1] == "combination" for t in dm):
        pass  # no model was tested against the combination
    elif not better and not worse:
        tested = "" if whole else f" ({_join_h(sorted({t.h for t in dm}))} tested)"
        lines.append(
            f"No model's accuracy differs significantly from the combination's at the {level} "
            f"level{tested} (Diebold-Mariano test with the Harvey-Leybourne-Newbold correction)."
        )
    else:
        parts = [f"{m} ({_join_h(hs)})" for m, hs in worse.items()]
        if parts:
            lines.append(
                f"The combination is significantly more accurate than {'; '.join(parts)} at "
                f"the {level} level (Diebold-Mariano, HLN correction)."
            )
        parts = [f"{m} ({_join_h(hs)})" for m, hs in better.items()]
        if parts:
            lines.append(f"Significantly more accurate than the combination: {'; '.join(parts)}.")
    naive = [t for t in dm if t.models == ("combination", "no-change")]
    beats = [t.h for t in naive if t.pvalue < SIGNIFICANCE and t.statistic < 0]
    loses = [t.h for t in naive if t.pvalue < SIGNIFICANCE and t.statistic > 0]

    def none_at(tests: list[TestRow]) -> str:
        return "these horizons" if whole else _join_h(sorted({t.h for t in tests}))

    text = "Against the no-change forecast, the combination is significantly better at "
    text += _join_h(beats) if beats else f"none of {none_at(naive)}"
    text += f" and significantly worse at {_join_h(loses)}." if loses else "."
    if naive:
        lines.append(text)
    joint = [t for t in ran if t.name == "mariano-preve"]
    rejected = [t.h for t in joint if t.pvalue < SIGNIFICANCE]
    if joint:
        lines.append(
            "Taking all current models together (Mariano-Preve test), equal accuracy is "
            + (
                f"rejected at {_join_h(rejected)}"
                if rejected
                else f"not rejected at {'any of these horizons' if whole else none_at(joint)}"
            )
            + "."
        )
    encompassing = [t for t in ran if t.name == "encompassing"]
    adds: dict[str, list[int]] = {}
    for t in encompassing:
        if t.pvalue < SIGNIFICANCE:
            adds.setdefault(t.models[1], []).append(t.h)
    if adds:
        lines.append(
            "Models that would still add information to the combination (encompassing test, "
            f"HLN 1998): {'; '.join(f'{m} ({_join_h(hs)})' for m, hs in adds.items())}."
        )
    elif encompassing and whole:
        lines.append("The combination encompasses every model at these horizons (HLN 1998 test).")
    elif encompassing:
        lines.append(
            f"The combination encompasses every model tested, at {none_at(encompassing)} "
            "(HLN 1998 test)."
        )
    fallback = [t for t in a.tests if any("Bartlett" in note for note in t.notes)]
    if fallback:
        lines.append(
            f"In {len(fallback)} of {len(a.tests)} tests the usual (rectangular) long-run "
            "variance came out negative, as it can for overlapping multi-step errors; those "
            "tests use the Bartlett kernel instead (Harvey, Leybourne and Whitehouse 2017)."
        )
    lines.extend(_undefined_text(a))
    n = sorted({t.nobs for t in dm})
    if n:
        lines.append(
            f"Tests use {_span(n)} past rounds per horizon; overlapping multi-step "
            "errors make them less reliable at long horizons."
        )
    return tuple(lines)


def _undefined_text(a: Assessment) -> tuple[str, ...]:
    undefined = [t for t in a.tests if not math.isfinite(t.pvalue)]
    if not undefined:
        return ()
    return (
        f"{len(undefined)} of {len(a.tests)} tests could not be computed and have no "
        "p-value: the forecasts compared had the same loss at every past round (for "
        "example, identical forecasts), so there is no variation to test.",
    )


def _weights(
    a: Assessment, shown: tuple[int, ...]
) -> tuple[tuple[str, ...], tuple[AccuracyLine, ...], str]:
    table: dict[str, dict[int, float]] = {}
    for w in a.combination["weights"]:
        table.setdefault(w["model"], {})[w["h"]] = w["weight"]
    lines = tuple(
        AccuracyLine(
            model, tuple(fmt.number(by_h[h], 2) if h in by_h else "\u2013" for h in shown), False
        )
        for model, by_h in table.items()
    )
    method = a.combination["method"]
    rows = [r["n"] for r in a.combination.get("rows", []) if r["h"] in shown]
    text = f"Method: {method}."
    if method not in ("equal", "given", "median", "trimmed") and rows:
        text += (
            f" Weights are estimated per horizon from {_span(rows)} past rounds "
            "whose outcomes were known at the time."
        )
    if method in ("median", "trimmed"):
        text += " The weights show which models set the combined value in the current round."
    return tuple(f"h = {h}" for h in shown), lines, text


def build(a: Assessment, charts: dict[str, ChartBlock], run_id: str) -> BriefContext:
    """Phrase every number of the assessment for the templates."""
    headline, _ = _headline(a)
    policy_h = a.policy_horizon
    summary_h = summary_horizons(a)
    entries, overlay_rows, overlay_text = _overlay(a)
    acc_h, acc_lines, acc_text = _accuracy(a)
    shown = summary_h
    weight_h, weight_rows, weight_text = _weights(a, shown)
    calibration_lines, coverage_rows = _calibration(a, shown)
    samples = [r.n_errors for r in a.horizons if r.n_errors is not None]
    given = [r.h for r in a.horizons if r.n_errors is None]
    u = a.uncertainty
    return BriefContext(
        title=a.title,
        institution=a.institution,
        as_of=a.as_of,
        language="en",
        run_id=run_id,
        headline=headline,
        messages=_messages(a),
        summary_title=BASIS_TITLES[a.headline.basis],
        basis_caption=BASIS_CAPTIONS[a.headline.basis],
        basis_rows=_basis_rows(a),
        summary_rows=tuple(_row(a.horizon_result(h), policy_h) for h in summary_h),
        all_rows=tuple(_row(r, policy_h) for r in a.horizons),
        annual_rows=_annual_rows(a),
        annual_text=_annual_text(a),
        path_rows=tuple(
            (
                p.period,
                fmt.single_percent(p.p_inside_throughout),
                fmt.single_percent(p.p_back_inside_by),
            )
            for p in a.path
            if p.h in summary_h
        ),
        band_varies=len({r.band for r in a.horizons}) > 1,
        summary_band=band_label(a.horizons[0].band),
        change_text=_change_text(a),
        scenario_rows=_scenario_rows(a),
        has_scenarios=bool(a.scenarios),
        scenario_periods=(
            a.horizon_result(scenario_horizons(a)[0]).period,
            a.horizon_result(scenario_horizons(a)[1]).period,
        ),
        track_text=_track_text(a),
        cautions=CAUTIONS,
        band_text=(
            "Inside the band means lower edge \u2264 inflation \u2264 upper edge (both edges "
            "count as inside). Below, inside and above add to 100% after rounding; shares under 1% or over 99% are printed as <1% and >99%, never as a certainty."
        ),
        scale_text=f"Words for probabilities follow the {scale_of(a).name} ({scale_of(a).source}).",
        charts=charts,
        outlook_text=(
            f"The shaded areas hold the outcome with 50%, 80% and 90% probability; the dotted "
            f"line is the centre path (the most likely value), which ends at "
            f"{fmt.number(a.horizons[-1].centre)}% in {a.horizons[-1].period}.",
            f"Near term, inflation is {phrase(a, _row(a.horizons[0], policy_h).inside)} "
            f"to be inside the band in {a.horizons[0].period}; uncertainty widens with the horizon.",
        ),
        overlay_entries=entries,
        overlay_rows=overlay_rows,
        overlay_text=overlay_text,
        accuracy_horizons=acc_h,
        accuracy_lines=acc_lines,
        accuracy_text=acc_text,
        tests_text=_tests_text(a, shown),
        calibration_text=calibration_lines,
        pit_rows=tuple(
            (
                f"{g['h_from']}\u2013{g['h_to']}" if g["h_from"] != g["h_to"] else str(g["h_from"]),
                tuple(str(c) for c in g["counts"]),
                str(g["n"]),
            )
            for g in a.calibration["pit"]
        ),
        pit_bins=tuple(str(k) for k in range(1, 11)),
        reliability_rows=tuple(
            (
                fmt.single_percent(r["forecast_mean"]),
                fmt.single_percent(r["observed_frequency"]),
                str(r["n"]),
            )
            for r in a.calibration["brier"]["reliability"]
        ),
        coverage_rows=coverage_rows,
        weight_horizons=weight_h,
        weight_rows=weight_rows,
        weight_text=weight_text,
        models=tuple(
            KeyValue(
                m.model,
                f"origins {m.first_origin} to {m.last_origin}; "
                + (
                    "in the current round"
                    if m.in_current_round
                    else "not in the current round: left out"
                ),
            )
            for m in a.models
        ),
        method=(
            KeyValue("Combination", f"{a.combination['method']} weights, per horizon"),
            KeyValue(
                "Error distribution",
                _distribution_text(a),
            ),
            KeyValue(
                "Error window",
                "all past origins"
                if u["window"] == 0
                else f"last {u['window']} origins with a known outcome, per horizon",
            ),
            KeyValue(
                "Centre",
                "estimated: past average errors (bias) carry over into the centre"
                if u["centre"] == "estimated"
                else "the point forecast is the mode of the distribution",
            ),
            KeyValue("Target basis", _basis_text(a)),
            KeyValue(
                "Spread by horizon",
                (
                    "not allowed to shrink as the horizon lengthens"
                    + (" (learned horizons only)" if given else "")
                )
                if u["monotone"]
                else "as fitted",
            ),
            *(
                (
                    KeyValue(
                        "Given error distribution",
                        f"h = {periods.ranges(given)}: the error_quantiles file, used exactly "
                        "as given (not widened, no past errors, no sampling interval)",
                    ),
                )
                if given
                else ()
            ),
            KeyValue(
                "Interval for inside",
                f"{int(100 * u['interval_level'])}% moving-block bootstrap, {u['bootstrap_replicates']} replicates",
            ),
            KeyValue(
                "Path probabilities",
                f"Gaussian copula on rank correlations of same-origin errors, {u['simulations']} simulated paths, seed {u['seed']}",
            ),
            KeyValue("Accuracy tests", TESTS_METHOD),
            KeyValue("Verbal scale", scale_of(a).name),
            *(
                (
                    KeyValue(
                        "Outcomes scored against",
                        VINTAGE_TEXT[a.score_against],
                    ),
                )
                if a.score_against
                else ()
            ),
        ),
        inputs=tuple(
            (
                i.role,
                i.path,
                i.sha256,
                str(i.rows) if i.rows is not None else "\u2013",
                f"{i.first_period} to {i.last_period}" if i.first_period else "\u2013",
            )
            for i in a.inputs
        ),
        samples=(
            KeyValue(
                "Past errors per horizon",
                (_span(samples) if samples else "none")
                + (f"; given at h = {periods.ranges(given)}" if given else ""),
            ),
        ),
        warnings=a.warnings,
        software=", ".join(f"{k} {v}" for k, v in a.software.items()),
        adjustment_text=adjustment_words.adjustment_text(a),
        sensitivity_rows=adjustment_words.sensitivity_lines(a),
        sensitivity_caption=adjustment_words.sensitivity_caption(a),
        threshold_line=threshold_text.page_one_line(a),
        threshold_rows=threshold_text.appendix_rows(a, summary_h),
        density_charts=tuple(name for name in charts if name.startswith("density-")),
        round_rows=round_history.rows(a) if round_history.shown(a) else (),
        round_text=round_history.text(a) if round_history.shown(a) else "",
    )
