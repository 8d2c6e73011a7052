"""Tests of forecast accuracy: Diebold-Mariano (HLN or fixed-smoothing), Mariano-Preve, encompassing.

Errors are always actual - forecast. Every test returns a frozen :class:`TestResult` that
carries its null and alternative hypotheses with the number.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike
from scipy import stats

from riskreport.forecasts.fixed_smoothing import (
    periodogram_covariance,
    positive_definite,
    smoothing,
)

Loss = Literal["squared", "absolute"]
Version = Literal["hln", "fixed-smoothing"]


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
    nobs
        Sample size.
    h
        Steps ahead, as the literature counts them (1: one step ahead; h - 1 overlapping
        lags). The pipeline's horizon index is one less: a forecast of horizon 0 made at
        origin o uses data up to o - 1 and is one step ahead
        (:func:`riskreport.reading.panel.steps_ahead` converts).
    df
        Degrees of freedom of the reference distribution.
    notes
        Choices made on the way, e.g. a variance fallback.
    name, models
        Which test, of which forecasters, where the assessment records it (e.g.
        ``"diebold-mariano"`` of ``("bvar", "combination")``); empty from the functions
        here until :meth:`labelled`.

    The assessment holds these results in two places (the track record's tests and the
    calibration tests), each written to the JSON with the keys the contract fixes there
    (``riskreport.assessment.ACCURACY_TEST_KEYS``,
    ``riskreport.replay.calibration.CALIBRATION_TEST_KEYS``).
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
    name: str = ""
    models: tuple[str, ...] = ()

    @property
    def horizon(self) -> int:
        """The pipeline's horizon index of the forecasts tested: ``h - 1`` (a forecast of
        horizon 0, made from data up to the month before, is one step ahead)."""
        return self.h - 1

    def labelled(self, name: str, models: tuple[str, ...] = ()) -> TestResult:
        """The same result named as the assessment records it."""
        return replace(self, name=name, models=models, df=tuple(self.df), notes=tuple(self.notes))


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


def _check_lags(t: int, lags: int) -> None:
    """Autocovariances up to ``lags`` need lags < T (a lag of T or more has no pairs)."""
    if lags >= t:
        raise ValueError(
            f"h: {lags} lags of the long-run variance need more than {lags} observations, "
            f"got {t}; see stats.too_short"
        )


def too_short(nobs: int, h: int) -> str | None:
    """Why a test of h-step errors cannot be run on ``nobs`` rows, or None when it can.

    The long-run variance of overlapping h-step errors uses h - 1 autocovariances; with
    fewer than 2h rows it rests on lags as long as half the sample (and lags >= T cannot be
    computed at all). The 2h floor is common practice, no source.
    """
    if nobs < 2 * h:
        return f"{nobs} rows for {h}-step errors; at least 2h = {2 * h} needed"
    return None


def autocovariances(d: np.ndarray, lags: int) -> np.ndarray:
    """gamma_0..gamma_lags of d with denominator T (not T - k), demeaned.

    Matches ``statsmodels.tsa.stattools.acovf(d, adjusted=False, demean=True)``.

    Raises
    ------
    ValueError
        When ``lags >= T``.
    """
    t = d.size
    _check_lags(t, lags)
    centred = d - d.mean()
    return np.array([centred[k:] @ centred[: t - k] / t for k in range(lags + 1)])


CONSTANT_PITS = (
    "every PIT is the same (each outcome fell at the same quantile of its forecast): the "
    "likelihood ratio is unbounded, test undefined; the coverage table shows the failure"
)
NO_VARIATION = "the loss differential is the same at every period: no variance, test undefined"


def long_run_variance(d: np.ndarray, lags: int) -> tuple[float, tuple[str, ...]]:
    """V(d-bar) with the rectangular window truncated at ``lags``; Bartlett if not positive.

    Notes
    -----
    V = (gamma_0 + 2 sum_{k=1}^{lags} gamma_k) / T (Diebold & Mariano 1995). For multi-step
    horizons this can be <= 0 in small samples (Harvey, Leybourne & Whitehouse 2017); then
    the Bartlett (Newey-West) weights 1 - k/(lags + 1) at the same lags are used, which
    cannot be negative, and a note says so. A series with no variation at all (gamma_0 = 0,
    e.g. two identical forecasts) has V = 0 under every kernel: 0 is returned with the note
    :data:`NO_VARIATION` and no kernel fallback.
    """
    gamma = autocovariances(d, lags)
    if not gamma[0] > 1e-14 * max(1.0, float(np.mean(d**2))):
        return 0.0, (NO_VARIATION,)
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


def _fixed_smoothing_result(
    d: np.ndarray,
    h: int,
    null: str,
    alternative: str,
    name: str,
    *,
    two_sided: bool,
    suffix: str = "",
) -> TestResult:
    """The fixed-smoothing t test of mean zero of ``d`` (Coroneo & Iacone 2020), two-sided
    or one-sided (greater), as a TestResult; NaN with its note when it declines."""
    fixed = _fixed_smoothing_t(d, h)
    if not np.isfinite(fixed.statistic):
        pvalue = float("nan")
    elif two_sided:
        pvalue = float(2 * stats.t.sf(abs(fixed.statistic), fixed.df[0]))
    else:
        pvalue = float(stats.t.sf(fixed.statistic, fixed.df[0]))
    return TestResult(
        statistic=fixed.statistic,
        pvalue=pvalue,
        null=null,
        alternative=alternative,
        method=f"{name}, {fixed.reference}{suffix}",
        nobs=d.size,
        h=h,
        df=fixed.df,
        notes=fixed.notes,
    )


def diebold_mariano(
    errors_a: ArrayLike,
    errors_b: ArrayLike,
    *,
    h: int = 1,
    loss: Loss = "squared",
    version: Version = "hln",
) -> TestResult:
    """Diebold-Mariano test of equal accuracy, two-sided: HLN-corrected or fixed-smoothing.

    Parameters
    ----------
    errors_a, errors_b
        Errors (actual - forecast) of the two forecasts over the same periods.
    h
        Forecast horizon in periods (h >= 1): the long-run variance uses h - 1 lags.
    loss
        ``"squared"`` or ``"absolute"``.
    version
        ``"hln"`` (default): MDM = HLN factor x DM with the rectangular long-run variance,
        against Student t(T - 1). ``"fixed-smoothing"``: for h > 1, the weighted-periodogram
        variance of m Fourier frequencies against t(2m) (Coroneo & Iacone 2020), m chosen
        from T and h so that the test holds its size
        (:func:`riskreport.forecasts.fixed_smoothing.smoothing`); with too few independent
        outcomes it declines (NaN, with a note). At h = 1 both versions are the t-test of
        the loss differential against t(T - 1).

    Returns
    -------
    TestResult
        A positive statistic means forecast b is more accurate (a has the larger loss).

    Notes
    -----
    The HLN version over-rejects a true null with overlapping errors in short samples
    (about 12% at nominal 5% for T = 30, h = 6; 16% for T = 60, h = 13: bench/size.py); the
    brief uses the fixed-smoothing version.

    References
    ----------
    Diebold & Mariano (1995), JBES 13(3):253-263; Harvey, Leybourne & Newbold (1997), IJF
    13(2):281-291; Clements & Harvey, Palgrave Handbook of Econometrics vol. 2, eqs. 4.12-4.14;
    Coroneo & Iacone (2020), J. Applied Econometrics 35(4):391-409.
    """
    a, b = _vector(errors_a, "errors_a"), _vector(errors_b, "errors_b")
    if a.shape != b.shape:
        raise ValueError("errors_a, errors_b: expected the same length")
    if h < 1:
        raise ValueError(f"h: expected h >= 1, got {h}")
    if version not in ("hln", "fixed-smoothing"):
        raise ValueError(f"version: expected 'hln' or 'fixed-smoothing', got {version!r}")
    d = _loss(a, loss) - _loss(b, loss)
    t = d.size
    null, alternative = "equal expected loss", "different expected loss (two-sided)"
    if version == "fixed-smoothing" and h > 1:
        return _fixed_smoothing_result(
            d, h, null, alternative, f"Diebold-Mariano, {loss} loss", two_sided=True
        )
    method = f"Diebold-Mariano with HLN correction, {loss} loss, t(T-1)"
    variance, notes = long_run_variance(d, h - 1)
    if variance <= 0:
        # Undefined, not "no difference": p is NaN (null in JSON), never 1.
        return TestResult(
            statistic=float("nan"),
            pvalue=float("nan"),
            null=null,
            alternative=alternative,
            method=method,
            nobs=t,
            h=h,
            df=(t - 1,),
            notes=notes,
        )
    dm = d.mean() / np.sqrt(variance)
    mdm = hln_factor(t, h) * dm
    return TestResult(
        statistic=float(mdm),
        pvalue=float(2 * stats.t.sf(abs(mdm), t - 1)),
        null=null,
        alternative=alternative,
        method=method,
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

    Raises
    ------
    ValueError
        When ``lags >= T``.
    """
    t = d.shape[0]
    _check_lags(t, lags)
    centred = d - d.mean(axis=0)
    omega = centred.T @ centred / t
    for j in range(1, lags + 1):
        weight = 1.0 if kernel == "uniform" else 1 - j / (lags + 1)
        gamma = centred[j:].T @ centred[:-j] / t
        omega = omega + weight * (gamma + gamma.T)
    return omega


