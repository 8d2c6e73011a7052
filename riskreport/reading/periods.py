"""Periods written ``YYYY-MM`` (monthly) or ``YYYY-Qn`` (quarterly), as pandas Periods.

Quarters are also accepted without the dash (``YYYYQn``, as pandas and many statistical
offices write them); outputs always write the canonical ``YYYY-Qn``.

Internally a period is its pandas ordinal (an integer), so horizons are differences of
integers and whole arrays of periods are handled at once.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import pandas as pd

from riskreport._typing import Frequency
from riskreport.errors import InputError

_MONTHLY = re.compile(r"^(\d{4})-(0[1-9]|1[0-2])$")
_QUARTERLY = re.compile(r"^(\d{4})-?[Qq]([1-4])$")
_PANDAS_FREQ: dict[Frequency, str] = {"monthly": "M", "quarterly": "Q"}
PERIODS_PER_YEAR: dict[Frequency, int] = {"monthly": 12, "quarterly": 4}
EXAMPLE: dict[Frequency, str] = {"monthly": "2026-11", "quarterly": "2026-Q4"}


@dataclass(frozen=True)
class ParsedPeriod:
    """A period read from text: its frequency and pandas ordinal."""

    frequency: Frequency
    ordinal: int


def parse(text: str) -> ParsedPeriod | None:
    """Parse ``YYYY-MM``, ``YYYY-Qn`` or ``YYYYQn``; None when the text is none of these.

    Examples
    --------
    >>> parse("2026-11").frequency
    'monthly'
    >>> label(parse("2026-Q3").ordinal, "quarterly")
    '2026-Q3'
    >>> label(parse("2026Q3").ordinal, "quarterly")
    '2026-Q3'
    >>> parse("2026 Q3") is None
    True
    """
    text = text.strip()
    if m := _MONTHLY.match(text):
        period = pd.Period(year=int(m[1]), month=int(m[2]), freq="M")
        return ParsedPeriod("monthly", int(period.ordinal))
    if m := _QUARTERLY.match(text):
        period = pd.Period(year=int(m[1]), quarter=int(m[2]), freq="Q")
        return ParsedPeriod("quarterly", int(period.ordinal))
    return None


def to_period(ordinal: int, frequency: Frequency) -> pd.Period:
    """The pandas Period of an ordinal."""
    return pd.Period(ordinal=ordinal, freq=_PANDAS_FREQ[frequency])


def label(ordinal: int, frequency: Frequency) -> str:
    """The period as written in inputs and outputs (``2026-11`` or ``2026-Q4``)."""
    period = to_period(ordinal, frequency)
    if frequency == "monthly":
        return f"{period.year:04d}-{period.month:02d}"
    return f"{period.year:04d}-Q{period.quarter}"


def year_of(ordinal: int, frequency: Frequency) -> int:
    """Calendar year of a period."""
    return int(to_period(ordinal, frequency).year)


def position_in_year(ordinal: int, frequency: Frequency) -> int:
    """1-based month or quarter within its year."""
    period = to_period(ordinal, frequency)
    return int(period.month if frequency == "monthly" else period.quarter)


_ANY = re.compile(r"^\s*(\d{4})(?:-(0[1-9]|1[0-2])|-?[Qq]([1-4]))\s*$")


def parse_column(texts: pd.Series) -> tuple[pd.Series, pd.Series]:
    """Parse a column of period strings at once.

    Returns
    -------
    frequency, ordinal
        Per row: ``"monthly"``, ``"quarterly"`` or missing (unparseable), and the pandas
        ordinal (missing where unparseable).
    """
    # A forecast file repeats each label once per model and origin: parse the distinct
    # labels once and map them back (84k rows hold about 600 labels in the demo).
    codes, labels = pd.factorize(texts.astype(str), use_na_sentinel=False)
    parts = pd.Series(labels).str.extract(_ANY)
    year = pd.to_numeric(parts[0])
    month = pd.to_numeric(parts[1])
    quarter = pd.to_numeric(parts[2])
    unique_frequency = pd.Series(pd.NA, index=parts.index, dtype="object")
    unique_frequency.loc[month.notna()] = "monthly"
    unique_frequency.loc[quarter.notna()] = "quarterly"
    # pandas ordinals count periods from 1970-01 (monthly) or 1970-Q1 (quarterly).
    unique_ordinal = ((year - 1970) * 12 + month - 1).where(
        month.notna(), (year - 1970) * 4 + quarter - 1
    )
    frequency = pd.Series(unique_frequency.to_numpy()[codes], index=texts.index, dtype="object")
    ordinal = pd.Series(unique_ordinal.to_numpy()[codes], index=texts.index)
    return frequency, ordinal


def ranges(values: list[int]) -> str:
    """Whole numbers as compact ranges: [1, 2, 3, 5, 7, 8] -> "1-3, 5, 7-8" (en dashes).

    Examples
    --------
    >>> ranges([0, 1, 2, 4])
    '0\u20132, 4'
    """
    runs: list[list[int]] = []
    for v in sorted(set(values)):
        if runs and v == runs[-1][-1] + 1:
            runs[-1].append(v)
        else:
            runs.append([v])
    return ", ".join(str(r[0]) if len(r) == 1 else f"{r[0]}\u2013{r[-1]}" for r in runs)


_RANGE = re.compile(r"^(\d+)(?:\s*[-\u2013]\s*(\d+))?$")


def parse_ranges(text: str, *, largest: int, option: str = "--horizons") -> tuple[int, ...]:
    """Whole numbers written as a list of numbers and ranges, the inverse of :func:`ranges`.

    Parameters
    ----------
    text
        E.g. ``"0,6,12"`` or ``"0-4, 8"`` (ranges include both ends).
    largest
        The largest number allowed (the smallest is 0).
    option
        The option or key named in the message.

    Raises
    ------
    InputError
        Anything else, or a number above ``largest``.

    Examples
    --------
    >>> parse_ranges("0-2, 6,12", largest=24)
    (0, 1, 2, 6, 12)
    """
    found: set[int] = set()
    for part in text.split(","):
        match = _RANGE.match(part.strip())
        first = int(match[1]) if match else -1
        last = int(match[2]) if match and match[2] is not None else first
        if match is None or last < first or last > largest:
            raise InputError(
                f"{option} expected whole numbers from 0 to {largest}, single or as ranges "
                f"(e.g. 0,6,12 or 0-8), got {text!r}"
            )
        found.update(range(first, last + 1))
    return tuple(sorted(found))
