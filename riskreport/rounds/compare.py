"""``riskreport compare OLD.json NEW.json``: the change in P(inside) between any two rounds.

The split into centre, spread and band is :func:`riskreport.rounds.change.compare`, the same as
the brief's "since the last brief"; here the two rounds need not be consecutive.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from riskreport.errors import InputError
from riskreport.reading import periods
from riskreport.report import formatting as fmt
from riskreport.rounds import change

log = logging.getLogger("riskreport")

ROW_KEYS = ("period", "p_inside", "centre", "band")


@dataclass(frozen=True)
class Comparison:
    """Two rounds compared by target period."""

    old_as_of: str
    new_as_of: str
    rows: tuple[change.ChangeHorizon, ...]  # the brief's own change rows
    swapped: bool = False  # the files were given newest first and compared in date order
    old_method: str = ""  # the method each round ran (method_of), "" when not recorded
    new_method: str = ""

    @property
    def methods_differ(self) -> bool:
        """Whether the two rounds used different methods (both recorded)."""
        return bool(self.old_method and self.new_method and self.old_method != self.new_method)


def method_of(data: dict[str, Any]) -> str:
    """The method an assessment JSON records, in words (the error law today, the spread,
    the centre, the predictive, recalibration and window); "" when it records none."""
    adj = data.get("adjustments")
    unc = data.get("uncertainty")
    if not isinstance(adj, dict) or not isinstance(unc, dict):
        return ""
    parts = [
        str(adj.get("method", "?")),
        f"centre {unc.get('centre', '?')}",
        f"predictive {adj.get('predictive', 'plug-in')}",
        "recalibrated" if adj.get("recalibrate") else "not recalibrated",
        f"window {adj.get('window', unc.get('window', '?'))}",
    ]
    return ", ".join(parts)


def _read(path: Path) -> dict[str, Any]:
    """An assessment JSON with the horizon fields the split needs; else an input error.
    A file of a round whose files do not match its manifest (a run killed mid-switch, an
    edited file) is compared as it is, with a warning."""
    from riskreport.files import folder

    if not path.is_file():
        raise InputError("file not found; expected an assessment JSON", file=path)
    try:
        folder.check_listed(path.resolve())
    except InputError as exc:
        log.warning("%s; compared as it is", exc.one_line())
    data = change.load(path)
    rows = data["horizons"]
    if not isinstance(rows, list) or not rows:
        raise InputError("expected a non-empty 'horizons' list", file=path, column="horizons")
    for i, row in enumerate(rows, start=1):
        missing = [k for k in ROW_KEYS if not isinstance(row, dict) or k not in row]
        if missing or not (row.get("percentiles") or row.get("quantiles")):
            what = missing[0] if missing else "percentiles"
            raise InputError(
                f"expected '{what}' in every horizon of an assessment JSON",
                file=path,
                row=i,
                column=f"horizons.{what}",
            )
    return data


def compare_files(old: Path, new: Path) -> Comparison:
    """Compare two assessment JSON files.

    Parameters
    ----------
    old, new
        ``assessment-<as_of>.json`` files of two rounds. Their order is taken from their
        ``as_of`` dates: files given newest first are compared oldest first, and the result
        says so (``swapped``).

    Returns
    -------
    Comparison
        One row per target period present in both, from the earlier round to the later.

    Raises
    ------
    InputError
        A file is missing, not JSON, or not an assessment.
    """
    before, now = _read(old), _read(new)
    if before.get("frequency") != now.get("frequency"):
        # Monthly and quarterly rounds share no target period: no comparison, not an
        # empty one.
        raise InputError(
            f"expected two rounds of one frequency, got {before.get('frequency')} "
            f"({old.name}) and {now.get('frequency')}",
            file=new,
        )
    swapped = _ordinal(now, new) < _ordinal(before, old)
    if swapped:
        (before, old), (now, new) = (now, new), (before, old)
    try:
        record = change.compare(
            before, [(row["period"], change.side(row)) for row in now["horizons"]]
        )
    except (KeyError, TypeError, ValueError) as exc:
        raise InputError(f"cannot compare the two rounds ({exc})", file=new) from None
    return Comparison(
        old_as_of=str(before["as_of"]),
        new_as_of=str(now["as_of"]),
        rows=record.horizons,
        swapped=swapped,
        old_method=method_of(before),
        new_method=method_of(now),
    )


def _ordinal(data: dict[str, Any], path: Path) -> int:
    """The round's as_of as a period ordinal, to put two rounds in date order."""
    parsed = periods.parse(str(data["as_of"]))
    if parsed is None:
        raise InputError(
            f"expected a period like 2026-11 or 2026-Q4, got {data['as_of']!r}",
            file=path,
            column="as_of",
        )
    return parsed.ordinal


def text(c: Comparison) -> list[str]:
    """The comparison as a terminal table (percentages and percentage points)."""
    from riskreport.report.tables import table

    lines = [
        f"Change in the probability of inside, {c.old_as_of} -> {c.new_as_of}, by target period",
        "(centre + spread + band = change; parts in percentage points)",
        "",
    ]
    if c.methods_differ:
        lines[2:2] = [
            "The two rounds used different methods, so part of the change is the method's:",
            f"  {c.old_as_of}: {c.old_method}",
            f"  {c.new_as_of}: {c.new_method}",
        ]
    if c.swapped:
        lines[2:2] = [
            f"(the files were given newest first; compared in date order, {c.old_as_of} first)"
        ]
    if not c.rows:
        return [*lines, "No target period is in both rounds."]
    rows = [
        [
            r.period,
            fmt.single_percent(r.p_inside_before),
            fmt.single_percent(r.p_inside_now),
            fmt.points(r.p_inside_now - r.p_inside_before),
            fmt.points(r.due_to_centre),
            fmt.points(r.due_to_spread),
            fmt.points(r.due_to_band),
        ]
        for r in c.rows
    ]
    header = ["period", "before", "now", "change", "centre", "spread", "band"]
    return lines + table(header, rows)
