"""Per horizon: the error sample, the fitted error distribution and the outcome distribution.

Errors over the last ``window`` origins with a known outcome; thin horizons borrow the shape
of their neighbours' errors (scaled to their own spread); the family is given or chosen by
out-of-sample log score; the spread of the learned horizons may not shrink as the horizon
lengthens; a given ``error_quantiles`` distribution replaces the learned one where it has the
horizon and is used exactly as given.
"""

from __future__ import annotations

import warnings
from collections.abc import Collection
from dataclasses import dataclass

import numpy as np

from riskreport._typing import Family
from riskreport.errors import (
    BoundaryFitWarning,
    CentreCorrectionWarning,
    ForecastBiasWarning,
    InputError,
    SmallSampleWarning,
)
from riskreport.forecasts.overlap import effective_sample_size
from riskreport.laws import distributions, dynamics, predictive
from riskreport.laws.distributions import GIVEN_FAMILY, Distribution
from riskreport.reading import periods
from riskreport.reading.config import Config
from riskreport.reading.inputs import ErrorQuantiles
from riskreport.reading.panel import steps_ahead, window_mask
from riskreport.replay import selection

SMALL_SAMPLE = 30  # fewer errors than this earns a caution (common practice, no source)


@dataclass(frozen=True)
class Margins:
    """The uncertainty of every reported horizon.

    Attributes
    ----------
    samples
        Per horizon, the errors the fit rests on (after any borrowing).
    own
        Per horizon, how many of them are the horizon's own (0 where the distribution is
        given).
    families
        Per horizon, the family used (``given-quantiles`` for a given distribution).
    sources
        Per horizon, where the distribution comes from, in words.
    errors
        Per horizon, the error distribution (after the monotone rule).
    outcome
        Per horizon, the outcome distribution: point forecast + error.
    point
        The combined point forecasts.
    choice
        The ``auto`` selection, when made.
    mode
        The fixed mode of the error fits (0 for ``centre = "forecast"``), or None.
    """

    samples: tuple[np.ndarray, ...]
    own: tuple[int, ...]
    families: tuple[str, ...]
    sources: tuple[str, ...]
    errors: tuple[Distribution, ...]
    outcome: tuple[Distribution, ...]
    point: np.ndarray
    choice: selection.Selection | None
    mode: float | None


def _borrow(columns: list[np.ndarray], h: int, minimum: int) -> tuple[np.ndarray, list[int]]:
    """The errors of horizon h, with neighbours' errors rescaled to h's spread when thin."""
    own = columns[h]
    if own.size >= minimum:
        return own, []
    rms = float(np.sqrt(np.mean(own**2)))
    pooled, used = [own], []
    for distance in range(1, len(columns)):
        for j in (h - distance, h + distance):
            # A neighbour whose errors are all 0 has no spread to rescale: skipped.
            if 0 <= j < len(columns) and columns[j].size >= 2 and np.any(columns[j] != 0):
                other = columns[j]
                pooled.append(other * rms / float(np.sqrt(np.mean(other**2))))
                used.append(j)
        if sum(p.size for p in pooled) >= minimum:
            break
    return np.concatenate(pooled), used


def _fit(family: Family, sample: np.ndarray, mode: float | None, h: int) -> Distribution:
    try:
        return distributions.fit(family, sample, mode=mode)
    except ValueError as exc:
        warnings.warn(
            f"Horizon {h}: the {family} fit failed ({exc}); a normal distribution is used.",
            BoundaryFitWarning,
            stacklevel=3,
        )
        return distributions.fit("normal", sample, mode=mode)


def _monotone(fits: list[Distribution], given: set[int]) -> list[Distribution]:
    """Widen any learned horizon whose spread is below a shorter learned horizon's (the
    running maximum over learned horizons).

    A given distribution (``error_quantiles``) is used exactly as given: it is never widened
    and does not set the floor of the learned horizons after it.
    """
    learned = [h for h in range(len(fits)) if h not in given]
    if not learned:
        return list(fits)
    spreads = np.array([distributions.spread(fits[h]) for h in learned])
    floor = np.maximum.accumulate(spreads)
    out = list(fits)
    for h, s, target in zip(learned, spreads, floor, strict=True):
        if s < target:
            out[h] = distributions.Adjusted(fits[h], scale=float(target / s))
    return out


