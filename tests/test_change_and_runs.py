"""Change since the previous brief, scenarios, and the run record (README, Usage and The
output folder)."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

import riskreport
from riskreport.rounds import change
from tests.conftest import Case, Result


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {
        str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()
    }


def _side(centre: float, sd: float, band: tuple[float, float]) -> change.Side:
    levels = np.arange(1, 100) / 100
    offsets = stats.norm.ppf(levels, 0, sd)
    p = stats.norm.cdf(band[1], centre, sd) - stats.norm.cdf(band[0], centre, sd)
    return change.Side(centre, band, levels, offsets, float(p))


def test_parts_add_up_exactly_and_attribute_each_change() -> None:
    before = _side(2.5, 0.8, (1.0, 3.0))
    # Pure band change: all of it is the band's.
    moved_band = _side(2.5, 0.8, (1.5, 3.5))
    centre, spread, band = change.decompose(before, moved_band)
    assert (centre, spread) == (0.0, 0.0)
    assert band == pytest.approx(moved_band.p_inside - before.p_inside, abs=1e-15)
    # Pure centre move and pure spread change likewise.
    assert change.decompose(before, _side(3.0, 0.8, (1.0, 3.0)))[1:] == (0.0, 0.0)
    c, _, b = change.decompose(before, _side(2.5, 1.1, (1.0, 3.0)))
    assert c == 0.0
    assert b == 0.0
    # Everything at once: the three parts add up to the total exactly.
    now = _side(3.1, 1.2, (1.5, 3.5))
    parts = change.decompose(before, now)
    assert sum(parts) == pytest.approx(now.p_inside - before.p_inside, abs=1e-14)


def test_shapley_parts_match_a_hand_computation() -> None:
    # With two ingredients unchanged the split is the plain difference; with all three
    # changed, the centre's part is the average of its marginal contributions over the six
    # orders (computed here from scipy normal probabilities directly).
    before, now = _side(2.5, 0.8, (1.0, 3.0)), _side(3.0, 1.0, (1.5, 3.5))

    def v(c: float, sd: float, band: tuple[float, float]) -> float:
        return float(stats.norm.cdf(band[1], c, sd) - stats.norm.cdf(band[0], c, sd))

    c0, c1, s0, s1, b0, b1 = 2.5, 3.0, 0.8, 1.0, (1.0, 3.0), (1.5, 3.5)
    marginal = [
        v(c1, s0, b0) - v(c0, s0, b0),  # centre first
        v(c1, s0, b0) - v(c0, s0, b0),
        v(c1, s1, b0) - v(c0, s1, b0),  # after spread
        v(c1, s0, b1) - v(c0, s0, b1),  # after band
        v(c1, s1, b1) - v(c0, s1, b1),  # last
        v(c1, s1, b1) - v(c0, s1, b1),
    ]
    centre, _, _ = change.decompose(before, now)
    # The mixed corners come from the shapes rebuilt from the percentiles, which are close
    # to the normal.
    assert centre == pytest.approx(np.mean(marginal), abs=2e-3)


def test_change_in_the_assessment(case: Case, run: Callable[..., Result]) -> None:
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--as-of", "2024-11", "--out", out, "-q").code == 0
    assert run("build", config, "--out", out, "-q").code == 0
    data = json.loads((out / "assessment-2024-12.json").read_text("utf-8"))
    assert data["change"]["previous_as_of"] == "2024-11"
    previous = json.loads((out / "assessment-2024-11.json").read_text("utf-8"))
    before = {r["period"]: r["p_inside"] for r in previous["horizons"]}
    assert [r["period"] for r in data["change"]["horizons"]] == [
        r["period"] for r in data["horizons"] if r["period"] in before
    ]
    for row in data["change"]["horizons"]:
        total = row["due_to_centre"] + row["due_to_spread"] + row["due_to_band"]
        assert total == pytest.approx(row["p_inside_now"] - row["p_inside_before"], abs=1e-10)
        assert row["p_inside_before"] == pytest.approx(before[row["period"]], abs=1e-12)
        assert row["due_to_band"] == 0.0  # the band did not change
    # --previous names the file explicitly; a broken one is an input error.
    (case.folder / "bad.json").write_text("{not json")
    result = run(
        "build", config, "--out", case.folder / "o2", "--previous", case.folder / "bad.json"
    )
    assert result.code == 2
    assert "bad.json" in result.stderr


def test_band_change_between_briefs_goes_to_the_band(case: Case, tmp_path: Path) -> None:
    first = riskreport.assess(case.write())
    (tmp_path / "assessment-2024-12.json").write_text(first.to_json())
    # Two routes to one period's shape agree to the JSON's rounding: the brief's typed
    # result (change.side_of) and its JSON row as the next brief reads it (change.side).
    for r, row in zip(first.horizons, first.to_dict()["horizons"], strict=True):
        typed, stored = change.side_of(r), change.side(row)
        np.testing.assert_allclose(typed.offsets, stored.offsets, rtol=0, atol=1e-9)
        assert (typed.centre, *typed.band, typed.p_inside) == pytest.approx(
            (stored.centre, *stored.band, stored.p_inside), abs=1e-11
        )
    case.config = case.config.replace("tolerance = 1.0", "tolerance = 1.5")
    second = riskreport.assess(case.write(), previous=tmp_path / "assessment-2024-12.json")
    assert second.change is not None
    for row in second.change.horizons:
        assert row.due_to_centre == 0.0
        assert row.due_to_spread == 0.0
        assert row.due_to_band == pytest.approx(row.p_inside_now - row.p_inside_before, abs=1e-12)


def test_scenarios_are_judgements_on_the_baseline(case: Case) -> None:
    case.config += (
        '\n[[scenario]]\nname = "higher"\nfrom = "2025-01"\nto = "2025-03"\nshift = 0.5\nreason = "r1"\n'
        '\n[[scenario]]\nname = "higher"\nfrom = "2025-02"\nto = "2025-02"\nscale = 1.5\nreason = "r2"\n'
        '\n[[scenario]]\nname = "lower"\nfrom = "2024-12"\nto = "2025-03"\nshift = -0.5\nreason = "r3"\n'
    )
    a = riskreport.assess(case.write())
    names = [s.name for s in a.scenarios]
    assert names == ["higher", "lower"]
    higher = a.scenarios[0]
    assert higher.reasons == ("r1", "r2")
    for base, row in zip(a.horizons, higher.horizons, strict=True):
        if row.period == "2024-12":
            assert row.p_inside == pytest.approx(base.p_inside, abs=1e-12)
        else:
            assert row.centre == pytest.approx(base.centre + 0.5, abs=1e-12)


def test_scenario_needs_a_name(case: Case, run: Callable[..., Result]) -> None:
    case.config += '\n[[scenario]]\nfrom = "2025-01"\nto = "2025-03"\nshift = 0.5\nreason = "r"\n'
    result = run("check", case.write())
    assert result.code == 2
    assert "[scenario 1] name" in result.stderr


def test_run_record_lines(case: Case, run: Callable[..., Result]) -> None:
    config = case.write()
    out = case.folder / "out"
    run("build", config, "--out", out, "-q")
    case.config = case.config.replace("tolerance = 1.0", "tolerance = 1.2")
    run("build", case.write(), "--out", out, "-q")  # refused: exit 2, recorded
    lines = [json.loads(x) for x in (out / "runs.jsonl").read_text("utf-8").splitlines()]
    assert [x["exit_status"] for x in lines] == [0, 2]
    for key in ("time", "as_of", "config_sha256", "inputs", "outputs", "exit_status"):
        assert key in lines[0]
    assert lines[0]["outputs"]
    assert lines[1]["outputs"] == []


KILL_SCRIPT = """
import sys, time
from pathlib import Path
from riskreport import cli
from riskreport.report import render

