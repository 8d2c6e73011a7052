"""Round history: P(inside) for the policy-horizon period across the briefs in a folder."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pytest

from riskreport.files import folder
from riskreport.rounds import history
from tests.conftest import Case, Result


def test_history_reads_each_earlier_round_that_reached_the_period(
    case: Case, run: Callable[..., Result], tmp_path: Path
) -> None:
    # Oracle: the earlier rounds' own JSON files, read directly.
    out = tmp_path / "o"
    case.config = case.config.replace('["json", "csv"]', '["json", "html"]')
    config = case.write()
    for as_of in ("2024-09", "2024-11", "2024-12"):
        assert run("build", config, "--out", out, "--as-of", as_of, "-q").code == 0
    (out / "assessment-2024-10.json").write_text("not json")  # a broken record is skipped
    assert run("build", config, "--out", out, "--as-of", "2024-12", "-q", "--force").code == 0
    now = json.loads((out / "assessment-2024-12.json").read_text())
    target = now["horizons"][2]["period"]  # policy_horizon = 2
    assert target == "2025-02"
    nov = json.loads((out / "assessment-2024-11.json").read_text())
    expected_nov = next(r for r in nov["horizons"] if r["period"] == target)
    # 2024-09 reported up to 2024-12 only (h <= 3): it does not reach 2025-02
    assert now["round_history"] == [
        {
            "as_of": "2024-11",
            "period": target,
            "h": 3,
            "p_inside": expected_nov["p_inside"],
            "current": False,
        },
        {
            "as_of": "2024-12",
            "period": target,
            "h": 2,
            "p_inside": now["horizons"][2]["p_inside"],
            "current": True,
        },
    ]
    page = (out / "brief-2024-12.html").read_text()
    assert "Across rounds" in page
    assert "2024-11" in page


def test_earlier_rounds_walks_back_and_stops(tmp_path: Path) -> None:
    # Rounds are trusted only when written as a unit with their manifest.
    for m in range(1, 10):
        as_of = f"2025-0{m}"
        folder.write_round(tmp_path, {f"assessment-{as_of}.json": b"{}"}, as_of=as_of)
    (tmp_path / "assessment-2025-05.json").write_text('{"altered": true}')  # not trusted now
    found = history.earlier_rounds(tmp_path, "2025-09", rounds=3)
    assert [p.name for p in found] == [
        "assessment-2025-08.json",
        "assessment-2025-07.json",
        "assessment-2025-06.json",
    ]
    assert [p.name for p in history.earlier_rounds(tmp_path, "2025-07", rounds=3)] == [
        "assessment-2025-06.json",
        "assessment-2025-04.json",
        "assessment-2025-03.json",
    ]
    assert history.earlier_rounds(tmp_path, "2025-01") == []


@pytest.mark.parametrize("folder", [None, "missing"])
def test_no_folder_gives_only_the_current_round(tmp_path: Path, folder: str | None) -> None:
    directory = None if folder is None else tmp_path / folder
    (point,) = history.points(directory, "2025-01", "2026-07", 18, 0.4)
    assert point.current


def test_current_calendar_year_across_rounds(
    case: Case, run: Callable[..., Result], tmp_path: Path
) -> None:
    # Oracle: each round's own `annual` record for the as_of year, read from its JSON.
    out = tmp_path / "o"
    case.config = case.config.replace('["json", "csv"]', '["json", "html"]')
    config = case.write()
    for as_of in ("2024-11", "2024-12"):
        assert run("build", config, "--out", out, "--as-of", as_of, "-q").code == 0
    stated = {}
    for as_of in ("2024-11", "2024-12"):
        data = json.loads((out / f"assessment-{as_of}.json").read_text())
        row = next(
            r for r in data["annual"] if r["year"] == 2024 and r["basis"] == "calendar-year-average"
        )
        stated[as_of] = row["p_inside"]
    now = json.loads((out / "assessment-2024-12.json").read_text())
    assert now["year_history"] == [
        {
            "as_of": "2024-11",
            "year": 2024,
            "basis": "calendar-year-average",
            "p_inside": stated["2024-11"],
            "current": False,
        },
        {
            "as_of": "2024-12",
            "year": 2024,
            "basis": "calendar-year-average",
            "p_inside": stated["2024-12"],
            "current": True,
        },
    ]
    assert "For 2024 as a whole (average)" in (out / "brief-2024-12.html").read_text()
