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

from riskreport.errors import (
    InputError,
    LaterOutcomeWarning,
    ModelLeftOutWarning,
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


def require_current(cfg: Config, point: np.ndarray) -> None:
    """Refuse a round where no model forecasts some reported horizon."""
    if not np.all(np.isfinite(point)):
        missing = int(np.flatnonzero(~np.isfinite(point))[0])
        raise InputError(
            f"no model has a current-round forecast for horizon {missing}",
            file=cfg.inputs.forecasts,
            column="period",
        )


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
        panel = panel_module.build(fc, act, as_of=cfg.brief.as_of, max_h=cfg.brief.horizons)
        status = model_status(fc, cfg)
        warn_left_out(status)
        method = combination_method(cfg, fc)
        combo = combination_module.combine(
            method, panel, window=cfg.combination.window, shrinkage=cfg.combination.shrinkage
        )
        require_current(cfg, combo.combined[-1, : cfg.brief.horizons + 1])
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
