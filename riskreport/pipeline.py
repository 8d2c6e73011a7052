"""From a configuration to an :class:`~riskreport.assessment.Assessment` (no files written).

validate -> combine -> errors -> distributions -> staff judgement -> probabilities
(per horizon, path, calendar year) -> track record -> assessment.
"""

from __future__ import annotations

import dataclasses
import logging
import threading
import warnings
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from riskreport import headline as headline_module
from riskreport import records
from riskreport.assessment import Assessment, plain
from riskreport.errors import (
    CombinationFallbackWarning,
    CombinationRangeWarning,
    InputError,
    RiskReportWarning,
)
from riskreport.forecasts import combination as combination_module
from riskreport.forecasts.track_record import error_matrix, evaluate
from riskreport.laws import annual as annual_module
from riskreport.laws import density as density_module
from riskreport.laws import judgement, probabilities, sensitivity, uncertainty
from riskreport.laws import pool as pool_law
from riskreport.laws import thresholds as thresholds_module
from riskreport.laws.distributions import FAMILIES, GIVEN_FAMILY, Distribution
from riskreport.reading import config_reader, periods, screening
from riskreport.reading import panel as panel_module
from riskreport.reading.config import Config
from riskreport.reading.inputs import read_actuals, read_error_quantiles, read_forecasts
from riskreport.reading.panel import window_mask
from riskreport.replay import adjustments as adjustments_module
from riskreport.replay import calibration, replays, selection, situations
from riskreport.replay.cache import ReplayCache
from riskreport.rounds import attribution as attribution_module
from riskreport.rounds import change as change_module
from riskreport.rounds import history as history_module

log = logging.getLogger("riskreport")


def _simulate(cfg: Config, errors: np.ndarray, dists: list[Distribution]) -> np.ndarray:
    errors = errors[:, : cfg.brief.horizons + 1]
    errors = np.where(window_mask(errors, cfg.uncertainty.window), errors, np.nan)
    corr = probabilities.normal_scores_correlation(errors)
    return probabilities.simulate_joint(
        dists, corr, cfg.uncertainty.simulations, np.random.default_rng([cfg.uncertainty.seed, 7])
    )


_ONE_AT_A_TIME = threading.Lock()


def assess_config(
    cfg: Config,
    *,
    previous: Path | None = None,
    search: Path | None = None,
    cache: ReplayCache | None = None,
    earlier: Sequence[history_module.Earlier] | None = None,
) -> Assessment:
    """Run the whole method on a validated configuration (see :func:`assess`).

    The change since the previous brief compares with ``previous`` (an assessment JSON) or
    else with the latest earlier round: ``earlier`` (the earlier rounds, latest first, as
    ``batch`` hands them over in memory) or else the complete rounds in ``search`` (default:
    the config's output directory). ``cache`` reuses past origins of the replay computed
    before.
    """
    # warnings.catch_warnings swaps process-wide state: two assessments in two threads at
    # once would take each other's warnings, so one assessment runs at a time.
    with _ONE_AT_A_TIME, warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", RiskReportWarning)
        assessment = _assess(cfg, cache)
    notes = [str(w.message) for w in caught if issubclass(w.category, RiskReportWarning)]
    last: dict[str, Any] | None
    if previous is not None:
        last = change_module.load(previous)  # named on the command line: bad input raises
        _check_earlier(previous, last["as_of"], cfg)
        before = history_module.read_earlier(previous.parent, assessment.as_of)
    else:
        if earlier is None:
            earlier = history_module.read_earlier(search or cfg.output.directory, assessment.as_of)
        before = tuple(earlier)
        last = before[0].data if before else None
        if before and last is None:
            # Found in the folder (e.g. beyond the JSON reader's limits, its manifest
            # fixed): skipped, as an incomplete round is.
            log.warning(
                "the round %s cannot be read; not compared: %s", before[0].as_of, before[0].problem
            )
    change = None
    moved: tuple[attribution_module.AttributionRow, ...] = ()
    if last is not None:
        change = change_module.compare(
            last, [(r.period, change_module.side_of(r)) for r in assessment.horizons]
        )
        moved, note = _attribution(cfg, assessment, last)
        notes.extend([note] if note else [])
    policy = assessment.policy
    rounds = history_module.points_in(
        before, assessment.as_of, policy.period, policy.h, policy.p_inside
    )
    return dataclasses.replace(
        assessment,
        warnings=tuple(dict.fromkeys(notes)),
        change=change,
        attribution=moved,
        round_history=rounds,
        year_history=_year_history(cfg, assessment, before),
    )


