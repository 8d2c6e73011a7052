"""The judgement skew: a two-piece tilt of a normal is the two-piece normal.

Oracle values computed outside the project with scipy (quadrature of the density, agreeing
to 1e-10 with the closed-form CDF, quantile function and moments) for the (mu, sigma1,
sigma2) form of Wallis (2014), "The two-piece normal, binormal,
or double Gaussian distribution: its origin and rediscoveries", Statistical Science
29(1):106-112, and John (1982).
"""

from __future__ import annotations

import numpy as np
import pytest

from riskreport.laws.distributions import NormalFit, Tilted, mean, tilt_for_skew
from riskreport.laws.probabilities import band_probabilities


def two_piece(mode: float, sigma1: float, sigma2: float) -> Tilted:
    s = (sigma1 + sigma2) / 2
    return Tilted(
        NormalFit(loc=mode, scale=s, loglik=0.0, nobs=1), (sigma2 - sigma1) / (sigma1 + sigma2)
    )


def test_moments_and_quantiles_of_checks_table() -> None:
    # (mu, sigma1, sigma2) = (2.0, 0.8, 1.2): mean mu + sqrt(2/pi)(sigma2 - sigma1) (Wallis
    # 2014, John 1982); median and quantiles by scipy quadrature of the density.
    d = two_piece(2.0, 0.8, 1.2)
    assert mean(d) == pytest.approx(2.3191538243, abs=1e-9)
    assert d.ppf(0.5) == pytest.approx(2.2525140731, abs=1e-9)
    assert d.ppf([0.05, 0.25, 0.75, 0.95]) == pytest.approx(
        [0.77270356, 1.60897887, 2.97466136, 4.07799728], abs=1e-8
    )


def test_negative_skew_row() -> None:
    # (mu, sigma1, sigma2) = (1.5, 1.3, 0.7): quantiles by scipy quadrature of the density.
    d = two_piece(1.5, 1.3, 0.7)
    assert d.ppf(0.5) == pytest.approx(1.1186043982, abs=1e-9)
    assert d.ppf([0.05, 0.25, 0.75, 0.95]) == pytest.approx(
        [-0.79947255, 0.36974909, 1.75627445, 2.52566365], abs=1e-8
    )


def test_band_probabilities_and_mirror() -> None:
    # Band [1, 3], mode 2.0, sigma1 0.9128709292, sigma2 1.1180339887 (the Bank of England
    # sigma = 1 case below); probabilities by scipy quadrature of the density.
    d = two_piece(2.0, 0.9128709292, 1.1180339887)
    p = band_probabilities(d, 1.0, 3.0)
    assert (p.p_below, p.p_inside, p.p_above) == pytest.approx(
        (0.1228552909, 0.6728540028, 0.2042907063), abs=1e-9
    )
    assert float(d.cdf(2.0)) == pytest.approx(0.4494897428, abs=1e-9)  # P(< mode)
    mirror = band_probabilities(two_piece(2.0, 1.1180339887, 0.9128709292), 1.0, 3.0)
    assert (mirror.p_below, mirror.p_above) == pytest.approx((p.p_above, p.p_below), abs=1e-12)


def test_tilt_for_skew_reaches_the_mean_minus_mode() -> None:
    # Britton, Fisher & Whitley (1998), "The Inflation Report projections: understanding the
    # fan chart", BoE Quarterly Bulletin 1998Q1: sigma^2 is the harmonic mean of sigma1^2 and
    # sigma2^2 and the skew is mean - mode = sqrt(2/pi)(sigma2 - sigma1). Solving 1/sigma1^2 +
    # 1/(sigma1 + delta)^2 = 2 with scipy's brentq maps (sigma = 1, mean - mode =
    # 0.1636964377) to sigma1 0.9128709292, sigma2 1.1180339888; here we start from the symmetric normal with the same
    # sigma1 + sigma2 and ask the tilt for that mean minus mode.
    s = (0.9128709292 + 1.1180339888) / 2
    base = NormalFit(loc=2.0, scale=s, loglik=0.0, nobs=1)
    tilt = tilt_for_skew(base, 0.1636964377)
    assert tilt == pytest.approx((1.1180339888 - 0.9128709292) / (2 * s), abs=1e-8)
    assert mean(Tilted(base, tilt)) - 2.0 == pytest.approx(0.1636964377, abs=1e-9)


def test_cdf_inverts_ppf() -> None:
    d = two_piece(0.3, 0.6, 1.4)
    q = np.linspace(0.001, 0.999, 99)
    assert d.cdf(d.ppf(q)) == pytest.approx(q, abs=1e-12)


def test_too_much_skew_is_refused() -> None:
    base = NormalFit(loc=0.0, scale=0.2, loglik=0.0, nobs=1)
    with pytest.raises(ValueError, match="below"):
        tilt_for_skew(base, 5.0)
