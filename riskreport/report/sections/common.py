"""Pieces every section of the brief shares: the horizons shown, the band and verbal-scale wording."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Generic, TypeVar

from riskreport.assessment import Assessment, HorizonResult
from riskreport.forecasts.fixed_smoothing import TOO_FEW
from riskreport.report import formatting as fmt
from riskreport.report import verbal

# Rows of the summary table (plus the policy horizon), in periods of the brief's frequency:
# about every quarter, then every half year, for a monthly brief; every quarter for the first
# year of a quarterly brief, then every half year (common practice, no source).
SUMMARY_HORIZONS = {
    "monthly": (0, 3, 6, 12, 18, 24, 36),
    "quarterly": (0, 1, 2, 3, 4, 6, 8, 10, 12),
}


# A brief with this many reported periods or fewer shows every one of them in its compact
# tables (a row skipped there reads as a period left out).
ALL_ROWS_UP_TO = 9


def summary_horizons(a: Assessment) -> tuple[int, ...]:
    """The horizons the brief's compact tables show: every reported one when there are
    few, else the standard ones of the brief's frequency that are reported, the policy
    horizon and the last reported horizon (where the centre path ends)."""
    reported = {r.h for r in a.horizons}
    if len(reported) <= ALL_ROWS_UP_TO:
        return tuple(sorted(reported))
    standard = SUMMARY_HORIZONS.get(a.frequency, SUMMARY_HORIZONS["monthly"])
    return tuple(sorted({h for h in standard if h in reported} | {a.policy_horizon, max(reported)}))


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


Row = TypeVar("Row")


@dataclass(frozen=True)
class Table(Generic[Row]):
    """A table as the brief prints it: caption, heading row and rows.

    The heading row is a row of the same type whose cells are the column headings, so a
    heading sits in the same named field as the cells below it.
    """

    caption: str
    head: Row
    rows: tuple[Row, ...]


@dataclass(frozen=True)
class Facts:
    """A table of labelled facts (no heading row)."""

    caption: str
    rows: tuple[KeyValue, ...]


def chart(charts: Mapping[str, ChartBlock], name: str) -> ChartBlock | None:
    """The chart ``name`` if it was drawn (a brief without that part has none)."""
    return charts.get(name)


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


def probability_row(r: HorizonResult, policy_h: int) -> ProbabilityRow:
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


def band_label(band: tuple[float, float]) -> str:
    """The band as printed, e.g. "2.0-4.0%" with an en dash."""
    return f"{fmt.number(band[0])}\u2013{fmt.number(band[1])}%"


def scale_of(a: Assessment) -> verbal.Scale:
    """The verbal probability scale the configuration chose."""
    return verbal.SCALES[a.uncertainty.verbal_scale]


def shown_probability(whole: str) -> float:
    """The probability a printed percentage stands for: "41%" -> 0.41, "<1%" -> 0.0."""
    return float(whole.strip("<>%")) / 100


def word(a: Assessment, whole: str) -> str:
    """The scale's word for a printed percentage, on the same side of 50% as the number."""
    return verbal.sided_term(shown_probability(whole), scale_of(a))


def phrase(a: Assessment, whole: str) -> str:
    """The scale's word with the printed number beside it, e.g. "likely (72%)".

    The word is chosen for the printed (rounded) number, so word and number agree, and it is
    never on the other side of 50% from the number (see :func:`riskreport.report.verbal.sided_term`).
    """
    return f"{word(a, whole)} ({whole})"


def inside_split(a: Assessment, texts: tuple[str, str, str], band: str = "the band") -> str:
    """ "less likely than not to be inside: 41% inside, 59% outside (35% above, 24% below)".

    The word, then inside and outside with the side that is more likely named first among
    above and below.
    """
    below, inside, above = texts
    outside = fmt.percent_text(100 - round(100 * shown_probability(inside)))
    if inside == ">99%":
        outside = "<1%"
    sides = (f"{above} above", f"{below} below")
    if shown_probability(below) > shown_probability(above):
        sides = sides[::-1]
    return (
        f"{word(a, inside)} to be inside {band}: {inside} inside, {outside} outside "
        f"({sides[0]}, {sides[1]})"
    )


SIGNIFICANCE = 0.05  # conventional test level (common practice, no source)


def declined(notes: tuple[str, ...]) -> bool:
    """A test that did not speak because the record holds too few independent outcomes
    (:func:`riskreport.forecasts.fixed_smoothing.smoothing`): no verdict either way."""
    return any(note.startswith(TOO_FEW) for note in notes)


def too_few_text(a: Assessment, hs: list[int], what: str) -> str:
    """ "Too few independent outcomes at 13 and 18 months ahead to test ...": a declined
    test in plain words."""
    return (
        f"Too few independent outcomes at {join_h(a, hs)} to test {what}: forecasts made in "
        "consecutive rounds share the shocks of the months between them, so the past rounds "
        "hold fewer independent outcomes than the test needs to hold its size."
    )


def span(values: list[int]) -> str:
    """ "120" when all are equal, else "96 to 120"."""
    return str(min(values)) if min(values) == max(values) else f"{min(values)} to {max(values)}"


