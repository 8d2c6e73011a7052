"""``--previous FILE`` and earlier rounds read back: an edited or foreign assessment JSON
is bad input (exit 2, one line naming the file, the horizon row and the key), never a
crash and never a "change since" printed from numbers no brief could hold."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest

from riskreport.errors import InputError
from riskreport.rounds import change
from tests.conftest import Case, Result


def _row() -> dict[str, Any]:
    """A horizon row as a brief writes it: 99 increasing percentiles around a centre."""
    percentiles = [2.0 + (k - 50) / 25 for k in change.PERCENTILES]
    return {"period": "2024-12", "centre": 2.0, "band": [1.0, 3.0], "p_inside": 0.6,
            "percentiles": percentiles}  # fmt: skip


def _write(tmp_path: Path, row: dict[str, Any]) -> Path:
    path = tmp_path / "assessment-2024-11.json"
    path.write_text(json.dumps({"as_of": "2024-11", "horizons": [row]}), "utf-8")
    return path


def test_a_brief_as_written_is_read(tmp_path: Path) -> None:
    assert change.load(_write(tmp_path, _row()))["as_of"] == "2024-11"


@pytest.mark.parametrize(
    ("key", "value"),
    [
        ("p_inside", 5.0),  # was printed as the earlier P(inside): 500%
        ("p_inside", "x"),  # was a ValueError traceback (exit 1)
        ("centre", None),
        ("band", [3.0, 1.0]),
        ("percentiles", [1.0, 2.0, 3.0]),  # was a broadcast ValueError (exit 1)
        ("percentiles", [float("nan")] * 99),
        ("percentiles", list(range(99, 0, -1))),
    ],
)
def test_an_edited_row_is_bad_input(tmp_path: Path, key: str, value: object) -> None:
    row = _row()
    row[key] = value
    with pytest.raises(InputError) as caught:
        change.load(_write(tmp_path, row))
    assert caught.value.row == 1
    assert caught.value.column == f"horizons.{key}"


def test_a_later_previous_brief_is_refused(
    case: Case, tmp_path: Path, run: Callable[..., Result]
) -> None:
    # Regression: --previous naming a later round (or another frequency) printed a
    # "change since" that later brief as if it came before.
    config = case.write()
    assert run("build", config, "--out", tmp_path / "a", "-q").code == 0
    earlier = tmp_path / "assessment-2030-01.json"
    data = json.loads((tmp_path / "a" / "assessment-2024-12.json").read_text("utf-8"))
    data["as_of"] = "2030-01"
    earlier.write_text(json.dumps(data), "utf-8")
    result = run("build", config, "--out", tmp_path / "b", "--previous", earlier)
    assert result.code == 2
    assert "assessment-2030-01.json" in result.stderr
    assert "monthly round not later than 2024-12" in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1
    assert not (tmp_path / "b").exists()


def test_a_round_of_the_other_frequency_is_not_the_previous_brief(
    case: Case, tmp_path: Path, run: Callable[..., Result]
) -> None:
    # Labels sort in time order only within one frequency: "2024-12" < "2024-Q4" as text,
    # so a quarterly round took a monthly brief in the same folder as its previous one.
    from tests import quarterly_world as qw

    out = tmp_path / "out"
    assert run("build", case.write(), "--out", out, "-q").code == 0
    (tmp_path / "q").mkdir()
    world = qw.write(tmp_path / "q", simulations=2000)
    result = run("build", world.config, "--out", out, "-q")
    assert result.code == 0, result.stderr
    data = json.loads((out / "assessment-2024-Q4.json").read_text("utf-8"))
    assert data["change"] is None
    assert [r["as_of"] for r in data["round_history"]] == ["2024-Q4"]
