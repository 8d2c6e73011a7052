"""The predictive law of the normal family: a Student t that carries the uncertainty of its
own estimated spread.

A plug-in normal N(0, s^2) fitted to few errors is overconfident: s is itself uncertain,
and the fewer independent errors the record holds (early rounds, long horizons whose
overlapping errors share shocks), the more. Under normal errors the predictive law of a new
error given the record is a Student t (e.g. Geisser 1993, "Predictive Inference", ch. 2;
Bernardo & Smith 1994, "Bayesian Theory", 5.2, the reference prior; both recalled from
memory):

- mean known (``centre = "forecast"``: the mode is 0): y / s ~ t with n degrees of freedom,
  s^2 = sum(e^2) / n;
- mean estimated: (y - mean) / (s_u sqrt(1 + 1/n)) ~ t with n - 1 degrees of freedom,
  s_u^2 = sum((e - mean)^2) / (n - 1).

Overlapping h-step errors hold fewer than n independent pieces of evidence: n is replaced
by the record's effective size about its spread (the count of
:func:`riskreport.forecasts.overlap.effective_sample_size`, ``steps = h + 1``, times
:func:`variance_factor`), which sets the degrees of freedom and the widening of the scale,
while s is still computed from every error of the window.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike
from scipy import special, stats

from riskreport.forecasts.overlap import effective_sample_size

# Fewest degrees of freedom used: below 2 the t has no variance and the spread of the
# monotone rule is undefined (common practice, no source).
MIN_DF = 2.0


def variance_factor(steps: int) -> float:
    """How many more independent pieces a record holds about a spread than about a mean.

    For Gaussian errors cov(x_i^2, x_j^2) = 2 rho_ij^2 sigma^4 (Isserlis 1918, Biometrika
    12), so a mean of squares has the effective size n^2 / sum rho^2 where a mean has
    n^2 / sum rho. Under the triangular autocorrelation of efficient ``steps``-step errors
    (:mod:`riskreport.forecasts.overlap`), sum rho = s and sum rho^2 = 1 + (s - 1)(2s - 1)
    / (3s) per error of a long record: the ratio 3 s^2 / (2 s^2 + 1), 1 at one step and
    3/2 for long horizons.

    Examples
    --------
    >>> variance_factor(1), round(variance_factor(13), 3)
    (1.0, 1.496)
    """
    return 3.0 * steps**2 / (2.0 * steps**2 + 1.0)


@functools.lru_cache(maxsize=4096)
def effective_size(n: int, steps: int) -> float:
    """The effective size of ``n`` consecutive ``steps``-step errors (cached: the replay
    asks for the same few values thousands of times)."""
    return effective_sample_size(int(n), int(steps))


def degrees_and_widening(
    n: ArrayLike, steps: int, *, mode_fixed: bool
) -> tuple[np.ndarray, np.ndarray]:
    """Degrees of freedom and the factor on the plug-in (ML) scale, per sample size ``n``.

    Examples
    --------
    >>> df, k = degrees_and_widening([10], 1, mode_fixed=True)
    >>> float(df[0]), float(k[0])
    (10.0, 1.0)
    >>> df, k = degrees_and_widening([10], 1, mode_fixed=False)  # sqrt(10/9 * 11/10)
    >>> float(df[0]), round(float(k[0]), 4)
    (9.0, 1.1055)
    """
    counts = np.atleast_1d(np.asarray(n, dtype=int))
    eff = np.array([effective_size(max(int(c), 1), steps) for c in counts.ravel()]).reshape(
        counts.shape
    )
    eff = np.maximum(eff * variance_factor(steps), 1.0)
    if mode_fixed:
        return np.maximum(eff, MIN_DF), np.ones_like(eff)
    # s_u sqrt(1 + 1/n_eff), with the ML scale's divisor n turned into n - 1.
    unbiased = np.sqrt(counts / np.maximum(counts - 1, 1))
    return np.maximum(eff - 1.0, MIN_DF), unbiased * np.sqrt(1.0 + 1.0 / eff)


@dataclass(frozen=True)
class StudentPredictive:
    """The Student t predictive law on a fitted normal ``base`` (single or batched).

    ``df`` degrees of freedom and the scale ``widening * base.scale``; the family and the
    mode stay the base's (the normal law, its point forecast as the mode).
    """

    base: Any  # a NormalFit
    df: Any
    widening: Any

    @property
    def family(self) -> str:
        """The family of the fitted law (``normal``)."""
        return str(self.base.family)

    @property
    def mode(self) -> Any:
        """The mode (the normal fit's location)."""
        return self.base.mode

    @property
    def scale(self) -> Any:
        """The t's scale."""
        return self.widening * self.base.scale

    @property
    def sd(self) -> Any:
        """Standard deviation, scale sqrt(df / (df - 2)) (infinite for df <= 2)."""
        df = np.asarray(self.df, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = np.where(df > 2, np.sqrt(df / np.maximum(df - 2, 1e-12)), np.inf)
        return self.scale * (ratio if ratio.ndim else float(ratio))

    @property
    def notes(self) -> tuple[str, ...]:
        """The base fit's notes."""
        return tuple(getattr(self.base, "notes", ()))

    def with_base(self, base: Any) -> StudentPredictive:
        """The same predictive on another fit (the bootstrap's replicates)."""
        return StudentPredictive(base, self.df, self.widening)

    # scipy.special's t functions directly: the same values as scipy.stats.t (checked in
    # the tests) without its argument handling, which cost more than the functions
    # themselves in the pool's quantile tables.
    def cdf(self, x: ArrayLike) -> np.ndarray:
        """Cumulative distribution function."""
        z = (np.asarray(x, dtype=float) - self.base.loc) / self.scale
        return np.asarray(special.stdtr(self.df, z))

    def logpdf(self, x: ArrayLike) -> np.ndarray:
        """Log density: log Gamma((v + 1) / 2) - log Gamma(v / 2) - log(sqrt(v pi) s)
        - (v + 1) / 2 log(1 + z^2 / v)."""
        df = np.asarray(self.df, dtype=float)
        z = (np.asarray(x, dtype=float) - self.base.loc) / self.scale
        const = (
            special.gammaln((df + 1) / 2)
            - special.gammaln(df / 2)
            - 0.5 * np.log(df * np.pi)
            - np.log(self.scale)
        )
        return np.asarray(const - (df + 1) / 2 * np.log1p(z * z / df))

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """Quantile function."""
        q = np.asarray(q, dtype=float)
        return np.asarray(self.base.loc + self.scale * special.stdtrit(self.df, q))

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws."""
        return np.asarray(self.base.loc + self.scale * rng.standard_t(self.df, n))


def student(base: Any, steps: int, *, mode_fixed: bool) -> StudentPredictive:
    """The t predictive of a (batched) normal fit whose rows rest on ``base.nobs`` errors of
    ``steps``-step forecasts."""
    df, widening = degrees_and_widening(base.nobs, steps, mode_fixed=mode_fixed)
    if np.ndim(base.loc) == 0:
        return StudentPredictive(base, float(df.ravel()[0]), float(widening.ravel()[0]))
    return StudentPredictive(base, df, widening)


def crps_student(y: ArrayLike, loc: ArrayLike, scale: ArrayLike, df: ArrayLike) -> np.ndarray:
    """CRPS of a location-scale Student t (df > 1) at y, in closed form.

    CRPS = s [z (2 F(z) - 1) + 2 f(z) (df + z^2) / (df - 1)
    - 2 sqrt(df) B(1/2, df - 1/2) / ((df - 1) B(1/2, df/2)^2)], z = (y - loc) / s
    (Jordan, Krueger & Lerch 2019, J. Stat. Softw. 90(12), the formula of
    ``scoringrules.crps_t``; checked against scoringrules in the tests).
    """
    df = np.asarray(df, dtype=float)
    s = np.asarray(scale, dtype=float)
    z = (np.asarray(y, dtype=float) - np.asarray(loc, dtype=float)) / s
    f = stats.t.pdf(z, df)
    big_f = stats.t.cdf(z, df)
    tail = (
        2
        * np.sqrt(df)
        * np.exp(special.betaln(0.5, df - 0.5) - 2 * special.betaln(0.5, df / 2))
        / (df - 1)
    )
    return np.asarray(s * (z * (2 * big_f - 1) + 2 * f * (df + z**2) / (df - 1) - tail))
