"""The cache beside the outputs, printed as ratios measured in one run (never asserted).

Every command runs in a fresh process on the demo scenario, like a scheduler would run it:

- import floor: the same bare import of the dependency stack as ``bench/generation.py``;
- fresh build: ``riskreport build --no-cache`` of round 2026-11 into a folder holding round
  2026-10 (so both builds compare with the previous brief);
- next round: the same build with the cache left by building 2026-10 there;
- identical re-run: the same build again (nothing changed);
- batch: ``riskreport batch --months 2025-12..2026-11`` (12 rounds) into an empty folder.

Targets (issue 16): identical re-run <= 1.2x the import floor; 12 monthly rounds in batch
<= 3x one build. The median of ``REPEATS`` runs is printed (the batch runs once).
"""

from __future__ import annotations

import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
CONFIG = ROOT / "example_inputs" / "config.toml"
RISKREPORT = [sys.executable, "-m", "riskreport"]
# One floor for every benchmark: the same imports as bench/generation.py (the stack a build loads).
from generation import FLOOR  # noqa: E402

REPEATS = 3


def _seconds(command: list[str]) -> float:
    start = time.perf_counter()
    subprocess.run(command, check=True, cwd=ROOT)
    return time.perf_counter() - start


def _build(out: Path, as_of: str, *extra: str) -> list[str]:
    return [*RISKREPORT, "build", str(CONFIG), "--out", str(out), "--as-of", as_of, "-q", *extra]


def main() -> None:
    floor, fresh, nxt, rerun = [], [], [], []
    with tempfile.TemporaryDirectory() as tmp:
        for i in range(REPEATS):
            base = Path(tmp) / f"r{i}"
            floor.append(_seconds([sys.executable, "-c", FLOOR]))
            plain, cached = base / "plain", base / "cached"
            _seconds(_build(plain, "2026-10", "--no-cache"))
            fresh.append(_seconds(_build(plain, "2026-11", "--no-cache")))
            _seconds(_build(cached, "2026-10"))
            nxt.append(_seconds(_build(cached, "2026-11")))
            rerun.append(_seconds(_build(cached, "2026-11")))
            shutil.rmtree(base)
        batch_dir = Path(tmp) / "batch"
        batch = _seconds(
            [
                *RISKREPORT,
                "batch",
                str(CONFIG),
                "--months",
                "2025-12..2026-11",
                "--out",
                str(batch_dir),
                "-q",
            ]
        )
    f, b = statistics.median(floor), statistics.median(fresh)
    n, r = statistics.median(nxt), statistics.median(rerun)
    print(
        f"medians of {REPEATS} runs (seconds): import floor {f:.2f}, fresh build {b:.2f}, "
        f"next round with the cache {n:.2f}, identical re-run {r:.2f}; batch of 12 {batch:.1f}"
    )
    print(f"fresh build / import floor:              {b / f:5.2f}x")
    print(f"next round with the cache / fresh build: {n / b:5.2f}x")
    print(f"identical re-run / import floor:         {r / f:5.2f}x   (target <= 1.2x)")
    print(f"batch of 12 monthly rounds / one build:  {batch / b:5.2f}x   (target <= 3x)")


if __name__ == "__main__":
    main()
