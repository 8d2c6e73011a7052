"""The two-piece normal error law and its batched maximum-likelihood fit (mode by profile
likelihood on a grid, scale ratio bounded)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike
from scipy import optimize, special

from riskreport.laws._batch import MIN_SCALE, SQRT_2_PI, constant_notes, rows_of

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
    x, n = rows_of(samples)
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
    notes = constant_notes(x)
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
