"""How today's method was chosen and how it held: the sentences of the method page's
"Calibration adjustments" and the sensitivity panel (P(inside) under every method)."""

from __future__ import annotations

import math
from dataclasses import dataclass

from riskreport.assessment import Assessment
from riskreport.laws import bias
from riskreport.laws.pool import POOL_FAMILY
from riskreport.reading import periods
from riskreport.replay.adjustments import Adjustments, SensitivityRow
from riskreport.report import formatting as fmt
from riskreport.report.sections.calibration import COVERAGE_TOO_NARROW, COVERAGE_TOO_WIDE
from riskreport.report.sections.common import method_was_chosen, todays_law_is_baseline, units

AGAINST_BASELINE = {"about the same": "about as well as", "worse": "worse than"}


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
    "pool": "optimal prediction pool",
}


def _spread_words(spread: str) -> str:
    if spread == "constant":
        return "constant spread"
    if spread == "joint":
        return "spread estimated jointly across horizons"
    if spread == "revisions":
        return "spread implied by the forecasts' revisions"
    return f"spread following recent errors (smoothing {spread.split(' ')[1]})"


def _window_words(window: int) -> str:
    return "every past error" if window == 0 else f"the last {window} errors"


def method_name(label: str) -> str:
    """A replayed method's label (``normal, ewma 0.9``, ``auto``) in words."""
    if label == "auto":
        return "as learned at each past round (chosen or pooled)"
    if label == "auto, recalibrated":
        return "as learned at each past round, then recalibrated"
    label, corrected = _bias_part(label)
    family, _, spread = label.partition(", ")
    return f"{NAMES.get(family, family)}, {_spread_words(spread or 'constant')}{corrected}"


def _bias_part(label: str) -> tuple[str, str]:
    """A label without its bias correction (``..., bias-corrected 2y``), and the correction
    in words (empty when uncorrected)."""
    rest, found, half_life = label.rpartition(f", {bias.LABEL} ")
    if not found:
        return label, ""
    return rest, f", bias-corrected (half-life {half_life.removesuffix('y')} years)"


def _row_name(row: SensitivityRow, a: Assessment) -> str:
    if row.family == "as selected":
        return method_name(row.method)
    name = f"{NAMES.get(row.family, row.family)}, {_spread_words(row.spread)}"
    name += _bias_part(row.method)[1]
    adj = a.adjustments
    if adj is not None and adj.window_grid:
        if row.window_fixed:
            name += f", {_window_words(row.window)} throughout"
        else:
            name += f", window as chosen at each round (today {_window_words(row.window)})"
    return name


def _today(row: SensitivityRow, pooled: bool) -> str:
    """The panel's last column: today's method is "used"; the sequence of past choices,
    whose record the brief reports, is "graded" (two rows marked "used" read as two
    methods in use). With a pool, the pool's row is both today's law and the record."""
    if not row.chosen:
        return ""
    if row.family == "as selected":
        return "used, graded" if pooled else "graded"
    return "used"


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
            _row_name(r, a),
            fmt.single_percent(r.p_inside),
            _score(r.log_score),
            _share(r.coverage_90),
            _today(r, a.uncertainty.pool is not None),
        )
        for r in adj.sensitivity
    )


def sensitivity_caption(a: Assessment) -> str:
    """The panel's caption."""
    return (
        f"Chance of being inside the band in {a.policy.period} ({a.policy_horizon} {units(a)} ahead) under "
        "each method, before any judgement, with that method's past record at this horizon "
        "(mean log score: higher is better; how often its 90% range held the outcome). "
        "Used: today's law; graded: the method of each past round as it was chosen or pooled then, "
        "the record this brief reports"
    )


def _is_moving(candidate: str) -> bool:
    """Whether a pool member's label names a spread that moves (EWMA or joint)."""
    return any(f", {kind}" in candidate for kind in ("ewma", "joint", "revisions"))


