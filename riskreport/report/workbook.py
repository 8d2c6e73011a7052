"""The brief's tables as one Excel workbook (``xlsx`` in ``[output] formats``).

One sheet per table, built from the typed :class:`~riskreport.assessment.Assessment` (never
from re-read JSON): numbers are stored as numbers with a number format (probabilities as
fractions shown as percentages), the header row is frozen, and a ``notes`` sheet carries the
cautions, the warnings and the inputs' SHA-256.

The file is byte-reproducible: the document dates come from ``as_of`` and every zip entry
gets the same fixed time stamp (openpyxl itself stamps the clock on both).
"""

from __future__ import annotations

import datetime as dt
import io
import zipfile
from collections.abc import Sequence
from dataclasses import dataclass

from openpyxl import Workbook
from openpyxl.styles import Alignment, Font
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet
from openpyxl.writer.excel import ExcelWriter

from riskreport.assessment import Assessment, HorizonResult, Quantiles
from riskreport.laws.sensitivity import FIXED_SHIFTS
from riskreport.report import cells
from riskreport.report.render import created_date
from riskreport.report.sections import summary

Cell = str | int | float | None

PERCENT = "0.0%"
RATE = "0.00"
WHOLE = "0"
FINE = "0.000"


@dataclass(frozen=True)
class Table:
    """One sheet: a name, column headers, rows and a number format per column."""

    name: str
    columns: tuple[str, ...]
    rows: tuple[tuple[Cell, ...], ...]
    formats: tuple[str, ...]


def _format(column: str) -> str:
    """The number format of a column, by what its name says it holds."""
    if column.startswith(("p_", "due_to", "coverage", "observed", "nominal")):
        return PERCENT
    if column in {"h", "n", "n_errors", "year", "observed_periods", "simulated_periods"}:
        return WHOLE
    if column in {"weight", "brier", "reliability", "resolution", "uncertainty", "skill"}:
        return FINE
    if column.startswith(("rps", "log_score", "crps")):
        return FINE
    return RATE


def table(name: str, columns: Sequence[str], rows: Sequence[Sequence[Cell]]) -> Table:
    """A :class:`Table` with formats read off the column names."""
    return Table(
        name, tuple(columns), tuple(tuple(r) for r in rows), tuple(_format(c) for c in columns)
    )


def _horizon_rows(rows: Sequence[HorizonResult]) -> list[tuple[Cell, ...]]:
    return [
        (
            r.period,
            r.h,
            r.band[0],
            r.band[1],
            r.point_forecast,
            r.centre,
            r.p_below,
            r.p_inside,
            r.p_above,
            r.p_inside_interval[0],
            r.p_inside_interval[1],
            *(v for _, v in r.quantiles.items()),
            r.distribution,
            r.n_errors,
        )
        for r in rows
    ]


def _horizon_columns(a: Assessment) -> tuple[str, ...]:
    return (
        "period",
        "h",
        "lower",
        "upper",
        "point_forecast",
        "centre",
        "p_below",
        "p_inside",
        "p_above",
        "p_inside_lo",
        "p_inside_hi",
        *(f"q{k}" for k in Quantiles.keys()),
        "distribution",
        "n_errors",
    )


def _calibration(a: Assessment) -> Table:
    cal = a.calibration
    nominals = sorted({row.nominal for row in cal.coverage})
    coverage = {(row.h, row.nominal): row.observed for row in cal.coverage}
    rps = {row.h: row for row in cal.rps.by_horizon}
    rows = []
    for b in cal.brier.by_horizon:
        h = b.h
        r = rps.get(h)
        rows.append(
            (
                h,
                b.n,
                *(coverage.get((h, q)) for q in nominals),
                b.brier,
                b.reliability,
                b.resolution,
                b.uncertainty,
                r.rps if r else None,
                r.rps_climatology if r else None,
                r.skill if r else None,
            )
        )
    columns = (
        "h",
        "n",
        *(f"coverage_{round(100 * q)}" for q in nominals),
        "brier",
        "reliability",
        "resolution",
        "uncertainty",
        "rps",
        "rps_climatology",
        "skill",
    )
    return table("calibration", columns, rows)


def _shift_name(shift: float) -> str:
    """-0.5 as ``minus_0_5``: the field names of :class:`SensitivityRow`."""
    sign = "minus" if shift < 0 else "plus"
    return f"{sign}_{abs(shift):g}".replace(".", "_")


