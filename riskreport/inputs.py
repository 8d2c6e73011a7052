"""Reading and validating the input tables (CSV or .xlsx).

Every check names the file, the 1-based row as a spreadsheet shows it (the header is row 1)
and the column, so a user can go straight to the cell.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from riskreport import periods
from riskreport._typing import Frequency, ScoreAgainst
from riskreport.errors import InputError

_FIRST_DATA_ROW = 2  # the header is row 1


@dataclass(frozen=True)
class Forecasts:
    """Forecast rows: model index, origin and period ordinals, values (one row each)."""

    file: Path
    models: tuple[str, ...]
    model: np.ndarray
    origin: np.ndarray
    period: np.ndarray
    value: np.ndarray
    has_model_column: bool

    @property
    def horizon(self) -> np.ndarray:
        """h = period - origin, in periods."""
        return self.period - self.origin


@dataclass(frozen=True)
class Actuals:
    """The outcome series: period ordinals (sorted) and values."""

    file: Path
    period: np.ndarray
    value: np.ndarray
    vintages: bool = False  # the file had a vintage column (one release kept per period)


def _cell_text(value: object) -> str:
    """A spreadsheet cell as the text a CSV would hold."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    if isinstance(value, (dt.datetime, dt.date, pd.Timestamp)):
        # Spreadsheets turn "2026-11" into a date on the first of the month.
        return f"{value.year:04d}-{value.month:02d}"
    if isinstance(value, float) and value.is_integer():
        return str(int(value)) if abs(value) < 1e15 else repr(value)
    return str(value)


def read_table(
    path: Path, required: tuple[str, ...], optional: tuple[str, ...] = ()
) -> pd.DataFrame:
    """Read a CSV (UTF-8, BOM tolerated) or .xlsx file as text columns.

    Column names are stripped and lower-cased; cells are kept as text so that each check can
    quote what it found. Missing required columns raise :class:`InputError`.
    """
    suffix = path.suffix.lower()
    try:
        if suffix == ".xlsx":
            raw = pd.read_excel(path, dtype=object, engine="openpyxl")
            frame = raw.map(_cell_text)
        elif suffix in {".csv", ".txt"}:
            frame = pd.read_csv(
                path, dtype=str, keep_default_na=False, encoding="utf-8-sig", skipinitialspace=True
            )
        else:
            raise InputError(
                f"expected a .csv or .xlsx file, got {suffix or 'no extension'}", file=path
            )
    except InputError:
        raise
    except UnicodeDecodeError:
        raise InputError("expected UTF-8 text", file=path) from None
    except pd.errors.EmptyDataError:
        raise InputError(
            "the file is empty; expected a header row and data rows", file=path
        ) from None
    except pd.errors.ParserError as exc:
        raise InputError(f"cannot read as CSV ({' '.join(str(exc).split())})", file=path) from None
    except (ValueError, OSError, KeyError) as exc:
        raise InputError(f"cannot read the file ({exc})", file=path) from None
    frame.columns = [str(c).strip().lower() for c in frame.columns]
    for column in required:
        if column not in frame.columns:
            found = ", ".join(frame.columns) or "none"
            raise InputError(
                f"missing column '{column}'; expected columns "
                f"{', '.join(required + optional)}, found {found}",
                file=path,
                row=1,
            )
    if frame.empty:
        raise InputError("no data rows below the header", file=path)
    return frame[[c for c in (*required, *optional) if c in frame.columns]].copy()


def _first(mask: pd.Series | np.ndarray) -> int | None:
    """Position of the first True in a mask, or None."""
    hits = np.flatnonzero(np.asarray(mask))
    return int(hits[0]) if hits.size else None


def _periods(frame: pd.DataFrame, column: str, frequency: Frequency, path: Path) -> np.ndarray:
    texts = frame[column].str.strip()
    found, ordinal = periods.parse_column(texts)
    if (bad := _first(found.isna())) is not None:
        raise InputError(
            f"expected a period like {periods.EXAMPLE[frequency]} (YYYY-MM or YYYY-Qn), "
            f"got {texts.iloc[bad]!r}",
            file=path,
            row=bad + _FIRST_DATA_ROW,
            column=column,
        )
    if (bad := _first(found != frequency)) is not None:
        raise InputError(
            f"mixed frequencies: expected a {frequency} period like "
            f"{periods.EXAMPLE[frequency]} (the config's frequency), got {texts.iloc[bad]!r}",
            file=path,
            row=bad + _FIRST_DATA_ROW,
            column=column,
        )
    return ordinal.to_numpy(dtype=np.int64)