def _pooled_spread_sentence(a: Assessment) -> str:
    """The pooled spread in words: the constant spread's weight against the others'."""
    pool = a.uncertainty.pool
    constant = (
        sum(w.weight for w in pool.weights if not _is_moving(w.candidate))
        if pool is not None
        else 1.0
    )
    return (
        "The spread is pooled: a constant spread (weight "
        f"{constant:.2f} today) with spreads that follow the size of recent errors, one "
        "estimated jointly across horizons and one implied by the forecasts' revisions "
        f"({1 - constant:.2f} together), each weighted by "
        "the log score it earned on the rounds already scored at each past round and shrunk "
        "toward the constant spread while the record is short; another spread gains weight "
        "only where it scored better than the constant one on past rounds."
    )


def _correction_sentence(a: Assessment) -> str | None:
    """The bias correction in words (``centre = "auto"``): its weight in the pool and how far
    it moves the centre at the policy horizon."""
    pool = a.uncertainty.pool
    if a.uncertainty.centre != "auto" or pool is None:
        return None
    weight = sum(w.weight for w in pool.weights if bias.LABEL in w.candidate)
    model = next((r for r in a.model_based_horizons if r.h == a.policy_horizon), a.policy)
    moved = model.centre - model.point_forecast
    how = (
        "Bias: each law is also replayed centred on the forecast plus a discounted mean of "
        "the errors known at each round (half-lives of "
        f"{' and '.join(f'{h:g}' for h in bias.HALF_LIVES)} years, shrunk toward no "
        "correction), and weighted by its past scores like the rest"
    )
    if weight < 0.005:
        return (
            f"{how}; the corrected laws did not score better on past rounds, so they carry "
            "no weight today and the centre is the point forecast."
        )
    return (
        f"{how}; the corrected laws carry {weight:.2f} of the pool's weight today, which "
        f"moves the centre by {fmt.number(moved, signed=True)} pp at the policy horizon."
    )


def _spread_sentence(a: Assessment, adj: Adjustments) -> str:
    if adj.spread == POOL_FAMILY:
        return _pooled_spread_sentence(a)
    if adj.spread == "constant":
        if adj.spread_option == "constant":
            return "The spread of errors is taken as constant over the error window."
        return (
            "A spread that follows recent errors, one estimated jointly across horizons and "
            "one implied by the forecasts' revisions were tried, but the constant spread "
            "has the better record, so it is used."
        )
    rescaled = {
        "revisions": "The spread of each horizon is the one the forecasts' own revisions "
        "imply: under efficient forecasts an error is the sum of the revisions its forecast "
        "goes through, and a revision is known one round after it is made, long before the "
        "outcome",
        "joint": "The spread of each horizon is estimated jointly with the shorter horizons: "
        "the recent short-horizon errors, whose outcomes are already known, inform the "
        "spread of the longer horizons (maximum likelihood under joint normality)",
    }
    if adj.spread in rescaled:
        low, high = (min(adj.factors), max(adj.factors)) if adj.factors else (1.0, 1.0)
        return f"{rescaled[adj.spread]}; today this scales the spreads by {low:.2f} to {high:.2f}."
    lam = adj.spread.split(" ")[1]
    return (
        "The spread follows the size of recent errors: past errors are divided by the "
        f"error volatility of their time (smoothing {lam}, chosen by the replay) and the "
        f"shape learned from them is rescaled by today's volatility ({adj.volatility:.2f} pp)."
    )


def _window_sentence(adj: Adjustments) -> str | None:
    if not adj.window_grid:
        return None
    words = [_window_words(w) for w in adj.window_grid]
    grid = ", ".join(words[:-1]) + " and " + words[-1] if len(words) > 1 else words[0]
    changed = len({s.method for s in adj.window_spells}) > 1
    return (
        f"The error window was chosen by the replay among {grid}: {_window_words(adj.window)} "
        "has the best record today"
        + (
            "; in the replay each past round used the window best on the scores known then."
            if changed
            else ", and every past round of the replay used it too."
        )
    )


