"""Plain-text tables of the track record for the terminal (``riskreport backtest``)."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from riskreport.assessment import Assessment
from riskreport.report import formatting as fmt
from riskreport.report.sections.common import declined, summary_horizons

if TYPE_CHECKING:
    from riskreport.forecasts.track_record import TestRow


def _table(header: list[str], rows: list[list[str]]) -> list[str]:
    widths = [max(len(r[i]) for r in [header, *rows]) for i in range(len(header))]

    def line(cells: list[str]) -> str:
        first = cells[0].ljust(widths[0])
        return "  ".join([first, *(c.rjust(w) for c, w in zip(cells[1:], widths[1:], strict=True))])

    return [line(header), "  ".join("-" * w for w in widths), *(line(r) for r in rows)]


def table(header: list[str], rows: list[list[str]]) -> list[str]:
    """A plain-text table: first column left-aligned, the others right-aligned."""
    return _table(header, rows)


def track_record_text(a: Assessment) -> list[str]:
    """RMSE by forecaster and DM p-values against the combination, at the summary horizons."""
    shown = summary_horizons(a)
    by_key = {(r.model, r.h): r for r in a.accuracy}
    models = list(dict.fromkeys(r.model for r in a.accuracy))
    lines = [
        f"Track record as of {a.as_of}: RMSE (pp) over the error window; n = rounds scored",
        "",
    ]
    rows = []
    for m in models:
        cells = [m]
        for h in shown:
            r = by_key.get((m, h))
            cells.append(f"{fmt.number(r.rmse, 2)} ({r.n})" if r else "-")
        rows.append(cells)
    lines += _table(["forecaster", *(f"h={h}" for h in shown)], rows)
    lines += [
        "",
        "Diebold-Mariano p-values against the combination (two-sided; fixed-smoothing beyond one step)",
        "",
    ]
    tests = {
        (t.models[0], t.h): t
        for t in a.tests
        if t.name == "diebold-mariano" and t.models[1] == "combination"
    }
    rows = [
        [m, *(_pvalue(tests[(m, h)]) if (m, h) in tests else "-" for h in shown)]
        for m in models
        if any((m, h) in tests for h in shown)
    ]
    lines += _table(["model", *(f"h={h}" for h in shown)], rows)
    return lines


def _pvalue(test: TestRow) -> str:
    """A p-value to 3 decimals; "too few" for a test that declined (too few independent
    outcomes), "undefined" for one that could not be computed (no variation)."""
    if declined(test.notes):
        return "too few"
    return fmt.number(test.pvalue, 3) if math.isfinite(test.pvalue) else "undefined"
