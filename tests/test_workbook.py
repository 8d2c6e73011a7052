"""The xlsx workbook: read back with openpyxl."""

from __future__ import annotations

import io
import json
import zipfile
from collections.abc import Callable
from pathlib import Path

import pytest
from openpyxl import load_workbook

import riskreport
from riskreport.report import workbook
from tests.conftest import Case, Result

SHEETS = [
    "headline",
    "horizons",
    "model-based",
    "path",
    "annual",
    "thresholds",
    "scenarios",
    "change",
    "weights",
    "accuracy",
    "calibration",
    "sensitivity",
    "situations",
    "attribution",
    "leave-one-out",
    "rounds",
    "model-forecasts",
    "past-errors",
    "notes",
]


def test_workbook_reads_back_with_numbers_as_numbers(
    case: Case, run: Callable[..., Result], tmp_path: Path
) -> None:
    # Oracle: openpyxl's reader (an independent route from our writer) and the JSON.
    case.config = case.config.replace("tolerance = 1.0\n", "tolerance = 1.0\nthresholds = [0.5]\n")
    case.config = case.config.replace('["json", "csv"]', '["json", "xlsx"]')
    config = case.write()
    out = tmp_path / "o"
    assert run("build", config, "--out", out, "-q").code == 0
    data = json.loads((out / "assessment-2024-12.json").read_text())
    book = load_workbook(out / "workbook-2024-12.xlsx")
    assert book.sheetnames == SHEETS
    ws = book["horizons"]
    header = [c.value for c in ws[1]]
    assert ws.freeze_panes == "A2"
    assert ws.max_row == 1 + len(data["horizons"])
    for i, row in enumerate(data["horizons"], start=2):
        values = dict(zip(header, (c.value for c in ws[i]), strict=True))
        assert values["period"] == row["period"]
        assert isinstance(values["h"], int)
        assert isinstance(values["p_inside"], float)
        assert values["p_inside"] == pytest.approx(row["p_inside"], rel=1e-11)
        assert values["q0.5"] == pytest.approx(row["quantiles"]["0.5"], rel=1e-11)
    assert ws.cell(2, header.index("p_inside") + 1).number_format == "0.0%"
    thresholds = book["thresholds"]
    assert thresholds.max_row == 1 + 4
    assert thresholds.cell(2, 4).value == pytest.approx(
        data["thresholds"][0]["horizons"][0]["p_below"], rel=1e-11
    )
    headline = book["headline"]
    assert headline.cell(2, 8).value == pytest.approx(data["horizons"][2]["p_inside"], rel=1e-11)
    notes = [(r[0].value, r[1].value) for r in book["notes"].iter_rows(min_row=2)]
    hashes = {k: v for k, v in notes if k and k.startswith("input: ")}
    assert any(i["sha256"] in hashes[f"input: {i['role']}"] for i in data["inputs"])
    assert sum(k == "caution" for k, _ in notes) == 4
    assert book.properties.created.year == 2024
    assert book.properties.modified.month == 12


def test_workbook_is_byte_reproducible(case: Case) -> None:
    a = riskreport.assess(case.write())
    first = workbook.workbook(a)
    assert workbook.workbook(a) == first
    # no clock anywhere: every zip entry and the document dates carry the as_of month
    with zipfile.ZipFile(io.BytesIO(first)) as archive:
        assert {i.date_time for i in archive.infolist()} == {(2024, 12, 1, 0, 0, 0)}
        core = archive.read("docProps/core.xml").decode()
    assert "2024-12-01T00:00:00Z</dcterms:modified>" in core
    book = load_workbook(io.BytesIO(first))
    assert book["calibration"].cell(1, 3).value == "coverage_50"
