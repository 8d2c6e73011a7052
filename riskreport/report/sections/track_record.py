"""The track record section: accuracy of each forecaster, the comparative tests and the combination weights."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING

from riskreport.assessment import Assessment
from riskreport.forecasts.benchmarks import AR_LAGS
from riskreport.report import formatting as fmt
from riskreport.report.sections.common import (
    SIGNIFICANCE,
    ChartBlock,
    Table,
    ahead_header,
    chart,
    declined,
    join_h,
    span,
    summary_horizons,
    too_few_text,
    units,
)

if TYPE_CHECKING:
    from riskreport.forecasts.stats import TestResult


@dataclass(frozen=True)
class AccuracyLine:
    """Accuracy of one forecaster at the horizons shown."""

    model: str
    cells: tuple[str, ...]
    is_combination: bool


NOT_COMPARABLE = "dropped; not comparable"


def benchmarks_text(a: Assessment) -> str:
    """The tool's own forecasters, under the names the tables give them."""
    own = a.own_names
    return (
        f"Beside the models: {own.combination}, the combined forecast; {own.no_change}, the "
        f"last known outcome carried forward; {own.autoregression}, an AR({AR_LAGS}) of the "
        "outcomes alone, refitted at each past round."
    )


def accuracy(a: Assessment) -> tuple[tuple[str, ...], tuple[AccuracyLine, ...], str]:
    shown = summary_horizons(a)
    by_key = {(r.model, r.h): r for r in a.accuracy}
    names = list(dict.fromkeys(r.model for r in a.accuracy))
    lines = []
    current = {m.model for m in a.models if m.in_current_round}
    left_out = [m.model for m in a.models if not m.in_current_round and m.model in names]
    for name in names:
        cells = tuple(
            fmt.number(by_key[(name, h)].rmse, 2) if (name, h) in by_key else "\u2013"
            for h in shown
        )
        # A model no longer in the round was scored on an older, shorter sample: its row
        # says so itself, so a low number there is not read as the best record.
        label = f"{name} ({NOT_COMPARABLE})" if name in left_out else name
        lines.append(AccuracyLine(label, cells, name == a.own_names.combination))
    best: dict[str, list[int]] = {}
    for h in shown:
        candidates = [by_key[(n, h)] for n in names if (n, h) in by_key and n in current]
        if candidates:
            # Ties as printed (two decimals) are named together, not broken by order.
            low = min(fmt.number(r.rmse, 2) for r in candidates)
            winners = [r.model for r in candidates if fmt.number(r.rmse, 2) == low]
            best.setdefault(" and ".join(winners), []).append(h)
    leaders = "; ".join(f"{model} ({join_h(a, hs)})" for model, hs in best.items())
    text = (
        "Root mean square error in percentage points (pp) over the error window; each forecaster is scored on the "
        "rounds in that window where it gave a forecast. Lowest among the models in the "
        f"current round: {leaders}. "
        f"{benchmarks_text(a)} Significance is discussed below."
    )
    if left_out:
        text += (
            f" Not in the current round, and scored on a shorter, older sample, so not "
            f"comparable: {', '.join(left_out)}."
        )
    return tuple(ahead_header(a, h) for h in shown), tuple(lines), text


DM_NAME = (
    "Diebold-Mariano test; beyond one step ahead with a fixed-smoothing variance, Coroneo and "
    "Iacone 2020"
)


