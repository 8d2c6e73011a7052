"""The optimal prediction pool (``distribution = "auto"``): its weights against a general
optimiser, its law against scipy, no look-ahead in the replay, and its price of learning on
a simulated world where nothing changes."""

from __future__ import annotations

import json
import warnings
from pathlib import Path

import numpy as np
import pytest
from scipy import optimize, stats

from riskreport.laws.normal import NormalFit
from riskreport.laws.pool import Pool
from riskreport.pipeline import assess_config
from riskreport.reading import config_reader
from riskreport.replay import pool
from riskreport.replay.calibration import HorizonReplay
from tests.test_honest_defaults import efficient_world


def test_em_weights_maximise_the_pooled_log_score() -> None:
    # The pool's log score is concave in the weights (Geweke & Amisano 2011, J. Econometrics
    # 164(1)): the optimum must be at least as good as every point of a fine grid.
    rng = np.random.default_rng(2)
    y = rng.standard_t(5, 300)
    log_density = np.stack(
        [
            stats.norm.logpdf(y, 0, 1.3),
            stats.t.logpdf(y, 5),
            stats.laplace.logpdf(y, 0, 0.9),
        ]
    )
    column = np.full(y.size, 1.0 / y.size)
    ours = pool.optimal_weights(log_density, column)

    def minus(w: np.ndarray) -> float:
        return -float(np.mean(np.log(w @ np.exp(log_density))))

    # Every point of the simplex on a grid of step 0.005: none may beat the optimiser.
    step = np.arange(0, 201) / 200
    w1, w2 = np.meshgrid(step, step, indexing="ij")
    keep = w1 + w2 <= 1 + 1e-12
    grid = np.column_stack([w1[keep], w2[keep], 1 - w1[keep] - w2[keep]])
    values = -np.mean(np.log(np.clip(grid, 0, None) @ np.exp(log_density)), axis=1)
    assert minus(ours) <= values.min() + 1e-9
    best = grid[np.argmin(values)]
    assert ours == pytest.approx(best, abs=0.01)


def test_the_pool_is_the_mixture_and_its_quantiles_invert_it() -> None:
    # F = 0.7 N(0, 1) + 0.3 N(1, 2^2) with scipy.stats.norm; quantiles against brentq.
    law = Pool((NormalFit(0.0, 1.0), NormalFit(1.0, 2.0)), (0.7, 0.3))
    x = np.linspace(-6, 8, 29)
    cdf = 0.7 * stats.norm.cdf(x, 0, 1) + 0.3 * stats.norm.cdf(x, 1, 2)
    pdf = 0.7 * stats.norm.pdf(x, 0, 1) + 0.3 * stats.norm.pdf(x, 1, 2)
    assert law.cdf(x) == pytest.approx(cdf, abs=1e-12)
    assert np.exp(law.logpdf(x)) == pytest.approx(pdf, rel=1e-10)
    for q in (0.001, 0.05, 0.5, 0.9, 0.999):
        root = optimize.brentq(
            lambda v, q=q: 0.7 * stats.norm.cdf(v, 0, 1) + 0.3 * stats.norm.cdf(v, 1, 2) - q,
            -20,
            20,
            xtol=1e-12,
        )
        assert float(law.ppf(np.array([q]))[0]) == pytest.approx(root, abs=1e-7)
    # Members centred apart: the centre is their modes weighted (our definition, not the
    # density's peak, which a narrow member with little weight can carry off).
    assert law.mode == pytest.approx(0.7 * 0.0 + 0.3 * 1.0)
    # Members sharing a mode: the pool peaks there (a mixture of unimodal laws with one mode).
    same = Pool((NormalFit(0.5, 1.0), NormalFit(0.5, 2.0)), (0.7, 0.3))
    grid = np.linspace(-3, 4, 70001)
    assert same.mode == pytest.approx(grid[np.argmax(np.exp(same.logpdf(grid)))], abs=2e-4)


def _run(label: str, h: int, scores: np.ndarray) -> HorizonReplay:
    n = scores.size
    return HorizonReplay(
        family=label,
        h=h,
        origins=np.arange(n),
        pit=np.full(n, 0.5),
        probabilities=np.full((n, 3), 1 / 3),
        category=np.ones(n, dtype=int),
        climatology=np.full((n, 3), 1 / 3),
        log_score=scores,
        crps=np.zeros(n),
    )


def test_weights_use_only_scores_known_at_each_origin() -> None:
    # An h-step score is known h + 1 periods later: changing every score whose outcome is at
    # or after row j must leave the weights used at rows <= j unchanged.
    rng = np.random.default_rng(1)
    n, j = 120, 70
    labels = ["normal", "other"]
    scores = {(lab, h): rng.normal(-1, 0.3, n) for lab in labels for h in (0, 3)}
    runs = {key: _run(key[0], key[1], s) for key, s in scores.items()}
    first = pool.learn(runs, labels, n)
    changed = {}
    for (lab, h), s in scores.items():
        s = s.copy()
        s[np.arange(n) + h >= j] += 5.0 if lab == "other" else -5.0
        changed[(lab, h)] = _run(lab, h, s)
    second = pool.learn(changed, labels, n)
    assert second.past[: j + 1] == pytest.approx(first.past[: j + 1])
    assert not np.allclose(second.current, first.current)
    # Shrunk toward the first law while the record is short: all its weight before any score.
    assert first.past[0] == pytest.approx([1.0, 0.0])


@pytest.fixture(scope="module")
def null_world(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path, _, _ = efficient_world(tmp_path_factory.mktemp("pool"), seed=7)
    return path


def _assess(path: Path, distribution: str):  # type: ignore[no-untyped-def]
    base = path.read_text().split("distribution")[0]
    # The families pooled under one constant spread and centre (the default pools spreads
    # and bias corrections too).
    path.write_text(
        base + f'distribution = "{distribution}"\nspread = "constant"\ncentre = "forecast"\n'
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return assess_config(config_reader.load(path), search=path.parent / "none")


def test_the_pool_pays_little_for_learning_where_nothing_changes(null_world: Path) -> None:
    # Issue "Honest by default": on a world whose error law never changes (efficient normal
    # forecasts, tests/test_honest_defaults.py), the pool's replay log score at most 0.01
    # below the normal law's (the t predictive, today's default).
    normal = _assess(null_world, "normal")
    pooled = _assess(null_world, "auto")
    assert pooled.adjustments is not None
    assert normal.adjustments is not None
    assert pooled.adjustments.verdict.log_score >= normal.adjustments.verdict.log_score - 0.01
    record = pooled.uncertainty.pool
    assert record is not None
    assert sum(w.weight for w in record.weights) == pytest.approx(1.0)
    assert record.weights[0].candidate == "normal"
    assert record.weights[0].weight >= 0.5
    for r in pooled.horizons:
        assert r.distribution == "pool"
        assert r.p_inside_interval[0] <= r.p_inside <= r.p_inside_interval[1]
    written = json.loads(pooled.to_json())["uncertainty"]["pool"]
    assert set(written["weights"]) == {"normal", "two-piece-normal", "skew-normal", "empirical"}
    assert written["prior_share"] == pytest.approx(record.prior_share)


def test_the_old_hard_choice_stays_available(null_world: Path) -> None:
    chosen = _assess(null_world, "best-past-score")
    assert chosen.uncertainty.pool is None
    assert chosen.uncertainty.selection is not None
