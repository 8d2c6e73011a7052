"""Recalibration from the track record: a beta transform of the predictive CDF.

The recalibrated CDF is G(F(x)) with G the CDF of a Beta(a, b) law fitted to the PITs
F(y) of past forecasts (Gneiting & Ranjan 2013, "Combining predictive distributions",
Electronic Journal of Statistics 7, section 3: the beta-transformed linear pool; here
applied to one distribution). G is increasing, so G(F) is again a CDF: the band
probabilities come from one coherent distribution. PITs piled in the middle (ranges too
wide) give a, b > 1; PITs piled in the tails (too narrow) give a, b < 1; a != b moves the
centre.

The beta law is fitted by the method of moments, a closed form that runs for every past
origin at once (no optimiser per origin): with m and v the PITs' mean and variance,
a = m c, b = (1 - m) c, c = m (1 - m) / v - 1. In the replay, the map used at origin j is
fitted only on PITs whose outcome came before j (o' + h <= j - 1), so the replay judges the
recalibration out of sample.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import ArrayLike
from scipy import special, stats

from riskreport.laws.distributions import Distribution
from riskreport.replay.calibration import HorizonReplay

MIN_PITS = 24  # fewer known PITs than this: no map (common practice, no source)
LIMITS = (0.2, 5.0)  # a and b are kept in this range (a guard against a degenerate fit)
LABEL = "auto, recalibrated"


@dataclass(frozen=True)
class BetaMap:
    """The beta parameters of a recalibration map (a = b = 1 is the identity)."""

    a: float
    b: float
    n: int


def beta_moments(pits: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    """Method-of-moments beta parameters of each row (NaN = missing), clipped to LIMITS.

    Examples
    --------
    >>> a, b = beta_moments([(np.arange(100) + 0.5) / 100])  # an evenly spread sample
    >>> round(float(a[0]), 2), round(float(b[0]), 2)
    (1.0, 1.0)
    """
    x = np.atleast_2d(np.asarray(pits, dtype=float))
    n = np.sum(np.isfinite(x), axis=1)
    m = np.nanmean(x, axis=1)
    v = np.nanvar(x, axis=1)
    return _from_moments(m, v, n)


def _from_moments(m: np.ndarray, v: np.ndarray, n: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    with np.errstate(divide="ignore", invalid="ignore"):
        c = m * (1 - m) / v - 1
        ok = (n >= MIN_PITS) & (v > 0) & (c > 0)
        a = np.where(ok, np.clip(m * c, *LIMITS), 1.0)
        b = np.where(ok, np.clip((1 - m) * c, *LIMITS), 1.0)
    return a, b


def replay_maps(run: HorizonReplay) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per evaluation origin of ``run``: a, b and the number of PITs known there.

    The PITs known at origin j are those with outcome row o' + h <= j - 1; running sums of
    the PITs and their squares give every origin's moments at once.
    """
    outcome = run.origins + run.h
    count = np.searchsorted(outcome, run.origins - 1, side="right")
    s1 = np.concatenate([[0.0], np.cumsum(run.pit)])[count]
    s2 = np.concatenate([[0.0], np.cumsum(run.pit**2)])[count]
    with np.errstate(invalid="ignore", divide="ignore"):
        m = s1 / count
        v = s2 / count - m**2
    a, b = _from_moments(m, v, count)
    return a, b, count


def apply_to_replay(run: HorizonReplay) -> HorizonReplay:
    """The replay of the recalibrated forecasts: each origin's map learned from its past.

    PIT and band probabilities go through G; the log score gains log g(F(y)). The CRPS of
    the transformed law has no closed form from the stored PITs and is left NaN.
    """
    a, b, _ = replay_maps(run)
    cdf_lower = run.probabilities[:, 0]
    cdf_upper = run.probabilities[:, 0] + run.probabilities[:, 1]
    g_lower = special.betainc(a, b, np.clip(cdf_lower, 0, 1))
    g_upper = special.betainc(a, b, np.clip(cdf_upper, 0, 1))
    pit = special.betainc(a, b, run.pit)
    with np.errstate(divide="ignore"):
        gain = stats.beta.logpdf(np.clip(run.pit, 1e-12, 1 - 1e-12), a, b)
    return replace(
        run,
        family=LABEL,
        pit=pit,
        probabilities=np.column_stack([g_lower, g_upper - g_lower, 1 - g_upper]),
        log_score=np.maximum(run.log_score + gain, -50.0),
        crps=np.full(run.pit.size, np.nan),
    )


