"""The checks a round's inputs pass before anything is fitted (``riskreport check``).

Reads and validates the config and every input, arranges the panel, forms the combined
forecast (a batched solve from sample moments) and counts each horizon's past errors; no
error distribution is fitted, nothing is replayed, bootstrapped, simulated or tested, and
neither scipy.stats nor matplotlib, weasyprint or statsmodels is imported. The pipeline
runs the same checks (the functions here) before it fits.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from riskreport._typing import Frequency
from riskreport.errors import (
    InputError,
    LaterOutcomeWarning,
    ModelLeftOutWarning,
    OutcomeGapWarning,
    RiskReportWarning,
)
from riskreport.forecasts import combination as combination_module
from riskreport.forecasts.track_record import error_matrix, window_mask
from riskreport.reading import panel as panel_module
from riskreport.reading import periods
from riskreport.reading.config import Config, Judgement
from riskreport.reading.inputs import (
    Actuals,
    ErrorQuantiles,
    Forecasts,
    read_actuals,
    read_error_quantiles,
    read_forecasts,
)


@dataclass(frozen=True)
class InputSummary:
    """One input file as the check read it: role, path as configured, rows read."""

    role: str
    path: str
    rows: int | None


@dataclass(frozen=True)
class Screening:
    """What ``check`` reports: the round, the band, the models, the past errors per horizon
    (within the error window) and the warnings raised so far (input warnings only; fit
    warnings come with ``build``)."""

    as_of: str
    frequency: str
    lower: float
    upper: float
    basis: str
    horizons: int
    policy_horizon: int
    current_models: tuple[str, ...]
    left_out_models: tuple[str, ...]
    n_errors: tuple[int, ...]  # per horizon; 0 where a given error distribution serves it
    inputs: tuple[InputSummary, ...]
    warnings: tuple[str, ...]


def warn_later_outcomes(act: Actuals, cfg: Config) -> None:
    """Warn when the actuals hold outcomes the round could not know (periods >= as_of).

    The forecast made at origin o uses data up to o - 1 (DEVELOPERS.md, no look-ahead), so
    the outcome for as_of and later ones are ignored everywhere: past rounds are not scored
    on them, the error distributions and weights do not use them, and a calendar year does
    not count them as observed.
    """
    later = act.period[act.period >= cfg.brief.as_of]
    if later.size == 0:
        return
    f = cfg.brief.frequency
    span = periods.label(int(later.min()), f)
    if later.size > 1:
        span += f" to {periods.label(int(later.max()), f)}"
    warnings.warn(
        f"The actuals hold {later.size} outcome(s) for {span}, not before the current round "
        f"({periods.label(cfg.brief.as_of, f)}); the round uses outcomes up to "
        f"{periods.label(cfg.brief.as_of - 1, f)} only, so these are ignored in this brief "
        "(not scored, not counted as observed).",
        LaterOutcomeWarning,
        stacklevel=3,
    )


@dataclass(frozen=True)
class ModelStatus:
    """A model of the forecasts file: its history and whether it is in the current round."""

    model: str
    first_origin: str
    last_origin: str
    in_current_round: bool


GAPS_NAMED = 12  # missing periods named one by one in the warning; more are counted


def _spans(missing: np.ndarray, frequency: Frequency) -> list[str]:
    """Sorted period ordinals as labels, consecutive runs as "first to last"."""
    breaks = np.flatnonzero(np.diff(missing) > 1) + 1
    return [
        periods.label(int(run[0]), frequency)
        + (f" to {periods.label(int(run[-1]), frequency)}" if run.size > 1 else "")
        for run in np.split(missing, breaks)
    ]


def warn_gaps(act: Actuals, cfg: Config) -> None:
    """Warn when the outcomes known in the round skip periods between their first and last.

    A missing outcome is not an error (a series may have a hole), but it silently removes
    every forecast of that period from the scores, weights and error distributions, and the
    no-change benchmark of the next round; the warning names the periods.
    """
    known = act.period[act.period < cfg.brief.as_of]
    if known.size < 2:
        return
    span = np.arange(int(known.min()), int(known.max()) + 1)
    missing = np.setdiff1d(span, known)
    if missing.size == 0:
        return
    f = cfg.brief.frequency
    named = _spans(missing[:GAPS_NAMED], f)
    more = missing.size - min(missing.size, GAPS_NAMED)
    unit = "month" if f == "monthly" else "quarter"
    warnings.warn(
        f"The actuals ({act.file.name}) have no outcome for {', '.join(named)}"
        + (f" and {more} more {unit}s" if more else "")
        + f": {missing.size} {unit}{'s' if missing.size > 1 else ''} missing between "
        f"{periods.label(int(known.min()), f)} and {periods.label(int(known.max()), f)}. "
        f"Forecasts of {'that period' if missing.size == 1 else 'those periods'} are not "
        "scored (nor used for the weights and error distributions); add the rows if the "
        "outcomes exist.",
        OutcomeGapWarning,
        stacklevel=3,
    )


def model_status(fc: Forecasts, cfg: Config) -> tuple[ModelStatus, ...]:
    """Each model's first and last origin up to as_of, and whether it is in this round."""
    rows = []
    for i, name in enumerate(fc.models):
        origins = fc.origin[(fc.model == i) & (fc.origin <= cfg.brief.as_of)]
        if origins.size == 0:
            continue
        rows.append(
            ModelStatus(
                model=name,
                first_origin=periods.label(int(origins.min()), cfg.brief.frequency),
                last_origin=periods.label(int(origins.max()), cfg.brief.frequency),
                in_current_round=bool(np.any(origins == cfg.brief.as_of)),
            )
        )
    return tuple(rows)


