"""The four error-distribution families: their laws and their (batched) fits.

Each fit is a frozen dataclass whose parameters are floats for one fit, or arrays with one
entry per sample when many samples are fitted at once (the bootstrap and the backtest
replay). ``cdf`` and ``logpdf`` broadcast over that batch axis; ``ppf`` and ``rvs`` are for
single fits. Batched fits take a 2-d array of samples with NaN padding (rows may differ in
length) and use closed forms or grid searches: no generic optimiser runs per sample.
Every batched fitter is named ``fit_<family>_batch``; ``fit_skew_normal`` is the one
single-sample fitter (the batch on one row, with a note at the skewness boundary).
"""

from __future__ import annotations

import contextlib
import math
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
from numpy.typing import ArrayLike
from scipy import optimize, special, stats

SQRT_2_PI = math.sqrt(2.0 / math.pi)
SKEW_BOUND = 0.9952717  # |skewness| of the half-normal: the bound of TPN and skew-normal
# Penalty of the maximum penalised likelihood skew-normal fit, Q(alpha) = C1 log(1 + C2
# alpha^2) (Azzalini & Arellano-Valle 2013, JSPI 143:419-433); constants recalled from
# memory of that paper and the R package sn, not checked against the text.
PENALTY_C1, PENALTY_C2 = 0.875913, 0.856250
# A constant sample (every error equal) has no spread to estimate. Every fit then uses
# this spread (percentage points, a millionth of a point): degenerate but finite, and
# flagged with CONSTANT_NOTE. Our rule, no source.
MIN_SCALE = 1e-6
CONSTANT_NOTE = (
    "all the errors are equal, so their spread cannot be estimated; the fit is degenerate "
    "(a negligible spread) and its probabilities are not meaningful"
)
# Two-piece normal: the mode stays between the k-th smallest and the k-th largest error,
# k = max(5, ceil(0.1 n)), so each side keeps a few errors to estimate its scale (our rule,
# chosen by simulation, bench/size.py: with the earlier 10-90% range alone, 83-91% of fits
# to normal samples of 8-10 errors had one scale below a tenth of the other; with this rule
# at most 1-2%). From n = 50 on it is the 10-90% range; with 10 or fewer errors the mode
# stays in the gap above the middle one.
TPN_EDGE_SHARE, TPN_EDGE_MIN = 0.1, 5
TPN_DEGENERATE_RATIO = 0.1  # smaller scale below this share of the larger: flagged
# The larger of the two scales is at most this multiple of the smaller: the maximum
# likelihood on that boundary otherwise. Forty errors gave scales of 0.12 and 2.0 on a real
# history, a law no forecaster would publish; a ratio of 4 already puts four fifths of the
# probability on one side of the mode (common practice, no source).
TPN_MAX_RATIO = 4.0


