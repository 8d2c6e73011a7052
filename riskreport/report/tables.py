"""Plain-text tables of the track record for the terminal (``riskreport backtest``)."""

from __future__ import annotations

import math
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

from riskreport.assessment import Assessment
from riskreport.report import formatting as fmt
from riskreport.report.sections.common import declined

if TYPE_CHECKING:
    from riskreport.forecasts.stats import TestResult


def _table(header: list[str], rows: list[list[str]]) -> list[str]:
    widths = [max(len(r[i]) for r in [header, *rows]) for i in range(len(header))]

    def line(cells: list[str]) -> str:
        first = cells[0].ljust(widths[0])
        return "  ".join([first, *(c.rjust(w) for c, w in zip(cells[1:], widths[1:], strict=True))])

    return [line(header), "  ".join("-" * w for w in widths), *(line(r) for r in rows)]


def table(header: list[str], rows: list[list[str]]) -> list[str]:
    """A plain-text table: first column left-aligned, the others right-aligned."""
    return _table(header, rows)


def _window_words(window: int) -> str:
    return "every past round" if window == 0 else f"the last {window} rounds of each horizon"


def track_record_text(a: Assessment, horizons: Sequence[int] | None = None) -> list[str]:
    """RMSE by forecaster and DM p-values against the combination, one row per horizon.

    Parameters
    ----------
    a
        The assessment.
    horizons
        The horizons to show (``--horizons``); None shows every reported horizon.
    """
    shown = list(horizons) if horizons is not None else [r.h for r in a.horizons]
    by_key = {(r.model, r.h): r for r in a.accuracy}
    models = list(dict.fromkeys(r.model for r in a.accuracy))
    lines = [
        f"Track record as of {a.as_of}: RMSE (pp) by horizon h over the error window "
        f"({_window_words(a.uncertainty.window)}); in brackets the rounds scored",
        "",
    ]
    rows = []
    for h in shown:
        cells = [str(h)]
        for m in models:
            r = by_key.get((m, h))
            cells.append(f"{fmt.number(r.rmse, 2)} ({r.n})" if r else "-")
        rows.append(cells)
    lines += _table(["h", *models], rows)
    lines += [
        "",
        "Diebold-Mariano p-values against the combination (two-sided; fixed-smoothing beyond one step)",
        "",
    ]
    tests = {
        (t.models[0], t.horizon): t
        for t in a.tests
        if t.name == "diebold-mariano" and t.models[1] == a.own_names.combination
    }
    tested = [m for m in models if any((m, h) in tests for h in shown)]
    rows = [
        [str(h), *(_pvalue(tests[(m, h)]) if (m, h) in tests else "-" for m in tested)]
        for h in shown
    ]
    lines += _table(["h", *tested], rows) if tested else ["(no test could be run)"]
    if any(declined(t.notes) for t in tests.values()):
        lines += [
            "",
            "too few: the rounds scored there overlap (an h-step outcome shares shocks with "
            "its neighbours'), so they hold too few independent outcomes for the test to hold "
            "its size; it declines rather than give a verdict.",
        ]
    return lines


def shown(path: Path) -> str:
    """A path as a user typing in the current folder would write it: relative to it when
    the path is inside it, else absolute."""
    here = Path.cwd().resolve()
    path = path.resolve()
    return path.relative_to(here).as_posix() if path.is_relative_to(here) else str(path)


def written_text(paths: Sequence[Path], out_dir: Path) -> list[str]:
    """The files a command wrote and where its run was recorded."""
    return [
        f"Wrote {len(paths)} file{'s' if len(paths) != 1 else ''} into {shown(out_dir)}:",
        *(f"  {shown(p)}" for p in paths),
        f"Run recorded in {shown(out_dir / 'runs.jsonl')}",
    ]


def _pvalue(test: TestResult) -> str:
    """A p-value to 3 decimals; "too few" for a test that declined (too few independent
    outcomes), "undefined" for one that could not be computed (no variation)."""
    if declined(test.notes):
        return "too few"
    return fmt.number(test.pvalue, 3) if math.isfinite(test.pvalue) else "undefined"
