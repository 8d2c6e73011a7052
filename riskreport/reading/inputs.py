"""Reading and validating the input tables (CSV or .xlsx).

Every check names the file, the 1-based row as a spreadsheet shows it (the header is row 1)
and the column, so a user can go straight to the cell.
"""

from __future__ import annotations

import csv
import datetime as dt
import hashlib
import io
import math
import zipfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from riskreport._typing import Frequency, ScoreAgainst
from riskreport.errors import InputError
from riskreport.reading import columns, periods

# Plausibility bounds (common practice, no source): inflation rates in percent beyond
# +-1000 are almost always a unit or typing error (a level instead of a rate, a stray
# exponent); hyperinflation data can raise the bound with [inputs] max_abs_value.
MAX_ABS_VALUE = 1000.0
LARGEST_MAX_ABS_VALUE = 1e6
# Years outside 1800-2200 are typing errors (0000, 20026) rather than data.
FIRST_YEAR, LAST_YEAR = 1800, 2200
# A given error distribution's horizon: at most the whole year range in months.
MAX_HORIZON = 12 * (LAST_YEAR - FIRST_YEAR)


# Longest model (and scenario) name, in characters (common practice, no source): room for
# any descriptive name, short enough for a table row, a chart legend and a file.
MAX_NAME = 80


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


def read_table(path: Path, header: columns.Header) -> pd.DataFrame:
    """Read a CSV (UTF-8, BOM tolerated) or .xlsx file as text columns.

    Column names are stripped and lower-cased and checked against ``header`` before any
    cell (:func:`riskreport.reading.columns.check`; a column the table does not use is
    named in a warning); cells are kept as text so that each check can quote what it found. The index holds each row's number as a spreadsheet shows it: the
    header is row 1 and blank rows count (they are skipped, not renumbered). A workbook is
    read from its first sheet; the sheet's name is stored in ``frame.attrs["sheet"]`` and
    named in every message.

    Raises
    ------
    InputError
        An unreadable file, a missing, repeated or misnamed column, or no data rows.
    """
    suffix = path.suffix.lower()
    sheet: str | None = None
    if suffix == ".xlsx":
        grid, sheet = _read_workbook(path)
    elif suffix in {".csv", ".txt"}:
        grid = _read_csv(path)
    else:
        raise InputError(
            f"expected a .csv or .xlsx file, got {suffix or 'no extension'}", file=path
        )
    grid = grid.fillna("").astype(str)
    grid.index = np.arange(1, len(grid) + 1)  # the row numbers a spreadsheet shows
    filled = (grid.apply(lambda column: column.str.strip()) != "").any(axis=1).to_numpy()
    if not filled.any():
        raise InputError(
            "the file is empty; expected a header row and data rows", file=path, sheet=sheet
        )
    header_row = int(np.flatnonzero(filled)[0])
    names = [str(c).strip().lower() for c in grid.iloc[header_row]]
    frame = grid.iloc[header_row + 1 :][filled[header_row + 1 :]]
    frame.columns = pd.Index(names)
    frame.attrs["sheet"] = sheet
    wanted = header.columns
    for column in wanted:
        where = [i for i, name in enumerate(names) if name == column]
        if len(where) > 1:
            raise InputError(
                f"column '{column}' appears {len(where)} times (column names ignore case: "
                f"{', '.join(repr(str(grid.iloc[header_row, i]).strip()) for i in where)}); "
                "expected each column once",
                file=path,
                row=header_row + 1,
                sheet=sheet,
            )
    unused = columns.check(names, header, file=path, row=header_row + 1, sheet=sheet)
    if frame.empty:
        raise InputError("no data rows below the header", file=path, sheet=sheet)
    unnamed = tuple(
        i + 1
        for i, name in enumerate(names)
        if not name and (frame.iloc[:, i].str.strip() != "").any()
    )
    columns.warn_unused(unused, header, file=path, unnamed=unnamed)
    result = frame[[c for c in wanted if c in names]].copy()
    if sheet is not None:
        _refuse_unsaved_formulas(path, sheet, result, header_row + 1)
    return result


_PARSED: dict[tuple[str, bytes], pd.DataFrame] = {}  # the last few CSV files parsed
PARSED_KEPT = 4


