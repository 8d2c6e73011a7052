"""Error distributions fitted per horizon, and monotone adjustments of them.

A fit is a frozen value: all work is done when it is made; ``cdf``, ``ppf`` and ``rvs``
delegate to scipy.stats. :class:`Adjusted` re-maps any distribution by a monotone map of
its variable (shift and scale around the mode) and :class:`Tilted` skews it with a
two-piece tilt; they serve the monotone-dispersion rule, the step from errors to outcomes
and the staff judgement.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np
from numpy.typing import ArrayLike
from scipy import optimize, stats

from riskreport import _typing
from riskreport._typing import Family
from riskreport.laws.empirical import EmpiricalFit, fit_empirical_batch
from riskreport.laws.normal import NormalFit, fit_normal_batch
from riskreport.laws.skew_normal import SkewNormalFit, fit_skew_normal, fit_skew_normal_batch
from riskreport.laws.two_piece_normal import TwoPieceNormalFit, fit_two_piece_normal_batch

_GRID = (np.arange(4000) + 0.5) / 4000  # mid-point probabilities for expectations by quantiles


class Distribution(Protocol):
    """What the rest of riskreport needs of a distribution."""

    @property
    def family(self) -> str: ...

    @property
    def mode(self) -> float: ...

    def cdf(self, x: ArrayLike) -> np.ndarray: ...

    def logpdf(self, x: ArrayLike) -> np.ndarray: ...

    def ppf(self, q: ArrayLike) -> np.ndarray: ...

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray: ...


GIVEN_FAMILY = "given-quantiles"  # the family name of a given error distribution


@dataclass(frozen=True)
class GivenQuantiles:
    """A distribution given by a few quantiles (the ``error_quantiles`` input).

    The quantile function is interpolated linearly in normal scores, z = Phi^-1(q), between
    the given points and extended linearly in z beyond them, so the tails are normal-like
    with the slope of the outermost pair. The median serves as the mode (the anchor of the
    staff judgement), since a few quantiles do not define a mode.
    """

    levels: tuple[float, ...]
    values: tuple[float, ...]
    family: str = GIVEN_FAMILY
    notes: tuple[str, ...] = ()

    def _z(self) -> tuple[np.ndarray, np.ndarray]:
        return stats.norm.ppf(np.array(self.levels)), np.array(self.values)

    @property
    def mode(self) -> float:
        """The median."""
        return float(self.ppf(0.5))

    @property
    def params(self) -> dict[str, float]:
        """The given quantiles."""
        return {f"{q:g}": v for q, v in zip(self.levels, self.values, strict=True)}

    @property
    def sd(self) -> float:
        """Standard deviation by quantile integration."""
        return float(np.std(self.ppf(_GRID)))

    def _slopes(self) -> tuple[float, float]:
        z, v = self._z()
        return (v[1] - v[0]) / (z[1] - z[0]), (v[-1] - v[-2]) / (z[-1] - z[-2])

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """Quantile function."""
        z, v = self._z()
        low, high = self._slopes()
        zq = stats.norm.ppf(np.asarray(q, dtype=float))
        inside = np.interp(zq, z, v)
        return np.where(
            zq < z[0],
            v[0] + low * (zq - z[0]),
            np.where(zq > z[-1], v[-1] + high * (zq - z[-1]), inside),
        )

    def _zx(self, x: ArrayLike) -> np.ndarray:
        z, v = self._z()
        low, high = self._slopes()
        x = np.asarray(x, dtype=float)
        inside = np.interp(x, v, z)
        return np.where(
            x < v[0],
            z[0] + (x - v[0]) / low,
            np.where(x > v[-1], z[-1] + (x - v[-1]) / high, inside),
        )

    def cdf(self, x: ArrayLike) -> np.ndarray:
        """Cumulative distribution function (the inverse of the interpolation)."""
        return np.asarray(stats.norm.cdf(self._zx(x)))

    def logpdf(self, x: ArrayLike) -> np.ndarray:
        """Log density of the piecewise-linear-in-z quantile function."""
        z, v = self._z()
        zx = self._zx(x)
        slopes = np.diff(v) / np.diff(z)
        low, high = self._slopes()
        piece = np.clip(np.searchsorted(z, zx) - 1, 0, slopes.size - 1)
        slope = np.where(zx < z[0], low, np.where(zx > z[-1], high, slopes[piece]))
        return np.asarray(stats.norm.logpdf(zx) - np.log(slope))

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws by inversion."""
        return self.ppf(rng.random(n))


Fit = NormalFit | TwoPieceNormalFit | SkewNormalFit | EmpiricalFit
FAMILIES: tuple[Family, ...] = _typing.FAMILIES