def tests_text(a: Assessment, shown: tuple[int, ...]) -> tuple[str, ...]:
    """Plain sentences on the comparative tests at the horizons shown.

    Only tests that were run and have a p-value speak: a test skipped (too few past
    rounds), declined (too few independent outcomes for any version to hold its size) or
    undefined (no variation) supports no "not significant" statement.
    """
    ran = [t for t in a.tests if t.horizon in shown and math.isfinite(t.pvalue)]
    if not ran:
        return (
            "No accuracy test could be computed at these horizons (too few past rounds, or "
            "no variation to test), so no difference in accuracy is established either way.",
            *declined_text(a, shown),
            *undefined_text(a),
        )
    # Statements about "these horizons" only when every shown horizon's tests ran.
    whole = {t.horizon for t in ran} == set(shown) and all(
        math.isfinite(t.pvalue) for t in a.tests if t.horizon in shown
    )
    dm = [t for t in ran if t.name == "diebold-mariano"]
    better: dict[str, list[int]] = {}
    worse: dict[str, list[int]] = {}
    for t in dm:
        if t.models[1] != a.own_names.combination or not t.pvalue < SIGNIFICANCE:
            continue
        # statistic > 0: the first forecaster has the larger loss.
        (worse if t.statistic > 0 else better).setdefault(t.models[0], []).append(t.horizon)
    level = f"{int(100 * SIGNIFICANCE)}%"
    lines = []
    if not any(t.models[1] == a.own_names.combination for t in dm):
        pass  # no model was tested against the combination
    elif not better and not worse:
        tested = "" if whole else f" ({join_h(a, sorted({t.horizon for t in dm}))} tested)"
        lines.append(
            f"No model's accuracy differs significantly from the combination's at the {level} "
            f"level{tested} ({DM_NAME})."
        )
    else:
        parts = [f"{m} ({join_h(a, hs)})" for m, hs in worse.items()]
        if parts:
            lines.append(
                f"The combination is significantly more accurate than {'; '.join(parts)} at "
                f"the {level} level ({DM_NAME})."
            )
        parts = [f"{m} ({join_h(a, hs)})" for m, hs in better.items()]
        if parts:
            lines.append(f"Significantly more accurate than the combination: {'; '.join(parts)}.")
    own = a.own_names
    naive = [t for t in dm if t.models == (own.combination, own.no_change)]
    beats = [t.horizon for t in naive if t.pvalue < SIGNIFICANCE and t.statistic < 0]
    loses = [t.horizon for t in naive if t.pvalue < SIGNIFICANCE and t.statistic > 0]

    def none_at(tests: list[TestResult]) -> str:
        return "these horizons" if whole else join_h(a, sorted({t.horizon for t in tests}))

    text = "Against the no-change forecast, the combination is significantly better at "
    text += join_h(a, beats) if beats else f"none of {none_at(naive)}"
    text += f" and significantly worse at {join_h(a, loses)}." if loses else "."
    if naive:
        lines.append(text)
    joint = [t for t in ran if t.name == "mariano-preve"]
    rejected = [t.horizon for t in joint if t.pvalue < SIGNIFICANCE]
    if joint:
        lines.append(
            "Taking all current models together (Mariano-Preve test), equal accuracy is "
            + (
                f"rejected at {join_h(a, rejected)}"
                if rejected
                else f"not rejected at {'any of these horizons' if whole else none_at(joint)}"
            )
            + "."
        )
    encompassing = [t for t in ran if t.name == "encompassing"]
    adds: dict[str, list[int]] = {}
    for t in encompassing:
        if t.pvalue < SIGNIFICANCE:
            adds.setdefault(t.models[1], []).append(t.horizon)
    if adds:
        lines.append(
            "Models that would still add information to the combination (encompassing test, "
            f"HLN 1998): {'; '.join(f'{m} ({join_h(a, hs)})' for m, hs in adds.items())}."
        )
    elif encompassing:
        # A non-rejection is not evidence of encompassing: say what was not found.
        lines.append(
            "No model was found to add significant information to the combination at "
            f"{'these horizons' if whole else none_at(encompassing)} (encompassing test, "
            "HLN 1998); with this many past rounds the test may miss a small gain."
        )
    lines.extend(declined_text(a, shown))
    lines.extend(undefined_text(a))
    n = sorted({t.nobs for t in dm})
    if n:
        lines.append(
            f"Tests use {span(n)} past rounds per horizon; errors of forecasts made in "
            "consecutive rounds overlap, so each test uses only as much smoothing as the "
            "independent outcomes allow, and speaks only where it holds its size."
        )
    if len(ran) > 1:
        lines.append(
            f"The {len(ran)} tests behind these lines were each run at the {level} level with "
            f"no adjustment for their number: even with no real differences, about "
            f"{fmt.number(len(ran) * SIGNIFICANCE, 0)} would be expected to come out "
            "significant by chance."
        )
    return tuple(lines)


DECLINED_WHAT = {
    "diebold-mariano": "differences in accuracy between two forecasters (Diebold-Mariano)",
    "encompassing": "whether a model adds information to the combination (encompassing)",
    "mariano-preve": "all current models together (Mariano-Preve)",
}


