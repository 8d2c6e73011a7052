"""``riskreport check`` validates without fitting: the fitting and rendering stack stays
unloaded (a behaviour test in a fresh interpreter, not a timing test)."""

from __future__ import annotations

import json
import subprocess
import sys

from riskreport.cli import demo_config

HEAVY = ("matplotlib", "weasyprint", "statsmodels", "scipy.stats", "jinja2")


def _loaded_after(argv: list[str]) -> tuple[int, list[str]]:
    code = (
        "import json, sys\n"
        "from riskreport.cli import main\n"
        f"code = main({argv!r})\n"
        f"print(json.dumps([code, [m for m in {HEAVY!r} if m in sys.modules]]))\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    exit_code, loaded = json.loads(done.stdout.strip().splitlines()[-1])
    return int(exit_code), list(loaded)


def test_check_loads_no_fitting_or_rendering_library() -> None:
    code, loaded = _loaded_after(["check", str(demo_config()), "-q"])
    assert code == 0
    assert loaded == []


def test_check_json_has_no_probabilities() -> None:
    done = subprocess.run(
        [sys.executable, "-m", "riskreport", "check", str(demo_config()), "--json"],
        capture_output=True,
        text=True,
        check=False,
    )
    summary = json.loads(done.stdout)
    assert done.returncode == 0
    assert summary["status"] == "ok"
    assert summary["headline"] is None
    assert summary["as_of"] == "2026-11"


def test_the_package_import_is_lazy() -> None:
    # `import riskreport` alone must not load scipy.stats; the public names still resolve.
    code = (
        "import sys, riskreport\n"
        "assert 'scipy.stats' not in sys.modules\n"
        "assert callable(riskreport.assess) and callable(riskreport.stats.diebold_mariano)\n"
        "assert callable(riskreport.render)\n"
    )
    subprocess.run([sys.executable, "-c", code], check=True)
