"""The defaults on a simulated world whose past forecasts are efficient and whose truth is
known: today's probabilities near the truth, a replay as calibrated as the true law's own,
and no log score lost against the constant normal law."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from riskreport.forecasts.overlap import effective_sample_size
from riskreport.laws import predictive
from riskreport.pipeline import assess_config
from riskreport.reading import config_reader

PHI, SIGMA, MU = 0.9, 0.25, 2.0  # a persistent monthly inflation rate (AR(1))
HORIZONS, YEARS = 12, 24
BAND = (1.0, 3.0)


def _label(t: int) -> str:
    return f"{2000 + t // 12}-{t % 12 + 1:02d}"


def efficient_world(folder: Path, seed: int = 5) -> tuple[Path, np.ndarray, np.ndarray]:
    """Inflation y_t = MU + PHI (y_{t-1} - MU) + eps_t, eps ~ N(0, SIGMA^2); the one model
    forecasts period o + h at origin o (knowing y up to o - 1) by its conditional mean, so
    its errors are the sum of the h + 1 shocks in between: normal, independent of the
    forecast, overlapping across horizons and persistent across origins. Returns the
    config path (no [uncertainty] method keys), today's forecasts and the true sd per
    horizon."""
    rng = np.random.default_rng(seed)
    n = YEARS * 12
    y = np.empty(n + 100)
    y[0] = MU
    for t in range(1, y.size):
        y[t] = MU + PHI * (y[t - 1] - MU) + SIGMA * rng.standard_normal()
    y = y[100:]
    hs = np.arange(HORIZONS + 1)
    rows = ["origin,period,model,value"]
    point = np.empty(0)
    for o in range(1, n):
        point = MU + PHI ** (hs + 1) * (y[o - 1] - MU)
        rows += [f"{_label(o)},{_label(o + h)},efficient,{point[h]:.6f}" for h in hs]
    actuals = ["period,value"] + [f"{_label(t)},{y[t]:.6f}" for t in range(n - 1)]
    (folder / "f.csv").write_text("\n".join(rows) + "\n")
    (folder / "a.csv").write_text("\n".join(actuals) + "\n")
    path = folder / "c.toml"
    path.write_text(
        f'[brief]\ntitle = "t"\ninstitution = "i"\nas_of = "{_label(n - 1)}"\n'
        f"horizons = {HORIZONS}\npolicy_horizon = {HORIZONS}\n"
        '[inputs]\nforecasts = "f.csv"\nactuals = "a.csv"\n'
        f"[target]\nlower = {BAND[0]}\nupper = {BAND[1]}\n"
        "[uncertainty]\nbootstrap_replicates = 50\nsimulations = 1000\n"
    )
    sd = SIGMA * np.sqrt(np.cumsum(PHI ** (2 * hs)))
    return path, point, sd


@pytest.fixture(scope="module")
def world(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, np.ndarray, np.ndarray]:
    return efficient_world(tmp_path_factory.mktemp("efficient"))


def test_today_is_near_the_truth_and_no_score_is_lost(
    world: tuple[Path, np.ndarray, np.ndarray],
) -> None:
    path, point, sd = world
    a = assess_config(config_reader.load(path), search=path.parent / "none")
    truth = stats.norm.cdf(BAND[1], point, sd) - stats.norm.cdf(BAND[0], point, sd)
    below = stats.norm.cdf(BAND[0], point, sd)
    ours = np.array([r.p_inside for r in a.horizons])
    ours_below = np.array([r.p_below for r in a.horizons])
    off = np.abs(np.concatenate([ours - truth, ours_below - below]))
    # Targets of the issue "Honest by default" (common practice, no source).
    assert off.mean() <= 0.03
    assert off.max() <= 0.08
    assert a.adjustments is not None
    verdict = a.adjustments.verdict
    assert verdict.log_score >= verdict.baseline_log_score - 0.01
    assert a.adjustments.method_source == "defaults"


def test_replay_is_as_calibrated_as_the_true_law(
    world: tuple[Path, np.ndarray, np.ndarray],
) -> None:
    path, _, sd = world
    a = assess_config(config_reader.load(path), search=path.parent / "none")
    y = np.array(
        [float(line.split(",")[1]) for line in (path.parent / "a.csv").read_text().split()[1:]]
    )
    hs = np.arange(HORIZONS + 1)
    gaps, true_gaps = [], []
    for nominal in (0.5, 0.9):
        for h in hs:
            row = next(c for c in a.calibration.coverage if c.h == h and c.nominal == nominal)
            # The true law's own replay on the same outcomes: the last row.n known at h.
            last = y.size - h  # origins o with o + h <= last period
            origins = np.arange(last - row.n, last)
            point = MU + PHI ** (h + 1) * (y[origins - 1] - MU)
            pit = stats.norm.cdf(y[origins + h] - point, 0, sd[h])
            true_gaps.append(abs(np.mean(np.abs(pit - 0.5) <= nominal / 2) - nominal))
            gaps.append(abs(row.observed - nominal))
    assert np.mean(gaps) <= np.mean(true_gaps) + 0.02


def test_student_predictive_matches_the_t_law() -> None:
    # Mean known: y / s ~ t(n) with s^2 = sum(e^2) / n for normal errors (Student 1908,
    # Biometrika 6(1); the predictive of a new draw, e.g. Geisser 1993, "Predictive
    # Inference", ch. 2, recalled from memory). Checked by simulation against scipy.stats.t.
    rng = np.random.default_rng(1)
    samples = rng.standard_normal((20000, 8))
    fits = predictive.student(
        __import__("riskreport.laws.normal", fromlist=["x"]).fit_normal_batch(samples, 0.0),
        1,
        mode_fixed=True,
    )
    new = rng.standard_normal(20000)
    pit = fits.cdf(new)
    # The t predictive's PITs are uniform; the plug-in normal's are not (too many tails).
    assert stats.kstest(pit, "uniform").pvalue > 0.01
    assert float(np.mean(np.asarray(fits.df))) == pytest.approx(8.0)


def test_degrees_of_freedom_count_effective_errors() -> None:
    df, widen = predictive.degrees_and_widening([120], 13, mode_fixed=True)
    # 3 s^2 / (2 s^2 + 1) at s = 13: 507 / 339 (Isserlis 1918, Biometrika 12, for squares).
    assert float(df[0]) == pytest.approx(effective_sample_size(120, 13) * 507 / 339)
    assert float(widen[0]) == 1.0


def test_crps_of_the_t_matches_scoringrules() -> None:
    sr = pytest.importorskip("scoringrules")
    y = np.array([-2.0, 0.1, 3.0])
    ours = predictive.crps_student(y, 0.2, 1.5, 5.0)
    # scoringrules.crps_t (Jordan, Krueger & Lerch 2019, J. Stat. Softw. 90(12)).
    expected = sr.crps_t(y, 5.0, 0.2, 1.5)
    np.testing.assert_allclose(ours, expected, rtol=1e-8)


def test_two_piece_scales_stay_within_the_bounded_ratio() -> None:
    # Forty errors, most just above zero and a few large ones: the free maximum
    # likelihood puts one scale far below the other (John's closed form, John 1982,
    # Communications in Statistics A 11(8)); the bounded fit keeps the ratio at most 4 and
    # its log-likelihood is the two-piece normal's own density summed (Wallis 2014,
    # Statistical Science 29(1), eq. 1: f = sqrt(2/pi) / (s1 + s2) exp(-(x - m)^2 / 2 s^2)).
    from riskreport.laws.two_piece_normal import TPN_MAX_RATIO, fit_two_piece_normal_batch

    x = np.array([[0.1, 0.2, 0.05, 3.0, 2.5, -0.1, 0.15, 0.12] * 5])
    fit = fit_two_piece_normal_batch(x, 0.0)
    s1, s2 = float(fit.sigma1[0]), float(fit.sigma2[0])
    assert max(s1, s2) / min(s1, s2) == pytest.approx(TPN_MAX_RATIO)
    sd = np.where(x[0] < 0, s1, s2)
    density = np.sqrt(2 / np.pi) / (s1 + s2) * np.exp(-(x[0] ** 2) / (2 * sd**2))
    assert float(fit.loglik[0]) == pytest.approx(float(np.sum(np.log(density))), rel=1e-10)
    # ... and it is the maximum on that boundary: a nearby scale on it does worse.
    for k in (0.98, 1.02):
        t1, t2 = s1 * k, s2 * k
        sd = np.where(x[0] < 0, t1, t2)
        other = np.sum(np.log(np.sqrt(2 / np.pi) / (t1 + t2)) - x[0] ** 2 / (2 * sd**2))
        assert other < float(fit.loglik[0])


def test_an_estimated_centre_that_moves_far_is_said(tmp_path: Path) -> None:
    from tests.conftest import constant_forecast_world

    rng = np.random.default_rng(4)
    errors = 0.6 + 0.3 * rng.standard_normal(80)  # a mean error of 0.6 against a band of 2
    path = constant_forecast_world(tmp_path, errors)
    cfg = config_reader.load(path)
    moved = assess_config(cfg.replaced("uncertainty", centre="estimated"), search=tmp_path / "none")
    assert any("tenth of the band's width" in w for w in moved.warnings)
    kept = assess_config(cfg.replaced("uncertainty", centre="forecast"), search=tmp_path / "none")
    assert not any("estimated centre" in w for w in kept.warnings)
    # The centre on the forecast ignores that bias: said by its own warning.
    assert any("do not correct for this bias" in w for w in kept.warnings)


def test_the_replay_grades_the_t_law_each_past_round_would_have_published() -> None:
    # At every replayed origin the PIT is the Student t CDF (scipy.stats.t) of that round's
    # own window: its root mean square error and its own degrees of freedom, which grow
    # with the errors known then (the effective size times 3 s^2 / (2 s^2 + 1), Isserlis
    # 1918, Biometrika 12, for the squares of Gaussian errors).
    from riskreport.replay import calibration

    rng = np.random.default_rng(8)
    h = 2
    errors = np.full((90, 3), np.nan)
    errors[:, h] = rng.normal(0.0, 1.0, 90)
    tests, train, test = calibration.training(errors, h, 40)
    n = tests.size
    data = calibration.HorizonData(
        h,
        tests,
        train,
        test,
        np.full(n, -1.0),
        np.full(n, 1.0),
        np.ones(n, int),
        np.ones((n, 3)) / 3,
    )
    run = calibration.replay_horizon("normal", data, mode=0.0, predictive=True)
    for i in (0, n // 2, n - 1):
        row = train[i][np.isfinite(train[i])]
        s = h + 1
        df = effective_sample_size(row.size, s) * 3 * s**2 / (2 * s**2 + 1)
        expected = stats.t.cdf(test[i], df, 0.0, np.sqrt(np.mean(row**2)))
        assert run.pit[i] == pytest.approx(expected, abs=1e-10)
    assert np.count_nonzero(np.isfinite(train[0])) < np.count_nonzero(np.isfinite(train[-1]))


@pytest.mark.parametrize(
    ("frequency", "as_of", "window"), [("monthly", "2024-12", 120), ("quarterly", "2024-Q4", 40)]
)
def test_a_config_without_uncertainty_gets_the_default_method(
    tmp_path: Path, frequency: str, as_of: str, window: int
) -> None:
    # Ten years' worth of rounds at either frequency (common practice, no source), the
    # normal law with its Student t predictive, its spread pooled, its centre the forecast
    # pooled with bias-corrected forecasts (centre = "auto").
    (tmp_path / "f.csv").write_text("origin,period,value\n")
    (tmp_path / "a.csv").write_text("period,value\n")
    path = tmp_path / "c.toml"
    path.write_text(
        f'[brief]\ntitle = "t"\ninstitution = "i"\nas_of = "{as_of}"\nfrequency = "{frequency}"\n'
        '[inputs]\nforecasts = "f.csv"\nactuals = "a.csv"\n[target]\nlower = 1.0\nupper = 3.0\n'
    )
    u = config_reader.load(path).uncertainty
    assert (u.distribution, u.centre, u.predictive, u.spread, u.recalibrate) == (
        "normal",
        "auto",
        "student-t",
        "auto",
        False,
    )
    assert u.window == window
    assert u.configured == ()
    pinned = path.read_text() + '[uncertainty]\npredictive = "plug-in"\ncentre = "estimated"\n'
    path.write_text(pinned)
    u = config_reader.load(path).uncertainty
    assert (u.predictive, u.centre, u.configured) == (
        "plug-in",
        "estimated",
        ("centre", "predictive"),
    )


def test_a_bias_the_forecast_centre_ignores_is_said(tmp_path: Path) -> None:
    # Two-piece-normal errors (mode 0.2, scales 0.4 and 0.9: mean error about +0.6 pp,
    # Wallis 2014, Statistical Science 29(1), the mean of the two-piece normal) with the
    # centre on the point forecast: the probabilities do not correct for the bias, so the
    # record's bias is said, not left silent.
    from riskreport.laws.distributions import NormalFit, Tilted
    from tests.conftest import constant_forecast_world

    truth = Tilted(NormalFit(loc=0.2, scale=0.65, loglik=0.0, nobs=1), (0.9 - 0.4) / 1.3)
    errors = truth.rvs(401, np.random.default_rng(99))
    path = constant_forecast_world(
        tmp_path, errors, distribution="normal", centre="forecast", predictive="student-t"
    )
    a = assess_config(config_reader.load(path), search=tmp_path / "none")
    said = [w for w in a.warnings if "do not correct for this bias" in w]
    assert len(said) == 1
    assert re.search(r"averaged up to \+0\.[5-7]\d pp", said[0])
    assert "outcomes above the forecast" in said[0]


def test_no_bias_is_said_where_the_forecasts_are_efficient(
    world: tuple[Path, np.ndarray, np.ndarray],
) -> None:
    path, _, _ = world
    a = assess_config(config_reader.load(path), search=path.parent / "none")
    assert not any("do not correct for this bias" in w for w in a.warnings)
