"""Guard-rails of the estimated combination weights: the shrinkage factor's degrees of
freedom, negative weights and a combination outside the models' range (DEVELOPERS.md,
The statistics), on a hand-made panel and on a real quarterly inflation history."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import statsmodels.api as sm

import riskreport
from riskreport.errors import InputError
from riskreport.forecasts import combination
from riskreport.reading import config_reader
from riskreport.reading.panel import Panel


def _quarter(index: int) -> str:
    year, quarter = divmod(index, 4)
    return f"{year}-Q{quarter + 1}"


def macrodata_world(folder: Path, method: str, *, horizons: int = 4, extra: str = "") -> Path:
    """A quarterly world from real data: US CPI inflation, y/y, 1960Q1-2009Q2, from
    statsmodels.datasets.macrodata (US Bureau of Labor Statistics CPI via the Federal
    Reserve Bank of St. Louis, as shipped with statsmodels), with four simple
    pseudo-real-time forecasters that use data up to the quarter before each origin:
    no-change, an AR(1) with intercept fitted by OLS and iterated, the mean of the last
    eight quarters and the mean since 1960. The current round is 2009-Q3. Returns the
    config path."""
    from statsmodels.datasets import macrodata

    data = macrodata.load_pandas().data
    cpi = data["cpi"].to_numpy()
    inflation = 100 * (cpi[4:] / cpi[:-4] - 1)  # y/y, first value 1960Q1
    first = 1960 * 4  # quarter index of 1960Q1
    as_of = first + inflation.size - 1  # 2009Q3: its outcome is left out of the actuals
    rows = ["origin,period,model,value"]
    for origin in range(1970 * 4, as_of + 1):
        past = inflation[: origin - first]  # up to the quarter before the origin
        x, y = past[:-1], past[1:]
        slope, intercept = np.polyfit(x, y, 1)
        level = past[-1]
        for h in range(horizons + 1):
            level = intercept + slope * level
            period = _quarter(origin + h)
            values = {
                "last-value": past[-1],
                "ar1": level,
                "mean8": past[-8:].mean(),
                "long-mean": past.mean(),
            }
            rows += [f"{_quarter(origin)},{period},{m},{v:.6f}" for m, v in values.items()]
    actuals = ["period,value"] + [
        f"{_quarter(first + i)},{v:.6f}" for i, v in enumerate(inflation[:-1])
    ]
    (folder / "forecasts.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (folder / "actuals.csv").write_text("\n".join(actuals) + "\n", encoding="utf-8")
    path = folder / "config.toml"
    path.write_text(
        f'[brief]\ntitle = "t"\ninstitution = "i"\nas_of = "{_quarter(as_of)}"\n'
        f'frequency = "quarterly"\nhorizons = {horizons}\npolicy_horizon = {horizons}\n'
        '[inputs]\nforecasts = "forecasts.csv"\nactuals = "actuals.csv"\n'
        "[target]\nmidpoint = 2.0\ntolerance = 1.0\n"
        f'[combination]\nmethod = "{method}"\n{extra}'
        '[uncertainty]\ndistribution = "normal"\nwindow = 0\n'
        "bootstrap_replicates = 50\nsimulations = 1000\n",
        encoding="utf-8",
    )
    return path


def _gr_b(f: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Granger & Ramanathan (1984) variant (b), by statsmodels: y - f_k on f_i - f_k, no
    constant; the last weight is one minus the others."""
    beta = sm.OLS(y - f[:, -1], f[:, :-1] - f[:, [-1]]).fit().params
    return np.array([*beta, 1 - beta.sum()])


def _panel(rng: np.random.Generator, origins: int, horizons: int) -> Panel:
    truth = rng.normal(2.0, 1.0, origins + horizons)
    noise = np.array([0.3, 0.6, 0.9])[:, None, None]
    target = np.arange(origins)[:, None] + np.arange(horizons + 1)[None, :]
    forecasts = truth[target][None] + noise * rng.normal(size=(3, origins, horizons + 1))
    outcomes = truth[target].copy()
    outcomes[target >= origins - 1] = np.nan  # known only before the current round
    return Panel(
        ("a", "b", "c"), np.arange(origins), forecasts, outcomes, truth[:origins], truth, 0
    )


@pytest.mark.parametrize("h", [0, 3])
def test_shrink_counts_the_regression_rows_once(rng: np.random.Generator, h: int) -> None:
    # Stock & Watson (2004), J. Forecasting 23, section 3: lambda = max(0, 1 - kappa k /
    # (t - h - T0 - k)), where t - h - T0 counts the observations of the weight regression.
    # At the current origin, horizon h (a forecast h + 1 steps ahead) has n - h - 1 past
    # rows with a known outcome; by hand, with kappa = 1 and k = 3, lambda = 1 - 3 / (rows - 3),
    # whatever the horizon. The horizon must not be taken off the row count a second time.
    panel = _panel(rng, 20, 3)
    rows = 20 - h - 1
    f = panel.forecasts[:, :rows, h].T
    y = panel.outcomes[:rows, h]
    assert np.all(np.isfinite(y))
    assert np.isnan(panel.outcomes[rows, h])
    lam = 1 - 3 / (rows - 3)
    expected = lam * _gr_b(f, y) + (1 - lam) / 3
    combo = combination.combine("shrink", panel, shrinkage=1.0)
    assert combo.rows[h] == rows
    assert combo.current_weights[:, h] == pytest.approx(expected, abs=1e-10)
    assert combination.weights("shrink", f, y, shrinkage=1.0) == pytest.approx(expected, abs=1e-10)


