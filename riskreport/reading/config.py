"""The configuration of a brief as frozen dataclasses: one section per TOML table, the
method a config without ``[uncertainty]`` gets, and the bounds of every number.

Reading and validating the TOML file is :mod:`riskreport.reading.config_reader`.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any, TypeVar

from riskreport._typing import (
    Basis,
    Centre,
    CombinationMethod,
    DistributionChoice,
    Frequency,
    OutputFormat,
    Predictive,
    RecalibrationMethod,
    ScoreAgainst,
    SpreadChoice,
    WindowChoice,
)
from riskreport.errors import InputError
from riskreport.forecasts.combination import SHRINKAGE
from riskreport.reading import periods
from riskreport.reading.inputs import (
    FIRST_YEAR,
    LAST_YEAR,
    MAX_ABS_VALUE,
)

VERBAL_SCALES = ("ipcc-ar5", "icd-203", "efsa-2018")

# Upper bounds of the config's numbers (common practice, no source): far beyond any useful
# setting, low enough that a typing error cannot ask for hundreds of GiB or hours of work.
MAX_BOOTSTRAP_REPLICATES = 100_000
MAX_SIMULATIONS = 1_000_000
MAX_HORIZON_YEARS = 10  # horizons and policy_horizon: at most 10 years of periods
MAX_WINDOW_YEARS = LAST_YEAR - FIRST_YEAR  # windows and min_errors: the whole year range
MAX_SCALE = 100.0  # a judgement's spread multiplier
# Longest text of a key, in characters (common practice, no source): a title or a reason
# that long is a pasted file, and it would make a brief of dozens of pages.
MAX_TEXT = {"title": 200, "institution": 200, "reason": 2000}

T = TypeVar("T")

# The method a config without an [uncertainty] section gets: the one that held on real
# inflation histories (docs/method.md, "The default method and its evidence";
# bench/calibration.py): the normal law of the errors over about ten
# years of errors, its predictive a Student t that carries the uncertainty of the
# estimated spread, and its spread pooled (spread = "auto") over a constant spread and
# spreads that follow recent short-horizon errors, the weights learned from past scores
# and shrunk toward the constant spread: the time-varying spread earns its place
# prequentially (it gained 0.04-0.09 log score on three real histories and cost at most
# 0.001 on a simulated world where nothing changes). The centre pools the point forecast
# with bias-corrected forecasts (centre = "auto"), the correction shrunk toward none by the
# evidence of past scores: it took nearly all the weight on a world with a lasting bias
# and little or none on the real histories (docs/method.md, "The centre: a bias correction
# that earns its place"). Recalibration is offered but off: on the real histories it
# bought coverage with log score.
DEFAULT_METHOD: dict[str, str] = {
    "distribution": "normal",
    "spread": "auto",
    "centre": "auto",
    "predictive": "student-t",
}
# The default error window: about ten years' worth of rounds (120 monthly, 40 quarterly):
# long enough for a stable spread, short enough to forget an old regime (common practice,
# no source).
WINDOW_YEARS = 10
# The [uncertainty] keys that change the method (the others set simulation sizes).
METHOD_KEYS = frozenset(
    {
        "distribution",
        "window",
        "centre",
        "monotone",
        "spread",
        "window_choice",
        "recalibrate",
        "recalibration",
        "predictive",
        "min_errors",
    }
)


@dataclass(frozen=True)
class Band:
    """A target band; edges are inclusive (inside means lower <= x <= upper)."""

    lower: float
    upper: float
    midpoint: float | None = None
    tolerance: float | None = None


@dataclass(frozen=True)
class BandChange:
    """A scheduled band, in force from ``start`` (a period ordinal) on."""

    start: int
    band: Band


@dataclass(frozen=True)
class Judgement:
    """One staff judgement entry, applied to periods ``start..end`` (ordinals, inclusive).

    ``shift`` is added to the centre (pp), ``scale`` multiplies the spread, and ``skew`` adds
    this many percentage points to the mean minus the mode (> 0 tilts risk upwards).
    """

    start: int
    end: int
    shift: float
    scale: float
    skew: float
    reason: str
    label: str = "judgement"  # where it was written, e.g. "scenario 3", for error messages


@dataclass(frozen=True)
class BriefSection:
    """``[brief]``: what the brief is about and when it is made."""

    title: str
    institution: str
    as_of: int  # the round's origin, a period ordinal
    frequency: Frequency
    horizons: int
    policy_horizon: int
    verbal_scale: str
    density_horizons: tuple[int, ...] | None = None  # None: the policy horizon


@dataclass(frozen=True)
class InputsSection:
    """``[inputs]``: the forecast and outcome files (absolute paths) and their limits."""

    forecasts: Path
    actuals: Path
    error_quantiles: Path | None
    max_abs_value: float = MAX_ABS_VALUE
    score_against: ScoreAgainst = "latest"  # with a vintage column in the actuals


@dataclass(frozen=True)
class TargetSection:
    """``[target]``: the band, the measure it is defined on, its schedule and extra lines."""

    band: Band
    basis: Basis
    schedule: tuple[BandChange, ...]
    thresholds: tuple[float, ...] = ()


@dataclass(frozen=True)
class CombinationSection:
    """``[combination]``: the weighting method, its estimation window and shrinkage."""

    method: CombinationMethod
    window: int  # 0: every past origin
    shrinkage: float = SHRINKAGE


@dataclass(frozen=True)
class UncertaintySection:
    """``[uncertainty]``: the error law, its window and spread, and the simulation sizes."""

    distribution: DistributionChoice
    window: int  # the last ``window`` known errors of each horizon; 0: all
    centre: Centre
    monotone: bool
    min_errors: int
    bootstrap_replicates: int
    simulations: int
    seed: int
    spread: SpreadChoice = "auto"
    recalibrate: bool = False
    recalibration: RecalibrationMethod = "tracking"
    window_choice: WindowChoice = "fixed"  # "auto": the replay also chooses the window
    # "student-t": the normal law's predictive carries the uncertainty of its estimated
    # spread (laws/predictive.py); "plug-in": the fitted normal itself.
    predictive: Predictive = "plug-in"
    configured: tuple[str, ...] = ()  # the [uncertainty] keys the file sets (the rest: defaults)


@dataclass(frozen=True)
class OutputSection:
    """``[output]``: where the files go (absolute) and which formats."""

    directory: Path
    formats: tuple[OutputFormat, ...]


@dataclass(frozen=True)
class Config:
    """A validated configuration: one field per TOML table, so ``cfg.uncertainty.window``
    is ``[uncertainty] window``. Paths are absolute."""

    path: Path
    brief: BriefSection
    inputs: InputsSection
    target: TargetSection
    combination: CombinationSection
    uncertainty: UncertaintySection
    judgements: tuple[Judgement, ...]  # [[judgement]]
    scenarios: tuple[tuple[str, Judgement], ...]  # [[scenario]], by name
    output: OutputSection

    def band_for(self, ordinal: int) -> Band:
        """The band in force in a period (the latest schedule entry that has started)."""
        band = self.target.band
        for change in self.target.schedule:
            if change.start <= ordinal:
                band = change.band
        return band

    def replaced(self, section: str, **changes: Any) -> Config:
        """The same configuration with ``changes`` in one table, e.g.
        ``cfg.replaced("uncertainty", window=60)`` for ``[uncertainty] window = 60``."""
        return replace(self, **{section: replace(getattr(self, section), **changes)})

    def with_as_of(self, text: str) -> Config:
        """The same configuration with another current origin (``--as-of``)."""
        parsed = periods.parse(text)
        if parsed is None or parsed.frequency != self.brief.frequency:
            raise InputError(
                f"--as-of expected a {self.brief.frequency} period like "
                f"{periods.EXAMPLE[self.brief.frequency]}, got {text!r}"
            )
        if not FIRST_YEAR <= periods.year_of(parsed.ordinal, self.brief.frequency) <= LAST_YEAR:
            raise InputError(
                f"--as-of expected a period from {FIRST_YEAR} to {LAST_YEAR}, got {text!r}"
            )
        return self.replaced("brief", as_of=parsed.ordinal)


KNOWN_KEYS: dict[str, set[str]] = {
    "brief": {
        "title",
        "institution",
        "as_of",
        "frequency",
        "horizons",
        "policy_horizon",
        "verbal_scale",
        "density_horizons",
    },
    "inputs": {"forecasts", "actuals", "error_quantiles", "max_abs_value", "score_against"},
    "target": {"midpoint", "tolerance", "lower", "upper", "basis", "schedule", "thresholds"},
    "combination": {"method", "window", "shrinkage"},
    # the method's keys and the simulation sizes
    "uncertainty": set(METHOD_KEYS) | {"bootstrap_replicates", "simulations", "seed"},
    "judgement": {"from", "to", "shift", "scale", "skew", "reason"},
    "scenario": {"name", "from", "to", "shift", "scale", "skew", "reason"},
    "output": {"directory", "formats"},
    "schedule": {"from", "midpoint", "tolerance", "lower", "upper"},
}