def _values(frame: pd.DataFrame, column: str, path: Path) -> np.ndarray:
    texts = frame[column].str.strip()
    numbers = pd.to_numeric(texts, errors="coerce").to_numpy(dtype=float)
    if (bad := _first(~np.isfinite(numbers))) is not None:
        raise InputError(
            f"expected a finite number (inflation in percent), got {texts.iloc[bad]!r}",
            file=path,
            row=bad + _FIRST_DATA_ROW,
            column=column,
        )
    return numbers


def _duplicates(keys: pd.DataFrame, what: str, path: Path, column: str) -> None:
    repeated = keys.duplicated(keep="first").to_numpy()
    if (bad := _first(repeated)) is not None:
        same = (keys == keys.iloc[bad]).all(axis=1).to_numpy()
        first = int(np.flatnonzero(same)[0])
        raise InputError(
            f"duplicate {what}; the same key is already on row {first + _FIRST_DATA_ROW}",
            file=path,
            row=bad + _FIRST_DATA_ROW,
            column=column,
        )


def read_forecasts(path: Path, frequency: Frequency, as_of: int) -> Forecasts:
    """Read and validate the forecasts table (``origin, period, model, value``).

    A file without a ``model`` column holds one already-combined forecast.

    Raises
    ------
    InputError
        Missing column, unparseable period, non-finite value, duplicate (model, origin,
        period), origin after period, mixed frequencies, or no current-round row.
    """
    frame = read_table(path, ("origin", "period", "value"), ("model",))
    has_model = "model" in frame.columns
    if has_model:
        names = frame["model"].str.strip()
        if (bad := _first(names == "")) is not None:
            raise InputError(
                "expected a model name, got an empty cell",
                file=path,
                row=bad + _FIRST_DATA_ROW,
                column="model",
            )
    else:
        names = pd.Series("combined", index=frame.index)
    origin = _periods(frame, "origin", frequency, path)
    period = _periods(frame, "period", frequency, path)
    value = _values(frame, "value", path)
    if (bad := _first(origin > period)) is not None:
        raise InputError(
            f"origin after period: {frame['origin'].iloc[bad].strip()} is later than "
            f"{frame['period'].iloc[bad].strip()}; expected origin <= period (h >= 0)",
            file=path,
            row=bad + _FIRST_DATA_ROW,
            column="origin",
        )
    keys = pd.DataFrame({"model": names.to_numpy(), "origin": origin, "period": period})
    _duplicates(keys, "(model, origin, period)", path, "period")
    if not np.any(origin == as_of):
        latest = periods.label(int(origin.max()), frequency)
        raise InputError(
            f"as_of {periods.label(as_of, frequency)} is absent from the forecasts: no row "
            f"has that origin (the current round); the latest origin is {latest}",
            file=path,
            column="origin",
        )
    models = tuple(sorted(set(names.tolist())))
    index = {name: i for i, name in enumerate(models)}
    return Forecasts(
        file=path,
        models=models,
        model=np.array([index[n] for n in names], dtype=np.int64),
        origin=origin,
        period=period,
        value=value,
        has_model_column=has_model,
    )


def read_actuals(
    path: Path,
    frequency: Frequency,
    *,
    as_of: int | None = None,
    score_against: ScoreAgainst = "latest",
) -> Actuals:
    """Read and validate the outcomes table (``period, value`` and optionally ``vintage``).

    With a ``vintage`` column (the period in which a value was published), a period may
    have several rows; only releases published by ``as_of`` are known, and of those the
    first release or the latest one is kept (``score_against``).

    Raises
    ------
    InputError
        Missing column, unparseable period, mixed frequencies, non-finite value, a
        duplicate period (or (period, vintage)), or a vintage before its period.
    """
    frame = read_table(path, ("period", "value"), ("vintage",))
    period = _periods(frame, "period", frequency, path)
    value = _values(frame, "value", path)
    if "vintage" in frame.columns:
        return _one_release(frame, period, value, path, frequency, as_of, score_against)
    _duplicates(pd.DataFrame({"period": period}), "period", path, "period")
    order = np.argsort(period, kind="stable")
    return Actuals(file=path, period=period[order], value=value[order])


