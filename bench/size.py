"""Size of every test the brief prints, and coverage of the P(inside) interval (printed).

Under a true null, for each record length T and steps ahead h, R data sets are drawn and the
share of p-values below 5% is printed: a test that holds its size prints about 0.05 (the
brief's bar: at most 0.08). A test that declines (too few independent outcomes) prints
"--" with the share of draws in which it spoke, if any, in brackets; declines never reject.

Overlapping h-step errors of three shapes (all MA(h - 1) with equal shock weights, the most
persistent overlap an efficient h-step forecast can have):

- ``normal``: Gaussian shocks;
- ``heavy``: Student t(5) shocks (finite fourth moment, so squared losses have a variance);
- ``volatile``: Gaussian shocks whose volatility is persistent (log variance AR(1), 0.95)
  and shared by every forecaster (the economy's volatility, not a forecaster's own: a
  volatility of its own per forecaster makes the loss differential persistent beyond the
  overlap, which no rule from T and h can see; docs/method.md).

Tests (as the brief runs them, against the textbook version where there is one):

- Diebold-Mariano, two forecasts with opposite biases of equal size (equal expected loss;
  the bias makes the loss differential as persistent as the errors themselves): HLN
  (``version="hln"``, the public default) and fixed-smoothing (the brief's);
- HLN encompassing (one-sided), fixed-smoothing, e_a = e_b + independent noise of the same
  size scaled so that a encompasses b exactly (weight 0 on b);
- Mariano-Preve, 3 forecasts with biases (+b, -b, +b);
- Knueppel, moments 1-2, on PITs of correct h-step densities (the marginal law of each
  shape, from a large simulated sample);
- Berkowitz (one step only), iid PITs.

Then the 90% interval of P(inside): coverage of the true P(inside) for independent (1-step)
and 8-step overlapping Gaussian errors, n = 40, 100, 160, with a normal law fitted.

Usage: ``python bench/size.py [--draws R] [--only accuracy|calibration|coverage]`` (default
R = 200 draws per cell, a few minutes on one core; ``--draws 10000`` for a finer table,
hours).
"""

from __future__ import annotations

import argparse
import time
from collections.abc import Callable

import numpy as np
from scipy import stats as st
from scipy.signal import lfilter

from riskreport import stats
from riskreport.forecasts.fixed_smoothing import smoothing
from riskreport.laws import distributions, probabilities

LEVEL = 0.05
SHAPES = ("normal", "heavy", "volatile")
DESIGNS = ((30, (1, 2, 3, 6)), (60, (1, 3, 6, 13)), (120, (1, 4, 8, 13, 25)), (300, (1, 4, 13, 25)))


def volatility(length: int, rng: np.random.Generator) -> np.ndarray:
    """A persistent volatility path (log variance AR(1) with coefficient 0.95), mean square 1."""
    rho = 0.95
    innovations = rng.standard_normal(length) * np.sqrt(1 - rho**2) * 0.8
    innovations[0] /= np.sqrt(1 - rho**2)  # the first value from the stationary law
    log_var = lfilter([1.0], [1.0, -rho], innovations)
    scale = np.exp(log_var / 2)
    return scale / np.sqrt(np.mean(scale**2))


def shocks(
    shape: str, size: tuple[int, int], rng: np.random.Generator, vol: np.ndarray | None
) -> np.ndarray:
    """Unit-variance shocks of a shape; rows are series, columns time. ``volatile`` shocks
    share one volatility path (``vol``, drawn here when None): the economy's, not a
    forecaster's own."""
    if shape == "normal":
        return rng.standard_normal(size)
    if shape == "heavy":
        return rng.standard_t(5, size) / np.sqrt(5 / 3)
    path = volatility(size[1], rng) if vol is None else vol
    return rng.standard_normal(size) * path


def overlapping(
    shape: str,
    t: int,
    h: int,
    k: int,
    rng: np.random.Generator,
    vol: np.ndarray | None = None,
) -> np.ndarray:
    """k x T overlapping h-step errors: sums of h consecutive unit shocks, over sqrt(h)."""
    e = shocks(shape, (k, t + h - 1), rng, vol)
    total = np.cumsum(np.concatenate([np.zeros((k, 1)), e], axis=1), axis=1)
    return (total[:, h:] - total[:, :-h]) / np.sqrt(h)


def marginal_cdf(
    shape: str, h: int, rng: np.random.Generator
) -> Callable[[np.ndarray], np.ndarray]:
    """The marginal law of an h-step error of a shape (its exact CDF for normal shocks)."""
    if shape == "normal":
        return st.norm.cdf
    sample = np.sort(overlapping(shape, 200_000, h, 1, rng)[0])
    return lambda x: (np.searchsorted(sample, x) + 0.5) / (sample.size + 1)


def rate(outcomes: list[float]) -> str:
    """Rejection share among draws where the test spoke; "--" when it always declined."""
    p = np.asarray(outcomes)
    spoke = np.isfinite(p)
    if not spoke.any():
        return "--"
    share = float(np.mean(p[spoke] < LEVEL)) * spoke.mean()  # declines count as no rejection
    return f"{share:.3f}" + ("" if spoke.all() else f"[{spoke.mean():.0%}]")


