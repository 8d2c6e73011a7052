"""The outlook section: the fan and probability charts, the path probabilities, the calendar
years, the outcome densities and the probability of inside across rounds."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

from riskreport.assessment import Assessment, BasisResult
from riskreport.laws.annual import AnnualResult
from riskreport.report import formatting as fmt
from riskreport.report.sections.common import (
    ChartBlock,
    ProbabilityRow,
    Table,
    ahead_label,
    band_label,
    band_varies,
    chart,
    period_table,
    phrase,
    printed_points,
    probability_row,
    summary_horizons,
    units,
)

if TYPE_CHECKING:
    from riskreport.laws.density import DensityCurve


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
    basis_observed: str  # the basis, with the periods observed where there are any


def annual_rows(
    a: Assessment, results: Sequence[AnnualResult | BasisResult] | None = None
) -> tuple[AnnualRow, ...]:
    rows = []
    unit = "months" if a.frequency == "monthly" else "quarters"
    for r in a.annual if results is None else results:
        texts = fmt.outcome_texts(r.p_below, r.p_inside, r.p_above)
        basis = "calendar-year average" if r.basis == "calendar-year-average" else "year end"
        rows.append(
            AnnualRow(
                year=str(r.year),
                basis=basis,
                band=band_label(r.band),
                below=texts[0],
                inside=texts[1],
                above=texts[2],
                observed=f"{r.observed_periods} {unit} observed"
                if r.observed_periods
                else "none observed",
                basis_observed=basis
                + (f" ({r.observed_periods} {unit} observed)" if r.observed_periods else ""),
            )
        )
    return tuple(rows)


def annual_text(a: Assessment) -> str:
    if not a.annual:
        return "No calendar year is fully covered by observed and reported periods."
    return (
        "The calendar-year average (the mean of the year's period rates) and the year-end "
        f"value, from the same simulated paths; periods before {a.as_of} enter as their known "
        "outcomes. Only years fully observed or reported are shown."
    )


@dataclass(frozen=True)
class PathRow:
    """Joint path probabilities from the first reported period up to one period."""

    period: str
    throughout: str
    once: str


def path_rows(a: Assessment) -> tuple[PathRow, ...]:
    """The path table's rows at the horizons the compact tables show."""
    # The first period alone is a single period's probability, printed in the period tables
    # from the exact law; its simulated twin here could differ by a point (one number, one
    # source), so the joint rows start at the second period.
    shown = set(summary_horizons(a)) - {a.horizons[0].h}
    return tuple(
        PathRow(
            p.period,
            fmt.single_percent(p.p_inside_throughout),
            fmt.single_percent(p.p_back_inside_by),
        )
        for p in a.path
        if p.h in shown
    )


def outlook_text(a: Assessment) -> tuple[str, ...]:
    """The paragraphs above the outlook charts."""
    first = probability_row(a.horizons[0], a.policy_horizon)
    return (
        f"The shaded areas hold the outcome with 50%, 80% and 90% probability; the dotted "
        f"line is the centre path (the most likely value), which ends at "
        f"{fmt.number(a.horizons[-1].centre)}% in {a.horizons[-1].period}.",
        f"Near term, inflation is {phrase(a, first.inside)} "
        f"to be inside the band in {a.horizons[0].period}; uncertainty widens with the horizon.",
    )


def outlook_caption(a: Assessment) -> str:
    """Caption of the outlook (fan) chart; where a staff judgement ends before the last
    period, the step there is the judgement's, and the caption says so."""
    text = (
        "Outlook: outcomes, the target band (hatched), the centre path (dotted) and the "
        "50/80/90% probability bands, after staff judgement. Each period's bands are estimated "
        "from that period's own past errors and are not smoothed across periods, so a notch "
        "of a tenth or two of a point between neighbouring periods is sampling noise, not a "
        "forecast."
    )
    last = a.horizons[-1].period
    ends = sorted({j.end for j in a.judgement if j.end < last})
    if ends:
        text += (
            f" The step after {' and '.join(ends)} is not noise: it is where the staff "
            "judgement ends, and from there on the bands are model-based."
        )
    return text