def _single(batch: Any) -> Any:
    """A batch of one as a single fit: length-1 arrays become floats, a 1 x n sample 1-d."""
    values = {}
    for item in dataclasses.fields(batch):
        value = getattr(batch, item.name)
        if isinstance(value, np.ndarray) and value.ndim >= 1 and value.shape[0] == 1:
            value = value[0]
            if value.ndim == 0:
                value = value.item()
        values[item.name] = value
    return dataclasses.replace(batch, **values)


def fit_batch(family: Family, samples: ArrayLike, *, mode: float | None = None) -> Fit:
    """Fit every row of a 2-d array of samples at once (NaN = missing).

    Closed forms, grid searches and (for the skew-normal) damped Newton steps run on all
    rows at once, so the bootstrap and the backtest replay can refit thousands of samples
    quickly with the same estimators as :func:`fit` (the two-piece normal's grid profile
    is refined further in a single fit). The result's
    parameters are arrays with one entry per row; ``cdf`` and ``logpdf`` broadcast over them.
    """
    if family == "normal":
        return fit_normal_batch(samples, mode)
    if family == "two-piece-normal":
        return fit_two_piece_normal_batch(samples, mode)
    if family == "skew-normal":
        return fit_skew_normal_batch(samples, mode)
    if family == "empirical":
        return fit_empirical_batch(samples, mode)
    raise ValueError(f"family: expected one of {', '.join(FAMILIES)}, got {family!r}")


def fit(family: Family, sample: ArrayLike, *, mode: float | None = None) -> Fit:
    """Fit an error distribution to a sample of forecast errors.

    Parameters
    ----------
    family
        ``"normal"``, ``"two-piece-normal"``, ``"skew-normal"`` or ``"empirical"``.
    sample
        Forecast errors (actual - forecast), at least two finite values. A constant sample
        gets a negligible spread (``MIN_SCALE``) and a note saying so: degenerate, finite.
    mode
        None estimates the mode; a number fixes it there (``centre = "forecast"`` uses 0,
        so the point forecast is the mode).

    Returns
    -------
    Fit
        A frozen fit with ``cdf``, ``ppf``, ``rvs``, ``logpdf``, ``loglik``, ``params``,
        ``mode``, ``sd``, and ``notes`` on anything unusual (e.g. a boundary optimum).

    Notes
    -----
    normal: maximum likelihood (divisor n). two-piece-normal: maximum likelihood, John's
    closed form for the two scales given the mode, profile over the mode (grid, then a
    bounded 1-d search), mode kept between the k-th smallest and k-th largest error,
    k = max(5, ceil(n/10)), and near half-normal fits flagged. skew-normal: maximum
    penalised likelihood (finite shape when the plain MLE runs to the half-normal), from
    two starts. A constant sample gets a negligible spread and a note. empirical: Gaussian-kernel smoothed CDF,
    Silverman bandwidth, quantiles by inversion.

    Examples
    --------
    >>> f = fit("normal", [-1.0, 0.0, 1.0])
    >>> round(f.scale, 6)
    0.816497
    >>> round(fit("two-piece-normal", [-1.0, 0.0, 1.0, 2.5], mode=0.0).sigma2, 4)
    1.658
    """
    x = np.asarray(sample, dtype=float)
    if x.ndim != 1 or x.size < 2 or not np.all(np.isfinite(x)):
        raise ValueError("sample: expected at least two finite values in a 1-d array")
    if family == "skew-normal":
        return fit_skew_normal(x, mode)
    if family == "two-piece-normal" and mode is None:
        return _single(fit_two_piece_normal_batch(x[None, :], refine=True))
    return _single(fit_batch(family, x[None, :], mode=mode))


def spread(dist: Distribution) -> float:
    """Standard deviation: closed form for a fit, and through the maps of the wrappers
    (a shift keeps it, a scale multiplies it); by quantile integration under a tilt."""
    if isinstance(
        dist, NormalFit | TwoPieceNormalFit | SkewNormalFit | EmpiricalFit | GivenQuantiles
    ):
        return float(dist.sd)
    if isinstance(dist, Adjusted):
        return dist.scale * spread(dist.base)
    values = dist.ppf(_GRID)
    return float(np.std(values))


