"""The prequential bias correction (riskreport.laws.bias) and the pool that weighs it."""

from __future__ import annotations

import re
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from riskreport.laws import bias
from riskreport.laws.distributions import NormalFit, Tilted
from riskreport.pipeline import assess_config
from riskreport.reading import config_reader
from riskreport.replay import pool
from tests.conftest import constant_forecast_world


def _errors(rng: np.random.Generator, n: int = 60, width: int = 4) -> np.ndarray:
    """origins x horizons errors, the last h + 1 rows of horizon h unknown (as in a panel:
    the outcome of origin o at horizon h is known from o + h + 1 on)."""
    e = rng.normal(0.3, 1.0, size=(n, width))
    for h in range(width):
        e[n - h - 1 :, h] = np.nan
    e[rng.random((n, width)) < 0.1] = np.nan  # gaps
    return e


def test_corrections_are_pandas_discounted_means_shrunk_to_zero() -> None:
    # Reference: pandas' exponentially weighted mean (ewm(alpha = 1 - lambda, adjust=True,
    # ignore_na=False)) of each horizon's errors laid out by outcome period, one period
    # before the origin; the shrinkage is the weight sum over it plus the prior (the weight
    # sum computed as the ewm "sum" of the known indicator).
    rng = np.random.default_rng(3)
    e = _errors(rng)
    lam = bias.smoothing(12, 2.0)
    assert lam ** (2.0 * 12) == pytest.approx(0.5)  # the half-life, by definition
    got = bias.corrections(e, 12, 2.0)
    n, width = e.shape
    for h in range(width):
        by_outcome = pd.Series(np.nan, index=range(n + width + 1))
        by_outcome.iloc[np.arange(n) + h] = e[:, h]
        mean = by_outcome.ewm(alpha=1 - lam, adjust=True, ignore_na=False).mean()
        known = by_outcome.notna().astype(float)
        weight = known.ewm(alpha=1 - lam, adjust=True).sum()
        for o in range(1, n):
            t = o - 1  # the last outcome period known at origin o
            if weight.iloc[t] == 0 or np.isnan(mean.iloc[t]):
                assert got[o, h] == 0.0
                continue
            expected = (
                mean.iloc[t] * weight.iloc[t] / (weight.iloc[t] + bias.PRIOR_OUTCOMES * (h + 1))
            )
            assert got[o, h] == pytest.approx(expected, rel=1e-9, abs=1e-12)
    assert np.all(got[0] == 0.0)  # nothing is known at the first origin


@settings(max_examples=30, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(5, 40))
def test_a_correction_never_looks_ahead(seed: int, origin: int) -> None:
    # Changing any error whose outcome comes at or after origin o leaves B(o, .) unchanged.
    rng = np.random.default_rng(seed)
    e = _errors(rng, n=50)
    before = bias.corrections(e, 4, 2.0)
    later = (np.arange(50)[:, None] + np.arange(4)[None, :]) >= origin
    changed = np.where(later & np.isfinite(e), e + 5.0, e)
    after = bias.corrections(changed, 4, 2.0)
    np.testing.assert_array_equal(before[: origin + 1], after[: origin + 1])
    assert np.all(np.isfinite(before))


def test_evidence_shrinkage_keeps_the_first_law_where_the_gain_is_noise() -> None:
    # Two candidates with the same density on every outcome: no gain, so the first keeps all.
    same = np.zeros((2, 50))
    assert pool.shrinkage(same, np.ones(50), np.array([0.5, 0.5]), 50.0) == 1.0
    # A large gain on many outcomes: the prior's floor, EVIDENCE_PRIOR_OUTCOMES / (it + n).
    better = np.vstack([np.full(400, -2.0), np.full(400, -1.0)])
    share = pool.shrinkage(better, np.ones(400), np.array([0.0, 1.0]), 400.0)
    assert share == pytest.approx(
        pool.EVIDENCE_PRIOR_OUTCOMES / (pool.EVIDENCE_PRIOR_OUTCOMES + 400)
    )


