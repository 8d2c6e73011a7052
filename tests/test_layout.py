"""The package's layout: no import cycle between its modules (at import time, nor counting
the imports made for type annotations only), every sub-package's ``__init__`` loads nothing
(so ``riskreport check`` stays light), and the rooms stay small enough to hold in one's head.
"""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "riskreport"

# Size limits of the layout (common practice, no source): a module a reader can hold, and a
# top level that shows the floors rather than a flat list of modules.
MAX_MODULE_LINES = 600
MAX_TOP_LEVEL_MODULES = 12


def _module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _is_type_checking(node: ast.If) -> bool:
    test = node.test
    return (isinstance(test, ast.Name) and test.id == "TYPE_CHECKING") or (
        isinstance(test, ast.Attribute) and test.attr == "TYPE_CHECKING"
    )


def _top_level_imports(path: Path, *, type_only: bool = False) -> set[str]:
    """Modules of the package imported when ``path`` is imported: top-level statements only
    (imports inside functions run later or never); with ``type_only``, also those of its
    ``if TYPE_CHECKING:`` blocks, which name types the module's annotations use."""
    found: set[str] = set()
    body = ast.parse(path.read_text("utf-8")).body
    if type_only:
        body = body + [
            n
            for node in body
            if isinstance(node, ast.If) and _is_type_checking(node)
            for n in node.body
        ]
    for node in body:
        if isinstance(node, ast.Import):
            found.update(a.name for a in node.names if a.name.startswith("riskreport"))
        elif isinstance(node, ast.ImportFrom) and (node.module or "").startswith("riskreport"):
            module = node.module or ""
            for alias in node.names:
                candidate = f"{module}.{alias.name}"
                is_module = (PACKAGE.parent / Path(*candidate.split("."))).with_suffix(".py")
                found.add(candidate if is_module.exists() else module)
    return found


def _graph(*, type_only: bool = False) -> dict[str, set[str]]:
    modules = {_module_name(p): p for p in PACKAGE.rglob("*.py")}
    return {
        name: _top_level_imports(path, type_only=type_only) & modules.keys()
        for name, path in modules.items()
    }


@pytest.mark.parametrize("type_only", [False, True], ids=["at-import", "with-type-imports"])
def test_no_import_cycle_between_modules(type_only: bool) -> None:
    graph = _graph(type_only=type_only)
    state: dict[str, int] = {}  # 1: on the current path, 2: done

    def visit(node: str, path: list[str]) -> None:
        state[node] = 1
        for nxt in sorted(graph[node]):
            if state.get(nxt) == 1:
                cycle = [*path[path.index(nxt) :], nxt] if nxt in path else [node, nxt]
                raise AssertionError("import cycle: " + " -> ".join(cycle))
            if nxt not in state:
                visit(nxt, [*path, nxt])
        state[node] = 2

    for node in sorted(graph):
        if node not in state:
            visit(node, [node])


def test_sub_package_inits_load_nothing() -> None:
    for init in PACKAGE.rglob("__init__.py"):
        if init.parent == PACKAGE:
            continue  # the package itself resolves its public names lazily
        assert _top_level_imports(init) <= {"riskreport"}, init


def test_the_architecture_table_names_every_module() -> None:
    # DEVELOPERS.md's table must match the tree: every module is named there (by its path
    # under riskreport/, or by its name in the report/ row), and every path it names exists.
    text = (PACKAGE.parent / "DEVELOPERS.md").read_text("utf-8")
    named = set(re.findall(r"`([\w/]+\.py)`", text))
    for path in PACKAGE.rglob("*.py"):
        relative = path.relative_to(PACKAGE).as_posix()
        if path.name in ("__init__.py", "__main__.py"):
            continue
        if relative.startswith("report/"):
            assert f"`{path.stem}`" in text, f"DEVELOPERS.md does not name report module {relative}"
        else:
            assert relative in named, f"DEVELOPERS.md does not name {relative}"
    for name in named:
        if "/" in name and not name.startswith(("tests/", "bench/", "example_inputs/")):
            assert (PACKAGE / name).exists(), f"DEVELOPERS.md names {name}, which does not exist"


def test_a_cycle_through_a_type_only_import_is_found(tmp_path: Path) -> None:
    # The check above must see an import made for annotations only (it missed the circle
    # through the assessment's record types when it read top-level statements alone).
    module = tmp_path / "m.py"
    module.write_text(
        "from typing import TYPE_CHECKING\n"
        "if TYPE_CHECKING:\n"
        "    from riskreport.assessment import Assessment\n"
    )
    assert _top_level_imports(module) == set()
    assert _top_level_imports(module, type_only=True) == {"riskreport.assessment"}


