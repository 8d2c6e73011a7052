"""Reading a brief's TOML configuration with tomllib into the frozen dataclasses of
:mod:`riskreport.reading.config`.

Every key is checked at the boundary: a wrong type, a value out of range or an unknown key
raises :class:`~riskreport.errors.InputError` naming the file and the key.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path
from typing import Any, cast

from riskreport._typing import (
    BASES,
    CENTRES,
    COMBINATION_METHODS,
    DISTRIBUTION_CHOICES,
    EWMA_FAMILIES,
    FREQUENCIES,
    OUTPUT_FORMATS,
    PREDICTIVES,
    RECALIBRATION_METHODS,
    SCORE_AGAINST,
    SPREAD_CHOICES,
    WINDOW_CHOICES,
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
from riskreport.forecasts.combination import SHRINKAGE, SHRINKAGE_BOUNDS
from riskreport.reading import periods
from riskreport.reading.config import (
    DEFAULT_METHOD,
    KNOWN_KEYS,
    MAX_BOOTSTRAP_REPLICATES,
    MAX_HORIZON_YEARS,
    MAX_SCALE,
    MAX_SIMULATIONS,
    MAX_TEXT,
    MAX_WINDOW_YEARS,
    METHOD_KEYS,
    VERBAL_SCALES,
    WINDOW_YEARS,
    Band,
    BandChange,
    BriefSection,
    CombinationSection,
    Config,
    InputsSection,
    Judgement,
    OutputSection,
    T,
    TargetSection,
    UncertaintySection,
)
from riskreport.reading.inputs import (
    FIRST_YEAR,
    LARGEST_MAX_ABS_VALUE,
    LAST_YEAR,
    MAX_ABS_VALUE,
    MAX_NAME,
)


def _toml(value: object) -> str:
    """A value as the TOML file spells it (true, not Python's True), for messages."""
    if isinstance(value, bool):
        return "true" if value else "false"
    return repr(value)


class _Reader:
    """Typed look-ups in one TOML table, with errors that name the file and key."""

    def __init__(
        self, path: Path, kind: str, table: dict[str, Any], label: str | None = None
    ) -> None:
        self.path = path
        self.section = label or kind
        self.table = table
        unknown = sorted(set(table) - KNOWN_KEYS[kind])
        if unknown:
            allowed = ", ".join(sorted(KNOWN_KEYS[kind]))
            raise self.error(unknown[0], f"unknown key; expected one of {allowed}")

    def error(self, key: str, message: str) -> InputError:
        return InputError(message, file=self.path, column=f"[{self.section}] {key}")

    def _get(self, key: str, kind: type[T] | tuple[type, ...], what: str, default: Any) -> Any:
        if key not in self.table:
            if default is _REQUIRED:
                raise self.error(key, f"missing; expected {what}")
            return default
        value = self.table[key]
        if (isinstance(value, bool) and kind is not bool) or not isinstance(value, kind):
            raise self.error(key, f"expected {what}, got {_toml(value)}")
        return value

    def text(self, key: str, default: Any = None) -> str:
        value = cast(str, self._get(key, str, "text", _REQUIRED if default is None else default))
        if not value.strip():
            raise self.error(key, "expected non-empty text")
        if len(value) > MAX_TEXT.get(key, len(value)):
            limit = MAX_TEXT[key]
            raise self.error(key, f"expected at most {limit} characters, got {len(value)}")
        return value

    def number(self, key: str, default: Any = None, bound: float | None = None) -> float | None:
        """A finite number; with ``bound``, one from -bound to +bound."""
        value = self._get(key, (int, float), "a number", default)
        if value is None:
            return None
        if not math.isfinite(value):
            raise self.error(key, f"expected a finite number, got {value!r}")
        if bound is not None and abs(value) > bound:
            raise self.error(key, f"expected a number from {-bound:g} to {bound:g}, got {value!r}")
        return float(value)

    def integer(self, key: str, default: Any, minimum: int, maximum: int) -> int:
        value = cast(int, self._get(key, int, "a whole number", default))
        if not minimum <= value <= maximum:
            raise self.error(
                key, f"expected a whole number from {minimum} to {maximum}, got {value}"
            )
        return value

    def flag(self, key: str, default: bool) -> bool:
        return cast(bool, self._get(key, bool, "true or false", default))

    def choice(self, key: str, options: tuple[str, ...], default: str) -> str:
        value = cast(str, self._get(key, str, f"one of {', '.join(options)}", default))
        if value not in options:
            raise self.error(key, f"expected one of {', '.join(options)}, got {value!r}")
        return value

    def period(self, key: str, frequency: Frequency) -> int:
        value = cast(str, self._get(key, str, "a period", _REQUIRED))
        parsed = periods.parse(value)
        if parsed is None or parsed.frequency != frequency:
            raise self.error(
                key,
                f"expected a {frequency} period like {periods.EXAMPLE[frequency]}, got {value!r}",
            )
        if not FIRST_YEAR <= periods.year_of(parsed.ordinal, frequency) <= LAST_YEAR:
            raise self.error(
                key, f"expected a period from {FIRST_YEAR} to {LAST_YEAR}, got {value!r}"
            )
        return parsed.ordinal

    def path_of(self, key: str, base: Path, required: bool) -> Path | None:
        value = self._get(key, str, "a file path", _REQUIRED if required else None)
        if value is None:
            return None
        resolved = (base / value).resolve()
        if not resolved.is_file():
            raise self.error(key, f"file not found: {value}")
        return resolved


_REQUIRED = object()


def _thresholds(reader: _Reader) -> tuple[float, ...]:
    """``[target] thresholds``: distinct finite rates in percent, at most a few."""
    from riskreport.laws.thresholds import LIMIT, MAX_THRESHOLDS

    raw = reader._get("thresholds", list, "a list of numbers", [])
    values = []
    for item in raw:
        if isinstance(item, bool) or not isinstance(item, (int, float)):
            raise reader.error("thresholds", f"expected a list of numbers, got {item!r}")
        if not math.isfinite(item) or abs(item) > LIMIT:
            raise reader.error(
                "thresholds", f"expected numbers between -{LIMIT:g} and {LIMIT:g}, got {item!r}"
            )
        values.append(float(item))
    if len(set(values)) != len(values):
        raise reader.error("thresholds", f"expected distinct numbers, got {raw!r}")
    if len(values) > MAX_THRESHOLDS:
        raise reader.error(
            "thresholds", f"expected at most {MAX_THRESHOLDS} thresholds, got {len(values)}"
        )
    return tuple(values)


def _density_horizons(reader: _Reader, horizons: int) -> tuple[int, ...] | None:
    """``[brief] density_horizons``: distinct reported horizons (0..horizons), at most 4."""
    raw = reader._get("density_horizons", list, "a list of horizons", None)
    if raw is None:
        return None
    if not raw or len(raw) > 4:
        raise reader.error("density_horizons", f"expected 1 to 4 horizons, got {len(raw)}")
    for item in raw:
        if isinstance(item, bool) or not isinstance(item, int) or not 0 <= item <= horizons:
            raise reader.error(
                "density_horizons", f"expected whole numbers from 0 to {horizons}, got {item!r}"
            )
    return tuple(dict.fromkeys(int(item) for item in raw))


def _table(path: Path, data: dict[str, Any], name: str, required: bool = True) -> dict[str, Any]:
    value = data.get(name)
    if value is None:
        if required:
            raise InputError(f"missing table [{name}]", file=path)
        return {}
    if not isinstance(value, dict):
        raise InputError(f"[{name}] must be a table", file=path)
    return value


def _band(reader: _Reader, bound: float) -> Band:
    """A band from midpoint and tolerance or from its edges, each within +-``bound``."""
    has_mid = "midpoint" in reader.table or "tolerance" in reader.table
    has_edges = "lower" in reader.table or "upper" in reader.table
    if has_mid and has_edges:
        raise reader.error("lower", "give either midpoint and tolerance, or lower and upper")
    if has_edges:
        lower = cast(float, reader.number("lower", _REQUIRED, bound))
        upper = cast(float, reader.number("upper", _REQUIRED, bound))
        if lower >= upper:
            raise reader.error(
                "lower", f"expected lower < upper, got lower = {lower:g}, upper = {upper:g}"
            )
        return Band(lower, upper)
    midpoint = cast(float, reader.number("midpoint", _REQUIRED, bound))
    tolerance = cast(float, reader.number("tolerance", _REQUIRED, bound))
    if tolerance <= 0:
        raise reader.error(
            "tolerance", f"expected a positive number (band lower < upper), got {tolerance:g}"
        )
    return Band(midpoint - tolerance, midpoint + tolerance, midpoint, tolerance)


def _schedule(path: Path, raw: Any, frequency: Frequency, bound: float) -> tuple[BandChange, ...]:
    if raw is None:
        return ()
    if not isinstance(raw, list):
        raise InputError("expected a list of tables", file=path, column="[target] schedule")
    changes = []
    for i, entry in enumerate(raw, start=1):
        if not isinstance(entry, dict):
            raise InputError("expected a table", file=path, column=f"[target] schedule {i}")
        reader = _Reader(path, "schedule", entry, label=f"target schedule {i}")
        changes.append(BandChange(reader.period("from", frequency), _band(reader, bound)))
    return tuple(sorted(changes, key=lambda change: change.start))


def _judgements(
    path: Path, raw: Any, frequency: Frequency, bound: float, kind: str = "judgement"
) -> tuple[Judgement, ...]:
    if raw is None:
        return ()
    if not isinstance(raw, list):
        raise InputError(f"expected [[{kind}]] tables", file=path, column=f"[{kind}]")
    entries = []
    for i, table in enumerate(raw, start=1):
        if not isinstance(table, dict):
            raise InputError("expected a table", file=path, column=f"[{kind} {i}]")
        reader = _Reader(path, kind, table, label=f"{kind} {i}")
        start = reader.period("from", frequency)
        end = reader.period("to", frequency)
        if end < start:
            raise reader.error("to", "expected a period on or after 'from'")
        scale = cast(float, reader.number("scale", 1.0))
        if not 0 < scale <= MAX_SCALE:
            raise reader.error(
                "scale", f"expected a positive number up to {MAX_SCALE:g}, got {scale:g}"
            )
        entries.append(
            Judgement(
                start=start,
                end=end,
                shift=cast(float, reader.number("shift", 0.0, bound)),
                scale=scale,
                skew=cast(float, reader.number("skew", 0.0, bound)),
                reason=reader.text("reason"),
                label=f"{kind} {i}",
            )
        )
    return tuple(entries)


def _scenarios(
    path: Path, raw: Any, frequency: Frequency, bound: float
) -> tuple[tuple[str, Judgement], ...]:
    """Named alternative judgements: entries with the same name compose into one scenario."""
    entries = _judgements(path, raw, frequency, bound, kind="scenario")
    names = []
    for i, table in enumerate(raw or [], start=1):
        name = table.get("name")
        if not isinstance(name, str) or not name.strip():
            raise InputError(
                "expected a scenario name (text)", file=path, column=f"[scenario {i}] name"
            )
        if len(name.strip()) > MAX_NAME:
            raise InputError(
                f"expected at most {MAX_NAME} characters, got {len(name.strip())}",
                file=path,
                column=f"[scenario {i}] name",
            )
        names.append(name.strip())
    return tuple(zip(names, entries, strict=True))


def load(path: str | Path) -> Config:
    """Read and validate a configuration file.

    Parameters
    ----------
    path
        The TOML file; input paths in it are relative to its folder.

    Returns
    -------
    Config
        The validated configuration.

    Raises
    ------
    InputError
        On a missing file, invalid TOML, or any key of the wrong type or out of range.
    """
    path = Path(path).resolve()
    if not path.is_file():
        raise InputError("config file not found", file=path)
    try:
        # utf-8-sig: editors on Windows often save a byte-order mark, which TOML forbids.
        data = tomllib.loads(path.read_text(encoding="utf-8-sig"))
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"invalid TOML: {exc}", file=path) from None
    except RecursionError:  # tomllib recurses once per level of nesting
        raise InputError("invalid TOML: arrays or tables nested too deeply", file=path) from None
    except UnicodeDecodeError:
        raise InputError("expected a UTF-8 text file", file=path) from None
    except OSError as exc:
        raise InputError(f"cannot read the file ({exc.strerror or exc})", file=path) from None
    unknown = sorted(set(data) - set(KNOWN_KEYS))
    if unknown:
        raise InputError(
            f"unknown table [{unknown[0]}]; expected {', '.join(sorted(KNOWN_KEYS))}", file=path
        )
    base = path.parent

    brief = _Reader(path, "brief", _table(path, data, "brief"))
    frequency = cast(Frequency, brief.choice("frequency", FREQUENCIES, "monthly"))
    per_year = periods.PERIODS_PER_YEAR[frequency]
    longest = MAX_HORIZON_YEARS * per_year
    horizons = brief.integer("horizons", 2 * per_year, minimum=0, maximum=longest)
    policy_horizon = brief.integer(
        "policy_horizon", min(horizons, per_year * 3 // 2), minimum=0, maximum=longest
    )
    if policy_horizon > horizons:
        raise brief.error("policy_horizon", f"expected at most horizons = {horizons}")

    inputs = _Reader(path, "inputs", _table(path, data, "inputs"))
    bound = cast(float, inputs.number("max_abs_value", MAX_ABS_VALUE))
    if not 0 < bound <= LARGEST_MAX_ABS_VALUE:
        raise inputs.error(
            "max_abs_value",
            f"expected a positive number up to {LARGEST_MAX_ABS_VALUE:g}, got {bound:g}",
        )
    window_limit = MAX_WINDOW_YEARS * per_year
    target = _Reader(path, "target", _table(path, data, "target"))
    combination = _Reader(path, "combination", _table(path, data, "combination", False))
    uncertainty = _Reader(path, "uncertainty", _table(path, data, "uncertainty", False))
    output = _Reader(path, "output", _table(path, data, "output", False))

    method = cast(CombinationMethod, combination.choice("method", COMBINATION_METHODS, "equal"))
    distribution = cast(
        DistributionChoice,
        uncertainty.choice("distribution", DISTRIBUTION_CHOICES, DEFAULT_METHOD["distribution"]),
    )
    formats_raw = output._get("formats", list, "a list of formats", list(OUTPUT_FORMATS))
    for item in formats_raw:
        if item not in OUTPUT_FORMATS:
            raise output.error(
                "formats", f"expected items from {', '.join(OUTPUT_FORMATS)}, got {item!r}"
            )
    directory = output._get("directory", str, "a folder path", "out")
    shrinkage = _shrinkage(combination)
    spread = cast(
        SpreadChoice, uncertainty.choice("spread", SPREAD_CHOICES, DEFAULT_METHOD["spread"])
    )
    if spread in ("ewma", "joint", "revisions") and distribution not in (
        "auto",
        "best-past-score",
        *EWMA_FAMILIES,
    ):
        # The replay offers these spreads only with these laws: no candidate would be
        # left to choose from (was an IndexError, exit 1).
        raise uncertainty.error(
            "spread",
            f"'{spread}' is offered with distribution = {' or '.join(EWMA_FAMILIES)} "
            f"(or auto), not {distribution}; use spread = 'auto' or 'constant'",
        )
    window_choice = cast(WindowChoice, uncertainty.choice("window_choice", WINDOW_CHOICES, "fixed"))
    if window_choice == "auto" and distribution not in ("auto", "best-past-score", "normal"):
        # The window is chosen for the normal law only (the others keep the configured
        # one): with another fixed law the choice could not reach today's probabilities.
        raise uncertainty.error(
            "window_choice",
            f"'auto' chooses the window of the normal law, so it needs distribution = "
            f"normal or auto, not {distribution}; use window_choice = 'fixed'",
        )

    return Config(
        path=path,
        brief=BriefSection(
            title=brief.text("title"),
            institution=brief.text("institution"),
            as_of=brief.period("as_of", frequency),
            frequency=frequency,
            horizons=horizons,
            policy_horizon=policy_horizon,
            verbal_scale=brief.choice("verbal_scale", VERBAL_SCALES, "ipcc-ar5"),
            density_horizons=_density_horizons(brief, horizons),
        ),
        inputs=InputsSection(
            forecasts=cast(Path, inputs.path_of("forecasts", base, required=True)),
            actuals=cast(Path, inputs.path_of("actuals", base, required=True)),
            error_quantiles=inputs.path_of("error_quantiles", base, required=False),
            max_abs_value=bound,
            score_against=cast(
                ScoreAgainst, inputs.choice("score_against", SCORE_AGAINST, "latest")
            ),
        ),
        target=TargetSection(
            band=_band(target, bound),
            basis=cast(Basis, target.choice("basis", BASES, "period")),
            schedule=_schedule(path, target.table.get("schedule"), frequency, bound),
            thresholds=_thresholds(target),
        ),
        combination=CombinationSection(
            method=method,
            window=combination.integer("window", 0, minimum=0, maximum=window_limit),
            shrinkage=shrinkage,
        ),
        uncertainty=UncertaintySection(
            distribution=distribution,
            window=uncertainty.integer(
                "window", WINDOW_YEARS * per_year, minimum=0, maximum=window_limit
            ),
            centre=cast(Centre, uncertainty.choice("centre", CENTRES, DEFAULT_METHOD["centre"])),
            monotone=uncertainty.flag("monotone", True),
            min_errors=uncertainty.integer("min_errors", 20, minimum=2, maximum=window_limit),
            bootstrap_replicates=uncertainty.integer(
                "bootstrap_replicates", 500, minimum=50, maximum=MAX_BOOTSTRAP_REPLICATES
            ),
            simulations=uncertainty.integer(
                "simulations", 20000, minimum=1000, maximum=MAX_SIMULATIONS
            ),
            seed=uncertainty.integer("seed", 20240101, minimum=0, maximum=2**63 - 1),
            spread=spread,
            window_choice=window_choice,
            recalibrate=uncertainty.flag("recalibrate", False),
            recalibration=cast(
                RecalibrationMethod,
                uncertainty.choice("recalibration", RECALIBRATION_METHODS, "tracking"),
            ),
            predictive=cast(
                Predictive,
                uncertainty.choice("predictive", PREDICTIVES, DEFAULT_METHOD["predictive"]),
            ),
            configured=tuple(sorted(set(uncertainty.table) & METHOD_KEYS)),
        ),
        judgements=_judgements(path, data.get("judgement"), frequency, bound),
        scenarios=_scenarios(path, data.get("scenario"), frequency, bound),
        output=OutputSection(
            directory=(base / directory).resolve(),
            formats=tuple(dict.fromkeys(cast(list[OutputFormat], formats_raw))),
        ),
    )


def load_config(path: str | Path, as_of: str | None = None) -> Config:
    """Read and validate a configuration file, with ``as_of`` (``--as-of``) if given.

    Parameters
    ----------
    path
        The TOML file; input paths in it are relative to its folder.
    as_of
        Overrides ``[brief] as_of`` (a period such as ``"2026-11"``); None keeps the file's.

    Returns
    -------
    Config
        The validated configuration.

    Raises
    ------
    InputError
        As :func:`load`, or on an ``as_of`` that is not a period of the config's frequency.
    """
    cfg = load(path)
    return cfg if as_of is None else cfg.with_as_of(as_of)


def _shrinkage(reader: _Reader) -> float:
    """``[combination] shrinkage``: kappa of the ``shrink`` method, within its bounds."""
    value = reader.number("shrinkage", SHRINKAGE)
    low, high = SHRINKAGE_BOUNDS
    if value is None or not low <= value <= high:
        raise reader.error("shrinkage", f"expected a number from {low:g} to {high:g}, got {value}")
    return float(value)
