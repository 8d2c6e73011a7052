"""Scores and calibration tests against scoringrules, scipy, statsmodels and reference values.

Sources: Berkowitz (2001), JBES 19(4):465-474, LR3 (oracle computed outside the project with
statsmodels' exact AR(1) likelihood); Knueppel (2015), JBES 33(2):270-281; Brier (1950), MWR
78:1-3, with Murphy's (1973) decomposition; Epstein (1969) RPS; the CRPS of the normal
(Gneiting, Raftery, Westveld & Goldman 2005, MWR 133:1098-1118) and of the two-piece normal
(R scoringRules unit tests); and the scoringrules package (Zanetta & Allen), an independent
implementation.
"""

from __future__ import annotations

import numpy as np
import pytest
import scoringrules as sr
from scipy import integrate, stats

from riskreport.forecasts import pit_tests as rstats
from riskreport.forecasts import stats as accuracy_stats
from riskreport.laws.skew_normal import SkewNormalFit
from riskreport.replay import scores

PIT = [
    0.12,
    0.55,
    0.81,
    0.34,
    0.67,
    0.91,
    0.45,
    0.23,
    0.78,
    0.60,
    0.05,
    0.39,
    0.72,
    0.88,
    0.51,
    0.29,
    0.63,
    0.97,
    0.41,
    0.18,
]


def test_crps_normal() -> None:
    # scoringrules docstring: crps_normal(0.0, 0.1, 0.4) = 0.10339992515976162.
    assert float(scores.crps_normal(0.0, 0.1, 0.4)) == pytest.approx(0.10339992515976162, abs=1e-15)
    y = np.linspace(-3, 3, 11)
    assert scores.crps_normal(y, 0.2, 0.7) == pytest.approx(sr.crps_normal(y, 0.2, 0.7), abs=1e-12)
    # CRPS of N(0, 1) at 0 = (sqrt(2) - 1)/sqrt(pi), the closed form of Gneiting et al. (2005)
    # at w = 0.
    assert float(scores.crps_normal(0.0, 0.0, 1.0)) == pytest.approx(
        (np.sqrt(2) - 1) / np.sqrt(np.pi), abs=1e-12
    )


def test_crps_two_piece_normal() -> None:
    # R scoringRules unit tests: crps_2pnorm(-3, .7, 1.1) = 2.80708311, (3, .7, 1.1) = 2.17137978.
    assert float(scores.crps_two_piece_normal(-3.0, 0.0, 0.7, 1.1)) == pytest.approx(
        2.80708311, abs=1e-8
    )
    assert float(scores.crps_two_piece_normal(3.0, 0.0, 0.7, 1.1)) == pytest.approx(
        2.17137978, abs=1e-8
    )
    y = np.linspace(-4, 4, 17)
    assert scores.crps_two_piece_normal(y, 0.1, 0.6, 1.3) == pytest.approx(
        sr.crps_2pnormal(y, 0.6, 1.3, 0.1), abs=1e-10
    )
    # sigma1 = sigma2 = 1 at y = 1 gives the normal value 0.6024413576 (the closed form of
    # Gneiting et al. 2005 at w = 1).
    assert float(scores.crps_two_piece_normal(1.0, 0.0, 1.0, 1.0)) == pytest.approx(
        0.6024413576, abs=1e-9
    )


def test_crps_kernel_mixture(rng: np.random.Generator) -> None:
    x = rng.normal(size=40)
    for y in (-2.0, 0.1, 1.7):
        assert float(scores.crps_kernel_mixture(y, x, 0.35)[0]) == pytest.approx(
            float(sr.crps_mixnorm(y, x, np.full(40, 0.35))), abs=1e-10
        )


def test_crps_kernel_mixture_on_the_grid(
    rng: np.random.Generator, monkeypatch: pytest.MonkeyPatch
) -> None:
    # Long samples take the grid route for E|X - X'| (never the pairs, made to fail here);
    # each row must match scoringrules' CRPS of the same Gaussian mixture (Grimit et al.
    # 2006 closed form over all pairs) to 1e-10, NaN padding included.
    x = rng.normal(0.2, 0.6, size=(6, 300))
    x[2, 150:] = np.nan
    bandwidth = np.array([0.1, 0.15, 0.2, 0.12, 0.3, 0.25])
    y = np.array([-2.0, 0.1, 0.3, 1.7, 0.0, 5.0])

    def no_pairs(*_: object) -> np.ndarray:
        raise AssertionError("the pairs route was taken")

    monkeypatch.setattr(scores, "_pair_term_exact", no_pairs)
    ours = scores.crps_kernel_mixture(y, x, bandwidth)
    for row in range(6):
        centres = x[row][np.isfinite(x[row])]
        expected = sr.crps_mixnorm(y[row], centres, np.full(centres.size, bandwidth[row]))
        assert ours[row] == pytest.approx(float(expected), abs=1e-10)


