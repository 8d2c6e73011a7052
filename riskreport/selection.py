"""Choosing the error distribution family by out-of-sample log score (``distribution = "auto"``).

A pseudo-real-time replay: at each of the last evaluation origins o, every family is fitted
to the errors whose outcome was known at o (origins o' <= o - h, the last ``window`` of
them) and scores the error that followed, e(o, h), by its log density. All origins of a
horizon are fitted at once (:func:`~riskreport.distributions.fit_batch`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from riskreport._typing import Family
from riskreport.distributions import FAMILIES, fit_batch

EVALUATION_ORIGINS = 60  # past origins scored per horizon (common practice, no source)
MIN_TRAINING = 20  # fewest past errors a replayed fit may rest on


@dataclass(frozen=True)
class FamilyScore:
    """Mean out-of-sample log score of one family at one horizon (higher is better)."""

    distribution: str
    h: int
    log_score: float
    n: int


@dataclass(frozen=True)
class Selection:
    """The chosen family, the runner-up and every score behind the choice."""

    chosen: Family
    runner_up: Family | None
    total: dict[str, float]
    scores: tuple[FamilyScore, ...]


def training_matrix(
    errors: np.ndarray, h: int, window: int, evaluation: int
) -> tuple[np.ndarray, np.ndarray]:
    """Training samples (one row per evaluation origin, NaN padded) and the test errors.

    Parameters
    ----------
    errors
        origins x horizons errors (NaN where unknown at as_of).
    h
        The horizon.
    window
        Past errors per fit (0 = all).
    evaluation
        How many of the latest origins with a known error to score.
    """
    column = errors[:, h]
    known = np.flatnonzero(np.isfinite(column))
    tests = known[-evaluation:]
    rows, values = [], []
    for j in tests:
        # e(o', h) may train the fit at origin j only if its outcome period o' + h came
        # before j (the outcome of period j itself is what the nowcast forecasts).
        past = known[known <= j - h - 1]
        if window > 0:
            past = past[-window:]
        if past.size >= MIN_TRAINING:
            rows.append(column[past])
            values.append(column[j])
    if not rows:
        return np.empty((0, 0)), np.empty(0)
    width = max(r.size for r in rows)
    matrix = np.full((len(rows), width), np.nan)
    for i, r in enumerate(rows):
        matrix[i, : r.size] = r
    return matrix, np.array(values)


def select(errors: np.ndarray, horizons: int, *, window: int, mode: float | None) -> Selection:
    """Score every family at every horizon and choose the best total log score."""
    scores: list[FamilyScore] = []
    total: dict[str, float] = dict.fromkeys(FAMILIES, 0.0)
    for h in range(horizons + 1):
        train, test = training_matrix(errors, h, window, EVALUATION_ORIGINS)
        if test.size == 0:
            continue
        for family in FAMILIES:
            fitted = fit_batch(family, train, mode=mode)
            logs = np.asarray(fitted.logpdf(test))
            logs = np.where(np.isfinite(logs), logs, -50.0)  # an impossible outcome: heavy penalty
            score = float(np.mean(logs))
            scores.append(FamilyScore(family, h, score, int(test.size)))
            total[family] += score
    ranked = sorted(FAMILIES, key=lambda f: -total[f])
    return Selection(ranked[0], ranked[1] if len(ranked) > 1 else None, total, tuple(scores))
