"""Round history: how P(inside) for one target period, and for the current calendar year,
moved across the last briefs.

Every ``assessment-<as_of>.json`` in the output folder is the record of a round. The reader
walks back from the current round through :func:`riskreport.rounds.change.find_previous` (the same
look-up as the change since the previous brief), so it follows however that function finds
rounds.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

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


@dataclass(frozen=True)
class Earlier:
    """One earlier complete round as the next round sees it: its label and its assessment
    JSON (read from its file, or handed over in memory by ``batch``), or why it cannot be
    read (``data`` None)."""

    as_of: str
    data: dict[str, Any] | None
    problem: str = ""


def read_earlier(
    directory: Path | None, as_of: str, *, rounds: int = ROUNDS
) -> tuple[Earlier, ...]:
    """The complete rounds before ``as_of`` in ``directory``, latest first, each read through
    :func:`riskreport.rounds.change.load` (a file that cannot be read keeps its place, with
    ``data`` None: the brief must not fail on an old record)."""
    found = []
    for path in earlier_rounds(directory, as_of, rounds=rounds) if directory is not None else []:
        label = path.stem.removeprefix("assessment-")
        try:
            found.append(Earlier(label, change.load(path)))
        except InputError as exc:
            found.append(Earlier(label, None, str(exc)))
    return tuple(found)


def handed_over(data: dict[str, Any], before: Sequence[Earlier]) -> tuple[Earlier, ...]:
    """The earlier rounds of the round after ``data`` (an assessment JSON just made, as
    :func:`riskreport.rounds.change.parse` read it): ``data`` first, then ``before``."""
    return (Earlier(str(data["as_of"]), data), *before)[:ROUNDS]


def points(
    directory: Path | None, as_of: str, period: str, h: int, p_inside: float
) -> tuple[RoundPoint, ...]:
    """:func:`points_in` of the rounds found in ``directory``."""
    return points_in(read_earlier(directory, as_of), as_of, period, h, p_inside)


def points_in(
    earlier: Sequence[Earlier], as_of: str, period: str, h: int, p_inside: float
) -> tuple[RoundPoint, ...]:
    """The target period's P(inside) in the earlier rounds that reported it, then now.

    A round that cannot be read is skipped, as is a round whose horizons do not reach the
    period.
    """
    found = []
    for data in (e.data for e in earlier[:ROUNDS] if e.data is not None):
        for row in data.get("horizons") or []:
            if isinstance(row, dict) and row.get("period") == period:
                try:
                    found.append(
                        RoundPoint(
                            str(data["as_of"]), period, int(row["h"]), float(row["p_inside"]), False
                        )
                    )
                except (KeyError, TypeError, ValueError):
                    pass
                break
    return (*reversed(found), RoundPoint(as_of, period, h, p_inside, True))


@dataclass(frozen=True)
class YearPoint:
    """P(inside) for one calendar year's measure (average or year end) as one round stated it."""

    as_of: str
    year: int
    basis: str
    p_inside: float
    current: bool


def year_points(
    earlier: Sequence[Earlier], as_of: str, year: int, basis: str, p_inside: float
) -> tuple[YearPoint, ...]:
    """The calendar year's P(inside) on ``basis`` in the earlier rounds (from their
    ``annual`` records), then now; unreadable rounds and rounds without the year are skipped."""
    found = []
    for data in (e.data for e in earlier[:ROUNDS] if e.data is not None):
        for row in data.get("annual") or []:
            if isinstance(row, dict) and row.get("year") == year and row.get("basis") == basis:
                try:
                    found.append(
                        YearPoint(str(data["as_of"]), year, basis, float(row["p_inside"]), False)
                    )
                except (KeyError, TypeError, ValueError):
                    pass
                break
    return (*reversed(found), YearPoint(as_of, year, basis, p_inside, True))
