"""Pieces every section of the brief shares: the horizons shown, the band and verbal-scale wording."""

from __future__ import annotations

from dataclasses import dataclass

from riskreport import verbal
from riskreport.assessment import Assessment, HorizonResult
from riskreport.report import formatting as fmt

SUMMARY_HORIZONS = (0, 3, 6, 12, 18, 24)  # rows of the summary table (plus the policy horizon)


def summary_horizons(a: Assessment) -> tuple[int, ...]:
    """The horizons the brief's compact tables show: the standard ones that are reported,
    and the policy horizon."""
    last = a.horizons[-1].h
    return tuple(sorted({h for h in SUMMARY_HORIZONS if h <= last} | {a.policy_horizon}))


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
    return verbal.SCALES[a.uncertainty["verbal_scale"]]


def phrase(a: Assessment, whole: str) -> str:
    """The scale's word with the printed number beside it, e.g. "likely (72%)".

    The word is chosen for the printed (rounded) number, so word and number agree.
    """
    shown = float(whole.strip("<>%")) / 100
    return f"{verbal.term(shown, scale_of(a))} ({whole})"


SIGNIFICANCE = 0.05  # conventional test level (common practice, no source)


def span(values: list[int]) -> str:
    """ "120" when all are equal, else "96 to 120"."""
    return str(min(values)) if min(values) == max(values) else f"{min(values)} to {max(values)}"


def join_h(hs: list[int]) -> str:
    return "h = " + ", ".join(str(h) for h in hs)


FAMILY_NAMES = {
    "normal": "normal",
    "two-piece-normal": "two-piece normal",
    "skew-normal": "skew-normal",
    "empirical": "kernel-smoothed empirical",
    "given-quantiles": "given error quantiles",
}


def triple(r: HorizonResult) -> tuple[str, str, str]:
    return fmt.outcome_texts(r.p_below, r.p_inside, r.p_above)


BAND_TEXT = (
    "Inside the band means lower edge \u2264 inflation \u2264 upper edge (both edges "
    "count as inside). Below, inside and above add to 100% after rounding; shares under 1% or over 99% are printed as <1% and >99%, never as a certainty."
)


def scale_text(a: Assessment) -> str:
    """The sentence naming the verbal scale and its source."""
    return f"Words for probabilities follow the {scale_of(a).name} ({scale_of(a).source})."