# A correction of the centre larger than this share of the band's width is said in the
# brief (issue "Honest by default"; common practice, no source).
CENTRE_SHARE = 0.1


def _warn_centre(cfg: Config, fits: list[Distribution], given: Collection[int]) -> None:
    """Warn where the estimated centre of the errors (``centre = "estimated"``) moves the
    outcome's centre by more than CENTRE_SHARE of the band's width."""
    moved: list[int] = []
    largest = 0.0
    for h, fit in enumerate(fits):
        if h in given:
            continue
        band = cfg.band_for(cfg.brief.as_of + h)
        shift = abs(float(fit.mode))
        if shift > CENTRE_SHARE * (band.upper - band.lower):
            moved.append(h)
            largest = max(largest, shift)
    if moved:
        warnings.warn(
            f'The errors\' estimated centre (centre = "estimated") moves the centre off the point '
            f"forecast by more than a tenth of the band's width at horizons "
            f"{periods.ranges(moved)} (by up to {largest:.2f} pp); after a past episode such a "
            'correction is often noise: centre = "forecast" leaves it out.',
            CentreCorrectionWarning,
            stacklevel=3,
        )


# A mean error beyond this many standard errors (on the record's independent outcomes) is
# read as a bias, not chance (common practice, no source: about a two-sided 5% test).
BIAS_SE = 2.0


def warn_bias(
    cfg: Config,
    raw: np.ndarray,
    applied: np.ndarray,
    given: Collection[int],
    *,
    offered: bool = False,
) -> None:
    """Say what the centre does with the record's bias.

    ``raw`` are the errors of the point forecast (origins x horizons), ``applied`` today's
    correction of the centre per horizon (0 with ``centre = "forecast"``; the pooled
    correction with ``centre = "auto"``; ``offered``: a correction was offered to the pool).
    Where the correction moves the centre by more
    than CENTRE_SHARE of the band's width, that is said; elsewhere, where the window's mean
    error is larger than CENTRE_SHARE of the band's width and than BIAS_SE standard errors
    (counted on the effective number of independent outcomes among overlapping errors),
    the published centre leaves a bias the record shows, and that is said.
    """
    in_window = window_mask(raw, cfg.uncertainty.window)
    moved: list[int] = []
    biased: list[int] = []
    largest_move = largest_bias = 0.0
    for h in range(min(raw.shape[1], applied.size)):
        column = raw[in_window[:, h], h]
        if h in given:
            continue
        band = cfg.band_for(cfg.brief.as_of + h)
        share = CENTRE_SHARE * (band.upper - band.lower)
        if abs(applied[h]) > share:
            moved.append(h)
            largest_move = applied[h] if abs(applied[h]) > abs(largest_move) else largest_move
            continue
        if column.size < 2:
            continue
        mean = float(np.mean(column))
        n_eff = effective_sample_size(column.size, steps_ahead(h))
        se = float(np.std(column, ddof=1)) / np.sqrt(max(n_eff, 1.0))
        if abs(mean) > share and abs(mean) > BIAS_SE * se:
            biased.append(h)
            largest_bias = mean if abs(mean) > abs(largest_bias) else largest_bias
    if moved:
        warnings.warn(
            f"The bias correction learned from past errors moves the centre off the point "
            f"forecast by more than a tenth of the band's width at horizons "
            f"{periods.ranges(moved)} (by up to {largest_move:+.2f} pp): recent outcomes "
            f"came out {'above' if largest_move > 0 else 'below'} the forecasts, and the "
            "corrected laws scored better on past rounds. Whether the bias persists is a "
            "judgement.",
            CentreCorrectionWarning,
            stacklevel=3,
        )
    if biased:
        side = "above" if largest_bias > 0 else "below"
        ending = (
            (
                'The centre is the point forecast (centre = "forecast"), so the probabilities '
                'do not correct for this bias; read them with it in mind, or set centre = "auto" '
                "to let a correction earn its place on past scores."
                if cfg.uncertainty.centre == "forecast"
                else "The centre is the point forecast (distribution = best-past-score is "
                "offered no bias correction), so the probabilities do not correct for this "
                "bias; read them with it in mind."
            )
            if not offered
            else "The correction learned from past scores moves the centre by less than a "
            "tenth of the band's width there (the corrected laws did not score better "
            "enough); read the probabilities with the bias in mind."
        )
        warnings.warn(
            f"The past errors at horizons {periods.ranges(biased)} averaged up to "
            f"{largest_bias:+.2f} pp over the error window (outcomes {side} the forecast): "
            "more than a tenth of the band's width and more than chance gives on the "
            f"record's independent outcomes. {ending}",
            ForecastBiasWarning,
            stacklevel=3,
        )