PATHS_TEXT = (
    "Inside throughout asks for every period up to the one shown to land inside the band, so "
    "it is always lower, and falls faster, than any single period's probability: one period "
    "of noise outside the band ends the run. A low number here is not a forecast that "
    "inflation leaves the band for good; inside at least once is its counterpart."
)
PROBABILITIES_CAPTION = (
    "Probability of inflation below, inside and above the band by how far ahead; the "
    "shading is the plausible range of the probability of inside (how far it could be off "
    "because the record of past misses is short; 9 times in 10 it would fall there)."
)


def outlook_alt(a: Assessment) -> str:
    """Alt text of the outlook (fan) chart."""
    first, last, policy = a.horizons[0], a.horizons[-1], a.policy
    return (
        f"Line chart of inflation outcomes up to {a.history[-1].period if a.history else a.as_of} "
        f"and the forecast from {first.period} to {last.period}, over the target band "
        f"{band_label(policy.band)}. The centre path runs from "
        f"{fmt.number(first.centre)}% to {fmt.number(last.centre)}%; at the policy horizon "
        f"({policy.period}) the 90% band spans {fmt.number(policy.quantiles.q05)}% to "
        f"{fmt.number(policy.quantiles.q95)}%. The numbers are in the appendix table."
    )


def probabilities_alt(a: Assessment) -> str:
    """Alt text of the below / inside / above chart."""
    first, policy = a.horizons[0], a.policy
    return (
        f"Line chart of the probability of inflation below, inside and above the band by "
        f"{units(a)[:-1]} ahead. Inside falls from {fmt.single_percent(first.p_inside)} now to "
        f"{fmt.single_percent(policy.p_inside)} at the policy horizon ({policy.h} {units(a)} ahead); above "
        f"is {fmt.single_percent(policy.p_above)} and below {fmt.single_percent(policy.p_below)} "
        "there. The numbers are in the appendix table."
    )


def density_alt(a: Assessment, c: DensityCurve) -> str:
    """Alt text of the outcome density chart of one period: what it shows, in words and numbers."""
    r = a.horizon_result(c.h)
    below, inside, above = fmt.outcome_texts(r.p_below, r.p_inside, r.p_above)
    text = (
        f"Density of inflation in {c.period} (h = {c.h}) over the target band "
        f"{band_label(r.band)}: most likely {fmt.number(r.centre)}%, 90% between "
        f"{fmt.number(r.quantiles.q05)}% and {fmt.number(r.quantiles.q95)}%; "
        f"below the band {below}, inside {inside}, above {above}."
    )
    if a.judgement and c.pdf != c.model_based_pdf:
        m = a.horizon_result(c.h, model_based=True)
        mb, mi, ma = fmt.outcome_texts(m.p_below, m.p_inside, m.p_above)
        text += (
            f" The model-based density (dashed) is centred at {fmt.number(m.centre)}%, "
            f"with below {mb}, inside {mi}, above {ma}."
        )
    return text


def density_caption(a: Assessment, c: DensityCurve) -> str:
    """The caption under the outcome density chart of one period."""
    judged = a.judgement and c.pdf != c.model_based_pdf
    return f"Outcome density in {c.period}: the band hatched, the share inside it shaded" + (
        "; model-based (dashed) and after judgement (solid)." if judged else "."
    )


# Across rounds: how P(inside) for the policy-horizon period moved from one brief to the next.


def rounds_shown(a: Assessment) -> bool:
    """Whether there is anything to show: at least one earlier round reported the period."""
    return len(a.round_history) >= 2


@dataclass(frozen=True)
class RoundRow:
    """One brief's statement about the policy-horizon period, as printed."""

    brief: str
    ahead: str
    inside: str


def round_rows(a: Assessment) -> tuple[RoundRow, ...]:
    """Table rows: brief (as_of), periods ahead then, P(inside) as printed."""
    return tuple(
        RoundRow(
            p.as_of + (" (this brief)" if p.current else ""),
            str(p.h),
            fmt.single_percent(p.p_inside),
        )
        for p in a.round_history
    )


