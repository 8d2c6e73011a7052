"""Diebold-Mariano (HLN), Mariano-Preve and encompassing against reference values and
statsmodels.

Oracle values computed outside the project with numpy, scipy and statsmodels, for Diebold & Mariano (1995, JBES 13(3):253-263), Harvey, Leybourne & Newbold (1997, IJF
13(2):281-291; 1998, JBES 16(2):254-259), Mariano & Preve (2012, J. Econometrics
169(1):123-130) and Harvey & Newbold (2000, J. Applied Econometrics 15:471-482).
"""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm
from scipy import stats as st
from statsmodels.stats.multivariate import test_mvmean as hotelling_test
from statsmodels.stats.sandwich_covariance import S_hac_simple, weights_uniform

from riskreport.forecasts import pit_tests, stats
from riskreport.forecasts.fixed_smoothing import TOO_FEW, smoothing
from tests.reference.test_scores import PIT as BERKOWITZ_PITS

# Oracle data for Diebold-Mariano with the HLN factor (T = 24, h = 3).
E1 = np.array(
    [
        -0.82,
        -0.53,
        0.91,
        0.59,
        0.77,
        0.67,
        1.24,
        0.45,
        1.38,
        0.25,
        0.64,
        0.6,
        2.55,
        0.9,
        0.95,
        0.1,
        -0.71,
        0.21,
        -0.47,
        -0.06,
        0.74,
        1.24,
        0.96,
        -1.08,
    ]
)
E2 = np.array(
    [
        -1.12,
        -1.07,
        0.59,
        1.54,
        -0.04,
        -1.05,
        -0.1,
        -0.5,
        -0.03,
        -0.31,
        0.36,
        0.73,
        0.59,
        -0.65,
        0.93,
        -0.22,
        -0.01,
        0.84,
        0.31,
        0.28,
        0.52,
        0.53,
        0.89,
        -0.33,
    ]
)
# Oracle data for the encompassing tests (12 periods, 3 forecasts, h = 1).
Y = np.array([2.1, 2.5, 1.8, 3.0, 2.7, 2.2, 1.9, 2.4, 3.1, 2.8, 2.0, 2.6])
F1 = np.array([2.0, 2.2, 2.0, 2.6, 2.5, 2.3, 2.1, 2.2, 2.7, 2.6, 2.2, 2.4])
F2 = np.array([2.3, 2.9, 2.1, 3.4, 2.9, 2.0, 1.6, 2.8, 3.5, 2.6, 1.8, 3.0])
F3 = np.array([2.2, 2.4, 1.6, 2.7, 2.9, 2.5, 2.2, 2.1, 2.8, 3.0, 2.4, 2.3])


def test_dm_oracle_squared_loss() -> None:
    result = stats.diebold_mariano(E1, E2, h=3)
    assert result.statistic == pytest.approx(1.1978158785, abs=1e-9)
    assert result.pvalue == pytest.approx(0.2431873652, abs=1e-9)
    assert result.nobs == 24
    assert result.df == (23,)
    assert "equal" in result.null


def test_dm_oracle_absolute_loss_and_h1() -> None:
    assert stats.diebold_mariano(E1, E2, h=3, loss="absolute").statistic == pytest.approx(
        1.4153406732, abs=1e-9
    )
    h1 = stats.diebold_mariano(E1, E2, h=1)
    assert h1.statistic == pytest.approx(1.3237418015, abs=1e-9)
    assert h1.pvalue == pytest.approx(0.1985960074, abs=1e-9)


@pytest.mark.parametrize("h", [1, 2, 3, 5])
def test_dm_equals_statsmodels_hac(rng: np.random.Generator, h: int) -> None:
    # OLS of d on a constant, HAC with the uniform kernel and h - 1 lags, no small-sample
    # correction, gives DM as stated by Clements & Harvey (Palgrave Handbook of Econometrics,
    # vol. 2, eqs. 4.12-4.13: autocovariances with denominator T, rectangular window up to
    # h - 1); the HLN factor (eq. 4.14) is applied on top.
    a, b = rng.normal(size=80), rng.normal(scale=1.2, size=80)
    d = a**2 - b**2
    res = sm.OLS(d, np.ones(d.size)).fit(
        cov_type="HAC", cov_kwds={"maxlags": h - 1, "kernel": "uniform", "use_correction": False}
    )
    if not np.isfinite(res.tvalues[0]):
        pytest.skip("negative rectangular variance in this draw")
    t = d.size
    mdm = res.tvalues[0] * np.sqrt((t + 1 - 2 * h + h * (h - 1) / t) / t)
    result = stats.diebold_mariano(a, b, h=h)
    assert result.statistic == pytest.approx(mdm, abs=1e-8)
    assert result.pvalue == pytest.approx(2 * st.t.sf(abs(mdm), t - 1), abs=1e-8)


