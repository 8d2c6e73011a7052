"""Would our past probability statements have held? A pseudo-real-time replay of the method.

At every past origin o with enough history, each family is fitted to the combined
forecast's errors whose outcome came before o (the last ``window`` of them; the combined
forecast itself uses weights from that past only), and the outcome that followed scores it:
its PIT, the band probabilities it implied, its log score and CRPS. All origins of a
horizon are fitted at once. The staff judgement and the monotone-spread rule are not
replayed (past judgements are not on record); the replay judges the model-based method.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import stats as st

from riskreport._typing import Family, Frequency
from riskreport.files.serialise import Layout, json_key
from riskreport.forecasts import pit_tests, stats
from riskreport.laws.distributions import FAMILIES, fit_batch
from riskreport.laws.predictive import student
from riskreport.reading.config import Band
from riskreport.reading.panel import Panel, steps_ahead
from riskreport.replay import scores

MIN_TRAINING = 20  # fewest past errors a replayed fit may rest on (common practice, no source)
NOMINAL = (0.5, 0.9)
PIT_BINS = 10
CHUNK = 128  # origins fitted at once in the replay
PAD = 32  # training samples are NaN padded to a multiple of this many columns


@dataclass(frozen=True)
class CoverageResult:
    """How often the central range of ``nominal`` probability held at horizon h."""

    h: int
    nominal: float
    observed: float
    n: int


@dataclass(frozen=True)
class PitGroup:
    """PIT histogram of a group of horizons and its chi-square distance from the uniform.

    ``chi2`` describes how far the counts are from flat; it is not a test and carries no
    p-value: the PITs of a group are pooled over horizons and overlap, so no reference
    distribution holds (simulated under a true null, the textbook p-value rejected 44-98% of
    the time; bench/size.py).
    """

    h_from: int
    h_to: int
    counts: tuple[int, ...]
    n: int
    chi2: float
    note: str


@dataclass(frozen=True)
class BrierRow:
    """The Brier score of P(inside) at one horizon and its decomposition."""

    h: int
    brier: float
    reliability: float
    resolution: float
    uncertainty: float
    within_bin: float
    n: int


@dataclass(frozen=True)
class ReliabilityBin:
    """One bin of the reliability diagram: stated probabilities against frequencies."""

    bin: tuple[float, float]
    forecast_mean: float
    observed_frequency: float
    n: int


@dataclass(frozen=True)
class BrierRecord:
    """Brier scores by horizon and the reliability table over all horizons."""

    by_horizon: tuple[BrierRow, ...]
    reliability: tuple[ReliabilityBin, ...]


@dataclass(frozen=True)
class RpsRow:
    """The ranked probability score of the three categories at one horizon, with skill
    against climatology."""

    h: int
    rps: float
    rps_climatology: float
    skill: float
    n: int


@dataclass(frozen=True)
class RpsRecord:
    """Ranked probability scores by horizon, with the categories and convention used."""

    by_horizon: tuple[RpsRow, ...]
    categories: tuple[str, ...]
    convention: str


CALIBRATION_TEST_KEYS: Layout = (
    "name",
    ("h", "horizon"),
    "statistic",
    "pvalue",
    "nobs",
    "null",
    "method",
    "df",
    "notes",
)
"""The JSON keys of a calibration test (``calibration.tests``), in order."""


@dataclass(frozen=True)
class FamilyScore:
    """Mean log score and CRPS of one family's replay at one horizon."""

    distribution: str
    h: int
    log_score: float
    crps: float
    n: int


@dataclass(frozen=True)
class CalibrationRecord:
    """The calibration record of the graded family plus the scores of every family."""

    distribution: str
    coverage: tuple[CoverageResult, ...]
    pit: tuple[PitGroup, ...]
    brier: BrierRecord
    rps: RpsRecord
    tests: tuple[stats.TestResult, ...] = field(metadata=json_key(layout=CALIBRATION_TEST_KEYS))
    scores: tuple[FamilyScore, ...]


