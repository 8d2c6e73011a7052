"""How robust is the call: how far the whole published distribution must move to change it.

For each reported period the law after judgement, F, is moved by s percentage points (every
quantile by the same s, the shape kept). P(inside) under the move is

    g(s) = F(upper - s) - F(lower - s),

exact from the law's CDF. ``shift_to_even`` is the move of smallest size with g(s) = 0.5:
the root of g(s) - 0.5 nearest 0, found by scipy.optimize.brentq within a bracket. g'(s) =
f(lower - s) - f(upper - s) changes sign once for a unimodal density, so g has one maximum
and g = 0.5 has at most two roots, one on each side of it; when P(inside) > 0.5 both a move
down and a move up reach 0.5 and the smaller one is given, with its sign. When even the
best-placed law gives P(inside) < 0.5 (the law is wider than the band allows), no move
reaches it and the shift is None. The brackets come from a grid of g over every move that
changes anything, so a law with more than one mode (a kernel-smoothed one) is searched on
each side too.

P(inside) under a few fixed moves (-1, -0.5, -0.25, +0.25, +0.5, +1 pp) is given beside it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from riskreport.laws.distributions import Distribution

EVEN = 0.5
FIXED_SHIFTS: tuple[float, ...] = (-1.0, -0.5, -0.25, 0.25, 0.5, 1.0)
GRID = 2001  # points of g over the moves that matter, to bracket each root
TAIL = 1e-7  # beyond the law's TAIL and 1 - TAIL quantiles a move changes nothing visible


@dataclass(frozen=True)
class SensitivityRow:
    """How P(inside) at one reported period responds to moving the whole distribution.

    Attributes
    ----------
    period, h, band, centre, p_inside
        The reported period, its horizon, band, centre and P(inside) (after judgement).
    shift_to_even
        The signed move (pp) of smallest size that makes P(inside) = 0.5; None when none does.
    p_inside_at_even
        P(inside) after that move (0.5 up to the root finder's tolerance); None with it.
    shift_to_max, p_inside_max
        The move that makes P(inside) largest and that largest P(inside) (below 0.5 exactly
        when no move reaches 0.5).
    p_inside_shift_minus_1 ... p_inside_shift_plus_1
        P(inside) with the distribution moved by -1, -0.5, -0.25, +0.25, +0.5 and +1 pp.
    """

    period: str
    h: int
    band: tuple[float, float]
    centre: float
    p_inside: float
    shift_to_even: float | None
    p_inside_at_even: float | None
    shift_to_max: float
    p_inside_max: float
    p_inside_shift_minus_1: float
    p_inside_shift_minus_0_5: float
    p_inside_shift_minus_0_25: float
    p_inside_shift_plus_0_25: float
    p_inside_shift_plus_0_5: float
    p_inside_shift_plus_1: float


def p_inside_shifted(
    dist: Distribution, lower: float, upper: float, shifts: np.ndarray
) -> np.ndarray:
    """P(lower <= X + s <= upper) for each move s: F(upper - s) - F(lower - s).

    Examples
    --------
    >>> from scipy import stats
    >>> law = stats.norm(3.0, 1.0)
    >>> round(float(p_inside_shifted(law, 2.0, 4.0, np.array([0.0]))[0]), 4)
    0.6827
    """
    s = np.asarray(shifts, dtype=float)
    return np.asarray(dist.cdf(upper - s), dtype=float) - np.asarray(
        dist.cdf(lower - s), dtype=float
    )


def _grid(dist: Distribution, lower: float, upper: float) -> np.ndarray:
    """Moves from the one that puts the band's upper edge at the law's TAIL quantile to the
    one that puts its lower edge at the 1 - TAIL quantile: beyond them P(inside) is ~0."""
    low_q, high_q = (float(v) for v in dist.ppf(np.array([TAIL, 1 - TAIL])))
    return np.linspace(lower - high_q, upper - low_q, GRID)


def best_shift(dist: Distribution, lower: float, upper: float) -> tuple[float, float]:
    """The move that makes P(inside) largest, and that largest P(inside).

    The grid's best point refined by scipy.optimize.minimize_scalar (bounded) within its
    neighbouring cells.
    """
    from scipy import optimize

    grid = _grid(dist, lower, upper)
    values = p_inside_shifted(dist, lower, upper, grid)
    best = int(np.argmax(values))
    a, b = float(grid[max(best - 1, 0)]), float(grid[min(best + 1, grid.size - 1)])
    peak = optimize.minimize_scalar(
        lambda s: -float(p_inside_shifted(dist, lower, upper, np.array([s]))[0]),
        bounds=(a, b),
        method="bounded",
        options={"xatol": 1e-10},
    )
    if -float(peak.fun) >= float(values[best]):
        return float(peak.x), -float(peak.fun)
    return float(grid[best]), float(values[best])


def shift_to_even(
    dist: Distribution,
    lower: float,
    upper: float,
    *,
    best: tuple[float, float] | None = None,
) -> float | None:
    """The signed move of smallest size that makes P(inside) = 0.5, or None.

    Parameters
    ----------
    dist
        The published law of the outcome (with ``cdf`` and ``ppf``).
    lower, upper
        The band's edges.
    best
        :func:`best_shift` of the same law and band, when already computed.

    Returns
    -------
    float or None
        s with F(upper - s) - F(lower - s) = 0.5 and |s| smallest; None when no s gives 0.5.

    Notes
    -----
    Every root of g(s) - 0.5 lies where g changes (:func:`_grid`). The grid brackets each
    sign change, and the best move (:func:`best_shift`) splits a peak that only just passes
    0.5 between two grid points into a bracket on each side of it; scipy.optimize.brentq
    (Brent 1973, "Algorithms for Minimization without Derivatives", ch. 4) finds each root.
    """
    from scipy import optimize

    def gap(s: float) -> float:
        return float(p_inside_shifted(dist, lower, upper, np.array([s]))[0]) - EVEN

    grid = _grid(dist, lower, upper)
    top, p_top = best if best is not None else best_shift(dist, lower, upper)
    if p_top < EVEN:
        return None
    points = np.unique(np.append(grid, top))
    values = p_inside_shifted(dist, lower, upper, points) - EVEN
    roots = [float(x) for x, v in zip(points, values, strict=True) if v == 0]
    for i in np.flatnonzero(values[:-1] * values[1:] < 0):
        roots.append(
            float(optimize.brentq(gap, float(points[i]), float(points[i + 1]), xtol=1e-12))
        )
    return min(roots, key=abs) if roots else top


def row(
    dist: Distribution, band: tuple[float, float], *, period: str, h: int, centre: float
) -> SensitivityRow:
    """The sensitivity of one reported period's P(inside) to moving its whole law."""
    lower, upper = band
    fixed = p_inside_shifted(dist, lower, upper, np.array(FIXED_SHIFTS))
    now = float(p_inside_shifted(dist, lower, upper, np.array([0.0]))[0])
    top, p_top = best_shift(dist, lower, upper)
    shift = shift_to_even(dist, lower, upper, best=(top, p_top))
    at_even = (
        None if shift is None else float(p_inside_shifted(dist, lower, upper, np.array([shift]))[0])
    )
    return SensitivityRow(
        period,
        h,
        (float(lower), float(upper)),
        float(centre),
        now,
        shift,
        at_even,
        top,
        p_top,
        *(float(v) for v in fixed),
    )


def table(
    dists: list[Distribution],
    bands: list[tuple[float, float]],
    labels: list[str],
    centres: list[float],
) -> tuple[SensitivityRow, ...]:
    """One :class:`SensitivityRow` per reported period (h = 0, 1, ...)."""
    return tuple(
        row(dist, band, period=label, h=h, centre=centre)
        for h, (dist, band, label, centre) in enumerate(
            zip(dists, bands, labels, centres, strict=True)
        )
    )