def test_negative_long_run_variance_falls_back_to_bartlett() -> None:
    # The rectangular-window variance can be negative for h >= 2 in small samples (Harvey,
    # Leybourne & Whitehouse 2017, IJF, "Forecast evaluation tests and negative long-run
    # variance estimates in small samples"). Here (numpy): rectangular V = -0.0751109182;
    # Bartlett V = (gamma_0 + gamma_1)/T = 0.0083791474, t = 0.4551859451.
    d = np.array([1, -1, 1, -1, 1, -1, 1, -1, 1.5, -1, 1, -1])
    variance, notes = stats.long_run_variance(d, 1)
    assert variance == pytest.approx(0.0083791474, abs=1e-10)
    assert notes
    assert "Bartlett" in notes[0]
    t = d.mean() / np.sqrt(variance)
    assert t == pytest.approx(0.4551859451, abs=1e-9)


def test_dm_reports_the_fallback() -> None:
    # A loss differential equal to d of the test above: e_a^2 - e_b^2 = d.
    d = np.array([1, -1, 1, -1, 1, -1, 1, -1, 1.5, -1, 1, -1])
    a, b = np.sqrt(2 + d), np.sqrt(np.full(12, 2.0))
    result = stats.diebold_mariano(a, b, h=2)
    assert np.isfinite(result.statistic)
    assert any("Bartlett" in n for n in result.notes)
    assert result.statistic == pytest.approx(0.4551859451 * stats.hln_factor(12, 2), abs=1e-9)


# Oracle data for Mariano & Preve (2012): T = 30, h = 2, k = 3 errors (one row per period).
MP_ERRORS = np.array(
    [
        [-0.43, 0.76, -0.32],
        [-0.14, -0.04, 0.8],
        [0.71, -0.57, 0.68],
        [-1.48, 1.83, -1.36],
        [0.98, 1.33, 1.52],
        [0.22, -2.02, -1.07],
        [-0.78, 0.83, -0.45],
        [-1.29, 0.61, -1.27],
        [0.51, 1.26, 0.46],
        [1.05, -0.28, 1.56],
        [1.51, 2.14, 1.92],
        [1.39, -0.63, 1.2],
        [0.62, 1.53, 0.48],
        [0.43, 0.45, 0.51],
        [1.07, 2.32, 0.27],
        [-0.5, -0.73, -1.33],
        [-0.4, 0.82, 0.13],
        [0.36, 1.13, 0.08],
        [-0.3, -0.52, -0.75],
        [0.54, 0.23, 0.54],
        [-0.06, -0.6, -0.32],
        [0.53, 0.78, 0.63],
        [0.41, 0.87, -0.26],
        [0.52, -0.21, 0.38],
        [-1.33, -0.04, -1.83],
        [-1.47, -0.96, -0.07],
        [1.0, -0.22, 1.84],
        [0.72, -2.25, -0.41],
        [-0.01, -1.43, 0.15],
        [0.93, -0.52, 0.66],
    ]
)


def _periodogram_f(d: np.ndarray, m: int) -> tuple[float, float]:
    """Fixed-smoothing F by an independent route: numpy's FFT cross-periodogram.

    Omega = (2 pi / m) sum_{j=1}^m Re I(lambda_j), I(l) = w(l) w(l)^* with w(l) = (2 pi
    T)^(-1/2) sum_t d_t exp(-i l t) (Daniell weighted periodogram); F = (2m - q + 1)/(2m q)
    T d-bar' Omega^-1 d-bar ~ F(q, 2m - q + 1) (Sun 2013, Econometrics Journal 16(1):1-26;
    Coroneo & Iacone 2020, J. Applied Econometrics 35(4):391-409).
    """
    t, q = d.shape
    w = np.fft.fft(d, axis=0)[1 : m + 1] / np.sqrt(2 * np.pi * t)
    omega = 2 * np.pi / m * np.real(np.einsum("ja,jb->ab", w, np.conj(w)))
    wald = t * d.mean(0) @ np.linalg.solve(omega, d.mean(0))
    f = (2 * m - q + 1) / (2 * m * q) * wald
    return f, float(st.f.sf(f, q, 2 * m - q + 1))


