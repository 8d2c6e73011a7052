"""Page 4 of the board brief: how sure we can be, in plain words (how past statements of
this kind held), and the cautions in full."""

from __future__ import annotations

from dataclasses import dataclass

from riskreport.assessment import Assessment
from riskreport.report import formatting as fmt
from riskreport.report.sections import questions
from riskreport.report.sections.calibration import coverage_lines
from riskreport.report.sections.common import summary_horizons
from riskreport.report.sections.summary import (
    CAUTIONS,
    against_baseline,
    bin_words,
    coverage_sentence,
    held_words,
    misses_sentence,
    nearest_bin,
)


def reliability_sentence(a: Assessment) -> str:
    """How past statements like today's headline held, with how much that record can say.

    The statements of one bin overlap: consecutive rounds speak of the same target months,
    and one surprise settles many of them at once, so they are far fewer independent checks
    than their count; the sentence says so in words rather than quoting the share as a rate.
    """
    r = nearest_bin(a)
    if r is None:
        return "There are too few past rounds to check how past probability statements held."
    said, happened = r.forecast_mean, r.observed_frequency
    return (
        f"Statements like today's: in the replay, past rounds said {bin_words(r.bin)} inside "
        f"{r.n} times (all horizons together), and inflation ended inside "
        f"{fmt.single_percent(happened)} of the time, {held_words(said, happened)}. "
        "Read this as a rough guide only: neighbouring rounds spoke of the same months, so a "
        "single surprise settled many of these statements at once, and they amount to far "
        "fewer independent checks than their number; the true share could be well away from "
        f"{fmt.single_percent(happened)}."
    )


def window_caution(a: Assessment) -> str:
    """The error sample the probabilities rest on."""
    which = (
        "every past forecast with a known outcome"
        if a.uncertainty.window == 0
        else f"at most the last {a.uncertainty.window} forecasts with a known outcome at "
        "each horizon"
    )
    return (
        f"The probabilities rest on the misses of {which}: a shock unlike any in that record "
        "is not in them."
    )


@dataclass(frozen=True)
class HowSureContext:
    """Page 4 as printed: how past statements held, then the full cautions."""

    heading: str
    lead: str
    text: tuple[str, ...]
    cautions_heading: str
    cautions: tuple[str, ...]


def context(a: Assessment) -> HowSureContext:
    """Page 4 of the board brief."""
    ranges = " ".join(coverage_lines(a, summary_horizons(a)))
    return HowSureContext(
        heading="How sure can we be?",
        lead=(
            "Each round of the past was replayed as if it were today, with only what was known "
            "then, and its statements were checked against what happened."
        ),
        text=(
            misses_sentence(a),
            coverage_sentence(a) + " " + ranges,
            reliability_sentence(a),
            # in situations like today's (where the latest outcome stood, wide disagreement)
            *((line,) if (line := questions.situation_text(a)) else ()),
            *((line.strip(),) if (line := against_baseline(a)) else ()),
        ),
        cautions_heading="Cautions in full",
        cautions=(*CAUTIONS, window_caution(a)),
    )