def _rows(samples: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    """Samples as a 2-d float array (NaN = missing) and the count per row."""
    x = np.atleast_2d(np.asarray(samples, dtype=float))
    return x, np.sum(np.isfinite(x), axis=1)


def _nanmean(x: np.ndarray, n: np.ndarray) -> np.ndarray:
    return np.where(np.isfinite(x), x, 0.0).sum(axis=1) / np.maximum(n, 1)


# --- normal -----------------------------------------------------------------------------


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
    x, n = _rows(samples)
    loc = _nanmean(x, n) if mode is None else np.full(x.shape[0], float(mode))
    dev = np.where(np.isfinite(x), x - loc[:, None], 0.0)
    raw = np.sqrt((dev**2).sum(axis=1) / np.maximum(n, 1))
    scale = np.maximum(raw, MIN_SCALE)
    # log L = -n/2 log(2 pi s^2) - sum(dev^2)/(2 s^2); = -n/2 (log(2 pi s^2) + 1) at the MLE.
    loglik = -0.5 * n * np.log(2 * np.pi * scale**2) - 0.5 * n * (raw / scale) ** 2
    return NormalFit(loc, scale, loglik, n, notes=_constant_notes(x))


def _constant_notes(x: np.ndarray) -> tuple[str, ...]:
    """CONSTANT_NOTE when some row has no spread at all."""
    with np.errstate(invalid="ignore"):
        spread = np.nanmax(x, axis=1) - np.nanmin(x, axis=1)
    return (CONSTANT_NOTE,) if np.any(spread == 0) else ()


# --- two-piece normal -------------------------------------------------------------------


@dataclass(frozen=True)
class TwoPieceNormalFit:
    """Two-piece normal with mode ``mode`` and half standard deviations ``sigma1`` (below)
    and ``sigma2`` (above), the (mu, sigma1, sigma2) form of Wallis (2014, Statistical
    Science 29(1):106-112) and John (1982).

    F(x) = 2 s1/(s1+s2) Phi((x-m)/s1) for x < m, and (s1 - s2 + 2 s2 Phi((x-m)/s2))/(s1+s2)
    above; Q(p) inverts each piece; mean = m + sqrt(2/pi)(s2 - s1).
    """

    mode: Any
    sigma1: Any
    sigma2: Any
    loglik: Any = float("nan")
    nobs: Any = 0
    boundary: Any = False
    family: str = "two-piece-normal"
    notes: tuple[str, ...] = ()

    @property
    def params(self) -> dict[str, float]:
        """Named parameters."""
        return {
            "mode": float(self.mode),
            "sigma1": float(self.sigma1),
            "sigma2": float(self.sigma2),
        }

    @property
    def sd(self) -> Any:
        """Standard deviation: sqrt((1 - 2/pi)(s2 - s1)^2 + s1 s2)."""
        return np.sqrt(
            (1 - 2 / np.pi) * (self.sigma2 - self.sigma1) ** 2 + self.sigma1 * self.sigma2
        )

    def cdf(self, x: ArrayLike) -> np.ndarray:
        """Cumulative distribution function."""
        x = np.asarray(x, dtype=float)
        s1, s2, m = self.sigma1, self.sigma2, self.mode
        total = s1 + s2
        with np.errstate(divide="ignore", invalid="ignore"):
            below = 2 * s1 / total * special.ndtr((x - m) / s1)
            above = (s1 - s2 + 2 * s2 * special.ndtr((x - m) / s2)) / total
        return np.where(x < m, below, above)

    def logpdf(self, x: ArrayLike) -> np.ndarray:
        """Log density: log(sqrt(2/pi)/(s1+s2)) - (x-m)^2 / (2 s^2) with s the side's sigma."""
        x = np.asarray(x, dtype=float)
        side = np.where(x < self.mode, self.sigma1, self.sigma2)
        with np.errstate(divide="ignore"):
            return np.log(SQRT_2_PI / (self.sigma1 + self.sigma2)) - (x - self.mode) ** 2 / (
                2 * side**2
            )

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """Quantile function."""
        q = np.asarray(q, dtype=float)
        s1, s2, m = self.sigma1, self.sigma2, self.mode
        total = s1 + s2
        split = s1 / total
        with np.errstate(divide="ignore", invalid="ignore"):
            below = m + s1 * special.ndtri(np.clip(q * total / (2 * s1), 0, 1))
            above = m + s2 * special.ndtri(np.clip((q * total + s2 - s1) / (2 * s2), 0, 1))
        return np.where(q <= split, below, above)

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws by inversion."""
        return self.ppf(rng.random(n))


def _tpn_scales(s1: np.ndarray, s2: np.ndarray, n: np.ndarray) -> tuple[np.ndarray, ...]:
    """John's closed form given the mode: sigma_i^2 = S_i^(2/3) c / n, c = S1^(1/3) + S2^(1/3);
    max log L = (n/2) log(2/pi) - (3n/2) log c + (n/2) log n - n/2."""
    c1, c2 = np.cbrt(np.maximum(s1, 0)), np.cbrt(np.maximum(s2, 0))
    c = c1 + c2
    sigma1 = np.sqrt(c1**2 * c / n)
    sigma2 = np.sqrt(c2**2 * c / n)
    with np.errstate(divide="ignore"):
        loglik = n / 2 * np.log(2 / np.pi) - 1.5 * n * np.log(c) + n / 2 * np.log(n) - n / 2
    # A constant sample (c = 0): both scales MIN_SCALE, every point at the mode.
    constant = c <= 0
    sigma1 = np.where(constant, MIN_SCALE, sigma1)
    sigma2 = np.where(constant, MIN_SCALE, sigma2)
    loglik = np.where(constant, n * np.log(SQRT_2_PI / (2 * MIN_SCALE)), loglik)
    return sigma1, sigma2, loglik


def _tpn_profile(
    x_sorted: np.ndarray, n: np.ndarray, lo: np.ndarray, hi: np.ndarray, steps: int
) -> tuple[np.ndarray, np.ndarray]:
    """Best mode per row on a grid, within gaps lo <= i < hi, and whether the unrestricted
    grid optimum (any gap, or the largest point) is strictly better.

    Candidates are the sample points and ``steps`` points inside each gap between sorted
    points i and i + 1, plus the largest point. S1 and S2 come from prefix sums, so the
    profile objective S1^(1/3) + S2^(1/3) is evaluated once for all candidates; the
    restricted and the free optimum are two minima of the same array.
    """
    b, width = x_sorted.shape
    finite = np.where(np.isfinite(x_sorted), x_sorted, 0.0)
    p1 = np.concatenate([np.zeros((b, 1)), np.cumsum(finite, axis=1)], axis=1)
    p2 = np.concatenate([np.zeros((b, 1)), np.cumsum(finite**2, axis=1)], axis=1)
    rows = np.arange(b)
    t1, t2 = p1[rows, n], p2[rows, n]
    frac = np.arange(steps + 1) / (steps + 1)
    gap = np.repeat(np.arange(width - 1), steps + 1)[None, :]
    step = np.tile(frac, width - 1)[None, :]
    left, right = x_sorted[:, :-1], x_sorted[:, 1:]
    cand = np.repeat(left, steps + 1, axis=1) + np.repeat(right - left, steps + 1, axis=1) * step
    n1 = np.broadcast_to(gap + (step > 0), cand.shape)  # points strictly below the candidate
    inside = (gap >= lo[:, None]) & (gap < hi[:, None])
    cand = np.concatenate([cand, x_sorted[rows, n - 1][:, None]], axis=1)  # the largest point
    n1 = np.concatenate([n1, (n - 1)[:, None]], axis=1)
    inside = np.concatenate([inside, np.zeros((b, 1), dtype=bool)], axis=1)
    a1, a2 = np.take_along_axis(p1, n1, 1), np.take_along_axis(p2, n1, 1)
    s1 = a2 - 2 * cand * a1 + n1 * cand**2
    s2 = (t2[:, None] - a2) - 2 * cand * (t1[:, None] - a1) + (n[:, None] - n1) * cand**2
    objective = np.cbrt(np.maximum(s1, 0)) + np.cbrt(np.maximum(s2, 0))
    objective = np.where(np.isfinite(cand), objective, np.inf)
    restricted = np.where(inside, objective, np.inf)
    best = np.argmin(restricted, axis=1)
    edge_better = objective.min(axis=1) < restricted[rows, best] * (1 - 1e-12)
    return cand[rows, best], edge_better


def _side_sums(x: np.ndarray, mode: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    dev = x - mode[:, None]
    finite = np.isfinite(dev)
    s1 = np.where(finite & (dev < 0), dev**2, 0.0).sum(axis=1)
    s2 = np.where(finite & (dev >= 0), dev**2, 0.0).sum(axis=1)
    return s1, s2


def fit_two_piece_normal_batch(
    samples: ArrayLike, mode: float | None = None, *, refine: bool = False, steps: int = 4
) -> TwoPieceNormalFit:
    """Two-piece normal MLE of each row.

    With the mode given, John's closed form. Otherwise the profile likelihood is maximised
    over the mode (minimise S1^(1/3) + S2^(1/3)) on a grid, refined by a bounded 1-d search
    when ``refine``. The profile can peak at the sample edge: at mode = max(x), S2 = 0 and
    John's closed form gives sigma2 = 0 with a finite (half-normal) likelihood, which in
    small samples can be the global maximum. So the mode is kept between the k-th smallest
    and the k-th largest error (``TPN_EDGE_SHARE``, ``TPN_EDGE_MIN``), and rows where the
    unrestricted optimum lay outside that range are flagged in ``boundary``.
    """
    x, n = _rows(samples)
    b = x.shape[0]
    if mode is not None:
        m = np.full(b, float(mode))
        s1, s2 = _side_sums(x, m)
        boundary = (s1 <= 0) | (s2 <= 0)
    else:
        xs = np.sort(x, axis=1)  # NaN sort to the end
        lo, hi = _mode_range(n)
        m, boundary = _tpn_profile(xs, n, lo, hi, steps)
        s1, s2 = _side_sums(x, m)
        if refine and b == 1:
            row = xs[0, : n[0]]
            grid_step = (row[-1] - row[0]) / max((n[0] - 1) * (steps + 1), 1)
            low = max(row[lo[0]], m[0] - 2 * grid_step)
            high = min(row[hi[0]], m[0] + 2 * grid_step)

            def objective(mu: float) -> float:
                a, c = _side_sums(row[None, :], np.array([mu]))
                return float(np.cbrt(a[0]) + np.cbrt(c[0]))

            if high > low:
                m = np.array(
                    [
                        optimize.minimize_scalar(
                            objective,
                            bounds=(low, high),
                            method="bounded",
                            options={"xatol": 1e-10},
                        ).x
                    ]
                )
            s1, s2 = _side_sums(x, m)
    free1, free2, free_loglik = _tpn_scales(s1, s2, n)
    sigma1, sigma2, loglik = _bounded_ratio(free1, free2, free_loglik, s1, s2, n)
    with np.errstate(invalid="ignore"):
        constant = np.nanmax(x, axis=1) == np.nanmin(x, axis=1)
    boundary = np.asarray(boundary) & ~constant  # rounding noise, not an edge optimum
    degenerate = np.minimum(sigma1, sigma2) < TPN_DEGENERATE_RATIO * np.maximum(sigma1, sigma2)
    notes = _constant_notes(x)
    if np.any(boundary):
        notes += (
            "two-piece normal: the likelihood peaks at the edge of the sample (a half-normal); "
            "the mode is kept between the k-th smallest and k-th largest errors, "
            "k = max(5, 10% of them)",
        )
    if np.any(degenerate & ~boundary):
        notes += (
            "two-piece normal: one side's spread is under a tenth of the other's (a near "
            "half-normal), which few errors cannot support",
        )
    floor = np.maximum(1e-6 * (sigma1 + sigma2), MIN_SCALE)
    return TwoPieceNormalFit(
        m,
        np.maximum(sigma1, floor),
        np.maximum(sigma2, floor),
        loglik,
        n,
        boundary | degenerate,
        notes=notes,
    )


def _bounded_ratio(
    sigma1: np.ndarray,
    sigma2: np.ndarray,
    loglik: np.ndarray,
    s1: np.ndarray,
    s2: np.ndarray,
    n: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The scales with their ratio kept within TPN_MAX_RATIO: where the free optimum lies
    beyond it, the maximum likelihood on the boundary sigma_big = r sigma_small, which in
    closed form is sigma_small^2 = (S_small + S_big / r^2) / n."""
    r = TPN_MAX_RATIO
    low_big = sigma1 > r * sigma2  # the lower side is the wide one
    high_big = sigma2 > r * sigma1
    with np.errstate(divide="ignore", invalid="ignore"):
        a_low = np.sqrt((s2 + s1 / r**2) / np.maximum(n, 1))  # sigma2 when sigma1 = r sigma2
        a_high = np.sqrt((s1 + s2 / r**2) / np.maximum(n, 1))  # sigma1 when sigma2 = r sigma1
    new1 = np.where(low_big, r * a_low, np.where(high_big, a_high, sigma1))
    new2 = np.where(low_big, a_low, np.where(high_big, r * a_high, sigma2))
    bounded = low_big | high_big
    with np.errstate(divide="ignore", invalid="ignore"):
        at_bound = n * np.log(SQRT_2_PI / (new1 + new2)) - s1 / (2 * new1**2) - s2 / (2 * new2**2)
    return new1, new2, np.where(bounded, at_bound, loglik)


def _mode_range(n: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Gaps lo <= i < hi of the sorted sample the mode may lie in (see TPN_EDGE_SHARE).

    Gap i runs from the (i+1)-th to the (i+2)-th smallest error; lo = k - 1 and hi = n - k
    keep the mode between the k-th smallest and k-th largest. Too few errors for that: the
    gap above the median.
    """
    k = np.maximum(TPN_EDGE_MIN, np.ceil(TPN_EDGE_SHARE * n - 1e-9)).astype(int)
    lo, hi = k - 1, n - k
    narrow = hi <= lo
    middle = np.maximum((n - 1) // 2, 0)
    return np.where(narrow, middle, lo), np.where(narrow, middle + 1, hi)


# --- skew-normal ------------------------------------------------------------------------


def skewnormal_cdf(x: ArrayLike, xi: Any, omega: Any, alpha: Any) -> np.ndarray:
    """Azzalini skew-normal CDF Phi(z) - 2 T(z, alpha), z = (x - xi)/omega (ufuncs only)."""
    z = (np.asarray(x, dtype=float) - xi) / omega
    return np.clip(special.ndtr(z) - 2 * special.owens_t(z, alpha), 0.0, 1.0)


def skewnormal_logpdf(x: ArrayLike, xi: Any, omega: Any, alpha: Any) -> np.ndarray:
    """Azzalini skew-normal log density log(2/omega) + log phi(z) + log Phi(alpha z)."""
    z = (np.asarray(x, dtype=float) - xi) / omega
    return np.log(2 / omega) - 0.5 * z**2 - 0.5 * np.log(2 * np.pi) + special.log_ndtr(alpha * z)


def skewnormal_mode0(alpha: Any) -> Any:
    """Mode of the standard skew-normal SN(0, 1, alpha), by Azzalini's approximation
    m0 = mu_z - g1 sigma_z / 2 - sign(alpha)/2 exp(-2 pi/|alpha|) (Azzalini 2014, The
    Skew-Normal and Related Families; recalled from memory, tested against a numerical
    maximisation of the density)."""
    alpha = np.asarray(alpha, dtype=float)
    delta = alpha / np.sqrt(1 + alpha**2)
    mu = SQRT_2_PI * delta
    sigma = np.sqrt(1 - mu**2)
    g1 = (4 - np.pi) / 2 * mu**3 / sigma**3
    with np.errstate(divide="ignore", over="ignore"):
        tail = np.where(alpha == 0, 0.0, np.sign(alpha) / 2 * np.exp(-2 * np.pi / np.abs(alpha)))
    return mu - g1 * sigma / 2 - tail


@dataclass(frozen=True)
class SkewNormalFit:
    """Azzalini's skew-normal: density 2/omega phi(z) Phi(alpha z), z = (x - xi)/omega.

    scipy mapping: ``scipy.stats.skewnorm(a=alpha, loc=xi, scale=omega)``.
    """

    xi: Any
    omega: Any
    alpha: Any
    loglik: Any = float("nan")
    nobs: Any = 0
    boundary: Any = False
    family: str = "skew-normal"
    notes: tuple[str, ...] = ()
    mode_value: Any = field(default=None)

    @property
    def mode(self) -> Any:
        """The mode (numerical for a single fit, Azzalini's approximation for a batch)."""
        if self.mode_value is not None:
            return self.mode_value
        return self.xi + self.omega * skewnormal_mode0(self.alpha)

    @property
    def params(self) -> dict[str, float]:
        """Named parameters."""
        return {"xi": float(self.xi), "omega": float(self.omega), "alpha": float(self.alpha)}

    @property
    def sd(self) -> Any:
        """Standard deviation omega sqrt(1 - 2 delta^2 / pi)."""
        delta = self.alpha / np.sqrt(1 + self.alpha**2)
        return self.omega * np.sqrt(1 - 2 * delta**2 / np.pi)

    def cdf(self, x: ArrayLike) -> np.ndarray:
        """Cumulative distribution function Phi(z) - 2 T(z, alpha) (Owen's T)."""
        return skewnormal_cdf(x, self.xi, self.omega, self.alpha)

    def logpdf(self, x: ArrayLike) -> np.ndarray:
        """Log density log(2/omega) + log phi(z) + log Phi(alpha z)."""
        return skewnormal_logpdf(x, self.xi, self.omega, self.alpha)

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """Quantile function (single fit): F inverted on a 4096-point grid of +-9 sd.

        scipy's own skewnorm.ppf solves numerically for every probability, which is far
        too slow for the simulated paths; interpolating the exact CDF is accurate to ~1e-6.
        """
        centre = float(self.xi) + float(self.omega) * SQRT_2_PI * float(self.alpha) / math.sqrt(
            1 + float(self.alpha) ** 2
        )
        width = 9 * float(self.sd)
        grid = np.linspace(centre - width, centre + width, 4096)
        return np.interp(np.asarray(q, dtype=float), self.cdf(grid), grid)

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws by inversion."""
        return self.ppf(rng.random(n))


def _skewnormal_moments(mean: Any, var: Any, g1: Any) -> tuple[Any, Any, Any, Any]:
    """Method of moments with the skewness clipped inside the admissible bound (the
    half-normal skewness): c = (2|g1|/(4 - pi))^(1/3), mu_z = sign(g1) c / sqrt(1 + c^2),
    delta = mu_z / sqrt(2/pi); the inversion of Azzalini's (1985, Scand. J. Statist. 12,
    volume and journal recalled from memory) mean, variance and skewness of SN(xi, omega,
    alpha)."""
    clipped = np.clip(g1, -0.95 * SKEW_BOUND, 0.95 * SKEW_BOUND)
    c = np.cbrt(2 * np.abs(clipped) / (4 - np.pi))
    mu_z = np.sign(clipped) * c / np.sqrt(1 + c**2)
    delta = mu_z / SQRT_2_PI
    alpha = delta / np.sqrt(1 - delta**2)
    omega = np.sqrt(var / (1 - mu_z**2))
    xi = mean - omega * mu_z
    return xi, omega, alpha, np.abs(g1) >= 0.95 * SKEW_BOUND


def _sn_terms(
    x: np.ndarray, theta: np.ndarray, hessian: bool
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
    """Penalised skew-normal log-likelihood of each row, its gradient and (optionally) its
    Hessian in theta = (xi, log omega, alpha); x is NaN padded.

    With z = (x - xi)/omega, t = alpha z, r = phi(t)/Phi(t) and w = dr/dt = -r (t + r):
    dl/dxi = sum (z - alpha r)/omega, dl/dlog omega = sum (z^2 - 1 - r t),
    dl/dalpha = sum r z - Q'(alpha); second derivatives by differentiating these once more.
    """
    finite = np.isfinite(x)
    xi, eta, alpha = theta[:, 0:1], theta[:, 1:2], theta[:, 2:3]
    omega = np.exp(eta)
    z = np.where(finite, (np.where(finite, x, 0.0) - xi) / omega, 0.0)
    t = alpha * z
    log_cdf = special.log_ndtr(t)
    # phi(t)/Phi(t) = sqrt(2/pi) / erfcx(-t/sqrt(2)), stable for every t (the difference of
    # two huge logs overflowed for far-off trial steps).
    r = SQRT_2_PI / special.erfcx(-t / np.sqrt(2))
    n = finite.sum(axis=1)
    a = alpha[:, 0]
    penalty = PENALTY_C1 * np.log1p(PENALTY_C2 * a**2)
    value = (
        np.where(finite, -0.5 * z**2 + log_cdf, 0.0).sum(axis=1)
        + n * (np.log(2) - eta[:, 0] - 0.5 * np.log(2 * np.pi))
        - penalty
    )

    def total(term: np.ndarray) -> np.ndarray:
        return np.where(finite, term, 0.0).sum(axis=1)

    grad = np.column_stack(
        [
            total(z - alpha * r) / omega[:, 0],
            total(z**2 - r * t) - n,
            total(r * z) - 2 * PENALTY_C1 * PENALTY_C2 * a / (1 + PENALTY_C2 * a**2),
        ]
    )
    if not hessian:
        return value, grad, None
    w = -r * (t + r)
    om = omega[:, 0]
    h = np.empty((x.shape[0], 3, 3))
    h[:, 0, 0] = total(-1 + alpha**2 * w) / om**2
    h[:, 0, 1] = h[:, 1, 0] = total(-2 * z + alpha * w * t + alpha * r) / om
    h[:, 0, 2] = h[:, 2, 0] = total(-r - alpha * w * z) / om
    h[:, 1, 1] = total(-2 * z**2 + w * t**2 + r * t)
    h[:, 1, 2] = h[:, 2, 1] = -total(z * (w * t + r))
    h[:, 2, 2] = (
        total(w * z**2)
        - 2 * PENALTY_C1 * PENALTY_C2 * (1 - PENALTY_C2 * a**2) / (1 + PENALTY_C2 * a**2) ** 2
    )
    return value, grad, h


def _solve_rows(system: np.ndarray, grad: np.ndarray, scale: np.ndarray) -> np.ndarray:
    """The damped Newton step of every row: ``system[i] @ step[i] = grad[i]``.

    A singular system falls back to a scaled gradient step for that row alone, so each
    row's path does not depend on the other rows of the batch (the replay cache relies on
    a row's fit being the same whatever batch it is fitted in).
    """
    try:
        return np.asarray(np.linalg.solve(system, grad[..., None])[..., 0])
    except np.linalg.LinAlgError:
        step = grad / scale
        for i in range(system.shape[0]):
            with contextlib.suppress(np.linalg.LinAlgError):
                step[i] = np.linalg.solve(system[i : i + 1], grad[i : i + 1, :, None])[0, :, 0]
        return step


def _sn_newton(x: np.ndarray, theta: np.ndarray, iterations: int = 60) -> tuple[np.ndarray, ...]:
    """Maximise the penalised log-likelihood of every row from ``theta`` by damped Newton
    (Levenberg-Marquardt) steps, all rows at once; rows stop when the gradient vanishes.

    Returns theta and the penalised log-likelihood at it.
    """
    theta = theta.copy()
    value, grad, hess = _sn_terms(x, theta, True)
    damping = np.full(x.shape[0], 1e-3)
    active = np.ones(x.shape[0], dtype=bool)
    for _ in range(iterations):
        rows = np.flatnonzero(active)
        if rows.size == 0:
            break
        assert hess is not None
        scale = np.abs(np.diagonal(hess[rows], axis1=1, axis2=2)) + 1e-12
        system = -hess[rows] + damping[rows, None, None] * (np.eye(3)[None] * scale[:, None, :])
        step = _solve_rows(system, grad[rows], scale)
        step[:, 1] = np.clip(step[:, 1], -2.0, 2.0)  # omega changes at most e^2-fold a step
        trial = theta[rows] + step
        with np.errstate(over="ignore", invalid="ignore"):  # a wild trial is rejected below
            new_value, new_grad, new_hess = _sn_terms(x[rows], trial, True)
        better = np.isfinite(new_value) & (new_value >= value[rows])
        good = rows[better]
        theta[good] = trial[better]
        value[good], grad[good] = new_value[better], new_grad[better]
        hess[good] = new_hess[better]  # type: ignore[index]
        damping[good] = np.maximum(damping[good] / 5, 1e-9)
        damping[rows[~better]] *= 10
        converged = (np.abs(step) < 1e-10 * (1 + np.abs(theta[rows]))).all(axis=1)
        stuck = damping[rows] > 1e12
        active[rows[converged | stuck]] = False
    return theta, value


def _sn_penalised_batch(x: np.ndarray, n: np.ndarray) -> tuple[np.ndarray, ...]:
    """The maximum penalised likelihood skew-normal of every row (free location).

    Two starts per row, the method of moments and the normal MLE (alpha = 0), each climbed
    by :func:`_sn_newton`; the better end point is kept, so a local optimum near the start
    cannot beat the symmetric candidate (it did in some samples with one start).
    """
    mean = _nanmean(x, n)
    dev = np.where(np.isfinite(x), x - mean[:, None], 0.0)
    var = np.maximum((dev**2).sum(axis=1) / np.maximum(n, 1), MIN_SCALE**2)
    g1 = (dev**3).sum(axis=1) / np.maximum(n, 1) / var**1.5
    xi0, omega0, alpha0, _ = _skewnormal_moments(mean, var, g1)
    starts = (
        np.column_stack([xi0, np.log(omega0), alpha0]),
        np.column_stack([mean, 0.5 * np.log(var), np.zeros_like(mean)]),
    )
    ends = [_sn_newton(x, start) for start in starts]
    best = ends[1][1] > ends[0][1]
    theta = np.where(best[:, None], ends[1][0], ends[0][0])
    value = np.where(best, ends[1][1], ends[0][1])
    return theta, value


def mode0_batch(alpha: Any) -> np.ndarray:
    """Exact mode of SN(0, 1, alpha) for an array of shapes: Newton on the score
    -z + alpha r(alpha z) = 0 (r = phi/Phi), started at Azzalini's approximation."""
    alpha = np.atleast_1d(np.asarray(alpha, dtype=float))
    z = np.array(skewnormal_mode0(alpha), dtype=float)
    # Each entry stops once its own step is negligible: its value does not depend on the
    # other entries of the batch.
    active = np.ones(z.shape, dtype=bool)
    for _ in range(30):
        a, zz = alpha[active], z[active]
        t = a * zz
        r = np.exp(-0.5 * t**2 - 0.5 * np.log(2 * np.pi) - special.log_ndtr(t))
        score = -zz + a * r
        slope = -1 - a**2 * r * (t + r)  # always < 0: the log density is concave
        step = score / slope
        z[active] = zz - step
        active[active] = np.abs(step) >= 1e-13
        if not active.any():
            break
    return z


def _sn_fixed_terms(x: np.ndarray, theta: np.ndarray, mode: float) -> tuple[np.ndarray, np.ndarray]:
    """Penalised log-likelihood and gradient in (log omega, alpha) with the mode held at
    ``mode``: xi = mode - omega m0(alpha), dm0/dalpha = -(r + alpha w z)/(-1 + alpha^2 w)
    at z = m0 (implicit function of the mode's score equation), chained through the
    free-location gradient of :func:`_sn_terms`."""
    eta, alpha = theta[:, 0], theta[:, 1]
    omega = np.exp(eta)
    m0 = mode0_batch(alpha)
    t = alpha * m0
    r = np.exp(-0.5 * t**2 - 0.5 * np.log(2 * np.pi) - special.log_ndtr(t))
    w = -r * (t + r)
    dm0 = -(r + alpha * w * m0) / (-1 + alpha**2 * w)
    xi = mode - omega * m0
    value, grad, _ = _sn_terms(x, np.column_stack([xi, eta, alpha]), False)
    d_eta = grad[:, 0] * (-omega * m0) + grad[:, 1]
    d_alpha = grad[:, 0] * (-omega * dm0) + grad[:, 2]
    return value, np.column_stack([d_eta, d_alpha])


def _sn_fixed_newton(x: np.ndarray, theta: np.ndarray, mode: float) -> tuple[np.ndarray, ...]:
    """Damped Newton in (log omega, alpha), all rows at once; the Hessian by forward
    differences of the analytic gradient."""
    theta = theta.copy()
    value, grad = _sn_fixed_terms(x, theta, mode)
    damping = np.full(x.shape[0], 1e-3)
    active = np.ones(x.shape[0], dtype=bool)
    eps = 1e-6
    for _ in range(80):
        rows = np.flatnonzero(active)
        if rows.size == 0:
            break
        hess = np.empty((rows.size, 2, 2))
        for j in range(2):
            moved = theta[rows].copy()
            moved[:, j] += eps
            hess[:, :, j] = (_sn_fixed_terms(x[rows], moved, mode)[1] - grad[rows]) / eps
        hess = (hess + hess.transpose(0, 2, 1)) / 2
        scale = np.abs(np.diagonal(hess, axis1=1, axis2=2)) + 1e-12
        system = -hess + damping[rows, None, None] * (np.eye(2)[None] * scale[:, None, :])
        step = _solve_rows(system, grad[rows], scale)
        step[:, 0] = np.clip(step[:, 0], -2.0, 2.0)
        trial = theta[rows] + step
        new_value, new_grad = _sn_fixed_terms(x[rows], trial, mode)
        better = np.isfinite(new_value) & (new_value >= value[rows])
        good = rows[better]
        theta[good], value[good], grad[good] = trial[better], new_value[better], new_grad[better]
        damping[good] = np.maximum(damping[good] / 5, 1e-9)
        damping[rows[~better]] *= 10
        converged = (np.abs(step) < 1e-9 * (1 + np.abs(theta[rows]))).all(axis=1)
        active[rows[converged | (damping[rows] > 1e12)]] = False
    return theta, value


def _sn_fixed_batch(
    x: np.ndarray, mode: float, omega0: np.ndarray, alpha0: np.ndarray
) -> tuple[np.ndarray, ...]:
    """Penalised skew-normal with its mode at ``mode`` for every row, from the moments and
    from alpha = 0 (scale: the root mean square distance from the mode); the better end."""
    dev = np.where(np.isfinite(x), x - mode, 0.0)
    rms = np.sqrt((dev**2).sum(axis=1) / np.maximum(np.isfinite(x).sum(axis=1), 1))
    starts = (
        np.column_stack([np.log(omega0), alpha0]),
        np.column_stack([np.log(np.maximum(rms, MIN_SCALE)), np.zeros_like(rms)]),
    )
    ends = [_sn_fixed_newton(x, start, mode) for start in starts]
    best = ends[1][1] > ends[0][1]
    theta = np.where(best[:, None], ends[1][0], ends[0][0])
    value = np.where(best, ends[1][1], ends[0][1])
    return theta, value


def fit_skew_normal_batch(samples: ArrayLike, mode: float | None = None) -> SkewNormalFit:
    """Maximum penalised likelihood skew-normal of each row, the same estimator as a single
    fit: with the location free, :func:`_sn_penalised_batch`; with the mode fixed,
    :func:`_sn_fixed_batch`. Both start from the method of moments (skewness clipped inside
    the bound) and from alpha = 0. A constant row gets the MIN_SCALE fit, flagged."""
    x, n = _rows(samples)
    mean = _nanmean(x, n)
    dev = np.where(np.isfinite(x), x - mean[:, None], 0.0)
    var = np.maximum((dev**2).sum(axis=1) / np.maximum(n, 1), MIN_SCALE**2)
    g1 = (dev**3).sum(axis=1) / np.maximum(n, 1) / var**1.5
    xi, omega, alpha, clipped = _skewnormal_moments(mean, var, g1)
    notes = _constant_notes(x)
    with np.errstate(invalid="ignore"):
        varies = np.nanmax(x, axis=1) > np.nanmin(x, axis=1)
    if mode is not None:
        xi = float(mode) - omega * mode0_batch(alpha)
    xi, omega, alpha = xi.copy(), omega.copy(), alpha.copy()
    if np.any(varies):  # a constant row keeps MIN_SCALE: its likelihood has no maximum
        if mode is None:
            theta, _ = _sn_penalised_batch(x[varies], n[varies])
            xi[varies], omega[varies], alpha[varies] = theta.T
            omega[varies] = np.exp(theta[:, 1])
        else:
            theta, _ = _sn_fixed_batch(x[varies], float(mode), omega[varies], alpha[varies])
            omega[varies], alpha[varies] = np.exp(theta[:, 0]), theta[:, 1]
            xi[varies] = float(mode) - omega[varies] * mode0_batch(theta[:, 1])
    loglik = np.asarray(skewnormal_logpdf(x, xi[:, None], omega[:, None], alpha[:, None]))
    loglik = np.where(np.isfinite(x), loglik, 0.0).sum(axis=1)
    mode_value = xi + omega * mode0_batch(alpha) if mode is None else np.full(x.shape[0], mode)
    return SkewNormalFit(xi, omega, alpha, loglik, n, clipped, notes=notes, mode_value=mode_value)


def fit_skew_normal(sample: np.ndarray, mode: float | None = None) -> SkewNormalFit:
    """Maximum penalised likelihood skew-normal of one sample.

    The plain MLE of alpha is infinite with positive probability in small samples (the
    half-normal boundary; Azzalini & Capitanio 1999, Pewsey 2000). The penalty
    Q(alpha) = C1 log(1 + C2 alpha^2) keeps it finite (Azzalini & Arellano-Valle 2013).
    This is :func:`fit_skew_normal_batch` on one row, so the headline, the bootstrap and the
    replay use one estimator (damped Newton from the method of moments and from alpha = 0,
    the better end kept; with a fixed mode, xi = mode - omega m0(alpha) with the exact mode
    m0 of SN(0, 1, alpha)).
    """
    fitted = _single_row(fit_skew_normal_batch(sample[None, :], mode))
    if fitted.boundary:
        fitted = replace(
            fitted,
            notes=(
                *fitted.notes,
                "skew-normal: the sample skewness is at the edge of what the family allows; the penalised fit keeps the shape finite",
            ),
        )
    return fitted


def _single_row(batch: SkewNormalFit) -> SkewNormalFit:
    return replace(
        batch,
        xi=float(batch.xi[0]),
        omega=float(batch.omega[0]),
        alpha=float(batch.alpha[0]),
        loglik=float(batch.loglik[0]),
        nobs=int(batch.nobs[0]),
        boundary=bool(batch.boundary[0]),
        mode_value=float(batch.mode_value[0]),
    )


def _mode0_exact(alpha: float) -> float:
    """Mode of SN(0, 1, alpha) by bounded maximisation of the density."""
    if alpha == 0:
        return 0.0
    result = optimize.minimize_scalar(
        lambda z: -stats.skewnorm.logpdf(z, alpha),
        bounds=(-3.0, 3.0),
        method="bounded",
        options={"xatol": 1e-12},
    )
    return float(result.x)


# --- empirical (kernel-smoothed) --------------------------------------------------------


@dataclass(frozen=True)
class EmpiricalFit:
    """Kernel-smoothed empirical distribution: F(x) = mean_i Phi((x - e_i)/b).

    Bandwidth b by Silverman's rule, 0.9 min(sd, IQR/1.349) n^(-1/5) (Silverman 1986,
    Density Estimation, eq. 3.31). Quantiles by inverting F on a fine grid.
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
    def sd(self) -> Any:
        """Standard deviation sqrt(var(sample) + b^2)."""
        return np.sqrt(np.nanvar(self.sample, axis=-1) + self.bandwidth**2)

    def _kernel(self, x: ArrayLike) -> np.ndarray:
        x = np.asarray(x, dtype=float)
        return (x[..., None] - self.sample) / np.asarray(self.bandwidth)[..., None]

    def cdf(self, x: ArrayLike) -> np.ndarray:
        """Cumulative distribution function."""
        z = self._kernel(x)
        return np.asarray(np.nanmean(special.ndtr(z), axis=-1))

    def logpdf(self, x: ArrayLike) -> np.ndarray:
        """Log density."""
        z = self._kernel(x)
        count = np.sum(np.isfinite(z), axis=-1)
        # logsumexp keeps far outcomes finite (a plain mean of kernels underflows to 0).
        log_kernel = np.where(np.isfinite(z), -0.5 * z**2, -np.inf)
        return (
            special.logsumexp(log_kernel, axis=-1)
            - np.log(count)
            - np.log(np.sqrt(2 * np.pi) * np.asarray(self.bandwidth))
        )

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """Quantile function (single fit): interpolation of F on a 4096-point grid."""
        sample = np.asarray(self.sample, dtype=float)
        b = float(self.bandwidth)
        grid = np.linspace(np.nanmin(sample) - 7 * b, np.nanmax(sample) + 7 * b, 4096)
        values = self.cdf(grid)
        return np.interp(np.asarray(q, dtype=float), values, grid)

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws: a resampled error plus kernel noise."""
        sample = np.asarray(self.sample, dtype=float)
        return rng.choice(sample[np.isfinite(sample)], n) + rng.normal(0, float(self.bandwidth), n)


def _row_quantiles(x: np.ndarray, n: np.ndarray, probs: tuple[float, ...]) -> list[np.ndarray]:
    """Linear-interpolation quantiles of each row (NaN padded), from one sort."""
    xs = np.sort(x, axis=1)
    rows = np.arange(x.shape[0])
    out = []
    for p in probs:
        pos = p * (n - 1)
        lo = np.floor(pos).astype(int)
        hi = np.minimum(lo + 1, n - 1)
        out.append(xs[rows, lo] + (pos - lo) * (xs[rows, hi] - xs[rows, lo]))
    return out


def fit_empirical_batch(samples: ArrayLike, mode: float | None = None) -> EmpiricalFit:
    """Kernel-smoothed empirical distribution of each row; with a fixed mode the sample is
    shifted so that the smoothed density peaks there.

    The mode is found on a 64-point grid between the 2% and 98% sample quantiles, refined by
    the parabola through the best grid point and its neighbours.
    """
    x, n = _rows(samples)
    mean = _nanmean(x, n)
    sd = np.sqrt(
        np.where(np.isfinite(x), (x - mean[:, None]) ** 2, 0.0).sum(axis=1) / np.maximum(n, 1)
    )
    q02, q25, q75, q98 = _row_quantiles(x, n, (0.02, 0.25, 0.75, 0.98))
    spread_ = np.minimum(sd, (q75 - q25) / 1.349)
    spread_ = np.where(spread_ > 0, spread_, sd)
    bandwidth = np.maximum(0.9 * spread_ * np.maximum(n, 1) ** (-0.2), MIN_SCALE)
    steps = np.linspace(0, 1, 64)
    grid = q02[:, None] + (q98 - q02)[:, None] * steps[None, :]
    # A missing entry sits at +inf, where its kernel is exactly 0 (as nansum would count
    # it, without nansum's copies).
    far = np.where(np.isfinite(x), x, np.inf)
    z = (grid[:, :, None] - far[:, None, :]) / bandwidth[:, None, None]
    density = np.exp(-0.5 * z**2).sum(axis=2)
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
    return EmpiricalFit(x, bandwidth, peak, loglik, n, notes=_constant_notes(x))
