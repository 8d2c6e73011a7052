"""Round history: how P(inside) for one target period, and for the current calendar year,
moved across the last briefs.

Every ``assessment-<as_of>.json`` in the output folder is the record of a round. The reader
walks back from the current round through :func:`riskreport.rounds.change.find_previous` (the same
look-up as the change since the previous brief), so it follows however that function finds
rounds.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from riskreport.errors import InputError
from riskreport.rounds import change

ROUNDS = 6  # earlier rounds shown, besides the current one (common practice, no source)


@dataclass(frozen=True)
class RoundPoint:
    """P(inside) for the target period as one round stated it."""

    as_of: str
    period: str
    h: int
    p_inside: float
    current: bool


def earlier_rounds(directory: Path, as_of: str, *, rounds: int = ROUNDS) -> list[Path]:
    """The assessment files of up to ``rounds`` rounds before ``as_of``, latest first."""
    found: list[Path] = []
    cursor = as_of
    while len(found) < rounds:
        path = change.find_previous(directory, cursor)
        if path is None:
            break
        found.append(path)
        cursor = path.stem.removeprefix("assessment-")
    return found


def points(
    directory: Path | None, as_of: str, period: str, h: int, p_inside: float
) -> tuple[RoundPoint, ...]:
    """The target period's P(inside) in the earlier rounds that reported it, then now.

    A file that cannot be read is skipped (the brief must not fail on an old record), as
    is a round whose horizons do not reach the period.
    """
    earlier = []
    for path in earlier_rounds(directory, as_of) if directory is not None else []:
        try:
            data = change.load(path)
        except InputError:
            continue
        for row in data.get("horizons") or []:
            if isinstance(row, dict) and row.get("period") == period:
                try:
                    earlier.append(
                        RoundPoint(
                            str(data["as_of"]), period, int(row["h"]), float(row["p_inside"]), False
                        )
                    )
                except (KeyError, TypeError, ValueError):
                    pass
                break
    return (*reversed(earlier), RoundPoint(as_of, period, h, p_inside, True))


@dataclass(frozen=True)
class YearPoint:
    """P(inside) for one calendar year's measure (average or year end) as one round stated it."""

    as_of: str
    year: int
    basis: str
    p_inside: float
    current: bool


def year_points(
    directory: Path | None, as_of: str, year: int, basis: str, p_inside: float
) -> tuple[YearPoint, ...]:
    """The calendar year's P(inside) on ``basis`` in the earlier rounds (from their
    ``annual`` records), then now; unreadable files and rounds without the year are skipped."""
    earlier = []
    for path in earlier_rounds(directory, as_of) if directory is not None else []:
        try:
            data = change.load(path)
        except InputError:
            continue
        for row in data.get("annual") or []:
            if isinstance(row, dict) and row.get("year") == year and row.get("basis") == basis:
                try:
                    earlier.append(
                        YearPoint(str(data["as_of"]), year, basis, float(row["p_inside"]), False)
                    )
                except (KeyError, TypeError, ValueError):
                    pass
                break
    return (*reversed(earlier), YearPoint(as_of, year, basis, p_inside, True))