def _todays_method(a: Assessment, adj: Adjustments) -> str:
    """Today's law in words: the chosen method, or what the pool combines."""
    pool = a.uncertainty.pool
    if adj.method != POOL_FAMILY or pool is None:
        return method_name(adj.method)
    families = {w.candidate.partition(", ")[0] for w in pool.weights}
    if len(families) == 1:
        family = NAMES.get(next(iter(families)), next(iter(families)))
        return f"the {family} law, its spread pooled over a constant spread and spreads that move over time"
    if adj.spread == POOL_FAMILY:
        return "an optimal prediction pool of the laws under each spread option"
    return f"an optimal prediction pool of the laws, {_spread_words(adj.spread)}"


def _source_sentence(a: Assessment, adj: Adjustments) -> str:
    """Which method ran and why: the default, or what the config set."""
    t = (
        ", its predictive a Student t that widens where few independent errors are on record"
        if adj.predictive == "student-t"
        else ""
    )
    centre = {
        "forecast": "centred on the point forecast",
        "estimated": "centred on the forecast plus the window's mean error",
        "auto": "centred on the point forecast or, as far as past scores earn it, on the "
        "forecast corrected for recent bias"
        if a.uncertainty.pool is not None
        else "centred on the point forecast",
    }[a.uncertainty.centre]
    what = f"{_todays_method(a, adj)}, {centre}{t}"
    if adj.method_source == "defaults":
        return (
            f"Method: the default ({what}); of the methods offered it is the one whose "
            "replay held best on real inflation histories (its log score beat the constant "
            "normal law's on each)."
        )
    return f"Method: as set in the configuration ({what})."


def adjustment_text(a: Assessment) -> tuple[str, ...]:
    """Sentences: the adjustments made and what the replay says of the result."""
    adj = a.adjustments
    if adj is None:
        return ()
    v = adj.verdict
    lines = [_source_sentence(a, adj), _spread_sentence(a, adj)]
    correction = _correction_sentence(a)
    if correction is not None:
        lines.append(correction)
    window = _window_sentence(adj)
    if window is not None:
        lines.append(window)
    if a.uncertainty.selection is not None:
        lines.append(
            f"The method ({method_name(adj.method)}) was chosen by log score; in the replay "
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
        f"{100 * v.baseline_gap_50:.0f}); its mean log score was {fmt.number(v.log_score, 2)} "
        f"against {fmt.number(v.baseline_log_score, 2)} for the constant normal law (higher "
        "is better)."
    )
    if method_was_chosen(a) and v.against_baseline != "better":
        if todays_law_is_baseline(a):
            lines.append(
                f"By that score, choosing the method afresh at each past round did "
                f"{AGAINST_BASELINE[v.against_baseline]} keeping the plain constant normal law "
                "throughout; today the choice is that plain normal law itself."
            )
        else:
            lines.append(
                f"By that score the method used did {AGAINST_BASELINE[v.against_baseline]} the "
                "plain constant normal law in the replay: the choice of method shows no gain on "
                "this record."
            )
    # The same thresholds as the board's pages (calibration.COVERAGE_TOO_*), with the
    # direction said: ranges that held too rarely and ranges that held too often differ.
    held = {r.h: r.observed for r in a.calibration.coverage if r.nominal == 0.9 and r.n > 0}
    narrow = sorted(h for h, x in held.items() if x < COVERAGE_TOO_NARROW)
    wide = sorted(h for h, x in held.items() if x > COVERAGE_TOO_WIDE)
    if narrow:
        least = min(narrow, key=lambda h: held[h])
        lines.append(
            f"The 90% ranges held less often than stated at {periods.ranges(narrow)} "
            f"{units(a)} ahead (least: {fmt.single_percent(held[least])} at {least} "
            f"{units(a)} ahead): read the probabilities there as less certain than they look."
        )
    if wide:
        lines.append(
            f"The 90% ranges held more often than stated at {periods.ranges(wide)} "
            f"{units(a)} ahead: the ranges there were wider than the record needed."
        )
    return tuple(lines)


SENSITIVITY_HEAD = SensitivityLine(
    method="Method",
    p_inside="Inside",
    log_score="Log score",
    coverage_90="90% range held",
    chosen="Today",
)
