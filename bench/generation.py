"""Benchmarks of scripted monthly generation, printed as ratios measured in one run (never
asserted in the tests). Every figure is a fresh process, so imports are paid as a user
pays them; each ratio's two sides are measured back to back, repeated, and the median of
the per-repeat ratios is printed (the machine may be shared).

1. build / import floor (also in CPU seconds), check / floor, identical re-run / floor and
   the serial build (RISKREPORT_WORKERS=1) / build, on the demo; the floor is
   a bare import of the dependency stack (numpy, pandas, scipy.stats, statsmodels,
   matplotlib, jinja2, weasyprint).
2. A batch of 12 monthly rounds (``batch --jobs 2``) / one build.
3. Build time and peak memory (the child's ru_maxrss) on invented archives of growing size
   up to 20 models, 50 years monthly and 36 horizons; seconds per million
   model x origin x horizon cells shows whether the cost grows faster than linearly.

``python bench/generation.py [--repeats N] [--quick]``; --quick skips the batch and the
largest archive.
"""

from __future__ import annotations

import argparse
import csv
import os
import platform
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "example_inputs" / "config.toml"
FLOOR = (
    "import numpy, pandas, scipy.stats, statsmodels.tsa.arima.model, matplotlib.figure, "
    "jinja2, weasyprint"
)
# (models, years of monthly origins, largest horizon): the demo's size, then larger.
ARCHIVES = {"1x": (6, 26, 24), "4x": (12, 50, 24), "16x": (20, 50, 36)}


@dataclass(frozen=True)
class Run:
    """One command in a fresh process: wall seconds, peak resident memory (the largest
    process: a forked helper child counts on its own, not added) and CPU seconds (user +
    system, children included), which a busy machine inflates far less than wall time."""

    seconds: float
    peak_mb: float
    cpu: float


def _run(argv: list[str], **extra_env: str) -> Run:
    """Run ``argv`` in a child that reports its own child's peak memory (ru_maxrss, KiB)."""
    probe = (
        "import resource, subprocess, sys, time\n"
        "t = time.perf_counter()\n"
        "subprocess.run(sys.argv[1:], check=True, stdout=subprocess.DEVNULL, stderr=sys.stderr)\n"
        "t = time.perf_counter() - t\n"
        "u = resource.getrusage(resource.RUSAGE_CHILDREN)\n"
        "print(t, u.ru_maxrss, u.ru_utime + u.ru_stime)\n"
    )
    env = {**os.environ, "MPLBACKEND": "Agg", **extra_env}
    done = subprocess.run(
        [sys.executable, "-c", probe, *argv],
        check=True,
        stdout=subprocess.PIPE,
        text=True,
        cwd=ROOT,
        env=env,
    )
    seconds, kib, cpu = done.stdout.split()
    return Run(float(seconds), int(kib) / 1024, float(cpu))


def _cli(*args: str) -> list[str]:
    return [sys.executable, "-m", "riskreport", *args, "-q"]


def _median_ratio(pairs: list[tuple[float, float]]) -> tuple[float, float, float]:
    """Median of a / b over the repeats, and the medians of a and b."""
    return (
        statistics.median(a / b for a, b in pairs),
        statistics.median(a for a, _ in pairs),
        statistics.median(b for _, b in pairs),
    )


def demo_ratios(repeats: int, work: Path) -> None:
    """Build, check and identical re-run against the import floor, back to back."""
    build_pairs, check_pairs, rerun_pairs, cpu_pairs, serial_pairs = [], [], [], [], []
    for i in range(repeats):
        out = work / f"demo-{i}"
        floor_run = _run([sys.executable, "-c", FLOOR])
        floor = floor_run.seconds
        build_run = _run(_cli("build", str(DEMO), "--out", str(out)))
        build = build_run.seconds
        check = _run(_cli("check", str(DEMO))).seconds
        rerun = _run(_cli("build", str(DEMO), "--out", str(out))).seconds
        serial = _run(
            _cli("build", str(DEMO), "--out", str(work / f"serial-{i}")),
            RISKREPORT_WORKERS="1",
        )
        build_pairs.append((build, floor))
        cpu_pairs.append((build_run.cpu, floor_run.cpu))
        serial_pairs.append((serial.seconds, build))
        check_pairs.append((check, floor))
        rerun_pairs.append((rerun, floor))
        shutil.rmtree(out)
    for name, pairs, target in (
        ("build demo / import floor", build_pairs, "<= 2.5, goal 2.0"),
        ("check demo / import floor", check_pairs, "<= 0.5"),
        ("identical re-run / import floor", rerun_pairs, "<= 1.2"),
    ):
        ratio, a, b = _median_ratio(pairs)
        print(f"{name:34s} {ratio:6.2f} x  ({a:.1f} s / {b:.1f} s; target {target})")
    ratio, a, b = _median_ratio(cpu_pairs)
    print(f"{'  the same in CPU seconds':34s} {ratio:6.2f} x  ({a:.1f} s / {b:.1f} s)")
    ratio, a, b = _median_ratio(serial_pairs)
    print(f"{'serial build / build (2nd core)':34s} {ratio:6.2f} x  ({a:.1f} s / {b:.1f} s)")


