"""The normal error law and its batched maximum-likelihood fit."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike
from scipy import stats

from riskreport.laws._batch import MIN_SCALE, constant_notes, nanmean_rows, rows_of


@dataclass(frozen=True)
class NormalFit:
    """Normal distribution; the mode is the mean.

    Attributes
    ----------
    loc, scale
        Mean (= mode) and standard deviation (floats, or arrays for a batch).
    loglik, nobs
        Maximised log-likelihood and sample size.
    """

    loc: Any
    scale: Any
    loglik: Any = float("nan")
    nobs: Any = 0
    family: str = "normal"
    notes: tuple[str, ...] = ()

    @property
    def mode(self) -> Any:
        """The mode."""
        return self.loc

    @property
    def params(self) -> dict[str, float]:
        """Named parameters."""
        return {"loc": float(self.loc), "scale": float(self.scale)}

    @property
    def sd(self) -> Any:
        """Standard deviation."""
        return self.scale

    def cdf(self, x: ArrayLike) -> np.ndarray:
        """Cumulative distribution function."""
        return np.asarray(stats.norm.cdf(x, self.loc, self.scale))

    def logpdf(self, x: ArrayLike) -> np.ndarray:
        """Log density."""
        return np.asarray(stats.norm.logpdf(x, self.loc, self.scale))

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """Quantile function."""
        return np.asarray(stats.norm.ppf(q, self.loc, self.scale))

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws."""
        return rng.normal(self.loc, self.scale, n)


def fit_normal_batch(samples: ArrayLike, mode: float | None = None) -> NormalFit:
    """Normal MLE of each row: loc = mean (or the fixed mode), scale = RMS deviation from it."""
    x, n = rows_of(samples)
    loc = nanmean_rows(x, n) if mode is None else np.full(x.shape[0], float(mode))
    dev = np.where(np.isfinite(x), x - loc[:, None], 0.0)
    raw = np.sqrt((dev**2).sum(axis=1) / np.maximum(n, 1))
    scale = np.maximum(raw, MIN_SCALE)
    # log L = -n/2 log(2 pi s^2) - sum(dev^2)/(2 s^2); = -n/2 (log(2 pi s^2) + 1) at the MLE.
    loglik = -0.5 * n * np.log(2 * np.pi * scale**2) - 0.5 * n * (raw / scale) ** 2
    return NormalFit(loc, scale, loglik, n, notes=constant_notes(x))
