"""Combination weights against reference values, statsmodels OLS and scipy's constrained
least squares.

Oracles, computed outside the project with numpy, statsmodels OLS and scipy's SLSQP on a
12-period example with three forecasts (and a fourth that makes non-negativity bind):
Bates & Granger (1969), Oper. Res. Q. 20:451-468, inverse-MSE; Aiolfi & Timmermann (2006),
J. Econometrics 135:31-53, inverse rank; Granger & Ramanathan (1984), J. Forecasting
3:197-204, variants (a) with intercept, (b) sum to one, (c) sum to one and non-negative
(journal pages recalled from memory); Stock & Watson (2004) shrinkage computed by hand
from (b).
"""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm
from scipy import optimize

from riskreport.forecasts.combination import weights

Y = np.array([2.1, 2.5, 1.8, 3.0, 2.7, 2.2, 1.9, 2.4, 3.1, 2.8, 2.0, 2.6])
F = np.column_stack(
    [
        [2.0, 2.2, 2.0, 2.6, 2.5, 2.3, 2.1, 2.2, 2.7, 2.6, 2.2, 2.4],
        [2.3, 2.9, 2.1, 3.4, 2.9, 2.0, 1.6, 2.8, 3.5, 2.6, 1.8, 3.0],
        [2.2, 2.4, 1.6, 2.7, 2.9, 2.5, 2.2, 2.1, 2.8, 3.0, 2.4, 2.3],
    ]
)
F4 = np.column_stack([F, [2.0, 2.0, 2.2, 2.4, 2.3, 2.4, 2.2, 2.15, 2.45, 2.6, 2.3, 2.25]])


@pytest.mark.parametrize(
    ("method", "expected"),
    [
        ("inverse-mse", (0.40867486, 0.24589758, 0.34542756)),
        ("rank", (6 / 11, 2 / 11, 3 / 11)),
        ("ols", (0.51669969, 0.40464407, 0.28313869)),
        ("ols-sum-to-one", (0.28388146, 0.41177268, 0.30434586)),
        ("ols-nonnegative", (0.28388146, 0.41177268, 0.30434586)),
        # Stock & Watson (2004) shrinkage of GR (b) toward 1/3, kappa = 0.25, by hand: the
        # 12 rows are the regression's observations (the paper's t - h - T0), so
        # lambda = 1 - 0.25 * 3 / (12 - 3) = 11/12 and w = 11/12 GR(b) + (1/12) / 3.
        ("shrink", tuple(11 / 12 * np.array([0.28388146, 0.41177268, 0.30434586]) + 1 / 36)),
        ("equal", (1 / 3, 1 / 3, 1 / 3)),
    ],
)
def test_weight_oracles(method: str, expected: tuple[float, ...]) -> None:
    assert weights(method, F, Y) == pytest.approx(expected, abs=1e-8)


def test_nonnegativity_binds_with_a_fourth_forecast() -> None:
    # Granger & Ramanathan (b) gives f4 a weight of -0.50088722 (statsmodels OLS); (c), the
    # non-negative solution (scipy SLSQP), sets it to 0 and keeps the three-forecast weights.
    assert weights("ols-sum-to-one", F4, Y) == pytest.approx(
        (1.00086341, 0.29359941, 0.20642440, -0.50088722), abs=1e-7
    )
    assert weights("ols-nonnegative", F4, Y) == pytest.approx(
        (0.28388146, 0.41177268, 0.30434586, 0.0), abs=1e-7
    )


def test_ols_matches_statsmodels(rng: np.random.Generator) -> None:
    f = rng.normal(2, 1, size=(60, 4))
    y = f @ [0.4, 0.3, 0.2, 0.1] + rng.normal(0, 0.3, 60)
    params = sm.OLS(y, sm.add_constant(f)).fit().params
    assert weights("ols", f, y) == pytest.approx(params[1:], abs=1e-8)
    # Sum to one: regress y - f_k on (f_i - f_k) without a constant (Granger & Ramanathan
    # 1984, variant (b)).
    beta = sm.OLS(y - f[:, -1], f[:, :-1] - f[:, [-1]]).fit().params
    assert weights("ols-sum-to-one", f, y) == pytest.approx([*beta, 1 - beta.sum()], abs=1e-8)


def test_nonnegative_matches_scipy_constrained_least_squares(rng: np.random.Generator) -> None:
    for _ in range(5):
        f = rng.normal(2, 1, size=(40, 4))
        y = f @ rng.dirichlet(np.ones(4)) + rng.normal(0, 0.5, 40) - 0.8 * f[:, 3]
        solution = optimize.minimize(
            lambda w, f=f, y=y: np.sum((y - f @ w) ** 2),
            np.full(4, 0.25),
            method="SLSQP",
            bounds=[(0, 1)] * 4,
            constraints=({"type": "eq", "fun": lambda w: w.sum() - 1},),
            options={"ftol": 1e-14, "maxiter": 500},
        )
        ours = weights("ols-nonnegative", f, y)
        assert ours == pytest.approx(solution.x, abs=1e-5)
        assert np.sum((y - f @ ours) ** 2) <= solution.fun + 1e-10


def test_median_and_trimmed_shares() -> None:
    # The median of [2.0, 2.4, 2.5, 2.9, 3.6] is 2.5 and the 20% trimmed mean 2.6
    # (scipy.stats.trim_mean(x, 0.2) cuts one value from each end of five).
    row = np.array([[2.9, 2.0, 3.6, 2.5, 2.4]])
    assert row[0] @ weights("median", row, [0.0]) == pytest.approx(2.5)
    assert row[0] @ weights("trimmed", row, [0.0]) == pytest.approx(2.6)


def test_given_needs_one_column() -> None:
    assert weights("given", F[:, :1], Y).tolist() == [1.0]
    with pytest.raises(ValueError, match="one combined forecast"):
        weights("given", F, Y)
