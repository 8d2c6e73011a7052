"""The board's next questions checked against outside references and on a real history.

- The move that makes P(inside) = 0.5 and the best move, for normal laws, against
  scipy.stats.norm (the normal CDF) and the closed forms that hold for it.
- Wilson's score interval (Wilson 1927, "Probable inference, the law of succession, and
  statistical inference", JASA 22, 209-212, eq. for the interval of p given n) written out,
  against statsmodels ``proportion_confint(method="wilson")`` as the code calls it.
- Shapley's value on a game whose value is known (Shapley 1953, "A value for n-person
  games": symmetry and efficiency give 1/3 each in the three-player majority game; an
  additive game gives each player its own contribution).
- On a real quarterly history (statsmodels macrodata, US CPI, as
  tests/reference/test_real_quarterly_history.py builds it) in two rounds: the three keys
  are present and internally exact.
"""

from __future__ import annotations

import json
from collections import defaultdict
from pathlib import Path

import numpy as np
import pytest
from scipy import stats
from statsmodels.stats.proportion import proportion_confint

import riskreport
from riskreport.laws import sensitivity
from riskreport.replay import situations
from riskreport.rounds import attribution, change
from tests.reference.test_real_quarterly_history import (  # noqa: F401 (fixture)
    History,
    _config,
    history,
)


def test_shift_reaches_even_for_a_normal_law() -> None:
    law = stats.norm(3.4, 0.6)
    shift = sensitivity.shift_to_even(law, 2.0, 4.0)
    assert shift is not None
    # the normal CDF itself (scipy.stats.norm), moved by the shift
    assert law.cdf(4.0 - shift) - law.cdf(2.0 - shift) == pytest.approx(0.5, abs=1e-9)
    # P(inside) now is above 0.5 (0.81): both directions reach 0.5, the smaller one is given
    other = sensitivity.shift_to_even(stats.norm(3.4 + shift, 0.6), 2.0, 4.0)
    assert other is not None
    assert abs(shift) <= abs(shift + other) + 1e-9


def test_shift_with_a_one_sided_band_is_the_median_to_the_edge() -> None:
    # With the lower edge 30 sd away, P(inside) = Phi((4 - 3 - s) / 0.5): 0.5 exactly when
    # the median sits on the upper edge, s = 1 (closed form).
    law = stats.norm(3.0, 0.5)
    assert sensitivity.shift_to_even(law, -12.0, 4.0) == pytest.approx(1.0, abs=1e-8)


def test_best_move_of_a_normal_law_centres_it_on_the_band() -> None:
    # Symmetric law: P(inside) is largest with the mean on the band's midpoint, where it is
    # 2 Phi(t / sd) - 1 (t the half-width; closed form).
    law = stats.norm(3.7, 1.5)
    top, p_top = sensitivity.best_shift(law, 2.0, 4.0)
    assert top == pytest.approx(-0.7, abs=1e-6)
    assert p_top == pytest.approx(2 * stats.norm.cdf(1.0 / 1.5) - 1, abs=1e-9)
    # 2 Phi(1 / 1.5) - 1 = 0.495 < 0.5: no move reaches 0.5
    assert sensitivity.shift_to_even(law, 2.0, 4.0) is None


def test_fixed_shifts_are_the_normal_cdf() -> None:
    law = stats.norm(2.5, 0.8)
    r = sensitivity.row(law, (2.0, 4.0), period="2027-01", h=3, centre=2.5)
    expected = [
        stats.norm.cdf(4.0, 2.5 + s, 0.8) - stats.norm.cdf(2.0, 2.5 + s, 0.8)
        for s in sensitivity.FIXED_SHIFTS
    ]
    got = [
        r.p_inside_shift_minus_1,
        r.p_inside_shift_minus_0_5,
        r.p_inside_shift_minus_0_25,
        r.p_inside_shift_plus_0_25,
        r.p_inside_shift_plus_0_5,
        r.p_inside_shift_plus_1,
    ]
    np.testing.assert_allclose(got, expected, atol=1e-12)


@pytest.mark.parametrize(("share", "n_eff"), [(0.9, 20.0), (0.75, 13.7), (0.5, 4.4), (1.0, 2.6)])
def test_wilson_interval_on_the_effective_count(share: float, n_eff: float) -> None:
    # Wilson (1927): (p + z^2 / 2n +- z sqrt(p (1 - p) / n + z^2 / 4n^2)) / (1 + z^2 / n)
    z = stats.norm.ppf(0.95)
    centre = (share + z * z / (2 * n_eff)) / (1 + z * z / n_eff)
    half = z * np.sqrt(share * (1 - share) / n_eff + z * z / (4 * n_eff**2)) / (1 + z * z / n_eff)
    lo, hi = situations.wilson_interval(share, n_eff) or (np.nan, np.nan)
    assert (lo, hi) == pytest.approx((centre - half, centre + half), abs=1e-12)
    # and the library route named in the module (statsmodels proportion_confint)
    ref = proportion_confint(share * n_eff, n_eff, alpha=0.1, method="wilson")
    assert (lo, hi) == pytest.approx(ref, abs=1e-12)


def test_shapley_of_the_majority_game() -> None:
    # Three players, a coalition of two or more wins: symmetry and efficiency give 1/3 each.
    values = attribution.shapley(
        ["a", "b", "c"], lambda mix: float(len(mix) >= 2), start=0.0, end=1.0
    )
    assert values == pytest.approx({"a": 1 / 3, "b": 1 / 3, "c": 1 / 3}, abs=1e-12)


