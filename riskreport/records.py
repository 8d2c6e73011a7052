"""The assessment's records built from the pipeline's results: the inputs and software
used, the target, the method, and the rows per horizon, scenario and path.

:mod:`riskreport.pipeline` runs the steps; this module only turns their results into the
frozen dataclasses of :mod:`riskreport.assessment`.
"""

from __future__ import annotations

import dataclasses
import hashlib
import platform
from importlib import metadata
from pathlib import Path

import numpy as np

from riskreport.assessment import (
    CombinationRecord,
    FamilyScore,
    FamilySource,
    HorizonResult,
    InputRecord,
    InterceptRow,
    Observation,
    PastError,
    PathResult,
    PoolRecord,
    PoolWeight,
    Quantiles,
    RowCount,
    ScenarioHorizon,
    ScenarioResult,
    ScheduledBand,
    SelectionRecord,
    SoftwareVersions,
    TargetRecord,
    UncertaintyRecord,
    WeightRow,
)
from riskreport.forecasts import combination as combination_module
from riskreport.laws import distributions, dynamics, probabilities
from riskreport.laws import pool as pool_law
from riskreport.laws.distributions import GIVEN_FAMILY, Distribution
from riskreport.laws.uncertainty import Margins
from riskreport.reading import periods
from riskreport.reading.config import Config
from riskreport.reading.inputs import Actuals, ErrorQuantiles, Forecasts
from riskreport.reading.panel import Panel
from riskreport.replay import adjustments as adjustments_module
from riskreport.replay.pool import PoolWeights
from riskreport.replay.replays import Replays
from riskreport.rounds import change as change_module

HISTORY_YEARS = 6  # years of outcomes shown before the forecast in the outlook chart


def _sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def software() -> SoftwareVersions:
    def version(name: str) -> str:
        try:
            return metadata.version(name)
        except metadata.PackageNotFoundError:
            return "not installed"

    names = [f.name for f in dataclasses.fields(SoftwareVersions) if f.name != "python"]
    return SoftwareVersions(
        python=platform.python_version(), **{name: version(name) for name in names}
    )


def inputs(
    cfg: Config, fc: Forecasts, act: Actuals, given: ErrorQuantiles | None
) -> tuple[InputRecord, ...]:
    def rel(path: Path) -> str:
        try:
            return path.relative_to(cfg.path.parent).as_posix()
        except ValueError:
            return path.name

    f = cfg.brief.frequency
    records = [
        InputRecord("config", rel(cfg.path), _sha256(cfg.path), None, None, None),
        InputRecord(
            "forecasts",
            rel(fc.file),
            _sha256(fc.file),
            int(fc.value.size),
            periods.label(int(fc.origin.min()), f),
            periods.label(int(fc.period.max()), f),
        ),
        InputRecord(
            "actuals",
            rel(act.file),
            _sha256(act.file),
            int(act.value.size),
            periods.label(int(act.period.min()), f),
            periods.label(int(act.period.max()), f),
        ),
    ]
    if given is not None:
        rows = sum(len(levels) for levels, _ in given.by_horizon.values())
        records.append(
            InputRecord("error_quantiles", rel(given.file), _sha256(given.file), rows, None, None)
        )
    return tuple(records)


def horizons(
    cfg: Config,
    margins: Margins,
    dists: list[Distribution],
    ordinals: list[int],
) -> tuple[HorizonResult, ...]:
    rows = []
    for h, (dist, ordinal) in enumerate(zip(dists, ordinals, strict=True)):
        band = cfg.band_for(ordinal)
        probs = probabilities.band_probabilities(dist, band.lower, band.upper)
        family = margins.families[h]
        if family == GIVEN_FAMILY:
            interval = (probs.p_inside, probs.p_inside)
        elif family == pool_law.POOL_FAMILY:
            interval = pool_law.bootstrap_p_inside(
                dist,
                band.lower,
                band.upper,
                h=h,
                mode=margins.mode,
                replicates=cfg.uncertainty.bootstrap_replicates,
                rng=np.random.default_rng([cfg.uncertainty.seed, h]),
            )
        else:
            interval = probabilities.bootstrap_p_inside(
                margins.samples[h],
                dist,
                band.lower,
                band.upper,
                h=h,
                family=family,  # type: ignore[arg-type]
                mode=margins.mode,
                replicates=cfg.uncertainty.bootstrap_replicates,
                rng=np.random.default_rng([cfg.uncertainty.seed, h]),
            )
        quantiles = dist.ppf(np.array(probabilities.QUANTILE_LEVELS))
        rows.append(
            HorizonResult(
                period=periods.label(ordinal, cfg.brief.frequency),
                h=h,
                band=(band.lower, band.upper),
                centre=float(dist.mode),
                point_forecast=float(margins.point[h]),
                p_below=probs.p_below,
                p_inside=probs.p_inside,
                p_above=probs.p_above,
                p_inside_interval=interval,
                quantiles=Quantiles.of(quantiles),
                distribution=family,
                n_errors=None if family == GIVEN_FAMILY else margins.own[h],
                spread=distributions.spread(dist),
                percentiles=tuple(
                    float(v) for v in dist.ppf(np.array(change_module.PERCENTILES) / 100)
                ),
            )
        )
    return tuple(rows)


