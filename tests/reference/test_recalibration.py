"""The beta recalibration map against scipy.stats.beta (Gneiting & Ranjan 2013, EJS 7)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from riskreport.laws.distributions import fit
from riskreport.replay import recalibration
from riskreport.replay.calibration import HorizonReplay


def test_method_of_moments_matches_scipy(rng: np.random.Generator) -> None:
    # scipy.stats.beta.fit(method="MM") with the support fixed to [0, 1] solves the same
    # two moment equations numerically.
    pits = rng.beta(2.0, 3.0, size=400)
    a, b = recalibration.beta_moments(pits[None, :])
    a_ref, b_ref, _, _ = stats.beta.fit(pits, method="MM", floc=0, fscale=1)
    assert float(a[0]) == pytest.approx(a_ref, rel=1e-4)
    assert float(b[0]) == pytest.approx(b_ref, rel=1e-4)


def test_recalibrated_cdf_is_the_beta_cdf_of_the_base_cdf() -> None:
    base = fit("normal", np.linspace(-2, 2, 41))
    mapped = recalibration.Recalibrated(base, 0.7, 1.4)
    x = np.linspace(-4, 4, 81)
    expected = stats.beta.cdf(stats.norm.cdf(x, base.loc, base.scale), 0.7, 1.4)
    np.testing.assert_allclose(mapped.cdf(x), expected, rtol=1e-10, atol=1e-14)
    # A coherent CDF: increasing, and the quantile function inverts it.
    assert np.all(np.diff(mapped.cdf(x)) >= 0)
    q = np.array([0.05, 0.25, 0.5, 0.75, 0.95])
    np.testing.assert_allclose(mapped.cdf(mapped.ppf(q)), q, atol=1e-10)
    # The density integrates to one (scipy quadrature of exp(logpdf)).
    grid = np.linspace(-12, 12, 40001)
    area = np.trapezoid(np.exp(mapped.logpdf(grid)), grid)
    assert area == pytest.approx(1.0, abs=1e-4)


def test_replay_map_at_an_origin_uses_only_earlier_pits(rng: np.random.Generator) -> None:
    n, h = 120, 2
    origins = np.arange(30, 30 + n)
    pit = rng.beta(2.0, 2.0, n)
    run = HorizonReplay(
        "normal", h, origins, pit, np.full((n, 3), 1 / 3), np.ones(n, int), np.zeros((n, 3)),
        np.zeros(n), np.zeros(n),
    )  # fmt: skip
    a, b, count = recalibration.replay_maps(run)
    j = 100  # the map at origin row origins[j] knows PITs with origin + h <= origin_j - 1
    known = origins + h <= origins[j] - 1
    assert count[j] == known.sum()
    a_ref, b_ref, _, _ = stats.beta.fit(pit[known], method="MM", floc=0, fscale=1)
    assert a[j] == pytest.approx(a_ref, rel=1e-4)
    assert b[j] == pytest.approx(b_ref, rel=1e-4)
    assert a[0] == b[0] == 1.0  # too few PITs known: the identity map


def _run(pit: np.ndarray, h: int = 0) -> HorizonReplay:
    n = pit.size
    return HorizonReplay(
        "normal", h, np.arange(20, 20 + n), pit, np.full((n, 3), 1 / 3), np.ones(n, int),
        np.zeros((n, 3)), np.zeros(n), np.zeros(n),
    )  # fmt: skip


def test_tracking_matches_a_direct_loop_with_delayed_feedback(rng: np.random.Generator) -> None:
    # Independent route: the adaptive conformal update of Gibbs & Candes (2021, NeurIPS 34,
    # eq. 2), alpha_{t+1} = alpha_t + gamma (tau - err_t), one level at a time, with the
    # feedback of the forecast made at t arriving after its outcome t + h (Zaffran et al.
    # 2022, ICML, delayed feedback).
    h, gamma = 2, recalibration.STEP
    pit = rng.beta(2.0, 2.0, 150)
    used, _ = recalibration.tracking_levels(_run(pit, h))
    for k, tau in enumerate(recalibration.LEVELS):
        alpha, levels = tau, []
        for t in range(pit.size):
            if t - h - 1 >= 0:  # the outcome of forecast t - h - 1 is known at t
                s = t - h - 1
                alpha += gamma * (tau - float(pit[s] <= levels[s]))
            levels.append(alpha)
        np.testing.assert_allclose(used[:, k], levels, atol=1e-12)


def test_tracking_long_run_miss_rate_is_within_the_published_bound(
    rng: np.random.Generator,
) -> None:
    # Gibbs & Candes (2021), Prop. 4.1: |mean(err) - tau| <= (max(a1, 1 - a1) + gamma) /
    # (gamma T), whatever the PITs' law (here too-wide ranges: Beta(3, 3) PITs).
    pit = rng.beta(3.0, 3.0, 3000)
    used, _ = recalibration.tracking_levels(_run(pit))
    for k, tau in enumerate(recalibration.LEVELS):
        miss = np.mean(pit <= used[:, k])
        bound = (max(tau, 1 - tau) + recalibration.STEP) / (recalibration.STEP * pit.size)
        assert abs(miss - tau) <= bound + 1e-12
    # The constant level would miss by far more (so the check has power).
    assert abs(np.mean(pit <= 0.05) - 0.05) > 0.03


def test_tracked_distribution_is_a_coherent_cdf() -> None:
    base = fit("normal", np.linspace(-2, 2, 41))
    u = (0.0, 0.02, 0.2, 0.5, 0.8, 0.99, 1.0)
    v = (0.0, *recalibration.LEVELS, 1.0)
    mapped = recalibration.Tracked(base, u, v)
    x = np.linspace(-5, 5, 201)
    assert np.all(np.diff(mapped.cdf(x)) >= 0)
    q = np.array([0.01, 0.05, 0.3, 0.5, 0.75, 0.95, 0.99])
    np.testing.assert_allclose(mapped.cdf(mapped.ppf(q)), q, atol=1e-10)
    # G(F(x)) at the knots: the quantile of level tau is the base quantile of level u.
    np.testing.assert_allclose(
        mapped.ppf(np.array(recalibration.LEVELS)),
        stats.norm.ppf(u[1:-1], base.loc, base.scale),
        rtol=1e-9,
    )
    grid = np.linspace(-12, 12, 80001)
    assert np.trapezoid(np.exp(mapped.logpdf(grid)), grid) == pytest.approx(1.0, abs=1e-3)
