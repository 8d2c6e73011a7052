"""The assessment: every number of a brief in one typed, frozen object.

:meth:`Assessment.to_json` gives the contract's JSON; it holds no wall-clock time, so the
same inputs give byte-identical JSON.
"""

from __future__ import annotations

import dataclasses
import json
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from riskreport.files.serialise import Layout, json_key, plain
from riskreport.forecasts.track_record import OwnNames

if TYPE_CHECKING:  # annotations only: the records live with the steps that make them
    from riskreport.forecasts.stats import TestResult
    from riskreport.forecasts.track_record import AccuracyRow
    from riskreport.laws.annual import AnnualResult
    from riskreport.laws.density import DensityCurve
    from riskreport.laws.judgement import AppliedJudgement
    from riskreport.laws.sensitivity import SensitivityRow
    from riskreport.laws.thresholds import ThresholdResult
    from riskreport.reading.screening import ModelStatus
    from riskreport.replay.adjustments import Adjustments
    from riskreport.replay.calibration import CalibrationRecord
    from riskreport.replay.situations import SituationRow
    from riskreport.rounds.attribution import AttributionRow, LeaveOneOut, ModelForecast
    from riskreport.rounds.change import ChangeRecord
    from riskreport.rounds.history import RoundPoint, YearPoint


ACCURACY_TEST_KEYS: Layout = (
    "name",
    "models",
    ("h", "horizon"),
    "statistic",
    "pvalue",
    "nobs",
    "null",
    "method",
    "notes",
)
"""The JSON keys of a comparative test of the track record (``tests``), in order: the
horizon index as ``h`` (:attr:`TestResult.horizon`); ``alternative`` and ``df`` stay on the
object."""


@dataclass(frozen=True)
class ScheduledBand:
    """A band of the target's schedule, in force from the period ``start`` on."""

    start: str = field(metadata=json_key(name="from"))
    lower: float
    upper: float
    midpoint: float | None = field(metadata=json_key(omit_none=True))
    tolerance: float | None = field(metadata=json_key(omit_none=True))


@dataclass(frozen=True)
class TargetRecord:
    """The target: its band (midpoint and tolerance where it was given so), the measure it is
    defined on (``basis``), its edges and the schedule of later bands."""

    lower: float
    upper: float
    midpoint: float | None = field(metadata=json_key(omit_none=True))
    tolerance: float | None = field(metadata=json_key(omit_none=True))
    basis: str
    edges: str
    schedule: tuple[ScheduledBand, ...]


@dataclass(frozen=True)
class FamilySource:
    """The error distribution's family at one horizon and where its errors came from."""

    h: int
    family: str
    source: str


@dataclass(frozen=True)
class PoolWeight:
    """One candidate's weight in the optimal prediction pool."""

    candidate: str
    weight: float


@dataclass(frozen=True)
class PoolRecord:
    """The optimal prediction pool (``distribution = "auto"`` and/or ``spread = "auto"``) as
    used today.

    ``weights`` are today's (shrunk toward the first candidate: the configured family, or
    the normal law, under a constant spread), ``optimal`` the weights that maximise the past
    log score, ``prior_share`` the first candidate's prior share in today's
    weights and ``effective_outcomes`` the record's effective number of scored outcomes
    (the JSON writes each weight list as one object, candidate -> weight). With
    ``centre = "auto"`` the pool is nested (the uncorrected laws' pool and the corrected
    laws' pools, pooled): ``prior_share`` is then that of the uncorrected laws' pool and
    ``correction_prior_share`` the uncorrected pool's share in the pool of pools from
    shrinkage (None otherwise).
    """

    weights: tuple[PoolWeight, ...] = field(metadata=json_key(keyed=("candidate", "weight")))
    optimal: tuple[PoolWeight, ...] = field(metadata=json_key(keyed=("candidate", "weight")))
    prior_share: float
    effective_outcomes: float
    correction_prior_share: float | None = None


@dataclass(frozen=True)
class FamilyScore:
    """One family's total of per-horizon mean log scores in the replay."""

    family: str
    total_log_score: float


@dataclass(frozen=True)
class SelectionRecord:
    """The automatic choice of family: chosen, runner-up and each family's total log score
    (written to the JSON as one object, family -> total)."""

    chosen: str
    runner_up: str | None
    total_log_score: tuple[FamilyScore, ...] = field(
        metadata=json_key(keyed=("family", "total_log_score"))
    )

    def score(self, family: str) -> float:
        """The total log score of ``family``."""
        for row in self.total_log_score:
            if row.family == family:
                return row.total_log_score
        raise KeyError(f"family: no score for {family!r}")