def warn_left_out(status: tuple[ModelStatus, ...]) -> None:
    """Warn about each model with no forecast in the current round."""
    for row in status:
        if not row.in_current_round:
            warnings.warn(
                f"Model '{row.model}' has no forecast in the current round (last origin "
                f"{row.last_origin}); it is reported in the track record and left out of the "
                "combination.",
                ModelLeftOutWarning,
                stacklevel=3,
            )


def combination_method(cfg: Config, fc: Forecasts) -> combination_module.CombinationMethod:
    """The combination method to use: ``given`` for one model, else the configured one.

    Raises
    ------
    InputError
        ``given`` is configured but the forecasts file holds several models.
    """
    if len(fc.models) == 1:
        return "given"
    if cfg.combination.method == "given":
        raise InputError(
            f"'given' expects a forecasts file with one (already combined) model; "
            f"{fc.file.name} has {len(fc.models)}: {', '.join(fc.models)}",
            file=cfg.path,
            column="[combination] method",
        )
    return cfg.combination.method


def require_current(cfg: Config, point: np.ndarray, act: Actuals | None = None) -> None:
    """Refuse a round where no model forecasts some reported horizon, saying what horizon h
    means (h = period - origin; h = 0 is the nowcast of the round's own period) and how to
    fix the file or the config.

    Parameters
    ----------
    cfg, point
        The round's config and its combined forecast per reported horizon (NaN: none).
    act
        The outcomes, if read: one for ``as_of`` itself means the forecasts were most
        likely dated by their last observation, and the message says how to re-date them.
    """
    if np.all(np.isfinite(point)):
        return
    h = int(np.flatnonzero(~np.isfinite(point))[0])
    f = cfg.brief.frequency
    as_of, period = periods.label(cfg.brief.as_of, f), periods.label(cfg.brief.as_of + h, f)
    message = (
        f"no model has a current-round forecast for horizon {h} (origin {as_of}, period {period}); "
    )
    if h == 0:
        known = periods.label(cfg.brief.as_of - 1, f)
        message += (
            f"h = period - origin, and h = 0 is the nowcast of the round's own period "
            f"{as_of}, made with outcomes up to {known}: a forecast 'k steps after the last "
            f"observation {known}' has origin {as_of} and h = k - 1. Expected a row with "
            f"origin = period = {as_of} from at least one model (if none of them nowcasts, "
            "add a nowcast as a model of its own, see docs/quickstart.md)"
        )
        if act is not None and np.any(act.period == cfg.brief.as_of):
            message += (
                f" (the actuals already hold {as_of}: if that is the last observation your "
                f"forecasts start from, date them from the period after it and set as_of to "
                f"{periods.label(cfg.brief.as_of + 1, f)})"
            )
    else:
        message += (
            f"the brief reports horizons 0 to {cfg.brief.horizons} ([brief] horizons): "
            f"expected a row with origin {as_of} and period {period}, or set "
            f"[brief] horizons = {h - 1} (every horizon before it is forecast)"
        )
    raise InputError(message, file=cfg.inputs.forecasts, column="period")