@dataclass(frozen=True)
class _MeanTest:
    statistic: float
    pvalue: float
    df: tuple[float, ...]
    reference: str
    notes: tuple[str, ...]


SINGULAR = (
    "the covariance of the differentials is singular (some do not vary, or are linear "
    "combinations of others, e.g. identical forecasts): test undefined"
)


def _mean_test(d: np.ndarray, h: int) -> _MeanTest:
    """Test that the q columns of d have mean zero, with a reference distribution of honest size.

    Notes
    -----
    h = 1: W = T d-bar' S^-1 d-bar with S the divisor-T sample covariance; the exact
    Hotelling conversion is F = (T - q)/(q T) W ~ F(q, T - q) (Hotelling T^2 = (T-1)/T W;
    Anderson 2003, An Introduction to Multivariate Statistical Analysis, 3rd ed., Thm 5.2.2).

    h > 1: the overlapping errors are serially correlated. The rectangular-window HAC with
    chi-square critical values over-rejects badly in short samples (and Bartlett weights
    more so), so Omega is the weighted-periodogram estimate with m frequencies chosen from
    T and h (:func:`riskreport.forecasts.fixed_smoothing.smoothing`) and the fixed-smoothing
    F: F = (2m - q + 1)/(2m q) W ~ F(q, 2m - q + 1) (Sun 2013, Econometrics Journal
    16(1):1-26, orthonormal-series F test; Coroneo & Iacone 2020, J. Applied Econometrics
    35(4):391-409, for forecast comparison). With too few independent outcomes for any m
    to hold the size, the test declines: NaN with the rule's note. Sizes in bench/size.py.
    """
    t, q = d.shape
    if h > 1:
        rule = smoothing(t, h, q)
        if rule.declined is not None:
            reference = "weighted periodogram, fixed-smoothing F: declined"
            return _MeanTest(float("nan"), float("nan"), (), reference, (rule.declined,))
        return fixed_smoothing_f(d, rule.frequencies)
    return hotelling_f(d)


