"""The set-up check: a missing HarfBuzz subset library is a note, never a failure."""

from __future__ import annotations

import ctypes.util

import pytest

from riskreport.report import system_check


def test_missing_harfbuzz_subset_is_a_note(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    monkeypatch.setattr(system_check, "check", lambda: [])
    monkeypatch.setattr(ctypes.util, "find_library", lambda name: None)
    assert system_check.main() == 0
    assert "libharfbuzz-subset0" in capsys.readouterr().err
    monkeypatch.setattr(ctypes.util, "find_library", lambda name: f"lib{name}.so.0")
    assert system_check.notes() == []
