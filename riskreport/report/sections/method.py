"""The method and data section: how the numbers were made, the calibration adjustments and
the sensitivity panel, the inputs and the models."""

from __future__ import annotations

import math
from dataclasses import dataclass

from riskreport.assessment import Assessment
from riskreport.laws.pool import POOL_FAMILY
from riskreport.reading import periods
from riskreport.replay.adjustments import Adjustments, SensitivityRow
from riskreport.report import formatting as fmt
from riskreport.report.sections.calibration import COVERAGE_TOO_NARROW, COVERAGE_TOO_WIDE
from riskreport.report.sections.common import (
    FAMILY_NAMES,
    Facts,
    KeyValue,
    Table,
    method_was_chosen,
    scale_of,
    span,
    todays_law_is_baseline,
    units,
)
from riskreport.report.sections.summary import CAUTIONS

VINTAGE_TEXT = {
    "first-release": "the first release of each outcome published by the as_of date "
    "(past errors are measured as they looked when first known)",
    "latest": "the latest release of each outcome published by the as_of date "
    "(revisions known by then are included)",
}
ONE_RELEASE_TEXT = (
    "the one release of each outcome in the actuals file: past rounds are fitted and scored "
    "on it, so revisions published after a past round count as known then (a vintage "
    "column in the actuals would replay what was known at each round)"
)
TESTS_METHOD = (
    "One step ahead: Diebold-Mariano and encompassing tests with the Harvey-Leybourne-Newbold "
    "correction, Student t; Mariano-Preve (several forecasts) and the calibration test of "
    "PITs (Knueppel): Hotelling F. Further ahead the errors of consecutive rounds overlap: "
    "every test uses a weighted-periodogram variance with a fixed-smoothing t or F "
    "(Coroneo and Iacone 2020), with as many frequencies as the independent outcomes in the "
    "record allow (one per four for two forecasts, more for several; at most the cube root "
    "of the rounds). Where they are too few for any version to hold its size, the test "
    "declines and the brief says so; the textbook versions reject a true null two to ten "
    "times too often there. The PIT histograms' chi-square is a description, not a test; a "
    "test with no variation to test has no p-value."
)


def basis_text(a: Assessment) -> str:
    """How the target's basis is measured, for the method page."""
    basis = a.target.basis
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


# Pool weights below this are summed up rather than listed (they round to 0.00).
LISTED_WEIGHT = 0.005


def pool_text(a: Assessment) -> str:
    """The pool's weights in words (empty without a pool)."""
    pool = a.uncertainty.pool
    if pool is None:
        return ""
    listed = [w for w in pool.weights if w.weight >= LISTED_WEIGHT]
    rest = len(pool.weights) - len(listed)
    weights = "; ".join(f"{_method_name(w.candidate)} {w.weight:.2f}" for w in listed)
    if rest:
        weights += f"; {rest} other{'s' if rest > 1 else ''} 0.00"
    return (
        f"weights {weights}: those that maximise the past log score, shrunk toward "
        f"{_method_name(pool.weights[0].candidate)} by {pool.prior_share:.2f} on "
        f"{pool.effective_outcomes:.0f} effective scored outcomes"
    )


def distribution_text(a: Assessment) -> str:
    """How the error distribution was chosen and fitted, in words."""
    u = a.uncertainty
    used = sorted({FAMILY_NAMES[r.distribution] for r in a.horizons})
    how = {
        "normal": "maximum likelihood",
        "two-piece normal": "maximum likelihood (mode profiled)",
        "skew-normal": "maximum penalised likelihood",
        "kernel-smoothed empirical": "Gaussian kernel, Silverman bandwidth, normal tails",
        "given error quantiles": "as given",
        "optimal prediction pool": pool_text(a),
    }
    text = "; ".join(f"{name} ({how[name]})" for name in used) + ", per horizon"
    if u.selection is not None:
        runner = u.selection.runner_up
        runner_name = str(FAMILY_NAMES.get(runner, runner)) if runner is not None else "None"
        text += (
            f". Chosen automatically by out-of-sample log score over past rounds "
            f"(runner-up: {runner_name})"
        )
    return text + "."


