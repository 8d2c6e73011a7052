"""Azzalini's skew-normal error law and its maximum penalised likelihood fit (batched damped
Newton, with the location free or the mode fixed)."""

from __future__ import annotations

import contextlib
import math
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
from numpy.typing import ArrayLike
from scipy import optimize, special, stats

from riskreport.laws._batch import (
    MIN_SCALE,
    SKEW_BOUND,
    SQRT_2_PI,
    constant_notes,
    nanmean_rows,
    rows_of,
)

# Penalty of the maximum penalised likelihood skew-normal fit, Q(alpha) = C1 log(1 + C2
# alpha^2) (Azzalini & Arellano-Valle 2013, JSPI 143:419-433); constants recalled from
# memory of that paper and the R package sn, not checked against the text.
PENALTY_C1, PENALTY_C2 = 0.875913, 0.856250


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
    mean = nanmean_rows(x, n)
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
    x, n = rows_of(samples)
    mean = nanmean_rows(x, n)
    dev = np.where(np.isfinite(x), x - mean[:, None], 0.0)
    var = np.maximum((dev**2).sum(axis=1) / np.maximum(n, 1), MIN_SCALE**2)
    g1 = (dev**3).sum(axis=1) / np.maximum(n, 1) / var**1.5
    xi, omega, alpha, clipped = _skewnormal_moments(mean, var, g1)
    notes = constant_notes(x)
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
