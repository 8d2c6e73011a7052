"""Every replay of a round: each candidate method under each configured spread option, the
constant normal law the verdict compares with, and the sequence graded (the prequential
choice, or the optimal prediction pool), recalibrated out of sample when asked."""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from riskreport._typing import FAMILIES
from riskreport.laws import bias, dynamics
from riskreport.laws.pool import POOL_FAMILY, Member
from riskreport.reading import periods
from riskreport.reading.config import Config
from riskreport.reading.panel import Panel
from riskreport.replay import pool, prequential, recalibration
from riskreport.replay.calibration import HorizonReplay
from riskreport.replay.pool import PoolWeights
from riskreport.replay.prequential import Candidate, PrequentialSelection

if TYPE_CHECKING:
    from riskreport.replay.cache import ReplayCache

BASELINE = "constant normal law"  # the verdict's benchmark, when no candidate is it


@dataclass(frozen=True)
class Replays:
    """Every replay of a round and the choices made in it.

    Attributes
    ----------
    runs
        (label, h) -> replay: every candidate, plus ``auto`` (the selected sequence) and
        ``auto, recalibrated`` when made.
    candidates
        The candidates ``auto`` chose among (only the configured family when fixed).
    selection
        The prequential selection over them.
    graded
        The label whose calibration the brief reports.
    windows
        Per spread option, the window chosen at each origin (``window_choice = "auto"``;
        empty when the window is fixed).
    baseline
        The label of the constant normal law over the configured window (the verdict's
        benchmark).
    pool
        With ``distribution = "auto"`` or ``spread = "auto"`` (more than one candidate, not
        ``best-past-score``): the optimal prediction pool's weights (the ``auto`` replay is
        then the pool, :mod:`riskreport.replay.pool`).
    corrections
        With ``centre = "auto"``, per half-life: the bias correction B(o, h) known at each
        origin row (the last row today's), which the corrected candidates add to the point
        forecast (:mod:`riskreport.laws.bias`); None otherwise.
    forecasts
        The combined forecasts replayed (origins x horizons), which the ``revisions``
        spread needs for today's law.
    """

    runs: dict[tuple[str, int], HorizonReplay]
    candidates: tuple[Candidate, ...]
    selection: PrequentialSelection
    graded: str
    windows: dict[dynamics.SpreadOption, prequential.WindowChoice] = dataclasses.field(
        default_factory=dict
    )
    baseline: str = "normal"
    pool: PoolWeights | None = None
    corrections: dict[float, np.ndarray] | None = None
    forecasts: np.ndarray | None = None

    def members(self) -> list[Member]:
        """The pool's candidates with today's weights and windows (empty without a pool)."""
        if self.pool is None:
            return []
        out = []
        for c, w in zip(self.candidates, self.pool.current, strict=True):
            chosen = self.windows.get(c.spread)
            window = (
                chosen.current
                if chosen is not None and c.family in prequential.WINDOW_FAMILIES
                else None
            )
            out.append(Member(c.label, c.family, c.spread, window, w, c.half_life))
        return out

    def correction(self, candidate: Candidate) -> np.ndarray | None:
        """The correction B(o, h) a candidate's centre adds (None when uncorrected)."""
        if candidate.half_life is None or self.corrections is None:
            return None
        return self.corrections[candidate.half_life]

    def applied_correction(self) -> np.ndarray | None:
        """Today's correction of the centre per horizon: the corrected candidates' today's
        B weighted by their pool weights, or today's choice's B without a pool (None
        without corrected candidates)."""
        if self.corrections is None:
            return None
        width = next(iter(self.corrections.values())).shape[1]
        weights = (1.0,) if self.pool is None else self.pool.current
        chosen = (self.selection.current,) if self.pool is None else self.candidates
        out = np.zeros(width)
        for c, w in zip(chosen, weights, strict=True):
            b = self.correction(c)
            if b is not None:
                out += w * b[-1]
        return out

    @property
    def pools_spreads(self) -> bool:
        """Whether today's law pools several spread options (``spread = "auto"``)."""
        return self.pool is not None and len({c.spread for c in self.candidates}) > 1

    def spread_shown(self) -> dynamics.SpreadOption:
        """The spread option whose volatility and factors the record shows: today's choice,
        or with a pooled spread the time-varying member with the most weight today (the
        pool's other members are in its weights)."""
        current = self.selection.current
        if not self.pools_spreads or self.pool is None:
            return current.spread
        moving = [
            (w, k)
            for k, (c, w) in enumerate(zip(self.candidates, self.pool.current, strict=True))
            if c.spread.kind != "constant"
        ]
        return self.candidates[max(moving)[1]].spread if moving else current.spread

    @property
    def method(self) -> str:
        """Today's method: the chosen candidate's label, or ``pool``."""
        return self.selection.current.label if self.pool is None else POOL_FAMILY

    @property
    def spread(self) -> str:
        """Today's spread: the chosen candidate's, or ``pool`` when spreads are pooled."""
        return POOL_FAMILY if self.pools_spreads else self.selection.current.spread.label

    @property
    def window(self) -> int | None:
        """Today's window when chosen (None when fixed, or today's family keeps the
        configured window)."""
        current = self.selection.current
        chosen = self.windows.get(current.spread)
        if chosen is None or current.family not in prequential.WINDOW_FAMILIES:
            return None
        return chosen.current


