"""Calibration tests of PITs: Berkowitz (one step) and Knueppel's raw moments (multi-step).

Both return :class:`riskreport.forecasts.stats.TestResult`. Knueppel's test shares the
fixed-smoothing mean test of the accuracy tests (:func:`riskreport.forecasts.stats._mean_test`):
it holds its size at the T and h it is run at, or declines with a note.
"""

from __future__ import annotations

import warnings

import numpy as np
from numpy.typing import ArrayLike
from scipy import stats

from riskreport.forecasts.fixed_smoothing import smoothing
from riskreport.forecasts.stats import CONSTANT_PITS, TestResult, _mean_test, _MeanTest, _vector


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
    lr = float("nan")
    notes: tuple[str, ...] = (CONSTANT_PITS,)
    # A constant series' AR(1) likelihood grows without bound as its variance goes to 0, so
    # LR3 has no finite value there (a fit would return whatever its variance floor gives):
    # undefined (NaN) with a note, as for the other tests with no variation.
    if np.ptp(x) > 0:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # statsmodels' convergence chatter on short series
            fitted = ARIMA(x, order=(1, 0, 0), trend="c").fit()
        restricted = float(stats.norm.logpdf(x).sum())
        lr, notes = max(0.0, -2 * (restricted - float(fitted.llf))), ()
    return TestResult(
        statistic=lr,
        pvalue=float(stats.chi2.sf(lr, 3)),
        null="PITs are iid uniform (normal scores iid N(0, 1))",
        alternative="wrong mean, variance or first-order dependence",
        method="Berkowitz LR3, exact Gaussian AR(1) likelihood of the normal-transformed PITs, chi-square(3)",
        nobs=int(x.size),
        h=1,
        df=(3,),
        notes=notes,
    )


def knuppel(pit: ArrayLike, *, h: int = 1, moments: int = 4) -> TestResult:
    """Raw-moment calibration test of PITs that allows serial correlation (multi-step).

    Parameters
    ----------
    pit
        PITs of h-step forecasts, in time order.
    h
        Forecast steps (h > 1: the PITs overlap and are serially correlated).
    moments
        How many raw moments of the standardised PIT to test (2 or 4).

    Returns
    -------
    TestResult
        The Wald statistic on d_t = (u, u^2 - 1, u^3, u^4 - 9/5)[:moments], u = sqrt(12)(z -
        1/2), as an F statistic (:func:`_mean_test`): Hotelling F for h = 1, the
        fixed-smoothing weighted-periodogram F for h > 1 with m frequencies from T and h;
        NaN with a note when there are too few independent outcomes for any m to hold the
        size (:func:`riskreport.forecasts.fixed_smoothing.smoothing`).

    Notes
    -----
    The paper compares alpha = T d-bar' Omega^-1 d-bar with chi-square(moments) for a HAC
    Omega. With the Bartlett kernel at h - 1 lags that rejects a true null 14-17% of the
    time at T = 400 for h = 4-12 (and the rectangular window 7-12%); the fixed-smoothing F
    with m = floor(T^(1/3)) still rejected 28% at T = 30, h = 6. With m chosen from the
    number of independent outcomes the size holds or the test declines (bench/size.py).

    References
    ----------
    Knueppel (2015), "Evaluating the calibration of multi-step-ahead density forecasts using
    raw moments", JBES 33(2):270-281; Sun (2013); Coroneo & Iacone (2020).
    """
    z = _vector(pit, "pit")
    u = np.sqrt(12) * (z - 0.5)
    d = np.column_stack([u, u**2 - 1, u**3, u**4 - 9 / 5])[:, :moments]
    one_step = smoothing(d.shape[0], 1, moments) if h == 1 else None
    if one_step is not None and one_step.declined is not None:
        # The moments of uniform PITs are far from normal: Hotelling's F rejects a true
        # null 8.6% of the time at T = 20 and 11% at T = 12 (simulated), so too few
        # outcomes decline one step ahead too.
        result = _MeanTest(float("nan"), float("nan"), (), "declined", (one_step.declined,))
    else:
        result = _mean_test(d, h)
    return TestResult(
        statistic=result.statistic,
        pvalue=result.pvalue,
        null="PITs are uniform (their first raw moments match the uniform's)",
        alternative="miscalibrated",
        method=f"Knueppel raw-moment test, {moments} moments, {result.reference}",
        nobs=int(d.shape[0]),
        h=h,
        df=result.df,
        notes=result.notes,
    )
