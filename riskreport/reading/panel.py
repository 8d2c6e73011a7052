"""The forecasts and outcomes as dense arrays over (model, origin, horizon).

Only what was knowable at ``as_of`` enters: forecast rows with origin <= as_of and
outcomes with period < as_of (so ``--as-of`` in the past sees no later data). The round made
at ``as_of`` uses data up to as_of - 1, so an outcome for as_of itself (a flash estimate, or a
re-run of a past month) is not in its information set: it is ignored everywhere (scores,
weights, error distributions, observed periods of a year, the history shown).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from riskreport.reading.inputs import Actuals, Forecasts


@dataclass(frozen=True)
class Panel:
    """Dense forecast and outcome arrays.

    Attributes
    ----------
    models
        Model names, in the order of the first axis of ``forecasts``.
    origins
        Origin ordinals, ascending; the last is ``as_of``.
    forecasts
        models x origins x (max_h + 1), NaN where a model gave no forecast.
    outcomes
        origins x (max_h + 1): the outcome of period origin + h, NaN where not known
        before ``as_of`` and for the current round itself.
    last_outcome
        origins: the outcome of the period before each origin (the no-change forecast),
        NaN where unknown.
    series, series_start
        The outcome series known in the round (periods before ``as_of``; NaN where missing)
        and the ordinal of its first entry.
    """

    models: tuple[str, ...]
    origins: np.ndarray
    forecasts: np.ndarray
    outcomes: np.ndarray
    last_outcome: np.ndarray
    series: np.ndarray
    series_start: int

    @property
    def max_h(self) -> int:
        """The largest horizon held."""
        return int(self.forecasts.shape[2] - 1)

    @property
    def current(self) -> np.ndarray:
        """models x horizons: the current-round forecasts (origin = as_of)."""
        return self.forecasts[:, -1, :]


def build(forecasts: Forecasts, actuals: Actuals, *, as_of: int, max_h: int) -> Panel:
    """Arrange validated inputs as a :class:`Panel` without look-ahead."""
    h = forecasts.horizon
    keep = (forecasts.origin <= as_of) & (h <= max_h)
    first = int(forecasts.origin[keep].min())
    origins = np.arange(first, as_of + 1, dtype=np.int64)
    cube = np.full((len(forecasts.models), origins.size, max_h + 1), np.nan)
    cube[forecasts.model[keep], forecasts.origin[keep] - first, h[keep]] = forecasts.value[keep]

    known = actuals.period < as_of
    span_start = int(min(first - 1, actuals.period.min()))
    series = np.full(as_of - span_start + max_h + 2, np.nan)
    series[actuals.period[known] - span_start] = actuals.value[known]
    target = origins[:, None] + np.arange(max_h + 1)[None, :] - span_start
    outcomes = series[target]
    # The current round is what the brief assesses: it is never scored (its outcomes are
    # for periods >= as_of, which are not known).
    outcomes[-1, :] = np.nan
    last_outcome = series[origins - 1 - span_start]
    return Panel(
        models=forecasts.models,
        origins=origins,
        forecasts=cube,
        outcomes=outcomes,
        last_outcome=last_outcome,
        series=series[: as_of - span_start + 1],
        series_start=span_start,
    )


def steps_ahead(h: int) -> int:
    """The steps ahead of a forecast of horizon ``h``, as :mod:`riskreport.stats` counts them.

    A forecast of horizon h made at origin o uses data up to o - 1, so it is an
    (h + 1)-step forecast: its errors overlap over h periods.

    >>> steps_ahead(0)
    1
    """
    return h + 1


def window_mask(errors: np.ndarray, window: int) -> np.ndarray:
    """origins x horizons: True for the last ``window`` known errors of each horizon.

    ``window = 0`` keeps every known error.
    """
    known = np.isfinite(errors)
    if window == 0:
        return known
    from_latest = np.cumsum(known[::-1], axis=0)[::-1]
    return known & (from_latest <= window)