def test_shrinkage_factor_by_hand() -> None:
    # max(0, 1 - kappa k / (rows - k)) (Stock & Watson 2004), by hand.
    assert combination.shrinkage_factor([12, 12, 12, 3], 3, 0.5).tolist() == [
        pytest.approx(1 - 1.5 / 9),
        pytest.approx(1 - 1.5 / 9),
        pytest.approx(1 - 1.5 / 9),
        0.0,  # no degrees of freedom left: equal weights
    ]
    assert float(combination.shrinkage_factor(12, 3, 3.0)) == 0.0  # 1 - 9/9
    assert float(combination.shrinkage_factor(12, 3, 5.0)) == 0.0  # clipped at zero
    assert float(combination.shrinkage_factor(12, 3, 0.0)) == 1.0  # no shrinkage


def test_flags_for_negative_weights_and_leaving_the_range(rng: np.random.Generator) -> None:
    panel = _panel(rng, 40, 2)
    # Current forecasts (a, b, c) = (1, 2, 3) at every horizon; weights set by hand below.
    panel.forecasts[:, -1, :] = np.array([1.0, 2.0, 3.0])[:, None]
    combo = combination.combine("ols-sum-to-one", panel)
    w = combo.current_weights
    value = (w * panel.current).sum(axis=0)
    assert combo.negative.tolist() == np.any(w < 0, axis=0).tolist()
    assert combo.outside.tolist() == ((value < 1.0) | (value > 3.0)).tolist()
    for method in ("equal", "median", "trimmed", "ols-nonnegative", "inverse-mse"):
        convex = combination.combine(method, panel)  # convex weights stay within the range
        assert not convex.negative.any(), method
        assert not convex.outside.any(), method


def test_the_shrinkage_constant_is_a_config_key(tmp_path: Path) -> None:
    path = macrodata_world(tmp_path, "shrink", horizons=1, extra="shrinkage = 2.0\n")
    assert config_reader.load(path).combination.shrinkage == 2.0
    shrunk = riskreport.assess(path)
    assert shrunk.combination.shrinkage == 2.0
    base = riskreport.assess(macrodata_world(tmp_path, "ols-sum-to-one", horizons=1))
    for h in (0, 1):
        rows = shrunk.combination.rows[h].n
        lam = 1 - 2.0 * 4 / (rows - 4)  # Stock & Watson (2004), kappa = 2, k = 4, by hand
        ols = np.array([w.weight for w in base.combination.weights if w.h == h])
        ours = np.array([w.weight for w in shrunk.combination.weights if w.h == h])
        assert ours == pytest.approx(lam * ols + (1 - lam) / 4, abs=1e-12)
    assert config_reader.load(macrodata_world(tmp_path, "shrink")).combination.shrinkage == 0.25


@pytest.mark.parametrize("value", ["-0.1", "10.5", '"a lot"'])
def test_the_shrinkage_constant_is_checked(tmp_path: Path, value: str) -> None:
    path = macrodata_world(tmp_path, "shrink", horizons=0, extra=f"shrinkage = {value}\n")
    with pytest.raises(InputError, match=r"\[combination\] shrinkage"):
        config_reader.load(path)


def test_real_history_ols_leaves_the_models_range_and_says_so(tmp_path: Path) -> None:
    # US CPI inflation to 2009Q2 (statsmodels macrodata): inflation fell from 5.4% to
    # -1.9% in a year, the OLS weights lean on the no-change forecast with negative weights
    # on the others, and the combined forecast for 2009Q3 falls below every model's.
    path = macrodata_world(tmp_path, "ols", horizons=2)
    a = riskreport.assess(path)
    # Independent check: statsmodels OLS with intercept (Granger & Ramanathan 1984, (a))
    # on the rows whose outcome was known before 2009Q3, from the CSV files themselves.
    import pandas as pd

    fc = pd.read_csv(tmp_path / "forecasts.csv")
    act = pd.read_csv(tmp_path / "actuals.csv").set_index("period")["value"]
    outside = []
    for h in range(3):
        rows = fc.assign(h=[_steps(o, p) for o, p in zip(fc.origin, fc.period, strict=True)])
        rows = rows[rows.h == h].pivot(index="origin", columns="model", values="value")
        current = rows.loc["2009-Q3"]
        past = rows[[_steps(o, "2009-Q3") >= h + 1 for o in rows.index]]
        past = past[[_add(o, h) in act.index for o in past.index]]
        y = np.array([act[_add(o, h)] for o in past.index])
        fit = sm.OLS(y, sm.add_constant(past.to_numpy())).fit()
        ours = {w.model: w.weight for w in a.combination.weights if w.h == h}
        assert [ours[m] for m in rows.columns] == pytest.approx(fit.params[1:], abs=1e-8)
        value = fit.params[0] + current.to_numpy() @ fit.params[1:]
        assert a.horizons[h].point_forecast == pytest.approx(value, abs=1e-8)
        if value < current.min() or value > current.max():
            outside.append(h)
    assert outside == [0, 1, 2]  # the real history does produce the case
    notes = [w for w in a.warnings if "outside the range of the models' current forecasts" in w]
    assert len(notes) == 1
    assert "horizon(s) 0-2;" in notes[0]
    assert any("weights are negative at horizon(s) 0-2" in w for w in a.warnings)
    # Equal weights never leave the range and are not flagged.
    equal = riskreport.assess(macrodata_world(tmp_path, "equal", horizons=2))
    assert not [w for w in equal.warnings if "models' current forecasts" in w]
    assert not [w for w in equal.warnings if "weights are negative" in w]


def _index(label: str) -> int:
    year, quarter = label.split("-Q")
    return int(year) * 4 + int(quarter) - 1


def _steps(origin: str, period: str) -> int:
    return _index(period) - _index(origin)


def _add(origin: str, h: int) -> str:
    return _quarter(_index(origin) + h)
