"""Benchmarks, printed as ratios measured in one run (never asserted in the tests).

1. One assessment and one full render of the demo, against the floor of importing the
   package (fresh processes).
2. Fitting all 25 horizons for all four families, and the bootstrap refits (500 replicates
   per horizon), against a naive loop of scipy fits on the same samples. The naive
   bootstrap loop is timed on a subsample of replicates and scaled up (stated below).
   Target: our fitting at least 20x faster than the naive loop.
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np
from scipy import optimize, stats

from riskreport import distributions
from riskreport.probabilities import block_indices

ROOT = Path(__file__).resolve().parents[1]
CONFIG = ROOT / "example_inputs" / "config.toml"
HORIZONS, N_ERRORS, REPLICATES, NAIVE_REPLICATES = 25, 120, 500, 10
FAMILIES = ("normal", "two-piece-normal", "skew-normal", "empirical")


def _seconds(code: str) -> float:
    start = time.perf_counter()
    subprocess.run([sys.executable, "-c", code], check=True, cwd=ROOT)
    return time.perf_counter() - start


def _timed(work: Callable[[], object]) -> float:
    start = time.perf_counter()
    work()
    return time.perf_counter() - start


def _naive_fit(family: str, x: np.ndarray) -> None:
    """What one would write with scipy alone: generic MLE for every sample."""
    if family == "normal":
        stats.norm.fit(x)
    elif family == "skew-normal":
        stats.skewnorm.fit(x)
    elif family == "empirical":
        stats.gaussian_kde(x)
    else:

        def nll(theta: np.ndarray) -> float:
            mode, s1, s2 = theta[0], np.exp(theta[1]), np.exp(theta[2])
            side = np.where(x < mode, s1, s2)
            return -float(
                np.sum(np.log(np.sqrt(2 / np.pi) / (s1 + s2)) - (x - mode) ** 2 / (2 * side**2))
            )

        optimize.minimize(
            nll, [np.median(x), np.log(x.std()), np.log(x.std())], method="Nelder-Mead"
        )


def main() -> None:
    floor = _seconds("import riskreport")
    assess = _seconds(f"import riskreport; riskreport.assess({str(CONFIG)!r})")
    with tempfile.TemporaryDirectory() as out:
        full = _seconds(
            f"import riskreport; riskreport.render(riskreport.assess({str(CONFIG)!r}), {out!r})"
        )
    print(f"import floor                              {floor:8.2f} s")
    print(f"assess demo / import floor                {assess / floor:8.1f} x")
    print(f"assess + render demo / import floor       {full / floor:8.1f} x")

    rng = np.random.default_rng(1)
    samples = [
        rng.normal(0.1, 0.3 + 0.05 * h, N_ERRORS) + rng.exponential(0.2, N_ERRORS)
        for h in range(HORIZONS)
    ]
    ours_fit = _timed(lambda: [distributions.fit(f, s) for f in FAMILIES for s in samples])
    naive_fit = _timed(lambda: [_naive_fit(f, s) for f in FAMILIES for s in samples])
    print(
        f"headline fits (25 horizons x 4 families): naive scipy loop / ours {naive_fit / ours_fit:8.1f} x"
    )

    indices = [block_indices(N_ERRORS, h + 1, REPLICATES, rng) for h in range(HORIZONS)]
    ours_boot = _timed(
        lambda: [
            distributions.fit_batch(f, s[i])
            for f in FAMILIES
            for s, i in zip(samples, indices, strict=True)
        ]
    )
    naive_part = _timed(
        lambda: [
            _naive_fit(f, s[row])
            for f in FAMILIES
            for s, i in zip(samples, indices, strict=True)
            for row in i[:NAIVE_REPLICATES]
        ]
    )
    naive_boot = naive_part * REPLICATES / NAIVE_REPLICATES
    print(
        f"bootstrap refits (25 x 4 x {REPLICATES}):      naive scipy loop / ours {naive_boot / ours_boot:8.1f} x"
        f"  (naive timed on {NAIVE_REPLICATES} replicates, scaled)"
    )
    total = (naive_fit + naive_boot) / (ours_fit + ours_boot)
    print(f"all fitting: naive / ours                 {total:8.1f} x  (target >= 20 x)")


if __name__ == "__main__":
    main()