def build(
    cfg: Config,
    errors: np.ndarray,
    point: np.ndarray,
    given: ErrorQuantiles | None,
    *,
    family: Family,
    choice: selection.Selection | None = None,
    spread: dynamics.SpreadOption = dynamics.CONSTANT,
    correction: np.ndarray | None = None,
    forecasts: np.ndarray | None = None,
) -> Margins:
    """Fit every reported horizon's error distribution and form the outcome distributions.

    With a time-varying ``spread``, the law is fitted to the standardised errors and
    rescaled by today's volatility (:mod:`riskreport.laws.dynamics`); ``samples`` then hold the
    standardised errors. With the ``joint`` spread each horizon's law is rescaled by the
    ratio of its joint to its own ML spread (:mod:`riskreport.laws.joint`).

    With a ``correction`` (origins x horizons, :func:`riskreport.laws.bias.corrections`) the
    law is that of the bias-corrected forecast: fitted to the errors minus the correction,
    centred on the point forecast plus today's correction (its last row); the error laws
    returned are still relative to the point forecast (they carry today's correction).
    Horizons with a given distribution are not corrected. ``forecasts`` (origins x
    horizons, the combined forecasts) are needed by the ``revisions`` spread only.

    Raises
    ------
    InputError
        A horizon has neither a track record (two or more known errors) nor a given
        distribution.
    """
    mode = None if cfg.uncertainty.centre == "estimated" else 0.0
    errors = errors[:, : cfg.brief.horizons + 1]
    given_h = given.by_horizon if given is not None else {}
    today_shift = np.zeros(errors.shape[1])
    if forecasts is not None:
        forecasts = forecasts[:, : errors.shape[1]]
    if correction is not None:
        correction = correction[:, : errors.shape[1]].copy()
        correction[:, [h for h in given_h if h < errors.shape[1]]] = 0.0
        errors = errors - correction
        today_shift = correction[-1]
        forecasts = None if forecasts is None else forecasts + correction
    today = dynamics.factors(errors, spread, cfg.uncertainty.window, forecasts)  # per horizon
    errors, _ = dynamics.standardise(errors, spread)
    mask = window_mask(errors, cfg.uncertainty.window)
    columns = [errors[mask[:, h], h] for h in range(cfg.brief.horizons + 1)]
    for h, column in enumerate(columns):
        known = int(np.isfinite(errors[:, h]).sum())
        if column.size < 2 and h not in given_h and known >= 2:
            # The track record exists; the configured window is what leaves too little.
            raise InputError(
                f"the window of {cfg.uncertainty.window} past origins leaves {column.size} known "
                f"error(s) at horizon {h} ({known} in the whole track record); expected a "
                "window that holds at least 2 (0 = all)",
                file=cfg.path,
                column="[uncertainty] window",
            )
        if column.size < 2 and h not in given_h:
            raise InputError(
                f"horizon {h} has no track record: {column.size} past forecast(s) of that "
                f"horizon with a known outcome by {periods.label(cfg.brief.as_of, cfg.brief.frequency)}, "
                "and no error_quantiles fallback; expected at least 2",
                file=cfg.inputs.forecasts,
                column="origin",
            )
    samples: list[np.ndarray] = []
    own: list[int] = []
    families: list[str] = []
    sources: list[str] = []
    fits: list[Distribution] = []
    thin: list[str] = []
    for h in range(cfg.brief.horizons + 1):
        if h in given_h:
            levels, values = given_h[h]
            fits.append(distributions.GivenQuantiles(levels, values))
            samples.append(columns[h])
            own.append(0)  # the given distribution rests on no past errors of the track record
            families.append(GIVEN_FAMILY)
            sources.append("given error quantiles")
            continue
        sample, used = _borrow(columns, h, cfg.uncertainty.min_errors)
        if used:
            thin.append(f"{h} (from h = {', '.join(map(str, used))})")
        fitted = _fit(family, sample, mode, h)
        if cfg.uncertainty.predictive == "student-t" and fitted.family == "normal":
            fitted = predictive.student(fitted, steps_ahead(h), mode_fixed=mode is not None)
        samples.append(sample[np.isfinite(sample)])
        own.append(int(columns[h].size))
        families.append(fitted.family)
        sources.append(
            "track record" + (f", borrowing from h = {', '.join(map(str, used))}" if used else "")
        )
        fits.append(distributions.scale_about_zero(fitted, float(today[h])))
    small = [
        h
        for h in range(cfg.brief.horizons + 1)
        if h not in given_h and columns[h].size < SMALL_SAMPLE
    ]
    if small:
        fewest = min(columns[h].size for h in small)
        warnings.warn(
            f"Horizons {periods.ranges(small)} rest on fewer than {SMALL_SAMPLE} past errors of "
            f"their own (as few as {fewest}); their probabilities, and the tail probabilities "
            "above all, are uncertain.",
            SmallSampleWarning,
            stacklevel=2,
        )
    if thin:
        warnings.warn(
            "Thin horizons borrow the shape of neighbouring horizons' errors, rescaled to "
            f"their own spread: {'; '.join(thin)}.",
            SmallSampleWarning,
            stacklevel=2,
        )
    by_note: dict[str, list[int]] = {}
    for h, f in enumerate(fits):
        for note in getattr(f, "notes", ()):
            by_note.setdefault(note, []).append(h)
    for note, edge in by_note.items():  # each distinct note once, with its horizons
        warnings.warn(
            f"{note[0].upper()}{note[1:]} (horizons {', '.join(map(str, edge))}).",
            BoundaryFitWarning,
            stacklevel=2,
        )
    if mode is None:
        _warn_centre(cfg, fits, given_h)
    if cfg.uncertainty.monotone:
        fits = _monotone(fits, set(given_h) & set(range(cfg.brief.horizons + 1)))
    shown_given = sorted(h for h in given_h if h <= cfg.brief.horizons)
    if shown_given:
        warnings.warn(
            "The error distribution is given (error_quantiles) for horizons "
            f"{periods.ranges(shown_given)}; it is used exactly as given there (not "
            "widened by the monotone-spread rule, no past errors, no sampling interval).",
            SmallSampleWarning,
            stacklevel=2,
        )
    # A corrected law's errors are relative to the point forecast: today's correction is
    # part of them, so that outcome = point forecast + error holds for every law.
    fits = [
        distributions.Adjusted(f, shift=float(b)) if b != 0.0 else f
        for f, b in zip(fits, today_shift, strict=True)
    ]
    outcome: list[Distribution] = [
        distributions.Adjusted(f, shift=float(p)) for f, p in zip(fits, point, strict=True)
    ]
    return Margins(
        samples=tuple(samples),
        own=tuple(own),
        families=tuple(families),
        sources=tuple(sources),
        errors=tuple(fits),
        outcome=tuple(outcome),
        point=point,
        choice=choice,
        mode=mode,
    )
