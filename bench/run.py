"""Benchmarks, printed as ratios measured in one run (never asserted in the tests).

1. One assessment and one full render of the demo, against the floor of importing the
   package (fresh processes).
2. Fitting all 25 horizons for all four families, and the bootstrap refits (500 replicates
   per horizon), against a naive loop of scipy fits on the same samples. The naive
   bootstrap loop is timed on a subsample of replicates and scaled up (stated below).
   Target: our fitting at least 20x faster than the naive loop.
3. The calibration replay (every family, every horizon, every past origin) on the demo and
   on a history four times as long, against the import floor and a naive refit loop; with a
   fixed error window its cost should grow no worse than linearly in origins x horizons.
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

from riskreport.laws import distributions
from riskreport.laws.probabilities import block_indices

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


def _replay_inputs(copies: int) -> tuple[object, np.ndarray, np.ndarray]:
    """The demo's panel and combined-forecast errors, the history repeated ``copies`` times."""
    from riskreport.forecasts import combination
    from riskreport.forecasts.track_record import error_matrix
    from riskreport.reading import config_reader, inputs, panel

    cfg = config_reader.load(CONFIG)
    fc = inputs.read_forecasts(cfg.inputs.forecasts, cfg.brief.frequency, cfg.brief.as_of)
    act = inputs.read_actuals(cfg.inputs.actuals, cfg.brief.frequency)
    base = panel.build(fc, act, as_of=cfg.brief.as_of, max_h=cfg.brief.horizons)
    combo = combination.combine("equal", base)
    errors = error_matrix(combo.combined, base.outcomes)
    known = errors[: -cfg.brief.horizons - 1]
    stacked = np.concatenate([known] * (copies - 1) + [errors]) if copies > 1 else errors
    combined = (
        np.concatenate([combo.combined[: known.shape[0]]] * (copies - 1) + [combo.combined])
        if copies > 1
        else combo.combined
    )
    n = stacked.shape[0]
    origins = np.arange(n) + int(base.origins[-1]) - n + 1
    outcomes = combined + stacked
    grown = panel.Panel(
        base.models,
        origins,
        np.zeros((1, n, cfg.brief.horizons + 1)),
        outcomes,
        outcomes[:, 0],
        np.full(n + 400, 3.0),
        int(origins[0]) - 400,
    )
    return (grown, cfg), combined, stacked


def _replay_seconds(copies: int) -> tuple[float, int]:
    from riskreport.replay import calibration

    (grown, cfg), combined, errors = _replay_inputs(copies)
    start = time.perf_counter()
    runs = calibration.replay(
        grown,
        combined,
        errors,
        cfg.brief.horizons,
        window=cfg.uncertainty.window,
        mode=None,
        band_for=cfg.band_for,
    )  # type: ignore[attr-defined]
    seconds = time.perf_counter() - start
    return seconds, sum(r.pit.size for r in runs.values())


def _naive_replay_seconds(samples: int = 40) -> float:
    """A naive replay step: refit each family with scipy at one origin and score it."""
    rng = np.random.default_rng(3)
    start = time.perf_counter()
    for _ in range(samples):
        x = rng.normal(0, 1, 120)
        for family in FAMILIES:
            _naive_fit(family, x)
    return (time.perf_counter() - start) / samples  # per origin and horizon, all families


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

    one, cells_one = _replay_seconds(1)
    four, cells_four = _replay_seconds(4)
    naive = _naive_replay_seconds() * cells_one / len(FAMILIES)
    print(
        f"replay, demo ({cells_one} origin x horizon cells per family) / import floor {one / floor:8.2f} x"
    )
    print(
        f"replay, 4x history / demo                 {four / one:8.2f} x  (cells {cells_four / cells_one:.2f} x; linear or better if <=)"
    )
    print(
        f"replay: naive scipy refit loop / ours     {naive / one:8.1f} x  (naive timed on 40 origins, scaled)"
    )


if __name__ == "__main__":
    main()