def accuracy_draw(shape: str, t: int, h: int, rng: np.random.Generator) -> dict[str, float]:
    """One draw under the null of every accuracy test."""
    bias = 0.5
    vol = volatility(t + h - 1, rng) if shape == "volatile" else None
    common = overlapping(shape, t, h, 1, rng, vol)[0]
    own = overlapping(shape, t, h, 3, rng, vol)
    e = 0.6 * common + 0.8 * own + np.array([[bias], [-bias], [bias]])
    # a encompasses b: b = a + independent noise, so the optimal weight on b is zero.
    noise = overlapping(shape, t, h, 1, rng, vol)[0]
    return {
        "DM hln": stats.diebold_mariano(e[0], e[1], h=h).pvalue,
        "DM fixed": stats.diebold_mariano(e[0], e[1], h=h, version="fixed-smoothing").pvalue,
        "enc fixed": stats.encompassing(e[0], e[0] + noise, h=h, version="fixed-smoothing").pvalue,
        "MP": stats.mariano_preve(e.T, h=h).pvalue,
    }


def accuracy_table(draws: int, rng: np.random.Generator) -> None:
    names = ("DM hln", "DM fixed", "enc fixed", "MP")
    print("Accuracy tests under a true null: rejection rate at nominal 5%")
    print(
        f"{'shape':>9} {'T':>4} {'h':>3} {'n_eff':>6} {'m':>3}" + "".join(f"{n:>14}" for n in names)
    )
    for shape in SHAPES:
        for t, hs in DESIGNS:
            for h in hs:
                results: dict[str, list[float]] = {n: [] for n in names}
                for _ in range(draws):
                    for name, p in accuracy_draw(shape, t, h, rng).items():
                        results[name].append(p)
                rule = smoothing(t, h)
                print(
                    f"{shape:>9} {t:>4} {h:>3} {rule.n_effective:>6.1f} {rule.frequencies:>3}"
                    + "".join(f"{rate(results[n]):>14}" for n in names)
                )


def calibration_table(draws: int, rng: np.random.Generator) -> None:
    print("\nCalibration tests on PITs of correct densities: rejection rate at nominal 5%")
    print(f"{'shape':>9} {'T':>4} {'h':>3} {'Knueppel':>10} {'Berkowitz':>10}")
    for shape in SHAPES:
        for t, hs in DESIGNS:
            for h in hs:
                cdf = marginal_cdf(shape, h, rng)
                knuppel, berkowitz = [], []
                for _ in range(draws):
                    pit = np.clip(cdf(overlapping(shape, t, h, 1, rng)[0]), 1e-9, 1 - 1e-9)
                    knuppel.append(stats.knuppel(pit, h=h, moments=2).pvalue)
                    # One-step PITs of correct densities are iid uniform whatever the
                    # shape, so Berkowitz (an ARIMA fit per draw, the slow part) runs once.
                    if h == 1 and shape == "normal":
                        berkowitz.append(stats.berkowitz(pit).pvalue)
                print(
                    f"{shape:>9} {t:>4} {h:>3} {rate(knuppel):>10} "
                    f"{rate(berkowitz) if berkowitz else '':>10}"
                )


def coverage_table(draws: int, rng: np.random.Generator) -> None:
    print("\n90% interval of P(inside): share covering the true P(inside) (Gaussian errors)")
    print(f"{'law fitted':>17} {'steps':>5} {'n':>4} {'coverage':>9} {'mean width':>11}")
    lower, upper = -0.8, 1.2  # band edges minus the point forecast; errors have sd 1
    truth = float(st.norm.cdf(upper) - st.norm.cdf(lower))
    for family in ("normal", "skew-normal", "two-piece-normal"):
        for steps in (1, 8):
            for n in (40, 100, 160):
                hits, widths = 0, []
                for _ in range(draws):
                    errors = overlapping("normal", n, steps, 1, rng)[0]
                    fit = distributions.fit(family, errors)
                    lo, hi = probabilities.bootstrap_p_inside(
                        errors,
                        fit,
                        lower,
                        upper,
                        h=steps - 1,
                        family=family,
                        mode=None,
                        replicates=200,
                        rng=rng,
                    )
                    hits += lo <= truth <= hi
                    widths.append(hi - lo)
                print(
                    f"{family:>17} {steps:>5} {n:>4} {hits / draws:>9.3f} {np.mean(widths):>11.3f}"
                )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--draws", type=int, default=200, help="draws per cell (10000 for the table)"
    )
    parser.add_argument("--only", choices=("accuracy", "calibration", "coverage"), default=None)
    args = parser.parse_args()
    rng = np.random.default_rng(20261204)
    start = time.perf_counter()
    if args.only in (None, "accuracy"):
        accuracy_table(args.draws, rng)
    if args.only in (None, "calibration"):
        calibration_table(args.draws, rng)
    if args.only in (None, "coverage"):
        coverage_table(max(100, args.draws // 2), rng)
    print(f"\n{args.draws} draws per cell, {time.perf_counter() - start:.0f} s")


if __name__ == "__main__":
    main()