HORIZON_GROUPS: dict[Frequency, tuple[tuple[int, int], ...]] = {
    "monthly": ((0, 2), (3, 5), (6, 11), (12, 17), (18, 24)),
    "quarterly": ((0, 0), (1, 2), (3, 4), (5, 8)),
}


@dataclass(frozen=True)
class HorizonReplay:
    """One family at one horizon, over its evaluation origins (arrays in origin order)."""

    family: str
    h: int
    origins: np.ndarray
    pit: np.ndarray
    probabilities: np.ndarray  # n x 3: below, inside, above
    category: np.ndarray  # 0 below, 1 inside, 2 above
    climatology: np.ndarray  # n x 3 historical frequencies known at each origin
    log_score: np.ndarray
    crps: np.ndarray


def training(
    errors: np.ndarray, h: int, window: int, *, values: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Evaluation origins, their training samples (NaN padded) and test errors at horizon h.

    e(o', h) may train the fit at origin j only if its outcome period o' + h came before j.
    ``values`` (same shape as ``errors``), when given, fills the training samples instead of
    the errors themselves (the standardised errors of a time-varying spread), on the same
    origins and windows.
    """
    column = errors[:, h]
    source = column if values is None else values[:, h]
    known = np.flatnonzero(np.isfinite(column))
    # Position of the last usable training error for each candidate origin.
    usable = np.searchsorted(known, known - h - 1, side="right")
    keep = usable >= MIN_TRAINING
    tests, ends = known[keep], usable[keep]
    # The padding is rounded up to PAD columns: sums over a padded row may differ in the
    # last bits with its width, so a width that stays put as the history grows lets later
    # rounds reuse the replayed origins of earlier ones (riskreport.replay.cache).
    longest = -(-int(ends.max(initial=0)) // PAD) * PAD
    width = min(window, longest) if window > 0 else longest
    matrix = np.full((tests.size, max(width, 1)), np.nan)
    for row, end in enumerate(ends):
        start = max(0, end - width)
        sample = source[known[start:end]]
        matrix[row, : sample.size] = sample
    return tests, matrix, column[tests]


def _climatology(
    panel: Panel, tests: np.ndarray, h: int, band_for: Callable[[int], Band]
) -> np.ndarray:
    """Frequencies of below / inside / above among the outcomes known at each origin.

    Cumulative counts per distinct band, so the cost is linear in the history.
    """
    series = panel.series
    known = np.isfinite(series)
    cum_known = np.concatenate([[0], np.cumsum(known)])
    ends = np.clip(panel.origins[tests] - panel.series_start, 0, series.size)
    bands = [band_for(int(panel.origins[j]) + h) for j in tests]
    out = np.full((tests.size, 3), 1 / 3)
    for band in set(bands):
        rows = np.array([i for i, b in enumerate(bands) if b == band])
        with np.errstate(invalid="ignore"):
            below = np.concatenate([[0], np.cumsum(known & (series < band.lower))])
            above = np.concatenate([[0], np.cumsum(known & (series > band.upper))])
        n = cum_known[ends[rows]]
        has = n > 0
        b_share = np.where(has, below[ends[rows]] / np.maximum(n, 1), 1 / 3)
        a_share = np.where(has, above[ends[rows]] / np.maximum(n, 1), 1 / 3)
        out[rows] = np.column_stack([b_share, 1 - b_share - a_share, a_share])
    return out


@dataclass(frozen=True)
class HorizonData:
    """What every family's replay at one horizon shares: evaluation origins, training
    samples, test errors, band edges relative to the forecast, outcome categories and the
    climatological benchmark. Built once per horizon, not once per family."""

    h: int
    tests: np.ndarray
    train: np.ndarray
    test: np.ndarray
    lower: np.ndarray  # band edges minus the point forecast
    upper: np.ndarray
    category: np.ndarray
    climatology: np.ndarray


def horizon_data(
    panel: Panel,
    combined: np.ndarray,
    errors: np.ndarray,
    h: int,
    *,
    window: int,
    band_for: Callable[[int], Band],
) -> HorizonData | None:
    """The shared inputs of the replay at horizon h; None when no origin has enough history."""
    tests, train, test = training(errors, h, window)
    if tests.size == 0:
        return None
    bands = [band_for(int(panel.origins[j]) + h) for j in tests]
    point = combined[tests, h]
    low = np.array([b.lower for b in bands])
    high = np.array([b.upper for b in bands])
    # Classify the recorded outcome itself (point + error can miss an edge by rounding).
    outcome = panel.outcomes[tests, h]
    category = np.where(outcome < low, 0, np.where(outcome > high, 2, 1))
    return HorizonData(
        h,
        tests,
        train,
        test,
        low - point,
        high - point,
        category,
        _climatology(panel, tests, h, band_for),
    )


def replay_horizon(
    family: Family,
    data: HorizonData,
    *,
    mode: float | None,
    scale: np.ndarray | None = None,
    label: str | None = None,
    predictive: bool = False,
) -> HorizonReplay:
    """Replay one family at one horizon.

    With ``predictive``, the normal law is replayed as the Student t predictive each past
    round would have published (:mod:`riskreport.laws.predictive`: degrees of freedom from
    the effective size of that round's window at ``steps = h + 1``).

    With ``scale`` (one volatility per evaluation origin; ``data.train`` then holds
    standardised errors), the law at each origin is the fitted one times its volatility:
    PIT and band probabilities use the error divided by it, the log score subtracts its log
    and the CRPS is multiplied by it (both scores are equivariant under scaling).
    """
    if scale is not None:
        data = dataclasses.replace(
            data, test=data.test / scale, lower=data.lower / scale, upper=data.upper / scale
        )
    parts: list[tuple[np.ndarray, ...]] = []
    # Fixed-size chunks of origins keep the batched arrays in cache: cost stays linear.
    for start in range(0, data.tests.size, CHUNK):
        rows = slice(start, start + CHUNK)
        fitted: Any = fit_batch(family, data.train[rows], mode=mode)
        if predictive and family == "normal":
            fitted = student(fitted, steps_ahead(data.h), mode_fixed=mode is not None)
        f_lower = np.asarray(fitted.cdf(data.lower[rows]))
        f_upper = np.asarray(fitted.cdf(data.upper[rows]))
        parts.append(
            (
                np.column_stack([f_lower, f_upper - f_lower, 1 - f_upper]),
                np.asarray(fitted.cdf(data.test[rows])),
                np.asarray(fitted.logpdf(data.test[rows])),
                np.asarray(scores.crps(fitted, data.test[rows])),
            )
        )
    probabilities, pit, logs, crps = (np.concatenate(p) for p in zip(*parts, strict=True))
    if scale is not None:
        logs, crps = logs - np.log(scale), crps * scale
    return HorizonReplay(
        family=label or family,
        h=data.h,
        origins=data.tests,
        pit=np.clip(pit, 0.0, 1.0),
        probabilities=probabilities,
        category=data.category,
        climatology=data.climatology,
        log_score=np.where(np.isfinite(logs), logs, -50.0),  # an outcome the fit rules out
        crps=crps,
    )


def replay(
    panel: Panel,
    combined: np.ndarray,
    errors: np.ndarray,
    horizons: int,
    *,
    window: int,
    mode: float | None,
    band_for: Callable[[int], Band],
    families: tuple[Family, ...] = FAMILIES,
) -> dict[tuple[str, int], HorizonReplay]:
    """Replay every family at every horizon."""
    out: dict[tuple[str, int], HorizonReplay] = {}
    for h in range(horizons + 1):
        data = horizon_data(panel, combined, errors, h, window=window, band_for=band_for)
        if data is None:
            continue
        for family in families:
            out[(family, h)] = replay_horizon(family, data, mode=mode)
    return out


PIT_DESCRIPTION = (
    "Pearson chi-square distance of the counts from the uniform (Wallis 2003), a description "
    "only: the PITs are pooled over horizons and overlapping multi-step PITs are dependent, "
    "so it is not a test and has no p-value"
)


def _pit_groups(runs: list[HorizonReplay], frequency: Frequency) -> list[PitGroup]:
    groups = []
    for first, last in HORIZON_GROUPS[frequency]:
        pits = np.concatenate([r.pit for r in runs if first <= r.h <= last] or [np.empty(0)])
        if pits.size == 0:
            continue
        counts = np.histogram(pits, bins=PIT_BINS, range=(0, 1))[0]
        chi2 = st.chisquare(counts)
        groups.append(
            PitGroup(
                h_from=first,
                h_to=last,
                counts=tuple(int(c) for c in counts),
                n=int(pits.size),
                chi2=float(chi2.statistic),
                note=PIT_DESCRIPTION,
            )
        )
    return groups


MIN_TEST_ROUNDS = 12  # fewer replayed rounds make the calibration tests meaningless


def _reliability(runs: list[HorizonReplay], bins: int = 10) -> list[ReliabilityBin]:
    if not runs:  # too short a track record for any past origin to be replayed
        return []
    p = np.concatenate([r.probabilities[:, 1] for r in runs])
    o = np.concatenate([(r.category == 1).astype(float) for r in runs])
    which = np.minimum((p * bins).astype(int), bins - 1)
    table = []
    for k in range(bins):
        members = which == k
        if members.any():
            table.append(
                ReliabilityBin(
                    bin=(k / bins, (k + 1) / bins),
                    forecast_mean=float(p[members].mean()),
                    observed_frequency=float(o[members].mean()),
                    n=int(members.sum()),
                )
            )
    return table


def summarise(
    runs: dict[tuple[str, int], HorizonReplay], family: str, frequency: Frequency
) -> CalibrationRecord:
    """The calibration record of one family plus the scores of every family."""
    mine = sorted((r for (f, _), r in runs.items() if f == family), key=lambda r: r.h)
    coverage = tuple(
        CoverageResult(
            h=r.h,
            nominal=nominal,
            observed=float(np.mean(np.abs(r.pit - 0.5) <= nominal / 2)),
            n=int(r.pit.size),
        )
        for r in mine
        for nominal in NOMINAL
    )
    brier_rows: list[BrierRow] = []
    rps_rows: list[RpsRow] = []
    tests: list[stats.TestResult] = []
    for r in mine:
        d = scores.brier(r.probabilities[:, 1], (r.category == 1).astype(float))
        brier_rows.append(
            BrierRow(
                h=r.h,
                brier=d.brier,
                reliability=d.reliability,
                resolution=d.resolution,
                uncertainty=d.uncertainty,
                within_bin=d.within_bin,
                n=d.n,
            )
        )
        ours = float(np.mean(scores.rps(r.probabilities, r.category)))
        clim = float(np.mean(scores.rps(r.climatology, r.category)))
        rps_rows.append(
            RpsRow(
                h=r.h,
                rps=ours,
                rps_climatology=clim,
                skill=1 - ours / clim if clim > 0 else float("nan"),
                n=int(r.pit.size),
            )
        )
        if r.pit.size >= MIN_TEST_ROUNDS:
            if r.h == 0:
                tests.append(pit_tests.berkowitz(r.pit).labelled("berkowitz"))
            # Beyond one step the test holds its size or declines with a note (too few
            # independent outcomes among the overlapping PITs): the brief says so in words.
            result = pit_tests.knuppel(r.pit, h=steps_ahead(r.h), moments=2)
            tests.append(result.labelled("knuppel"))
    return CalibrationRecord(
        distribution=family,
        coverage=coverage,
        pit=tuple(_pit_groups(mine, frequency)),
        brier=BrierRecord(tuple(brier_rows), tuple(_reliability(mine))),
        rps=RpsRecord(
            by_horizon=tuple(rps_rows),
            categories=("below", "inside", "above"),
            convention="sum over the three categories of the squared differences of cumulative probabilities, not divided by the number of categories minus one",
        ),
        tests=tuple(tests),
        scores=tuple(
            FamilyScore(
                distribution=f,
                h=h,
                log_score=float(np.mean(r.log_score)),
                crps=float(np.mean(r.crps)),
                n=int(r.pit.size),
            )
            for (f, h), r in sorted(runs.items(), key=lambda item: (item[0][1], item[0][0]))
        ),
    )