# Two-piece-normal errors, mode 0.2, scales 0.4 (below) and 0.9 (above): the mean error is
# 0.2 + sqrt(2 / pi) (0.9 - 0.4) = +0.60 pp (Wallis 2014, Statistical Science 29(1), the
# moments of the two-piece normal), a bias the point forecast does not carry.
TRUTH = Tilted(NormalFit(loc=0.2, scale=0.65, loglik=0.0, nobs=1), (0.9 - 0.4) / 1.3)


def _tpn_world(tmp_path: Path, seed: int):  # type: ignore[no-untyped-def]
    errors = TRUTH.rvs(401, np.random.default_rng(seed))
    folder = tmp_path / str(seed)
    folder.mkdir()
    path = constant_forecast_world(
        folder, errors, band=(1.8, 3.0), centre="auto", predictive="student-t", spread="auto"
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return assess_config(config_reader.load(path), search=folder / "none")


def test_defaults_correct_a_lasting_bias_and_say_so(tmp_path: Path) -> None:
    lower, upper = -0.2, 1.0  # the band (1.8, 3.0) around the forecast 2.0, as errors
    below = float(TRUTH.cdf(lower))
    inside = float(TRUTH.cdf(upper)) - below
    truth = np.array([below, inside, 1 - below - inside])
    offs = []
    for seed in (99, 100, 101):
        a = _tpn_world(tmp_path, seed)
        r = a.horizons[0]
        offs.append(np.abs(np.array([r.p_below, r.p_inside, r.p_above]) - truth).mean())
        assert a.uncertainty.pool is not None
        corrected = sum(w.weight for w in a.uncertainty.pool.weights if bias.LABEL in w.candidate)
        assert corrected > 0.8
        said = [w for w in a.warnings if "bias correction learned from past errors" in w]
        assert len(said) == 1
        assert re.search(r"by up to \+0\.[4-7]\d pp", said[0])
        assert not any("do not correct for this bias" in w for w in a.warnings)
    # The normal law cannot take the skew: the best normal (the true mean and sd) is 0.024
    # off on average over the three probabilities; with the centre on the point forecast
    # the defaults were about 0.13 off (P(inside) by 0.19-0.21). Sampling noise on 400
    # errors adds about 0.02 (the binomial standard error of P(inside)).
    assert max(offs) < 0.06, offs
    assert np.mean(offs) < 0.045, offs


def test_the_brief_says_how_far_the_correction_moves_the_centre(tmp_path: Path) -> None:
    from riskreport.report.sections import method_choice, summary

    a = _tpn_world(tmp_path, 100)
    assert a.uncertainty.pool is not None
    weight = sum(w.weight for w in a.uncertainty.pool.weights if bias.LABEL in w.candidate)
    policy = a.policy
    moved = policy.centre - policy.point_forecast
    # The pooled centre moves by the corrected laws' weighted corrections: about the mean
    # error (+0.60 pp) times their weight, shrunk a little toward zero.
    assert 0.4 < moved < 0.75
    sentence = next(t for t in method_choice.adjustment_text(a) if t.startswith("Bias:"))
    assert f"carry {weight:.2f} of the pool's weight" in sentence
    assert f"moves the centre by +{moved:.1f} pp" in sentence
    label = summary.centre_label(a)
    assert label.startswith("the models' forecast corrected for their recent bias")
    assert f"+{moved:.1f} percentage points" in label


def test_the_hard_choice_is_offered_no_correction_and_says_the_bias(tmp_path: Path) -> None:
    errors = TRUTH.rvs(401, np.random.default_rng(99))
    path = constant_forecast_world(
        tmp_path, errors, band=(1.8, 3.0), centre="auto", distribution="best-past-score"
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        a = assess_config(config_reader.load(path), search=tmp_path / "none")
    assert a.uncertainty.pool is None
    assert a.policy.centre == pytest.approx(a.policy.point_forecast, abs=1e-9)
    said = [w for w in a.warnings if "do not correct for this bias" in w]
    assert len(said) == 1
    assert "offered no bias correction" in said[0]