def _read_csv(path: Path) -> pd.DataFrame:
    """Every record of a CSV as text, the header too; blank lines kept as empty rows.

    Read with the standard csv module rather than pandas.read_csv: pandas either drops blank
    lines (and so renumbers the rows after them) or fixes the number of columns from the
    first line, and the row numbers in messages must match what a spreadsheet shows. A
    file read again with the same content (the rounds of a ``batch``) is not parsed again:
    the last few parses are kept by path and content digest, and a copy is returned.
    """
    try:
        content = path.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read the file ({exc.strerror or exc})", file=path) from None
    key = (str(path.resolve()), hashlib.blake2b(content, digest_size=16).digest())
    if key not in _PARSED:
        while len(_PARSED) >= PARSED_KEPT:
            del _PARSED[next(iter(_PARSED))]
        _PARSED[key] = _parse_csv(content, path)
    return _PARSED[key].copy()


def _parse_csv(content: bytes, path: Path) -> pd.DataFrame:
    try:
        text = content.decode("utf-8-sig")
        records = list(csv.reader(io.StringIO(text, newline=""), skipinitialspace=True))
    except UnicodeDecodeError:
        raise InputError("expected UTF-8 text", file=path) from None
    except csv.Error as exc:
        raise InputError(f"cannot read as CSV ({exc})", file=path) from None
    header = next((r for r in records if any(cell.strip() for cell in r)), [])
    width = len(header)
    for number, record in enumerate(records, start=1):
        if len(record) > width and any(cell.strip() for cell in record[width:]):
            raise InputError(
                f"expected at most {width} cells as in the header, found {len(record)}",
                file=path,
                row=number,
            )
    return pd.DataFrame(
        [(r + [""] * width)[:width] for r in records], columns=range(width), dtype=object
    )


def _read_workbook(path: Path) -> tuple[pd.DataFrame, str]:
    """Every row of the first sheet as text (the header too, from spreadsheet row 1), and
    the sheet's name."""
    try:
        with pd.ExcelFile(path, engine="openpyxl") as book:
            chosen = str(book.sheet_names[0])
            raw = pd.read_excel(book, sheet_name=chosen, header=None, dtype=object)
    except zipfile.BadZipFile:
        raise InputError(
            "not an .xlsx workbook (an .xlsx file is a zip archive; a CSV file must end in .csv)",
            file=path,
        ) from None
    # A damaged workbook can fail anywhere inside openpyxl with almost any exception type;
    # all of them mean the same thing to the user, so they are caught together.
    except Exception as exc:
        raise InputError(
            f"cannot read as an .xlsx workbook ({type(exc).__name__}: "
            f"{' '.join(str(exc).split())[:200]})",
            file=path,
        ) from None
    # With header=None the first row pandas returns is spreadsheet row 1, blank or not.
    return raw.map(_cell_text), chosen


def _refuse_unsaved_formulas(path: Path, sheet: str, frame: pd.DataFrame, header: int) -> None:
    """A formula cell whose value was never saved reads as empty: say so, not ``got ''``.

    openpyxl reads the value a spreadsheet program cached when it saved the file; a workbook
    written by a script may hold formulas without values.
    """
    empty = frame.apply(lambda column: column.str.strip()) == ""
    if not empty.to_numpy().any():
        return
    import openpyxl

    try:
        book = openpyxl.load_workbook(path, read_only=True, data_only=False)
    except Exception:  # already read once; a second failure only loses the better message
        return
    try:
        rows = list(book[sheet].iter_rows(min_row=1, values_only=True))
    finally:
        book.close()
    if not rows:
        return
    header_cells = [str(c).strip().lower() if c is not None else "" for c in rows[header - 1]]
    for row_number, column in zip(*np.nonzero(empty.to_numpy()), strict=True):
        name = str(frame.columns[column])
        spreadsheet_row = int(frame.index[row_number])
        if name not in header_cells or spreadsheet_row > len(rows):
            continue
        cell = rows[spreadsheet_row - 1][header_cells.index(name)]
        if isinstance(cell, str) and cell.startswith("="):
            raise InputError(
                f"the cell holds a formula with no saved value ({cell[:60]}); open the file "
                "in a spreadsheet program and save it, or paste the values",
                file=path,
                row=spreadsheet_row,
                column=name,
                sheet=sheet,
            )


def _first(mask: pd.Series | np.ndarray) -> int | None:
    """Position of the first True in a mask, or None."""
    hits = np.flatnonzero(np.asarray(mask))
    return int(hits[0]) if hits.size else None