def test_kernel_mixture_spread_is_the_pair_mean() -> None:
    # E|X - X'| = 2 int F (1 - F) dx (grid) against the mean over all pairs of the closed
    # form E|N(mu, 2 b^2)| (Grimit et al. 2006), and against scipy's quad of 2 F (1 - F).
    x = np.random.default_rng(11).standard_t(5, size=(1, 400))
    b = np.array([0.3])
    ok = np.isfinite(x)
    pairs = scores._pair_term_exact(x, ok, b.reshape(-1, 1))
    grid = scores.kernel_mixture_spread(x, b)
    assert grid[0] == pytest.approx(pairs[0], rel=1e-12)

    def f(t: float) -> float:
        c = float(np.mean(stats.norm.cdf((t - x[0]) / b[0])))
        return 2 * c * (1 - c)

    lo, hi = float(x.min()) - 10, float(x.max()) + 10
    quad, _ = integrate.quad(f, lo, hi, limit=500, points=np.linspace(lo, hi, 40)[1:-1])
    assert grid[0] == pytest.approx(quad, rel=1e-8)


@pytest.mark.parametrize(
    ("xi", "omega", "alpha", "y"),
    [(1.0, 2.0, 3.0, 2.0), (0.0, 1.0, -6.0, -0.4), (-0.3, 0.5, 0.7, 1.9), (0.2, 1.3, 25.0, -1.0)],
)
def test_crps_skew_normal_closed_form_matches_quadrature(
    xi: float, omega: float, alpha: float, y: float
) -> None:
    # CRPS = int F^2 below y + int (1 - F)^2 above y, integrated by scipy's quad with
    # scipy.stats.skewnorm (Azzalini's parametrisation: a = alpha, loc = xi, scale = omega).
    law = stats.skewnorm(alpha, xi, omega)
    below, _ = integrate.quad(lambda x: law.cdf(x) ** 2, -np.inf, y, epsabs=1e-13, limit=200)
    above, _ = integrate.quad(lambda x: law.sf(x) ** 2, y, np.inf, epsabs=1e-13, limit=200)
    ours = float(scores.crps_skew_normal(y, xi, omega, alpha))
    assert ours == pytest.approx(below + above, rel=1e-10)


def test_skewnormal_spread_limits_and_quadrature() -> None:
    # E|Z - Z'| = 2 int F (1 - F): 2/sqrt(pi) for the normal, (4 - 2 sqrt 2)/sqrt(pi) for the
    # half-normal (Gini mean differences; alpha -> inf), and scipy's quad with skewnorm.
    assert float(scores.skewnormal_spread(0.0)) == pytest.approx(2 / np.sqrt(np.pi), rel=1e-14)
    half = (4 - 2 * np.sqrt(2)) / np.sqrt(np.pi)
    assert float(scores.skewnormal_spread(1e8)) == pytest.approx(half, rel=1e-9)
    for alpha in (-4.0, 1.5, 10.0):
        law = stats.skewnorm(alpha)
        quad, _ = integrate.quad(
            lambda x, law=law: 2 * law.cdf(x) * law.sf(x), -np.inf, np.inf, limit=200
        )
        assert float(scores.skewnormal_spread(alpha)) == pytest.approx(quad, rel=1e-9)


def test_crps_of_a_skew_normal_fit_matches_quadrature() -> None:
    f = SkewNormalFit(xi=np.array([1.0]), omega=np.array([2.0]), alpha=np.array([3.0]))
    y = 2.0
    below, _ = integrate.quad(lambda x: stats.skewnorm.cdf(x, 3, 1, 2) ** 2, -np.inf, y)
    above, _ = integrate.quad(lambda x: stats.skewnorm.sf(x, 3, 1, 2) ** 2, y, np.inf)
    assert float(scores.crps(f, np.array([y]))[0]) == pytest.approx(below + above, abs=1e-5)


def test_brier_and_murphy_decomposition() -> None:
    # Brier (1950) score and Murphy (1973, J. Appl. Meteor. 12:595-600; pages recalled from
    # memory) decomposition, computed outside the project with numpy:
    # BS 0.186 = REL 0.008142857 - RES 0.062142857 + UNC 0.24.
    p = [
        0.1,
        0.1,
        0.1,
        0.1,
        0.3,
        0.3,
        0.3,
        0.3,
        0.3,
        0.7,
        0.7,
        0.7,
        0.7,
        0.9,
        0.9,
        0.9,
        0.9,
        0.9,
        0.9,
        0.9,
    ]
    o = [0, 0, 0, 1, 0, 0, 1, 0, 1, 1, 0, 1, 1, 1, 1, 1, 0, 1, 1, 1]
    d = scores.brier(p, o)
    assert d.brier == pytest.approx(0.186, abs=1e-12)
    assert d.reliability == pytest.approx(0.008142857, abs=1e-9)
    assert d.resolution == pytest.approx(0.062142857, abs=1e-9)
    assert d.uncertainty == pytest.approx(0.24, abs=1e-12)
    assert d.within_bin == pytest.approx(0.0, abs=1e-12)
    assert d.brier == pytest.approx(
        float(np.mean(sr.brier_score(np.array(o), np.array(p)))), abs=1e-12
    )


