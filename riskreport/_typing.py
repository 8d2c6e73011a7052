"""Option strings of the configuration, as Literal aliases (one vocabulary)."""

from __future__ import annotations

from typing import Literal

Frequency = Literal["monthly", "quarterly"]
Basis = Literal["period", "calendar-year-average", "year-end"]
Centre = Literal["estimated", "forecast"]
Family = Literal["normal", "two-piece-normal", "skew-normal", "empirical"]
DistributionChoice = Literal["normal", "two-piece-normal", "skew-normal", "empirical", "auto"]
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
OutputFormat = Literal["pdf", "html", "json", "csv"]

FREQUENCIES: tuple[Frequency, ...] = ("monthly", "quarterly")
BASES: tuple[Basis, ...] = ("period", "calendar-year-average", "year-end")
CENTRES: tuple[Centre, ...] = ("estimated", "forecast")
DISTRIBUTION_CHOICES: tuple[DistributionChoice, ...] = (
    "normal",
    "two-piece-normal",
    "skew-normal",
    "empirical",
    "auto",
)
COMBINATION_METHODS: tuple[CombinationMethod, ...] = (
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
)
OUTPUT_FORMATS: tuple[OutputFormat, ...] = ("pdf", "html", "json", "csv")
