"""Benchmarks, printed as ratios measured in one run (never asserted in the tests).

Measures one assessment of the demo scenario (no files) and one full render, against the
floor of importing the package, and the vectorised bootstrap against a naive scipy loop.
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from scipy import stats

ROOT = Path(__file__).resolve().parents[1]
CONFIG = ROOT / "example_inputs" / "config.toml"


def _seconds(code: str) -> float:
    start = time.perf_counter()
    subprocess.run([sys.executable, "-c", code], check=True, cwd=ROOT)
    return time.perf_counter() - start


def _bootstrap_ratio() -> tuple[float, float]:
    from riskreport.probabilities import block_indices

    rng = np.random.default_rng(1)
    errors = rng.normal(0.1, 0.8, 120)
    index = block_indices(errors.size, 5, 500, rng)
    start = time.perf_counter()
    samples = errors[index]
    loc, scale = samples.mean(axis=1), samples.std(axis=1)
    _ = stats.norm.cdf(3.0, loc, scale) - stats.norm.cdf(1.0, loc, scale)
    fast = time.perf_counter() - start
    start = time.perf_counter()
    for row in index:
        params = stats.norm.fit(errors[row])
        dist = stats.norm(*params)
        _ = dist.cdf(3.0) - dist.cdf(1.0)
    slow = time.perf_counter() - start
    return fast, slow


def main() -> None:
    floor = _seconds("import riskreport")
    assess = _seconds(f"import riskreport; riskreport.assess({str(CONFIG)!r})")
    with tempfile.TemporaryDirectory() as out:
        full = _seconds(
            f"import riskreport; riskreport.render(riskreport.assess({str(CONFIG)!r}), {out!r})"
        )
    fast, slow = _bootstrap_ratio()
    print(f"import floor                   {floor:7.2f} s")
    print(f"assess demo / import floor     {assess / floor:7.1f} x")
    print(f"assess + render / import floor {full / floor:7.1f} x")
    print(f"naive bootstrap loop / batch   {slow / fast:7.1f} x (500 replicates, n = 120)")


if __name__ == "__main__":
    main()
