"""The staff annex's own pieces: its opening lines, the fan's quantiles by period and each
forecaster's bias (the annex also prints the outlook details, the track record, the
calibration, the method and data, and the appendix, each phrased by its own section)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from riskreport.assessment import Assessment
from riskreport.report import formatting as fmt
from riskreport.report.sections.common import (
    ChartBlock,
    Table,
    ahead_header,
    ahead_label,
    chart,
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


def model_lines(a: Assessment) -> tuple[AccuracyLine, ...]:
    """Each model's forecast in the current round at the horizons shown, then the combined
    forecast (a model with no forecast for a period shows a dash)."""
    shown = summary_horizons(a)
    by_key = {(r.model, r.h): r.value for r in a.model_forecasts}
    names = list(dict.fromkeys(r.model for r in a.model_forecasts))
    lines = [
        AccuracyLine(
            name,
            tuple(
                fmt.number(by_key[(name, h)]) if (name, h) in by_key else "\u2013" for h in shown
            ),
            False,
        )
        for name in names
    ]
    combined = tuple(fmt.number(a.horizon_result(h).point_forecast) for h in shown)
    return (*lines, AccuracyLine("combination", combined, True))


def models_alt(a: Assessment) -> str:
    """Alt text of the chart of each model's path."""
    policy = a.policy_horizon
    at = sorted((r.value, r.model) for r in a.model_forecasts if r.h == policy)
    spread = (
        f"at the policy horizon they range from {fmt.number(at[0][0])}% ({at[0][1]}) to "
        f"{fmt.number(at[-1][0])}% ({at[-1][1]})"
        if at
        else "no model reaches the policy horizon"
    )
    return (
        f"Line chart of each model's forecast path in the current round and the combined "
        f"forecast by {units(a)} ahead; {spread}; combined "
        f"{fmt.number(a.policy.point_forecast)}%. The numbers are in the table beside it."
    )


def errors_alt(a: Assessment) -> str:
    """Alt text of the chart of past errors over time."""
    hs = sorted({e.h for e in a.past_errors})
    parts = []
    for h in hs:
        values = [e.error for e in a.past_errors if e.h == h]
        parts.append(
            f"{h} {units(a)} ahead: {len(values)} rounds, from {fmt.number(min(values))} to "
            f"{fmt.number(max(values))} pp"
        )
    return "Line chart of the combined forecast's past errors by round: " + "; ".join(parts) + "."


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
    models_heading: str
    models_chart: ChartBlock | None
    models: Table[AccuracyLine]
    errors_heading: str
    errors_text: str
    errors_chart: ChartBlock | None


MODELS_CAPTION = (
    "Each model's forecast path in the current round (grey, one line style each) and the "
    "combined forecast (brown); the target band hatched."
)
ERRORS_CAPTION = (
    "Past errors of the combined forecast (outcome minus forecast, pp) by the round that made "
    "them, at the first horizon and at the policy horizon: a change in their size over the "
    "years is a change of regime the error window may or may not cover."
)


def context(a: Assessment, charts: Mapping[str, ChartBlock]) -> AnnexContext:
    """The annex's opening lines, its tables and its own charts (looked up in ``charts``)."""
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
        models_heading="Each model's path in the current round",
        models_chart=chart(charts, "model-paths"),
        models=Table(
            f"Forecast of each model and the combined forecast, %, by {units(a)} ahead",
            AccuracyLine("Model", tuple(ahead_header(a, h) for h in shown), False),
            model_lines(a),
        ),
        errors_heading="Past errors over time",
        errors_text=(
            "Today's probabilities rest on "
            + (
                "every one of these misses known at the time."
                if a.uncertainty.window == 0
                else f"the last {a.uncertainty.window} of each horizon's misses."
            )
        ),
        errors_chart=chart(charts, "past-errors"),
    )