def tables(a: Assessment) -> tuple[Table, ...]:
    """Every data sheet of the workbook, in order."""
    p = a.policy
    out = [
        table(
            "headline",
            (
                "as_of",
                "period",
                "h",
                "lower",
                "upper",
                "centre",
                "p_below",
                "p_inside",
                "p_above",
                "p_inside_lo",
                "p_inside_hi",
            ),
            [
                (
                    a.as_of,
                    p.period,
                    p.h,
                    p.band[0],
                    p.band[1],
                    p.centre,
                    p.p_below,
                    p.p_inside,
                    p.p_above,
                    *p.p_inside_interval,
                )
            ],
        ),
        table("horizons", _horizon_columns(a), _horizon_rows(a.horizons)),
        table("model-based", _horizon_columns(a), _horizon_rows(a.model_based_horizons)),
        table(
            "path",
            ("period", "h", "p_inside_throughout", "p_back_inside_by"),
            [(r.period, r.h, r.p_inside_throughout, r.p_back_inside_by) for r in a.path],
        ),
        table(
            "annual",
            ("year", "basis", "lower", "upper", "p_below", "p_inside", "p_above"),
            [
                (r.year, r.basis, r.band[0], r.band[1], r.p_below, r.p_inside, r.p_above)
                for r in a.annual
            ],
        ),
        table(
            "thresholds",
            (
                "threshold",
                "period",
                "h",
                "p_below",
                "p_above",
                "p_below_at_least_once",
                "p_above_at_least_once",
            ),
            [
                (
                    t.threshold,
                    at.period,
                    at.h,
                    at.p_below,
                    at.p_above,
                    path.p_below_at_least_once,
                    path.p_above_at_least_once,
                )
                for t in a.thresholds
                for at, path in zip(t.horizons, t.path, strict=True)
            ],
        ),
        table(
            "scenarios",
            ("scenario", "period", "h", "centre", "p_below", "p_inside", "p_above"),
            [
                (
                    s.name,
                    r.period,
                    r.h,
                    r.centre,
                    r.p_below,
                    r.p_inside,
                    r.p_above,
                )
                for s in a.scenarios
                for r in s.horizons
            ],
        ),
        table(
            "change",
            (
                "period",
                "p_inside_before",
                "p_inside_now",
                "due_to_centre",
                "due_to_spread",
                "due_to_band",
            ),
            [
                (
                    r.period,
                    r.p_inside_before,
                    r.p_inside_now,
                    r.due_to_centre,
                    r.due_to_spread,
                    r.due_to_band,
                )
                for r in (a.change.horizons if a.change else ())
            ],
        ),
        table(
            "weights",
            ("h", "model", "weight"),
            [(w.h, w.model, w.weight) for w in a.combination.weights],
        ),
        table(
            "accuracy",
            ("model", "h", "n", "mae", "rmse", "mean_error"),
            [(r.model, r.h, r.n, r.mae, r.rmse, r.mean_error) for r in a.accuracy],
        ),
        _calibration(a),
        table(
            "sensitivity",
            (
                "period",
                "h",
                "centre",
                "p_inside",
                "shift_to_even",
                "p_inside_max",
                *(f"p_inside_shift_{_shift_name(x)}" for x in FIXED_SHIFTS),
            ),
            [
                (
                    r.period,
                    r.h,
                    r.centre,
                    r.p_inside,
                    r.shift_to_even,
                    r.p_inside_max,
                    *(getattr(r, f"p_inside_shift_{_shift_name(x)}") for x in FIXED_SHIFTS),
                )
                for r in a.sensitivity_to_centre
            ],
        ),
        table(
            "situations",
            (
                "situation",
                "h",
                "n",
                "n_effective",
                "coverage_50",
                "coverage_90",
                "coverage_90_lo",
                "coverage_90_hi",
                "brier",
                "today",
                "too_small",
            ),
            [
                (
                    r.situation,
                    r.h,
                    r.n,
                    r.n_effective,
                    r.coverage_50,
                    r.coverage_90,
                    *(r.coverage_90_interval or (None, None)),
                    r.brier,
                    "yes" if r.today else "",
                    "yes" if r.too_small else "",
                )
                for r in a.record_by_situation
            ],
        ),
        table(
            "attribution",
            ("period", "h", "term", "model", "centre_change", "centre_before", "centre_now"),
            [
                (r.period, r.h, r.term, r.model, r.centre_change, r.centre_before, r.centre_now)
                for r in a.attribution
            ],
        ),
        table(
            "leave-one-out",
            ("model", "period", "h", "centre", "centre_change", "p_inside", "p_inside_change"),
            [
                (r.model, r.period, r.h, r.centre, r.centre_change, r.p_inside, r.p_inside_change)
                for r in a.leave_one_out
            ],
        ),
        table(
            "rounds",
            ("as_of", "period", "h", "p_inside", "current"),
            [
                (r.as_of, r.period, r.h, r.p_inside, "yes" if r.current else "")
                for r in a.round_history
            ],
        ),
        table(
            "model-forecasts",
            ("model", "period", "h", "value"),
            [(r.model, r.period, r.h, r.value) for r in a.model_forecasts],
        ),
        table(
            "past-errors",
            ("origin", "period", "h", "error"),
            [(e.origin, e.period, e.h, e.error) for e in a.past_errors],
        ),
    ]
    return tuple(out)