@dataclass(frozen=True)
class Adjusted:
    """A distribution moved and widened by a linear map of its variable around its mode.

    ``T(x) = mode + shift + scale * (x - mode)``: ``shift`` moves the whole distribution
    (and its mode) and ``scale`` multiplies every distance from the mode (the spread).
    With ``about_zero`` the map is ``T(x) = scale * x`` (a law of errors rescaled to
    today's error size): ``shift`` is then ``(scale - 1) * mode`` and :func:`rebase`
    recomputes it from the new base's mode.
    """

    base: Distribution
    shift: float = 0.0
    scale: float = 1.0
    about_zero: bool = False

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

    def logpdf(self, x: ArrayLike) -> np.ndarray:
        """Log density: log f_base(T^-1(x)) - log(scale)."""
        return self.base.logpdf(self.backward(x)) - np.log(self.scale)

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

    def logpdf(self, x: ArrayLike) -> np.ndarray:
        """Log density: log c + log f0(m + (x - m)/(1 -/+ tilt))."""
        m, _, c = self._parts()
        x = np.asarray(x, dtype=float)
        below = self.base.logpdf(m + (x - m) / (1 - self.tilt))
        above = self.base.logpdf(m + (x - m) / (1 + self.tilt))
        return np.log(c) + np.where(x < m, below, above)

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


def scale_about_zero(dist: Distribution, scale: float) -> Distribution:
    """The law of ``scale`` times a variable with law ``dist``."""
    if scale == 1.0:
        return dist
    # (a batch of fits has one mode per row: the shift broadcasts)
    return Adjusted(dist, shift=(scale - 1.0) * dist.mode, scale=scale, about_zero=True)


def rebase(dist: Distribution, base: Distribution) -> Distribution:
    """The same chain of maps as ``dist``, rebuilt on another fitted distribution.

    Used by the bootstrap: each replicate's fit goes through the maps of the point estimate
    (monotone spread, point forecast, judgement).
    """
    if isinstance(dist, Adjusted):
        inner = rebase(dist.base, base)
        if dist.about_zero:
            # scale * X for the new X: its shift follows the new mode (a fixed shift would
            # move each replicate's centre by 1 x its mode change instead of scale x).
            return scale_about_zero(inner, dist.scale)
        return Adjusted(inner, shift=dist.shift, scale=dist.scale)
    if isinstance(dist, Tilted):
        return Tilted(rebase(dist.base, base), tilt=dist.tilt)
    with_base = getattr(dist, "with_base", None)  # any other map that carries its base
    if with_base is not None:
        return with_base(rebase(dist.base, base))  # type: ignore[attr-defined]
    return base


_NODES, _WEIGHTS = np.polynomial.legendre.leggauss(256)
_U = (_NODES + 1) / 2  # Gauss-Legendre nodes on (0, 1)


def tail_integrals(dist: Distribution) -> tuple[float, float]:
    """E[(X - m)+] and E[(m - X)+] about the mode m, by vectorised quadrature.

    Notes
    -----
    E[(X - m)+] = integral_0^inf (1 - F(m + t)) dt and E[(m - X)+] = integral_0^inf
    F(m - t) dt, with t = u / (1 - u) mapping (0, 1) onto (0, inf).
    """
    m = float(dist.mode)
    t = _U / (1 - _U)
    jacobian = 1 / (1 - _U) ** 2 * _WEIGHTS / 2
    upper = float(np.sum((1 - dist.cdf(m + t)) * jacobian))
    lower = float(np.sum(dist.cdf(m - t) * jacobian))
    return upper, lower


def mean(dist: Distribution) -> float:
    """The mean (exact for the normal; otherwise mode + E[(X - m)+] - E[(m - X)+])."""
    if isinstance(dist, NormalFit):
        return float(dist.loc)
    upper, lower = tail_integrals(dist)
    return float(dist.mode) + upper - lower


def tilt_for_skew(dist: Distribution, skew: float) -> float:
    """The tilt that adds ``skew`` to the mean minus the mode of ``dist``.

    Raises
    ------
    ValueError
        When no tilt with |tilt| <= 0.9 gives that much skew.
    """
    if skew == 0.0:
        return 0.0
    # With P = E[(X - m)+], N = E[(m - X)+] of the base and F0(m) its mass below the mode,
    # the tilt's mean minus mode is c ((1 + k)^2 P - (1 - k)^2 N), c as in Tilted.
    upper, lower = tail_integrals(dist)
    below = float(dist.cdf(dist.mode))
    before = upper - lower

    def gap(tilt: float) -> float:
        c = 1 / ((1 - tilt) * below + (1 + tilt) * (1 - below))
        return c * ((1 + tilt) ** 2 * upper - (1 - tilt) ** 2 * lower) - before - skew

    limit = 0.9
    if gap(-limit) * gap(limit) > 0:
        most = max(abs(gap(limit) + skew), abs(gap(-limit) + skew))
        raise ValueError(f"expected |skew| below {most:.2f} pp for this period's spread")
    return float(optimize.brentq(gap, -limit, limit, xtol=1e-10))
