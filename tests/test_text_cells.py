"""User text in the CSV tables and the workbook stays text: never a formula, never a link.

Reproduction of the issue: a scenario named ``=1+2`` was stored in the workbook as a
formula (shown as 3), and a model named ``=HYPERLINK("http://...")`` became a live link in
the weights and accuracy sheets. The characters that make a spreadsheet read a cell as a
formula are those of the OWASP guidance on CSV injection: ``=``, ``+``, ``-``, ``@``, tab
and carriage return at the start of a cell (OWASP, "CSV Injection",
owasp.org/www-community/attacks/CSV_Injection, recalled from memory; the same list in OWASP
ASVS 5.0, requirement 1.2.10). Oracles: Python's ``csv`` reader and openpyxl's reader, an
independent route from our writer.
"""

from __future__ import annotations

import csv
from collections.abc import Callable
from pathlib import Path

from openpyxl import load_workbook

from tests.conftest import Case, Result

LINK = '=HYPERLINK("http://example.invalid/","open me")'
NAMES = {"a": LINK, "b": "@SUM(1+1)", "c": "-1+2"}
SCENARIO = "=1+2"
DANGEROUS = ("=", "+", "-", "@", "\t", "\r")


def _build(case: Case, run: Callable[..., Result], out: Path) -> None:
    for row in case.forecasts[1:]:
        row[2] = NAMES[row[2]]
    case.config = case.config.replace('["json", "csv"]', '["json", "csv", "xlsx"]')
    case.config = case.config.replace('title = "Test brief"', 'title = "=TITLE()"')
    case.config += (
        f'\n[[scenario]]\nname = "{SCENARIO}"\nfrom = "2025-01"\nto = "2025-02"\n'
        'shift = 0.3\nreason = "+reason"\n'
    )
    result = run("build", case.write(), "--out", out, "-q")
    assert result.code == 0, result.stderr


def _number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def test_csv_cells_from_user_text_are_not_formulas(
    case: Case, run: Callable[..., Result], tmp_path: Path
) -> None:
    out = tmp_path / "o"
    _build(case, run, out)
    seen_negative = False
    for table in sorted((out / "tables").glob("*.csv")):
        with table.open(encoding="utf-8", newline="") as handle:
            for row in csv.reader(handle):
                for cell in row:
                    if _number(cell):  # numbers stay numbers, negative ones included
                        seen_negative |= cell.startswith("-")
                        continue
                    assert not cell.startswith(DANGEROUS), (table.name, cell)
    assert seen_negative  # the check above really met negative numbers
    with (out / "tables/weights-2024-12.csv").open(encoding="utf-8", newline="") as handle:
        models = {row["model"] for row in csv.DictReader(handle)}
    assert models == {"'" + name for name in NAMES.values()}
    with (out / "tables/scenarios-2024-12.csv").open(encoding="utf-8", newline="") as handle:
        assert {row["scenario"] for row in csv.DictReader(handle)} == {"'" + SCENARIO}


def test_workbook_cells_from_user_text_are_strings(
    case: Case, run: Callable[..., Result], tmp_path: Path
) -> None:
    out = tmp_path / "o"
    _build(case, run, out)
    book = load_workbook(out / "workbook-2024-12.xlsx")
    formulas = [
        (ws.title, cell.coordinate)
        for ws in book.worksheets
        for row in ws.iter_rows()
        for cell in row
        if cell.data_type == "f"
    ]
    assert formulas == []
    assert not any(ws._hyperlinks for ws in book.worksheets)
    weights = book["weights"]
    header = [c.value for c in weights[1]]
    model = header.index("model")
    names = {row[model].value for row in weights.iter_rows(min_row=2)}
    assert names == set(NAMES.values())  # the text exactly as the user wrote it
    for row in weights.iter_rows(min_row=2):
        assert row[model].data_type == "s"
        assert row[model].quotePrefix  # editing the cell keeps it text
        assert isinstance(row[header.index("weight")].value, float)
    scenarios = book["scenarios"]
    assert {r[0].value for r in scenarios.iter_rows(min_row=2)} == {SCENARIO}
    centres = [r[3] for r in scenarios.iter_rows(min_row=2)]
    assert all(c.data_type == "n" and isinstance(c.value, float) for c in centres)
    accuracy = book["accuracy"]
    errors = [r[5] for r in accuracy.iter_rows(min_row=2)]
    assert any(c.value < 0 for c in errors)  # a negative number stays a number
    assert all(c.data_type == "n" and not c.quotePrefix for c in errors)
    notes = {r[0].value: r[1] for r in book["notes"].iter_rows(min_row=2)}
    assert notes["title"].value == "=TITLE()"
    assert notes["title"].data_type == "s"