def batch_ratio(work: Path) -> None:
    """Twelve monthly rounds in one batch against one build, back to back."""
    out = work / "batch"
    one = _run(_cli("build", str(DEMO), "--out", str(work / "one")))
    twelve = _run(
        _cli("batch", str(DEMO), "--months", "2025-12..2026-11", "--jobs", "2", "--out", str(out))
    )
    print(
        f"batch of 12 months, --jobs 2 / build {twelve.seconds / one.seconds:6.2f} x  "
        f"({twelve.seconds:.1f} s / {one.seconds:.1f} s; target <= 3; "
        f"peak {twelve.peak_mb:.0f} MB; CPU {twelve.cpu / one.cpu:.2f} x)"
    )


def _write_archive(folder: Path, models: int, years: int, horizons: int) -> Path:
    """An invented archive: AR(1) inflation around 3% and models = truth + noise growing
    with the horizon, seeded."""
    rng = np.random.default_rng([models, years, horizons])
    n = years * 12
    first_year = 2026 - years
    labels = [f"{first_year + i // 12:04d}-{i % 12 + 1:02d}" for i in range(n + horizons + 1)]
    truth = np.empty(n + horizons + 1)
    truth[0] = 3.0
    for t in range(1, truth.size):
        truth[t] = 3.0 + 0.95 * (truth[t - 1] - 3.0) + rng.normal(0, 0.25)
    with (folder / "actuals.csv").open("w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["period", "value"])
        writer.writerows([labels[t], f"{truth[t]:.3f}"] for t in range(n))
    with (folder / "forecasts.csv").open("w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["origin", "period", "model", "value"])
        steps = np.arange(horizons + 1)
        for k in range(models):
            noise = rng.normal(0, 0.2 + 0.02 * k, (n, horizons + 1)) * np.sqrt(1 + steps)
            for origin in range(12, n + 1):
                values = truth[origin + steps] + noise[origin - 1]
                writer.writerows(
                    [labels[origin], labels[origin + h], f"m{k:02d}", f"{values[h]:.3f}"]
                    for h in steps
                )
    config = folder / "config.toml"
    config.write_text(
        "[brief]\n"
        'title = "Invented archive"\ninstitution = "Invented"\n'
        f'as_of = "{labels[n]}"\nfrequency = "monthly"\n'
        f"horizons = {horizons}\npolicy_horizon = 18\n"
        '[inputs]\nforecasts = "forecasts.csv"\nactuals = "actuals.csv"\n'
        '[target]\nmidpoint = 3.0\ntolerance = 1.0\nbasis = "period"\n'
        '[combination]\nmethod = "equal"\n'
        '[uncertainty]\ndistribution = "auto"\nwindow = 120\ncentre = "estimated"\n'
        '[output]\ndirectory = "out"\nformats = ["pdf", "html", "json", "csv"]\n',
        encoding="utf-8",
    )
    return config


def scaling(work: Path, sizes: list[str]) -> None:
    """Build time and peak memory by archive size; seconds per million cells."""
    base_cells = None
    for name in sizes:
        models, years, horizons = ARCHIVES[name]
        folder = work / f"archive-{name}"
        folder.mkdir()
        config = _write_archive(folder, models, years, horizons)
        cells = models * years * 12 * (horizons + 1)
        base_cells = base_cells or cells
        floor = _run([sys.executable, "-c", FLOOR]).seconds
        build = _run(_cli("build", str(config), "--out", str(folder / "out")))
        print(
            f"archive {name:>3s} ({models:2d} models, {years} years, h 0-{horizons}; "
            f"cells {cells / base_cells:5.1f} x): build {build.seconds:6.1f} s = "
            f"{build.seconds / floor:5.1f} x floor, "
            f"{(build.seconds - floor) / cells * 1e6:6.1f} s per million cells above the floor, "
            f"peak {build.peak_mb:5.0f} MB, CPU {build.cpu:6.1f} s"
        )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=2, help="repeats of the demo ratios")
    parser.add_argument("--quick", action="store_true", help="skip the batch and the 16x archive")
    args = parser.parse_args()
    load = os.getloadavg()[0]
    print(f"{platform.node()}: {os.cpu_count()} cores, load {load:.1f} at the start")
    start = time.perf_counter()
    with tempfile.TemporaryDirectory() as tmp:
        work = Path(tmp)
        demo_ratios(args.repeats, work)
        if not args.quick:
            batch_ratio(work)
        scaling(work, ["1x", "4x"] if args.quick else ["1x", "4x", "16x"])
    print(
        "the replay cache is on (the CLI default): bench/cache.py measures it alone; "
        f"bench took {time.perf_counter() - start:.0f} s, load {os.getloadavg()[0]:.1f} at the end"
    )


if __name__ == "__main__":
    main()
