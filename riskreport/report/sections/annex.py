"""The staff annex's own pieces: its opening lines, the fan's quantiles by period and each
forecaster's bias (the annex also prints the outlook details, the track record, the
calibration, the method and data, and the appendix, each phrased by its own section)."""

from __future__ import annotations

from dataclasses import dataclass

from riskreport.assessment import Assessment
from riskreport.report import formatting as fmt
from riskreport.report.sections.common import (
    Table,
    ahead_header,
    ahead_label,
    summary_horizons,
    units,
)
from riskreport.report.sections.track_record import NOT_COMPARABLE, AccuracyLine

QUANTILE_LEVELS = ("q05", "q10", "q25", "q50", "q75", "q90", "q95")


@dataclass(frozen=True)
class QuantileRow:
    """The fan's edges in one period: the outcome quantiles, printed."""

    period: str
    h: str
    centre: str
    quantiles: tuple[str, ...]
    is_policy: bool


def quantile_rows(a: Assessment) -> tuple[QuantileRow, ...]:
    """Every reported period's outcome quantiles after judgement (the fan chart's edges)."""
    return tuple(
        QuantileRow(
            period=r.period,
            h=str(r.h),
            centre=fmt.number(r.centre),
            quantiles=tuple(fmt.number(getattr(r.quantiles, q)) for q in QUANTILE_LEVELS),
            is_policy=r.h == a.policy_horizon,
        )
        for r in a.horizons
    )


def bias_lines(a: Assessment) -> tuple[AccuracyLine, ...]:
    """Each forecaster's mean error (actual minus forecast, pp) at the horizons shown."""
    shown = summary_horizons(a)
    by_key = {(r.model, r.h): r for r in a.accuracy}
    left_out = {m.model for m in a.models if not m.in_current_round}
    names = list(dict.fromkeys(r.model for r in a.accuracy))
    return tuple(
        AccuracyLine(
            f"{name} ({NOT_COMPARABLE})" if name in left_out else name,
            tuple(
                fmt.number(by_key[(name, h)].mean_error, 2, signed=True)
                if (name, h) in by_key
                else "\u2013"
                for h in shown
            ),
            name == "combination",
        )
        for name in names
    )


@dataclass(frozen=True)
class AnnexContext:
    """The annex's opening and its own tables."""

    heading: str
    lead: str
    detail_heading: str
    quantiles_heading: str
    quantiles: Table[QuantileRow]
    bias_heading: str
    bias_text: str
    bias: Table[AccuracyLine]


def context(a: Assessment) -> AnnexContext:
    """The annex's opening lines and its quantile and bias tables."""
    shown = summary_horizons(a)
    return AnnexContext(
        heading="Staff annex",
        lead=(
            f"Supporting detail for the board brief of {a.as_of}: every period, the track "
            "record and its tests, the calibration of past statements, the method and data, "
            "and the thresholds. The brief's numbers are the same numbers, rounded the same way."
        ),
        detail_heading="The outlook in detail",
        quantiles_heading="The fan's edges",
        quantiles=Table(
            "Outcome quantiles by period after judgement, % (the 5% and 95% quantiles bound the "
            "90% band of the fan chart; 25% and 75% the 50% band)",
            QuantileRow(
                period="Period",
                h=ahead_label(a),
                centre="Centre",
                quantiles=("5%", "10%", "25%", "50%", "75%", "90%", "95%"),
                is_policy=False,
            ),
            quantile_rows(a),
        ),
        bias_heading="Bias of each forecaster",
        bias_text=(
            "Mean error (outcome minus forecast, pp) over the error window: a positive number "
            "means outcomes came in above the forecaster on average."
        ),
        bias=Table(
            f"Mean error of each forecaster, percentage points, by {units(a)} ahead",
            AccuracyLine("Forecaster", tuple(ahead_header(a, h) for h in shown), False),
            bias_lines(a),
        ),
    )