def test_mariano_preve_rectangular_omega_of_the_oracle_is_indefinite() -> None:
    # Successive contrasts, rectangular Omega with denominators T and h-1 lags (numpy); that
    # Omega has eigenvalues -0.0348 and 3.152, so its S = 2.1024 is not a statistic
    # (the earlier oracle built on it is withdrawn). The test must not use it.
    losses = MP_ERRORS**2
    d = losses[:, :-1] - losses[:, 1:]
    assert d.mean(0) == pytest.approx((-0.57430667, 0.37575333), abs=1e-8)
    omega = stats.long_run_covariance(d, 1)
    assert omega == pytest.approx(
        np.array([[1.96757615, -1.53980248], [-1.53980248, 1.14936261]]), abs=1e-8
    )
    # Cross-check with statsmodels' S_hac_simple and uniform weights (a sum, hence / T).
    sm_omega = S_hac_simple(d - d.mean(0), nlags=1, weights_func=weights_uniform) / 30
    assert omega == pytest.approx(sm_omega, abs=1e-12)
    assert np.linalg.eigvalsh(omega)[0] == pytest.approx(-0.0348, abs=1e-4)


def test_fixed_smoothing_f_of_the_oracle_matches_the_fft_route() -> None:
    # Weighted-periodogram Omega with m = 3 frequencies and the fixed-smoothing F(2, 2m - 1)
    # (Sun 2013; Coroneo & Iacone 2020), checked against the FFT route above and
    # scipy.stats.f.
    losses = MP_ERRORS**2
    d = losses[:, :-1] - losses[:, 1:]
    result = stats.fixed_smoothing_f(d, 3)
    f, p = _periodogram_f(d, 3)
    assert result.statistic == pytest.approx(f, abs=1e-9)
    assert result.pvalue == pytest.approx(p, abs=1e-12)
    assert result.df == (2, 5)


def test_mariano_preve_declines_on_the_short_oracle() -> None:
    # T = 30 two-step rows hold about 15 independent outcomes (effective_sample_size); a
    # test of two means needs 40 (fixed_smoothing.smoothing): no p-value, a note, never a
    # rejection.
    result = stats.mariano_preve(MP_ERRORS, h=2)
    assert np.isnan(result.pvalue)
    assert np.isnan(result.statistic)
    assert result.notes[0].startswith(TOO_FEW)
    assert "15 independent outcomes" in result.notes[0]


def test_mariano_preve_on_a_long_record_is_the_fixed_smoothing_f(
    rng: np.random.Generator,
) -> None:
    # T = 300 two-step rows: m = min(floor(300^(1/3)), floor(150.3 / 10)) = 6 frequencies,
    # F(2, 11); the FFT route and scipy agree.
    errors = rng.normal(size=(301, 3))
    errors = errors[1:] + errors[:-1]  # overlapping two-step errors
    losses = errors**2
    d = losses[:, :-1] - losses[:, 1:]
    assert smoothing(300, 2, 2).frequencies == 6
    result = stats.mariano_preve(errors, h=2)
    f, p = _periodogram_f(d, 6)
    assert result.statistic == pytest.approx(f, abs=1e-9)
    assert result.pvalue == pytest.approx(p, abs=1e-12)
    assert result.df == (2, 11)
    assert "periodogram" in result.method
    assert result.notes == ()
    # Invariant to the order of the models (Mariano & Preve 2012, abstract).
    assert stats.mariano_preve(errors[:, [2, 0, 1]], h=2).statistic == pytest.approx(
        result.statistic, abs=1e-9
    )


