"""Quarters written ``2009Q4`` (as pandas and many statistical offices write them) are read
everywhere ``2009-Q4`` is; outputs always write ``2009-Q4``; anything else is still refused.

Regression: ``2009Q4`` was refused with exit code 2. The undashed form is what pandas
itself prints for a quarterly Period (``str(pandas.Period("2009Q4", freq="Q"))``).
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pandas as pd
import pytest

import riskreport
from riskreport.reading import periods
from tests import quarterly_world as qw
from tests.conftest import Result

JUDGEMENT = '[[judgement]]\nfrom = "{a}"\nto = "{b}"\nshift = 0.3\nreason = "test"\n'
SCHEDULE = 'schedule = [{{from = "{c}", midpoint = 2.5, tolerance = 1.0}}]\n'


def _write(folder: Path, dash: bool) -> Path:
    a, b, c = (qw.label(qw.AS_OF + k, dash) for k in (1, 3, 5))
    world = qw.write(
        folder,
        dash=dash,
        simulations=2000,
        extra=JUDGEMENT.format(a=a, b=b),
        extra_target=SCHEDULE.format(c=c),
    )
    return world.config


def _numbers(a: riskreport.Assessment) -> dict[str, object]:
    data = a.to_dict()
    del data["inputs"]  # file hashes differ with the spelling
    return data


def test_pandas_writes_quarters_without_the_dash() -> None:
    # The form this fix accepts is pandas' own (pandas documentation, Period.__str__).
    assert str(pd.Period("2009Q4", freq="Q")) == "2009Q4"
    parsed = periods.parse("2009Q4")
    assert parsed is not None
    assert periods.label(parsed.ordinal, "quarterly") == "2009-Q4"


def test_undashed_quarters_give_the_same_assessment(tmp_path: Path) -> None:
    (tmp_path / "dash").mkdir()
    (tmp_path / "plain").mkdir()
    dashed = riskreport.assess(_write(tmp_path / "dash", True), as_of="2024-Q3")
    plain = riskreport.assess(_write(tmp_path / "plain", False), as_of="2024Q3")
    assert _numbers(plain) == _numbers(dashed)
    assert plain.as_of == "2024-Q3"
    assert plain.judgement[0].start == "2025-Q1"
    assert plain.target.schedule[0].start == "2026-Q1"
    assert plain.horizons[0].period == "2024-Q3"


def test_months_range_and_as_of_accept_both_forms(
    tmp_path: Path, run: Callable[..., Result]
) -> None:
    config = _write(tmp_path, False)
    out = tmp_path / "out"
    result = run("batch", config, "--months", "2024Q3..2024-Q4", "--out", out, "--json", "-q")
    assert result.code == 0, result.stderr
    assert sorted(p.name for p in out.glob("assessment-*.json")) == [
        "assessment-2024-Q3.json",
        "assessment-2024-Q4.json",
    ]
    data = json.loads((out / "assessment-2024-Q4.json").read_text("utf-8"))
    assert data["as_of"] == "2024-Q4"
    assert run("check", config, "--as-of", "2024q2").code == 0


@pytest.mark.parametrize("bad", ["2024 Q3", "2024-Q5", "2024Q", "24Q3", "2024--Q3", "2024/Q3"])
def test_other_spellings_are_still_refused(
    tmp_path: Path, run: Callable[..., Result], bad: str
) -> None:
    config = _write(tmp_path, False)
    result = run("check", config, "--as-of", bad)
    assert result.code == 2
    assert "expected a quarterly period like 2026-Q4" in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1
    lines = (tmp_path / "actuals.csv").read_text().splitlines()
    lines[5] = f"{bad},2.0"
    (tmp_path / "actuals.csv").write_text("\n".join(lines) + "\n")
    result = run("check", config)
    assert result.code == 2
    assert "actuals.csv, row 6, column 'period'" in result.stderr
