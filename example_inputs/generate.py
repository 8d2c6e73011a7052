"""Generate the invented demo scenario (seeded, so the files are reproducible).

Everything here is made up: the Republic of Corvania, its Monetary Authority, its inflation
history and its staff's forecasting models. Run ``python example_inputs/generate.py`` to
rewrite forecasts.csv and actuals.csv beside this file.

The outcome is monthly year-on-year CPI inflation: a slowly drifting trend plus an AR(1)
cycle driven by upside-skewed shocks, with three episodes (a 2008 commodity spike, a 2009
slump and a 2021-22 surge). Each model's forecast is the best forecast given last month's
data, disturbed in its own way: a persistent model-specific misjudgement that grows with the
horizon, a bias, and in some models a wrong view of persistence or an anchor at the target.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

SEED = 23
FIRST_ACTUAL = (1999, 1)
LAST_ACTUAL = (2026, 10)
FIRST_ORIGIN = (2001, 1)
AS_OF = (2026, 11)
MAX_H = 24
TARGET = 3.0
PHI = 0.95  # monthly persistence of the inflation cycle

HERE = Path(__file__).resolve().parent


def _index(year: int, month: int) -> int:
    """Months since January 1999."""
    return (year - FIRST_ACTUAL[0]) * 12 + month - 1


def _label(i: int) -> str:
    year, month = divmod(i, 12)
    return f"{FIRST_ACTUAL[0] + year:04d}-{month + 1:02d}"


def outcomes(rng: np.random.Generator, n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Trend, cycle and outcome series for ``n + MAX_H + 1`` months (the tail is never shown)."""
    total = n + MAX_H + 1
    t = np.arange(total)
    # Disinflation towards the target after it was adopted, then a small random drift.
    trend = TARGET + 1.5 * np.exp(-t / 30.0) + np.cumsum(rng.normal(0.0, 0.015, total))
    trend -= np.linspace(0.0, trend[-1] - TARGET - 0.2, total) * (t > 36)
    gamma = rng.gamma(shape=2.0, scale=0.12, size=total)  # upside-skewed shocks, mean 0.24
    shocks = rng.normal(0.0, 0.16, total) + gamma - 0.24
    episodes = {
        (2007, 11): (8, 0.22),  # commodity spike
        (2008, 9): (9, -0.30),  # slump
        (2021, 3): (18, 0.42),  # post-pandemic surge
        (2022, 10): (10, -0.20),  # energy prices fall back
        (2024, 1): (12, -0.08),
    }
    for (year, month), (length, size) in episodes.items():
        start = _index(year, month)
        shocks[start : start + length] += size
    cycle = np.zeros(total)
    for i in range(1, total):
        cycle[i] = PHI * cycle[i - 1] + shocks[i]
    return trend, cycle, trend + cycle


MODELS: dict[str, dict[str, float]] = {
    # persistence: the model's view of PHI; anchor: pull towards the target at long horizons;
    # misjudge: size of its persistent misreading; noise: idiosyncratic noise; bias (pp).
    "core-gap-model": {
        "persistence": 0.95,
        "anchor": 0.0,
        "misjudge": 0.20,
        "noise": 0.06,
        "bias": 0.05,
        "first": 2001,
    },
    "bvar": {
        "persistence": 0.94,
        "anchor": 0.0,
        "misjudge": 0.16,
        "noise": 0.14,
        "bias": 0.0,
        "first": 2001,
    },
    "phillips-curve": {
        "persistence": 0.985,
        "anchor": 0.0,
        "misjudge": 0.22,
        "noise": 0.08,
        "bias": -0.10,
        "first": 2001,
    },
    "analyst-survey": {
        "persistence": 0.95,
        "anchor": 0.55,
        "misjudge": 0.12,
        "noise": 0.05,
        "bias": 0.0,
        "first": 2008,
    },
    "nowcast-bridge": {
        "persistence": 0.995,
        "anchor": 0.0,
        "misjudge": 0.30,
        "noise": 0.03,
        "bias": 0.0,
        "first": 2003,
    },
    "legacy-dsge": {
        "persistence": 0.85,
        "anchor": 0.0,
        "misjudge": 0.25,
        "noise": 0.08,
        "bias": 0.15,
        "first": 2001,
        "last": 2019,
    },
}


def forecasts(
    rng: np.random.Generator, trend: np.ndarray, cycle: np.ndarray
) -> list[tuple[str, str, str, float]]:
    """(origin, period, model, value) rows for every model, origin and horizon 0..MAX_H."""
    first, last = _index(*FIRST_ORIGIN), _index(*AS_OF)
    h = np.arange(MAX_H + 1)
    rows: list[tuple[str, str, str, float]] = []
    for name, spec in MODELS.items():
        start = max(first, _index(int(spec["first"]), 1))
        stop = min(last, _index(int(spec.get("last", 9999)), 12))
        misread = 0.0
        for origin in range(start, stop + 1):
            known = origin - 1  # the forecast uses data up to last month
            path = trend[known] + spec["persistence"] ** (h + 1) * cycle[known]
            weight = 1.0 - spec["anchor"] * (1.0 - np.exp(-h / 9.0))
            path = weight * path + (1.0 - weight) * TARGET
            misread = 0.85 * misread + rng.normal(0.0, spec["misjudge"])
            growth = np.sqrt(np.minimum(h, 18) / 18.0)
            if name == "nowcast-bridge":
                growth = np.minimum(h, 6) / 6.0  # sharp at short horizons, then drifts
            path = path + spec["bias"] * growth + misread * growth
            path = path + rng.normal(0.0, spec["noise"], h.size) * (0.4 + growth)
            rows.extend(
                (_label(origin), _label(origin + k), name, round(float(v), 2))
                for k, v in zip(h, path, strict=True)
            )
    return rows


def main() -> None:
    """Write forecasts.csv and actuals.csv."""
    rng = np.random.default_rng(SEED)
    n = _index(*LAST_ACTUAL) + 1
    trend, cycle, outcome = outcomes(rng, n)
    with (HERE / "actuals.csv").open("w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(["period", "value"])
        writer.writerows((_label(i), f"{outcome[i]:.1f}") for i in range(n))
    with (HERE / "forecasts.csv").open("w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(["origin", "period", "model", "value"])
        writer.writerows((o, p, m, f"{v:.2f}") for o, p, m, v in forecasts(rng, trend, cycle))


if __name__ == "__main__":
    main()
