"""From a configuration to an :class:`~riskreport.assessment.Assessment` (no files written).

validate -> combine -> errors -> distributions -> judgement overlay -> probabilities
(per horizon, path, calendar year) -> track record -> assessment.
"""

from __future__ import annotations

import dataclasses
import hashlib
import platform
import warnings
from importlib import metadata
from pathlib import Path

import numpy as np

from riskreport import adjustments as adjustments_module
from riskreport import annual as annual_module
from riskreport import (
    calibration,
    dynamics,
    overlay,
    periods,
    probabilities,
    screening,
    selection,
    uncertainty,
)
from riskreport import change as change_module
from riskreport import combination as combination_module
from riskreport import config as config_module
from riskreport import density as density_module
from riskreport import history as history_module
from riskreport import panel as panel_module
from riskreport import thresholds as thresholds_module
from riskreport.assessment import (
    Assessment,
    BasisResult,
    CombinationRecord,
    FamilySource,
    HorizonResult,
    InputRecord,
    InterceptRow,
    Observation,
    PathResult,
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
from riskreport.config import Config
from riskreport.distributions import GIVEN_FAMILY, Distribution
from riskreport.errors import (
    CombinationFallbackWarning,
    CombinationRangeWarning,
    HeadlineBasisWarning,
    InputError,
    RiskReportWarning,
)
from riskreport.inputs import (
    Actuals,
    ErrorQuantiles,
    Forecasts,
    read_actuals,
    read_error_quantiles,
    read_forecasts,
)
from riskreport.panel import window_mask
from riskreport.replay_cache import ReplayCache
from riskreport.track_record import error_matrix, evaluate

HISTORY_YEARS = 6  # years of outcomes shown before the forecast in the outlook chart


def _sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _software() -> SoftwareVersions:
    def version(name: str) -> str:
        try:
            return metadata.version(name)
        except metadata.PackageNotFoundError:
            return "not installed"

    names = [f.name for f in dataclasses.fields(SoftwareVersions) if f.name != "python"]
    return SoftwareVersions(
        python=platform.python_version(), **{name: version(name) for name in names}
    )


def _input_records(
    cfg: Config, fc: Forecasts, act: Actuals, given: ErrorQuantiles | None
) -> tuple[InputRecord, ...]:
    def rel(path: Path) -> str:
        try:
            return path.relative_to(cfg.path.parent).as_posix()
        except ValueError:
            return path.name

    f = cfg.frequency
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


def _horizon_results(
    cfg: Config,
    margins: uncertainty.Margins,
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
        else:
            interval = probabilities.bootstrap_p_inside(
                margins.samples[h],
                dist,
                band.lower,
                band.upper,
                h=h,
                family=family,  # type: ignore[arg-type]
                mode=margins.mode,
                replicates=cfg.bootstrap_replicates,
                rng=np.random.default_rng([cfg.seed, h]),
            )
        quantiles = dist.ppf(np.array(probabilities.QUANTILE_LEVELS))
        rows.append(
            HorizonResult(
                period=periods.label(ordinal, cfg.frequency),
                h=h,
                band=(band.lower, band.upper),
                centre=float(dist.mode),
                point_forecast=float(margins.point[h]),
                p_below=probs.p_below,
                p_inside=probs.p_inside,
                p_above=probs.p_above,
                p_inside_interval=interval,
                quantiles={
                    f"{q:g}": float(v)
                    for q, v in zip(probabilities.QUANTILE_LEVELS, quantiles, strict=True)
                },
                distribution=family,
                n_errors=None if family == GIVEN_FAMILY else margins.own[h],
                spread=float(np.std(dist.ppf(probabilities.SPREAD_GRID))),
                percentiles=tuple(
                    float(v) for v in dist.ppf(np.array(change_module.PERCENTILES) / 100)
                ),
            )
        )
    return tuple(rows)


def _scenario_record(
    cfg: Config, name: str, reasons: tuple[str, ...], dists: list[Distribution], ordinals: list[int]
) -> ScenarioResult:
    rows = []
    for h, (dist, ordinal) in enumerate(zip(dists, ordinals, strict=True)):
        band = cfg.band_for(ordinal)
        p = probabilities.band_probabilities(dist, band.lower, band.upper)
        rows.append(
            ScenarioHorizon(
                period=periods.label(ordinal, cfg.frequency),
                h=h,
                centre=float(dist.mode),
                p_below=p.p_below,
                p_inside=p.p_inside,
                p_above=p.p_above,
            )
        )
    return ScenarioResult(name, tuple(reasons), tuple(rows))


def _simulate(cfg: Config, errors: np.ndarray, dists: list[Distribution]) -> np.ndarray:
    errors = errors[:, : cfg.horizons + 1]
    errors = np.where(window_mask(errors, cfg.window), errors, np.nan)
    corr = probabilities.normal_scores_correlation(errors)
    return probabilities.simulate_joint(
        dists, corr, cfg.simulations, np.random.default_rng([cfg.seed, 7])
    )


def _path(cfg: Config, draws: np.ndarray, ordinals: list[int]) -> tuple[PathResult, ...]:
    bands = [cfg.band_for(o) for o in ordinals]
    throughout, back_by = probabilities.path_probabilities(
        draws, np.array([b.lower for b in bands]), np.array([b.upper for b in bands])
    )
    return tuple(
        PathResult(periods.label(o, cfg.frequency), h, float(t), float(b))
        for h, (o, t, b) in enumerate(zip(ordinals, throughout, back_by, strict=True))
    )


BASIS_WORDS = {"calendar-year-average": "average", "year-end": "year end"}


def _basis_results(
    cfg: Config, yearly: tuple[annual_module.AnnualResult, ...]
) -> tuple[BasisResult, ...]:
    """The calendar years in view on the configured basis (empty on the ``period`` basis)."""
    if cfg.basis == "period":
        return ()
    per_year = periods.PERIODS_PER_YEAR[cfg.frequency]
    rows = []
    for r in yearly:
        if r.basis != cfg.basis:
            continue
        last = _year_start(r.year, cfg) + per_year - 1
        rows.append(
            BasisResult(
                basis=r.basis,
                label=f"{r.year} {BASIS_WORDS[r.basis]}",
                period=periods.label(last, cfg.frequency),
                year=r.year,
                band=r.band,
                p_below=r.p_below,
                p_inside=r.p_inside,
                p_above=r.p_above,
                p_inside_interval=None,
                observed_periods=r.observed_periods,
                simulated_periods=r.simulated_periods,
            )
        )
    return tuple(rows)


def _year_start(year: int, cfg: Config) -> int:
    start = periods.parse(f"{year}-01" if cfg.frequency == "monthly" else f"{year}-Q1")
    assert start is not None
    return start.ordinal


def _period_headline(row: HorizonResult) -> BasisResult:
    return BasisResult(
        basis="period",
        label=row.period,
        period=row.period,
        year=None,
        band=row.band,
        p_below=row.p_below,
        p_inside=row.p_inside,
        p_above=row.p_above,
        p_inside_interval=row.p_inside_interval,
        observed_periods=0,
        simulated_periods=1,
    )


def _headline(cfg: Config, policy: HorizonResult, years: tuple[BasisResult, ...]) -> BasisResult:
    """The measure the headline speaks of: the policy-horizon period on the ``period`` basis,
    else the calendar year of the policy horizon on the configured basis.

    When that year is not wholly observed or reported, the latest earlier year that is
    stands in, with a warning; with no such year, the policy-horizon period does.
    """
    if cfg.basis == "period":
        return _period_headline(policy)
    year = periods.year_of(cfg.as_of + cfg.policy_horizon, cfg.frequency)
    for row in years:
        if row.year == year:
            return row
    earlier = [row for row in years if row.year is not None and row.year < year]
    word = BASIS_WORDS[cfg.basis]
    if earlier:
        chosen = earlier[-1]
        warnings.warn(
            f"The target is on a calendar-year basis ({cfg.basis}), but the reported horizons "
            f"do not reach the end of {year}, the year of the policy horizon; the headline "
            f"speaks of the {chosen.year} {word} instead.",
            HeadlineBasisWarning,
            stacklevel=3,
        )
        return chosen
    warnings.warn(
        f"The target is on a calendar-year basis ({cfg.basis}), but no calendar year is wholly "
        "observed or reported; the headline speaks of the policy-horizon period instead.",
        HeadlineBasisWarning,
        stacklevel=3,
    )
    return _period_headline(policy)


def _history(act: Actuals, cfg: Config) -> tuple[Observation, ...]:
    start = cfg.as_of - HISTORY_YEARS * periods.PERIODS_PER_YEAR[cfg.frequency]
    keep = (act.period >= start) & (act.period < cfg.as_of)
    return tuple(
        Observation(periods.label(int(p), cfg.frequency), float(v))
        for p, v in zip(act.period[keep], act.value[keep], strict=True)
    )


def _target(cfg: Config) -> TargetRecord:
    band = cfg.band
    return TargetRecord(
        lower=band.lower,
        upper=band.upper,
        midpoint=band.midpoint,
        tolerance=band.tolerance,
        basis=cfg.basis,
        edges="inclusive",
        schedule=tuple(
            ScheduledBand(
                start=periods.label(c.start, cfg.frequency),
                lower=c.band.lower,
                upper=c.band.upper,
                midpoint=c.band.midpoint,
                tolerance=c.band.tolerance,
            )
            for c in cfg.schedule
        ),
    )


def _uncertainty_record(cfg: Config, margins: uncertainty.Margins) -> UncertaintyRecord:
    choice = margins.choice
    return UncertaintyRecord(
        distribution=cfg.distribution,
        families=tuple(
            FamilySource(h, f, s)
            for h, (f, s) in enumerate(zip(margins.families, margins.sources, strict=True))
        ),
        window=cfg.window,
        centre=cfg.centre,
        monotone=cfg.monotone,
        min_errors=cfg.min_errors,
        bootstrap_replicates=cfg.bootstrap_replicates,
        interval_level=0.9,
        simulations=cfg.simulations,
        seed=cfg.seed,
        verbal_scale=cfg.verbal_scale,
        selection=None
        if choice is None
        else SelectionRecord(choice.chosen, choice.runner_up, choice.total),
    )


def _adjustments(
    cfg: Config,
    replayed: adjustments_module.Replays,
    errors: np.ndarray,
    margins: uncertainty.Margins,
    recalibrated: tuple[adjustments_module.RecalibrationRow, ...],
    panel: panel_module.Panel,
    given: ErrorQuantiles | None,
) -> adjustments_module.Adjustments:
    chosen = replayed.selection
    band = cfg.band_for(cfg.as_of + cfg.policy_horizon)
    headline = probabilities.band_probabilities(
        margins.outcome[cfg.policy_horizon], band.lower, band.upper
    ).p_inside
    label = periods.label
    windows = replayed.windows.get(chosen.current.spread)
    return adjustments_module.Adjustments(
        spread_option=cfg.spread,
        spread=chosen.current.spread.label,
        volatility=dynamics.current(errors[:, : cfg.horizons + 1], chosen.current.spread),
        method=chosen.current.label,
        runner_up=chosen.runner_up.label if chosen.runner_up else None,
        graded=replayed.graded,
        choices=tuple(
            adjustments_module.MethodSpell(
                label(int(panel.origins[s.first_origin]), cfg.frequency),
                label(int(panel.origins[s.last_origin]), cfg.frequency),
                s.candidate,
            )
            for s in chosen.spells
        ),
        recalibrate=cfg.recalibrate,
        recalibration=recalibrated,
        verdict=adjustments_module.verdict(replayed),
        sensitivity=adjustments_module.sensitivity(cfg, replayed, errors, margins.point, headline),
        window_choice=cfg.window_choice,
        window=cfg.window if replayed.window is None else replayed.window,
        window_grid=windows.grid if windows is not None else (),
        window_spells=()
        if windows is None
        else tuple(
            adjustments_module.MethodSpell(
                label(int(panel.origins[s.first_origin]), cfg.frequency),
                label(int(panel.origins[s.last_origin]), cfg.frequency),
                s.candidate,
            )
            for s in windows.spells
        ),
        factors=tuple(
            float(v)
            for v in dynamics.factors(
                errors[:, : cfg.horizons + 1],
                chosen.current.spread,
                cfg.window if replayed.window is None else replayed.window,
            )
        ),
    )


def assess_config(
    cfg: Config,
    *,
    previous: Path | None = None,
    search: Path | None = None,
    cache: ReplayCache | None = None,
) -> Assessment:
    """Run the whole method on a validated configuration (see :func:`assess`).

    The change since the previous brief compares with ``previous`` (an assessment JSON) or
    else with the latest earlier ``assessment-*.json`` in ``search`` (default: the config's
    output directory). ``cache`` reuses past origins of the replay computed before.
    """
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", RiskReportWarning)
        assessment = _assess(cfg, cache)
    notes = [str(w.message) for w in caught if issubclass(w.category, RiskReportWarning)]
    source = previous or change_module.find_previous(
        search or cfg.output_directory, assessment.as_of
    )
    change = None
    if source is not None:
        earlier = change_module.load(source)
        if previous is not None:
            _check_earlier(source, earlier["as_of"], cfg)
        change = change_module.compare(
            earlier, [dataclasses.asdict(r) for r in assessment.horizons]
        )
    policy = assessment.policy
    rounds = history_module.points(
        previous.parent if previous is not None else search or cfg.output_directory,
        assessment.as_of,
        policy.period,
        policy.h,
        policy.p_inside,
    )
    return dataclasses.replace(
        assessment,
        warnings=tuple(dict.fromkeys(notes)),
        change=change,
        round_history=rounds,
        year_history=_year_history(
            cfg, assessment, previous.parent if previous is not None else search
        ),
    )


def _year_history(
    cfg: Config, assessment: Assessment, directory: Path | None
) -> tuple[history_module.YearPoint, ...]:
    """P(inside) for the current calendar year (on the target's annual measure; the average
    when the target is per period) across the rounds in the output folder."""
    year = periods.year_of(cfg.as_of, cfg.frequency)
    basis = "year-end" if cfg.basis == "year-end" else "calendar-year-average"
    now = next((r for r in assessment.annual if r.year == year and r.basis == basis), None)
    if now is None:
        return ()
    return history_module.year_points(
        directory or cfg.output_directory, assessment.as_of, year, basis, now.p_inside
    )


def _check_earlier(path: Path, text: str, cfg: Config) -> None:
    """The brief compared with must be an earlier (or the same, e.g. a draft) round at the
    same frequency: a later or other-frequency file would print a "change since" that is
    no such thing."""
    parsed = periods.parse(text)
    if parsed is None or parsed.frequency != cfg.frequency or parsed.ordinal > cfg.as_of:
        raise InputError(
            f"the previous brief is for {text!r}; expected a {cfg.frequency} round not "
            f"later than {periods.label(cfg.as_of, cfg.frequency)}",
            file=path,
            column="as_of",
        )


def _horizon_list(horizons: list[int]) -> str:
    """``[0, 1, 2, 5]`` as ``"0-2, 5"``."""
    spans: list[list[int]] = []
    for h in horizons:
        if spans and h == spans[-1][1] + 1:
            spans[-1][1] = h
        else:
            spans.append([h, h])
    return ", ".join(f"{a}" if a == b else f"{a}-{b}" for a, b in spans)


def _warn_range(method: str, combo: combination_module.Combination) -> None:
    """Say where estimated weights are negative or the combination leaves the models' range."""
    negative = np.flatnonzero(combo.negative).tolist()
    outside = np.flatnonzero(combo.outside).tolist()
    if negative:
        warnings.warn(
            f"The '{method}' weights are negative at horizon(s) {_horizon_list(negative)}: "
            "the combination bets against some models. Estimated weights like these often "
            "forecast worse than equal weights out of sample; compare the track record.",
            CombinationRangeWarning,
            stacklevel=3,
        )
    if outside:
        warnings.warn(
            f"The '{method}' combined forecast lies outside the range of the models' current "
            f"forecasts at horizon(s) {_horizon_list(outside)}; no model forecasts that value.",
            CombinationRangeWarning,
            stacklevel=3,
        )


def _assess(cfg: Config, cache: ReplayCache | None = None) -> Assessment:
    fc = read_forecasts(cfg.forecasts, cfg.frequency, cfg.as_of, cfg.max_abs_value)
    act = read_actuals(
        cfg.actuals,
        cfg.frequency,
        cfg.max_abs_value,
        as_of=cfg.as_of,
        score_against=cfg.score_against,
    )
    given = (
        read_error_quantiles(cfg.error_quantiles, cfg.max_abs_value)
        if cfg.error_quantiles
        else None
    )
    screening.warn_later_outcomes(act, cfg)
    panel = panel_module.build(fc, act, as_of=cfg.as_of, max_h=cfg.horizons)
    status = screening.model_status(fc, cfg)
    screening.warn_left_out(status)
    method = screening.combination_method(cfg, fc)
    combo = combination_module.combine(
        method, panel, window=cfg.combination_window, shrinkage=cfg.combination_shrinkage
    )
    for h in np.flatnonzero(combo.fallback).tolist():
        warnings.warn(
            f"Too short a history for '{method}' weights at horizon {h} "
            f"({combo.rows[h]} past rows); equal weights are used there.",
            CombinationFallbackWarning,
            stacklevel=2,
        )
    _warn_range(method, combo)
    point = combo.combined[-1, : cfg.horizons + 1]
    screening.require_current(cfg, point)
    errors = error_matrix(combo.combined, panel.outcomes)
    replayed = adjustments_module.replays(cfg, panel, combo.combined, errors, cache=cache)
    runs = replayed.runs
    today = replayed.selection.current
    choice = (
        selection.Selection(
            today.family,
            replayed.selection.runner_up.family if replayed.selection.runner_up else None,
            adjustments_module.family_totals(replayed),
        )
        if cfg.distribution == "auto"
        else None
    )
    family = today.family
    window = replayed.window
    margins = uncertainty.build(
        cfg if window is None else dataclasses.replace(cfg, window=window),
        errors,
        point,
        given,
        family=family,
        choice=choice,
        spread=today.spread,
    )
    recalibrated: tuple[adjustments_module.RecalibrationRow, ...] = ()
    if cfg.recalibrate:
        outcome, recalibrated = adjustments_module.recalibrate(
            cfg,
            replayed,
            margins.outcome,
            given=frozenset(
                h for h, family in enumerate(margins.families) if family == GIVEN_FAMILY
            ),
        )
        margins = dataclasses.replace(margins, outcome=outcome)
    ordinals = [cfg.as_of + h for h in range(cfg.horizons + 1)]
    final, applied = overlay.apply(
        list(margins.outcome),
        ordinals,
        cfg.judgements,
        frequency=cfg.frequency,
        config_file=str(cfg.path),
    )
    scenario_dists = overlay.scenarios(
        final, ordinals, cfg.scenarios, frequency=cfg.frequency, config_file=str(cfg.path)
    )
    model_based = _horizon_results(cfg, margins, list(margins.outcome), ordinals)
    adjusted = _horizon_results(cfg, margins, final, ordinals) if cfg.judgements else model_based
    draws = _simulate(cfg, errors, final)
    known = {int(p): float(v) for p, v in zip(act.period, act.value, strict=True) if p < cfg.as_of}
    yearly = annual_module.annual(draws, ordinals, known, cfg.frequency, cfg.band_for)
    basis_rows = _basis_results(cfg, yearly)
    headline = _headline(cfg, adjusted[cfg.policy_horizon], basis_rows)
    record = evaluate(panel, combo, cfg.window, cfg.horizons)
    weights = [
        WeightRow(h, name, float(combo.current_weights[k, h]))
        for h in range(cfg.horizons + 1)
        for k, name in enumerate(panel.models)
        if combo.included[k, h]
    ]
    return Assessment(
        as_of=periods.label(cfg.as_of, cfg.frequency),
        frequency=cfg.frequency,
        title=cfg.title,
        institution=cfg.institution,
        target=_target(cfg),
        policy_horizon=cfg.policy_horizon,
        headline=headline,
        basis_results=basis_rows,
        horizons=adjusted,
        model_based_horizons=model_based,
        judgement=tuple(applied),
        scenarios=tuple(
            _scenario_record(cfg, name, reasons, dists, ordinals)
            for name, reasons, dists in scenario_dists
        ),
        path=_path(cfg, draws, ordinals),
        annual=tuple(yearly),
        combination=CombinationRecord(
            method=method,
            window=cfg.combination_window,
            shrinkage=cfg.combination_shrinkage,
            weights=tuple(weights),
            intercepts=tuple(
                InterceptRow(h, float(combo.intercepts[h]))
                for h in range(cfg.horizons + 1)
                if method == "ols"
            ),
            rows=tuple(RowCount(h, int(combo.rows[h])) for h in range(cfg.horizons + 1)),
        ),
        models=status,
        accuracy=record.accuracy,
        tests=record.tests,
        calibration=calibration.summarise(runs, replayed.graded, cfg.frequency),
        uncertainty=_uncertainty_record(cfg, margins),
        history=_history(act, cfg),
        change=None,
        inputs=_input_records(cfg, fc, act, given),
        software=_software(),
        warnings=(),
        adjustments=_adjustments(cfg, replayed, errors, margins, recalibrated, panel, given),
        thresholds=thresholds_module.evaluate(
            cfg.thresholds, final, draws, [r.period for r in adjusted]
        ),
        density=tuple(
            density_module.curve(final[h], margins.outcome[h], adjusted[h].period, h)
            for h in (cfg.density_horizons or (cfg.policy_horizon,))
        ),
        score_against=cfg.score_against if act.vintages else None,
    )


def assess(
    config_path: str | Path,
    *,
    as_of: str | None = None,
    previous: str | Path | None = None,
    cache: ReplayCache | None = None,
) -> Assessment:
    """Compute every number of a brief; no files are written.

    Parameters
    ----------
    config_path
        The TOML configuration.
    as_of
        Overrides ``[brief] as_of`` (a period such as ``"2026-11"``).
    previous
        An earlier assessment JSON to compare with; by default the latest earlier one in
        the config's output directory, if any.
    cache
        A :class:`~riskreport.replay_cache.ReplayCache` (e.g. ``ReplayCache.load(folder)``)
        whose replayed past origins are reused and which collects the new ones; nothing is
        written unless its ``save()`` is called. Results are the same with or without it.

    Returns
    -------
    Assessment
        All numbers of the brief.

    Raises
    ------
    InputError
        On any bad input or configuration.
    """
    cfg = config_module.load_config(config_path, as_of)
    return assess_config(
        cfg, previous=Path(previous) if previous is not None else None, cache=cache
    )