def declined_text(a: Assessment, shown: tuple[int, ...]) -> tuple[str, ...]:
    """One sentence per test that declined at horizons shown (too few independent outcomes)."""
    lines = []
    for name, what in DECLINED_WHAT.items():
        hs = sorted(
            {
                t.horizon
                for t in a.tests
                if t.name == name and t.horizon in shown and declined(t.notes)
            }
        )
        if hs:
            lines.append(too_few_text(a, hs, what))
    return tuple(lines)


def undefined_text(a: Assessment) -> tuple[str, ...]:
    """The count of tests with no p-value because nothing varied, when there are any."""
    undefined = [t for t in a.tests if not math.isfinite(t.pvalue) and not declined(t.notes)]
    if not undefined:
        return ()
    return (
        f"{len(undefined)} of {len(a.tests)} tests could not be computed and have no "
        "p-value: the forecasts compared had the same loss at every past round (for "
        "example, identical forecasts), so there is no variation to test.",
    )


def weights(
    a: Assessment, shown: tuple[int, ...]
) -> tuple[tuple[str, ...], tuple[AccuracyLine, ...], str]:
    table: dict[str, dict[int, float]] = {}
    for w in a.combination.weights:
        table.setdefault(w.model, {})[w.h] = w.weight
    lines = tuple(
        AccuracyLine(
            model, tuple(fmt.number(by_h[h], 2) if h in by_h else "\u2013" for h in shown), False
        )
        for model, by_h in table.items()
    )
    method = a.combination.method
    rows = [r.n for r in a.combination.rows if r.h in shown]
    text = f"Method: {method}."
    if method not in ("equal", "given", "median", "trimmed") and rows:
        text += (
            f" Weights are estimated per horizon from {span(rows)} past rounds "
            "whose outcomes were known at the time."
        )
    if method in ("median", "trimmed"):
        text += " The weights show which models set the combined value in the current round."
    values = {round(w.weight, 6) for w in a.combination.weights}
    if len(values) == 1:
        # Equal weights: one sentence, no table of identical numbers.
        text = (
            f"Method: {method}. Each of the {len(table)} models in the current round has the "
            f"same weight ({fmt.number(values.pop(), 2)}) at every horizon."
        )
        lines = ()
    return tuple(ahead_header(a, h) for h in shown), lines, text


WEIGHTS_TABLE_CAPTION = "Weight of each model by how far ahead"


def accuracy_caption(a: Assessment) -> str:
    """Caption of the accuracy table."""
    return f"Root mean square error of each forecaster, percentage points, by {units(a)} ahead"


def weights_caption(a: Assessment) -> str:
    """Caption of the weights chart."""
    return f"Combination weights of the current round by {units(a)} ahead ({a.combination.method})."


def weights_alt(a: Assessment) -> str:
    """Alt text of the weights chart."""
    by_model: dict[str, list[float]] = {}
    for w in a.combination.weights:
        by_model.setdefault(w.model, []).append(w.weight)
    parts = [
        f"{m} from {fmt.number(min(ws), 2)} to {fmt.number(max(ws), 2)}"
        for m, ws in by_model.items()
    ]
    return (
        "Stacked bar chart of the combination weights by horizon: "
        + "; ".join(parts)
        + ". The weights table is beside it."
    )


@dataclass(frozen=True)
class TrackRecordContext:
    """The track record section as printed: accuracy, the tests and the weights."""

    heading: str
    text: str
    accuracy: Table[AccuracyLine]
    tests_heading: str
    tests_text: tuple[str, ...]
    weights_heading: str
    weights_text: str
    weights_chart: ChartBlock | None
    weights: Table[AccuracyLine]


def context(a: Assessment, charts: Mapping[str, ChartBlock]) -> TrackRecordContext:
    """The track record section, with its weights chart when one was drawn."""
    shown = summary_horizons(a)
    acc_heads, acc_lines, acc_text = accuracy(a)
    weight_heads, weight_lines, weight_text = weights(a, shown)
    return TrackRecordContext(
        heading="Track record",
        text=acc_text,
        accuracy=Table(
            accuracy_caption(a), AccuracyLine("Forecaster", acc_heads, False), acc_lines
        ),
        tests_heading="Are the differences significant?",
        tests_text=tests_text(a, shown),
        weights_heading="Combination weights in the current round",
        weights_text=weight_text,
        weights_chart=chart(charts, "weights"),
        weights=Table(
            WEIGHTS_TABLE_CAPTION, AccuracyLine("Model", weight_heads, False), weight_lines
        ),
    )
