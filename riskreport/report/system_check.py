"""Check that the system libraries the brief needs are present (run by ``make install``)."""

from __future__ import annotations

import ctypes.util
import shutil
import subprocess
import sys


def check() -> list[str]:
    """Return a list of problems with the system libraries (empty when all is well)."""
    problems: list[str] = []
    try:
        import weasyprint  # noqa: F401
    except OSError as exc:  # Pango or cairo missing: weasyprint cannot load them
        problems.append(
            "weasyprint cannot load Pango/cairo "
            f"({exc}); on Debian: apt-get install libpango-1.0-0 libpangoft2-1.0-0 "
            "libharfbuzz0b fonts-dejavu-core"
        )
    if shutil.which("fc-match") is not None:
        found = subprocess.run(
            ["fc-match", "-f", "%{family}", "DejaVu Sans"],
            capture_output=True,
            text=True,
            check=False,
        ).stdout
        if "DejaVu" not in found:
            problems.append(
                "the font DejaVu Sans is not installed; on Debian: apt-get install fonts-dejavu-core"
            )
    return problems


def notes() -> list[str]:
    """Return what would make the brief faster to render (never a reason to fail)."""
    found: list[str] = []
    if ctypes.util.find_library("harfbuzz-subset") is None:
        found.append(
            "the HarfBuzz subset library is missing, so weasyprint subsets the PDF's fonts "
            "with fontTools (measured here: over a quarter of the PDF time); on Debian: "
            "apt-get install libharfbuzz-subset0"
        )
    return found


def main() -> int:
    """Print each problem (and each note) on stderr; exit 1 when there is any problem."""
    problems = check()
    for problem in problems:
        print(f"riskreport set-up: {problem}", file=sys.stderr)
    for note in notes():
        print(f"riskreport set-up note: {note}", file=sys.stderr)
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