original = render.pdf

def slow_pdf(*args, **kwargs):
    Path(sys.argv[2]).write_text("rendering")
    time.sleep(60)
    return original(*args, **kwargs)

render.pdf = slow_pdf
sys.exit(cli.main(["build", sys.argv[1], "--out", sys.argv[3], "--force", "-q"]))
"""


def test_a_process_killed_mid_render_leaves_the_folder_as_it_was(
    case: Case, tmp_path: Path, run: Callable[..., Result]
) -> None:
    case.config = case.config.replace(
        'formats = ["json", "csv"]', 'formats = ["json", "csv", "pdf"]'
    )
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--out", out, "-q").code == 0
    before = _snapshot(out)
    case.config = case.config.replace("tolerance = 1.0", "tolerance = 1.3")  # different content
    case.write()
    marker = tmp_path / "marker"
    process = subprocess.Popen(
        [sys.executable, "-c", KILL_SCRIPT, str(config), str(marker), str(out)],
        env={**os.environ, "MPLBACKEND": "Agg"},
    )
    try:
        deadline = time.monotonic() + 120
        while not marker.exists():
            assert process.poll() is None, "the build ended before it reached the render"
            assert time.monotonic() < deadline
            time.sleep(0.1)
        process.send_signal(signal.SIGKILL)
        process.wait(timeout=30)
    finally:
        if process.poll() is None:
            process.kill()
    assert _snapshot(out) == before


def test_bad_scenario_is_named_as_a_scenario(case: Case, run: Callable[..., Result]) -> None:
    case.config += (
        '\n[[scenario]]\nname = "a"\nfrom = "2025-01"\nto = "2025-01"\nshift = 0.1\nreason = "r"\n'
        '\n[[scenario]]\nname = "b"\nfrom = "2030-01"\nto = "2030-02"\nshift = 0.1\nreason = "r"\n'
    )
    result = run("check", case.write())
    assert result.code == 2
    assert "[scenario 2] from" in result.stderr