def scenario(
    cfg: Config, name: str, reasons: tuple[str, ...], dists: list[Distribution], ordinals: list[int]
) -> ScenarioResult:
    rows = []
    for h, (dist, ordinal) in enumerate(zip(dists, ordinals, strict=True)):
        band = cfg.band_for(ordinal)
        p = probabilities.band_probabilities(dist, band.lower, band.upper)
        rows.append(
            ScenarioHorizon(
                period=periods.label(ordinal, cfg.brief.frequency),
                h=h,
                centre=float(dist.mode),
                p_below=p.p_below,
                p_inside=p.p_inside,
                p_above=p.p_above,
            )
        )
    return ScenarioResult(name, tuple(reasons), tuple(rows))


def path(cfg: Config, draws: np.ndarray, ordinals: list[int]) -> tuple[PathResult, ...]:
    bands = [cfg.band_for(o) for o in ordinals]
    throughout, back_by = probabilities.path_probabilities(
        draws, np.array([b.lower for b in bands]), np.array([b.upper for b in bands])
    )
    return tuple(
        PathResult(periods.label(o, cfg.brief.frequency), h, float(t), float(b))
        for h, (o, t, b) in enumerate(zip(ordinals, throughout, back_by, strict=True))
    )


def observations(act: Actuals, cfg: Config) -> tuple[Observation, ...]:
    start = cfg.brief.as_of - HISTORY_YEARS * periods.PERIODS_PER_YEAR[cfg.brief.frequency]
    keep = (act.period >= start) & (act.period < cfg.brief.as_of)
    return tuple(
        Observation(periods.label(int(p), cfg.brief.frequency), float(v))
        for p, v in zip(act.period[keep], act.value[keep], strict=True)
    )


def past_errors(cfg: Config, panel: Panel, errors: np.ndarray) -> tuple[PastError, ...]:
    """The combined forecast's known past misses at the first horizon and the policy
    horizon, by origin (``errors``: origins x horizons, outcome minus forecast)."""
    frequency = cfg.brief.frequency
    return tuple(
        PastError(
            periods.label(int(o), frequency), periods.label(int(o) + h, frequency), h, float(e)
        )
        for h in sorted({0, cfg.brief.policy_horizon})
        for o, e in zip(panel.origins, errors[:, h], strict=True)
        if np.isfinite(e)
    )


def target(cfg: Config) -> TargetRecord:
    band = cfg.target.band
    return TargetRecord(
        lower=band.lower,
        upper=band.upper,
        midpoint=band.midpoint,
        tolerance=band.tolerance,
        basis=cfg.target.basis,
        edges="inclusive",
        schedule=tuple(
            ScheduledBand(
                start=periods.label(c.start, cfg.brief.frequency),
                lower=c.band.lower,
                upper=c.band.upper,
                midpoint=c.band.midpoint,
                tolerance=c.band.tolerance,
            )
            for c in cfg.target.schedule
        ),
    )


def pool_record(weights: PoolWeights | None) -> PoolRecord | None:
    """The pool's weights as the assessment records them (None without a pool)."""
    if weights is None:
        return None
    return PoolRecord(
        tuple(PoolWeight(c, w) for c, w in zip(weights.labels, weights.current, strict=True)),
        tuple(PoolWeight(c, w) for c, w in zip(weights.labels, weights.optimal, strict=True)),
        weights.prior_share,
        weights.effective_outcomes,
        weights.correction_share,
    )


