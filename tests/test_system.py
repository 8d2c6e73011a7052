"""The set-up check: a missing HarfBuzz subset library is a note, never a failure."""

from __future__ import annotations

import ctypes.util

import pytest

from riskreport import _system


def test_missing_harfbuzz_subset_is_a_note(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    monkeypatch.setattr(_system, "check", lambda: [])
    monkeypatch.setattr(ctypes.util, "find_library", lambda name: None)
    assert _system.main() == 0
    assert "libharfbuzz-subset0" in capsys.readouterr().err
    monkeypatch.setattr(ctypes.util, "find_library", lambda name: f"lib{name}.so.0")
    assert _system.notes() == []
