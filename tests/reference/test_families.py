"""The four error-distribution families against reference values and scipy.

Sources: the two-piece normal MLE (John 1982 closed form given the mode, as discussed by
Wallis 2014, Statistical Science 29(1):106-112), with oracles for a small sample A (whose
likelihood peaks at the edge) and a well-behaved sample B computed outside the project
(closed form, checked against scipy's Nelder-Mead to 1e-8); the skew-normal (Azzalini
1985, Scand. J. Statist. 12, recalled from memory) against scipy.stats.skewnorm; and
scipy.stats.gaussian_kde for the kernel-smoothed empirical distribution.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy import optimize, stats

from riskreport.laws import distributions
from riskreport.laws._batch import CONSTANT_NOTE, MIN_SCALE
from riskreport.laws.empirical import TAIL_WEIGHT
from riskreport.laws.skew_normal import PENALTY_C1, PENALTY_C2, _mode0_exact, skewnormal_mode0
from riskreport.laws.two_piece_normal import fit_two_piece_normal_batch

SAMPLE_A = np.array([-0.59, -0.32, -0.11, -0.07, 0.42, 0.56, 0.78, 1.09, 1.44, 1.48, 1.6, 1.92])
SAMPLE_B = np.array(
    [
        0.8,
        0.8,
        1.07,
        1.25,
        1.26,
        1.28,
        1.29,
        1.54,
        1.59,
        1.59,
        1.61,
        1.72,
        1.8,
        1.85,
        1.88,
        1.92,
        1.95,
        2.06,
        2.07,
        2.07,
        2.1,
        2.11,
        2.11,
        2.12,
        2.19,
        2.2,
        2.37,
        2.46,
        2.58,
        2.58,
        2.64,
        2.67,
        2.68,
        2.79,
        2.86,
        2.9,
        3.15,
        3.32,
        3.36,
        3.44,
    ]
)
WRONG_SKEW = np.array(
    [
        1.885,
        2.362,
        0.348,
        0.319,
        0.488,
        0.203,
        1.585,
        0.093,
        0.962,
        3.179,
        0.35,
        -0.127,
        0.338,
        0.707,
        0.781,
    ]
)


def test_two_piece_normal_mle_sample_b() -> None:
    # Sample B, full MLE (outside oracle): mode 2.024709, sigma1 0.621989, sigma2 0.717285, logL -40.716742.
    f = distributions.fit("two-piece-normal", SAMPLE_B)
    assert f.mode == pytest.approx(2.024709, abs=2e-6)
    assert f.sigma1 == pytest.approx(0.621989, abs=2e-6)
    assert f.sigma2 == pytest.approx(0.717285, abs=2e-6)
    assert f.loglik == pytest.approx(-40.716742, abs=1e-6)
    assert not f.boundary
    # The closed-form log-likelihood equals the sum of the log density.
    assert f.loglik == pytest.approx(float(np.sum(f.logpdf(SAMPLE_B))), abs=1e-9)


def test_two_piece_normal_fixed_mode_closed_form() -> None:
    # John's (1982) closed form, mode fixed at 0 on sample A: sigma1 0.3954353863, sigma2 1.1917447592,
    # logL -14.2530036124.
    f = distributions.fit("two-piece-normal", SAMPLE_A, mode=0.0)
    assert (f.sigma1, f.sigma2) == pytest.approx((0.3954353863, 1.1917447592), abs=1e-9)
    assert f.loglik == pytest.approx(-14.2530036124, abs=1e-9)


def test_two_piece_normal_boundary_case_is_detected_and_handled() -> None:
    # Sample A (outside oracle): the global maximum is the half-normal at mode = max(x)
    # (logL -13.351681 > interior -14.235582). We must detect it and not return sigma2 = 0.
    f = distributions.fit("two-piece-normal", SAMPLE_A)
    assert f.boundary
    assert f.notes
    lo, hi = np.quantile(SAMPLE_A, [0.1, 0.9])
    assert lo - 1e-9 <= f.mode <= hi + 1e-9
    assert min(f.sigma1, f.sigma2) > 0.1
    # The unrestricted optimum really is at the edge with the half-normal likelihood.
    fine_grid = fit_two_piece_normal_batch(SAMPLE_A[None, :], steps=50)
    assert fine_grid.boundary[0]
    # Half-normal at mode = max(x): logL = n/2 log(2/pi) - n/2 log(S1/n) - n/2 (the
    # half-normal MLE, sigma^2 = S1/n).
    n, s1 = 12, float(np.sum((SAMPLE_A - 1.92) ** 2))
    half_normal = n / 2 * np.log(2 / np.pi) - n / 2 * np.log(s1 / n) - n / 2
    assert half_normal == pytest.approx(-13.351681, abs=1e-6)
    assert half_normal > -14.235582  # better than the interior local maximum
    assert f.loglik < half_normal  # ours is the restricted (interior) optimum, as documented


def test_two_piece_normal_batch_matches_single_fits(rng: np.random.Generator) -> None:
    samples = rng.normal(0, 1, (30, 60)) * np.where(rng.random((30, 60)) < 0.5, 0.7, 1.4)
    batch = distributions.fit_batch("two-piece-normal", samples)
    for i in range(0, 30, 7):
        single = distributions.fit("two-piece-normal", samples[i])
        assert batch.loglik[i] == pytest.approx(single.loglik, abs=2e-3)  # grid vs refined


def test_skew_normal_against_scipy_law() -> None:
    # scipy.stats.skewnorm(3, loc=1, scale=2) (computed with scipy): mean 2.5138795132, var
    # 1.7081688195, cdf(2.0) = 0.3892943751, median 2.3439879583.
    f = distributions.SkewNormalFit(xi=1.0, omega=2.0, alpha=3.0)
    assert float(f.cdf(2.0)) == pytest.approx(0.3892943751, abs=1e-10)
    assert float(f.ppf(0.5)) == pytest.approx(2.3439879583, abs=2e-6)
    assert distributions.mean(f) == pytest.approx(2.5138795132, abs=1e-7)
    assert float(f.sd) ** 2 == pytest.approx(1.7081688195, abs=1e-9)
    xs = np.linspace(-3, 8, 23)
    assert f.logpdf(xs) == pytest.approx(stats.skewnorm.logpdf(xs, 3, 1, 2), abs=1e-10)


def test_skew_normal_fit_agrees_with_scipy_on_a_large_sample() -> None:
    # With 4000 draws the penalty is negligible: our penalised MLE and scipy's MLE agree.
    x = stats.skewnorm(3, loc=1, scale=2).rvs(4000, random_state=11)
    ours = distributions.fit("skew-normal", x)
    a, loc, scale = stats.skewnorm.fit(x)
    assert ours.xi == pytest.approx(loc, abs=0.03)
    assert ours.omega == pytest.approx(scale, abs=0.03)
    assert ours.alpha == pytest.approx(a, rel=0.05)
    assert ours.loglik == pytest.approx(stats.skewnorm.logpdf(x, a, loc, scale).sum(), abs=0.5)


def test_skew_normal_wrong_skewness_sample_stays_finite() -> None:
    # g1 = 1.196828 > 0.99527 (the half-normal skewness bound), so no method-of-moments
    # solution, and scipy's
    # MLE runs to the half-normal (a > 1e3, loc ~ min(x)). Ours must stay finite and say so.
    assert stats.skew(WRONG_SKEW) == pytest.approx(1.196828, abs=1e-6)
    a, loc, _ = stats.skewnorm.fit(WRONG_SKEW)
    assert a > 1e3
    assert loc == pytest.approx(WRONG_SKEW.min(), abs=1e-2)
    ours = distributions.fit("skew-normal", WRONG_SKEW)
    assert 0 < ours.alpha < 100
    assert ours.boundary
    assert ours.notes


def test_skew_normal_mode() -> None:
    # Azzalini's approximation of the mode against a numerical maximisation of the density.
    for alpha in (-4.0, -1.0, 0.5, 3.0, 10.0):
        assert skewnormal_mode0(alpha) == pytest.approx(_mode0_exact(alpha), abs=0.01)
    f = distributions.fit("skew-normal", WRONG_SKEW, mode=0.0)
    assert f.mode == pytest.approx(0.0, abs=1e-6)


def test_empirical_cdf_matches_scipy_gaussian_kde(rng: np.random.Generator) -> None:
    x = rng.gamma(2.0, 0.5, 150) - 1.0
    f = distributions.fit("empirical", x)
    kde = stats.gaussian_kde(x, bw_method=f.bandwidth / x.std(ddof=1))
    # The kernel part is scipy's Gaussian KDE; the law mixes it with the fitted normal at
    # weight TAIL_WEIGHT (tests/reference/test_laws_that_hold.py).
    normal = stats.norm(x.mean(), x.std())
    for point in (-1.5, -0.5, 0.0, 0.7, 2.5):
        assert float(f.kernel_cdf(point)) == pytest.approx(
            kde.integrate_box_1d(-np.inf, point), abs=1e-9
        )
        assert float(np.exp(f.kernel_logpdf(point))) == pytest.approx(
            float(kde(point)[0]), rel=1e-9
        )
        mixture = (1 - TAIL_WEIGHT) * kde(point)[0] + TAIL_WEIGHT * normal.pdf(point)
        assert float(np.exp(f.logpdf(point))) == pytest.approx(float(mixture), rel=1e-9)
    # Silverman's rule of thumb (Silverman 1986, eq. 3.31).
    iqr = np.subtract(*np.percentile(x, [75, 25]))
    assert f.bandwidth == pytest.approx(0.9 * min(x.std(), iqr / 1.349) * 150 ** (-0.2))
    q = np.array([0.05, 0.5, 0.95])
    assert f.cdf(f.ppf(q)) == pytest.approx(q, abs=1e-5)


def test_empirical_with_fixed_mode_peaks_there(rng: np.random.Generator) -> None:
    f = distributions.fit("empirical", rng.normal(0.4, 1, 200), mode=0.0)
    grid = np.linspace(-2, 2, 2001)
    assert grid[np.argmax(f.logpdf(grid))] == pytest.approx(0.0, abs=0.01)


def test_given_quantiles_reproduce_their_points() -> None:
    levels = (0.05, 0.25, 0.5, 0.75, 0.95)
    values = tuple(stats.norm.ppf(levels, 0.2, 0.8))
    g = distributions.GivenQuantiles(levels, values)
    assert g.ppf(np.array(levels)) == pytest.approx(values, abs=1e-12)
    # Linear in normal scores, so normal quantiles give back the normal everywhere.
    xs = np.linspace(-3, 3, 13)
    assert g.cdf(xs) == pytest.approx(stats.norm.cdf(xs, 0.2, 0.8), abs=1e-9)
    assert g.logpdf(xs) == pytest.approx(stats.norm.logpdf(xs, 0.2, 0.8), abs=1e-9)


@pytest.mark.parametrize("family", ["normal", "two-piece-normal", "skew-normal", "empirical"])
def test_every_family_is_a_proper_distribution(family: str, rng: np.random.Generator) -> None:
    x = rng.normal(0.1, 0.7, 80) + rng.exponential(0.3, 80)
    f = distributions.fit(family, x)
    q = np.linspace(0.01, 0.99, 25)
    values = f.ppf(q)
    assert np.all(np.diff(values) > 0)
    assert f.cdf(values) == pytest.approx(q, abs=2e-5)
    assert np.isfinite(f.loglik)
    draws = f.rvs(20000, np.random.default_rng(0))
    assert np.mean(draws <= values[12]) == pytest.approx(q[12], abs=0.015)


@pytest.mark.parametrize("family", ["normal", "two-piece-normal", "skew-normal", "empirical"])
@pytest.mark.parametrize("mode", [None, 0.25])
def test_constant_sample_is_fitted_degenerate_finite_and_flagged(
    family: str, mode: float | None
) -> None:
    # A horizon whose past errors are all equal used to raise ValueError, and the fallback
    # (a normal fit) raised the same. Every family now gives a finite, flagged fit. With the
    # mode free, the law is (nearly) a point mass at the common value: for a normal with
    # scale MIN_SCALE, scipy.stats.norm gives the same cdf.
    sample = np.full(12, 0.25)
    f = distributions.fit(family, sample, mode=mode)
    assert CONSTANT_NOTE in f.notes
    assert np.isfinite(f.loglik)
    xs = np.array([0.25 - 1e-3, 0.25 + 1e-3])
    assert f.cdf(xs) == pytest.approx(stats.norm.cdf(xs, 0.25, MIN_SCALE), abs=1e-9)
    assert np.all(np.isfinite(f.ppf(np.array([0.05, 0.5, 0.95]))))
    batch = distributions.fit_batch(family, np.vstack([sample, np.linspace(-1, 1, 12)]))
    assert np.all(np.isfinite(batch.cdf(np.array([[0.3], [0.3]]))))
    assert np.all(np.isfinite(batch.logpdf(np.array([[0.25], [0.3]]))))
    assert CONSTANT_NOTE in batch.notes


@pytest.mark.parametrize("n", [8, 10, 12, 20])
def test_two_piece_normal_small_samples_are_rarely_degenerate(n: int) -> None:
    # Normal samples (the true law is a two-piece normal with sigma1 = sigma2, Wallis 2014):
    # with the mode free in the 10-90% range, 83-91% of fits at n = 8-10 had one scale
    # under a tenth of the other (the profile likelihood peaks at the sample edge). The mode now
    # stays between the k-th smallest and k-th largest, k = max(5, ceil(0.1 n)).
    x = np.random.default_rng(3).normal(size=(2000, n))
    f = fit_two_piece_normal_batch(x)
    ratio = np.minimum(f.sigma1, f.sigma2) / np.maximum(f.sigma1, f.sigma2)
    assert np.mean(ratio < 0.1) < 0.03
    # The remaining near half-normals are flagged.
    assert np.all(f.boundary[ratio < 0.1])
    xs = np.sort(x, axis=1)
    k = max(5, int(np.ceil(0.1 * n)))
    lo, hi = (k - 1, n - k) if n - k > k - 1 else ((n - 1) // 2, (n - 1) // 2 + 1)
    assert np.all((f.mode >= xs[:, lo] - 1e-12) & (f.mode <= xs[:, hi] + 1e-12))


def test_constant_horizon_builds_through_the_pipeline(tmp_path: Path) -> None:
    # The whole method on a track record whose errors are all equal (0.4): it used to stop
    # with a ValueError. The brief builds and says why its probabilities mean little.
    import riskreport
    from tests.conftest import constant_forecast_world

    config = constant_forecast_world(tmp_path, np.full(40, 0.4), distribution="two-piece-normal")
    a = riskreport.assess(config)
    assert any("all the errors are equal" in w.lower() for w in a.warnings)
    assert a.horizons[0].p_inside + a.horizons[0].p_below + a.horizons[0].p_above == (
        pytest.approx(1.0)
    )


# n = 25 errors on which the penalised skew-normal fit started from the method of moments
# stopped at a local optimum 0.111 below the alpha = 0 (normal) candidate.
LOCAL_OPTIMUM = np.array(
    [
        0.58,
        -0.2,
        0.57,
        -0.01,
        -0.56,
        -0.87,
        3.07,
        -0.08,
        -2.02,
        -0.65,
        0.68,
        -0.5,
        1.36,
        1.0,
        -0.15,
        -0.47,
        -1.0,
        -0.7,
        -1.47,
        1.2,
        1.59,
        -1.26,
        -1.18,
        -1.77,
        -0.96,
    ]
)


def _penalised(x: np.ndarray, xi: float, omega: float, alpha: float) -> float:
    # log L (scipy.stats.skewnorm) - C1 log(1 + C2 alpha^2) (Azzalini & Arellano-Valle 2013).
    penalty = PENALTY_C1 * np.log1p(PENALTY_C2 * alpha**2)
    return float(stats.skewnorm.logpdf(x, alpha, xi, omega).sum() - penalty)


def test_skew_normal_fit_reaches_the_global_penalised_optimum() -> None:
    # Independent route: scipy.optimize.minimize (Nelder-Mead) on the same penalised
    # log-likelihood from 13 starting shapes; ours must be at least as good, and at least as
    # good as the alpha = 0 candidate (the normal MLE, where the penalty is 0).
    f = distributions.fit("skew-normal", LOCAL_OPTIMUM)
    ours = _penalised(LOCAL_OPTIMUM, f.xi, f.omega, f.alpha)
    normal = _penalised(LOCAL_OPTIMUM, LOCAL_OPTIMUM.mean(), LOCAL_OPTIMUM.std(), 0.0)
    assert ours >= normal - 1e-9
    best = max(
        -optimize.minimize(
            lambda t: -_penalised(LOCAL_OPTIMUM, t[0], np.exp(t[1]), t[2]),
            [LOCAL_OPTIMUM.mean(), np.log(LOCAL_OPTIMUM.std()), a0],
            method="Nelder-Mead",
            options={"xatol": 1e-10, "fatol": 1e-12, "maxiter": 20000},
        ).fun
        for a0 in np.linspace(-6, 6, 13)
    )
    assert ours >= best - 1e-7


@pytest.mark.parametrize("mode", [None, 0.0])
def test_skew_normal_batch_is_the_same_estimator_as_the_headline(
    rng: np.random.Generator, mode: float | None
) -> None:
    # The bootstrap and the replay (fit_batch) used the method of moments while the headline
    # used penalised MLE (up to 2.4 pp apart in P(inside) with the mode free, 15 pp with it
    # fixed). Now one estimator: every row of a batch equals the single fit of that row.
    samples = rng.normal(0, 1, (12, 40)) + rng.exponential(0.8, (12, 40))
    samples[3, 30:] = np.nan  # rows of different lengths
    batch = distributions.fit_batch("skew-normal", samples, mode=mode)
    for i in range(12):
        row = samples[i][np.isfinite(samples[i])]
        single = distributions.fit("skew-normal", row, mode=mode)
        assert (batch.xi[i], batch.omega[i], batch.alpha[i]) == pytest.approx(
            (single.xi, single.omega, single.alpha), abs=1e-9
        )
        assert batch.loglik[i] == pytest.approx(single.loglik, abs=1e-9)
        band = np.array([-0.5, 1.5])
        p_batch = np.diff(batch.cdf(band[:, None])[:, i])
        assert p_batch == pytest.approx(np.diff(single.cdf(band)), abs=1e-9)


def test_skew_normal_fixed_mode_reaches_the_penalised_optimum(rng: np.random.Generator) -> None:
    # With the mode fixed at 0: xi = -omega m0(alpha), m0 the mode of SN(0, 1, alpha) by
    # scipy.optimize on scipy.stats.skewnorm.logpdf (_mode0_exact); the penalised optimum
    # over (log omega, alpha) by scipy's Nelder-Mead from several starts must not beat ours.
    x = rng.normal(0.3, 1, 60) + rng.exponential(0.7, 60)
    f = distributions.fit("skew-normal", x, mode=0.0)
    assert f.mode == pytest.approx(0.0, abs=1e-9)
    assert f.xi + f.omega * _mode0_exact(f.alpha) == pytest.approx(0.0, abs=1e-6)

    def objective(t: np.ndarray) -> float:
        omega, alpha = float(np.exp(t[0])), float(t[1])
        return -_penalised(x, -omega * _mode0_exact(alpha), omega, alpha)

    best = max(
        -optimize.minimize(objective, [0.0, a0], method="Nelder-Mead").fun for a0 in (-2, 0, 2)
    )
    assert _penalised(x, f.xi, f.omega, f.alpha) >= best - 1e-6
