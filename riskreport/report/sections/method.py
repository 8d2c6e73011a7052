"""The method and data section: how the numbers were made, the calibration adjustments and
the sensitivity panel, the inputs and the models."""

from __future__ import annotations

from dataclasses import dataclass

from riskreport.assessment import Assessment
from riskreport.reading import periods
from riskreport.report.sections.common import (
    FAMILY_NAMES,
    Facts,
    KeyValue,
    Table,
    scale_of,
    span,
    units,
)
from riskreport.report.sections.method_choice import (
    SENSITIVITY_HEAD,
    SensitivityLine,
    adjustment_text,
    method_name,
    sensitivity_caption,
    sensitivity_lines,
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
    weights = "; ".join(f"{method_name(w.candidate)} {w.weight:.2f}" for w in listed)
    if rest:
        weights += f"; {rest} other{'s' if rest > 1 else ''} 0.00"
    nested = (
        ""
        if pool.correction_prior_share is None
        else "; the bias-corrected laws' pools then pooled with theirs, shrunk toward the "
        f"uncorrected by {pool.correction_prior_share:.2f} (by the evidence of past scores)"
    )
    return (
        f"weights {weights}: those that maximise the past log score, shrunk toward "
        f"{method_name(pool.weights[0].candidate)} by {pool.prior_share:.2f} on "
        f"{pool.effective_outcomes:.0f} effective scored outcomes{nested}"
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
            {
                "estimated": "estimated: past average errors (bias) carry over into the centre",
                "forecast": "the point forecast is the mode of the distribution",
                "auto": "the point forecast, pooled with the same laws centred on the forecast "
                "plus a discounted mean of recent errors (a bias correction that earns "
                "weight only by past scores)"
                if u.pool is not None
                else "the point forecast is the mode of the distribution (the hard choice "
                "of distribution = best-past-score is not offered a bias correction)",
            }[u.centre],
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