JUDGEMENT_SOURCES = (
    "Britton, Fisher and Whitley (1998), The Inflation Report projections: understanding "
    "the fan chart, Bank of England Quarterly Bulletin 38(1); Wallis (2004), An assessment "
    "of Bank of England and National Institute inflation forecast uncertainties, National "
    "Institute Economic Review 189"
)


AGAINST_BASELINE = {"about the same": "about as well as", "worse": "worse than"}


def _errors_window(a: Assessment) -> int:
    """The error window today's laws use: the configured one, or the one the replay chose."""
    adj = a.adjustments
    return adj.window if adj is not None and adj.window_grid else a.uncertainty.window


def _window_text(a: Assessment) -> str:
    """The error window today's laws use, in words."""
    configured = a.uncertainty.window
    used = _errors_window(a)
    text = (
        "every past round with a known outcome"
        if used == 0
        else f"the last {used} rounds with a known outcome, per horizon"
    )
    if used != configured:
        text += f" (chosen by the replay; configured: {configured or 'all'})"
    return text


ESTIMATED_WEIGHTS = ("inverse-mse", "rank", "ols", "ols-sum-to-one", "ols-nonnegative", "shrink")


def windows_text(a: Assessment) -> str:
    """The errors' window and the weights' window side by side, and why they differ."""
    errors = f"Error distribution: {_window_text(a)}."
    method = a.combination.method
    if method not in ESTIMATED_WEIGHTS:
        return f"{errors} Combination weights: none estimated (the {method} method uses no past rounds)."
    weights = a.combination.window or 0
    errors_window = _errors_window(a)
    text = (
        f"{errors} Combination weights: "
        + ("every past round" if weights == 0 else f"the last {weights} rounds")
        + " with a known outcome, per horizon."
    )
    if weights == errors_window:
        return text + " Both use the same past rounds."
    if weights == 0 or (errors_window != 0 and weights > errors_window):
        return text + (
            " The weights look further back because weights estimated from a short record "
            "are noisy and often forecast worse than equal weights (Smith and Wallis 2009), "
            "while the error distribution should reflect the size of recent errors."
        )
    return text + (
        " The weights look less far back, to follow the models' recent relative accuracy, "
        "while the error distribution needs many errors to estimate its tails."
    )


def judgement_text(a: Assessment) -> str:
    """The method line on staff judgement, with its published sources."""
    if not a.judgement:
        return "None applied in this brief: the probabilities are model-based."
    return (
        "An adjustment of the model-based distribution: a shift of the centre, a scale of the "
        "spread and a skew (mean minus mode) of a two-piece normal, as in " + JUDGEMENT_SOURCES
    )


def verbal_text(a: Assessment) -> str:
    """The verbal scale, its source, and our rule for the middle term."""
    scale = scale_of(a)
    return (
        f"{scale.name} ({scale.source}); a term whose range straddles 50% is used only at "
        "exactly 50%, otherwise \u201cmore likely than not\u201d (an additional IPCC AR5 term) "
        "or \u201cless likely than not\u201d (our complement of it)"
    )


@dataclass(frozen=True)
class InputRow:
    """One input file as the method page lists it."""

    role: str
    path: str
    sha256: str
    rows: str
    span: str


def input_rows(a: Assessment) -> tuple[InputRow, ...]:
    """The inputs table: role, file, fingerprint, rows and periods."""
    return tuple(
        InputRow(
            i.role,
            i.path,
            i.sha256,
            str(i.rows) if i.rows is not None else "\u2013",
            f"{i.first_period} to {i.last_period}" if i.first_period else "\u2013",
        )
        for i in a.inputs
    )


