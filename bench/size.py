"""Size of the accuracy and calibration tests under a true null, printed (never asserted).

For each sample size T and horizon h, R data sets are drawn under the null and the share
of p-values below 5% is printed: a test with honest size prints about 0.05.

- Mariano-Preve (3 forecasts, equal expected squared loss; errors MA(h-1) with a common
  component): the paper's chi-square on the rectangular-window Omega against ours
  (:func:`riskreport.stats.mariano_preve`: Hotelling F for h = 1, fixed-smoothing F of a
  weighted-periodogram Omega for h > 1).
- Knueppel raw-moment test on PITs of correct h-step densities (normal scores MA(h-1)):
  chi-square with the Bartlett kernel at h - 1 lags (the earlier choice) and with the
  rectangular window, against ours (:func:`riskreport.stats.knuppel`).
- Diebold-Mariano with the HLN correction, for reference.
- Two-piece normal fits to normal samples of n errors: the share of near half-normals
  (one scale under a tenth of the other).

Usage: ``python bench/size.py [R]`` (default R = 1000; about a minute on one core).
"""

from __future__ import annotations

import sys

import numpy as np
from scipy import stats as st

from riskreport.forecasts import stats
from riskreport.laws._families import fit_two_piece_normal_batch

LEVEL = 0.05


def _ma(t: int, h: int, k: int, rng: np.random.Generator) -> np.ndarray:
    """T x k unit-variance MA(h - 1) series with equal weights (overlapping h-step errors)."""
    e = rng.standard_normal((t + h - 1, k))
    return sum(e[j : t + j] for j in range(h)) / np.sqrt(h)


def _chi2(d: np.ndarray, lags: int, kernel: str) -> float:
    """The textbook Wald test: T d' Omega^-1 d against chi-square(q), Bartlett if not PD."""
    omega = stats.long_run_covariance(d, lags, kernel=kernel)  # type: ignore[arg-type]
    if np.linalg.eigvalsh(omega).min() <= 0:
        omega = stats.long_run_covariance(d, lags, kernel="bartlett")
    mean = d.mean(axis=0)
    return float(st.chi2.sf(d.shape[0] * mean @ np.linalg.solve(omega, mean), d.shape[1]))


def mariano_preve_size(replicates: int, rng: np.random.Generator) -> None:
    print("Mariano-Preve, 3 forecasts: rejection rate at nominal 5%")
    print(f"{'T':>5} {'h':>3} {'chi2 rect':>10} {'ours':>8}")
    for t in (30, 60, 120, 400):
        for h in (1, 3, 6):
            old = new = 0
            for _ in range(replicates):
                e = 0.7 * _ma(t, h, 1, rng) + 0.7 * _ma(t, h, 3, rng)
                losses = e**2
                d = losses[:, :-1] - losses[:, 1:]
                old += _chi2(d, h - 1, "uniform") < LEVEL
                new += stats.mariano_preve(e, h=h).pvalue < LEVEL
            print(f"{t:>5} {h:>3} {old / replicates:>10.3f} {new / replicates:>8.3f}")


def knuppel_size(replicates: int, rng: np.random.Generator) -> None:
    print("\nKnueppel raw-moment test, moments 1-2: rejection rate at nominal 5%")
    print(f"{'T':>5} {'h':>3} {'Bartlett':>9} {'rect':>7} {'ours':>7}")
    for t in (60, 100, 400):
        for h in (1, 4, 12):
            counts = np.zeros(3)
            for _ in range(replicates):
                z = st.norm.cdf(_ma(t, h, 1, rng)[:, 0])
                u = np.sqrt(12) * (z - 0.5)
                d = np.column_stack([u, u**2 - 1])
                counts += (
                    _chi2(d, h - 1, "bartlett") < LEVEL,
                    _chi2(d, h - 1, "uniform") < LEVEL,
                    stats.knuppel(z, h=h, moments=2).pvalue < LEVEL,
                )
            rates = counts / replicates
            print(f"{t:>5} {h:>3} {rates[0]:>9.3f} {rates[1]:>7.3f} {rates[2]:>7.3f}")


def diebold_mariano_size(replicates: int, rng: np.random.Generator) -> None:
    print("\nDiebold-Mariano with the HLN correction: rejection rate at nominal 5%")
    print(f"{'T':>5} {'h':>3} {'rate':>7}")
    for t in (30, 60, 120):
        for h in (1, 3, 6):
            count = 0
            for _ in range(replicates):
                e = 0.7 * _ma(t, h, 1, rng) + 0.7 * _ma(t, h, 2, rng)
                count += stats.diebold_mariano(e[:, 0], e[:, 1], h=h).pvalue < LEVEL
            print(f"{t:>5} {h:>3} {count / replicates:>7.3f}")


def two_piece_degeneracy(replicates: int, rng: np.random.Generator) -> None:
    print("\nTwo-piece normal fitted to normal samples: share with one scale < 0.1 x other")
    for n in (8, 10, 12, 20, 30):
        f = fit_two_piece_normal_batch(rng.standard_normal((replicates, n)))
        ratio = np.minimum(f.sigma1, f.sigma2) / np.maximum(f.sigma1, f.sigma2)
        print(f"n = {n:>3}: {np.mean(ratio < 0.1):.3f}")


def main() -> None:
    replicates = int(sys.argv[1]) if len(sys.argv) > 1 else 1000
    rng = np.random.default_rng(20261201)
    mariano_preve_size(replicates, rng)
    knuppel_size(replicates, rng)
    diebold_mariano_size(replicates, rng)
    two_piece_degeneracy(replicates, rng)


if __name__ == "__main__":
    main()
