"""The installed package: every sub-package is listed for installation, and a regular
(non-editable) install carries the templates and the demo scenario inside the package's
own namespace, with no top-level packages of generic names."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tomllib
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]


def _listed() -> set[str]:
    with (REPO / "pyproject.toml").open("rb") as handle:
        return set(tomllib.load(handle)["tool"]["setuptools"]["packages"])


def test_every_sub_package_is_listed_for_installation() -> None:
    # A package missing from the list installs fine in editable mode and is silently
    # absent from a regular install: check the tree against the list.
    found = {
        ".".join(init.parent.relative_to(REPO).parts)
        for init in (REPO / "riskreport").rglob("__init__.py")
    }
    assert found <= _listed(), f"not listed in pyproject.toml: {sorted(found - _listed())}"


def _source_copy(folder: Path) -> Path:
    """The files of the project, without build leftovers: setuptools reuses a ``build/``
    folder left in the tree, which could ship modules that no longer exist."""
    listed = subprocess.run(
        ["git", "ls-files", "--cached", "--others", "--exclude-standard"],
        check=True,
        capture_output=True,
        text=True,
        cwd=REPO,
    ).stdout.splitlines()
    for name in listed:
        source = REPO / name
        if source.is_file():
            (folder / name).parent.mkdir(parents=True, exist_ok=True)
            shutil.copy2(source, folder / name)
    return folder


def test_only_the_package_is_installed_at_the_top(tmp_path: Path) -> None:
    target = tmp_path / "site"
    source = _source_copy(tmp_path / "source")
    subprocess.run(
        [
            sys.executable,
            "-m",
            "pip",
            "install",
            "--quiet",
            "--no-deps",
            "--target",
            target,
            source,
        ],
        check=True,
        capture_output=True,
        cwd=tmp_path,
    )
    tops = {p.name for p in target.iterdir() if not p.name.endswith((".dist-info", ".egg-info"))}
    assert tops - {"bin"} == {"riskreport"}, sorted(tops)  # bin: the console script
    probe = (
        "import importlib, pkgutil, riskreport\n"
        "from pathlib import Path\n"
        f"assert Path(riskreport.__file__).parents[1] == Path(r'{target}'), riskreport.__file__\n"
        "for m in pkgutil.walk_packages(riskreport.__path__, 'riskreport.'):\n"
        "    if not m.name.endswith('__main__'):\n"
        "        importlib.import_module(m.name)\n"
        "from riskreport import cli\n"
        "from riskreport.report import render\n"
        "assert (cli.demo_config().parent / 'forecasts.csv').is_file()\n"
        "assert (render._templates_dir() / 'brief.html').is_file()\n"
        "assert (render._templates_dir() / 'brief.css').is_file()\n"
    )
    env = {**os.environ, "PYTHONPATH": str(target)}
    done = subprocess.run(
        [sys.executable, "-c", probe], capture_output=True, text=True, cwd=tmp_path, env=env
    )
    assert done.returncode == 0, done.stderr
