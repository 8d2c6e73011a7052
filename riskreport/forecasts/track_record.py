"""The track record: past errors per horizon as known at the current origin, accuracy of
every forecaster and the comparative tests.

Errors are e(o, h) = actual(o + h) - forecast(o, o + h); only outcomes known at ``as_of``
enter (the panel holds no later outcome). A forecast of horizon h made at origin o uses
data up to o - 1, so it is an (h + 1)-step forecast: its errors overlap over h periods and
the tests use h lags (``stats`` functions take ``panel.steps_ahead(h)`` = h + 1 steps).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from riskreport.assessment import json_key
from riskreport.forecasts import benchmarks
from riskreport.forecasts.combination import Combination
from riskreport.reading.inputs import BENCHMARK_NAMES
from riskreport.reading.panel import Panel, steps_ahead, window_mask

if TYPE_CHECKING:  # the tests (scipy.stats) load only when run: `check` needs none of them
    from riskreport.forecasts import stats

MIN_TEST_ROWS = 12  # fewer common rows than this: no test (common practice, no source)


@dataclass(frozen=True)
class AccuracyRow:
    """Accuracy of one forecaster at one horizon over the error window."""

    model: str
    h: int
    n: int
    mae: float
    rmse: float
    mean_error: float


@dataclass(frozen=True)
class TestRow:
    """One comparative test at one horizon."""

    __test__ = False  # not a pytest test class

    name: str
    models: tuple[str, ...]
    h: int
    statistic: float
    pvalue: float
    nobs: int
    null: str
    method: str
    notes: tuple[str, ...]
    # Kept on the object, not written to the JSON (its keys are fixed):
    alternative: str = field(default="", metadata=json_key(skip=True))
    df: tuple[float, ...] = field(default=(), metadata=json_key(skip=True))


@dataclass(frozen=True)
class TrackRecord:
    """Accuracy rows and tests."""

    accuracy: tuple[AccuracyRow, ...]
    tests: tuple[TestRow, ...]


def error_matrix(forecast: np.ndarray, outcomes: np.ndarray) -> np.ndarray:
    """origins x horizons errors (actual - forecast), NaN where either is missing."""
    return outcomes - forecast


def forecasters(panel: Panel, combination: Combination) -> dict[str, np.ndarray]:
    """Every forecaster scored: the models, the combination and the two benchmarks (whose
    names no model may take: ``inputs.BENCHMARK_NAMES``, refused when the forecasts are read)."""
    own = dict(
        zip(
            BENCHMARK_NAMES,
            (
                combination.combined,
                benchmarks.no_change(panel),
                benchmarks.autoregression(panel),
            ),
            strict=True,
        )
    )
    assert not own.keys() & set(panel.models), "a model has a benchmark's name"
    return {**dict(zip(panel.models, panel.forecasts, strict=True)), **own}


def _accuracy(errors: dict[str, np.ndarray], horizons: int) -> list[AccuracyRow]:
    rows: list[AccuracyRow] = []
    for name, e in errors.items():
        for h in range(horizons + 1):
            sample = e[:, h][np.isfinite(e[:, h])]
            if sample.size == 0:
                continue
            rows.append(
                AccuracyRow(
                    model=name,
                    h=h,
                    n=int(sample.size),
                    mae=float(np.mean(np.abs(sample))),
                    rmse=float(np.sqrt(np.mean(sample**2))),
                    mean_error=float(np.mean(sample)),
                )
            )
    return rows


def _row(name: str, models: tuple[str, ...], h: int, result: stats.TestResult) -> TestRow:
    return TestRow(
        name=name,
        models=models,
        h=h,
        statistic=result.statistic,
        pvalue=result.pvalue,
        nobs=result.nobs,
        null=result.null,
        method=result.method,
        notes=result.notes,
        alternative=result.alternative,
        df=tuple(result.df),
    )


def _common(*columns: np.ndarray) -> np.ndarray:
    return np.all(np.isfinite(np.column_stack(columns)), axis=1)


def _enough(keep: np.ndarray, minimum: int) -> bool:
    """Enough common rows to put a test in the record. Whether the test may speak at that
    many rows and steps is its own decision: it declines with a note when the rows hold too
    few independent outcomes (:func:`riskreport.forecasts.fixed_smoothing.smoothing`)."""
    return int(keep.sum()) >= minimum


# The version of each two-forecast test the brief prints: the one that holds its size at the
# T and h it meets (bench/size.py; the HLN version over-rejects with overlapping errors).
VERSION: stats.Version = "fixed-smoothing"


def _tests(errors: dict[str, np.ndarray], current: list[list[str]], horizons: int) -> list[TestRow]:
    from riskreport.forecasts import stats

    rows: list[TestRow] = []
    for h in range(horizons + 1):
        steps = steps_ahead(h)
        comb, naive = errors["combination"][:, h], errors["no-change"][:, h]
        for model in current[h]:
            e = errors[model][:, h]
            for other, e_other in (("combination", comb), ("no-change", naive)):
                keep = _common(e, e_other)
                if _enough(keep, MIN_TEST_ROWS):
                    result = stats.diebold_mariano(e[keep], e_other[keep], h=steps, version=VERSION)
                    rows.append(_row("diebold-mariano", (model, other), h, result))
            keep = _common(comb, e)
            if _enough(keep, MIN_TEST_ROWS):
                result = stats.encompassing(comb[keep], e[keep], h=steps, version=VERSION)
                rows.append(_row("encompassing", ("combination", model), h, result))
        keep = _common(comb, naive)
        if _enough(keep, MIN_TEST_ROWS):
            result = stats.diebold_mariano(comb[keep], naive[keep], h=steps, version=VERSION)
            rows.append(_row("diebold-mariano", ("combination", "no-change"), h, result))
        if len(current[h]) >= 2:
            matrix = np.column_stack([errors[m][:, h] for m in current[h]])
            keep = _common(matrix)
            if _enough(keep, max(MIN_TEST_ROWS, len(current[h]) + 2)):
                result = stats.mariano_preve(matrix[keep], h=steps)
                rows.append(_row("mariano-preve", tuple(current[h]), h, result))
    return rows


def evaluate(panel: Panel, combination: Combination, window: int, horizons: int) -> TrackRecord:
    """Accuracy of every forecaster and the tests, over the combination's error window.

    Each forecaster is scored on the origins of that window where it has a forecast; each
    test uses the rows its forecasters share.
    """
    combined_errors = error_matrix(combination.combined, panel.outcomes)
    mask = window_mask(combined_errors, window)
    errors = {
        name: np.where(mask, error_matrix(f, panel.outcomes), np.nan)
        for name, f in forecasters(panel, combination).items()
    }
    current = [
        [m for k, m in enumerate(panel.models) if combination.included[k, h]]
        for h in range(horizons + 1)
    ]
    return TrackRecord(tuple(_accuracy(errors, horizons)), tuple(_tests(errors, current, horizons)))