def _attribution(
    cfg: Config, assessment: Assessment, earlier: dict[str, Any]
) -> tuple[tuple[attribution_module.AttributionRow, ...], str | None]:
    """Who moved the centre since the previous brief (and a warning when it cannot be
    said); a brief written before model forecasts were stored has its round recomputed
    from the forecasts file."""
    now = attribution_module.round_inputs(
        {
            key: plain(getattr(assessment, key))
            for key in ("horizons", "model_based_horizons", "combination", "model_forecasts")
        }
    )
    if earlier.get("model_forecasts"):
        try:
            before: dict[str, attribution_module.RoundInputs] | None = (
                attribution_module.round_inputs(earlier)
            )
        except (KeyError, TypeError, ValueError):
            before = None
    else:
        before = attribution_module.recomputed_inputs(cfg, earlier)
    if before is None:
        return (), (
            f"The centre's change since {earlier['as_of']} is not split by model: that "
            "round's model forecasts are neither stored nor recomputable from the inputs."
        )
    rows = attribution_module.attribute(
        assessment.combination.method, before, now, {r.period: r.h for r in assessment.horizons}
    )
    return rows, None


def _year_history(
    cfg: Config, assessment: Assessment, earlier: Sequence[history_module.Earlier]
) -> tuple[history_module.YearPoint, ...]:
    """P(inside) for the current calendar year (on the target's annual measure; the average
    when the target is per period) across the earlier rounds."""
    year = periods.year_of(cfg.brief.as_of, cfg.brief.frequency)
    basis = "year-end" if cfg.target.basis == "year-end" else "calendar-year-average"
    now = next((r for r in assessment.annual if r.year == year and r.basis == basis), None)
    if now is None:
        return ()
    return history_module.year_points(earlier, assessment.as_of, year, basis, now.p_inside)


