"""Nothing outside the round is ever removed (riskreport.files.round_files, riskreport.files.folder).

A file goes only when its name is one of the round's own and its content still has the
digest recorded when the tool wrote it. Manifests and journals are hints: an edited
manifest or a planted journal naming ``runs.jsonl`` or a user's file removes nothing, and a
file of the round whose content changed is moved aside, never deleted.

Oracle: the bytes on disk before and after, compared directly (SHA-256 from hashlib), and
for the property test, the invariant itself checked over random manifests and journals.
"""

from __future__ import annotations

import hashlib
import json
import tempfile
from collections.abc import Callable
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from riskreport.files import folder
from tests.conftest import Case, Result

AS_OF = "2024-12"


def _sha(content: bytes) -> str:
    return hashlib.sha256(content).hexdigest()


def _is_round_file(name: str, as_of: str) -> bool:
    from riskreport.files.round_files import is_round_file  # here: the tests run on older code too

    return is_round_file(name, as_of)


def _lines(path: Path) -> int:
    return len(path.read_text("utf-8").splitlines())


@pytest.fixture
def built(case: Case, run: Callable[..., Result]) -> tuple[Path, Path]:
    """A folder holding round 2024-12 of the small case, and its config (changed, so that a
    second build differs)."""
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--out", out, "-q").code == 0
    case.config = case.config.replace("tolerance = 1.0", "tolerance = 1.3")
    case.write()
    return config, out


def test_an_edited_manifest_deletes_nothing_outside_the_round(
    built: tuple[Path, Path], run: Callable[..., Result]
) -> None:
    # Reproduction of the issue: runs.jsonl and a user's keep.txt added to the manifest's
    # files list, then `build --force` of another brief for that round deleted both, and
    # the run record restarted with one line.
    config, out = built
    keep = out / "keep.txt"
    keep.write_text("a user's notes\n", "utf-8")
    manifest = out / f"manifest-{AS_OF}.json"
    data = json.loads(manifest.read_text("utf-8"))
    for path in (out / folder.RUNS_NAME, keep, out / folder.LOCK_NAME):
        data["files"].append({"path": path.name, "sha256": _sha(path.read_bytes())})
    manifest.write_text(json.dumps(data), "utf-8")
    result = run("build", config, "--out", out, "--force", "-q")
    assert result.code == 0, result.stderr
    assert keep.read_text("utf-8") == "a user's notes\n"
    assert _lines(out / folder.RUNS_NAME) == 2  # the first build's line and this one's
    assert (out / folder.LOCK_NAME).exists()
    # The edited manifest was not what the tool writes: kept aside, not deleted; the new
    # one lists the round's files only, and no reader takes the kept one for a round.
    kept = out / f"manifest-{AS_OF}.kept-1.json"
    assert json.loads(kept.read_text("utf-8")) == data
    assert folder.rounds(out) == [AS_OF]
    listed = folder.verified(out, AS_OF)
    assert listed is not None
    assert all(_is_round_file(name, AS_OF) for name in listed)


def test_a_planted_journal_deletes_nothing_outside_the_round(
    built: tuple[Path, Path], run: Callable[..., Result]
) -> None:
    # Reproduction of the issue: a .riskreport-x/journal.json (with a payload folder)
    # naming runs.jsonl under "remove"; the next plain build deleted it.
    config, out = built
    before = (out / folder.RUNS_NAME).read_bytes()
    staging = out / (folder.STAGING_PREFIX + "x")
    (staging / folder.PAYLOAD).mkdir(parents=True)
    (staging / folder.PAYLOAD / f"manifest-{AS_OF}.json").write_text("{}", "utf-8")
    plan = {
        "as_of": AS_OF,
        "manifest": f"manifest-{AS_OF}.json",
        "files": [],
        "remove": [folder.RUNS_NAME, "keep.txt"],
        "recorded": {folder.RUNS_NAME: _sha(before)},
    }
    (staging / folder.JOURNAL_NAME).write_text(json.dumps(plan), "utf-8")
    (out / "keep.txt").write_text("mine\n", "utf-8")
    result = run("build", config, "--out", out, "-q")
    assert result.code == 2  # the changed config needs --force: refused, as it should be
    assert (out / folder.RUNS_NAME).read_bytes().startswith(before)
    assert _lines(out / folder.RUNS_NAME) == 2
    assert (out / "keep.txt").read_text("utf-8") == "mine\n"
    assert folder.verified(out, AS_OF) is not None  # the round itself untouched


