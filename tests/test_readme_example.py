"""The examples of README.md and docs/*.md run as written, so they cannot rot.

Fenced blocks by language: ``python`` blocks run (the README's against the demo, the
others in a folder holding the demo's two rounds); ``console`` blocks' ``$ riskreport ...``
commands run in that folder and every output line shown (but ``...``) must be printed;
``toml`` blocks parse, and a whole config also loads with the project's config reader;
``csv`` blocks are lines of a file the build writes. docs/configuration.md names every key
the config reader accepts, with defaults that are the reader's.
"""

from __future__ import annotations

import re
import shlex
import shutil
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest

from riskreport import cli
from riskreport.reading import config_reader

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"
# docs/quickstart.md is a walk-through on the reader's own files, followed step by step in an
# empty folder by tests/test_quickstart.py; its blocks are not lines of the demo's outputs.
QUICKSTART = ROOT / "docs" / "quickstart.md"
DOCS = (README, *sorted(p for p in (ROOT / "docs").glob("*.md") if p != QUICKSTART))
CONFIGURATION = ROOT / "docs" / "configuration.md"
DEMO = ROOT / "example_inputs"
FENCE = re.compile(r"^```(\w*)\n(.*?)^```", re.M | re.S)
# Commands the folder's two rounds let run in a moment; the others (a whole demo, a batch of
# rounds, the backtest) are only parsed here: tests/test_demo_brief.py and others run them.
RUN = ("check", "build", "compare")


@dataclass(frozen=True)
class Block:
    path: Path
    line: int
    language: str
    text: str

    def __str__(self) -> str:
        return f"{self.path.name}:{self.line}"


def _blocks(*languages: str) -> list[Block]:
    found = []
    for path in DOCS:
        text = path.read_text("utf-8")
        for match in FENCE.finditer(text):
            if match.group(1) in languages:
                line = text.count("\n", 0, match.start()) + 1
                found.append(Block(path, line, match.group(1), match.group(2)))
    return found


def test_the_docs_have_examples_of_each_kind() -> None:
    # The tests below are parametrised over the blocks found: none found would test nothing.
    kinds = {b.language for b in _blocks("python", "console", "toml", "csv")}
    assert kinds == {"python", "console", "toml", "csv"}