def join_h(a: Assessment, hs: list[int]) -> str:
    """ "3, 6 and 12 months ahead"."""
    words = [str(h) for h in hs]
    listed = words[0] if len(words) == 1 else ", ".join(words[:-1]) + " and " + words[-1]
    return f"{listed} {units(a) if hs != [1] else units(a)[:-1]} ahead"


FAMILY_NAMES = {
    "normal": "normal",
    "two-piece-normal": "two-piece normal",
    "skew-normal": "skew-normal",
    "empirical": "kernel-smoothed empirical",
    "given-quantiles": "given error quantiles",
    "pool": "optimal prediction pool",
}


def triple(r: HorizonResult) -> tuple[str, str, str]:
    return fmt.outcome_texts(r.p_below, r.p_inside, r.p_above)


BAND_TEXT = (
    "Inside the band means lower edge \u2264 inflation \u2264 upper edge (both edges "
    "count as inside). Below, inside and above add to 100% after rounding; shares under 1% or over 99% are printed as <1% and >99%, never as a certainty."
)


def ahead_label(a: Assessment) -> str:
    """The heading of a column of horizons: "Months ahead" or "Quarters ahead"."""
    return "Months ahead" if a.frequency == "monthly" else "Quarters ahead"


def probability_head(a: Assessment) -> ProbabilityRow:
    """The heading row of the probability tables, in the brief's frequency."""
    return ProbabilityRow(
        period="Period",
        h=ahead_label(a),
        band="Band",
        forecast="Models' forecast",
        centre="Centre",
        below="Below",
        inside="Inside",
        above="Above",
        interval="Inside: plausible range",
        is_policy=False,
    )


def units(a: Assessment) -> str:
    """ "months" or "quarters"."""
    return "months" if a.frequency == "monthly" else "quarters"


INTERVAL_TEXT = (
    "Plausible range: the record of past misses is short, so each probability is itself "
    "uncertain; with another, equally likely set of past misses it would fall in this range "
    "9 times in 10."
)


def straddle_text(a: Assessment) -> str:
    """A sentence when the plausible range of inside at the policy horizon spans 50% (empty
    otherwise): then the record cannot tell which side of even the odds are on."""
    r = a.policy
    lo, hi = r.p_inside_interval
    low, high = fmt.single_percent(lo), fmt.single_percent(hi)
    if not shown_probability(low) < 0.5 < shown_probability(high):
        return ""
    return (
        f"At the policy horizon the plausible range ({low} to {high}) spans 50%: the track "
        "record cannot tell whether inside is more or less likely than not, only that it is "
        "far from certain either way."
    )


def printed_points(now: str, before: str) -> str:
    """The change between two printed percentages, from the printed numbers ("42%" and
    "41%" give "+1 pp"), so a reader who subtracts what is printed gets what is said."""
    return fmt.points(shown_probability(now) - shown_probability(before))


def method_was_chosen(a: Assessment) -> bool:
    """Whether the error law was chosen or adapted (``auto``, a moving spread or a
    recalibration) rather than being the plain constant normal law the replay compares it
    with: only then can it have scored better or worse than that law."""
    adj = a.adjustments
    if adj is None:
        return False
    return (
        a.uncertainty.distribution in ("auto", "best-past-score")
        or adj.spread_option != "constant"
        or adj.recalibrate
    )


def todays_law_is_baseline(a: Assessment) -> bool:
    """Whether today's probabilities come from the plain constant normal law itself (``auto``
    may choose it): then "the method scored worse than the normal law" would be about the
    past choices, never about the law in use."""
    adj = a.adjustments
    return (
        adj is not None
        and adj.method == "normal"
        and adj.spread == "constant"
        and not adj.recalibrate
    )


SHORT_BAND_TEXT = (
    "Both band edges count as inside; <1% and >99% are printed instead of 0% and 100%, "
    "never a certainty."
)


def ahead_header(a: Assessment, h: int) -> str:
    """A table heading for one horizon: "now", "3 months", "1 quarter"."""
    if h == 0:
        return "now"
    return f"{h} {units(a) if h != 1 else units(a)[:-1]}"


def threshold_label(value: float) -> str:
    """A ``[target] thresholds`` line as printed: "0%", "5.5%", "-1%" (typographic minus)."""
    digits = 0 if float(value).is_integer() else 1
    return f"{fmt.number(value, digits)}%"


def period_table(a: Assessment) -> Table[ProbabilityRow]:
    """Below / inside / above at the horizons the compact tables show (page 1, or the head of
    the outlook when page 1 speaks of calendar years)."""
    varies = band_varies(a)
    return Table(
        caption="Probability that inflation is below, inside or above the target band"
        + ("" if varies else f" ({band_label(a.horizons[0].band)})")
        + "; the policy horizon in bold",
        head=probability_head(a),
        rows=tuple(
            probability_row(a.horizon_result(h), a.policy_horizon) for h in summary_horizons(a)
        ),
    )


def band_varies(a: Assessment) -> bool:
    """Whether the band changes over the reported periods (then tables show it per row)."""
    return len({r.band for r in a.horizons}) > 1
