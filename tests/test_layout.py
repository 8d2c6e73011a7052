"""The package's layout: no import cycle between its modules at import time, and every
sub-package's ``__init__`` loads nothing (so ``riskreport check`` stays light)."""

from __future__ import annotations

import ast
import re
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "riskreport"


def _module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _top_level_imports(path: Path) -> set[str]:
    """Modules of the package imported when ``path`` is imported: top-level statements only
    (imports inside functions and ``if TYPE_CHECKING:`` blocks run later or never)."""
    found: set[str] = set()
    for node in ast.parse(path.read_text("utf-8")).body:
        if isinstance(node, ast.Import):
            found.update(a.name for a in node.names if a.name.startswith("riskreport"))
        elif isinstance(node, ast.ImportFrom) and (node.module or "").startswith("riskreport"):
            module = node.module or ""
            for alias in node.names:
                candidate = f"{module}.{alias.name}"
                is_module = (PACKAGE.parent / Path(*candidate.split("."))).with_suffix(".py")
                found.add(candidate if is_module.exists() else module)
    return found


def _graph() -> dict[str, set[str]]:
    modules = {_module_name(p): p for p in PACKAGE.rglob("*.py")}
    return {name: _top_level_imports(path) & modules.keys() for name, path in modules.items()}


def test_no_import_cycle_between_modules() -> None:
    graph = _graph()
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