@dataclass(frozen=True)
class UncertaintyRecord:
    """How the error distributions were built (the ``[uncertainty]`` settings used)."""

    distribution: str
    families: tuple[FamilySource, ...]
    window: int
    centre: str
    monotone: bool
    min_errors: int
    bootstrap_replicates: int
    interval_level: float
    simulations: int
    seed: int
    verbal_scale: str
    selection: SelectionRecord | None = field(metadata=json_key(omit_none=True))
    pool: PoolRecord | None = field(default=None, metadata=json_key(omit_none=True))


@dataclass(frozen=True)
class Quantiles:
    """The outcome's quantiles at the levels :data:`riskreport.laws.probabilities.QUANTILE_LEVELS`.

    Each level is a named field (``q05`` is the 5% quantile); the JSON keys are the levels
    as written there (``"0.05"``, ``"0.1"``, ...).
    """

    q05: float = field(metadata=json_key(name="0.05"))
    q10: float = field(metadata=json_key(name="0.1"))
    q25: float = field(metadata=json_key(name="0.25"))
    q50: float = field(metadata=json_key(name="0.5"))
    q75: float = field(metadata=json_key(name="0.75"))
    q90: float = field(metadata=json_key(name="0.9"))
    q95: float = field(metadata=json_key(name="0.95"))

    @classmethod
    def keys(cls) -> tuple[str, ...]:
        """The levels as written in the JSON, lowest first: ``("0.05", ..., "0.95")``."""
        return tuple(f.metadata["json"][0] for f in dataclasses.fields(cls))

    @classmethod
    def levels(cls) -> tuple[float, ...]:
        """The levels as probabilities, lowest first."""
        return tuple(float(k) for k in cls.keys())

    @classmethod
    def of(cls, values: Iterable[float]) -> Quantiles:
        """The quantiles from their values at :meth:`levels`, in that order."""
        given = tuple(float(v) for v in values)
        if len(given) != len(cls.keys()):
            raise ValueError(f"values: expected {len(cls.keys())} quantiles, got {len(given)}")
        return cls(*given)

    def items(self) -> tuple[tuple[str, float], ...]:
        """(level as in the JSON, value) pairs, lowest level first."""
        return tuple(zip(self.keys(), dataclasses.astuple(self), strict=True))

    @property
    def range_50(self) -> tuple[float, float]:
        """The central 50% range (25% and 75% quantiles)."""
        return self.q25, self.q75

    @property
    def range_80(self) -> tuple[float, float]:
        """The central 80% range (10% and 90% quantiles)."""
        return self.q10, self.q90

    @property
    def range_90(self) -> tuple[float, float]:
        """The central 90% range (5% and 95% quantiles)."""
        return self.q05, self.q95


@dataclass(frozen=True)
class HorizonResult:
    """Probabilities and quantiles for one reported period."""

    period: str
    h: int
    band: tuple[float, float]
    centre: float
    point_forecast: float
    p_below: float
    p_inside: float
    p_above: float
    p_inside_interval: tuple[float, float]
    quantiles: Quantiles
    distribution: str
    n_errors: int | None  # None where the error distribution is given (error_quantiles)
    spread: float  # standard deviation of the outcome distribution (distributions.spread)
    percentiles: tuple[float, ...]


@dataclass(frozen=True)
class BasisResult:
    """Band probabilities on the measure the target is defined on (``[target] basis``).

    Attributes
    ----------
    basis
        ``period``, ``calendar-year-average`` or ``year-end``.
    label
        What the probabilities are of, as printed: ``2028-Q2``, ``2028 average`` or
        ``2028 year end``.
    period
        The period whose band applies (for a year: its last period).
    year
        The calendar year (None on the ``period`` basis).
    p_inside_interval
        The 90% bootstrap interval of P(inside), where one is computed (per period only).
    observed_periods, simulated_periods
        Periods of the year entering as known outcomes and as simulated values.
    """

    basis: str
    label: str
    period: str
    year: int | None
    band: tuple[float, float]
    p_below: float
    p_inside: float
    p_above: float
    p_inside_interval: tuple[float, float] | None
    observed_periods: int
    simulated_periods: int


@dataclass(frozen=True)
class PathResult:
    """Joint probabilities from the first reported period up to this one."""

    period: str
    h: int
    p_inside_throughout: float
    p_back_inside_by: float


@dataclass(frozen=True)
class ScenarioHorizon:
    """Band probabilities of one scenario at one reported period."""

    period: str
    h: int
    centre: float
    p_below: float
    p_inside: float
    p_above: float


@dataclass(frozen=True)
class ScenarioResult:
    """One named scenario: its reasons and its probabilities per reported period."""

    name: str
    reasons: tuple[str, ...]
    horizons: tuple[ScenarioHorizon, ...]


@dataclass(frozen=True)
class WeightRow:
    """One model's weight at one horizon in the current round."""

    h: int
    model: str
    weight: float