def hotelling_f(d: np.ndarray) -> _MeanTest:
    """F = (T - q)/(q T) T d-bar' S^-1 d-bar ~ F(q, T - q), S the divisor-T covariance: the
    exact one-sample Hotelling test for independent normal rows (Anderson 2003, Thm 5.2.2)."""
    t, q = d.shape
    mean = d.mean(axis=0)
    centred = d - mean
    omega = centred.T @ centred / t
    df = (float(q), float(t - q))
    reference = "Hotelling F(q, T-q), no lags"
    if not positive_definite(omega):
        return _MeanTest(float("nan"), float("nan"), df, reference, (SINGULAR,))
    statistic = (t - q) / (q * t) * float(t * mean @ np.linalg.solve(omega, mean))
    return _MeanTest(statistic, float(stats.f.sf(statistic, *df)), df, reference, ())


def fixed_smoothing_f(d: np.ndarray, m: int) -> _MeanTest:
    """F = (2m - q + 1)/(2m q) T d-bar' Omega^-1 d-bar ~ F(q, 2m - q + 1), Omega the weighted
    periodogram of the first m Fourier frequencies (Sun 2013, orthonormal-series F test)."""
    t, q = d.shape
    mean = d.mean(axis=0)
    omega = periodogram_covariance(d, m)
    df = (float(q), float(2 * m - q + 1))
    reference = f"weighted periodogram with m = {m} frequencies, fixed-smoothing F(q, 2m-q+1)"
    if not positive_definite(omega):
        return _MeanTest(float("nan"), float("nan"), df, reference, (SINGULAR,))
    statistic = (2 * m - q + 1) / (2 * m * q) * float(t * mean @ np.linalg.solve(omega, mean))
    return _MeanTest(statistic, float(stats.f.sf(statistic, *df)), df, reference, ())