def _one_release(
    frame: pd.DataFrame,
    period: np.ndarray,
    value: np.ndarray,
    path: Path,
    frequency: Frequency,
    as_of: int | None,
    score_against: ScoreAgainst,
) -> Actuals:
    """One value per period from a table of releases (see :func:`read_actuals`)."""
    vintage = _periods(frame, "vintage", frequency, path)
    if (bad := _first(vintage < period)) is not None:
        raise InputError(
            f"expected a vintage on or after its period {frame['period'].iloc[bad].strip()!r}, "
            f"got {frame['vintage'].iloc[bad].strip()!r}",
            file=path,
            row=bad + _FIRST_DATA_ROW,
            column="vintage",
        )
    _duplicates(
        pd.DataFrame({"period": period, "vintage": vintage}), "(period, vintage)", path, "vintage"
    )
    known = vintage <= as_of if as_of is not None else np.ones(period.size, dtype=bool)
    table = pd.DataFrame(
        {"period": period[known], "vintage": vintage[known], "value": value[known]}
    )
    table = table.sort_values(["period", "vintage"], kind="stable")
    chosen = table.drop_duplicates(
        "period", keep="first" if score_against == "first-release" else "last"
    )
    if chosen.empty:
        raise InputError("no value was published by as_of (every vintage is later)", file=path)
    return Actuals(
        file=path,
        period=chosen["period"].to_numpy(dtype=np.int64),
        value=chosen["value"].to_numpy(dtype=float),
        vintages=True,
    )


@dataclass(frozen=True)
class ErrorQuantiles:
    """A given error distribution: per horizon, increasing quantile levels and values."""

    file: Path
    by_horizon: dict[int, tuple[tuple[float, ...], tuple[float, ...]]]


def read_error_quantiles(path: Path) -> ErrorQuantiles:
    """Read and validate ``horizon, quantile, value`` (a given error distribution).

    Raises
    ------
    InputError
        Missing column, a horizon that is not a whole number >= 0, a quantile outside
        (0, 1), a non-finite value, a duplicate (horizon, quantile), fewer than two
        quantiles for a horizon, or values that do not increase with the quantile.
    """
    frame = read_table(path, ("horizon", "quantile", "value"))
    horizon_text = frame["horizon"].str.strip()
    horizon = pd.to_numeric(horizon_text, errors="coerce").to_numpy(dtype=float)
    bad = _first(~np.isfinite(horizon) | (horizon < 0) | (np.mod(horizon, 1) != 0))
    if bad is not None:
        raise InputError(
            f"expected a whole number of periods >= 0, got {horizon_text.iloc[bad]!r}",
            file=path,
            row=bad + _FIRST_DATA_ROW,
            column="horizon",
        )
    level = _values(frame, "quantile", path)
    if (bad := _first((level <= 0) | (level >= 1))) is not None:
        raise InputError(
            f"expected a probability strictly between 0 and 1, got {frame['quantile'].iloc[bad]!r}",
            file=path,
            row=bad + _FIRST_DATA_ROW,
            column="quantile",
        )
    value = _values(frame, "value", path)
    keys = pd.DataFrame({"horizon": horizon, "quantile": level})
    _duplicates(keys, "(horizon, quantile)", path, "quantile")
    by_horizon: dict[int, tuple[tuple[float, ...], tuple[float, ...]]] = {}
    for h in sorted(set(horizon.astype(int).tolist())):
        rows = np.flatnonzero(horizon == h)
        order = rows[np.argsort(level[rows], kind="stable")]
        if order.size < 2:
            raise InputError(
                f"horizon {h} has one quantile; expected at least two",
                file=path,
                row=int(order[0]) + _FIRST_DATA_ROW,
                column="quantile",
            )
        steps = np.diff(value[order])
        if (bad := _first(steps <= 0)) is not None:
            raise InputError(
                f"values must increase with the quantile at horizon {h}",
                file=path,
                row=int(order[bad + 1]) + _FIRST_DATA_ROW,
                column="value",
            )
        by_horizon[h] = (tuple(level[order].tolist()), tuple(value[order].tolist()))
    return ErrorQuantiles(file=path, by_horizon=by_horizon)