def model_facts(a: Assessment) -> tuple[KeyValue, ...]:
    """The models in the forecasts file and whether each is in the current round."""
    return tuple(
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
    )


def sample_facts(a: Assessment) -> tuple[KeyValue, ...]:
    """How many past errors each horizon learned from."""
    samples = [r.n_errors for r in a.horizons if r.n_errors is not None]
    given = [r.h for r in a.horizons if r.n_errors is None]
    return (
        KeyValue(
            "Past errors per horizon",
            (span(samples) if samples else "none")
            + (f"; given at {periods.ranges(given)} {units(a)} ahead" if given else ""),
        ),
    )


def method_facts(a: Assessment) -> tuple[KeyValue, ...]:
    """How the numbers were made, one labelled line each."""
    u = a.uncertainty
    given = [r.h for r in a.horizons if r.n_errors is None]
    return (
        KeyValue("Combination", f"{a.combination.method} weights, per horizon"),
        KeyValue("Error distribution", distribution_text(a)),
        KeyValue("Windows", windows_text(a)),
        KeyValue(
            "Centre",
            "estimated: past average errors (bias) carry over into the centre"
            if u.centre == "estimated"
            else "the point forecast is the mode of the distribution",
        ),
        KeyValue("Target basis", basis_text(a)),
        KeyValue(
            "Spread by horizon",
            (
                "not allowed to shrink as the horizon lengthens"
                + (" (learned horizons only)" if given else "")
            )
            if u.monotone
            else "as fitted",
        ),
        *(
            (
                KeyValue(
                    "Given error distribution",
                    f"{periods.ranges(given)} {units(a)} ahead: the error_quantiles file, used exactly "
                    "as given (not widened, no past errors, no sampling interval)",
                ),
            )
            if given
            else ()
        ),
        KeyValue(
            "Plausible range of inside",
            f"{int(100 * u.interval_level)}% of {u.bootstrap_replicates} bootstrap "
            "resamples of the past errors, widened to the number of independent outcomes "
            "among overlapping errors; it leaves out the uncertainty of the "
            "choice of method (the sensitivity panel shows that)",
        ),
        KeyValue(
            "Path probabilities",
            f"Gaussian copula on rank correlations of same-origin errors, {u.simulations} simulated paths, seed {u.seed}",
        ),
        KeyValue("Accuracy tests", TESTS_METHOD),
        KeyValue("Verbal scale", verbal_text(a)),
        KeyValue("Staff judgement", judgement_text(a)),
        KeyValue(
            "Outcomes scored against",
            VINTAGE_TEXT[a.score_against] if a.score_against else ONE_RELEASE_TEXT,
        ),
    )


# The calibration adjustments and the sensitivity panel.


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
    return f"spread following recent errors (smoothing {spread.split(' ')[1]})"


def _window_words(window: int) -> str:
    return "every past error" if window == 0 else f"the last {window} errors"


def _method_name(label: str) -> str:
    if label == "auto":
        return "as learned at each past round (chosen or pooled)"
    if label == "auto, recalibrated":
        return "as learned at each past round, then recalibrated"
    family, _, spread = label.partition(", ")
    return f"{NAMES.get(family, family)}, {_spread_words(spread or 'constant')}"


def _row_name(row: SensitivityRow, a: Assessment) -> str:
    if row.family == "as selected":
        return _method_name(row.method)
    name = f"{NAMES.get(row.family, row.family)}, {_spread_words(row.spread)}"
    adj = a.adjustments
    if adj is not None and adj.window_grid:
        if row.window_fixed:
            name += f", {_window_words(row.window)} throughout"
        else:
            name += f", window as chosen at each round (today {_window_words(row.window)})"
    return name


def _today(row: SensitivityRow) -> str:
    """The panel's last column: today's method is "used"; the sequence of past choices,
    whose record the brief reports, is "graded" (two rows marked "used" read as two
    methods in use)."""
    if not row.chosen:
        return ""
    return "graded" if row.family == "as selected" else "used"


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
            _today(r),
        )
        for r in adj.sensitivity
    )