def test_fixed_smoothing_dm_against_the_fft_route_and_scipy(rng: np.random.Generator) -> None:
    # Coroneo & Iacone (2020, J. Applied Econometrics 35(4)): t = sqrt(T) d-bar /
    # sqrt(Omega_m) ~ t(2m); for one mean the F of the FFT route is t squared, F(1, 2m).
    a, b = rng.normal(size=(2, 121))
    a, b = a[1:] + a[:-1], b[1:] + b[:-1]  # two-step errors, T = 120: n_eff 60.3, m = 4
    d = a**2 - b**2
    result = stats.diebold_mariano(a, b, h=2, version="fixed-smoothing")
    f, p = _periodogram_f(d[:, None], 4)
    assert result.statistic**2 == pytest.approx(f, abs=1e-9)
    assert np.sign(result.statistic) == np.sign(d.mean())
    assert result.pvalue == pytest.approx(p, abs=1e-12)
    assert result.df == (8,)
    # One step ahead both versions are the t-test of the loss differential (scipy).
    one = stats.diebold_mariano(a, b, version="fixed-smoothing")
    assert one.statistic == pytest.approx(st.ttest_1samp(d, 0).statistic, abs=1e-9)
    assert one.pvalue == pytest.approx(st.ttest_1samp(d, 0).pvalue, abs=1e-12)
    # Encompassing, one-sided, the same variance.
    enc = stats.encompassing(a, b, h=2, version="fixed-smoothing")
    f, _ = _periodogram_f((a * (a - b))[:, None], 4)
    assert enc.statistic**2 == pytest.approx(f, abs=1e-9)
    assert enc.pvalue == pytest.approx(st.t.sf(enc.statistic, 8), abs=1e-12)


def test_mariano_preve_h1_is_hotelling() -> None:
    # h = 1: the one-sample Hotelling T^2 test of zero mean differentials, F(q, T - q):
    # statsmodels.stats.multivariate.test_mvmean (Anderson 2003, Thm 5.2.2).
    losses = MP_ERRORS**2
    d = losses[:, :-1] - losses[:, 1:]
    result = stats.mariano_preve(MP_ERRORS, h=1)
    hotelling = hotelling_test(d, mean_null=0)
    assert result.statistic == pytest.approx(float(hotelling.statistic), abs=1e-9)
    assert result.pvalue == pytest.approx(float(hotelling.pvalue), abs=1e-12)
    assert result.df == (2, 28)
    assert stats.mariano_preve(MP_ERRORS[:, [2, 0, 1]], h=1).statistic == pytest.approx(
        result.statistic, abs=1e-9
    )


def test_mariano_preve_reduces_to_mdm_squared(rng: np.random.Generator) -> None:
    # k = 2, h = 1: Hotelling F(1, T - 1) = t(T - 1)^2, the square of HLN's MDM (HLN 1997).
    a, b = rng.normal(size=50), rng.normal(size=50) * 1.1
    mdm = stats.diebold_mariano(a, b, h=1)
    mp = stats.mariano_preve(np.column_stack([a, b]), h=1)
    assert mp.statistic == pytest.approx(mdm.statistic**2, abs=1e-9)
    assert mp.pvalue == pytest.approx(mdm.pvalue, abs=1e-9)


def test_knuppel_against_hotelling_and_the_periodogram(rng: np.random.Generator) -> None:
    # The 20 PITs of the Berkowitz oracle; h = 1: Hotelling on (u, u^2 - 1) (statsmodels
    # test_mvmean);
    # the fixed-smoothing F by the FFT route.
    pit = np.array(BERKOWITZ_PITS)
    u = np.sqrt(12) * (pit - 0.5)
    d = np.column_stack([u, u**2 - 1])
    one = stats.hotelling_f(d)  # the test's one-step route (20 PITs: the test declines)
    hotelling = hotelling_test(d, mean_null=0)
    assert one.statistic == pytest.approx(float(hotelling.statistic), abs=1e-9)
    assert one.pvalue == pytest.approx(float(hotelling.pvalue), abs=1e-12)
    # Knueppel (2015, JBES 33(2):270-281) alpha = T d-bar' Omega^-1 d-bar with an iid, centred
    # Omega is 0.861693 for moments 1-2 (statsmodels S_hac_simple with 0 lags, computed
    # outside the project); Hotelling's F is (T - q)/(q T) of it.
    assert one.statistic == pytest.approx(0.861693 * 18 / 40, abs=1e-6)
    f, p = _periodogram_f(d, 2)
    fixed = stats.fixed_smoothing_f(d, 2)
    assert (fixed.statistic, fixed.pvalue) == pytest.approx((f, p), abs=1e-9)
    assert fixed.df == (2, 3)
    # 20 three-step PITs hold about 7 independent outcomes: the test declines.
    three = pit_tests.knuppel(pit, h=3, moments=2)
    assert np.isnan(three.pvalue)
    assert three.notes[0].startswith(TOO_FEW)


