"""Proper scores of probability forecasts: CRPS and log score of densities, Brier score with
its Murphy decomposition, and the ranked probability score of below / inside / above.

Vectorised over forecasts; the closed forms are checked against scoringrules in the tests.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from scipy import special

from riskreport.laws.empirical import TAIL_WEIGHT, EmpiricalFit
from riskreport.laws.normal import NormalFit
from riskreport.laws.predictive import StudentPredictive, crps_student
from riskreport.laws.skew_normal import SkewNormalFit
from riskreport.laws.two_piece_normal import TwoPieceNormalFit

_SQRT_PI = np.sqrt(np.pi)


def crps_normal(y: ArrayLike, mu: ArrayLike, sigma: ArrayLike) -> np.ndarray:
    """CRPS of N(mu, sigma^2) at y: sigma (w (2 Phi(w) - 1) + 2 phi(w) - 1/sqrt(pi)).

    Gneiting, Raftery, Westveld & Goldman (2005), MWR 133:1098-1118.
    """
    sigma = np.asarray(sigma, dtype=float)
    w = (np.asarray(y, dtype=float) - np.asarray(mu, dtype=float)) / sigma
    pdf = np.exp(-0.5 * w**2) / np.sqrt(2 * np.pi)
    return np.asarray(sigma * (w * (2 * special.ndtr(w) - 1) + 2 * pdf - 1 / _SQRT_PI))


def _crps_tpn_positive(y: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """CRPS of the TPN with mode 0, scales (a, b), at y >= 0, in closed form.

    Derived here from CRPS = E|X - y| - E|X - X'| / 2 (Gneiting & Raftery 2007, JASA
    102:359-378; equation recalled from memory), checked in the tests against
    ``scoringrules.crps_2pnormal`` (Jordan, Krueger & Lerch 2019, J. Stat. Softw. 90(12)).
    """
    s = a + b
    g = (4 - 2 * np.sqrt(2)) / _SQRT_PI  # Gini mean difference of the standard half-normal
    c = y / b
    phi_c = np.exp(-0.5 * c**2) / np.sqrt(2 * np.pi)
    phi_0 = 1 / np.sqrt(2 * np.pi)
    e_abs = (a / s) * (y + a * np.sqrt(2 / np.pi)) + (b / s) * b * (
        c * (4 * special.ndtr(c) - 3) + 4 * phi_c - 2 * phi_0
    )
    e_pair = (
        (a / s) ** 2 * a * g
        + (b / s) ** 2 * b * g
        + 2 * (a / s) * (b / s) * (a + b) * np.sqrt(2 / np.pi)
    )
    return e_abs - 0.5 * e_pair


def crps_two_piece_normal(
    y: ArrayLike, mode: ArrayLike, sigma1: ArrayLike, sigma2: ArrayLike
) -> np.ndarray:
    """CRPS of the two-piece normal; for y below the mode the mirror CRPS(-y; sigma2, sigma1)."""
    d = np.asarray(y, dtype=float) - mode
    a, b = np.broadcast_arrays(np.asarray(sigma1, dtype=float), np.asarray(sigma2, dtype=float))
    d, a, b = np.broadcast_arrays(d, a, b)
    return np.where(
        d >= 0, _crps_tpn_positive(np.abs(d), a, b), _crps_tpn_positive(np.abs(d), b, a)
    )


def _a(mu: np.ndarray, var: np.ndarray) -> np.ndarray:
    """E|X| for X ~ N(mu, var): 2 sigma phi(mu/sigma) + mu (2 Phi(mu/sigma) - 1)."""
    sigma = np.sqrt(var)
    z = mu / sigma
    return 2 * sigma * np.exp(-0.5 * z**2) / np.sqrt(2 * np.pi) + mu * (2 * special.ndtr(z) - 1)


GRID_STEP = 0.5  # spacing, in bandwidths, of the grid for the mixture's E|X - X'|
GRID_REACH = 9.0  # the grid spans the sample -+ this many bandwidths (Phi(-9) < 1e-18)


def _pair_term_exact(x: np.ndarray, ok: np.ndarray, b: np.ndarray) -> np.ndarray:
    """E|X - X'| of each row's mixture over all pairs of components (quadratic in n)."""
    n = ok.sum(axis=1)
    diff = x[:, :, None] - x[:, None, :]
    pair_ok = ok[:, :, None] & ok[:, None, :]
    total = np.where(pair_ok, _a(np.nan_to_num(diff), 2 * b[:, :, None] ** 2), 0.0)
    return np.asarray(total.sum(axis=(1, 2)) / n**2)


def kernel_mixture_spread(sample: ArrayLike, bandwidth: ArrayLike) -> np.ndarray:
    """E|X - X'| of the equal-weight Gaussian mixture of each row (the Gini mean difference).

    Parameters
    ----------
    sample
        m x n components' centres, NaN padded (or one row of n).
    bandwidth
        The components' standard deviation, one per row.

    Returns
    -------
    numpy.ndarray
        One value per row.

    Notes
    -----
    E|X - X'| = 2 int F(x) (1 - F(x)) dx, with F the mixture CDF: average the two forms
    of the CRPS, int (F(x) - 1{y <= x})^2 dx = E|X - y| - E|X - X'|/2 (Gneiting & Raftery
    2007, JASA 102:359-378, section 4.2; equation number recalled from memory, not
    given), over y ~ F. The integrand is smooth on the scale of the bandwidth
    b and vanishes beyond the sample -+ 9 b, so the trapezoid rule with step b / 2 is
    accurate to rounding (relative error below 1e-12 against all pairs in the tests; the
    trapezoid rule converges geometrically for smooth integrands that vanish at both ends,
    Trefethen & Weideman 2014, SIAM Review 56:385-458; for step s b the aliasing error of
    the Gaussian-smooth integrand is about exp(-pi^2 / s^2), 7e-18 at s = 1/2 and 5e-5 at
    s = 1, which is why the step is not coarser). Each component's CDF is evaluated only
    on the grid points within -+ 9 b of its centre (below it is < 1e-18, above it rounds
    to 1), and added to F by a bincount, so each row costs n x 37 CDF terms however wide
    the sample is, instead of the n^2 pairs of the closed form (Grimit et al. 2006); rows
    whose grid would be longer than the sample fall back to the pairs. Hand-rolled: scipy
    has no CRPS of a Gaussian mixture.
    """
    x = np.atleast_2d(np.asarray(sample, dtype=float))
    rows = x.shape[0]
    b = np.broadcast_to(np.asarray(bandwidth, dtype=float).reshape(-1), (rows,))
    ok = np.isfinite(x)
    n = ok.sum(axis=1)
    low = np.min(np.where(ok, x, np.inf), axis=1) - GRID_REACH * b
    high = np.max(np.where(ok, x, -np.inf), axis=1) + GRID_REACH * b
    points = int(np.ceil(np.max((high - low) / (GRID_STEP * b)))) + 1
    if points >= x.shape[1]:
        return _pair_term_exact(x, ok, b.reshape(-1, 1))
    reach = int(np.ceil(GRID_REACH / GRID_STEP))  # grid steps either side of a centre
    width = points + 2 * reach + 2  # every index below stays inside a row of this width
    # Grid point k of a row is low + k s b; a centre sits u = (x - low) / (s b) >= reach
    # steps above low, and its CDF term at k is Phi((k - u) s). Only real centres count.
    row_of = np.broadcast_to(np.arange(rows)[:, None], x.shape)[ok]
    u = (x[ok] - low[row_of]) / (GRID_STEP * b[row_of])
    first = np.ceil(u - reach).astype(np.intp)  # the first k with (k - u) s >= -9
    k = first[:, None] + np.arange(2 * reach + 1)[None, :]
    terms = special.ndtr((k - u[:, None]) * GRID_STEP)
    base = row_of * width
    near = np.bincount((base[:, None] + k).ravel(), terms.ravel(), rows * width)
    # Beyond its window a component's CDF is 1: count it in from there on.
    done = np.bincount(base + first + 2 * reach + 1, minlength=rows * width)
    cdf = (near.reshape(rows, width) + np.cumsum(done.reshape(rows, width), axis=1))[
        :, :points
    ] / n[:, None]
    # The ends are ~0, so the trapezoid rule is the plain sum times the step.
    return np.asarray(2.0 * (cdf * (1.0 - cdf)).sum(axis=1) * GRID_STEP * b)


def crps_kernel_mixture(y: ArrayLike, sample: np.ndarray, bandwidth: ArrayLike) -> np.ndarray:
    """CRPS of an equal-weight Gaussian mixture (the kernel-smoothed empirical distribution):
    E|X - y| - E|X - X'|/2, the first in closed form over the components (Grimit, Gneiting,
    Berrocal & Johnson 2006, QJRMS 132:2925-2942), the second by
    :func:`kernel_mixture_spread` (linear in the sample size)."""
    x = np.atleast_2d(sample)
    b = np.asarray(bandwidth, dtype=float).reshape(-1, 1)
    y = np.asarray(y, dtype=float).reshape(-1, 1)
    ok = np.isfinite(x)
    n = ok.sum(axis=1)
    first = np.where(ok, _a(y - x, b**2), 0.0).sum(axis=1) / n
    return np.asarray(first - 0.5 * kernel_mixture_spread(x, b.reshape(-1)))


def crps_empirical(y: ArrayLike, fit: EmpiricalFit) -> np.ndarray:
    """CRPS of the empirical law (1 - w) K + w N (kernel part K, normal part N).

    CRPS = E|X - y| - E|X - X'|/2 (Gneiting & Raftery 2007, JASA 102:359-378) with, for the
    two-part mixture, E|X - y| = (1 - w) E_K|X - y| + w E_N|X - y| and E|X - X'| =
    (1 - w)^2 E_KK + w^2 E_NN + 2 w (1 - w) E_KN; every term between two normals is
    E|N(d, v)| (Grimit, Gneiting, Berrocal & Johnson 2006, QJRMS 132:2925-2942), E_KK by
    :func:`kernel_mixture_spread`.
    """
    w = TAIL_WEIGHT
    x = np.atleast_2d(np.asarray(fit.sample, dtype=float))
    b = np.asarray(fit.bandwidth, dtype=float).reshape(-1, 1)
    m = np.asarray(fit.tail_loc, dtype=float).reshape(-1, 1)
    var = np.asarray(fit.tail_scale, dtype=float).reshape(-1, 1) ** 2
    y = np.asarray(y, dtype=float).reshape(-1, 1)
    ok = np.isfinite(x)
    n = ok.sum(axis=1)
    kernel_y = np.where(ok, _a(y - x, b**2), 0.0).sum(axis=1) / n
    normal_y = _a(y - m, var)[:, 0]
    kernel_kernel = kernel_mixture_spread(x, b.reshape(-1))
    normal_normal = _a(np.zeros_like(m), 2 * var)[:, 0]
    kernel_normal = np.where(ok, _a(np.nan_to_num(x - m), b**2 + var), 0.0).sum(axis=1) / n
    pair = (1 - w) ** 2 * kernel_kernel + w**2 * normal_normal + 2 * w * (1 - w) * kernel_normal
    return np.asarray((1 - w) * kernel_y + w * normal_y - 0.5 * pair)


def skewnormal_spread(alpha: ArrayLike) -> np.ndarray:
    """E|Z - Z'| of two independent standard skew-normals SN(0, 1, alpha), in closed form.

    With delta = alpha / sqrt(1 + alpha^2), Z = delta |A| + sqrt(1 - delta^2) C (Azzalini's
    stochastic representation, A and C independent standard normals), |A| - |A'| is sqrt(2)
    times the first coordinate of a standard normal pair restricted to the cone above the
    diagonals, and Stein's identity for E[X 1{X > 0, Y > 0, W > 0}] of a trivariate normal
    with Sheppard's orthant probability 1/4 + arcsin(r) / (2 pi) gives

        E|Z - Z'| = (8 / sqrt(pi)) (1/4 + arcsin(r1) / (2 pi) - sqrt(2) delta arcsin(r2) / (2 pi)),

    r1 = delta^2 / (2 - delta^2), r2 = delta / sqrt(2 - delta^2). Derived here; it gives
    2 / sqrt(pi) at alpha = 0 (the normal's Gini mean difference) and (4 - 2 sqrt 2) /
    sqrt(pi) at delta = 1 (the half-normal's), and the tests check it against numerical
    integration of 2 int F (1 - F) with scipy's skew-normal.
    """
    alpha = np.asarray(alpha, dtype=float)
    delta = alpha / np.sqrt(1 + alpha**2)
    d2 = delta**2
    r1, r2 = d2 / (2 - d2), delta / np.sqrt(2 - d2)
    bracket = 0.25 + (np.arcsin(r1) - np.sqrt(2) * delta * np.arcsin(r2)) / (2 * np.pi)
    return np.asarray(8 / _SQRT_PI * bracket)


def crps_skew_normal(y: ArrayLike, xi: ArrayLike, omega: ArrayLike, alpha: ArrayLike) -> np.ndarray:
    """CRPS of the skew-normal SN(xi, omega, alpha) at y, in closed form.

    CRPS = E|X - y| - E|X - X'| / 2 (Gneiting & Raftery 2007, JASA 102:359-378). With
    z = (y - xi) / omega, F the standard skew-normal CDF and mu = sqrt(2/pi) delta its mean,
    E|Z - z| = z (2 F(z) - 1) + 4 phi(z) Phi(alpha z) - 2 mu Phi(z sqrt(1 + alpha^2)) + mu
    (the partial mean E[Z 1{Z < z}] = -2 phi(z) Phi(alpha z) + mu Phi(z sqrt(1 + alpha^2))
    by integrating the density by parts; derived here), and E|Z - Z'| from
    :func:`skewnormal_spread`; both scale with omega. At alpha = 0 this is the normal CRPS
    of :func:`crps_normal`. One CDF (one Owen's T) per forecast, where numerical
    integration needed hundreds.
    """
    omega = np.asarray(omega, dtype=float)
    alpha = np.asarray(alpha, dtype=float)
    z = (np.asarray(y, dtype=float) - np.asarray(xi, dtype=float)) / omega
    delta = alpha / np.sqrt(1 + alpha**2)
    mu = np.sqrt(2 / np.pi) * delta
    cdf = np.clip(special.ndtr(z) - 2 * special.owens_t(z, alpha), 0.0, 1.0)
    pdf = np.exp(-0.5 * z**2) / np.sqrt(2 * np.pi)
    e_abs = (
        z * (2 * cdf - 1)
        + 4 * pdf * special.ndtr(alpha * z)
        - 2 * mu * special.ndtr(z * np.sqrt(1 + alpha**2))
        + mu
    )
    return np.asarray(omega * (e_abs - 0.5 * skewnormal_spread(alpha)))


def crps(fit: object, y: ArrayLike) -> np.ndarray:
    """CRPS of a (batched) fit at y, in closed form for every family."""
    if isinstance(fit, NormalFit):
        return crps_normal(y, fit.loc, fit.scale)
    if isinstance(fit, StudentPredictive):
        return crps_student(y, fit.base.loc, fit.scale, fit.df)
    if isinstance(fit, TwoPieceNormalFit):
        return crps_two_piece_normal(y, fit.mode, fit.sigma1, fit.sigma2)
    if isinstance(fit, EmpiricalFit):
        return crps_empirical(y, fit)
    if isinstance(fit, SkewNormalFit):
        return crps_skew_normal(y, fit.xi, fit.omega, fit.alpha)
    raise TypeError(f"no CRPS for {type(fit).__name__}")


@dataclass(frozen=True)
class BrierDecomposition:
    """Brier score of binary forecasts and Murphy's decomposition over probability bins.

    ``brier = reliability - resolution + uncertainty + within_bin``; ``within_bin`` is zero
    when forecasts are constant within each bin (Murphy 1973, J. Appl. Meteor. 12:595-600).
    """

    brier: float
    reliability: float
    resolution: float
    uncertainty: float
    within_bin: float
    n: int


def brier(p: ArrayLike, outcome: ArrayLike, bins: int = 10) -> BrierDecomposition:
    """Brier score (Brier 1950) of probabilities ``p`` for binary outcomes, with the Murphy
    decomposition over ``bins`` equal-width probability bins."""
    p, o = np.asarray(p, dtype=float), np.asarray(outcome, dtype=float)
    n = p.size
    score = float(np.mean((p - o) ** 2))
    which = np.minimum((p * bins).astype(int), bins - 1)
    base = o.mean()
    rel = res = 0.0
    for k in range(bins):
        members = which == k
        if members.any():
            pk, ok = p[members].mean(), o[members].mean()
            rel += members.sum() * (pk - ok) ** 2 / n
            res += members.sum() * (ok - base) ** 2 / n
    unc = base * (1 - base)
    return BrierDecomposition(
        score, float(rel), float(res), float(unc), score - (rel - res + unc), n
    )


def rps(probabilities: ArrayLike, category: ArrayLike) -> np.ndarray:
    """Ranked probability score, unnormalised: sum_k (F_k - O_k)^2 over ordered categories.

    ``probabilities`` is n x K, ``category`` the observed category 0..K-1 (Epstein 1969,
    J. Appl. Meteor. 8:985-987); not divided by K - 1.
    """
    f = np.cumsum(np.asarray(probabilities, dtype=float), axis=1)
    k = f.shape[1]
    observed = (np.arange(k)[None, :] >= np.asarray(category)[:, None]).astype(float)
    return np.sum((f - observed) ** 2, axis=1)