def _oversized_modules() -> list[str]:
    sizes = {p: len(p.read_text("utf-8").splitlines()) for p in PACKAGE.rglob("*.py")}
    return [
        f"{p.relative_to(PACKAGE).as_posix()}: {n} lines"
        for p, n in sorted(sizes.items())
        if n > MAX_MODULE_LINES
    ]


def _top_level_modules() -> list[str]:
    return sorted(p.name for p in PACKAGE.glob("*.py"))


def test_the_size_checks_see_the_tree() -> None:
    # The two checks below read the real tree (so they can fail): there are modules to
    # count, and the line count of a module is its number of lines.
    assert "__init__.py" in _top_level_modules()
    init = PACKAGE / "__init__.py"
    assert len(init.read_text("utf-8").splitlines()) == init.read_text("utf-8").count("\n")


# No module over 600 lines: one a newcomer can hold (common practice, no source).
def test_no_module_over_the_size_limit() -> None:
    assert not _oversized_modules(), f"over {MAX_MODULE_LINES} lines: {_oversized_modules()}"


# At most 12 modules directly in riskreport/: the rest sit in the sub-package of their floor.
def test_few_modules_at_the_top_level() -> None:
    top = _top_level_modules()
    assert len(top) <= MAX_TOP_LEVEL_MODULES, (
        f"{len(top)} modules directly in riskreport/ (at most {MAX_TOP_LEVEL_MODULES}): {top}"
    )


# The floors of DEVELOPERS.md ("The floors at a glance"): a module imports from its own floor
# and the ones below. Keys are paths under riskreport/ (a folder, or a module).
FLOORS = {
    "errors.py": 0,
    "_typing.py": 0,
    "files": 0,
    "processes": 0,
    "reading": 1,
    "forecasts": 2,
    "laws": 3,
    "replay": 4,
    "rounds": 5,
    "assessment.py": 6,
    "records.py": 6,
    "headline.py": 6,
    "pipeline.py": 6,
    "report": 7,
    "commands": 8,
    "cli.py": 9,
}
# The arrows that point up on purpose (DEVELOPERS.md names each).
UPWARD = {
    ("riskreport.reading.screening", "riskreport.forecasts.combination"),
    ("riskreport.reading.screening", "riskreport.forecasts.track_record"),
    ("riskreport.reading.config", "riskreport.forecasts.combination"),
    ("riskreport.reading.config_reader", "riskreport.forecasts.combination"),
    ("riskreport.reading.config_reader", "riskreport.laws.thresholds"),
    ("riskreport.laws.uncertainty", "riskreport.replay.selection"),
    ("riskreport.rounds.compare", "riskreport.report.formatting"),
    ("riskreport.rounds.compare", "riskreport.report.tables"),
}


def _floor(path: Path) -> int | None:
    relative = path.relative_to(PACKAGE).as_posix()
    return FLOORS.get(relative, FLOORS.get(relative.split("/")[0]))


def _every_import(path: Path) -> set[str]:
    """Modules of the package a module imports anywhere (in functions too)."""
    found: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text("utf-8"))):
        if isinstance(node, ast.ImportFrom) and (node.module or "").startswith("riskreport"):
            for alias in node.names:
                candidate = f"{node.module}.{alias.name}"
                is_module = (PACKAGE.parent / Path(*candidate.split("."))).with_suffix(".py")
                found.add(candidate if is_module.exists() else node.module or "")
    return found


def test_no_import_points_up_a_floor() -> None:
    paths = {_module_name(p): p for p in PACKAGE.rglob("*.py")}
    # Every module has a floor but the public face at the top, which re-exports.
    public = {"__init__.py", "__main__.py", "stats.py", "distributions.py", "combination.py"}
    unplaced = [n for n, p in paths.items() if _floor(p) is None and p.name not in public]
    assert not unplaced, f"modules with no floor in FLOORS: {unplaced}"
    upward = set()
    for name, path in paths.items():
        here = _floor(path)
        for target in _every_import(path) & paths.keys():
            there = _floor(paths[target])
            if here is not None and there is not None and there > here:
                upward.add((name, target))
    assert upward - UPWARD == set(), "imports up a floor (see DEVELOPERS.md)"
    assert UPWARD - upward == set(), "an allowed upward import is gone: drop it from UPWARD"