def replays(
    cfg: Config,
    panel: Panel,
    combined: np.ndarray,
    errors: np.ndarray,
    *,
    cache: ReplayCache | None = None,
) -> Replays:
    """Replay every family under every configured spread option, select prequentially and,
    when asked, recalibrate out of sample (``cache``: reuse origins replayed before)."""
    spreads = dynamics.options(cfg.uncertainty.spread)
    # The constant spread is always replayed: it is the baseline of the verdict.
    every = tuple(dict.fromkeys((dynamics.CONSTANT, *spreads)))
    replayed = tuple(
        Candidate(f, s)
        for s in every
        for f in FAMILIES
        if s.kind == "constant" or f in dynamics.FAMILIES
    )
    choosing = cfg.uncertainty.distribution in ("auto", "best-past-score")
    allowed = FAMILIES if choosing else (cfg.uncertainty.distribution,)
    candidates = tuple(c for c in replayed if c.family in allowed and c.spread in spreads)
    mode = None if cfg.uncertainty.centre == "estimated" else 0.0
    predictive = cfg.uncertainty.predictive == "student-t"
    stage: dict[tuple[str, int], HorizonReplay] = {}
    windows: dict[dynamics.SpreadOption, prequential.WindowChoice] = {}
    baseline = "normal"
    if (
        cfg.uncertainty.window_choice == "auto"
        and len(prequential.window_grid(cfg.uncertainty.window)) > 1
    ):
        stage, windows = prequential.choose_windows(
            panel,
            combined,
            errors,
            cfg.brief.horizons,
            window=cfg.uncertainty.window,
            mode=mode,
            band_for=cfg.band_for,
            spreads=every,
            cache=cache,
            predictive=predictive,
        )
        baseline = prequential.window_label("normal", cfg.uncertainty.window)
    chosen_rows = {s: w.rows for s, w in windows.items()} or None

    def replay(
        forecasts: np.ndarray, remaining: np.ndarray, laws: tuple[Candidate, ...], plain: bool
    ) -> dict[tuple[str, int], HorizonReplay]:
        """The configured replay of ``laws`` on these forecasts and errors; ``plain``: the
        constant normal law's own (centre on the forecast, plug-in, configured window)."""
        return prequential.replay(
            panel,
            forecasts,
            remaining,
            cfg.brief.horizons,
            window=cfg.uncertainty.window,
            mode=0.0 if plain else mode,
            band_for=cfg.band_for,
            candidates=laws,
            cache=cache,
            windows=None if plain else chosen_rows,
            predictive=predictive and not plain,
        )

    runs = replay(combined, errors, replayed, False)
    runs.update(stage)
    corrections: dict[float, np.ndarray] | None = None
    # The hard choice (best-past-score) is offered the uncorrected laws only: choosing among
    # three times as many laws, it switched to corrected skewed laws with thin tails on the
    # 24-month history and lost 1.2 nats against the constant normal law there.
    if cfg.uncertainty.centre == "auto" and cfg.uncertainty.distribution != "best-past-score":
        corrections = {}
        plain_candidates = candidates
        for half_life in bias.HALF_LIVES:
            # The same candidates on the bias-corrected forecasts: exactly the replay of the
            # corrected method (B at each origin rests on outcomes known there).
            shifted, remaining, corrections[half_life] = bias.corrected(
                combined, errors, periods.PERIODS_PER_YEAR[cfg.brief.frequency], half_life
            )
            fixed = tuple(dataclasses.replace(c, half_life=half_life) for c in plain_candidates)
            runs.update(replay(shifted, remaining, fixed, False))
            candidates = (*candidates, *fixed)
    if predictive or mode != 0.0 or windows:
        # The verdict's benchmark is always the constant normal law itself: the plug-in
        # normal centred on the point forecast over the configured window.
        plain = replay(combined, errors, (Candidate("normal", dynamics.CONSTANT),), True)
        for (_, h), run in plain.items():
            runs[(BASELINE, h)] = dataclasses.replace(run, family=BASELINE)
        baseline = BASELINE
    chosen = prequential.select(runs, candidates, panel.origins.size)
    graded = candidates[0].label
    weights = None
    if len(candidates) > 1:
        # Combine, don't switch: several families (``auto``) or spread options
        # (``spread = "auto"``) are pooled; ``best-past-score`` is the old hard choice.
        if cfg.uncertainty.distribution != "best-past-score":
            groups = [
                [c.label for c in candidates if c.half_life == half_life]
                for half_life in dict.fromkeys(c.half_life for c in candidates)
            ]
            weights = (
                pool.learn(runs, groups[0], panel.origins.size)
                if len(groups) == 1
                else pool.learn_nested(runs, groups, panel.origins.size)
            )
            sequence = pool.pooled_sequence(runs, weights)
        else:
            sequence = prequential.selected_sequence(runs, chosen)
        for h, run in sequence.items():
            runs[(prequential.SELECTED, h)] = run
        graded = prequential.SELECTED
    if cfg.uncertainty.recalibrate:
        raw = [run for (label, _), run in runs.items() if label == graded]
        for run in raw:
            mapped = (
                recalibration.apply_to_replay(run)
                if cfg.uncertainty.recalibration == "beta"
                else recalibration.track_replay(run)
            )
            runs[(recalibration.LABEL, run.h)] = mapped
        graded = recalibration.LABEL
    return Replays(
        runs, candidates, chosen, graded, windows, baseline, weights, corrections, combined
    )
