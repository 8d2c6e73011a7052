"""The README's Python example runs verbatim on the demo data."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

README = Path(__file__).resolve().parents[1] / "README.md"


def test_readme_python_example_runs(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    blocks = re.findall(r"```python\n(.*?)```", README.read_text(encoding="utf-8"), re.S)
    assert len(blocks) == 1
    monkeypatch.chdir(tmp_path)
    namespace: dict[str, object] = {}
    exec(compile(blocks[0], "README.md", "exec"), namespace)
    assert (tmp_path / "example-out" / "assessment-2026-11.json").is_file()
    dm = namespace["dm"]
    assert 0.0 <= dm.pvalue <= 1.0  # type: ignore[attr-defined]
    assert abs(sum(namespace["w"])) == pytest.approx(1.0)  # type: ignore[arg-type]