def _fixed_smoothing_t(d: np.ndarray, h: int) -> _MeanTest:
    """t = sqrt(T) d-bar / sqrt(Omega) ~ t(2m), Omega the weighted periodogram of m frequencies.

    The p-value is left to the caller (two- or one-sided); NaN statistic when the test
    declines (too few independent outcomes) or d does not vary.

    References
    ----------
    Coroneo & Iacone (2020), "Comparing predictive accuracy in small samples using
    fixed-smoothing asymptotics", J. Applied Econometrics 35(4):391-409.
    """
    t = d.size
    rule = smoothing(t, h, 1)
    if rule.declined is not None:
        return _MeanTest(float("nan"), float("nan"), (), "declined", (rule.declined,))
    m = rule.frequencies
    reference = f"weighted periodogram with m = {m} frequencies, fixed-smoothing t(2m)"
    omega = float(periodogram_covariance(d, m)[0, 0])
    if not omega > 1e-14 * max(1.0, float(np.mean(d**2))):
        return _MeanTest(float("nan"), float("nan"), (2.0 * m,), reference, (NO_VARIATION,))
    statistic = float(np.sqrt(t) * d.mean() / np.sqrt(omega))
    return _MeanTest(statistic, float("nan"), (2.0 * m,), reference, ())


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
        The Wald statistic W = T d-bar' Omega^-1 d-bar on the k - 1 successive loss
        differentials (it does not depend on which contrasts are used; for k = 2 and h = 1
        it is DM squared), reported as the F statistic of :func:`_mean_test`.

    Notes
    -----
    Small-sample choice: the paper's chi-square(k - 1) with the rectangular-window Omega
    rejects a true null 10-20% of the time at T = 30-60 (bench/size.py). We use the exact
    Hotelling F for h = 1 and the fixed-smoothing F of a weighted-periodogram Omega for
    h > 1 with m frequencies from T and h; with fewer independent outcomes than a test of
    k - 1 differentials needs to hold its size (40 for three forecasts), it declines: NaN
    with a note (:func:`riskreport.forecasts.fixed_smoothing.smoothing`). The reference
    distribution is stated in ``method``.

    References
    ----------
    Mariano & Preve (2012), "Statistical tests for multiple forecast comparison", Journal of
    Econometrics 169(1):123-130; Sun (2013); Coroneo & Iacone (2020).
    """
    matrix = np.asarray(errors, dtype=float)
    if matrix.ndim != 2 or matrix.shape[1] < 2 or matrix.shape[0] < matrix.shape[1] + 2:
        raise ValueError("errors: expected a T x k array with k >= 2 and T > k + 1")
    if not np.all(np.isfinite(matrix)):
        raise ValueError("errors: expected finite values")
    losses = _loss(matrix, loss)
    d = losses[:, :-1] - losses[:, 1:]
    t, k = matrix.shape
    result = _mean_test(d, h)
    return TestResult(
        statistic=result.statistic,
        pvalue=result.pvalue,
        null=f"all {k} forecasts have equal expected loss",
        alternative="at least one differs",
        method=f"Mariano-Preve Wald test, {loss} loss, {result.reference}",
        nobs=t,
        h=h,
        df=result.df,
        notes=result.notes,
    )


def encompassing(
    errors_a: ArrayLike, errors_b: ArrayLike, *, h: int = 1, version: Version = "hln"
) -> TestResult:
    """Does forecast a encompass forecast b? HLN (1998) MDM test, one-sided.

    Parameters
    ----------
    errors_a, errors_b
        Errors (actual - forecast) of the two forecasts over the same periods.
    h
        Forecast horizon (h - 1 lags in the long-run variance).
    version
        ``"hln"`` (default) or ``"fixed-smoothing"`` (for h > 1: weighted periodogram of m
        frequencies against t(2m), or a decline with a note; as in :func:`diebold_mariano`).

    Returns
    -------
    TestResult
        The HLN-corrected DM statistic on d_t = e_a,t (e_a,t - e_b,t) against t(T - 1),
        one-sided: a large statistic rejects "a encompasses b" (b adds information).

    References
    ----------
    Harvey, Leybourne & Newbold (1998), "Tests for forecast encompassing", JBES
    16(2):254-259; Clements & Harvey (Palgrave Handbook), eqs. 4.12-4.14; Coroneo & Iacone
    (2020).
    """
    a, b = _vector(errors_a, "errors_a"), _vector(errors_b, "errors_b")
    if a.shape != b.shape:
        raise ValueError("errors_a, errors_b: expected the same length")
    d = a * (a - b)
    t = d.size
    null = "forecast a encompasses forecast b (b adds nothing to a combination)"
    alternative = "b adds information (one-sided)"
    if version == "fixed-smoothing" and h > 1:
        return _fixed_smoothing_result(
            d,
            h,
            null,
            alternative,
            "Harvey-Leybourne-Newbold encompassing test",
            two_sided=False,
            suffix=", one-sided",
        )
    variance, notes = long_run_variance(d, h - 1)
    # No variance: the test is undefined (NaN), not "no evidence" (statistic 0, p = 0.5).
    mdm = hln_factor(t, h) * d.mean() / np.sqrt(variance) if variance > 0 else float("nan")
    return TestResult(
        statistic=float(mdm),
        pvalue=float(stats.t.sf(mdm, t - 1)) if np.isfinite(mdm) else float("nan"),
        null=null,
        alternative=alternative,
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
        W = T d-bar' Omega^-1 d-bar with d_t = (e_a (e_a - e_j))_j, q = k - 1, as an F
        statistic: for h = 1, Omega has divisor T and the exact Hotelling conversion is
        (T - q)/(q T) W ~ F(q, T - q); for h > 1 the fixed-smoothing F of
        :func:`_mean_test`.

    Notes
    -----
    Harvey & Newbold (2000, J. Applied Econometrics 15:471-482) propose the regression F
    test and this Wald form. The conversion uses T, not T - 1, in the denominator because
    Omega has divisor T while Hotelling's T^2 uses the divisor-(T - 1) covariance (Anderson
    2003, Thm 5.2.2).
    """
    a = _vector(errors_a, "errors_a")
    others = np.asarray(errors_others, dtype=float)
    if others.ndim == 1:
        others = others[:, None]
    if others.shape[0] != a.size:
        raise ValueError("errors_others: expected one row per error of errors_a")
    d = a[:, None] * (a[:, None] - others)
    t, q = d.shape
    result = _mean_test(d, h)
    return TestResult(
        statistic=result.statistic,
        pvalue=result.pvalue,
        null=f"forecast a encompasses all {q} others",
        alternative="at least one other adds information",
        method=f"Harvey-Newbold multiple encompassing, Wald form, {result.reference}",
        nobs=t,
        h=h,
        df=result.df,
        notes=result.notes,
    )
