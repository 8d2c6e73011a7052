"""The beta recalibration map against scipy.stats.beta (Gneiting & Ranjan 2013, EJS 7)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from riskreport import recalibration
from riskreport.calibration import HorizonReplay
from riskreport.distributions import fit


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
