"""The whole method on a real quarterly history, cross-checked against direct computations.

Data: statsmodels macrodata (US quarterly macroeconomic data 1959Q1-2009Q3, shipped with
statsmodels as ``statsmodels.datasets.macrodata``), the CPI as year-on-year inflation in
percent, 100 (CPI_t / CPI_{t-4} - 1). Four simple pseudo-real-time forecasters are built
here; each forecast at origin o uses outcomes up to o - 1 only:

- last-value: the last known rate;
- AR(1) fitted by least squares on the rates up to o - 1, iterated h + 1 steps;
- the mean of the last four known rates;
- target-anchored: 2 + (last known rate - 2) * 0.8^(h + 1).

Every basis, every combination method and every distribution family builds; the combined
forecast, the normal family's P(inside) and the kernel family's P(inside) are recomputed
here from the written inputs (equal weights by hand, scipy.stats.norm with the sample mean
and sd of the windowed errors; Silverman 1986, Density Estimation, eq. 3.31, for the kernel).
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from statsmodels.datasets import macrodata

import riskreport
from riskreport._typing import COMBINATION_METHODS as METHODS

H = 8
WINDOW = 40
BAND = (1.0, 3.0)
AS_OF = "2009Q3"  # the last quarter of the data: its outcome is in the file but not used
MODELS = ("last-value", "ar1", "mean4", "anchored")


@dataclass(frozen=True)
class History:
    folder: Path
    rates: pd.Series  # y/y inflation by quarterly Period
    forecasts: dict[str, np.ndarray]  # model -> origins x (H + 1), as written
    origins: pd.PeriodIndex


def _forecasts(y: np.ndarray, end: int) -> dict[str, np.ndarray]:
    """The four forecasts of h = 0..H made with y[:end] known (y[end] is the origin)."""
    last = y[end - 1]
    steps = np.arange(1, H + 2)
    past = y[:end]
    slope, intercept = np.polyfit(past[:-1], past[1:], 1)
    ar = []
    value = last
    for _ in steps:
        value = intercept + slope * value
        ar.append(value)
    return {
        "last-value": np.full(H + 1, last),
        "ar1": np.array(ar),
        "mean4": np.full(H + 1, past[-4:].mean()),
        "anchored": 2.0 + (last - 2.0) * 0.8**steps,
    }


@pytest.fixture(scope="module")
def history(tmp_path_factory: pytest.TempPathFactory) -> History:
    folder = tmp_path_factory.mktemp("macrodata")
    data = macrodata.load_pandas().data
    index = pd.PeriodIndex(
        [f"{int(y)}Q{int(q)}" for y, q in zip(data["year"], data["quarter"], strict=True)],
        freq="Q",
    )
    cpi = pd.Series(data["cpi"].to_numpy(), index=index)
    rates = (100 * (cpi / cpi.shift(4) - 1)).dropna().round(6)
    y = rates.to_numpy()
    origins = rates.index[rates.index >= pd.Period("1992Q1", freq="Q")]
    first = rates.index.get_loc(origins[0])
    written: dict[str, list[np.ndarray]] = {m: [] for m in MODELS}
    rows = ["origin,period,model,value"]
    for k, origin in enumerate(origins):
        made = _forecasts(y, first + k)
        for model in MODELS:
            values = np.round(made[model], 6)
            written[model].append(values)
            rows += [f"{origin},{origin + h},{model},{v:.6f}" for h, v in enumerate(values)]
    (folder / "forecasts.csv").write_text("\n".join(rows) + "\n")
    (folder / "actuals.csv").write_text(
        "period,value\n" + "".join(f"{p},{v:.6f}\n" for p, v in rates.items())
    )
    combined = np.mean([np.array(written[m]) for m in MODELS], axis=0)
    (folder / "combined.csv").write_text(
        "origin,period,value\n"
        + "".join(
            f"{o},{o + h},{combined[k, h]:.6f}\n"
            for k, o in enumerate(origins)
            for h in range(H + 1)
        )
    )
    return History(folder, rates, {m: np.array(v) for m, v in written.items()}, origins)


def _config(
    history: History,
    name: str,
    *,
    basis: str = "period",
    method: str = "equal",
    family: str = "normal",
    forecasts: str = "forecasts.csv",
    centre: str = "estimated",
    predictive: str = "plug-in",
    spread: str = "constant",
) -> Path:
    # The spread is pinned constant (the default pools it with spreads that follow recent
    # errors), so that the checks below can recompute the law from the window by hand.
    path = history.folder / f"{name}.toml"
    path.write_text(
        f"""[brief]
