"""A linear pool of distributions: F = sum_k w_k F_k (today's law of ``distribution = "auto"``,
the optimal prediction pool of :mod:`riskreport.replay.pool`)."""

from __future__ import annotations

import dataclasses
import functools
import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike
from scipy import special

from riskreport._typing import Family
from riskreport.forecasts.overlap import effective_sample_size
from riskreport.laws import distributions, dynamics, probabilities, uncertainty
from riskreport.laws.distributions import GIVEN_FAMILY, Adjusted, Distribution, Tilted
from riskreport.laws.uncertainty import Margins
from riskreport.reading.config import Config
from riskreport.reading.inputs import ErrorQuantiles

POOL_FAMILY = "pool"  # the family name of a pooled law
# The CDF is tabulated on this many points to invert it: linear interpolation on the
# table is within about 1e-5 sd, and the two Newton steps that follow take it to round-off.
_GRID_POINTS = 2048
_TAIL = 1e-9  # the table reaches every component's quantiles at _TAIL and 1 - _TAIL


@dataclass(frozen=True)
class Pool:
    """The linear pool of ``components`` with ``weights`` (sum 1, each >= 0).

    ``labels`` name the components (the candidates of the replay), ``samples`` hold the
    errors each component was fitted to (for the bootstrap of its probabilities).
    """

    components: tuple[Distribution, ...]
    weights: tuple[float, ...]
    labels: tuple[str, ...] = ()
    samples: tuple[np.ndarray, ...] = ()
    family: str = POOL_FAMILY

    @property
    def notes(self) -> tuple[str, ...]:
        """The components' notes, each once."""
        out: dict[str, None] = {}
        for c in self.components:
            out.update(dict.fromkeys(getattr(c, "notes", ())))
        return tuple(out)

    def cdf(self, x: ArrayLike) -> np.ndarray:
        """F(x) = sum_k w_k F_k(x)."""
        x = np.asarray(x, dtype=float)
        return np.asarray(
            sum(
                w * np.asarray(c.cdf(x))
                for w, c in zip(self.weights, self.components, strict=True)
                if w > 0
            )
        )

    def logpdf(self, x: ArrayLike) -> np.ndarray:
        """log sum_k w_k p_k(x), by logsumexp (finite wherever a component is)."""
        x = np.asarray(x, dtype=float)
        terms = [
            np.log(w) + np.asarray(c.logpdf(x))
            for w, c in zip(self.weights, self.components, strict=True)
            if w > 0
        ]
        return np.asarray(special.logsumexp(np.stack(terms), axis=0))

    @functools.cached_property
    def _table(self) -> tuple[np.ndarray, np.ndarray]:
        """The CDF on a fine grid spanning every component's 1e-9 and 1 - 1e-9 quantiles."""
        used = [c for w, c in zip(self.weights, self.components, strict=True) if w > 0]
        low = min(float(c.ppf(np.array([_TAIL]))[0]) for c in used)
        high = max(float(c.ppf(np.array([1 - _TAIL]))[0]) for c in used)
        grid = np.linspace(low, high, _GRID_POINTS)
        return grid, np.maximum.accumulate(self.cdf(grid))

    def ppf(self, q: ArrayLike) -> np.ndarray:
        """Quantile function: F inverted on its table, then two bisection-safe Newton
        steps on the exact F (a mixture has no closed-form quantile)."""
        grid, values = self._table
        q = np.asarray(q, dtype=float)
        x = np.interp(q, values, grid)
        step = grid[1] - grid[0]
        for _ in range(2):
            density = np.exp(self.logpdf(x))
            move = (self.cdf(x) - q) / np.maximum(density, 1e-300)
            x = x - np.clip(move, -step, step)
        return np.asarray(x)

    @property
    def mode(self) -> Any:
        """The centre: the components' common mode when they share one (a pool of unimodal
        laws with one mode peaks there), else the components' modes weighted by the pool's
        weights. (A pool whose members are centred apart, e.g. bias-corrected and not, has
        its density's peak wherever its narrowest member is, even with little weight: a
        centre that jumps between members would not be a centre a reader can use.) For a
        batch of pools (the bootstrap), elementwise."""
        modes = [np.asarray(c.mode, dtype=float) for c in self.components]
        if all(np.allclose(m, modes[0], rtol=0, atol=1e-12) for m in modes):
            return modes[0] if modes[0].ndim else float(modes[0])
        centre = sum(w * m for w, m in zip(self.weights, modes, strict=True))
        return np.asarray(centre) if np.ndim(centre) else float(centre)

    def rvs(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` draws by inversion."""
        return self.ppf(rng.random(n))

    @property
    def sd(self) -> Any:
        """Standard deviation: sqrt(sum w_k (sd_k^2 + mean_k^2) - mean^2), the components'
        means and spreads by quantile integration."""
        mid = (np.arange(4000) + 0.5) / 4000
        means, second = [], []
        for c in self.components:
            values = np.asarray(c.ppf(mid))
            means.append(values.mean())
            second.append((values**2).mean())
        w = np.asarray(self.weights)
        mean = float(w @ np.asarray(means))
        return float(np.sqrt(max(float(w @ np.asarray(second)) - mean**2, 0.0)))


def innermost(dist: Distribution) -> Distribution:
    """The fitted law at the bottom of a chain of maps (shift, scale, tilt, predictive)."""
    while isinstance(dist, Adjusted | Tilted) or hasattr(dist, "with_base"):
        dist = dist.base  # type: ignore[attr-defined]
    return dist


def find_pool(dist: Distribution) -> Pool | None:
    """The pool at the bottom of a chain of maps, if the chain rests on one."""
    while not isinstance(dist, Pool):
        if not (isinstance(dist, Adjusted | Tilted) or hasattr(dist, "with_base")):
            return None
        dist = dist.base  # type: ignore[attr-defined]
    return dist


def bootstrap_p_inside(
    dist: Distribution,
    lower: float,
    upper: float,
    *,
    h: int,
    mode: float | None,
    replicates: int,
    rng: np.random.Generator,
    level: float = 0.9,
) -> tuple[float, float]:
    """The interval of P(inside) for a chain of maps resting on a pool: each component's
    errors resampled as :func:`riskreport.laws.probabilities.bootstrap_p_inside` does (the
    same resample for components fitted to samples of one size), each replicate refitted
    in its own family and pooled with the same weights, widened by sqrt(n / n_eff)."""
    pool = find_pool(dist)
    assert pool is not None
    index: dict[int, np.ndarray] = {}
    parts = []
    for component, sample in zip(pool.components, pool.samples, strict=True):
        n = sample.size
        if n not in index:
            index[n] = rng.integers(0, n, size=(replicates, n))
        family = innermost(component).family
        fitted = distributions.fit_batch(family, sample[index[n]], mode=mode)  # type: ignore[arg-type]
        parts.append(distributions.rebase(component, fitted))
    chain = distributions.rebase(dist, Pool(tuple(parts), pool.weights, pool.labels))
    p = np.asarray(chain.cdf(upper) - chain.cdf(lower), dtype=float)
    estimate = float(dist.cdf(upper) - dist.cdf(lower))
    n = max(index)
    widen = float(np.sqrt(n / effective_sample_size(n, h + 1)))
    return probabilities.effective_sample_interval(p, estimate, level, widen)


@dataclass(frozen=True)
class Member:
    """One candidate of the pool as today's law is built: its label, family, spread option
    and window (None: the configured one), its weight, and whether its centre is
    bias-corrected (the half-life of its correction, in years; None: not)."""

    label: str
    family: Family
    spread: dynamics.SpreadOption
    window: int | None
    weight: float
    half_life: float | None = None


def build(
    cfg: Config,
    errors: np.ndarray,
    point: np.ndarray,
    given: ErrorQuantiles | None,
    members: list[Member],
    corrections: dict[float, np.ndarray] | None = None,
    forecasts: np.ndarray | None = None,
) -> Margins:
    """Today's margins of the pool: each member's margins built as for a single law
    (:func:`riskreport.laws.uncertainty.build`), pooled per learned horizon with the
    members' weights (a corrected member on the errors less ``corrections[half_life]``).
    Members of weight 0 are left out, except the first (the normal law), whose errors,
    counts and sources the record shows; when it is the only one left, today's law is its
    law (not a pool of one). Each distinct warning once."""
    kept = [m for i, m in enumerate(members) if i == 0 or m.weight > 0]
    built: list[Margins] = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        for m in kept:
            use = cfg if m.window is None else cfg.replaced("uncertainty", window=m.window)
            built.append(
                uncertainty.build(
                    use,
                    errors,
                    point,
                    given,
                    family=m.family,
                    spread=m.spread,
                    correction=None
                    if m.half_life is None or corrections is None
                    else corrections[m.half_life],
                    forecasts=forecasts,
                )
            )
    seen: set[tuple[type, str]] = set()
    for w in caught:
        key = (w.category, str(w.message))
        if key not in seen:
            seen.add(key)
            warnings.warn(w.message, w.category, stacklevel=2)
    first = built[0]
    if len(kept) == 1:  # every weight on the first law today: today's law is that law
        return first
    weights = tuple(m.weight for m in kept)
    labels = tuple(m.label for m in kept)
    families, errors_out, outcome = [], [], []
    for h, family in enumerate(first.families):
        if family == GIVEN_FAMILY:
            families.append(family)
            errors_out.append(first.errors[h])
            outcome.append(first.outcome[h])
            continue
        samples = tuple(b.samples[h] for b in built)
        families.append(POOL_FAMILY)
        errors_out.append(Pool(tuple(b.errors[h] for b in built), weights, labels, samples))
        outcome.append(Pool(tuple(b.outcome[h] for b in built), weights, labels, samples))
    return dataclasses.replace(
        first,
        families=tuple(families),
        errors=tuple(errors_out),
        outcome=tuple(outcome),
        choice=None,
    )
