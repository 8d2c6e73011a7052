"""The pipeline's properties: no look-ahead, probabilities that add up, judgement and
model handling (DEVELOPERS.md, The statistics)."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

import riskreport
from riskreport.assessment import FamilyScore, Quantiles, ScheduledBand, SelectionRecord
from riskreport.files.serialise import plain
from riskreport.forecasts import combination
from riskreport.laws.probabilities import QUANTILE_LEVELS
from tests.conftest import Case, Result, constant_forecast_world


def _json(case: Case, **kwargs: str) -> dict:
    return riskreport.assess(case.write(), **kwargs).to_dict()


def test_probabilities_add_to_one_at_every_horizon(case: Case) -> None:
    data = _json(case)
    for row in data["horizons"] + data["model_based_horizons"]:
        assert row["p_below"] + row["p_inside"] + row["p_above"] == pytest.approx(1.0, abs=1e-12)
        lo, hi = row["p_inside_interval"]
        assert 0 <= lo <= hi <= 1
        q = [row["quantiles"][k] for k in ("0.05", "0.1", "0.25", "0.5", "0.75", "0.9", "0.95")]
        assert q == sorted(q)


def test_no_look_ahead(case: Case) -> None:
    # Outcomes after as_of and forecast rounds after as_of must not move anything.
    before = _json(case, as_of="2023-06")
    for row in case.actuals[1:]:
        if row[0] > "2023-06":
            row[1] = f"{float(row[1]) + 5.0:.3f}"
    for row in case.forecasts[1:]:
        if row[0] > "2023-06":
            row[3] = f"{float(row[3]) - 3.0:.3f}"
    after = _json(case, as_of="2023-06")
    for key in ("horizons", "path", "accuracy", "combination"):
        assert after[key] == before[key]


def test_rows_order_does_not_matter(case: Case) -> None:
    before = _json(case)
    header, rows = case.forecasts[0], case.forecasts[1:]
    case.forecasts = [header, *rows[::-1]]
    after = _json(case)
    assert after["horizons"] == before["horizons"]


def test_judgement_moves_only_its_periods(case: Case) -> None:
    case.config += (
        '\n[[judgement]]\nfrom = "2025-02"\nto = "2025-02"\nshift = 0.3\nscale = 1.2\n'
        'skew = 0.1\nreason = "test"\n'
    )
    data = _json(case)
    for final, base in zip(data["horizons"], data["model_based_horizons"], strict=True):
        if final["period"] == "2025-02":
            assert final["centre"] == pytest.approx(base["centre"] + 0.3, abs=1e-12)
            assert final["spread"] > base["spread"] * 1.2  # the tilt adds spread too
            assert final["p_inside"] != base["p_inside"]
        else:
            assert final == base
    assert data["judgement"][0]["periods"] == ["2025-02"]
    assert data["judgement"][0]["reason"] == "test"


def test_skew_adds_mean_minus_mode() -> None:
    """The judgement's skew unit: pp added to mean minus mode. The means come from scipy's
    quadrature of the quantile function (E[X] = integral_0^1 Q(u) du), an independent route;
    on a normal base the result must be the two-piece normal with sigma2/sigma1 = (1+k)/(1-k),
    whose mean minus mode is sqrt(2/pi)(sigma2 - sigma1) (John 1982; Wallis 2014, Statistical
    Science 29(1):106-112)."""
    from scipy import integrate

    from riskreport.laws import distributions
    from riskreport.laws.judgement import apply_one
    from riskreport.reading.config import Judgement

    base = distributions.Adjusted(distributions.fit("normal", [-1.0, -0.2, 0.1, 0.4, 0.9]), shift=2)
    judged = apply_one(base, Judgement(0, 0, shift=0.0, scale=1.5, skew=0.25, reason="r"))

    def mean(d: object) -> float:
        return integrate.quad(lambda u: float(d.ppf(u)), 0, 1, limit=200)[0]  # type: ignore[attr-defined]

    assert mean(judged) - judged.mode == pytest.approx(
        1.5 * (mean(base) - base.mode) + 0.25, abs=1e-6
    )
    sd = 1.5 * distributions.spread(base)
    tilt = judged.base.tilt  # type: ignore[attr-defined]
    sigma1, sigma2 = sd * (1 - tilt), sd * (1 + tilt)
    assert np.sqrt(2 / np.pi) * (sigma2 - sigma1) == pytest.approx(0.25, abs=1e-8)


def test_spread_does_not_shrink_with_horizon(case: Case) -> None:
    data = _json(case)
    spreads = [row["spread"] for row in data["model_based_horizons"]]
    assert np.all(np.diff(spreads) >= -1e-12)


def test_model_without_current_round_is_left_out(case: Case) -> None:
    case.forecasts = [r for r in case.forecasts if not (r[2] == "c" and r[0] == "2024-12")]
    assessment = riskreport.assess(case.write())
    weights = assessment.combination.weights
    assert {w.model for w in weights} == {"a", "b"}
    assert all(w.weight == pytest.approx(0.5) for w in weights)
    assert any("'c' has no forecast in the current round" in w for w in assessment.warnings)


def test_single_model_file_is_a_given_combination(case: Case) -> None:
    case.forecasts = [[r[0], r[1], r[3]] for r in case.forecasts if r[2] in ("model", "a")]
    case.forecasts[0] = ["origin", "period", "value"]
    data = _json(case)
    assert data["combination"]["method"] == "given"


def test_given_with_several_models_is_refused(run: Callable[..., Result], case: Case) -> None:
    case.config = case.config.replace('method = "equal"', 'method = "given"')
    result = run("check", case.write())
    assert result.code == 2
    assert "[combination] method" in result.stderr


def test_equal_weights_api() -> None:
    w = combination.weights("equal", np.ones((5, 4)), np.ones(5))
    assert w.sum() == pytest.approx(1.0)
    assert np.allclose(w, 0.25)


def test_estimated_probabilities_match_a_known_law(tmp_path: Path) -> None:
    """Simulation: errors drawn from N(0.2, 0.6) at every horizon; with 300 past errors the
    estimated band probabilities land within sampling error of the true ones (scipy)."""
    n = 300
    errors = np.random.default_rng(2024).normal(0.2, 0.6, n + 1)
    config = constant_forecast_world(tmp_path, errors, band=(1.5, 3.0))
    result = riskreport.assess(config).horizons[0]
    truth = stats.norm(2.2, 0.6)
    p_inside = truth.cdf(3.0) - truth.cdf(1.5)
    se = np.sqrt(p_inside * (1 - p_inside) / n)  # a generous yardstick for the fitted value
    assert result.p_inside == pytest.approx(p_inside, abs=3 * se)
    assert result.p_below == pytest.approx(truth.cdf(1.5), abs=3 * se)
    lo, hi = result.p_inside_interval
    assert lo < p_inside < hi


def test_json_is_byte_identical_for_identical_inputs(case: Case) -> None:
    config = case.write()
    assert riskreport.assess(config).to_json() == riskreport.assess(config).to_json()
    json.loads(riskreport.assess(config).to_json())


def test_weights_use_no_future_outcome(tmp_path: Path) -> None:
    """Perturb outcomes after a past origin: the weights at and before it must not move."""
    import shutil

    from riskreport.reading import config_reader, inputs, panel

    demo = Path(__file__).resolve().parents[1] / "example_inputs"
    shutil.copytree(demo, tmp_path / "d", ignore=shutil.ignore_patterns("*.py", "__pycache__"))
    cfg = config_reader.load(tmp_path / "d" / "config.toml")
    fc = inputs.read_forecasts(cfg.inputs.forecasts, cfg.brief.frequency, cfg.brief.as_of)
    act = inputs.read_actuals(cfg.inputs.actuals, cfg.brief.frequency)
    base = panel.build(fc, act, as_of=cfg.brief.as_of, max_h=cfg.brief.horizons)
    cut = base.origins.size - 60  # an origin five years back
    changed = base.outcomes.copy()
    cutoff = base.origins[cut]
    target_period = base.origins[:, None] + np.arange(base.max_h + 1)[None, :]
    changed[target_period > cutoff] += 3.0
    perturbed = panel.Panel(
        base.models,
        base.origins,
        base.forecasts,
        changed,
        base.last_outcome,
        base.series,
        base.series_start,
    )
    for method in ("ols-nonnegative", "inverse-mse", "shrink"):
        a = combination.combine(method, base)
        b = combination.combine(method, perturbed)
        assert np.allclose(a.combined[: cut + 1], b.combined[: cut + 1], equal_nan=True), method
        assert not np.allclose(a.combined[cut + 24 :], b.combined[cut + 24 :], equal_nan=True)


def test_outcome_for_as_of_is_ignored_everywhere_with_a_warning(case: Case) -> None:
    # Regression: an outcome for the as_of period scored past rounds (and entered their
    # error distributions) but was not counted as observed in the current round. Rule
    # (README, Inputs; DEVELOPERS.md, no look-ahead): the round made at as_of uses data up to
    # as_of - 1, so an outcome for as_of or later is ignored everywhere, with a warning.
    before = _json(case)
    case.actuals.append(["2024-12", "9.000"])  # far outside anything seen
    after = _json(case)
    for key in ("horizons", "model_based_horizons", "path", "accuracy", "combination", "tests"):
        assert after[key] == before[key], key
    assert after["annual"] == before["annual"]
    assert all(o["period"] != "2024-12" for o in after["history"])
    assert not any("2024-12" in w for w in before["warnings"])
    assert any("outcome(s) for 2024-12" in w and "ignored" in w for w in after["warnings"])


def test_test_rows_carry_the_reference_distribution(case: Case) -> None:
    """Every Diebold-Mariano row keeps what stats.TestResult said: the alternative and its
    reference distribution: one step ahead the Student t with T - 1 degrees of freedom
    (Harvey, Leybourne and Newbold 1997, Int. J. Forecasting 13, eq. 9), beyond it the
    fixed-smoothing t(2m) of m frequencies (Coroneo & Iacone 2020, J. Applied Econometrics
    35(4)), or none when the test declined; the JSON keeps its keys."""
    from riskreport.forecasts.fixed_smoothing import smoothing

    a = riskreport.assess(case.write())
    dm = [t for t in a.tests if t.name == "diebold-mariano"]
    assert dm
    for t in dm:
        rule = smoothing(t.nobs, t.h)  # TestResult.h counts steps ahead
        if t.horizon == 0:
            assert t.df == (t.nobs - 1,)
        elif rule.declined is None:
            assert t.df == (2 * rule.frequencies,)
        else:
            assert t.df == ()
        assert t.alternative
    written = json.loads(a.to_json())["tests"]
    assert set(written[0]) == {
        "name",
        "models",
        "h",
        "statistic",
        "pvalue",
        "nobs",
        "null",
        "method",
        "notes",
    }


def test_plain_writes_keyword_keys_and_leaves_out_absent_values() -> None:
    """A scheduled band given as lower/upper has no midpoint key; its start is "from"."""
    band = ScheduledBand(start="2026-01", lower=1.0, upper=3.0, midpoint=None, tolerance=None)
    assert plain(band) == {"from": "2026-01", "lower": 1.0, "upper": 3.0}


def test_quantiles_keep_the_json_keys_of_the_levels_computed() -> None:
    """The typed quantiles are written under the contract's keys, one per computed level."""
    assert Quantiles.levels() == QUANTILE_LEVELS
    assert Quantiles.keys() == tuple(f"{q:g}" for q in QUANTILE_LEVELS)
    q = Quantiles.of([0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 3.5])
    assert plain(q) == dict(zip(Quantiles.keys(), [0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 3.5], strict=True))
    assert (q.q50, q.range_90, q.range_80, q.range_50) == (2.0, (0.5, 3.5), (1.0, 3.0), (1.5, 2.5))
    with pytest.raises(ValueError, match="expected 7 quantiles"):
        Quantiles.of([1.0, 2.0])


def test_plain_writes_family_scores_as_one_object() -> None:
    """The selection's scores stay typed on the object and keep the JSON's family -> total."""
    record = SelectionRecord(
        "normal", "empirical", (FamilyScore("normal", -1.5), FamilyScore("empirical", -2.0))
    )
    assert plain(record) == {
        "chosen": "normal",
        "runner_up": "empirical",
        "total_log_score": {"normal": -1.5, "empirical": -2.0},
    }
    assert record.score("empirical") == -2.0
