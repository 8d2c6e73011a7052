"""``riskreport compare OLD.json NEW.json``."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pytest

from tests.conftest import Case, Result


@pytest.fixture
def rounds(case: Case, run: Callable[..., Result], tmp_path: Path) -> Path:
    out = tmp_path / "o"
    config = case.write()
    for as_of in ("2024-09", "2024-12"):
        assert run("build", config, "--out", out, "--as-of", as_of, "-q").code == 0
    return out


def test_compare_matches_the_briefs_own_change_record(
    rounds: Path, run: Callable[..., Result]
) -> None:
    # The brief of 2024-12 compared itself with 2024-09 (the latest earlier one in the
    # folder); compare must give the same split, and the parts must add up to the change
    # (Shapley efficiency: Shapley 1953, the values sum to the total).
    old, new = rounds / "assessment-2024-09.json", rounds / "assessment-2024-12.json"
    result = run("compare", old, new, "--json")
    assert result.code == 0, result.stderr
    summary = json.loads(result.stdout)
    own = json.loads(new.read_text())["change"]
    assert own["previous_as_of"] == "2024-09"
    assert [r["period"] for r in summary["horizons"]] == [r["period"] for r in own["horizons"]]
    for mine, theirs in zip(summary["horizons"], own["horizons"], strict=True):
        for key in ("due_to_centre", "due_to_spread", "due_to_band", "p_inside_before"):
            assert mine[key] == pytest.approx(theirs[key], abs=1e-9)
        parts = mine["due_to_centre"] + mine["due_to_spread"] + mine["due_to_band"]
        assert parts == pytest.approx(mine["p_inside_now"] - mine["p_inside_before"], abs=1e-9)
    text = run("compare", old, new)
    assert text.code == 0
    assert "2024-09 -> 2024-12" in text.stdout
    assert summary["horizons"][0]["period"] in text.stdout


def test_a_round_compared_with_itself_has_no_change(
    rounds: Path, run: Callable[..., Result]
) -> None:
    new = rounds / "assessment-2024-12.json"
    summary = json.loads(run("compare", new, new, "--json").stdout)
    assert summary["horizons"]
    for r in summary["horizons"]:
        assert r["due_to_centre"] == r["due_to_spread"] == r["due_to_band"] == 0.0


@pytest.mark.parametrize(
    ("content", "expected"),
    [
        (None, "file not found"),
        ("not json", "cannot read"),
        ('{"as_of": "2024-09"}', "cannot read"),
        ('{"as_of": "2024-09", "horizons": [{"period": "2024-10"}]}', "row 1"),
    ],
)
def test_bad_file_exits_2_with_one_line(
    rounds: Path, run: Callable[..., Result], tmp_path: Path, content: str | None, expected: str
) -> None:
    bad = tmp_path / "bad.json"
    if content is not None:
        bad.write_text(content)
    result = run("compare", bad, rounds / "assessment-2024-12.json")
    assert result.code == 2
    assert expected in result.stderr
    assert "bad.json" in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1


def test_a_reader_that_goes_away_is_not_a_crash(rounds: Path) -> None:
    # `riskreport compare ... | head -1`: the reader closes the pipe early. Closing our read
    # end before the child writes makes its write fail with EPIPE every time (POSIX write(2):
    # a pipe with no reader), so this is not a timing race.
    import subprocess
    import sys

    old, new = rounds / "assessment-2024-09.json", rounds / "assessment-2024-12.json"
    child = subprocess.Popen(
        [sys.executable, "-m", "riskreport", "compare", str(old), str(new)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
    )
    assert child.stdout is not None
    assert child.stderr is not None
    child.stdout.close()
    stderr = child.stderr.read().decode()
    assert child.wait(timeout=120) == 0
    assert "Traceback" not in stderr
    assert "BrokenPipe" not in stderr


def test_rounds_of_two_frequencies_are_refused(
    rounds: Path, run: Callable[..., Result], tmp_path: Path
) -> None:
    # A monthly and a quarterly round share no target period: this exited 0 with "no
    # target period is in both rounds", as if the comparison were empty.
    data = json.loads((rounds / "assessment-2024-09.json").read_text("utf-8"))
    data["frequency"] = "quarterly"
    other = tmp_path / "quarterly.json"
    other.write_text(json.dumps(data), "utf-8")
    result = run("compare", other, rounds / "assessment-2024-12.json")
    assert result.code == 2
    assert len(result.stderr.strip().splitlines()) == 1
    assert "one frequency" in result.stderr


def test_rounds_given_newest_first_are_put_in_date_order(
    rounds: Path, run: Callable[..., Result]
) -> None:
    # `compare NEW OLD` gave the change backwards without a word; the order now comes from
    # the rounds' as_of, and the output says the files were swapped.
    old, new = rounds / "assessment-2024-09.json", rounds / "assessment-2024-12.json"
    right = json.loads(run("compare", old, new, "--json").stdout)
    wrong = run("compare", new, old, "--json")
    assert wrong.code == 0, wrong.stderr
    swapped = json.loads(wrong.stdout)
    assert right["swapped"] is False
    assert swapped["swapped"] is True
    assert (swapped["old_as_of"], swapped["new_as_of"]) == ("2024-09", "2024-12")
    assert swapped["horizons"] == right["horizons"]
    text = run("compare", new, old).stdout
    assert "2024-09 -> 2024-12" in text
    assert "given newest first" in text
    assert "given newest first" not in run("compare", old, new).stdout


def test_compare_says_when_the_rounds_used_different_methods(
    rounds: Path, run: Callable[..., Result], tmp_path: Path
) -> None:
    # The same rounds, the later one rewritten as if built with another method: compare
    # must say so (issue "Honest by default"), and stay silent for the same method.
    old, new = rounds / "assessment-2024-09.json", rounds / "assessment-2024-12.json"
    same = json.loads(run("compare", old, new, "--json").stdout)
    assert same["methods_differ"] is False
    assert "different methods" not in run("compare", old, new).stdout
    data = json.loads(new.read_text())
    data["uncertainty"]["centre"] = "estimated"
    data["adjustments"]["predictive"] = "plug-in"
    other = tmp_path / "assessment-2024-12.json"
    other.write_text(json.dumps(data))
    summary = json.loads(run("compare", old, other, "--json").stdout)
    assert summary["methods_differ"] is True
    assert "centre estimated" in summary["new_method"]
    text = run("compare", old, other).stdout
    assert "used different methods" in text


def test_a_round_that_does_not_match_its_manifest_is_compared_with_a_warning(
    rounds: Path, run: Callable[..., Result]
) -> None:
    # Regression: compare read a half-switched round (after a kill -9, before the next run
    # completed it) without a word. The file is still compared, as it is.
    old, new = rounds / "assessment-2024-09.json", rounds / "assessment-2024-12.json"
    table = rounds / "tables/horizons-2024-09.csv"
    table.write_bytes(table.read_bytes() + b"\n")  # no longer what the manifest lists
    result = run("compare", old, new)
    assert result.code == 0, result.stderr
    assert "assessment-2024-09.json" in result.stderr
    assert "manifest-2024-09.json does not match" in result.stderr
    assert "compared as it is" in result.stderr
    assert "2024-09 -> 2024-12" in result.stdout
    clean = run("compare", new, new)
    assert "manifest" not in clean.stderr