title = "US CPI inflation (statsmodels macrodata)"
institution = "Test"
as_of = "{AS_OF}"
frequency = "quarterly"
horizons = {H}
policy_horizon = 4
[inputs]
forecasts = "{forecasts}"
actuals = "actuals.csv"
[target]
lower = {BAND[0]}
upper = {BAND[1]}
basis = "{basis}"
[combination]
method = "{method}"
window = 24
[uncertainty]
distribution = "{family}"
window = {WINDOW}
centre = "{centre}"
predictive = "{predictive}"
spread = "{spread}"
monotone = false
bootstrap_replicates = 50
simulations = 4000
[output]
directory = "out-{name}"
formats = ["json"]
"""
    )
    return path


def _point(history: History) -> np.ndarray:
    """The equal-weight combination of the current round, by hand."""
    return np.mean([history.forecasts[m][-1] for m in MODELS], axis=0)


def _windowed_errors(history: History, point_by_origin: np.ndarray, h: int) -> np.ndarray:
    """Errors outcome - combined forecast at horizon h whose outcome came before as_of, the
    last WINDOW of them."""
    as_of = pd.Period(AS_OF, freq="Q")
    out = []
    for k, origin in enumerate(history.origins):
        target = origin + h
        if target < as_of:
            out.append(history.rates[target] - point_by_origin[k, h])
    return np.array(out[-WINDOW:])


def _combined_history(history: History) -> np.ndarray:
    return np.mean([history.forecasts[m] for m in MODELS], axis=0)


def _check_probabilities(a: riskreport.Assessment) -> None:
    for r in a.horizons:
        assert r.p_below + r.p_inside + r.p_above == pytest.approx(1.0, abs=1e-9)
        assert np.isfinite(r.point_forecast)
    head = a.headline
    assert head.p_below + head.p_inside + head.p_above == pytest.approx(1.0, abs=1e-9)


def test_normal_family_against_scipy(history: History) -> None:
    a = riskreport.assess(_config(history, "normal"))
    _check_probabilities(a)
    np.testing.assert_allclose([r.point_forecast for r in a.horizons], _point(history), atol=1e-9)
    combined = _combined_history(history)
    for h in range(H + 1):
        e = _windowed_errors(history, combined, h)
        assert a.horizons[h].n_errors == e.size == WINDOW
        # MLE normal: mean and sd with divisor n; centre "estimated" keeps the mean error.
        law = stats.norm(_point(history)[h] + e.mean(), e.std())
        assert a.horizons[h].p_inside == pytest.approx(
            law.cdf(BAND[1]) - law.cdf(BAND[0]), abs=1e-9
        )
        assert a.horizons[h].p_above == pytest.approx(law.sf(BAND[1]), abs=1e-9)
    # The 2009Q3 outcome is in the file but after the round's information set: warned.
    assert any("outcome(s) for 2009-Q3" in w for w in a.warnings)
    out = history.folder / "rendered"
    riskreport.render(a, out, formats=["json"])
    data = json.loads((out / "assessment-2009-Q3.json").read_text("utf-8"))
    assert data["headline"]["label"] == "2010-Q3"
    assert data["horizons"][4]["p_inside"] == pytest.approx(a.policy.p_inside, abs=1e-11)


def test_default_student_t_against_scipy(history: History) -> None:
    # The default predictive: a Student t centred on the point forecast, scale the root
    # mean square error, degrees of freedom the effective size about a spread of the
    # window's (h + 1)-step errors (scipy.stats.t; the count of
    # riskreport.forecasts.overlap times 3 s^2 / (2 s^2 + 1), Isserlis 1918, Biometrika 12).
    from riskreport.forecasts.overlap import effective_sample_size

    a = riskreport.assess(_config(history, "student", centre="forecast", predictive="student-t"))
    combined = _combined_history(history)
    for h in range(H + 1):
        e = _windowed_errors(history, combined, h)
        s = h + 1
        df = effective_sample_size(e.size, s) * 3 * s**2 / (2 * s**2 + 1)
        law = stats.t(df, _point(history)[h], np.sqrt(np.mean(e**2)))
        assert a.horizons[h].p_inside == pytest.approx(
            law.cdf(BAND[1]) - law.cdf(BAND[0]), abs=1e-9
        )


def test_kernel_family_against_silverman(history: History) -> None:
    a = riskreport.assess(_config(history, "kernel", family="empirical"))
    combined = _combined_history(history)
    for h in (0, 4, 8):
        e = _windowed_errors(history, combined, h)
        iqr = np.subtract(*np.percentile(e, [75, 25]))
        b = 0.9 * min(e.std(), iqr / 1.349) * e.size ** (-0.2)

        # The law: Silverman's kernel estimate at weight 0.9 and the normal fitted to the
        # same errors (their mean and root mean square deviation) at 0.1, the share that
        # keeps its tails normal (riskreport.laws.empirical.TAIL_WEIGHT).
        point = _point(history)[h]
        cdf = [
            0.9 * stats.norm.cdf((x - point - e) / b).mean()
            + 0.1 * stats.norm.cdf(x - point, e.mean(), e.std())
            for x in BAND
        ]
        expected = cdf[1] - cdf[0]
        assert a.horizons[h].p_inside == pytest.approx(expected, abs=1e-6)


@pytest.mark.parametrize("family", ["two-piece-normal", "skew-normal", "auto"])
def test_every_family_builds(history: History, family: str) -> None:
    a = riskreport.assess(_config(history, family, family=family))
    _check_probabilities(a)
    np.testing.assert_allclose([r.point_forecast for r in a.horizons], _point(history), atol=1e-9)


@pytest.mark.parametrize("basis", ["calendar-year-average", "year-end"])
def test_every_basis_builds(history: History, basis: str) -> None:
    a = riskreport.assess(_config(history, basis, basis=basis))
    _check_probabilities(a)
    head = a.headline
    assert head.year == 2010
    if basis == "year-end":
        # The 2010 year end is 2010Q4 (h = 5): the same law as that period, up to Monte
        # Carlo error of 4000 paths (sd <= 0.008).
        assert head.p_inside == pytest.approx(a.horizons[5].p_inside, abs=0.035)
    else:
        # 2009: Q1 and Q2 known; Q3 (= as_of, its outcome not yet in the information set)
        # and Q4 simulated.
        year = next(r for r in a.basis_results if r.year == 2009)
        assert (year.observed_periods, year.simulated_periods) == (2, 2)


@pytest.mark.parametrize("method", [m for m in METHODS if m not in ("equal", "given")])
def test_every_combination_method_builds(history: History, method: str) -> None:
    a = riskreport.assess(_config(history, method, method=method))
    _check_probabilities(a)
    current = np.array([history.forecasts[m][-1] for m in MODELS])
    point = np.array([r.point_forecast for r in a.horizons])
    if method == "median":
        np.testing.assert_allclose(point, np.median(current, axis=0), atol=1e-9)
    weights = {(w.h, w.model): w.weight for w in a.combination.weights}
    if method not in ("median", "trimmed", "ols"):
        # A linear combination without intercept: the point is the weighted sum.
        for h in range(H + 1):
            w = np.array([weights[h, m] for m in MODELS])
            assert point[h] == pytest.approx(w @ current[:, h], abs=1e-9)


def test_given_combination_builds(history: History) -> None:
    a = riskreport.assess(_config(history, "given", method="given", forecasts="combined.csv"))
    _check_probabilities(a)
    np.testing.assert_allclose([r.point_forecast for r in a.horizons], _point(history), atol=1e-6)
