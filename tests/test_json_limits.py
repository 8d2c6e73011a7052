"""Every JSON file read from disk goes through one reader with a size and a nesting limit.

Reproduction of the issue: a JSON nested 100,000 levels deep, as a ``compare`` argument, as
``--previous`` or as an earlier round in the folder (its manifest digest fixed), crashed
with RecursionError (exit 1). Now a file named on the command line is bad input (exit 2,
one line naming it) and an earlier round found in the folder is skipped with a warning.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Callable
from pathlib import Path

import pytest

from riskreport.files import folder
from tests.conftest import Case, Result

DEEP = b"[" * 100_000 + b"]" * 100_000


def _one_line(result: Result, *expected: str) -> None:
    assert result.code == 2, result.stderr
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert "Traceback" not in result.stderr
    assert "RecursionError" not in result.stderr
    for text in expected:
        assert text in lines[0], lines[0]


@pytest.fixture
def two_rounds(case: Case, run: Callable[..., Result]) -> tuple[Path, Path]:
    config = case.write()
    out = case.folder / "out"
    for as_of in ("2024-11", "2024-12"):
        assert run("build", config, "--out", out, "--as-of", as_of, "-q").code == 0
    return config, out


@pytest.mark.parametrize("content", [DEEP, b'{"a":' * 100_000 + b"1" + b"}" * 100_000])
def test_compare_refuses_a_deeply_nested_file(
    two_rounds: tuple[Path, Path], run: Callable[..., Result], tmp_path: Path, content: bytes
) -> None:
    _, out = two_rounds
    deep = tmp_path / "deep.json"
    deep.write_bytes(content)
    _one_line(run("compare", deep, out / "assessment-2024-12.json"), "deep.json", "nested")
    _one_line(run("compare", out / "assessment-2024-12.json", deep), "deep.json", "nested")


def test_previous_refuses_a_deeply_nested_file(
    case: Case, run: Callable[..., Result], tmp_path: Path
) -> None:
    deep = tmp_path / "assessment-2024-11.json"
    deep.write_bytes(DEEP)
    out = tmp_path / "o"
    result = run("build", case.write(), "--out", out, "--previous", deep)
    _one_line(result, "assessment-2024-11.json", "nested deeper than")
    assert not out.exists()


def test_compare_refuses_a_file_beyond_the_size_limit(
    two_rounds: tuple[Path, Path], run: Callable[..., Result], monkeypatch: pytest.MonkeyPatch
) -> None:
    from riskreport.files import jsonfile

    _, out = two_rounds
    manifest = (out / "manifest-2024-11.json").stat().st_size
    assessment = (out / "assessment-2024-11.json").stat().st_size
    assert assessment > 4 * manifest
    limit = 2 * manifest  # the manifests are read, the assessment is beyond the limit
    monkeypatch.setattr(jsonfile, "MAX_BYTES", limit)
    result = run("compare", out / "assessment-2024-11.json", out / "assessment-2024-12.json")
    _one_line(result, "assessment-2024-11.json", f"larger than {limit} bytes")


def test_an_earlier_round_nested_too_deep_is_skipped_with_a_warning(
    two_rounds: tuple[Path, Path], run: Callable[..., Result]
) -> None:
    config, out = two_rounds
    earlier = out / "assessment-2024-11.json"
    earlier.write_bytes(DEEP)
    manifest = out / "manifest-2024-11.json"
    data = json.loads(manifest.read_text("utf-8"))
    for entry in data["files"]:  # the manifest's digest fixed, so the round looks whole
        if entry["path"] == earlier.name:
            entry["sha256"] = hashlib.sha256(DEEP).hexdigest()
    manifest.write_text(json.dumps(data, indent=1) + "\n", "utf-8")
    assert folder.verified(out, "2024-11") is not None
    result = run("build", config, "--out", out, "--as-of", "2024-12", "--force")
    assert result.code == 0, result.stderr
    assert "Traceback" not in result.stderr
    assert "the round 2024-11 cannot be read; not compared" in result.stderr
    assert "nested deeper than" in result.stderr
    again = json.loads((out / "assessment-2024-12.json").read_text("utf-8"))
    assert again["change"] is None
    assert [r["as_of"] for r in again["round_history"]] == ["2024-12"]


def test_deep_manifests_journals_and_caches_are_not_trusted(tmp_path: Path) -> None:
    out = tmp_path / "out"
    name = "assessment-2024-12.json"
    folder.write_round(out, {name: b"{}"}, as_of="2024-12")
    (out / "manifest-2024-12.json").write_bytes(DEEP)
    assert folder.verified(out, "2024-12") is None
    staging = out / (folder.STAGING_PREFIX + "deep")
    staging.mkdir()
    (staging / folder.JOURNAL_NAME).write_bytes(DEEP)
    cache = out / ".riskreport.cache"
    cache.mkdir()
    (cache / "builds.json").write_bytes(DEEP)
    from riskreport.replay import cache as replay_cache

    with folder.locked(out):
        assert replay_cache.unchanged(out, "key", "2024-12") is None
    assert not staging.exists()  # a journal not this module's: the staging folder removed
    assert (out / name).read_bytes() == b"{}"


def test_the_nesting_count_ignores_brackets_inside_strings() -> None:
    from riskreport.files import jsonfile

    text = json.dumps({"a": ["[" * 200, {"b": "{" * 200}]}).encode()
    assert jsonfile.depth(text) == 3
    assert jsonfile.parse(text)["a"][1]["b"] == "{" * 200
    escaped = json.dumps({"q": 'say "[[["'}).encode()  # an escaped quote does not end it
    assert jsonfile.depth(escaped) == 1
    assert jsonfile.depth(b"[" * 64 + b"]" * 64) == 64
    jsonfile.parse(b"[" * 64 + b"]" * 64)
    with pytest.raises(jsonfile.JsonLimitError):
        jsonfile.parse(b"[" * 65 + b"]" * 65)