def test_readme_python_example_runs(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    blocks = [b for b in _blocks("python") if b.path == README]
    assert len(blocks) == 1
    monkeypatch.chdir(tmp_path)
    namespace: dict[str, object] = {}
    exec(compile(blocks[0].text, "README.md", "exec"), namespace)
    assert (tmp_path / "example-out" / "assessment-2026-11.json").is_file()
    dm = namespace["dm"]
    assert 0.0 <= dm.pvalue <= 1.0  # type: ignore[attr-defined]
    assert abs(sum(namespace["w"])) == pytest.approx(1.0)  # type: ignore[arg-type]


@pytest.fixture(scope="module")
def rounds(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The demo's October and November rounds, built into ``out/`` beside their inputs."""
    folder = tmp_path_factory.mktemp("docs")
    for name in ("forecasts.csv", "actuals.csv"):
        shutil.copy(DEMO / name, folder / name)
    text = (DEMO / "config.toml").read_text("utf-8")
    text = re.sub(r"(?m)^formats = .*$", 'formats = ["json", "csv", "slides"]', text)
    (folder / "config.toml").write_text(text, "utf-8")
    for as_of in ("2026-10", "2026-11"):
        code = cli.main(["build", str(folder / "config.toml"), "--as-of", as_of, "-q"])
        assert code == 0
    return folder


def _sessions(block: Block) -> list[tuple[list[str], list[str]]]:
    """The block's commands, each with the output lines shown after it."""
    sessions: list[tuple[list[str], list[str]]] = []
    for line in block.text.splitlines():
        if line.startswith("$ "):
            sessions.append((shlex.split(line[2:]), []))
        elif sessions:
            sessions[-1][1].append(line)
    return sessions


@pytest.mark.parametrize("block", _blocks("console"), ids=str)
def test_console_examples_print_what_they_show(
    block: Block, rounds: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    monkeypatch.chdir(rounds)
    sessions = _sessions(block)
    assert sessions, f"{block}: no '$ riskreport ...' command"
    for argv, shown in sessions:
        assert argv[0] == "riskreport", f"{block}: {argv}"
        if argv[1] not in RUN:
            cli._parser().parse_args(argv[1:])  # exits 2 on an option that is gone
            continue
        code = cli.main(argv[1:])
        printed = capsys.readouterr()
        assert code == 0, f"{block}: {' '.join(argv)}\n{printed.err}"
        lines = {line.rstrip() for line in printed.out.splitlines()}
        for line in shown:
            if line.strip() and line.strip() != "...":
                assert line.rstrip() in lines, f"{block}: {' '.join(argv)} did not print {line!r}"


@pytest.mark.parametrize("block", [b for b in _blocks("python") if b.path != README], ids=str)
def test_python_examples_in_docs_run(
    block: Block, rounds: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # The README's example runs against the demo itself (test_readme_python_example_runs).
    monkeypatch.chdir(rounds)
    exec(compile(block.text, str(block), "exec"), {})


@pytest.mark.parametrize("block", _blocks("csv"), ids=str)
def test_csv_examples_are_lines_of_the_files_written(block: Block, rounds: Path) -> None:
    header, *rows = block.text.splitlines()
    files = [p for p in (rounds / "out").rglob("*.csv") if p.read_text("utf-8").startswith(header)]
    assert files, f"{block}: no file written has the header {header!r}"
    for row in rows:
        assert any(row in p.read_text("utf-8").splitlines() for p in files), f"{block}: {row!r}"


@pytest.mark.parametrize("block", _blocks("toml"), ids=str)
def test_toml_examples_parse_and_whole_configs_load(block: Block, tmp_path: Path) -> None:
    data = tomllib.loads(block.text)
    if "brief" in data:  # a whole config: the project's reader must accept it
        for name in ("forecasts.csv", "actuals.csv"):
            shutil.copy(DEMO / name, tmp_path / name)
        (tmp_path / "config.toml").write_text(block.text, "utf-8")
        cfg = config_reader.load_config(tmp_path / "config.toml")
        assert cfg.brief.title == data["brief"]["title"]


def test_the_usage_lines_name_only_options_the_commands_take() -> None:
    usage = next(b for b in _blocks("") if b.path == README and "riskreport build" in b.text)
    commands = {
        name: {o for action in sub._actions for o in action.option_strings}
        for action in cli._parser()._actions
        if hasattr(action, "choices") and isinstance(action.choices, dict)
        for name, sub in action.choices.items()
    }
    for line in usage.text.splitlines():
        name = line.split()[1]
        for option in re.findall(r"--[\w-]+", line):
            assert option in commands[name], f"README: riskreport {name} has no {option}"


# docs/configuration.md: every key, with the reader's defaults.


def _sections() -> dict[str, str]:
    """The text under each ``### `[table]``` heading of docs/configuration.md, by table."""
    text = CONFIGURATION.read_text("utf-8")
    parts = re.split(r"(?m)^### `\[\[?(\w+)\]\]?`.*$", text)
    return {parts[i]: parts[i + 1].split("\n## ")[0] for i in range(1, len(parts), 2)}


def _rows(section: str) -> dict[str, str]:
    """Key -> default cell of a section's table."""
    return {
        m.group(1): m.group(2).strip()
        for m in re.finditer(r"(?m)^\| `(\w+)` \| ([^|]*) \|", section)
    }


def test_every_config_key_is_documented() -> None:
    sections = _sections()
    for table, keys in config_reader.KNOWN_KEYS.items():
        where = "target" if table == "schedule" else table  # schedule entries: under [target]
        assert where in sections, f"docs/configuration.md has no section for [{table}]"
        for key in keys:
            assert f"`{key}`" in sections[where], f"docs/configuration.md: [{table}] {key}"
    for table, text in sections.items():
        unknown = set(_rows(text)) - config_reader.KNOWN_KEYS[table]
        assert not unknown, f"docs/configuration.md documents [{table}] {unknown}: not read"


MINIMAL = """
[brief]
title = "t"
institution = "i"
as_of = "2026-11"
[inputs]
forecasts = "forecasts.csv"
actuals = "actuals.csv"
[target]
midpoint = 3.0
tolerance = 1.0
[[judgement]]
from = "2027-01"
to = "2027-02"
reason = "r"
"""


def _plain(value: Any) -> Any:
    if isinstance(value, tuple):
        return [_plain(v) for v in value]
    if isinstance(value, Path):
        return value.name
    return value


def test_the_documented_defaults_are_the_readers(tmp_path: Path) -> None:
    for name in ("forecasts.csv", "actuals.csv"):
        shutil.copy(DEMO / name, tmp_path / name)
    (tmp_path / "config.toml").write_text(MINIMAL, "utf-8")
    cfg = config_reader.load_config(tmp_path / "config.toml")
    objects = {
        "brief": cfg.brief,
        "inputs": cfg.inputs,
        "target": cfg.target,
        "combination": cfg.combination,
        "uncertainty": cfg.uncertainty,
        "output": cfg.output,
        "judgement": cfg.judgements[0],
    }
    checked = 0
    for table, text in _sections().items():
        for key, default in _rows(text).items():
            literal = re.fullmatch(r"`([^`]+)`", default)
            if literal is None or table not in objects:
                continue  # "required", or a default in words (e.g. 2 years of periods)
            expected = tomllib.loads(f"v = {literal.group(1)}")["v"]
            assert _plain(getattr(objects[table], key)) == expected, f"[{table}] {key}"
            checked += 1
    assert checked >= 25  # the literal defaults documented (every table but the required keys)