def test_identical_forecasts_give_an_undefined_test_not_p_one() -> None:
    # Two identical forecasts: the loss differential is 0 at every period, its variance is
    # 0 and the DM statistic 0/0 is undefined (Diebold & Mariano 1995, the statistic
    # d-bar / sqrt(V)); it was reported as p = 1 with a "negative variance" note.
    e = E1.copy()
    for h in (1, 3):
        result = stats.diebold_mariano(e, e.copy(), h=h)
        assert np.isnan(result.pvalue)
        assert np.isnan(result.statistic)
        assert result.notes == (stats.NO_VARIATION,)
        assert not any("Bartlett" in n for n in result.notes)
    # The same for the encompassing tests (was statistic 0, p = 0.5).
    enc = stats.encompassing(e, e.copy(), h=2)
    assert np.isnan(enc.pvalue)
    assert enc.notes == (stats.NO_VARIATION,)
    mp = stats.mariano_preve(np.column_stack([E1, E2, E2]), h=1)
    assert np.isnan(mp.pvalue)
    assert mp.notes == (stats.SINGULAR,)


def test_lags_beyond_the_sample_are_refused_clearly() -> None:
    # 20 lags on 12 rows: gamma_k for k >= T has no pairs (statsmodels acovf returns only
    # nlag < T). Before: a numpy shape error from deep inside; now a clear ValueError, and
    # too_short tells callers to skip the test.
    a, b = E1[:12], E2[:12]
    with pytest.raises(ValueError, match="lags of the long-run variance"):
        stats.diebold_mariano(a, b, h=21)
    assert stats.too_short(12, 21) is not None
    assert stats.too_short(12, 6) is None
    assert stats.too_short(12, 7) is not None


def test_encompassing_oracles() -> None:
    # Harvey, Leybourne & Newbold (1998), values computed outside the project with numpy and
    # scipy: f1 enc f2: MDM = 3.53547984, one-sided p(t11) = 0.00233483;
    # f2 enc f1: 4.54532010 (p 0.00041827); f1 enc f3: 1.76510819 (p 0.05262670).
    e1, e2, e3 = Y - F1, Y - F2, Y - F3
    r = stats.encompassing(e1, e2, h=1)
    assert r.statistic == pytest.approx(3.53547984, abs=1e-7)
    assert r.pvalue == pytest.approx(0.00233483, abs=1e-8)
    assert stats.encompassing(e2, e1, h=1).statistic == pytest.approx(4.54532010, abs=1e-7)
    r13 = stats.encompassing(e1, e3, h=1)
    assert r13.statistic == pytest.approx(1.76510819, abs=1e-7)
    assert r13.pvalue == pytest.approx(0.05262670, abs=1e-7)


def test_multiple_encompassing_oracle() -> None:
    # Wald W = T d-bar' Omega^-1 d-bar = 16.90149223 (numpy); with the divisor-T Omega the exact Hotelling
    # conversion is (T - q)/(q T) W = 10/24 W = 7.04228843 ~ F(2, 10) (Harvey & Newbold
    # 2000; Anderson 2003, Thm 5.2.2). The earlier (T - q)/(q (T - 1)) gave 7.68249647.
    e1, e2, e3 = Y - F1, Y - F2, Y - F3
    r = stats.encompassing_multiple(e1, np.column_stack([e2, e3]), h=1)
    assert r.statistic == pytest.approx(7.04228843, abs=1e-7)
    assert r.statistic == pytest.approx(10 / 24 * 16.90149223, abs=1e-7)
    assert r.df == (2, 10)
    # Independent routes: statsmodels' one-sample Hotelling test of the differentials
    # d_t = e1 (e1 - e_j), and scipy's F distribution.
    d = np.column_stack([e1 * (e1 - e2), e1 * (e1 - e3)])
    hotelling = hotelling_test(d, mean_null=0)
    assert r.statistic == pytest.approx(float(hotelling.statistic), abs=1e-9)
    assert r.pvalue == pytest.approx(float(hotelling.pvalue), abs=1e-12)
    assert r.pvalue == pytest.approx(float(st.f.sf(7.04228843, 2, 10)), abs=1e-8)
    # q = 1: Hotelling's T^2 of one variable is the square of the one-sample t statistic,
    # here the MDM-style statistic without the h terms.
    single = stats.encompassing_multiple(e1, e2, h=1)
    assert single.statistic == pytest.approx(stats.encompassing(e1, e2, h=1).statistic ** 2)


def test_bad_input_is_refused() -> None:
    with pytest.raises(ValueError, match="same length"):
        stats.diebold_mariano(E1, E2[:-1])
    with pytest.raises(ValueError, match="h >= 1"):
        stats.diebold_mariano(E1, E2, h=0)
