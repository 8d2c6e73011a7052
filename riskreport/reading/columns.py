"""The header row of an input table, checked before any cell is read.

Each table has a contract (:class:`Header`): its columns in the documented order, which of
them may be left out, and names users often give a column instead. A missing column is
named with the expected ones and the closest name found (``difflib``); a column the table
does not use is named in a warning, never ignored in silence; and where leaving out an
optional column changes what the file means (no ``model`` column: one already-combined
forecast), any unknown column is refused, since it most likely is that column misnamed.
"""

from __future__ import annotations

import difflib
import warnings
from dataclasses import dataclass, field
from pathlib import Path

from riskreport.errors import InputError, UnusedColumnWarning

# How alike two names must be (difflib's ratio) to be offered as the name meant: 0.6 is
# difflib's own default for suggestions; 0.8 refuses an unknown column as a misspelt
# optional one ("vintages", "modle") but lets "notes" or "source" pass with a warning.
SUGGEST_CUTOFF = 0.6
MISSPELT_CUTOFF = 0.8


@dataclass(frozen=True)
class Header:
    """The columns of one input table.

    Attributes
    ----------
    columns
        Every column the table uses, in the order the documentation lists them.
    optional
        Those that may be left out.
    absent_means
        For an optional column whose absence changes what the file holds: the column and
        what the file is without it. With that column absent, an unknown column is refused.
    hints
        Names users write instead of a column: name -> (column, how to turn it into it).
    """

    columns: tuple[str, ...]
    optional: tuple[str, ...] = ()
    absent_means: tuple[str, str] | None = None
    hints: dict[str, tuple[str, str]] = field(default_factory=dict)

    @property
    def required(self) -> tuple[str, ...]:
        """The columns every file must have."""
        return tuple(c for c in self.columns if c not in self.optional)


_PERIOD_FROM_HORIZON = (
    "period",
    "give the period forecast (period = origin + h, e.g. origin 2026-Q4 and h = 2 make "
    "period 2027-Q2) instead of the horizon",
)
FORECASTS = Header(
    columns=("origin", "period", "model", "value"),
    optional=("model",),
    absent_means=("model", "an already-combined forecast"),
    hints={
        "h": _PERIOD_FROM_HORIZON,
        "horizon": _PERIOD_FROM_HORIZON,
        "step": _PERIOD_FROM_HORIZON,
        "steps": _PERIOD_FROM_HORIZON,
        "target": ("period", "rename it to 'period' (the period forecast)"),
        "forecast": ("value", "rename it to 'value' (the forecast, inflation in percent)"),
    },
)
ACTUALS = Header(
    columns=("period", "value", "vintage"),
    optional=("vintage",),
    hints={
        "date": ("period", "rename it to 'period' and write periods as YYYY-MM or YYYY-Qn"),
        "outcome": ("value", "rename it to 'value' (the outcome, inflation in percent)"),
        "actual": ("value", "rename it to 'value' (the outcome, inflation in percent)"),
    },
)
ERROR_QUANTILES = Header(
    columns=("horizon", "quantile", "value"),
    hints={"h": ("horizon", "rename it to 'horizon'")},
)


def _quoted(names: list[str]) -> str:
    return ", ".join(repr(n) for n in names)


def check(
    names: list[str], header: Header, *, file: Path, row: int, sheet: str | None = None
) -> tuple[str, ...]:
    """Check a table's header row; return the columns the table does not use.

    Parameters
    ----------
    names
        The header's names, stripped and lower-cased (blank names are columns with no
        heading, e.g. from a trailing comma, and are left alone).
    header
        The table's contract.
    file, row, sheet
        Where the header is, for the messages.

    Raises
    ------
    InputError
        A required column is missing (named with the expected columns and the closest
        name found), an unknown column looks like a misspelt optional one, or an unknown
        column stands where ``header.absent_means``'s column is missing.
    """

    def refuse(message: str) -> InputError:
        return InputError(message, file=file, row=row, sheet=sheet)

    unknown = [n for n in dict.fromkeys(names) if n and n not in header.columns]
    expected = ", ".join(header.columns)
    found = ", ".join(n for n in names if n) or "none"
    for column in header.required:
        if column in names:
            continue
        message = f"missing column '{column}' (expected columns {expected}; found {found})"
        hinted = [n for n in unknown if header.hints.get(n, ("",))[0] == column]
        close = difflib.get_close_matches(column, unknown, n=1, cutoff=SUGGEST_CUTOFF)
        if hinted:
            message += f"; for {hinted[0]!r}: {header.hints[hinted[0]][1]}"
        elif close:
            message += f"; {close[0]!r} looks like '{column}' misspelt: rename it to '{column}'"
        raise refuse(message)
    for column in header.optional:
        if column in names:
            continue
        close = difflib.get_close_matches(column, unknown, n=1, cutoff=MISSPELT_CUTOFF)
        if close:
            raise refuse(
                f"unknown column {close[0]!r}; it looks like '{column}' misspelt "
                f"(expected columns {expected}): rename it to '{column}', or remove it"
            )
    if header.absent_means is not None and unknown:
        column, meaning = header.absent_means
        if column not in names:
            them = "it" if len(unknown) == 1 else "the one that holds them"
            rest = "it" if len(unknown) == 1 else "them"
            raise refuse(
                f"no column '{column}'; found {_quoted(unknown)}: rename {them} to "
                f"'{column}', or remove {rest} for {meaning}"
            )
    return tuple(unknown)


def warn_unused(
    unused: tuple[str, ...], header: Header, *, file: Path, unnamed: tuple[int, ...] = ()
) -> None:
    """Name the columns a table does not use (:class:`UnusedColumnWarning`).

    Parameters
    ----------
    unused
        Unknown column names.
    header
        The table's contract (its columns are listed in the warning).
    file
        The file, named in the warning.
    unnamed
        1-based positions of columns with no heading that hold values.
    """
    labels = [repr(n) for n in unused] + [f"{i} (no heading)" for i in unnamed]
    if not labels:
        return
    one = len(labels) == 1
    warnings.warn(
        f"{file.name}: column{'' if one else 's'} {', '.join(labels)} "
        f"{'is' if one else 'are'} not used and ignored (expected columns "
        f"{', '.join(header.columns)}); rename {'it' if one else 'them'} if "
        f"{'it was' if one else 'they were'} meant as one of these.",
        UnusedColumnWarning,
        stacklevel=4,
    )