def test_shapley_of_an_additive_game_is_each_players_own_part() -> None:
    own = {"a": 0.3, "b": -0.1, "c": 0.05}
    values = attribution.shapley(
        list(own), lambda mix: sum(own[m] for m in mix), start=0.0, end=sum(own.values())
    )
    assert values == pytest.approx(own, abs=1e-12)


def test_linear_attribution_is_each_models_weighted_change_with_an_intercept() -> None:
    # ols has an intercept and is not normalised: the game is additive, so each model's
    # term is w_now f_now - w_before f_before exactly (Shapley's dummy/additivity axioms).
    before = attribution.RoundInputs(
        {"a": 2.0, "b": 3.0}, {"a": 0.7, "b": 0.5}, 0.1, 0.1 + 1.4 + 1.5, 3.0, 3.0, 3.0
    )
    now = attribution.RoundInputs(
        {"a": 2.5, "b": 3.0}, {"a": 0.6, "b": -0.2}, 0.3, 0.3 + 1.5 - 0.6, 1.2, 1.2, 1.2
    )
    terms = {(t, m): x for t, m, x in attribution.split("ols", before, now)}
    assert terms[("model", "a")] == pytest.approx(0.6 * 2.5 - 0.7 * 2.0, abs=1e-12)
    assert terms[("model", "b")] == pytest.approx(-0.2 * 3.0 - 0.5 * 3.0, abs=1e-12)
    assert terms[("intercept", None)] == pytest.approx(0.2, abs=1e-12)
    assert sum(terms.values()) == pytest.approx(now.centre - before.centre, abs=1e-12)


def _two_rounds(built: History, tmp_path: Path) -> tuple[riskreport.Assessment, dict]:
    config = _config(built, "questions")
    earlier = riskreport.assess(config, as_of="2009Q2")
    previous = tmp_path / "assessment-2009Q2.json"
    previous.write_text(earlier.to_json())
    now = riskreport.assess(config, previous=previous)
    return now, json.loads(now.to_json())


def test_real_quarterly_history_answers_the_three_questions(
    history: History,  # noqa: F811 (the imported fixture)
    tmp_path: Path,
) -> None:
    a, data = _two_rounds(history, tmp_path)
    for key in ("sensitivity_to_centre", "record_by_situation", "attribution", "model_forecasts"):
        assert data[key], key
    # The shift gives P(inside) = 0.5 to 0.02 with the published percentiles moved by it.
    for r, row in zip(a.sensitivity_to_centre, a.horizons, strict=True):
        if r.shift_to_even is None:
            assert r.p_inside_max < 0.5
            continue
        side = change.side_of(row)
        assert side.prob(row.centre + r.shift_to_even, row.band) == pytest.approx(0.5, abs=0.02)
    # The three sides partition the replay's rows at the policy horizon; their n-weighted
    # 90% coverage is the overall one (the calibration record's).
    at = [r for r in a.record_by_situation if r.h == a.policy_horizon]
    sides = [r for r in at if r.situation in situations.SIDES]
    overall = next(
        c for c in a.calibration.coverage if c.h == a.policy_horizon and c.nominal == 0.9
    )
    assert sum(r.n for r in sides) == overall.n
    weighted = sum(r.n * (r.coverage_90 or 0.0) for r in sides) / overall.n
    assert weighted == pytest.approx(overall.observed, abs=1e-12)
    assert sum(r.today for r in sides) == 1
    # The attribution adds up to the change of each period's centre.
    total: dict[str, float] = defaultdict(float)
    for r in a.attribution:
        total[r.period] += r.centre_change
    previous = {
        r["period"]: r["centre"]
        for r in json.loads((tmp_path / "assessment-2009Q2.json").read_text())["horizons"]
    }
    now = {r.period: r.centre for r in a.horizons}
    assert set(total) == set(previous) & set(now)
    for period, value in total.items():
        assert value == pytest.approx(now[period] - previous[period], abs=1e-6)
    assert {r.model for r in a.leave_one_out} == {"last-value", "ar1", "mean4", "anchored"}


def test_previous_round_without_model_forecasts_is_recomputed(
    history: History,  # noqa: F811 (the imported fixture)
    tmp_path: Path,
) -> None:
    # A previous brief written before model forecasts were stored: its round is rebuilt from
    # the forecasts file as of its as_of; with unchanged inputs the split is the same.
    a, _ = _two_rounds(history, tmp_path)
    path = tmp_path / "assessment-2009Q2.json"
    old = json.loads(path.read_text())
    del old["model_forecasts"]
    older = tmp_path / "older" / "assessment-2009Q2.json"
    older.parent.mkdir()
    older.write_text(json.dumps(old))
    again = riskreport.assess(_config(history, "questions"), previous=older)
    stored = {(r.period, r.term, r.model): r.centre_change for r in a.attribution}
    rebuilt = {(r.period, r.term, r.model): r.centre_change for r in again.attribution}
    recomputed = {k: v for k, v in rebuilt.items() if k[1] == "previous round recomputed"}
    assert recomputed
    assert all(abs(v) < 1e-9 for v in recomputed.values())
    common = {k: v for k, v in rebuilt.items() if k[1] != "previous round recomputed"}
    assert common == pytest.approx(stored, abs=1e-9)