def _require_track_record(cfg: Config, counts: list[int], given: ErrorQuantiles | None) -> None:
    # The same rule, and message, as uncertainty.build applies before it fits.
    given_h = given.by_horizon if given is not None else {}
    for h, n in enumerate(counts):
        if n < 2 and h not in given_h:
            raise InputError(
                f"horizon {h} has no track record: {n} past forecast(s) of that "
                f"horizon with a known outcome by {periods.label(cfg.brief.as_of, cfg.brief.frequency)}, "
                "and no error_quantiles fallback; expected at least 2",
                file=cfg.inputs.forecasts,
                column="origin",
            )


def _require_covered(cfg: Config) -> None:
    # The first check of judgement.apply; whether a skew fits the spread needs the fitted
    # distribution, so only `build` can tell.
    first, last = cfg.brief.as_of, cfg.brief.as_of + cfg.brief.horizons
    entries: list[Judgement] = [*cfg.judgements, *(j for _, j in cfg.scenarios)]
    for entry in entries:
        if entry.end < first or entry.start > last:
            raise InputError(
                f"covers no reported period (the brief reports "
                f"{periods.label(first, cfg.brief.frequency)} to "
                f"{periods.label(last, cfg.brief.frequency)})",
                file=str(cfg.path),
                column=f"[{entry.label}] from",
            )


def screen(cfg: Config) -> Screening:
    """Validate a round's config and inputs without fitting anything.

    Raises
    ------
    InputError
        On any bad input or configuration that can be seen before fitting.
    """
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", RiskReportWarning)
        fc = read_forecasts(
            cfg.inputs.forecasts, cfg.brief.frequency, cfg.brief.as_of, cfg.inputs.max_abs_value
        )
        act = read_actuals(cfg.inputs.actuals, cfg.brief.frequency, cfg.inputs.max_abs_value)
        given = (
            read_error_quantiles(cfg.inputs.error_quantiles, cfg.inputs.max_abs_value)
            if cfg.inputs.error_quantiles
            else None
        )
        warn_later_outcomes(act, cfg)
        warn_gaps(act, cfg)
        panel = panel_module.build(fc, act, as_of=cfg.brief.as_of, max_h=cfg.brief.horizons)
        status = model_status(fc, cfg)
        warn_left_out(status)
        method = combination_method(cfg, fc)
        combo = combination_module.combine(
            method, panel, window=cfg.combination.window, shrinkage=cfg.combination.shrinkage
        )
        require_current(cfg, combo.combined[-1, : cfg.brief.horizons + 1], act)
        errors = error_matrix(combo.combined, panel.outcomes)[:, : cfg.brief.horizons + 1]
        counts = [int(n) for n in window_mask(errors, cfg.uncertainty.window).sum(axis=0)]
        _require_track_record(cfg, counts, given)
        _require_covered(cfg)
    given_h = given.by_horizon if given is not None else {}
    files = [
        ("forecasts", cfg.inputs.forecasts, int(fc.value.size)),
        ("actuals", cfg.inputs.actuals, int(act.value.size)),
    ]
    if given is not None and cfg.inputs.error_quantiles is not None:
        rows = sum(len(levels) for levels, _ in given.by_horizon.values())
        files.append(("error_quantiles", cfg.inputs.error_quantiles, rows))
    band = cfg.target.band
    return Screening(
        as_of=periods.label(cfg.brief.as_of, cfg.brief.frequency),
        frequency=cfg.brief.frequency,
        lower=band.lower,
        upper=band.upper,
        basis=cfg.target.basis,
        horizons=cfg.brief.horizons,
        policy_horizon=cfg.brief.policy_horizon,
        current_models=tuple(m.model for m in status if m.in_current_round),
        left_out_models=tuple(m.model for m in status if not m.in_current_round),
        n_errors=tuple(0 if h in given_h else n for h, n in enumerate(counts)),
        inputs=(
            InputSummary("config", cfg.path.name, None),
            *(InputSummary(role, _relative(path, cfg), rows) for role, path, rows in files),
        ),
        warnings=tuple(
            dict.fromkeys(
                str(w.message) for w in caught if issubclass(w.category, RiskReportWarning)
            )
        ),
    )


def _relative(path: Path, cfg: Config) -> str:
    try:
        return path.relative_to(cfg.path.parent).as_posix()
    except ValueError:
        return path.name
