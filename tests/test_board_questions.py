"""Properties of the board's next questions (hypothesis, fixed budget, derandomized): the
shift reaches 0.5 and no smaller move does, the situations partition the replay and add up
to the overall record, and the attribution adds up to the change of the centre."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import stats

from riskreport.laws import sensitivity
from riskreport.reading.config import Band
from riskreport.reading.panel import Panel
from riskreport.replay import situations
from riskreport.replay.calibration import HorizonReplay
from riskreport.rounds import attribution

BUDGET = settings(
    max_examples=40,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow],
)


@BUDGET
@given(
    centre=st.floats(-1.0, 7.0),
    sd=st.floats(0.05, 3.0),
    ratio=st.floats(0.3, 3.0),
)
def test_shift_reaches_even_and_no_smaller_move_does(
    centre: float, sd: float, ratio: float
) -> None:
    # a two-piece normal: skewed, unimodal
    law = _two_piece(centre, sd, sd * ratio)
    lower, upper = 2.0, 4.0
    shift = sensitivity.shift_to_even(law, lower, upper)
    _, p_top = sensitivity.best_shift(law, lower, upper)
    if shift is None:
        assert p_top < 0.5
        return
    assert float(sensitivity.p_inside_shifted(law, lower, upper, np.array([shift]))[0]) == (
        pytest.approx(0.5, abs=1e-8)
    )
    # no move of smaller size reaches 0.5 on either side
    now = float(sensitivity.p_inside_shifted(law, lower, upper, np.array([0.0]))[0]) - 0.5
    inner = np.linspace(-abs(shift), abs(shift), 401)[1:-1]
    gaps = sensitivity.p_inside_shifted(law, lower, upper, inner) - 0.5
    assert np.all(np.sign(gaps) == np.sign(now)) or abs(now) < 1e-9


class _TwoPiece:
    """A two-piece normal with mode m and scales s1 (left), s2 (right), by scipy.stats.norm."""

    def __init__(self, mode: float, left: float, right: float) -> None:
        self.mode, self.left, self.right = mode, left, right
        self.weight = left / (left + right)

    def cdf(self, x: np.ndarray) -> np.ndarray:
        x = np.asarray(x, dtype=float)
        below = 2 * self.weight * stats.norm.cdf(x, self.mode, self.left)
        above = self.weight + 2 * (1 - self.weight) * (
            stats.norm.cdf(x, self.mode, self.right) - 0.5
        )
        return np.where(x <= self.mode, below, above)

    def ppf(self, q: np.ndarray) -> np.ndarray:
        q = np.asarray(q, dtype=float)
        low = stats.norm.ppf(np.minimum(q, self.weight) / (2 * self.weight), self.mode, self.left)
        high = stats.norm.ppf(
            0.5 + np.maximum(q - self.weight, 0) / (2 * (1 - self.weight)), self.mode, self.right
        )
        return np.where(q <= self.weight, low, high)


def _two_piece(mode: float, left: float, right: float) -> _TwoPiece:
    return _TwoPiece(mode, left, right)


def _panel(rng: np.random.Generator, origins: int, models: int, horizons: int) -> Panel:
    series = rng.normal(3.0, 1.2, origins + horizons + 2)
    start = 100
    first = start + 1
    ordinals = np.arange(first, first + origins)
    forecasts = rng.normal(3.0, 0.5, (models, origins, horizons + 1))
    forecasts[rng.random(forecasts.shape) < 0.1] = np.nan
    outcomes = np.full((origins, horizons + 1), np.nan)
    return Panel(
        models=tuple(f"m{k}" for k in range(models)),
        origins=ordinals,
        forecasts=forecasts,
        outcomes=outcomes,
        last_outcome=series[ordinals - 1 - start],
        series=series[: ordinals[-1] - start + 1],
        series_start=start,
    )


@BUDGET
@given(seed=st.integers(0, 10_000), origins=st.integers(30, 120), h=st.integers(0, 6))
def test_situations_partition_the_replay(seed: int, origins: int, h: int) -> None:
    rng = np.random.default_rng(seed)
    panel = _panel(rng, origins, 3, h)
    rows = rng.choice(origins - 1, size=rng.integers(5, origins - 1), replace=False)
    rows.sort()
    n = rows.size
    p_inside = rng.random(n)
    run = HorizonReplay(
        family="normal",
        h=h,
        origins=rows,
        pit=rng.random(n),
        probabilities=np.column_stack([(1 - p_inside) / 2, p_inside, (1 - p_inside) / 2]),
        category=rng.integers(0, 3, n),
        climatology=np.full((n, 3), 1 / 3),
        log_score=np.zeros(n),
        crps=np.zeros(n),
    )
    table = situations.record(
        panel, {h: run}, band_for=lambda _: Band(2.0, 4.0), frequency="monthly"
    )
    by = {r.situation: r for r in table}
    sides = [by[s] for s in situations.SIDES]
    assert sum(r.n for r in sides) == by["all"].n == n
    assert sum(r.today for r in sides) == 1
    for key in ("coverage_50", "coverage_90", "brier"):
        weighted = sum(r.n * (getattr(r, key) or 0.0) for r in sides) / n
        assert weighted == pytest.approx(getattr(by["all"], key), abs=1e-12)
    for r in table:
        assert 0.0 <= r.n_effective <= r.n + 1e-9
        if r.n:
            lo, hi = r.coverage_90_interval or (np.nan, np.nan)
            assert lo <= (r.coverage_90 or 0.0) <= hi


methods = st.sampled_from(
    ["equal", "median", "trimmed", "inverse-mse", "ols", "ols-sum-to-one", "given"]
)


def _round(draw: st.DrawFn, models: list[str], method: str) -> attribution.RoundInputs:
    present = [m for m in models if draw(st.booleans())] or models[:1]
    values = {m: draw(st.floats(-2.0, 8.0)) for m in present}
    raw = {m: draw(st.floats(-0.5 if method.startswith("ols") else 0.01, 1.0)) for m in present}
    weights = (
        raw if method == "ols" else {m: w / (sum(raw.values()) or 1.0) for m, w in raw.items()}
    )
    intercept = draw(st.floats(-0.5, 0.5)) if method == "ols" else 0.0
    point = attribution._value(method, values, weights, False, 0.0) + intercept
    bias = draw(st.floats(-0.5, 0.5))
    judged = draw(st.floats(-0.5, 0.5))
    return attribution.RoundInputs(
        values, weights, intercept, point, point, point + bias, point + bias + judged
    )


@st.composite
def _rounds(draw: st.DrawFn) -> tuple[str, attribution.RoundInputs, attribution.RoundInputs]:
    method = draw(methods)
    models = [f"m{k}" for k in range(draw(st.integers(1, 12)))]
    return method, _round(draw, models, method), _round(draw, models, method)


@BUDGET
@given(case=_rounds())
def test_attribution_adds_up_to_the_change(
    case: tuple[str, attribution.RoundInputs, attribution.RoundInputs],
) -> None:
    method, before, now = case
    terms = attribution.split(method, before, now)
    assert sum(x for _, _, x in terms) == pytest.approx(now.centre - before.centre, abs=1e-9)
    # every model of either round has one term, named by whether it entered or left
    models = {m for _, m, _ in terms if m is not None}
    assert models == set(before.forecasts) | set(now.forecasts)
    for term, model, _ in terms:
        if term == "model entering":
            assert model in now.forecasts
            assert model not in before.forecasts
        if term == "model leaving":
            assert model in before.forecasts
            assert model not in now.forecasts


def test_a_model_that_did_not_change_gets_nothing() -> None:
    # Shapley's null player: same forecast and weight in both rounds, zero term.
    before = attribution.RoundInputs({"a": 2.0, "b": 3.0, "c": 4.0}, {}, 0.0, 3.0, 3.0, 3.0, 3.0)
    now = attribution.RoundInputs({"a": 2.6, "b": 3.0, "c": 4.0}, {}, 0.0, 3.0, 3.0, 3.0, 3.0)
    terms = {m: x for _, m, x in attribution.split("median", before, now) if m}
    assert terms == {"a": 0.0, "b": 0.0, "c": 0.0}  # the median stays 3.0
    now = attribution.RoundInputs({"a": 2.6, "b": 3.0, "c": 4.0}, {}, 0.0, 3.2, 3.2, 3.2, 3.2)
    terms = {m: x for _, m, x in attribution.split("equal", before, now)}
    assert terms["b"] == pytest.approx(0.0, abs=1e-12)
    assert terms["a"] == pytest.approx(0.2, abs=1e-12)


def test_wide_disagreement_is_the_top_third_of_the_history_up_to_then() -> None:
    # By hand: 12 earlier spreads 1..12, then 13 (the largest: wide), 2 (3 of 14 not larger:
    # not), 12 (14 of 15: wide), 8 (1..8, the 2 and itself: 10 of 16 = 0.625 < 2/3: not).
    spread = np.array([*range(1, 13), 13, 2, 12, 8], dtype=float)
    spread = np.concatenate([[np.nan], spread])  # an origin where fewer than two models forecast
    wide = situations.wide_disagreement(spread)
    assert wide.tolist() == [False] * 13 + [True, False, True, False]