def test_an_edited_file_of_the_round_is_kept_aside_not_deleted(
    built: tuple[Path, Path], run: Callable[..., Result]
) -> None:
    # A user edited the old table (as one would annotate the old PDF): --force replaces
    # the round but keeps the edited file under a new name, and says so.
    config, out = built
    table = out / f"tables/horizons-{AS_OF}.csv"
    edited = table.read_bytes() + b"my note\n"
    table.write_bytes(edited)
    untouched = (out / f"tables/path-{AS_OF}.csv").read_bytes()
    result = run("build", config, "--out", out, "--force", "--json")
    assert result.code == 0, result.stderr
    kept = out / f"tables/horizons-{AS_OF}.kept-1.csv"
    assert kept.read_bytes() == edited
    assert "kept as tables/horizons-2024-12.kept-1.csv" in result.stderr
    summary = json.loads(result.stdout)
    assert any("horizons-2024-12.kept-1.csv" in w for w in summary["warnings"])
    assert folder.verified(out, AS_OF) is not None
    # an unedited file of the round was replaced in place, nothing kept for it
    assert (out / f"tables/path-{AS_OF}.csv").read_bytes() != untouched
    assert not list((out / "tables").glob(f"path-{AS_OF}.kept*"))


def test_a_second_kept_copy_never_replaces_the_first(tmp_path: Path) -> None:
    out = tmp_path / "out"
    name = f"brief-{AS_OF}.pdf"
    for version in (b"one", b"two"):
        out.mkdir(exist_ok=True)
        (out / name).write_bytes(version)  # put there by hand: no digest recorded
        folder.write_round(out, {name: b"new " + version}, as_of=AS_OF, force=True)
    assert (out / f"brief-{AS_OF}.kept-1.pdf").read_bytes() == b"one"
    assert (out / f"brief-{AS_OF}.kept-2.pdf").read_bytes() == b"two"
    assert (out / name).read_bytes() == b"new two"


def test_recovery_keeps_a_file_whose_content_is_not_the_recorded_one(tmp_path: Path) -> None:
    out = tmp_path / "out"
    name = f"assessment-{AS_OF}.json"
    folder.write_round(out, {name: b"{}"}, as_of=AS_OF)
    (out / name).write_bytes(b"edited")
    staging = out / (folder.STAGING_PREFIX + "interrupted")
    (staging / folder.PAYLOAD).mkdir(parents=True)
    (staging / folder.PAYLOAD / name).write_bytes(b"new")
    (staging / folder.PAYLOAD / f"manifest-{AS_OF}.json").write_bytes(b"{}")
    plan = {"as_of": AS_OF, "manifest": f"manifest-{AS_OF}.json", "files": [name],
            "remove": [], "recorded": {name: _sha(b"{}")}}  # fmt: skip
    (staging / folder.JOURNAL_NAME).write_text(json.dumps(plan), "utf-8")
    with folder.locked(out):
        pass
    assert (out / name).read_bytes() == b"new"
    assert (out / f"assessment-{AS_OF}.kept-1.json").read_bytes() == b"edited"


def test_write_round_refuses_a_name_that_is_not_the_rounds(tmp_path: Path) -> None:
    with pytest.raises(ValueError, match="not files of the round"):
        folder.write_round(tmp_path / "out", {"runs.jsonl": b""}, as_of=AS_OF)
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize(
    "name",
    [
        "runs.jsonl",
        ".riskreport.lock",
        ".riskreport.cache/builds.json",
        "keep.txt",
        "brief-2024-11.pdf",
        "tables/horizons-2024-11.csv",
        "tables/horizons-2024-12.kept-1.csv",
        "tables/sub/horizons-2024-12.csv",
        "tables/Horizons-2024-12.csv",
        "tables/2024-12.csv",
        "../brief-2024-12.pdf",
        "/tmp/brief-2024-12.pdf",
        "charts/outlook-2024-12.pdf",
        "slides/quantiles-2024-12.xlsx",
        "manifest-2024-12.kept-1.json",
    ],
)
def test_names_outside_the_round(name: str) -> None:
    assert not _is_round_file(name, AS_OF)


@pytest.mark.parametrize(
    "name",
    [
        "brief-2024-12.pdf",
        "brief-2024-12.html",
        "annex-2024-12.pdf",
        "assessment-2024-12.json",
        "manifest-2024-12.json",
        "workbook-2024-12.xlsx",
        "tables/model-based-horizons-2024-12.csv",
        "charts/density-h18-2024-12.svg",
        "charts/outlook-2024-12.txt",
        "slides/quantiles-2024-12.csv",
    ],
)
def test_names_of_the_round(name: str) -> None:
    assert _is_round_file(name, AS_OF)
    assert not _is_round_file(name, "2024-11")


# --- property: random manifests and journals never remove a file outside the round ------