def test_rps() -> None:
    # Epstein (1969), J. Appl. Meteor. 8:985-987, not divided by K - 1: 0.53, 0.10, 0.17 (by
    # hand); 0.34 is the example of the R scoringRules documentation.
    probabilities = np.array([[0.2, 0.5, 0.3], [0.1, 0.6, 0.3], [0.6, 0.3, 0.1], [0.3, 0.2, 0.5]])
    category = np.array([2, 1, 0, 1])
    assert scores.rps(probabilities, category) == pytest.approx([0.53, 0.10, 0.17, 0.34], abs=1e-12)
    assert scores.rps(probabilities, category) == pytest.approx(
        [float(sr.rps_score(c + 1, p)) for p, c in zip(probabilities, category, strict=True)],
        abs=1e-12,
    )


def test_berkowitz_oracle() -> None:
    # Berkowitz (2001) LR3 = 0.990589 (p = 0.803529), computed outside the project with
    # statsmodels ARIMA(1, 0, 0) with a constant (exact likelihood) and scipy's chi2.
    result = rstats.berkowitz(PIT)
    assert result.statistic == pytest.approx(0.990589, abs=1e-4)
    assert result.pvalue == pytest.approx(0.803529, abs=1e-4)


def test_berkowitz_constant_pits_are_undefined_not_a_number_from_a_variance_floor() -> None:
    # The exact Gaussian AR(1) log-likelihood of a constant series is unbounded above as
    # the innovation variance goes to 0 (Hamilton 1994, Time Series Analysis, eq. 5.2.9,
    # the -T/2 log sigma^2 term), so LR3 has no finite value; before this guard the test
    # printed about 693 (p ~ 1e-150) from statsmodels' variance floor.
    for pit in (np.full(30, 0.5), np.full(30, 0.97)):
        result = rstats.berkowitz(pit)
        assert np.isnan(result.statistic)
        assert np.isnan(result.pvalue)
        assert result.notes == (rstats.CONSTANT_PITS,)
    assert np.isfinite(rstats.berkowitz(np.r_[np.full(29, 0.5), 0.6]).statistic)


def test_knuppel_oracles() -> None:
    # Knueppel (2015) alpha with an iid, centred covariance (statsmodels S_hac_simple, 0 lags,
    # computed outside the project), moments 1-2: 0.861693; 1-4: 1.152559. One step
    # ahead the test reports Hotelling's F = (T - q)/(q T) alpha ~ F(q, T - q) (Anderson
    # 2003, Thm 5.2.2), T = 20: the formula through the test's Hotelling step, since with
    # 20 PITs the test itself declines (too few outcomes for the F to hold its size).
    u = np.sqrt(12) * (np.asarray(PIT) - 0.5)
    moments = np.column_stack([u, u**2 - 1, u**3, u**4 - 9 / 5])
    two = accuracy_stats.hotelling_f(moments[:, :2])
    assert two.statistic == pytest.approx(0.861693 * 18 / 40, abs=1e-6)
    assert two.df == (2, 18)
    four = accuracy_stats.hotelling_f(moments)
    assert four.statistic == pytest.approx(1.152559 * 16 / 80, abs=1e-6)
    assert np.isnan(rstats.knuppel(PIT, h=1, moments=2).pvalue)
    # 40 PITs (the oracle's twice, in order): the test speaks, and is the same F.
    doubled = np.r_[PIT, PIT]
    d = moments[:, :2][np.r_[np.arange(20), np.arange(20)]]
    assert rstats.knuppel(doubled, h=1, moments=2).statistic == pytest.approx(
        accuracy_stats.hotelling_f(d).statistic, abs=1e-12
    )
    # Bartlett L = 2, centred, moments 1-4: alpha = 2.388942 (the kernel is no longer the
    # test's, but the long-run covariance helper still computes it).
    u = np.sqrt(12) * (np.asarray(PIT) - 0.5)
    d = np.column_stack([u, u**2 - 1, u**3, u**4 - 9 / 5])
    omega = accuracy_stats.long_run_covariance(d, 2, kernel="bartlett")
    alpha = 20 * d.mean(0) @ np.linalg.solve(omega, d.mean(0))
    assert alpha == pytest.approx(2.388942, abs=1e-6)
