"""Calibration benchmark (printed, never asserted): does the replay's coverage come near
nominal, and does the log score beat the constant normal law?

Two histories:
1. US CPI inflation, quarterly, year on year, 1960-2009, from the macrodata set that ships
   with statsmodels (``statsmodels.datasets.macrodata``: US Bureau of Labor Statistics CPI
   as compiled there), with three simple pseudo-real-time forecasters built here (last value,
   an AR(1) fitted by least squares on the history up to the origin and iterated, the mean
   of the last four quarters), combined with equal weights, horizons 0-8.
2. The invented demo scenario.

For each: the constant normal law; the normal law with the spread estimated jointly across
horizons; ``auto`` with the family and spread chosen prequentially, alone and with each recalibration
(online quantile tracking, beta map); and ``auto`` with the window chosen too
(``window_choice = "auto"``), alone and with tracking. Printed per horizon group: the mean |coverage - nominal|
of the 50% and 90% ranges and the mean log score, and their averages over horizons.
Targets (issue "Calibrated by construction"): 90% gap <= 0.03 and 50% gap <= 0.04 on
average over horizons, log score better than the constant normal in every group.
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path

import numpy as np

from riskreport import pipeline
from riskreport.reading import config
from riskreport.replay import calibration

ROOT = Path(__file__).resolve().parents[1]
AUTO = {"distribution": "auto", "spread": "auto"}
CHOSEN = {**AUTO, "window_choice": "auto"}
VARIANTS = (
    ("constant normal", {"distribution": "normal", "spread": "constant", "recalibrate": False}),
    ("normal, joint spread", {"distribution": "normal", "spread": "joint", "recalibrate": False}),
    ("auto", {**AUTO, "recalibrate": False}),
    ("auto + tracking", {**AUTO, "recalibrate": True, "recalibration": "tracking"}),
    ("auto + beta map", {**AUTO, "recalibrate": True, "recalibration": "beta"}),
    ("auto + window", {**CHOSEN, "recalibrate": False}),
    ("auto + window + tracking", {**CHOSEN, "recalibrate": True, "recalibration": "tracking"}),
)


def _cpi_case(folder: Path) -> Path:
    import statsmodels.api as sm

    data = sm.datasets.macrodata.load_pandas().data
    cpi = data["cpi"].to_numpy()
    yoy = 100 * (cpi[4:] / cpi[:-4] - 1)
    start = int(data["year"].iloc[4]) * 4 + int(data["quarter"].iloc[4]) - 1
    horizons = 8
    labels = [f"{(start + i) // 4}-Q{(start + i) % 4 + 1}" for i in range(len(yoy) + horizons)]
    rows = ["origin,period,model,value"]
    for o in range(16, len(yoy)):
        past = yoy[:o]  # known at origin o: outcomes up to o - 1
        x, y = past[:-1], past[1:]
        slope, intercept = np.polyfit(x, y, 1)
        ar, level = [], past[-1]
        for _ in range(horizons + 1):
            level = intercept + slope * level
            ar.append(level)
        for h in range(horizons + 1):
            if o + h >= len(labels):
                break
            period = labels[o + h]
            rows.append(f"{labels[o]},{period},last-value,{past[-1]:.4f}")
            rows.append(f"{labels[o]},{period},ar1,{ar[h]:.4f}")
            rows.append(f"{labels[o]},{period},mean4,{past[-4:].mean():.4f}")
    as_of = len(yoy) - 1
    actuals = ["period,value"] + [f"{labels[i]},{yoy[i]:.4f}" for i in range(as_of)]
    (folder / "f.csv").write_text("\n".join(rows) + "\n")
    (folder / "a.csv").write_text("\n".join(actuals) + "\n")
    path = folder / "c.toml"
    path.write_text(
        f'[brief]\ntitle = "US CPI"\ninstitution = "benchmark"\nas_of = "{labels[as_of]}"\n'
        f'frequency = "quarterly"\nhorizons = {horizons}\npolicy_horizon = 6\n'
        '[inputs]\nforecasts = "f.csv"\nactuals = "a.csv"\n[target]\nlower = 1.0\nupper = 3.0\n'
        '[combination]\nmethod = "equal"\n'
        "[uncertainty]\nwindow = 80\nbootstrap_replicates = 50\nsimulations = 1000\n"
    )
    return path


def _groups(
    assessment: pipeline.Assessment, frequency: str
) -> list[tuple[str, float, float, float]]:
    cal = assessment.calibration
    graded = cal.distribution
    cover = {(c.h, c.nominal): c.observed for c in cal.coverage}
    logs = {s.h: s.log_score for s in cal.scores if s.distribution == graded}
    out = []
    hs_all = sorted(logs)
    for first, last in (*calibration.HORIZON_GROUPS[frequency], (min(hs_all), max(hs_all))):  # type: ignore[index]
        hs = [h for h in hs_all if first <= h <= last]
        if not hs:
            continue
        gap50 = float(np.mean([abs(cover[(h, 0.5)] - 0.5) for h in hs]))
        gap90 = float(np.mean([abs(cover[(h, 0.9)] - 0.9) for h in hs]))
        log = float(np.mean([logs[h] for h in hs]))
        name = "all" if (first, last) == (min(hs_all), max(hs_all)) else f"h {first}-{last}"
        out.append((name, gap50, gap90, log))
    return out


def _run(name: str, path: Path, frequency: str) -> None:
    print(f"\n{name}")
    print(
        f"{'method':<26} {'horizons':<9} {'|cov50-0.5|':>11} {'|cov90-0.9|':>11} {'log score':>10}"
    )
    for label, options in VARIANTS:
        cfg = config.load(path).replaced("uncertainty", **options)
        start = time.perf_counter()
        assessment = pipeline.assess_config(cfg, search=path.parent / "none")
        seconds = time.perf_counter() - start
        for group, gap50, gap90, log in _groups(assessment, frequency):
            print(f"{label:<26} {group:<9} {gap50:>11.3f} {gap90:>11.3f} {log:>10.3f}")
        adj = assessment.adjustments
        chosen = adj.method if adj is not None else "-"
        if adj is not None and adj.window_grid:
            chosen += f"; window {adj.window or 'all'}"
        print(f"{'':<26} (today: {chosen}; build {seconds:.0f} s)")


def main() -> None:
    """Print the benchmark."""
    with tempfile.TemporaryDirectory() as tmp:
        _run("US CPI, quarterly y/y (statsmodels macrodata)", _cpi_case(Path(tmp)), "quarterly")
    _run("Demo (Corvania, monthly)", ROOT / "example_inputs" / "config.toml", "monthly")


if __name__ == "__main__":
    main()
