"""The record in situations like today's: the replay split by the situation at each origin.

Each replayed statement (one origin, one horizon) is put in situations judged only from what
was known at its origin:

- ``below`` / ``inside`` / ``above``: where the latest known outcome (the last one with a
  period before the origin) stood against the band in force at the origin. Every replayed
  row has a known outcome before it (its law was fitted to earlier errors), so these three
  partition the replay's rows at each horizon;
- ``wide_disagreement``: the models' spread of forecasts for that horizon (the standard
  deviation across the models that forecast at the origin, two at least) was in the top
  third of its own history up to and including that origin: at least two thirds of the
  spreads known then were not larger (and at least :data:`MIN_SPREAD_HISTORY` earlier
  values);
- ``recent_five_years``: the origin is among the last five years of rounds;
- ``all``: every replayed row (the overall record, for comparison).

Per situation and horizon: the rows ``n``; the independent outcomes among them,
``n_effective`` (:func:`riskreport.forecasts.overlap.effective_sample_size` with h + 1
steps, counting the overlaps the situation's origins actually have); how often the central
50% and 90% ranges held, each with Wilson's score interval (Wilson 1927, JASA 22, 209-212)
computed on the effective sample size (statsmodels ``proportion_confint(method="wilson")``
with ``nobs = n_effective``), so the interval respects the overlap of multi-step outcomes;
the Brier score of P(inside); and ``today``: whether the situation holds in today's round.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from riskreport._typing import Frequency
from riskreport.forecasts.overlap import effective_sample_size
from riskreport.reading.config import Band
from riskreport.reading.panel import Panel, steps_ahead
from riskreport.replay.calibration import HorizonReplay

SIDES: tuple[str, ...] = ("below", "inside", "above")
SITUATIONS: tuple[str, ...] = ("all", *SIDES, "wide_disagreement", "recent_five_years")
DESCRIPTIONS: dict[str, str] = {
    "all": "every replayed round",
    "below": "the latest known outcome was below the band",
    "inside": "the latest known outcome was inside the band",
    "above": "the latest known outcome was above the band",
    "wide_disagreement": "the models disagreed widely (spread of their forecasts in the top "
    "third of its history up to then)",
    "recent_five_years": "rounds of the most recent five years",
}
RECENT_YEARS = 5
WIDE_SHARE = 2 / 3  # the top third of the spread's history
# Fewest earlier spreads before "wide" is judged: a third of fewer values says little
# (common practice, no source).
MIN_SPREAD_HISTORY = 12
# Fewer independent outcomes than this are "too small to tell": with 20 the 90% Wilson
# interval of a 90% coverage still spans about 0.74 to 0.97 (with 10: 0.65 to 0.98), and
# with fewer it reaches from clearly too narrow to too wide (common practice, no source).
TOO_SMALL = 20.0
INTERVAL_LEVEL = 0.9
PERIODS_PER_YEAR: dict[Frequency, int] = {"monthly": 12, "quarterly": 4}


@dataclass(frozen=True)
class SituationRow:
    """How past statements held in one situation at one horizon.

    Attributes
    ----------
    situation, description
        The situation's key (``below``, ``inside``, ``above``, ``wide_disagreement``,
        ``recent_five_years``, ``all``) and what it means.
    h
        The horizon.
    n
        Replayed statements (rows) in the situation.
    n_effective
        Independent outcomes among them (overlap of h + 1-step outcomes counted).
    coverage_50, coverage_90
        Share of outcomes inside the stated central 50% and 90% ranges (None when n = 0).
    coverage_50_interval, coverage_90_interval
        Wilson's 90% interval of each share on ``n_effective`` (None when n = 0).
    brier
        Mean squared difference of P(inside) and the outcome's being inside (None when n = 0).
    too_small
        ``n_effective`` below :data:`TOO_SMALL`: too few independent outcomes to tell.
    today
        The situation holds in today's round.
    """

    situation: str
    description: str
    h: int
    n: int
    n_effective: float
    coverage_50: float | None
    coverage_90: float | None
    brier: float | None
    today: bool
    coverage_50_interval: tuple[float, float] | None
    coverage_90_interval: tuple[float, float] | None
    too_small: bool


def wilson_interval(share: float, n_effective: float) -> tuple[float, float] | None:
    """Wilson's score interval (level :data:`INTERVAL_LEVEL`) of a share on an effective count.

    statsmodels ``proportion_confint(count, nobs, alpha, method="wilson")`` with
    ``count = share * n_effective`` and ``nobs = n_effective`` (non-integer counts are
    allowed by the formula). None for an empty record.
    """
    if n_effective <= 0:
        return None
    from statsmodels.stats.proportion import proportion_confint

    lo, hi = proportion_confint(
        share * n_effective, n_effective, alpha=1 - INTERVAL_LEVEL, method="wilson"
    )
    # The formula's edge at a share of 0 or 1 is the share itself up to rounding.
    return min(float(lo), share), max(float(hi), share)


def side_of_band(value: float, band: Band) -> str:
    """``below``, ``inside`` (edges included) or ``above`` the band."""
    if value < band.lower:
        return "below"
    if value > band.upper:
        return "above"
    return "inside"


def latest_known(panel: Panel) -> np.ndarray:
    """origins: the latest known outcome before each origin (NaN where none is known)."""
    series = panel.series
    index = np.where(np.isfinite(series), np.arange(series.size), -1)
    last = np.maximum.accumulate(index)
    position = panel.origins - 1 - panel.series_start
    inside = (position >= 0) & (position < series.size)
    found = np.full(panel.origins.size, -1)
    found[inside] = last[position[inside]]
    return np.where(found >= 0, series[np.maximum(found, 0)], np.nan)


def model_spread(panel: Panel) -> np.ndarray:
    """origins x horizons: standard deviation across the models that forecast (NaN below two)."""
    f = panel.forecasts
    count = np.sum(np.isfinite(f), axis=0)
    with np.errstate(invalid="ignore"):
        mean = np.nansum(f, axis=0) / np.maximum(count, 1)
        var = np.nansum((f - mean[None]) ** 2, axis=0) / np.maximum(count, 1)
    return np.where(count >= 2, np.sqrt(var), np.nan)


def wide_disagreement(spread: np.ndarray) -> np.ndarray:
    """origins (one horizon's spreads): True where the spread is in the top third of its
    history up to and including that origin: at least two thirds of the spreads known then
    are not larger (with at least :data:`MIN_SPREAD_HISTORY` earlier ones).

    All origins at once: a lower-triangular comparison of every pair (origins x origins).
    """
    finite = np.isfinite(spread)
    values = np.where(finite, spread, np.inf)
    earlier = np.tri(spread.size, dtype=bool)  # j <= i
    not_larger = np.sum(earlier & finite[None, :] & (values[None, :] <= values[:, None]), axis=1)
    known = np.cumsum(finite)
    return finite & (known - 1 >= MIN_SPREAD_HISTORY) & (not_larger >= WIDE_SHARE * known)


def _row(
    situation: str,
    h: int,
    run: HorizonReplay,
    members: np.ndarray,
    origins: np.ndarray,
    today: bool,
) -> SituationRow:
    n = int(np.count_nonzero(members))
    n_eff = effective_sample_size(origins[members], steps_ahead(h)) if n else 0.0
    if n == 0:
        return SituationRow(
            situation, DESCRIPTIONS[situation], h, 0, 0.0, None, None, None, today, None, None, True
        )
    pit = run.pit[members]
    held_50 = float(np.mean(np.abs(pit - 0.5) <= 0.5 / 2))
    held_90 = float(np.mean(np.abs(pit - 0.5) <= 0.9 / 2))
    inside = (run.category[members] == 1).astype(float)
    brier = float(np.mean((run.probabilities[members, 1] - inside) ** 2))
    return SituationRow(
        situation,
        DESCRIPTIONS[situation],
        h,
        n,
        n_eff,
        held_50,
        held_90,
        brier,
        today,
        wilson_interval(held_50, n_eff),
        wilson_interval(held_90, n_eff),
        # judged on n_effective as printed (one decimal), so "20.0" is never "too few"
        round(n_eff, 1) < TOO_SMALL,
    )


def record(
    panel: Panel,
    runs: Mapping[int, HorizonReplay],
    *,
    band_for: Callable[[int], Band],
    frequency: Frequency,
) -> tuple[SituationRow, ...]:
    """The ``record_by_situation`` rows: every situation at every replayed horizon.

    Parameters
    ----------
    panel
        The round's panel (its last origin is today's round).
    runs
        The graded replay by horizon (the rows the calibration record is built from).
    band_for
        The band in force at a period ordinal.
    frequency
        ``monthly`` or ``quarterly`` (how many rounds make five years).
    """
    as_of = int(panel.origins[-1])
    latest = latest_known(panel)
    sides = np.array(
        [
            side_of_band(v, band_for(int(o))) if np.isfinite(v) else ""
            for v, o in zip(latest, panel.origins, strict=True)
        ]
    )
    spread = model_spread(panel)
    recent = panel.origins >= as_of - RECENT_YEARS * PERIODS_PER_YEAR[frequency]
    rows: list[SituationRow] = []
    for h in sorted(runs):
        run = runs[h]
        index = run.origins
        origins = panel.origins[index]
        wide = wide_disagreement(spread[:, h])
        held = {
            "all": np.ones(index.size, dtype=bool),
            **{s: sides[index] == s for s in SIDES},
            "wide_disagreement": wide[index],
            "recent_five_years": recent[index],
        }
        today = {
            "all": True,
            **{s: sides[-1] == s for s in SIDES},
            "wide_disagreement": bool(wide[-1]),
            "recent_five_years": True,
        }
        rows.extend(_row(s, h, run, held[s], origins, today[s]) for s in SITUATIONS)
    return tuple(rows)