@dataclass(frozen=True)
class InterceptRow:
    """The intercept of the ``ols`` combination at one horizon."""

    h: int
    intercept: float


@dataclass(frozen=True)
class RowCount:
    """How many past rounds the combination's weights at one horizon were estimated from."""

    h: int
    n: int


@dataclass(frozen=True)
class CombinationRecord:
    """How the forecasts were combined in the current round."""

    method: str
    window: int | None
    shrinkage: float | None
    weights: tuple[WeightRow, ...]
    intercepts: tuple[InterceptRow, ...]
    rows: tuple[RowCount, ...]


@dataclass(frozen=True)
class InputRecord:
    """An input file: name (relative to the config), SHA-256, rows, and period range."""

    role: str
    path: str
    sha256: str
    rows: int | None
    first_period: str | None
    last_period: str | None


@dataclass(frozen=True)
class SoftwareVersions:
    """Versions of Python and of the libraries a brief was computed with ("not installed"
    where one is missing)."""

    python: str
    riskreport: str
    numpy: str
    scipy: str
    pandas: str
    statsmodels: str
    matplotlib: str
    jinja2: str
    weasyprint: str

    def items(self) -> tuple[tuple[str, str], ...]:
        """(name, version) pairs in the JSON's order."""
        return tuple((f.name, getattr(self, f.name)) for f in dataclasses.fields(self))


@dataclass(frozen=True)
class Observation:
    """One outcome of the history shown in the outlook chart."""

    period: str
    value: float


@dataclass(frozen=True)
class PastError:
    """One past miss of the combined forecast, outcome minus forecast (pp), by the round
    that made it (the annex's chart of past errors over time)."""

    origin: str
    period: str
    h: int
    error: float


@dataclass(frozen=True)
class Assessment:
    """All numbers of one brief. Build it with :func:`riskreport.assess`."""

    as_of: str
    frequency: str
    title: str
    institution: str
    target: TargetRecord
    policy_horizon: int
    headline: BasisResult
    basis_results: tuple[BasisResult, ...]
    horizons: tuple[HorizonResult, ...]
    model_based_horizons: tuple[HorizonResult, ...]
    judgement: tuple[AppliedJudgement, ...]
    scenarios: tuple[ScenarioResult, ...]
    path: tuple[PathResult, ...]
    annual: tuple[AnnualResult, ...]
    combination: CombinationRecord
    models: tuple[ModelStatus, ...]
    accuracy: tuple[AccuracyRow, ...]
    tests: tuple[TestResult, ...] = field(metadata=json_key(layout=ACCURACY_TEST_KEYS))
    calibration: CalibrationRecord
    uncertainty: UncertaintyRecord
    history: tuple[Observation, ...]
    change: ChangeRecord | None
    inputs: tuple[InputRecord, ...]
    software: SoftwareVersions
    warnings: tuple[str, ...]
    adjustments: Adjustments | None = None
    thresholds: tuple[ThresholdResult, ...] = ()
    density: tuple[DensityCurve, ...] = ()
    round_history: tuple[RoundPoint, ...] = ()
    year_history: tuple[YearPoint, ...] = ()
    score_against: str | None = None  # "latest" | "first-release"; None: one vintage only
    # The names of the tool's own forecasters in `accuracy` and `tests` (renamed where a
    # model took one); the JSON's warnings say so when they differ from the usual ones.
    own_names: OwnNames = field(default=OwnNames(), metadata=json_key(skip=True))
    model_forecasts: tuple[ModelForecast, ...] = ()
    sensitivity_to_centre: tuple[SensitivityRow, ...] = ()
    record_by_situation: tuple[SituationRow, ...] = ()
    attribution: tuple[AttributionRow, ...] = ()
    leave_one_out: tuple[LeaveOneOut, ...] = ()
    past_errors: tuple[PastError, ...] = ()  # at the first horizon and the policy horizon

    def horizon_result(self, h: int, *, model_based: bool = False) -> HorizonResult:
        """The result at horizon ``h`` (after judgement unless ``model_based``)."""
        rows = self.model_based_horizons if model_based else self.horizons
        for row in rows:
            if row.h == h:
                return row
        raise KeyError(f"h: no reported horizon {h}")

    @property
    def policy(self) -> HorizonResult:
        """The final result at the policy horizon."""
        return self.horizon_result(self.policy_horizon)

    def to_dict(self) -> dict[str, Any]:
        """The contract's JSON structure, as plain Python values."""
        result: dict[str, Any] = plain(self)
        return result

    def to_json(self) -> str:
        """The assessment as JSON text (UTF-8, sorted nowhere, stable for identical inputs)."""
        return json.dumps(self.to_dict(), indent=2, ensure_ascii=False, allow_nan=False) + "\n"
