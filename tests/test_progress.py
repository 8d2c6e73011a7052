"""Progress bars: on stderr, only on a terminal, never under --quiet or --json (tqdm's
``disable=None`` rule: drawn only when the stream is a TTY)."""

from __future__ import annotations

import io
import sys

import pytest

from riskreport import cli
from riskreport.cli import demo_config
from riskreport.processes import progress


class Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


@pytest.fixture
def restore_progress() -> object:
    yield None
    progress.configure(enabled=False)


@pytest.mark.parametrize(
    ("enabled", "stream", "drawn"),
    [(True, Terminal(), True), (True, io.StringIO(), False), (False, Terminal(), False)],
)
def test_bars_only_on_a_terminal_and_when_allowed(
    monkeypatch: pytest.MonkeyPatch,
    restore_progress: object,
    enabled: bool,
    stream: io.StringIO,
    drawn: bool,
) -> None:
    monkeypatch.setattr(sys, "stderr", stream)
    progress.configure(enabled=enabled)
    assert list(progress.bar(range(3), "rounds")) == [0, 1, 2]
    steps = progress.Steps.start(2)
    steps.step("assessing")
    steps.step("rendering")
    steps.close()
    shown = stream.getvalue()
    assert ("rounds" in shown and "rendering" in shown) is drawn
    assert (shown != "") is drawn


@pytest.mark.parametrize("flag", ["-q", "--json"])
def test_quiet_and_json_turn_bars_off(
    flag: str, restore_progress: object, capsys: pytest.CaptureFixture[str]
) -> None:
    progress.configure(enabled=True)
    assert cli.main(["check", str(demo_config()), flag]) == 0
    capsys.readouterr()
    assert progress._state["enabled"] is False
