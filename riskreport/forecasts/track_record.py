"""The track record: past errors per horizon as known at the current origin, accuracy of
every forecaster and the comparative tests.

Errors are e(o, h) = actual(o + h) - forecast(o, o + h); only outcomes known at ``as_of``
enter (the panel holds no later outcome). A forecast of horizon h made at origin o uses
data up to o - 1, so it is an (h + 1)-step forecast: its errors overlap over h periods and
the tests use h lags (``stats`` functions take ``panel.steps_ahead(h)`` = h + 1 steps).
"""

from __future__ import annotations

import dataclasses
import itertools
import warnings
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from riskreport.errors import NameClashWarning
from riskreport.forecasts import benchmarks
from riskreport.forecasts.combination import Combination
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
class OwnNames:
    """The names of the track record's own forecasters, scored beside the models.

    A model of the forecasts file may have any name: where one takes a name used here
    (ignoring case), :func:`own_names` renames the tool's own forecaster and says so.
    """

    combination: str = "combination"
    no_change: str = "no-change"
    autoregression: str = "autoregression"


def own_names(models: tuple[str, ...] | list[str]) -> OwnNames:
    """The names of the tool's own forecasters, none equal (ignoring case) to a model's.

    A clash renames the tool's forecaster (``"no-change (riskreport)"``, then with a number)
    with a :class:`~riskreport.errors.NameClashWarning`; the model keeps its name.

    Examples
    --------
    >>> import warnings
    >>> with warnings.catch_warnings():
    ...     warnings.simplefilter("ignore")
    ...     own_names(["bvar", "No-Change"]).no_change
    'no-change (riskreport)'
    >>> own_names(["bvar"]) == OwnNames()
    True
    """
    taken = {m.casefold() for m in models}
    names: dict[str, str] = {}
    for role, usual in dataclasses.asdict(OwnNames()).items():
        candidates = (
            usual if i == 0 else f"{usual} (riskreport{f' {i}' if i > 1 else ''})"
            for i in itertools.count()
        )
        name = next(c for c in candidates if c.casefold() not in taken)
        if name != usual:
            warnings.warn(
                f"A model of the forecasts is named {usual!r}, like the track record's own "
                f"forecaster; the tool's own is reported as {name!r}.",
                NameClashWarning,
                stacklevel=2,
            )
        taken.add(name.casefold())
        names[role] = name
    return OwnNames(**names)


@dataclass(frozen=True)
class TrackRecord:
    """Accuracy rows and tests, and the names the tool's own forecasters have in them."""

    accuracy: tuple[AccuracyRow, ...]
    tests: tuple[stats.TestResult, ...]  # labelled with their name and models
    names: OwnNames = OwnNames()


def error_matrix(forecast: np.ndarray, outcomes: np.ndarray) -> np.ndarray:
    """origins x horizons errors (actual - forecast), NaN where either is missing."""
    return outcomes - forecast


def forecasters(
    panel: Panel, combination: Combination, names: OwnNames = OwnNames()
) -> dict[str, np.ndarray]:
    """Every forecaster scored: the models, the combination and the two benchmarks, under
    ``names`` (from :func:`own_names`, so no model is replaced by the tool's own)."""
    own = {
        names.combination: combination.combined,
        names.no_change: benchmarks.no_change(panel),
        names.autoregression: benchmarks.autoregression(panel),
    }
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


def _tests(
    errors: dict[str, np.ndarray],
    current: list[list[str]],
    horizons: int,
    names: OwnNames = OwnNames(),
) -> list[stats.TestResult]:
    from riskreport.forecasts import stats

    combined, no_change = names.combination, names.no_change
    rows: list[stats.TestResult] = []
    for h in range(horizons + 1):
        steps = steps_ahead(h)
        comb, naive = errors[combined][:, h], errors[no_change][:, h]
        for model in current[h]:
            e = errors[model][:, h]
            for other, e_other in ((combined, comb), (no_change, naive)):
                keep = _common(e, e_other)
                if _enough(keep, MIN_TEST_ROWS):
                    result = stats.diebold_mariano(e[keep], e_other[keep], h=steps, version=VERSION)
                    rows.append(result.labelled("diebold-mariano", (model, other)))
            keep = _common(comb, e)
            if _enough(keep, MIN_TEST_ROWS):
                result = stats.encompassing(comb[keep], e[keep], h=steps, version=VERSION)
                rows.append(result.labelled("encompassing", (combined, model)))
        keep = _common(comb, naive)
        if _enough(keep, MIN_TEST_ROWS):
            result = stats.diebold_mariano(comb[keep], naive[keep], h=steps, version=VERSION)
            rows.append(result.labelled("diebold-mariano", (combined, no_change)))
        if len(current[h]) >= 2:
            matrix = np.column_stack([errors[m][:, h] for m in current[h]])
            keep = _common(matrix)
            if _enough(keep, max(MIN_TEST_ROWS, len(current[h]) + 2)):
                result = stats.mariano_preve(matrix[keep], h=steps)
                rows.append(result.labelled("mariano-preve", tuple(current[h])))
    return rows


def evaluate(panel: Panel, combination: Combination, window: int, horizons: int) -> TrackRecord:
    """Accuracy of every forecaster and the tests, over the combination's error window.

    Each forecaster is scored on the origins of that window where it has a forecast; each
    test uses the rows its forecasters share.
    """
    combined_errors = error_matrix(combination.combined, panel.outcomes)
    mask = window_mask(combined_errors, window)
    names = own_names(panel.models)
    errors = {
        name: np.where(mask, error_matrix(f, panel.outcomes), np.nan)
        for name, f in forecasters(panel, combination, names).items()
    }
    current = [
        [m for k, m in enumerate(panel.models) if combination.included[k, h]]
        for h in range(horizons + 1)
    ]
    return TrackRecord(
        tuple(_accuracy(errors, horizons)), tuple(_tests(errors, current, horizons, names)), names
    )