def _error(
    frame: pd.DataFrame, path: Path, message: str, position: int | None, column: str | None
) -> InputError:
    """An error at the row in ``position`` (0-based among data rows), as the file shows it."""
    row = int(frame.index[position]) if position is not None else None
    return InputError(message, file=path, row=row, column=column, sheet=frame.attrs.get("sheet"))


def _periods(frame: pd.DataFrame, column: str, frequency: Frequency, path: Path) -> np.ndarray:
    texts = frame[column].str.strip()
    found, ordinal = periods.parse_column(texts)
    if (bad := _first(found.isna())) is not None:
        raise _error(
            frame,
            path,
            f"expected a period like {periods.EXAMPLE[frequency]} (YYYY-MM or YYYY-Qn), "
            f"got {texts.iloc[bad]!r}",
            bad,
            column,
        )
    if (bad := _first(found != frequency)) is not None:
        raise _error(
            frame,
            path,
            f"mixed frequencies: expected a {frequency} period like "
            f"{periods.EXAMPLE[frequency]} (the config's frequency), got {texts.iloc[bad]!r}",
            bad,
            column,
        )
    result = ordinal.to_numpy(dtype=np.int64)
    # pandas ordinals count periods from 1970 (see periods.parse_column).
    year = 1970 + np.floor_divide(result, periods.PERIODS_PER_YEAR[frequency])
    if (bad := _first((year < FIRST_YEAR) | (year > LAST_YEAR))) is not None:
        raise _error(
            frame,
            path,
            f"implausible year: expected a period from {FIRST_YEAR} to {LAST_YEAR}, "
            f"got {texts.iloc[bad]!r}",
            bad,
            column,
        )
    return result


def _values(
    frame: pd.DataFrame, column: str, path: Path, max_abs: float = MAX_ABS_VALUE
) -> np.ndarray:
    texts = frame[column].str.strip()
    numbers = pd.to_numeric(texts, errors="coerce").to_numpy(dtype=float)
    if (bad := _first(~np.isfinite(numbers))) is not None:
        raise _error(
            frame,
            path,
            f"expected a finite number (inflation in percent), got {texts.iloc[bad]!r}",
            bad,
            column,
        )
    if (bad := _first(np.abs(numbers) > max_abs)) is not None:
        raise _error(
            frame,
            path,
            f"implausible value {texts.iloc[bad]!r}: expected inflation in percent between "
            f"{-max_abs:g} and {max_abs:g} (raise [inputs] max_abs_value if it is right)",
            bad,
            column,
        )
    return numbers


def _duplicates(
    frame: pd.DataFrame, keys: pd.DataFrame, what: str, path: Path, column: str
) -> None:
    repeated = keys.duplicated(keep="first").to_numpy()
    if (bad := _first(repeated)) is not None:
        same = (keys == keys.iloc[bad]).all(axis=1).to_numpy()
        first = int(np.flatnonzero(same)[0])
        raise _error(
            frame,
            path,
            f"duplicate {what}; the same key is already on row {int(frame.index[first])}",
            bad,
            column,
        )