def round_text(a: Assessment) -> str:
    """From the first round shown to this one: the policy-horizon period, then the current
    calendar year when earlier briefs stated it."""
    first, last = a.round_history[0], a.round_history[-1]
    sentence = (
        f"The probability of inflation inside the band in {last.period} (the policy horizon) "
        f"as each brief in the output folder stated it: {fmt.single_percent(first.p_inside)} "
        f"in the brief of {first.as_of}, {fmt.single_percent(last.p_inside)} now "
        f"({printed_points(fmt.single_percent(last.p_inside), fmt.single_percent(first.p_inside))})."
    )
    if len(a.year_history) >= 2:
        y0, y1 = a.year_history[0], a.year_history[-1]
        measure = "year-end rate" if y1.basis == "year-end" else "average"
        sentence += (
            f" For {y1.year} as a whole ({measure}): {fmt.single_percent(y0.p_inside)} in the "
            f"brief of {y0.as_of}, {fmt.single_percent(y1.p_inside)} now "
            f"({printed_points(fmt.single_percent(y1.p_inside), fmt.single_percent(y0.p_inside))})."
        )
    return sentence


def round_alt(a: Assessment) -> str:
    """Alt text of the across-rounds chart."""
    parts = [f"{p.as_of}: {fmt.single_percent(p.p_inside)}" for p in a.round_history]
    return (
        f"Line chart of the probability of inflation inside the band in "
        f"{a.round_history[-1].period}, as stated by each brief: " + "; ".join(parts) + "."
    )


ROUND_CAPTION = "Probability of inside for the policy-horizon period, by the brief that stated it."


YEARS_HEAD = AnnualRow(
    year="Year",
    basis="Basis",
    band="Band",
    below="Below",
    inside="Inside",
    above="Above",
    observed="Observed",
    basis_observed="Basis",
)
PATHS_HEAD = PathRow(period="Up to", throughout="Inside throughout", once="Inside at least once")


@dataclass(frozen=True)
class OutlookContext:
    """The outlook section as printed: its charts, tables and paragraphs."""

    heading: str
    periods_heading: str
    periods: Table[ProbabilityRow] | None  # here when page 1 speaks of calendar years
    text: tuple[str, ...]
    fan: ChartBlock | None
    probabilities: ChartBlock | None
    paths_heading: str
    paths_text: str
    paths: Table[PathRow]
    years_heading: str
    years: Table[AnnualRow]
    years_text: str
    change_heading: str
    change: ChartBlock | None
    densities_heading: str
    densities: tuple[ChartBlock, ...]
    rounds_heading: str
    rounds_text: str
    rounds_chart: ChartBlock | None
    rounds: Table[RoundRow]


def context(a: Assessment, charts: Mapping[str, ChartBlock]) -> OutlookContext:
    """The outlook section, with the charts drawn for it (looked up by name in ``charts``)."""
    shown = rounds_shown(a)
    band = "" if band_varies(a) else f" ({band_label(a.horizons[0].band)})"
    return OutlookContext(
        heading="Outlook",
        periods_heading="Per period (supporting detail)",
        periods=period_table(a) if a.basis_results else None,
        text=outlook_text(a),
        fan=chart(charts, "outlook"),
        probabilities=chart(charts, "band-probabilities"),
        paths_heading="Staying inside the band",
        paths_text=PATHS_TEXT,
        paths=Table(
            f"Joint probabilities from {a.horizons[0].period} up to each period",
            PATHS_HEAD,
            path_rows(a),
        ),
        years_heading="Calendar years",
        years=Table(f"Calendar-year average and year-end value{band}", YEARS_HEAD, annual_rows(a)),
        years_text=annual_text(a),
        change_heading="Since the last brief, by period",
        change=chart(charts, "change"),
        densities_heading="The outcome at a glance",
        densities=tuple(
            block for c in a.density if (block := chart(charts, f"density-h{c.h}")) is not None
        ),
        rounds_heading="Across rounds",
        rounds_text=round_text(a) if shown else "",
        rounds_chart=chart(charts, "round-history"),
        rounds=Table(
            "Inside the band in the policy-horizon period, by brief",
            RoundRow(brief="Brief", ahead=f"{ahead_label(a)} then", inside="Inside"),
            round_rows(a) if shown else (),
        ),
    )
