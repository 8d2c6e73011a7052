"""Plain-text tables of the track record for the terminal (``riskreport backtest``)."""

from __future__ import annotations

import math

from riskreport.assessment import Assessment
from riskreport.report import formatting as fmt
from riskreport.report.sections.common import summary_horizons


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
    lines += ["", "Diebold-Mariano (HLN) p-values against the combination (two-sided)", ""]
    pvalues = {
        (t.models[0], t.horizon): t.pvalue
        for t in a.tests
        if t.name == "diebold-mariano" and t.models[1] == a.own_names.combination
    }
    rows = [
        [m, *(_pvalue(pvalues[(m, h)]) if (m, h) in pvalues else "-" for h in shown)]
        for m in models
        if any((m, h) in pvalues for h in shown)
    ]
    lines += _table(["model", *(f"h={h}" for h in shown)], rows)
    return lines


def _pvalue(value: float) -> str:
    """A p-value to 3 decimals; "undefined" for a test that could not be computed."""
    return fmt.number(value, 3) if math.isfinite(value) else "undefined"