def notes(a: Assessment) -> tuple[tuple[str, str], ...]:
    """The notes sheet: what the numbers are, the cautions, warnings and input hashes."""
    lines: list[tuple[str, str]] = [
        ("title", a.title),
        ("institution", a.institution),
        ("as_of", a.as_of),
        (
            "probabilities",
            "Stored as fractions (0.25 is 25%) and shown as percentages; inside means "
            "lower <= inflation <= upper. All numbers are unrounded; the brief rounds them.",
        ),
        (
            "change",
            "Empty when there is no previous brief to compare with."
            if a.change is None
            else f"Compared with the brief of {a.change.previous_as_of}.",
        ),
    ]
    lines += [("caution", c) for c in summary.CAUTIONS]
    lines += [("warning", w) for w in a.warnings]
    lines += [(f"input: {i.role}", f"{i.path} sha256 {i.sha256}") for i in a.inputs]
    lines += [(f"software: {k}", v) for k, v in a.software.items()]
    return tuple(lines)


def _as_text(ws: Worksheet) -> None:
    """Every text cell stored as a string, never a formula (openpyxl makes one of text that
    begins with ``=``), and text a spreadsheet would read as a formula marked with the
    quote prefix so that editing it keeps it text (:mod:`riskreport.report.cells`)."""
    for row in ws.iter_rows():
        for cell in row:
            if isinstance(cell.value, str):
                cell.data_type = "s"
                if cells.formula_like(cell.value):
                    cell.quotePrefix = True


def _write(ws: Worksheet, t: Table) -> None:
    ws.append(list(t.columns))
    for cell in ws[1]:
        cell.font = Font(bold=True)
    for row in t.rows:
        ws.append(list(row))
    for j, (column, fmt) in enumerate(zip(t.columns, t.formats, strict=True), start=1):
        letter = get_column_letter(j)
        ws.column_dimensions[letter].width = max(10, len(column) + 2)
        for (cell,) in ws.iter_rows(min_row=2, min_col=j, max_col=j):
            if isinstance(cell.value, (int, float)):
                cell.number_format = fmt
    _as_text(ws)
    ws.freeze_panes = "A2"


def _fixed_zip(data: bytes, stamp: dt.datetime) -> bytes:
    """The same zip with every entry's time set to ``stamp`` (zip keeps local times)."""
    out = io.BytesIO()
    with (
        zipfile.ZipFile(io.BytesIO(data)) as source,
        zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as target,
    ):
        for info in source.infolist():
            entry = zipfile.ZipInfo(info.filename, date_time=stamp.timetuple()[:6])
            entry.compress_type = zipfile.ZIP_DEFLATED
            target.writestr(entry, source.read(info.filename))
    return out.getvalue()


def workbook(a: Assessment) -> bytes:
    """The workbook's bytes (identical for identical assessments)."""
    wb = Workbook()
    first = wb.active
    assert first is not None
    wb.remove(first)
    for t in tables(a):
        _write(wb.create_sheet(t.name), t)
    ws = wb.create_sheet("notes")
    ws.append(["item", "text"])
    ws["A1"].font = Font(bold=True)
    ws["B1"].font = Font(bold=True)
    for key, text in notes(a):
        ws.append([key, text])
    ws.column_dimensions["A"].width = 24
    ws.column_dimensions["B"].width = 110
    for (cell,) in ws.iter_rows(min_row=2, min_col=2, max_col=2):
        cell.alignment = Alignment(wrap_text=True, vertical="top")
    _as_text(ws)
    ws.freeze_panes = "A2"
    day = created_date(a)
    stamp = dt.datetime(day.year, day.month, day.day)
    wb.properties.created = stamp
    wb.properties.modified = stamp
    wb.properties.creator = "riskreport"
    wb.properties.title = a.title
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        # ExcelWriter directly: save_workbook would stamp the clock as the modified time
        ExcelWriter(wb, archive).write_data()
    return _fixed_zip(buffer.getvalue(), stamp)
