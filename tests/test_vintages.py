"""Actuals with a vintage column: first release or latest, nothing published after as_of."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest

import riskreport
from riskreport.reading import inputs, periods
from tests.conftest import Case, Result


def _write(path: Path, rows: list[str]) -> Path:
    path.write_text("period,value,vintage\n" + "\n".join(rows) + "\n")
    return path


def _ordinal(year: int, month: int) -> int:
    parsed = periods.parse(f"{year:04d}-{month:02d}")
    assert parsed is not None
    return parsed.ordinal


def test_first_release_latest_and_no_look_ahead(tmp_path: Path) -> None:
    # Worked by hand: 2024-01 released 2.0 in 2024-02, revised to 2.3 in 2024-04 and to
    # 2.4 in 2024-07; 2024-02 released 1.5 in 2024-03 only.
    path = _write(
        tmp_path / "a.csv",
        [
            "2024-01,2.0,2024-02",
            "2024-01,2.3,2024-04",
            "2024-02,1.5,2024-03",
            "2024-01,2.4,2024-07",
        ],
    )
    as_of = _ordinal(2024, 5)
    first = inputs.read_actuals(path, "monthly", as_of=as_of, score_against="first-release")
    latest = inputs.read_actuals(path, "monthly", as_of=as_of, score_against="latest")
    assert first.period.tolist() == latest.period.tolist() == [as_of - 4, as_of - 3]
    np.testing.assert_array_equal(first.value, [2.0, 1.5])
    np.testing.assert_array_equal(latest.value, [2.3, 1.5])  # 2.4 came out after as_of
    assert first.vintages


@pytest.mark.parametrize(
    ("rows", "expected"),
    [
        (["2024-03,2.0,2024-02"], "expected a vintage on or after its period '2024-03'"),
        (["2024-01,2.0,2024-02", "2024-01,2.1,2024-02"], "duplicate (period, vintage)"),
        (["2024-01,2.0,2024-Q1"], "mixed frequencies"),
    ],
)
def test_bad_vintages_are_input_errors(tmp_path: Path, rows: list[str], expected: str) -> None:
    path = _write(tmp_path / "a.csv", rows)
    with pytest.raises(riskreport.InputError, match="vintage") as info:
        inputs.read_actuals(path, "monthly", as_of=_ordinal(2024, 12))
    assert expected in info.value.one_line()


def test_one_vintage_per_period_gives_the_same_assessment(
    case: Case, run: Callable[..., Result], tmp_path: Path
) -> None:
    # A vintage column that holds one release per period (published the next month)
    # changes no number; the brief then states what the errors are scored against.
    plain = riskreport.assess(case.write())
    header, *rows = case.actuals
    case.actuals = [[*header, "vintage"]] + [
        [p, v, f"{int(p[:4]) + (p[5:] == '12'):04d}-{int(p[5:]) % 12 + 1:02d}"] for p, v in rows
    ]
    case.config = case.config.replace(
        'actuals = "actuals.csv"', 'actuals = "actuals.csv"\nscore_against = "first-release"'
    ).replace('["json", "csv"]', '["json", "html"]')
    out = tmp_path / "o"
    assert run("build", case.write(), "--out", out, "-q").code == 0
    data = json.loads((out / "assessment-2024-12.json").read_text())
    assert data["score_against"] == "first-release"
    assert [r["p_inside"] for r in data["horizons"]] == pytest.approx(
        [r.p_inside for r in plain.horizons], abs=1e-11
    )
    assert plain.score_against is None
    page = (out / "brief-2024-12.html").read_text()
    assert "Outcomes scored against" in page
    assert "the first release of each outcome" in page


def test_unknown_score_against_is_refused(case: Case, run: Callable[..., Result]) -> None:
    case.config = case.config.replace(
        'actuals = "actuals.csv"', 'actuals = "actuals.csv"\nscore_against = "final"'
    )
    result = run("check", case.write())
    assert result.code == 2
    assert "[inputs] score_against" in result.stderr
