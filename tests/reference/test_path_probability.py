"""Joint probability of staying inside the band: Gaussian copula on two-piece normal margins.

Oracle, computed outside the project with scipy.stats.multivariate_normal (Genz's
quasi-Monte Carlo integration of the Gaussian copula) and confirmed by 4e5 simulated draws:
TPN margins for h = 1..4 with modes (2.4, 2.2, 2.0,
2.0), sigma1 (0.5, 0.7, 0.8, 0.9), sigma2 (0.6, 0.9, 1.1, 1.2), band [1, 3]; with
R_ij = rho^|i-j|, P(all four inside) = 0.350699 at rho = 0.5 and 0.463488 at rho = 0.8;
with rho = 0 it is the product 0.284309. Monte Carlo tolerance 2e-3: with 4e5 draws the
standard error of a probability is below 8e-4.
The copula recipe follows Smith & Vahey (2016), JBES 34(3):416-434.
"""

from __future__ import annotations

import numpy as np
import pytest

from riskreport.laws.distributions import Distribution, NormalFit, Tilted
from riskreport.laws.probabilities import (
    band_probabilities,
    normal_scores_correlation,
    path_probabilities,
    simulate_joint,
)

MODES = (2.4, 2.2, 2.0, 2.0)
SIGMA1 = (0.5, 0.7, 0.8, 0.9)
SIGMA2 = (0.6, 0.9, 1.1, 1.2)


def margins() -> list[Distribution]:
    return [
        Tilted(NormalFit(loc=m, scale=(a + b) / 2, loglik=0.0, nobs=1), (b - a) / (a + b))
        for m, a, b in zip(MODES, SIGMA1, SIGMA2, strict=True)
    ]


def test_marginal_probabilities() -> None:
    inside = [band_probabilities(d, 1.0, 3.0).p_inside for d in margins()]
    assert inside == pytest.approx([0.8245987, 0.75175631, 0.70069895, 0.65454448], abs=1e-7)


@pytest.mark.parametrize(("rho", "expected"), [(0.0, 0.284309), (0.5, 0.350699), (0.8, 0.463488)])
def test_inside_throughout(rho: float, expected: float) -> None:
    k = np.arange(4)
    corr = rho ** np.abs(k[:, None] - k[None, :])
    draws = simulate_joint(margins(), corr, 400_000, np.random.default_rng(3))
    throughout, back_by = path_probabilities(draws, np.full(4, 1.0), np.full(4, 3.0))
    assert throughout[-1] == pytest.approx(expected, abs=2e-3)
    assert throughout[0] == pytest.approx(0.8245987, abs=2e-3)
    # Frechet upper bound: the joint probability cannot exceed min p_h (Nelsen 2006, An
    # Introduction to Copulas, 2nd ed., section 2.5; section number recalled from memory).
    assert throughout[-1] <= 0.65454448 + 2e-3
    assert np.all(np.diff(throughout) <= 0)
    assert np.all(np.diff(back_by) >= 0)


def test_normal_scores_correlation_recovers_a_known_correlation(rng: np.random.Generator) -> None:
    # Normal scores of a bivariate normal sample estimate its correlation (van der Waerden).
    z = rng.multivariate_normal([0, 0], [[1, 0.6], [0.6, 1]], size=4000)
    errors = np.column_stack([z[:, 0], np.exp(z[:, 1])])  # a monotone margin leaves ranks alone
    corr = normal_scores_correlation(errors)
    assert corr[0, 1] == pytest.approx(0.6, abs=0.04)
    assert np.all(np.linalg.eigvalsh(corr) > 0)