def current_map(run: HorizonReplay) -> BetaMap:
    """The map for today's forecast at this horizon: every PIT of the replay."""
    a, b = beta_moments(run.pit[None, :])
    return BetaMap(float(a[0]), float(b[0]), int(run.pit.size))


@dataclass(frozen=True)
class _OnBase:
    """A map applied to a base distribution's CDF: family and mode stay the base's (the
    mode anchors any staff judgement)."""

    base: Distribution

    @property
    def family(self) -> str:
        """The family of the base distribution."""
        return self.base.family

    @property
    def mode(self) -> float:
        """The base distribution's mode."""
        return self.base.mode


@dataclass(frozen=True)
class Recalibrated(_OnBase):
    """A distribution with its CDF passed through a beta CDF: G(F(x)).

    ``ppf`` is F^-1(G^-1(q)); ``logpdf`` is log g(F(x)) + log f(x). The mode is kept as the
    base's (the anchor of any staff judgement).
    """

    a: float
    b: float

    def with_base(self, base: Distribution) -> Recalibrated:
        """The same map on another base (the bootstrap's replicates)."""
        return Recalibrated(base, self.a, self.b)

    def cdf(self, x: ArrayLike) -> np.ndarray:
        """G(F(x))."""
        return np.asarray(special.betainc(self.a, self.b, np.clip(self.base.cdf(x), 0, 1)))

    def logpdf(self, x: ArrayLike) -> np.ndarray:
        """log g(F(x)) + log f(x)."""
        f = np.clip(self.base.cdf(x), 1e-300, 1 - 1e-16)
        return np.asarray(stats.beta.logpdf(f, self.a, self.b) + self.base.logpdf(x))

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """F^-1(G^-1(q))."""
        return self.base.ppf(special.betaincinv(self.a, self.b, np.asarray(q, dtype=float)))

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws by inversion."""
        return self.ppf(rng.random(n))


# --- online quantile tracking ----------------------------------------------------------

LEVELS: tuple[float, ...] = (0.05, 0.25, 0.5, 0.75, 0.95)
# Step of the level updates; Gibbs & Candes (2021, NeurIPS 34) use steps of this order
# (0.005 in their experiments, recalled from memory); 0.01 is common practice, no source.
STEP = 0.01
EDGE = 1e-3  # adjusted levels are kept in [EDGE, 1 - EDGE] and this far apart


def tracking_levels(run: HorizonReplay, *, step: float = STEP) -> tuple[np.ndarray, np.ndarray]:
    """Adaptive levels (Gibbs & Candes 2021, adaptive conformal inference, applied to each
    level of a grid at once) used at every evaluation origin of ``run``, and today's.

    For each nominal level tau, the PIT level alpha used for the tau-quantile moves after
    each outcome becomes known: alpha <- alpha + step (tau - 1{PIT <= alpha_used}), with
    alpha_used the level that forecast was made with. The feedback of the forecast of
    origin o' arrives when its outcome o' + h is known (origins after o' + h), as with
    delayed feedback in Zaffran et al. (2022, ICML). A loop over origins (sequential by
    nature), vectorised over the levels.
    """
    tau = np.asarray(LEVELS)
    n = run.origins.size
    outcome = run.origins + run.h
    used = np.empty((n, tau.size))
    alpha = tau.copy()
    k = 0
    for i in range(n):
        while k < i and outcome[k] <= run.origins[i] - 1:
            alpha = alpha + step * (tau - (run.pit[k] <= used[k]))
            k += 1
        used[i] = alpha
    for j in range(k, n):
        alpha = alpha + step * (tau - (run.pit[j] <= used[j]))
    return used, alpha


def _knots(alpha: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Monotone knots (u, v) of the piecewise-linear map G with G(alpha_k) = tau_k."""
    a = np.clip(np.atleast_2d(alpha), EDGE, 1 - EDGE)
    step = EDGE * np.arange(a.shape[1])
    a = np.maximum.accumulate(np.sort(a, axis=1) - step, axis=1) + step  # strictly increasing
    a = np.minimum(a, 1 - EDGE * (a.shape[1] - np.arange(a.shape[1])))
    rows = a.shape[0]
    u = np.column_stack([np.zeros(rows), a, np.ones(rows)])
    v = np.broadcast_to(np.concatenate([[0.0], LEVELS, [1.0]]), u.shape)
    return u, v


def _piecewise(x: np.ndarray, u: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Row-wise G(x) and its slope for piecewise-linear knots (u, v)."""
    x = np.clip(x, 0.0, 1.0)
    seg = np.clip(np.sum(u[:, 1:-1] <= x[:, None], axis=1), 0, u.shape[1] - 2)
    rows = np.arange(x.size)
    u0, u1, v0, v1 = u[rows, seg], u[rows, seg + 1], v[rows, seg], v[rows, seg + 1]
    slope = (v1 - v0) / (u1 - u0)
    return v0 + slope * (x - u0), slope


def track_replay(run: HorizonReplay) -> HorizonReplay:
    """The replay of the tracked forecasts: each origin's levels learned from its past."""
    used, _ = tracking_levels(run)
    u, v = _knots(used)
    g_lower, _ = _piecewise(run.probabilities[:, 0], u, v)
    g_upper, _ = _piecewise(run.probabilities[:, 0] + run.probabilities[:, 1], u, v)
    pit, slope = _piecewise(run.pit, u, v)
    return replace(
        run,
        family=LABEL,
        pit=pit,
        probabilities=np.column_stack([g_lower, g_upper - g_lower, 1 - g_upper]),
        log_score=np.maximum(run.log_score + np.log(slope), -50.0),
        crps=np.full(run.pit.size, np.nan),
    )


@dataclass(frozen=True)
class Tracked(_OnBase):
    """A distribution with its CDF passed through a piecewise-linear increasing map G of
    [0, 1] (knots ``u`` -> ``v``): G(F(x)), a coherent CDF."""

    u: tuple[float, ...]
    v: tuple[float, ...]

    def with_base(self, base: Distribution) -> Tracked:
        """The same map on another base."""
        return Tracked(base, self.u, self.v)

    def cdf(self, x: ArrayLike) -> np.ndarray:
        """G(F(x))."""
        return np.asarray(np.interp(self.base.cdf(x), self.u, self.v))

    def logpdf(self, x: ArrayLike) -> np.ndarray:
        """log G'(F(x)) + log f(x)."""
        f = np.clip(np.asarray(self.base.cdf(x), dtype=float), 0.0, 1.0)
        u, v = np.asarray(self.u), np.asarray(self.v)
        seg = np.clip(np.searchsorted(u, f, side="right") - 1, 0, u.size - 2)
        slope = (v[seg + 1] - v[seg]) / (u[seg + 1] - u[seg])
        return np.asarray(np.log(slope) + self.base.logpdf(x))

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """F^-1(G^-1(q))."""
        return self.base.ppf(np.interp(np.asarray(q, dtype=float), self.v, self.u))

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws by inversion."""
        return self.ppf(rng.random(n))


def current_tracked(run: HorizonReplay) -> tuple[tuple[float, ...], tuple[float, ...]]:
    """Today's knots (u, v) at this horizon."""
    _, alpha = tracking_levels(run)
    u, v = _knots(alpha)
    return tuple(float(x) for x in u[0]), tuple(float(x) for x in v[0])
