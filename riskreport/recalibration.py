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

from riskreport.calibration import HorizonReplay
from riskreport.distributions import Distribution

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
class Recalibrated:
    """A distribution with its CDF passed through a beta CDF: G(F(x)).

    ``ppf`` is F^-1(G^-1(q)); ``logpdf`` is log g(F(x)) + log f(x). The mode is kept as the
    base's (the anchor of any judgement overlay).
    """

    base: Distribution
    a: float
    b: float

    @property
    def family(self) -> str:
        """The family of the base distribution."""
        return self.base.family

    @property
    def mode(self) -> float:
        """The base distribution's mode."""
        return self.base.mode

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