def read_forecasts(
    path: Path, frequency: Frequency, as_of: int, max_abs_value: float = MAX_ABS_VALUE
) -> Forecasts:
    """Read and validate the forecasts table (``origin, period, model, value``).

    A file without a ``model`` column holds one already-combined forecast.

    Parameters
    ----------
    path, frequency, as_of
        The file, the config's frequency and the current origin (a period ordinal).
    max_abs_value
        The largest plausible absolute value, in percent (``[inputs] max_abs_value``).

    Raises
    ------
    InputError
        Missing column, unparseable period, a year outside 1800-2200, non-finite or
        implausible value, duplicate (model, origin, period), origin after period, mixed
        frequencies, or no current-round row.
    """
    frame = read_table(path, columns.FORECASTS)
    has_model = "model" in frame.columns
    if has_model:
        names = frame["model"].str.strip()
        if (bad := _first(names == "")) is not None:
            raise _error(frame, path, "expected a model name, got an empty cell", bad, "model")
        if (bad := _first(names.str.len() > MAX_NAME)) is not None:
            length = len(names.iloc[bad])
            message = f"expected a model name of at most {MAX_NAME} characters, got {length}"
            raise _error(frame, path, message, bad, "model")
    else:
        names = pd.Series("combined", index=frame.index)
    origin = _periods(frame, "origin", frequency, path)
    period = _periods(frame, "period", frequency, path)
    value = _values(frame, "value", path, max_abs_value)
    if (bad := _first(origin > period)) is not None:
        raise _error(
            frame,
            path,
            f"origin after period: {frame['origin'].iloc[bad].strip()} is later than "
            f"{frame['period'].iloc[bad].strip()}; expected origin <= period (h >= 0)",
            bad,
            "origin",
        )
    keys = pd.DataFrame({"model": names.to_numpy(), "origin": origin, "period": period})
    _duplicates(frame, keys, "(model, origin, period)", path, "period")
    if not np.any(origin == as_of):
        latest = periods.label(int(origin.max()), frequency)
        raise _error(
            frame,
            path,
            f"as_of {periods.label(as_of, frequency)} is absent from the forecasts: no row "
            f"has that origin (the current round); the latest origin is {latest}",
            None,
            "origin",
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
    max_abs_value: float = MAX_ABS_VALUE,
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
        Missing column, unparseable period, a year outside 1800-2200, mixed frequencies,
        non-finite or implausible value (``|value| > max_abs_value``), a duplicate period (or
        (period, vintage)), or a vintage before its period.
    """
    frame = read_table(path, columns.ACTUALS)
    period = _periods(frame, "period", frequency, path)
    value = _values(frame, "value", path, max_abs_value)
    if "vintage" in frame.columns:
        return _one_release(frame, period, value, path, frequency, as_of, score_against)
    _duplicates(frame, pd.DataFrame({"period": period}), "period", path, "period")
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
        raise _error(
            frame,
            path,
            f"expected a vintage on or after its period {frame['period'].iloc[bad].strip()!r}, "
            f"got {frame['vintage'].iloc[bad].strip()!r}",
            bad,
            "vintage",
        )
    _duplicates(
        frame,
        pd.DataFrame({"period": period, "vintage": vintage}),
        "(period, vintage)",
        path,
        "vintage",
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
        raise InputError(
            "no value was published by as_of (every vintage is later)",
            file=path,
            sheet=frame.attrs.get("sheet"),
        )
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


def read_error_quantiles(path: Path, max_abs_value: float = MAX_ABS_VALUE) -> ErrorQuantiles:
    """Read and validate ``horizon, quantile, value`` (a given error distribution).

    Raises
    ------
    InputError
        Missing column, a horizon that is not a whole number from 0 to 2400, a quantile
        outside (0, 1), a non-finite or implausible value (``|value| > max_abs_value``), a
        duplicate (horizon, quantile), fewer than two quantiles for a horizon, or values
        that do not increase with the quantile.
    """
    frame = read_table(path, columns.ERROR_QUANTILES)
    horizon_text = frame["horizon"].str.strip()
    horizon = pd.to_numeric(horizon_text, errors="coerce").to_numpy(dtype=float)
    bad = _first(
        ~np.isfinite(horizon) | (horizon < 0) | (horizon > MAX_HORIZON) | (np.mod(horizon, 1) != 0)
    )
    if bad is not None:
        raise _error(
            frame,
            path,
            f"expected a whole number of periods from 0 to {MAX_HORIZON}, "
            f"got {horizon_text.iloc[bad]!r}",
            bad,
            "horizon",
        )
    level = _values(frame, "quantile", path)
    if (bad := _first((level <= 0) | (level >= 1))) is not None:
        raise _error(
            frame,
            path,
            f"expected a probability strictly between 0 and 1, got {frame['quantile'].iloc[bad]!r}",
            bad,
            "quantile",
        )
    value = _values(frame, "value", path, max_abs_value)
    keys = pd.DataFrame({"horizon": horizon, "quantile": level})
    _duplicates(frame, keys, "(horizon, quantile)", path, "quantile")
    by_horizon: dict[int, tuple[tuple[float, ...], tuple[float, ...]]] = {}
    for h in sorted(set(horizon.astype(int).tolist())):
        rows = np.flatnonzero(horizon == h)
        order = rows[np.argsort(level[rows], kind="stable")]
        if order.size < 2:
            raise _error(
                frame,
                path,
                f"horizon {h} has one quantile; expected at least two",
                int(order[0]),
                "quantile",
            )
        steps = np.diff(value[order])
        if (bad := _first(steps <= 0)) is not None:
            raise _error(
                frame,
                path,
                f"values must increase with the quantile at horizon {h}",
                int(order[bad + 1]),
                "value",
            )
        by_horizon[h] = (tuple(level[order].tolist()), tuple(value[order].tolist()))
    return ErrorQuantiles(file=path, by_horizon=by_horizon)
