"""Error distributions fitted per horizon, and monotone adjustments of them.

A fit is a frozen value: all work is done when it is made; ``cdf``, ``ppf`` and ``rvs``
delegate to scipy.stats. :class:`Adjusted` re-maps any distribution by a monotone map of
its variable (shift, scale and a two-sided stretch around the mode); it serves the
monotone-dispersion rule, the step from errors to outcomes and the judgement overlay.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Protocol

import numpy as np
from numpy.typing import ArrayLike
from scipy import stats

from riskreport._typing import Family

_GRID = (np.arange(4000) + 0.5) / 4000  # mid-point probabilities for expectations by quantiles


class Distribution(Protocol):
    """What the rest of riskreport needs of a distribution."""

    @property
    def family(self) -> str: ...

    @property
    def mode(self) -> float: ...

    def cdf(self, x: ArrayLike) -> np.ndarray: ...

    def ppf(self, q: ArrayLike) -> np.ndarray: ...

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray: ...


@dataclass(frozen=True)
class NormalFit:
    """A normal distribution fitted by maximum likelihood.

    Attributes
    ----------
    loc, scale
        Mean (= mode) and standard deviation.
    loglik
        Maximised log-likelihood of the sample.
    nobs
        Sample size.
    """

    loc: float
    scale: float
    loglik: float
    nobs: int
    family: str = "normal"

    @property
    def mode(self) -> float:
        """The mode (equal to the mean)."""
        return self.loc

    @property
    def params(self) -> dict[str, float]:
        """Named parameters."""
        return {"loc": self.loc, "scale": self.scale}

    def cdf(self, x: ArrayLike) -> np.ndarray:
        """Cumulative distribution function."""
        return np.asarray(stats.norm.cdf(x, self.loc, self.scale))

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """Quantile function."""
        return np.asarray(stats.norm.ppf(q, self.loc, self.scale))

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws."""
        return rng.normal(self.loc, self.scale, n)


def fit_normal_batch(samples: np.ndarray, *, mode: float | None = None) -> tuple[np.ndarray, ...]:
    """Normal maximum-likelihood fits of each row of ``samples`` at once.

    Returns
    -------
    loc, scale
        Arrays with one entry per row. With ``mode`` given, ``loc`` is fixed at it and
        ``scale`` is the root mean square deviation from it.
    """
    samples = np.atleast_2d(np.asarray(samples, dtype=float))
    loc = samples.mean(axis=1) if mode is None else np.full(samples.shape[0], float(mode))
    scale = np.sqrt(np.mean((samples - loc[:, None]) ** 2, axis=1))
    return loc, scale


def fit(family: Family, sample: ArrayLike, *, mode: float | None = None) -> NormalFit:
    """Fit an error distribution by maximum likelihood.

    Parameters
    ----------
    family
        The distribution family; this version fits ``"normal"``.
    sample
        Forecast errors (actual - forecast), at least two finite values.
    mode
        None estimates the location; a number fixes the mode there (``centre = "forecast"``
        uses 0, so the point forecast is the mode).

    Returns
    -------
    NormalFit
        The fitted distribution.

    Notes
    -----
    Normal MLE: loc = mean, scale = sqrt(mean((x - loc)^2)) (divisor n). With the mode
    fixed at m, scale = sqrt(mean((x - m)^2)).

    Examples
    --------
    >>> f = fit("normal", [-1.0, 0.0, 1.0])
    >>> round(f.scale, 6)
    0.816497
    """
    x = np.asarray(sample, dtype=float)
    if x.ndim != 1 or x.size < 2 or not np.all(np.isfinite(x)):
        raise ValueError("sample: expected at least two finite values in a 1-d array")
    if family != "normal":
        raise ValueError(f"family: expected 'normal' in this version, got {family!r}")
    loc, scale = (float(v[0]) for v in fit_normal_batch(x[None, :], mode=mode))
    if scale <= 0:
        raise ValueError("sample: all errors are equal, so no spread can be estimated")
    loglik = float(stats.norm.logpdf(x, loc, scale).sum())
    return NormalFit(loc=loc, scale=scale, loglik=loglik, nobs=int(x.size))


def spread(dist: Distribution) -> float:
    """Standard deviation of a distribution, by quantile integration (exact for the normal)."""
    if isinstance(dist, NormalFit):
        return dist.scale
    values = dist.ppf(_GRID)
    return float(np.std(values))


def mean_absolute_deviation_from_mode(dist: Distribution) -> float:
    """E|X - mode|, by quantile integration."""
    return float(np.mean(np.abs(dist.ppf(_GRID) - dist.mode)))


@dataclass(frozen=True)
class Adjusted:
    """A distribution re-mapped by the monotone map ``T`` of its variable.

    ``T(x) = anchor + shift + scale * d * (1 + stretch)`` for ``d = x - anchor >= 0`` and
    ``anchor + shift + scale * d * (1 - stretch)`` below, with ``anchor`` the base's mode.
    So ``shift`` moves the mode, ``scale`` multiplies the spread and ``stretch`` (|stretch|
    < 1) widens one side while narrowing the other.
    """

    base: Distribution
    shift: float = 0.0
    scale: float = 1.0
    stretch: float = 0.0

    def __post_init__(self) -> None:
        if not self.scale > 0 or not abs(self.stretch) < 1:
            raise ValueError("Adjusted: expected scale > 0 and |stretch| < 1")

    @property
    def family(self) -> str:
        """The family of the innermost fitted distribution."""
        return self.base.family

    @property
    def anchor(self) -> float:
        """The base's mode: the fixed point of the stretch."""
        return self.base.mode

    @property
    def mode(self) -> float:
        """The mode after the map."""
        return self.anchor + self.shift

    def forward(self, x: ArrayLike) -> np.ndarray:
        """T(x): from the base variable to this one."""
        d = np.asarray(x, dtype=float) - self.anchor
        side = np.where(d >= 0, 1.0 + self.stretch, 1.0 - self.stretch)
        return self.anchor + self.shift + self.scale * d * side

    def backward(self, y: ArrayLike) -> np.ndarray:
        """T^-1(y): from this variable back to the base's."""
        d = (np.asarray(y, dtype=float) - self.anchor - self.shift) / self.scale
        side = np.where(d >= 0, 1.0 + self.stretch, 1.0 - self.stretch)
        return self.anchor + d / side

    def cdf(self, x: ArrayLike) -> np.ndarray:
        """Cumulative distribution function: F_base(T^-1(x))."""
        return self.base.cdf(self.backward(x))

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """Quantile function: T(Q_base(q))."""
        return self.forward(self.base.ppf(q))

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws."""
        return self.forward(self.base.rvs(n, rng))


def innermost(dist: Distribution) -> Distribution:
    """The fitted distribution under any chain of :class:`Adjusted` maps."""
    while isinstance(dist, Adjusted):
        dist = dist.base
    return dist


def pull_back(dist: Distribution, y: ArrayLike) -> np.ndarray:
    """Map values of ``dist``'s variable to the innermost fitted distribution's variable."""
    values = np.asarray(y, dtype=float)
    while isinstance(dist, Adjusted):
        values = dist.backward(values)
        dist = dist.base
    return values
