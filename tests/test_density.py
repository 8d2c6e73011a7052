"""The outcome density at chosen horizons and its chart."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, stats

import riskreport
from riskreport.laws import density
from riskreport.laws.distributions import Distribution
from riskreport.report import charts
from riskreport.report import formatting as fmt
from riskreport.report.sections import outlook
from tests.conftest import Case


def test_curve_is_the_distributions_pdf() -> None:
    # Oracle: scipy.stats pdfs; a skew-normal (Azzalini) so the two curves differ in shape.
    final = stats.skewnorm(3.0, loc=2.0, scale=1.2)
    base = stats.norm(2.3, 0.9)
    c = density.curve(final, base, "2027-05", 18)  # type: ignore[arg-type]
    x = np.array(c.x)
    np.testing.assert_allclose(c.pdf, final.pdf(x), rtol=1e-10, atol=1e-300)
    np.testing.assert_allclose(c.model_based_pdf, base.pdf(x), rtol=1e-10, atol=1e-300)
    # the grid holds at least 99.98% of each distribution (0.01% to 99.99% quantiles)
    assert final.cdf(x[-1]) - final.cdf(x[0]) >= 1 - 2 * density.TAIL - 1e-12


def _case_with(case: Case, line: str) -> riskreport.Assessment:
    case.config = case.config.replace("horizons = 3\n", f"horizons = 3\n{line}\n", 1)
    return riskreport.assess(case.write())


def test_plotted_density_integrates_to_one_and_matches_the_band(case: Case) -> None:
    # The area under the drawn curve is 1 (trapezoid rule, scipy.integrate), and its area
    # up to the lower band edge is p_below = F(lower), the band probability of the brief.
    a = _case_with(case, "density_horizons = [1, 3]")
    assert [c.h for c in a.density] == [1, 3]
    for c in a.density:
        fig = charts.density_figure(a, c)
        line = fig.axes[0].lines[2]  # after the two band-edge lines: the density
        x, y = (np.asarray(v, dtype=float) for v in line.get_data())
        assert integrate.trapezoid(y, x) == pytest.approx(1.0, abs=5e-4)
        row = a.horizon_result(c.h)
        cumulative = integrate.cumulative_trapezoid(y, x, initial=0.0)
        assert np.interp(row.band[0], x, cumulative) == pytest.approx(row.p_below, abs=2e-3)
        assert np.interp(row.band[1], x, cumulative) == pytest.approx(
            row.p_below + row.p_inside, abs=2e-3
        )
        alt = outlook.density_alt(a, c)
        assert c.period in alt
        assert f"inside {fmt.outcome_texts(row.p_below, row.p_inside, row.p_above)[1]}" in alt


def test_default_is_the_policy_horizon_and_bad_values_are_refused(case: Case) -> None:
    a = riskreport.assess(case.write())
    assert [c.h for c in a.density] == [a.policy_horizon]
    with pytest.raises(riskreport.InputError, match="density_horizons"):
        _case_with(case, "density_horizons = [9]")


def test_dist_protocol_is_enough() -> None:
    # The curve needs only ppf and logpdf: a Distribution in the package's sense.
    d: Distribution = stats.norm(0, 1)  # type: ignore[assignment]
    c = density.curve(d, d, "2025-01", 0)
    assert c.pdf == c.model_based_pdf
    assert len(c.x) == density.GRID_POINTS