def uncertainty(
    cfg: Config, margins: Margins, weights: PoolWeights | None = None
) -> UncertaintyRecord:
    choice = margins.choice
    return UncertaintyRecord(
        distribution=cfg.uncertainty.distribution,
        families=tuple(
            FamilySource(h, f, s)
            for h, (f, s) in enumerate(zip(margins.families, margins.sources, strict=True))
        ),
        window=cfg.uncertainty.window,
        centre=cfg.uncertainty.centre,
        monotone=cfg.uncertainty.monotone,
        min_errors=cfg.uncertainty.min_errors,
        bootstrap_replicates=cfg.uncertainty.bootstrap_replicates,
        interval_level=0.9,
        simulations=cfg.uncertainty.simulations,
        seed=cfg.uncertainty.seed,
        verbal_scale=cfg.brief.verbal_scale,
        selection=None
        if choice is None
        else SelectionRecord(
            choice.chosen,
            choice.runner_up,
            tuple(FamilyScore(family, total) for family, total in choice.total.items()),
        ),
        pool=pool_record(weights),
    )


def adjustments(
    cfg: Config,
    replayed: Replays,
    errors: np.ndarray,
    margins: Margins,
    recalibrated: tuple[adjustments_module.RecalibrationRow, ...],
    panel: Panel,
    given: ErrorQuantiles | None,
) -> adjustments_module.Adjustments:
    chosen = replayed.selection
    band = cfg.band_for(cfg.brief.as_of + cfg.brief.policy_horizon)
    headline = probabilities.band_probabilities(
        margins.outcome[cfg.brief.policy_horizon], band.lower, band.upper
    ).p_inside
    label = periods.label
    shown = replayed.spread_shown()
    windows = replayed.windows.get(chosen.current.spread)
    window = cfg.uncertainty.window if replayed.window is None else replayed.window
    source, reason = adjustments_module.method_reason(cfg)
    return adjustments_module.Adjustments(
        spread_option=cfg.uncertainty.spread,
        spread=replayed.spread,
        volatility=dynamics.current(errors[:, : cfg.brief.horizons + 1], shown),
        method=replayed.method,
        # A pool has no runner-up and no past choices: its weights are in the pool record.
        runner_up=chosen.runner_up.label if chosen.runner_up and replayed.pool is None else None,
        graded=replayed.graded,
        choices=tuple(
            adjustments_module.MethodSpell(
                label(int(panel.origins[s.first_origin]), cfg.brief.frequency),
                label(int(panel.origins[s.last_origin]), cfg.brief.frequency),
                s.candidate,
            )
            for s in chosen.spells
            if replayed.pool is None
        ),
        recalibrate=cfg.uncertainty.recalibrate,
        recalibration=recalibrated,
        verdict=adjustments_module.verdict(replayed),
        sensitivity=adjustments_module.sensitivity(cfg, replayed, errors, margins.point, headline),
        window_choice=cfg.uncertainty.window_choice,
        window=window,
        window_grid=windows.grid if windows is not None else (),
        window_spells=()
        if windows is None
        else tuple(
            adjustments_module.MethodSpell(
                label(int(panel.origins[s.first_origin]), cfg.brief.frequency),
                label(int(panel.origins[s.last_origin]), cfg.brief.frequency),
                s.candidate,
            )
            for s in windows.spells
        ),
        factors=tuple(
            float(v)
            for v in dynamics.factors(
                errors[:, : cfg.brief.horizons + 1],
                shown,
                window,
                None
                if replayed.forecasts is None
                else replayed.forecasts[:, : cfg.brief.horizons + 1],
            )
        ),
        method_source=source,
        method_reason=reason,
        predictive=cfg.uncertainty.predictive,
    )


def combination(
    cfg: Config, method: str, combo: combination_module.Combination, panel: Panel
) -> CombinationRecord:
    """The weighting method and today's weights, intercepts and row counts per horizon."""
    horizons = range(cfg.brief.horizons + 1)
    return CombinationRecord(
        method=method,
        window=cfg.combination.window,
        shrinkage=cfg.combination.shrinkage,
        weights=tuple(
            WeightRow(h, name, float(combo.current_weights[k, h]))
            for h in horizons
            for k, name in enumerate(panel.models)
            if combo.included[k, h]
        ),
        intercepts=tuple(
            InterceptRow(h, float(combo.intercepts[h])) for h in horizons if method == "ols"
        ),
        rows=tuple(RowCount(h, int(combo.rows[h])) for h in horizons),
    )