ROUND = {
    f"assessment-{AS_OF}.json": b'{"as_of": "2024-12"}',
    f"tables/horizons-{AS_OF}.csv": b"period,p\n2025-01,0.5\n",
    f"charts/outlook-{AS_OF}.svg": b"<svg/>",
}
OUTSIDE = {
    folder.RUNS_NAME: b'{"exit_status": 0}\n',
    "keep.txt": b"a user's file\n",
    ".riskreport.cache/builds.json": b"{}",
    "assessment-2024-11.json": b'{"as_of": "2024-11"}',
    "tables/notes.csv": b"mine\n",
    f"brief-{AS_OF}.pdf.bak": b"backup\n",
}
NAMES = [*ROUND, *OUTSIDE, f"brief-{AS_OF}.pdf", f"manifest-{AS_OF}.json", "../escape.txt",
         "/etc/hostname", "tables", ""]  # fmt: skip
DIGESTS = [_sha(c) for c in (*ROUND.values(), *OUTSIDE.values())] + ["0" * 64]

entries = st.lists(st.tuples(st.sampled_from(NAMES), st.sampled_from(DIGESTS)), max_size=8)
journals = st.fixed_dictionaries(
    {
        "as_of": st.sampled_from([AS_OF, "2024-11", "x", "../.."]),
        "manifest": st.sampled_from([f"manifest-{AS_OF}.json", folder.RUNS_NAME, "keep.txt"]),
        "files": st.lists(st.sampled_from(NAMES), max_size=4),
        "remove": st.lists(st.sampled_from(NAMES), max_size=6),
        "recorded": st.dictionaries(st.sampled_from(NAMES), st.sampled_from(DIGESTS)),
    }
)


@settings(
    max_examples=60,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow],
)
@given(
    entries,
    st.one_of(st.none(), journals),
    st.booleans(),
    st.sets(st.sampled_from(list(ROUND)), max_size=2),
)
def test_random_manifests_and_journals_never_remove_a_file_outside_the_round(
    listed: list[tuple[str, str]],
    journal: dict[str, object] | None,
    edit_manifest: bool,
    edited: set[str],
) -> None:
    with tempfile.TemporaryDirectory() as temporary:
        out = Path(temporary) / "out"
        folder.write_round(out, ROUND, as_of=AS_OF)
        manifest = out / f"manifest-{AS_OF}.json"
        # The files the rule lets go, each only with the content the tool wrote (whose
        # digest a manifest or journal can record); every other file stays as it is.
        originals = {**ROUND, manifest.name: manifest.read_bytes()}
        originals["assessment-2024-11.json"] = OUTSIDE["assessment-2024-11.json"]
        for name, content in OUTSIDE.items():
            (out / name).parent.mkdir(parents=True, exist_ok=True)
            (out / name).write_bytes(content)
        for name in edited:  # a user edits files of the round
            (out / name).write_bytes(b"edited " + name.encode())
        if edit_manifest:
            data = json.loads(manifest.read_text("utf-8"))
            data["files"] += [{"path": n, "sha256": d} for n, d in listed]
            manifest.write_text(json.dumps(data), "utf-8")
        if journal is not None:
            _plant(out, journal)
        before = {
            p.relative_to(out).as_posix(): p.read_bytes()
            for p in out.rglob("*")
            if p.is_file() and p.name != folder.LOCK_NAME
        }
        folder.write_round(out, {n: b"new " + c for n, c in ROUND.items()}, as_of=AS_OF, force=True)
        after = [p.read_bytes() for p in out.rglob("*") if p.is_file()]
        for name, content in before.items():
            if name.startswith(folder.STAGING_PREFIX) or originals.get(name) == content:
                continue  # the staging folder (the tool's), or a file as the tool wrote it
            if name in originals:
                assert content in after, name  # edited: kept, perhaps under a new name
            else:
                assert (out / name).read_bytes() == content, name
        assert not Path(temporary, "escape.txt").exists()


def _plant(out: Path, journal: dict[str, object]) -> None:
    """A staging folder with ``journal`` and a payload file for each name it moves."""
    staging = out / (folder.STAGING_PREFIX + "planted")
    (staging / folder.PAYLOAD).mkdir(parents=True)
    for name in [journal["manifest"], *journal["files"]]:  # type: ignore[list-item]
        target = staging / folder.PAYLOAD / str(name)
        if str(name) and target.resolve().is_relative_to(staging.resolve()):
            try:
                target.parent.mkdir(parents=True, exist_ok=True)
                target.write_bytes(b"payload")
            except OSError:  # "tables" as a file and as a folder: the first one wins
                pass
    (staging / folder.JOURNAL_NAME).write_text(json.dumps(journal), "utf-8")