def _check_earlier(path: Path, text: str, cfg: Config) -> None:
    """The brief compared with must be an earlier (or the same, e.g. a draft) round at the
    same frequency: a later or other-frequency file would print a "change since" that is
    no such thing."""
    parsed = periods.parse(text)
    if (
        parsed is None
        or parsed.frequency != cfg.brief.frequency
        or parsed.ordinal > cfg.brief.as_of
    ):
        raise InputError(
            f"the previous brief is for {text!r}; expected a {cfg.brief.frequency} round not "
            f"later than {periods.label(cfg.brief.as_of, cfg.brief.frequency)}",
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
    fc = read_forecasts(
        cfg.inputs.forecasts, cfg.brief.frequency, cfg.brief.as_of, cfg.inputs.max_abs_value
    )
    act = read_actuals(
        cfg.inputs.actuals,
        cfg.brief.frequency,
        cfg.inputs.max_abs_value,
        as_of=cfg.brief.as_of,
        score_against=cfg.inputs.score_against,
    )
    given = (
        read_error_quantiles(cfg.inputs.error_quantiles, cfg.inputs.max_abs_value)
        if cfg.inputs.error_quantiles
        else None
    )
    screening.warn_later_outcomes(act, cfg)
    screening.warn_gaps(act, cfg)
    panel = panel_module.build(fc, act, as_of=cfg.brief.as_of, max_h=cfg.brief.horizons)
    status = screening.model_status(fc, cfg)
    screening.warn_left_out(status)
    method = screening.combination_method(cfg, fc)
    combo = combination_module.combine(
        method, panel, window=cfg.combination.window, shrinkage=cfg.combination.shrinkage
    )
    for h in np.flatnonzero(combo.fallback).tolist():
        warnings.warn(
            f"Too short a history for '{method}' weights at horizon {h} "
            f"({combo.rows[h]} past rows); equal weights are used there.",
            CombinationFallbackWarning,
            stacklevel=2,
        )
    _warn_range(method, combo)
    point = combo.combined[-1, : cfg.brief.horizons + 1]
    screening.require_current(cfg, point, act)
    errors = error_matrix(combo.combined, panel.outcomes)
    replayed = replays.replays(cfg, panel, combo.combined, errors, cache=cache)
    runs = replayed.runs
    today = replayed.selection.current
    totals = adjustments_module.family_totals(replayed)
    # The runner-up family is the best other family: the runner-up candidate may be the
    # chosen family under another spread option.
    others = sorted(
        (f for f in FAMILIES if f in totals and f != today.family), key=lambda f: -totals[f]
    )
    choice = (
        selection.Selection(today.family, others[0] if others else None, totals)
        if cfg.uncertainty.distribution == "best-past-score"
        else None
    )
    family = today.family
    window = replayed.window
    if replayed.pool is not None:  # distribution = "auto": the optimal prediction pool
        margins = pool_law.build(
            cfg, errors, point, given, replayed.members(), replayed.corrections, combo.combined
        )
    else:
        margins = uncertainty.build(
            cfg if window is None else cfg.replaced("uncertainty", window=window),
            errors,
            point,
            given,
            family=family,
            choice=choice,
            spread=today.spread,
            correction=replayed.correction(today),
            forecasts=combo.combined,
        )
    correction_today = replayed.applied_correction()
    if cfg.uncertainty.centre != "estimated":  # the record's bias and what the centre does
        shown = cfg.brief.horizons + 1
        uncertainty.warn_bias(
            cfg,
            errors[:, :shown],
            np.zeros(shown) if correction_today is None else correction_today[:shown],
            {h for h, f in enumerate(margins.families) if f == GIVEN_FAMILY},
            offered=correction_today is not None,
        )
    recalibrated: tuple[adjustments_module.RecalibrationRow, ...] = ()
    if cfg.uncertainty.recalibrate:
        outcome, recalibrated = adjustments_module.recalibrate(
            cfg,
            replayed,
            margins.outcome,
            given=frozenset(
                h for h, family in enumerate(margins.families) if family == GIVEN_FAMILY
            ),
        )
        margins = dataclasses.replace(margins, outcome=outcome)
    ordinals = [cfg.brief.as_of + h for h in range(cfg.brief.horizons + 1)]
    final, applied = judgement.apply(
        list(margins.outcome),
        ordinals,
        cfg.judgements,
        frequency=cfg.brief.frequency,
        config_file=str(cfg.path),
    )
    scenario_dists = judgement.scenarios(
        final, ordinals, cfg.scenarios, frequency=cfg.brief.frequency, config_file=str(cfg.path)
    )
    model_based = records.horizons(cfg, margins, list(margins.outcome), ordinals)
    adjusted = records.horizons(cfg, margins, final, ordinals) if cfg.judgements else model_based
    draws = _simulate(cfg, errors, final)
    known = {
        int(p): float(v) for p, v in zip(act.period, act.value, strict=True) if p < cfg.brief.as_of
    }
    yearly = annual_module.annual(draws, ordinals, known, cfg.brief.frequency, cfg.band_for)
    basis_rows = headline_module.basis_results(cfg, yearly)
    headline = headline_module.headline(cfg, adjusted[cfg.brief.policy_horizon], basis_rows)
    record = evaluate(panel, combo, cfg.uncertainty.window, cfg.brief.horizons)
    labels = [r.period for r in adjusted]
    policy = cfg.brief.policy_horizon
    return Assessment(
        as_of=periods.label(cfg.brief.as_of, cfg.brief.frequency),
        frequency=cfg.brief.frequency,
        title=cfg.brief.title,
        institution=cfg.brief.institution,
        target=records.target(cfg),
        policy_horizon=cfg.brief.policy_horizon,
        headline=headline,
        basis_results=basis_rows,
        horizons=adjusted,
        model_based_horizons=model_based,
        judgement=tuple(applied),
        scenarios=tuple(
            records.scenario(cfg, name, reasons, dists, ordinals)
            for name, reasons, dists in scenario_dists
        ),
        path=records.path(cfg, draws, ordinals),
        annual=tuple(yearly),
        combination=records.combination(cfg, method, combo, panel),
        models=status,
        accuracy=record.accuracy,
        tests=record.tests,
        own_names=record.names,
        calibration=calibration.summarise(runs, replayed.graded, cfg.brief.frequency),
        uncertainty=records.uncertainty(cfg, margins, replayed.pool),
        history=records.observations(act, cfg),
        change=None,
        inputs=records.inputs(cfg, fc, act, given),
        software=records.software(),
        warnings=(),
        adjustments=records.adjustments(cfg, replayed, errors, margins, recalibrated, panel, given),
        thresholds=thresholds_module.evaluate(
            cfg.target.thresholds, final, draws, [r.period for r in adjusted]
        ),
        density=tuple(
            density_module.curve(final[h], margins.outcome[h], adjusted[h].period, h)
            for h in (cfg.brief.density_horizons or (cfg.brief.policy_horizon,))
        ),
        score_against=cfg.inputs.score_against if act.vintages else None,
        model_forecasts=attribution_module.model_forecasts(panel, combo.included, labels),
        sensitivity_to_centre=sensitivity.table(
            final, [r.band for r in adjusted], labels, [r.centre for r in adjusted]
        ),
        record_by_situation=situations.record(
            panel,
            {
                h: run
                for (label, h), run in runs.items()
                if label == replayed.graded and h <= cfg.brief.horizons
            },
            band_for=cfg.band_for,
            frequency=cfg.brief.frequency,
        ),
        leave_one_out=attribution_module.leave_one_out(
            method,
            panel,
            combo,
            final[policy],
            adjusted[policy].band,
            period=adjusted[policy].period,
            h=policy,
            window=cfg.combination.window,
            shrinkage=cfg.combination.shrinkage,
        ),
        past_errors=records.past_errors(cfg, panel, errors),
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
        A :class:`~riskreport.replay.cache.ReplayCache` (e.g. ``ReplayCache.load(folder)``)
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
    cfg = config_reader.load_config(config_path, as_of)
    return assess_config(
        cfg, previous=Path(previous) if previous is not None else None, cache=cache
    )
