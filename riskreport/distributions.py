"""Error distributions fitted per horizon, and monotone adjustments of them.

A fit is a frozen value: all work is done when it is made; ``cdf``, ``ppf`` and ``rvs``
delegate to scipy.stats. :class:`Adjusted` re-maps any distribution by a monotone map of
its variable (shift and scale around the mode) and :class:`Tilted` skews it with a
two-piece tilt; they serve the monotone-dispersion rule, the step from errors to outcomes
and the judgement overlay.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np
from numpy.typing import ArrayLike
from scipy import integrate, optimize, stats

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

    # Floats for a fit; arrays of replicate values when the bootstrap refits in a batch.
    loc: Any
    scale: Any
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
        return float(dist.scale)
    values = dist.ppf(_GRID)
    return float(np.std(values))


@dataclass(frozen=True)
class Adjusted:
    """A distribution moved and widened by a linear map of its variable around its mode.

    ``T(x) = mode + shift + scale * (x - mode)``: ``shift`` moves the whole distribution
    (and its mode) and ``scale`` multiplies every distance from the mode (the spread).
    """

    base: Distribution
    shift: float = 0.0
    scale: float = 1.0

    def __post_init__(self) -> None:
        if not self.scale > 0:
            raise ValueError(f"scale: expected a positive number, got {self.scale!r}")

    @property
    def family(self) -> str:
        """The family of the innermost fitted distribution."""
        return self.base.family

    @property
    def mode(self) -> float:
        """The mode after the map."""
        return self.base.mode + self.shift

    def forward(self, x: ArrayLike) -> np.ndarray:
        """T(x): from the base variable to this one."""
        anchor = self.base.mode
        return anchor + self.shift + self.scale * (np.asarray(x, dtype=float) - anchor)

    def backward(self, y: ArrayLike) -> np.ndarray:
        """T^-1(y): from this variable back to the base's."""
        anchor = self.base.mode
        return anchor + (np.asarray(y, dtype=float) - anchor - self.shift) / self.scale

    def cdf(self, x: ArrayLike) -> np.ndarray:
        """Cumulative distribution function: F_base(T^-1(x))."""
        return self.base.cdf(self.backward(x))

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """Quantile function: T(Q_base(q))."""
        return self.forward(self.base.ppf(q))

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws."""
        return self.forward(self.base.rvs(n, rng))


@dataclass(frozen=True)
class Tilted:
    """A two-piece tilt of a distribution around its mode m (|tilt| < 1).

    The density above m is stretched by (1 + tilt) and below m by (1 - tilt), and the two
    pieces are renormalised, so the density stays continuous at m and m stays the mode:

        f(x) = c f0(m + (x - m)/(1 - tilt))  for x < m,
        f(x) = c f0(m + (x - m)/(1 + tilt))  for x >= m,
        c = 1 / ((1 - tilt) F0(m) + (1 + tilt)(1 - F0(m))).

    For a normal base with standard deviation s this is the two-piece normal with
    sigma1 = s (1 - tilt) and sigma2 = s (1 + tilt) (Wallis 2014, Statistical Science
    29(1), the (mu, sigma1, sigma2) form).
    """

    base: Distribution
    tilt: float

    def __post_init__(self) -> None:
        if not abs(self.tilt) < 1:
            raise ValueError(f"tilt: expected |tilt| < 1, got {self.tilt!r}")

    @property
    def family(self) -> str:
        """The family of the innermost fitted distribution."""
        return self.base.family

    @property
    def mode(self) -> float:
        """The mode (unchanged by the tilt)."""
        return self.base.mode

    def _parts(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        m = np.asarray(self.base.mode, dtype=float)
        f_m = self.base.cdf(m)
        c = 1.0 / ((1 - self.tilt) * f_m + (1 + self.tilt) * (1 - f_m))
        return m, f_m, c

    def cdf(self, x: ArrayLike) -> np.ndarray:
        """Cumulative distribution function."""
        m, f_m, c = self._parts()
        x = np.asarray(x, dtype=float)
        low, high = 1 - self.tilt, 1 + self.tilt
        below = c * low * self.base.cdf(m + (x - m) / low)
        above = c * (low * f_m + high * (self.base.cdf(m + (x - m) / high) - f_m))
        return np.where(x < m, below, above)

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """Quantile function (the inverse of each piece)."""
        m, f_m, c = self._parts()
        q = np.asarray(q, dtype=float)
        low, high = 1 - self.tilt, 1 + self.tilt
        split = c * low * f_m
        below = m + low * (self.base.ppf(np.clip(q / (c * low), 0.0, 1.0)) - m)
        upper_q = np.clip(f_m + (q / c - low * f_m) / high, 0.0, 1.0)
        above = m + high * (self.base.ppf(upper_q) - m)
        return np.where(q <= split, below, above)

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws by inversion."""
        return self.ppf(rng.random(n))


Wrapper = Adjusted | Tilted


def innermost(dist: Distribution) -> Distribution:
    """The fitted distribution under any chain of :class:`Adjusted` / :class:`Tilted`."""
    while isinstance(dist, Adjusted | Tilted):
        dist = dist.base
    return dist


def rebase(dist: Distribution, base: Distribution) -> Distribution:
    """The same chain of maps as ``dist``, rebuilt on another fitted distribution.

    Used by the bootstrap: each replicate's fit goes through the maps of the point estimate
    (monotone spread, point forecast, judgement).
    """
    if isinstance(dist, Adjusted):
        return Adjusted(rebase(dist.base, base), shift=dist.shift, scale=dist.scale)
    if isinstance(dist, Tilted):
        return Tilted(rebase(dist.base, base), tilt=dist.tilt)
    return base


def mean(dist: Distribution) -> float:
    """The mean (exact for the normal; otherwise by quadrature of the tails).

    Notes
    -----
    E[X] = m + integral_0^inf (1 - F(m + t)) dt - integral_0^inf F(m - t) dt, with m the mode.
    """
    if isinstance(dist, NormalFit):
        return float(dist.loc)
    m = float(dist.mode)
    upper, _ = integrate.quad(lambda t: 1.0 - float(dist.cdf(m + t)), 0.0, np.inf, epsabs=1e-12)
    lower, _ = integrate.quad(lambda t: float(dist.cdf(m - t)), 0.0, np.inf, epsabs=1e-12)
    return m + upper - lower


def tilt_for_skew(dist: Distribution, skew: float) -> float:
    """The tilt that adds ``skew`` to the mean minus the mode of ``dist``.

    Raises
    ------
    ValueError
        When no tilt with |tilt| <= 0.9 gives that much skew.
    """
    if skew == 0.0:
        return 0.0
    before = mean(dist) - dist.mode

    def gap(tilt: float) -> float:
        return mean(Tilted(dist, tilt)) - dist.mode - before - skew

    limit = 0.9
    if gap(-limit) * gap(limit) > 0:
        most = max(abs(gap(limit) + skew), abs(gap(-limit) + skew))
        raise ValueError(f"expected |skew| below {most:.2f} pp for this period's spread")
    return float(optimize.brentq(gap, -limit, limit, xtol=1e-10))
