"""docs/quickstart.md followed step by step in an empty folder, as a user would type it.

The page's marked blocks (see tests/markdown_blocks.py) are written and run in order: the
config as printed, the commands as printed, the printed output and the files checked. The
forecasts and actuals on the page are the first lines of a user's files; the test
completes them with an invented history in the same columns (the page's own rows are
kept as written), the way a user's file goes on below the lines the page shows.
"""

from __future__ import annotations

import csv
import io
import tomllib
from pathlib import Path

import numpy as np
import pytest

from riskreport.reading import periods
from tests.markdown_blocks import (
    Block,
    Ran,
    commands,
    fenced_blocks,
    marked_blocks,
    run_command,
    unmatched_output,
)

QUICKSTART = Path(__file__).resolve().parents[1] / "docs" / "quickstart.md"
FIRST_LINES = "(first lines)"
YEARS_OF_ROUNDS = 12


def _rows(text: str) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(text)))


def _history(config: dict, models: list[str]) -> dict[str, list[dict[str, str]]]:
    """An invented track record for the page's config: every model forecasts h = 0 to
    ``horizons`` at every round of the last twelve years, and every outcome is known up to
    the period before ``as_of``."""
    parsed = periods.parse(config["brief"]["as_of"])
    assert parsed is not None
    frequency, as_of = parsed.frequency, parsed.ordinal
    horizons = int(config["brief"]["horizons"])
    first = as_of - YEARS_OF_ROUNDS * periods.PERIODS_PER_YEAR[frequency]
    rng = np.random.default_rng(25)
    span = np.arange(first - 1, as_of + horizons + 1)
    level = 2.0 + 0.8 * np.sin(span / 7.0) + rng.normal(0, 0.3, span.size)
    truth = dict(zip(span.tolist(), level.tolist(), strict=True))
    forecasts = [
        {
            "origin": periods.label(o, frequency),
            "period": periods.label(o + h, frequency),
            "model": model,
            "value": f"{truth[o + h] + rng.normal(0, 0.25 + 0.08 * h):.2f}",
        }
        for o in range(first, as_of + 1)
        for h in range(horizons + 1)
        for model in models
    ]
    actuals = [
        {"period": periods.label(p, frequency), "value": f"{truth[p]:.2f}"}
        for p in range(first - 1, as_of)
    ]
    return {"forecasts": forecasts, "actuals": actuals}


def _completed(block: Block, generated: list[dict[str, str]], keys: tuple[str, ...]) -> str:
    """The page's first lines, then the generated rows whose key the page does not hold,
    in the page's columns."""
    shown = _rows(block.text)
    header = next(csv.reader(io.StringIO(block.text)))
    taken = {tuple(row[k] for k in keys) for row in shown}
    rest = [row for row in generated if tuple(row[k] for k in keys) not in taken]
    out = io.StringIO()
    writer = csv.DictWriter(out, fieldnames=header, lineterminator="\n", extrasaction="ignore")
    writer.writerows(rest)
    return block.text + out.getvalue()


def _write(block: Block, history: dict[str, list[dict[str, str]]]) -> None:
    target = block.argument.removesuffix(FIRST_LINES).strip()
    path = Path(target)
    path.parent.mkdir(parents=True, exist_ok=True)
    if not block.argument.endswith(FIRST_LINES):
        path.write_text(block.text, encoding="utf-8")
        return
    role = path.stem
    keys = ("origin", "period", "model") if role == "forecasts" else ("period",)
    path.write_text(_completed(block, history[role], keys), encoding="utf-8")


def test_the_quickstart_runs_as_written(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    blocks = marked_blocks(QUICKSTART)
    assert {b.action for b in blocks} == {"file", "run", "output", "files"}
    config = next(tomllib.loads(b.text) for b in blocks if b.argument.endswith(".toml"))
    page_forecasts = next(b for b in blocks if "forecasts.csv" in b.argument)
    models = sorted({row["model"] for row in _rows(page_forecasts.text)})
    history = _history(config, models)
    last: Ran | None = None
    for block in blocks:
        where = f"{QUICKSTART.name}, line {block.line}"
        if block.action == "file":
            _write(block, history)
        elif block.action == "run":
            for command in commands(block):
                last = run_command(command)
                assert last.code == 0, f"{where}: {command}: {last.stderr}"
        elif block.action == "output":
            assert last is not None, f"{where}: output before any command"
            missing = unmatched_output(block.text, last.stdout + last.stderr)
            assert not missing, f"{where}: not printed {missing}:\n{last.stdout}{last.stderr}"
        else:
            for line in block.text.splitlines():
                assert Path(line.strip()).is_file(), f"{where}: {line} was not written"


def test_the_page_s_first_lines_are_what_the_tool_reads() -> None:
    # The page shows the current round's rows: their origin is the config's as_of, and the
    # nowcast (h = 0) the page explains is among them.
    blocks = marked_blocks(QUICKSTART)
    config = next(tomllib.loads(b.text) for b in blocks if b.argument.endswith(".toml"))
    rows = _rows(next(b for b in blocks if "forecasts.csv" in b.argument).text)
    assert {r["origin"] for r in rows} == {config["brief"]["as_of"]}
    assert any(r["origin"] == r["period"] for r in rows)
    assert list(rows[0]) == ["origin", "period", "model", "value"]


def test_the_harness_reads_fences_and_marks(tmp_path: Path) -> None:
    page = tmp_path / "page.md"
    page.write_text(
        "Text\n\n<!-- docs-test: file a/b.toml -->\n\n````toml\nx = 1\n```\n````\n\n"
        "<!-- docs-test: run -->\nprose breaks the mark\n~~~sh\nriskreport --version\n~~~\n"
        "```\nunclosed?\n```\n",
        encoding="utf-8",
    )
    blocks = fenced_blocks(page)
    assert [(b.language, b.action, b.argument, b.line) for b in blocks] == [
        ("toml", "file", "a/b.toml", 5),
        ("sh", "", "", 12),
        ("", "", "", 15),
    ]
    assert blocks[0].text == "x = 1\n```\n"
    assert commands(blocks[1]) == ["riskreport --version"]
    assert unmatched_output("a 1 b\n...\nc 2.5", "x\na 10 b\ny\nc   3") == []
    assert unmatched_output("a 1 b\nc 2.5", "c 3\na 10 b") == ["c 2.5"]
    with pytest.raises(ValueError, match="riskreport commands only"):
        run_command("rm -rf /")
