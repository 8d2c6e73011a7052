"""The kernel-smoothed empirical error law, its tails guarded by a normal, and its batched fit.

A kernel estimate's tails are as thin as its bandwidth: an error a few standard deviations
beyond the largest past error gets a log density near -(distance / bandwidth)^2 / 2, which
ruined the replay's log score on a real history at the first new extreme. So the law is a
defensive mixture (Hesterberg 1995, Technometrics 37(2):185-194: a small share of a wide
component keeps the density ratio bounded): F = (1 - w) K + w N, K the kernel estimate and
N the normal fitted to the same errors (maximum likelihood: their mean and root mean square
deviation), w = ``TAIL_WEIGHT``. Its log density is never more than log(1/(1 - w)) below
the kernel's nor more than log(1/w) below that normal's, anywhere; a bandwidth floor was
the other option, but only a bandwidth as wide as the errors' own spread gives the normal's
tails, and that erases the shape the kernel is there to learn.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike
from scipy import special

from riskreport.laws._batch import MIN_SCALE, constant_notes, nanmean_rows, row_quantiles, rows_of

# The normal's share in the empirical law: at most log(1/0.9) = 0.105 off the kernel's log
# density in the body, at most log(10) = 2.30 below the fitted normal's in the far tails.
# Our choice, no source (a tenth is the usual order of a defensive share).
TAIL_WEIGHT = 0.1


@dataclass(frozen=True)
class EmpiricalFit:
    """Kernel-smoothed empirical distribution with normal tails:
    F(x) = (1 - w) mean_i Phi((x - e_i)/b) + w Phi((x - m)/s).

    Bandwidth b by Silverman's rule, 0.9 min(sd, IQR/1.349) n^(-1/5) (Silverman 1986,
    Density Estimation, eq. 3.31); m and s the errors' mean and root mean square deviation
    (``tail_loc``, ``tail_scale``); w = ``TAIL_WEIGHT``. Quantiles by inverting F on a fine
    grid.
    """

    sample: Any  # (..., n), NaN = missing
    bandwidth: Any
    mode_value: Any
    loglik: Any = float("nan")
    nobs: Any = 0
    family: str = "empirical"
    notes: tuple[str, ...] = ()

    @property
    def mode(self) -> Any:
        """The mode of the smoothed density."""
        return self.mode_value

    @property
    def params(self) -> dict[str, float]:
        """Named parameters."""
        return {"bandwidth": float(self.bandwidth), "mode": float(self.mode_value)}

    @property
    def tail_loc(self) -> Any:
        """Mean of the normal component: the errors' mean."""
        return np.nanmean(self.sample, axis=-1)

    @property
    def tail_scale(self) -> Any:
        """Standard deviation of the normal component: the errors' root mean square
        deviation from their mean (maximum likelihood), at least ``MIN_SCALE``."""
        return np.maximum(np.nanstd(self.sample, axis=-1), MIN_SCALE)

    @property
    def sd(self) -> Any:
        """Standard deviation sqrt(var(sample) + (1 - w) b^2): both components have the
        errors' mean, the kernel part variance var + b^2, the normal part var."""
        return np.sqrt(np.nanvar(self.sample, axis=-1) + (1 - TAIL_WEIGHT) * self.bandwidth**2)

    def _kernel(self, x: ArrayLike) -> np.ndarray:
        x = np.asarray(x, dtype=float)
        return (x[..., None] - self.sample) / np.asarray(self.bandwidth)[..., None]

    def kernel_cdf(self, x: ArrayLike) -> np.ndarray:
        """CDF of the kernel part alone, mean_i Phi((x - e_i)/b)."""
        z = self._kernel(x)
        return np.asarray(np.nanmean(special.ndtr(z), axis=-1))

    def kernel_logpdf(self, x: ArrayLike) -> np.ndarray:
        """Log density of the kernel part alone."""
        z = self._kernel(x)
        count = np.sum(np.isfinite(z), axis=-1)
        # logsumexp keeps far outcomes finite (a plain mean of kernels underflows to 0).
        log_kernel = np.where(np.isfinite(z), -0.5 * z**2, -np.inf)
        return np.asarray(
            special.logsumexp(log_kernel, axis=-1)
            - np.log(count)
            - np.log(np.sqrt(2 * np.pi) * np.asarray(self.bandwidth))
        )

    def cdf(self, x: ArrayLike) -> np.ndarray:
        """Cumulative distribution function (1 - w) K(x) + w Phi((x - m)/s)."""
        x = np.asarray(x, dtype=float)
        normal = special.ndtr((x - self.tail_loc) / self.tail_scale)
        return np.asarray((1 - TAIL_WEIGHT) * self.kernel_cdf(x) + TAIL_WEIGHT * normal)

    def logpdf(self, x: ArrayLike) -> np.ndarray:
        """Log density log((1 - w) k(x) + w phi((x - m)/s)/s), finite far into the tails."""
        x = np.asarray(x, dtype=float)
        z = (x - self.tail_loc) / self.tail_scale
        log_normal = -0.5 * z**2 - 0.5 * np.log(2 * np.pi) - np.log(self.tail_scale)
        return np.asarray(
            np.logaddexp(
                np.log1p(-TAIL_WEIGHT) + self.kernel_logpdf(x), np.log(TAIL_WEIGHT) + log_normal
            )
        )

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """Quantile function (single fit): interpolation of F on a 4096-point grid reaching
        7 bandwidths beyond the errors and 8 standard deviations of the normal part."""
        sample = np.asarray(self.sample, dtype=float)
        b, m, s = float(self.bandwidth), float(self.tail_loc), float(self.tail_scale)
        low = min(np.nanmin(sample) - 7 * b, m - 8 * s)
        high = max(np.nanmax(sample) + 7 * b, m + 8 * s)
        grid = np.linspace(low, high, 4096)
        values = self.cdf(grid)
        return np.interp(np.asarray(q, dtype=float), values, grid)

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws: with probability 1 - w a resampled error plus kernel noise, else a
        draw of the normal part."""
        sample = np.asarray(self.sample, dtype=float)
        kernel = rng.choice(sample[np.isfinite(sample)], n) + rng.normal(
            0, float(self.bandwidth), n
        )
        normal = rng.normal(float(self.tail_loc), float(self.tail_scale), n)
        return np.where(rng.random(n) < TAIL_WEIGHT, normal, kernel)


def fit_empirical_batch(samples: ArrayLike, mode: float | None = None) -> EmpiricalFit:
    """Kernel-smoothed empirical distribution of each row, with its normal tail part; with a
    fixed mode the sample is shifted so that the law's density peaks there.

    The mode is found on a 64-point grid between the 2% and 98% sample quantiles, refined by
    the parabola through the best grid point and its neighbours.
    """
    x, n = rows_of(samples)
    mean = nanmean_rows(x, n)
    sd = np.sqrt(
        np.where(np.isfinite(x), (x - mean[:, None]) ** 2, 0.0).sum(axis=1) / np.maximum(n, 1)
    )
    q02, q25, q75, q98 = row_quantiles(x, n, (0.02, 0.25, 0.75, 0.98))
    spread_ = np.minimum(sd, (q75 - q25) / 1.349)
    spread_ = np.where(spread_ > 0, spread_, sd)
    bandwidth = np.maximum(0.9 * spread_ * np.maximum(n, 1) ** (-0.2), MIN_SCALE)
    steps = np.linspace(0, 1, 64)
    grid = q02[:, None] + (q98 - q02)[:, None] * steps[None, :]
    # A missing entry sits at +inf, where its kernel is exactly 0 (as nansum would count
    # it, without nansum's copies).
    far = np.where(np.isfinite(x), x, np.inf)
    z = (grid[:, :, None] - far[:, None, :]) / bandwidth[:, None, None]
    kernel = np.exp(-0.5 * z**2).sum(axis=2) / (np.maximum(n, 1) * bandwidth)[:, None]
    tail_scale = np.maximum(sd, MIN_SCALE)
    normal = (
        np.exp(-0.5 * ((grid - mean[:, None]) / tail_scale[:, None]) ** 2) / tail_scale[:, None]
    )
    density = (1 - TAIL_WEIGHT) * kernel + TAIL_WEIGHT * normal  # both without 1/sqrt(2 pi)
    rows = np.arange(x.shape[0])
    best = np.clip(np.argmax(density, axis=1), 1, steps.size - 2)
    left, centre, right = density[rows, best - 1], density[rows, best], density[rows, best + 1]
    curvature = left - 2 * centre + right
    offset = np.where(
        curvature < 0, 0.5 * (left - right) / np.where(curvature < 0, curvature, -1.0), 0.0
    )
    peak = grid[rows, best] + np.clip(offset, -1, 1) * (grid[:, 1] - grid[:, 0])
    if mode is not None:
        x = x + (float(mode) - peak)[:, None]
        peak = np.full(x.shape[0], float(mode))
    loglik = np.full(x.shape[0], np.nan)
    if x.shape[0] == 1:  # in-sample log density of a single fit (includes each point's own kernel)
        single = EmpiricalFit(x[0], bandwidth[0], peak[0])
        loglik[0] = float(np.sum(single.logpdf(x[0][np.isfinite(x[0])])))
    return EmpiricalFit(x, bandwidth, peak, loglik, n, notes=constant_notes(x))
