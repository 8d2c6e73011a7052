"""Tests of forecast accuracy: Diebold-Mariano (HLN), Mariano-Preve, encompassing.

Errors are always actual - forecast. Every test returns a frozen :class:`TestResult` that
carries its null and alternative hypotheses with the number.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike
from scipy import stats

Loss = Literal["squared", "absolute"]


@dataclass(frozen=True)
class TestResult:
    """The result of a test, with what it tested.

    Attributes
    ----------
    statistic, pvalue
        The test statistic and its p-value.
    null, alternative
        The hypotheses in words.
    method
        The test and the reference distribution used.
    nobs, h
        Sample size and forecast horizon.
    df
        Degrees of freedom of the reference distribution.
    notes
        Choices made on the way, e.g. a variance fallback.
    """

    __test__ = False  # not a pytest test class

    statistic: float
    pvalue: float
    null: str
    alternative: str
    method: str
    nobs: int
    h: int
    df: tuple[float, ...] = ()
    notes: tuple[str, ...] = field(default_factory=tuple)


def _loss(errors: np.ndarray, loss: Loss) -> np.ndarray:
    if loss == "squared":
        return errors**2
    if loss == "absolute":
        return np.abs(errors)
    raise ValueError(f"loss: expected 'squared' or 'absolute', got {loss!r}")


def _vector(values: ArrayLike, name: str) -> np.ndarray:
    array = np.asarray(values, dtype=float)
    if array.ndim != 1 or array.size < 3 or not np.all(np.isfinite(array)):
        raise ValueError(f"{name}: expected a 1-d array of at least 3 finite values")
    return array


def autocovariances(d: np.ndarray, lags: int) -> np.ndarray:
    """gamma_0..gamma_lags of d with denominator T (not T - k), demeaned.

    Matches ``statsmodels.tsa.stattools.acovf(d, adjusted=False, demean=True)``.
    """
    t = d.size
    centred = d - d.mean()
    return np.array([centred[k:] @ centred[: t - k] / t for k in range(lags + 1)])


def long_run_variance(d: np.ndarray, lags: int) -> tuple[float, tuple[str, ...]]:
    """V(d-bar) with the rectangular window truncated at ``lags``; Bartlett if not positive.

    Notes
    -----
    V = (gamma_0 + 2 sum_{k=1}^{lags} gamma_k) / T (Diebold & Mariano 1995). For multi-step
    horizons this can be <= 0 in small samples (Harvey, Leybourne & Whitehouse 2017); then
    the Bartlett (Newey-West) weights 1 - k/(lags + 1) at the same lags are used, which
    cannot be negative, and a note says so.
    """
    gamma = autocovariances(d, lags)
    value = (gamma[0] + 2 * gamma[1:].sum()) / d.size
    if value > 0:
        return float(value), ()
    weights = 1 - np.arange(1, lags + 1) / (lags + 1)
    bartlett = (gamma[0] + 2 * (weights * gamma[1:]).sum()) / d.size
    note = (
        f"rectangular long-run variance {value:.4g} is not positive; "
        f"Bartlett kernel with {lags} lags used instead"
    )
    return float(bartlett), (note,)


def hln_factor(t: int, h: int) -> float:
    """Harvey, Leybourne & Newbold (1997) small-sample factor sqrt((T+1-2h+h(h-1)/T)/T)."""
    return float(np.sqrt((t + 1 - 2 * h + h * (h - 1) / t) / t))


def diebold_mariano(
    errors_a: ArrayLike, errors_b: ArrayLike, *, h: int = 1, loss: Loss = "squared"
) -> TestResult:
    """Diebold-Mariano test of equal accuracy with the HLN correction, two-sided.

    Parameters
    ----------
    errors_a, errors_b
        Errors (actual - forecast) of the two forecasts over the same periods.
    h
        Forecast horizon in periods (h >= 1): the long-run variance uses h - 1 lags.
    loss
        ``"squared"`` or ``"absolute"``.

    Returns
    -------
    TestResult
        MDM = HLN factor x DM, compared with Student t(T - 1). A positive statistic means
        forecast b is more accurate (a has the larger loss).

    References
    ----------
    Diebold & Mariano (1995), JBES 13(3):253-263; Harvey, Leybourne & Newbold (1997), IJF
    13(2):281-291; Clements & Harvey, Palgrave Handbook of Econometrics vol. 2, eqs. 4.12-4.14.
    """
    a, b = _vector(errors_a, "errors_a"), _vector(errors_b, "errors_b")
    if a.shape != b.shape:
        raise ValueError("errors_a, errors_b: expected the same length")
    if h < 1:
        raise ValueError(f"h: expected h >= 1, got {h}")
    d = _loss(a, loss) - _loss(b, loss)
    t = d.size
    variance, notes = long_run_variance(d, h - 1)
    if variance <= 0:
        return TestResult(
            statistic=float("nan") if d.mean() == 0 else float(np.sign(d.mean()) * np.inf),
            pvalue=1.0 if d.mean() == 0 else 0.0,
            null="equal expected loss",
            alternative="different expected loss",
            method="Diebold-Mariano with HLN correction, t(T-1)",
            nobs=t,
            h=h,
            df=(t - 1,),
            notes=(*notes, "loss differential has no variation"),
        )
    dm = d.mean() / np.sqrt(variance)
    mdm = hln_factor(t, h) * dm
    return TestResult(
        statistic=float(mdm),
        pvalue=float(2 * stats.t.sf(abs(mdm), t - 1)),
        null="equal expected loss",
        alternative="different expected loss (two-sided)",
        method=f"Diebold-Mariano with HLN correction, {loss} loss, t(T-1)",
        nobs=t,
        h=h,
        df=(t - 1,),
        notes=notes,
    )


def long_run_covariance(
    d: np.ndarray, lags: int, *, kernel: Literal["uniform", "bartlett"] = "uniform"
) -> np.ndarray:
    """Omega = Gamma_0 + sum_{j=1}^{lags} w_j (Gamma_j + Gamma_j'), denominators T, demeaned.

    ``uniform`` weights are 1 (the rectangular window of DM and Mariano-Preve); ``bartlett``
    weights 1 - j/(lags + 1) keep Omega positive semi-definite (Newey-West).
    """
    t = d.shape[0]
    centred = d - d.mean(axis=0)
    omega = centred.T @ centred / t
    for j in range(1, lags + 1):
        weight = 1.0 if kernel == "uniform" else 1 - j / (lags + 1)
        gamma = centred[j:].T @ centred[:-j] / t
        omega = omega + weight * (gamma + gamma.T)
    return omega


def _wald(d: np.ndarray, lags: int) -> tuple[float, tuple[str, ...]]:
    """T d-bar' Omega^-1 d-bar, with a Bartlett fallback when Omega is not positive definite."""
    t = d.shape[0]
    omega = long_run_covariance(d, lags)
    notes: tuple[str, ...] = ()
    if np.linalg.eigvalsh(omega).min() <= 0:
        omega = long_run_covariance(d, lags, kernel="bartlett")
        notes = (
            f"rectangular long-run covariance not positive definite; Bartlett kernel with {lags} lags used",
        )
    mean = d.mean(axis=0)
    return float(t * mean @ np.linalg.solve(omega, mean)), notes


def mariano_preve(errors: ArrayLike, *, h: int = 1, loss: Loss = "squared") -> TestResult:
    """Multivariate test of equal accuracy of k >= 2 forecasts (Mariano & Preve 2012).

    Parameters
    ----------
    errors
        T x k errors (actual - forecast), one column per forecast.
    h
        Forecast horizon (the long-run covariance uses h - 1 lags).
    loss
        ``"squared"`` or ``"absolute"``.

    Returns
    -------
    TestResult
        S = T d-bar' Omega^-1 d-bar on the k - 1 successive loss differentials, compared
        with chi-square(k - 1). S does not depend on which contrasts are used; for k = 2 it
        is DM squared.

    Notes
    -----
    Small-sample choice: the asymptotic chi-square(k - 1) is used with no correction. The
    paper's finite-sample correction could not be verified against its text, so it is not
    applied (the p-value may be too small in short samples).

    References
    ----------
    Mariano & Preve (2012), "Statistical tests for multiple forecast comparison", Journal of
    Econometrics 169(1):123-130.
    """
    matrix = np.asarray(errors, dtype=float)
    if matrix.ndim != 2 or matrix.shape[1] < 2 or matrix.shape[0] < matrix.shape[1] + 2:
        raise ValueError("errors: expected a T x k array with k >= 2 and T > k + 1")
    if not np.all(np.isfinite(matrix)):
        raise ValueError("errors: expected finite values")
    losses = _loss(matrix, loss)
    d = losses[:, :-1] - losses[:, 1:]
    t, k = matrix.shape
    statistic, notes = _wald(d, h - 1)
    return TestResult(
        statistic=statistic,
        pvalue=float(stats.chi2.sf(statistic, k - 1)),
        null=f"all {k} forecasts have equal expected loss",
        alternative="at least one differs",
        method=f"Mariano-Preve Wald test, {loss} loss, chi-square(k-1), no small-sample correction",
        nobs=t,
        h=h,
        df=(k - 1,),
        notes=notes,
    )


def encompassing(errors_a: ArrayLike, errors_b: ArrayLike, *, h: int = 1) -> TestResult:
    """Does forecast a encompass forecast b? HLN (1998) MDM test, one-sided.

    Parameters
    ----------
    errors_a, errors_b
        Errors (actual - forecast) of the two forecasts over the same periods.
    h
        Forecast horizon (h - 1 lags in the long-run variance).

    Returns
    -------
    TestResult
        The HLN-corrected DM statistic on d_t = e_a,t (e_a,t - e_b,t) against t(T - 1),
        one-sided: a large statistic rejects "a encompasses b" (b adds information).

    References
    ----------
    Harvey, Leybourne & Newbold (1998), "Tests for forecast encompassing", JBES
    16(2):254-259; Clements & Harvey (Palgrave Handbook), eqs. 4.12-4.14.
    """
    a, b = _vector(errors_a, "errors_a"), _vector(errors_b, "errors_b")
    if a.shape != b.shape:
        raise ValueError("errors_a, errors_b: expected the same length")
    d = a * (a - b)
    t = d.size
    variance, notes = long_run_variance(d, h - 1)
    mdm = hln_factor(t, h) * d.mean() / np.sqrt(variance) if variance > 0 else 0.0
    return TestResult(
        statistic=float(mdm),
        pvalue=float(stats.t.sf(mdm, t - 1)),
        null="forecast a encompasses forecast b (b adds nothing to a combination)",
        alternative="b adds information (one-sided)",
        method="Harvey-Leybourne-Newbold encompassing test (MDM), t(T-1), one-sided",
        nobs=t,
        h=h,
        df=(t - 1,),
        notes=notes,
    )


def encompassing_multiple(
    errors_a: ArrayLike, errors_others: ArrayLike, *, h: int = 1
) -> TestResult:
    """Does forecast a encompass all the others at once? Harvey & Newbold (2000), Wald form.

    Parameters
    ----------
    errors_a
        T errors of forecast a.
    errors_others
        T x (k - 1) errors of the other forecasts.
    h
        Forecast horizon (h - 1 lags in the long-run covariance).

    Returns
    -------
    TestResult
        W = T d-bar' Omega^-1 d-bar with d_t = (e_a (e_a - e_j))_j, converted by the
        Hotelling form (T - q)/(q (T - 1)) W ~ F(q, T - q), q = k - 1.

    Notes
    -----
    The Hotelling conversion is the small-sample form attributed to Harvey & Newbold (2000,
    J. Applied Econometrics 15:471-482) in secondary sources; it is recalled, not checked
    against the paper.
    """
    a = _vector(errors_a, "errors_a")
    others = np.asarray(errors_others, dtype=float)
    if others.ndim == 1:
        others = others[:, None]
    if others.shape[0] != a.size:
        raise ValueError("errors_others: expected one row per error of errors_a")
    d = a[:, None] * (a[:, None] - others)
    t, q = d.shape
    wald, notes = _wald(d, h - 1)
    statistic = (t - q) / (q * (t - 1)) * wald
    return TestResult(
        statistic=float(statistic),
        pvalue=float(stats.f.sf(statistic, q, t - q)),
        null=f"forecast a encompasses all {q} others",
        alternative="at least one other adds information",
        method="Harvey-Newbold multiple encompassing, Wald with Hotelling F(q, T-q)",
        nobs=t,
        h=h,
        df=(q, t - q),
        notes=notes,
    )


def berkowitz(pit: ArrayLike) -> TestResult:
    """Berkowitz (2001) likelihood-ratio test of one-step PITs: iid N(0, 1) after Phi^-1.

    Parameters
    ----------
    pit
        Probability integral transforms z_t = F_t(y_t) of one-step forecasts, in time order.

    Returns
    -------
    TestResult
        LR3 = -2 [l(0, 1, 0) - l(mu, sigma^2, rho)] for the AR(1) x_t - mu = rho (x_{t-1} -
        mu) + e_t fitted by exact Gaussian likelihood (statsmodels ARIMA(1, 0, 0) with a
        constant), against chi-square(3).

    References
    ----------
    Berkowitz (2001), "Testing density forecasts, with applications to risk management",
    JBES 19(4):465-474.
    """
    from statsmodels.tsa.arima.model import ARIMA

    z = np.clip(_vector(pit, "pit"), 1e-10, 1 - 1e-10)
    x = stats.norm.ppf(z)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # statsmodels' convergence chatter on short series
        fitted = ARIMA(x, order=(1, 0, 0), trend="c").fit()
    restricted = float(stats.norm.logpdf(x).sum())
    lr = max(0.0, -2 * (restricted - float(fitted.llf)))
    return TestResult(
        statistic=lr,
        pvalue=float(stats.chi2.sf(lr, 3)),
        null="PITs are iid uniform (normal scores iid N(0, 1))",
        alternative="wrong mean, variance or first-order dependence",
        method="Berkowitz LR3, exact AR(1) likelihood (statsmodels ARIMA), chi-square(3)",
        nobs=int(x.size),
        h=1,
        df=(3,),
    )


def knuppel(pit: ArrayLike, *, h: int = 1, moments: int = 4) -> TestResult:
    """Raw-moment calibration test of PITs that allows serial correlation (multi-step).

    Parameters
    ----------
    pit
        PITs of h-step forecasts, in time order.
    h
        Forecast steps; the HAC long-run covariance uses h - 1 Bartlett lags.
    moments
        How many raw moments of the standardised PIT to test (2 or 4).

    Returns
    -------
    TestResult
        alpha = T d-bar' Omega^-1 d-bar with d_t = (u, u^2 - 1, u^3, u^4 - 9/5)[:moments],
        u = sqrt(12)(z - 1/2), Omega the centred Bartlett HAC covariance; chi-square(moments).

    Notes
    -----
    Kernel and centring are our choice (the Bartlett kernel keeps Omega positive
    semi-definite); the paper's own choice is not verified.

    References
    ----------
    Knueppel (2015), "Evaluating the calibration of multi-step-ahead density forecasts using
    raw moments", JBES 33(2):270-281.
    """
    z = _vector(pit, "pit")
    u = np.sqrt(12) * (z - 0.5)
    d = np.column_stack([u, u**2 - 1, u**3, u**4 - 9 / 5])[:, :moments]
    t = d.shape[0]
    lags = h - 1
    omega = long_run_covariance(d, lags, kernel="bartlett")
    mean = d.mean(axis=0)
    statistic = float(t * mean @ np.linalg.solve(omega, mean))
    return TestResult(
        statistic=statistic,
        pvalue=float(stats.chi2.sf(statistic, moments)),
        null="PITs are uniform (their first raw moments match the uniform's)",
        alternative="miscalibrated",
        method=f"Knueppel raw-moment test, {moments} moments, Bartlett HAC with {lags} lags",
        nobs=t,
        h=h,
        df=(moments,),
    )
