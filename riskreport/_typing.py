"""Option strings of the configuration, as Literal aliases (one vocabulary).

The tuples of allowed values are read off the aliases, so each list is written once.
"""

from __future__ import annotations

from typing import Literal, get_args

Frequency = Literal["monthly", "quarterly"]
Basis = Literal["period", "calendar-year-average", "year-end"]
Centre = Literal["estimated", "forecast", "auto"]
Family = Literal["normal", "two-piece-normal", "skew-normal", "empirical"]
SpreadKind = Literal["constant", "ewma", "joint", "revisions"]
SpreadChoice = Literal["constant", "ewma", "joint", "revisions", "auto"]
WindowChoice = Literal["fixed", "auto"]
RecalibrationMethod = Literal["tracking", "beta"]
Predictive = Literal["student-t", "plug-in"]
DistributionChoice = Literal[
    "normal", "two-piece-normal", "skew-normal", "empirical", "auto", "best-past-score"
]
CombinationMethod = Literal[
    "equal",
    "median",
    "trimmed",
    "inverse-mse",
    "rank",
    "ols",
    "ols-sum-to-one",
    "ols-nonnegative",
    "shrink",
    "given",
]
OutputFormat = Literal["pdf", "html", "json", "csv", "xlsx", "png", "slides"]
ScoreAgainst = Literal["latest", "first-release"]

FREQUENCIES: tuple[Frequency, ...] = get_args(Frequency)
BASES: tuple[Basis, ...] = get_args(Basis)
CENTRES: tuple[Centre, ...] = get_args(Centre)
DISTRIBUTION_CHOICES: tuple[DistributionChoice, ...] = get_args(DistributionChoice)
COMBINATION_METHODS: tuple[CombinationMethod, ...] = get_args(CombinationMethod)
OUTPUT_FORMATS: tuple[OutputFormat, ...] = get_args(OutputFormat)
FAMILIES: tuple[Family, ...] = get_args(Family)
# The families the EWMA (time-varying) and joint spreads are offered with: their replay
# stays batched.
EWMA_FAMILIES: tuple[Family, ...] = ("normal", "two-piece-normal")
SPREAD_CHOICES: tuple[SpreadChoice, ...] = get_args(SpreadChoice)
WINDOW_CHOICES: tuple[WindowChoice, ...] = get_args(WindowChoice)
RECALIBRATION_METHODS: tuple[RecalibrationMethod, ...] = get_args(RecalibrationMethod)
PREDICTIVES: tuple[Predictive, ...] = get_args(Predictive)
SCORE_AGAINST: tuple[ScoreAgainst, ...] = get_args(ScoreAgainst)