def sensitivity_caption(a: Assessment) -> str:
    """The panel's caption."""
    return (
        f"Chance of being inside the band in {a.policy.period} ({a.policy_horizon} {units(a)} ahead) under "
        "each method, before any judgement, with that method's past record at this horizon "
        "(mean log score: higher is better; how often its 90% range held the outcome). "
        "Used: today's method; graded: the method of each past round as it was chosen then, "
        "the record this brief reports"
    )


def _pooled_spread_sentence(a: Assessment) -> str:
    """The pooled spread in words: the constant spread's weight against the others'."""
    pool = a.uncertainty.pool
    constant = (
        sum(w.weight for w in pool.weights if ", " not in w.candidate) if pool is not None else 1.0
    )
    return (
        "The spread is pooled: a constant spread (weight "
        f"{constant:.2f} today) with spreads that follow the size of recent errors and one "
        f"estimated jointly across horizons ({1 - constant:.2f} together), each weighted by "
        "the log score it earned on the rounds already scored at each past round and shrunk "
        "toward the constant spread while the record is short; a spread that moves gains "
        "weight only where the record shows the size of errors changing."
    )


def _spread_sentence(a: Assessment, adj: Adjustments) -> str:
    if adj.spread == POOL_FAMILY:
        return _pooled_spread_sentence(a)
    if adj.spread == "constant":
        if adj.spread_option == "constant":
            return "The spread of errors is taken as constant over the error window."
        return (
            "A spread that follows recent errors and one estimated jointly across horizons "
            "were tried, but the constant spread has the better record, so it is used."
        )
    if adj.spread == "joint":
        low, high = (min(adj.factors), max(adj.factors)) if adj.factors else (1.0, 1.0)
        return (
            "The spread of each horizon is estimated jointly with the shorter horizons: "
            "the recent short-horizon errors, whose outcomes are already known, inform the "
            "spread of the longer horizons (maximum likelihood under joint normality); "
            f"today this scales the spreads by {low:.2f} to {high:.2f}."
        )
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
        return _method_name(adj.method)
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
    centre = (
        "centred on the point forecast"
        if a.uncertainty.centre == "forecast"
        else "centred on the forecast plus the window's mean error"
    )
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
    window = _window_sentence(adj)
    if window is not None:
        lines.append(window)
    if a.uncertainty.selection is not None:
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
INPUTS_HEAD = InputRow(role="Role", path="File", sha256="SHA-256", rows="Rows", span="Periods")


@dataclass(frozen=True)
class MethodContext:
    """The method and data section as printed."""

    heading: str
    facts: Facts
    adjustments_heading: str
    adjustment_text: tuple[str, ...]
    sensitivity: Table[SensitivityLine]
    inputs: Table[InputRow]
    models: Facts
    warnings_heading: str
    warnings: tuple[str, ...]
    no_warnings: str
    cautions_heading: str
    cautions: tuple[str, ...]
    software: str


def context(a: Assessment) -> MethodContext:
    """The method and data section: how the numbers were made, the adjustments, the inputs,
    the models, the warnings and the software."""
    return MethodContext(
        heading="Method and data",
        facts=Facts("How the numbers were made", method_facts(a) + sample_facts(a)),
        adjustments_heading="Calibration adjustments",
        adjustment_text=adjustment_text(a),
        sensitivity=Table(sensitivity_caption(a), SENSITIVITY_HEAD, sensitivity_lines(a)),
        inputs=Table("Inputs", INPUTS_HEAD, input_rows(a)),
        models=Facts("Models in the forecasts file", model_facts(a)),
        warnings_heading="Warnings",
        warnings=a.warnings,
        no_warnings="None.",
        cautions_heading="Cautions",
        cautions=CAUTIONS,
        software="Software: " + ", ".join(f"{k} {v}" for k, v in a.software.items()) + ".",
    )
