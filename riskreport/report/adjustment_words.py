"""Wording of the calibration adjustments: what was done, what the replay says of it, and
the sensitivity panel of the method page."""

from __future__ import annotations

import math
from dataclasses import dataclass

from riskreport.adjustments import Adjustments
from riskreport.assessment import Assessment
from riskreport.report import formatting as fmt


@dataclass(frozen=True)
class SensitivityLine:
    """One printed row of the sensitivity panel."""

    method: str
    p_inside: str
    log_score: str
    coverage_90: str
    chosen: str


NAMES = {
    "normal": "normal",
    "two-piece-normal": "two-piece normal",
    "skew-normal": "skew-normal",
    "empirical": "kernel-smoothed empirical",
}


def _method_name(label: str) -> str:
    if label == "auto":
        return "as chosen at each past round"
    if label == "auto, recalibrated":
        return "as chosen at each past round, then recalibrated"
    family, _, spread = label.partition(", ")
    name = NAMES.get(family, family)
    if not spread:
        return f"{name}, constant spread"
    lam = spread.split(" ")[1]
    return f"{name}, spread following recent errors (smoothing {lam})"


def _score(value: float) -> str:
    return "\u2013" if not math.isfinite(value) else f"{value:.2f}"


def _share(value: float) -> str:
    return "\u2013" if not math.isfinite(value) else fmt.single_percent(value)


def sensitivity_lines(a: Assessment) -> tuple[SensitivityLine, ...]:
    """The panel's rows: every replayed method, then the sequence the brief reports."""
    adj = a.adjustments
    if adj is None:
        return ()
    return tuple(
        SensitivityLine(
            _method_name(r.method),
            fmt.single_percent(r.p_inside),
            _score(r.log_score),
            _share(r.coverage_90),
            "used" if r.chosen else "",
        )
        for r in adj.sensitivity
    )


def sensitivity_caption(a: Assessment) -> str:
    """The panel's caption."""
    return (
        f"Chance of being inside the band in {a.policy.period} (h = {a.policy_horizon}) under "
        "each method, before any judgement, with that method's past record at this horizon "
        "(mean log score: higher is better; how often its 90% range held the outcome)"
    )


def _spread_sentence(adj: Adjustments) -> str:
    if adj.spread == "constant":
        if adj.spread_option == "constant":
            return "The spread of errors is taken as constant over the error window."
        return (
            "A spread that follows recent errors was tried, but the constant spread has "
            "the better record, so it is used."
        )
    lam = adj.spread.split(" ")[1]
    return (
        "The spread follows the size of recent errors: past errors are divided by the "
        f"error volatility of their time (smoothing {lam}, chosen by the replay) and the "
        f"shape learned from them is rescaled by today's volatility ({adj.volatility:.2f} pp)."
    )


def adjustment_text(a: Assessment) -> tuple[str, ...]:
    """Sentences: the adjustments made and what the replay says of the result."""
    adj = a.adjustments
    if adj is None:
        return ()
    v = adj.verdict
    lines = [_spread_sentence(adj)]
    if a.uncertainty.get("selection"):
        lines.append(
            f"The method ({_method_name(adj.method)}) was chosen by log score; in the replay "
            "each past round used the method that was best on the scores known at that "
            "round, so the record below grades the choice as it would have been made."
        )
    if adj.recalibrate:
        row = next((r for r in adj.recalibration if r.h == a.policy_horizon), None)
        if (
            row is not None
            and abs(row.p_inside - row.p_inside_raw) + abs(row.p_below - row.p_below_raw) > 0
        ):
            how = (
                "a beta map of past PITs"
                if row.method == "beta"
                else "the levels of the predicted quantiles moved after each past hit or miss"
            )
            lines.append(
                f"The probabilities are recalibrated on the track record ({how}; in the "
                "replay, learned only from rounds already scored): at the policy horizon, "
                f"inside the band {fmt.single_percent(row.p_inside_raw)} before and "
                f"{fmt.single_percent(row.p_inside)} after."
            )
        else:
            lines.append("Recalibration was asked for but the track record is too short.")
    if not math.isfinite(v.gap_90):
        return (*lines, "There are too few past rounds to judge the adjustments.")
    lines.append(
        f"Over the replayed horizons, the 90% ranges missed their nominal share by "
        f"{100 * v.gap_90:.0f} points on average and the 50% ranges by {100 * v.gap_50:.0f} "
        f"(a constant normal law: {100 * v.baseline_gap_90:.0f} and "
        f"{100 * v.baseline_gap_50:.0f})."
    )
    if not v.near:
        lines.append(
            "Even so, coverage is not near nominal: the stated probabilities should be read "
            "as less certain than they look."
        )
    return tuple(lines)
