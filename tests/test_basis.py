"""``[target] basis``: the headline and the summary table speak of the configured measure.

Regression: before, ``calendar-year-average`` and ``year-end`` changed nothing on page 1 and
the assessment had no record of the headline measure. The numbers are checked against closed
forms: with normal margins and a Gaussian copula the reported periods are jointly normal, so
the average of n of them is normal with mean 1'mu/n and variance 1'Sigma 1/n^2 (e.g. Anderson
2003, An Introduction to Multivariate Statistical Analysis, 3rd ed., theorem 2.4.1).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy import stats

import riskreport
import riskreport.cli
from riskreport.report import context
from tests import quarterly_world as qw

BAND = (1.0, 3.0)
TOL = 0.012  # 40 000 simulated paths: Monte Carlo sd of a share <= 0.0025


def _van_der_waerden(errors: np.ndarray) -> np.ndarray:
    """Normal scores Phi^-1(rank / (n + 1)) per column, correlation over pairs known in both
    (van der Waerden 1952; the published definition, computed here with scipy)."""
    k = errors.shape[1]
    scores = np.full(errors.shape, np.nan)
    for j in range(k):
        ok = np.isfinite(errors[:, j])
        scores[ok, j] = stats.norm.ppf(stats.rankdata(errors[ok, j]) / (ok.sum() + 1))
    corr = np.eye(k)
    for i in range(k):
        for j in range(i + 1, k):
            both = np.isfinite(scores[:, i]) & np.isfinite(scores[:, j])
            corr[i, j] = corr[j, i] = np.corrcoef(scores[both, i], scores[both, j])[0, 1]
    return corr


def _margins(world: qw.World) -> tuple[np.ndarray, np.ndarray]:
    """Per horizon the outcome's mean and sd: the current combined forecast plus the MLE
    normal fit (mean, sd with divisor n) of that horizon's past errors."""
    e = qw.errors(world)
    mean = np.array([np.nanmean(e[:, h]) for h in range(qw.HORIZONS + 1)])
    sd = np.array([np.nanstd(e[:, h]) for h in range(qw.HORIZONS + 1)])
    point = np.array([world.combined[qw.AS_OF, h] for h in range(qw.HORIZONS + 1)])
    return point + mean, sd


def _shares(dist: stats.rv_continuous, lo: float, hi: float) -> tuple[float, float, float]:
    below, above = float(dist.cdf(lo)), float(dist.sf(hi))
    return below, 1 - below - above, above


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> dict[str, riskreport.Assessment]:
    out = {}
    for basis in ("period", "calendar-year-average", "year-end"):
        folder = tmp_path_factory.mktemp(basis)
        qw.write(folder, basis=basis)
        out[basis] = riskreport.assess(folder / "config.toml")
    return out


@pytest.fixture(scope="module")
def world(tmp_path_factory: pytest.TempPathFactory) -> qw.World:
    return qw.write(tmp_path_factory.mktemp("world"))


def test_period_basis_headline_is_the_policy_horizon(
    built: dict[str, riskreport.Assessment],
) -> None:
    a = built["period"]
    assert a.headline.basis == "period"
    assert a.headline.label == a.policy.period == "2025-Q4"
    assert a.headline.p_inside == a.policy.p_inside
    assert a.headline.p_inside_interval == a.policy.p_inside_interval
    assert a.basis_results == ()


def test_calendar_year_average_headline_matches_the_closed_form(
    built: dict[str, riskreport.Assessment], world: qw.World
) -> None:
    a = built["calendar-year-average"]
    # The policy horizon h = 4 is 2025-Q4: the headline is the 2025 average, the mean of
    # the rates of 2025-Q1..Q4 = h 1..4, all simulated.
    head = a.headline
    assert (head.basis, head.label, head.year, head.period) == (
        "calendar-year-average",
        "2025 average",
        2025,
        "2025-Q4",
    )
    assert (head.observed_periods, head.simulated_periods) == (0, 4)
    mu, sd = _margins(world)
    corr = _van_der_waerden(qw.errors(world))
    idx = [1, 2, 3, 4]
    cov = corr[np.ix_(idx, idx)] * np.outer(sd[idx], sd[idx])
    average = stats.norm(mu[idx].mean(), np.sqrt(cov.sum()) / 4)
    expected = _shares(average, *BAND)
    assert (head.p_below, head.p_inside, head.p_above) == pytest.approx(expected, abs=TOL)
    # The year of as_of: 2024-Q1..Q3 observed (known outcomes), Q4 (h = 0) simulated.
    row = next(r for r in a.basis_results if r.year == 2024)
    assert (row.observed_periods, row.simulated_periods) == (3, 1)
    known = sum(world.outcomes[qw.AS_OF - k] for k in (1, 2, 3))
    first = stats.norm(mu[0], sd[0])
    lo, hi = 4 * BAND[0] - known, 4 * BAND[1] - known
    assert row.p_inside == pytest.approx(first.cdf(hi) - first.cdf(lo), abs=TOL)
    # 2026 is not wholly reported (h = 7 is 2026-Q3): not in view.
    assert [r.year for r in a.basis_results] == [2024, 2025]


def test_year_end_headline_matches_the_closed_form(
    built: dict[str, riskreport.Assessment], world: qw.World
) -> None:
    a = built["year-end"]
    head = a.headline
    assert (head.basis, head.label, head.period) == ("year-end", "2025 year end", "2025-Q4")
    mu, sd = _margins(world)
    expected = _shares(stats.norm(mu[4], sd[4]), *BAND)
    assert (head.p_below, head.p_inside, head.p_above) == pytest.approx(expected, abs=TOL)


def test_the_bases_give_different_headlines_and_page_one_speaks_of_them(
    built: dict[str, riskreport.Assessment],
) -> None:
    inside = {basis: a.headline.p_inside for basis, a in built.items()}
    # The average of four imperfectly correlated periods is less dispersed than one period.
    assert inside["calendar-year-average"] > inside["period"] + 0.03
    texts = {basis: context.build(a, {}, "run").summary.headline for basis, a in built.items()}
    assert len(set(texts.values())) == 3
    assert texts["calendar-year-average"].startswith("Averaged over 2025")
    assert texts["year-end"].startswith("At the end of 2025 (2025-Q4)")
    c = context.build(built["calendar-year-average"], {}, "run")
    assert c.summary.basis is not None
    assert [r.year for r in c.summary.basis.rows] == ["2024", "2025"]
    assert any(
        k.label == "Target basis" and "mean of the year's 4 quarterly rates" in k.value
        for k in c.method.facts.rows
    )
    assert context.build(built["period"], {}, "run").summary.basis is None


def test_json_holds_the_headline_record(built: dict[str, riskreport.Assessment]) -> None:
    data = built["year-end"].to_dict()
    assert data["headline"]["label"] == "2025 year end"
    assert data["headline"]["p_inside_interval"] is None
    assert [r["year"] for r in data["basis_results"]] == [2024, 2025]


def test_policy_year_not_in_view_falls_back_with_a_warning(tmp_path: Path) -> None:
    # Horizons 0..5 end in 2026-Q1; policy horizon 5 -> 2026, not wholly reported.
    qw.write(tmp_path, basis="calendar-year-average", simulations=2000)
    cfg = tmp_path / "config.toml"
    cfg.write_text(
        cfg.read_text()
        .replace("horizons = 7", "horizons = 5")
        .replace("policy_horizon = 4", "policy_horizon = 5")
    )
    a = riskreport.assess(cfg)
    assert a.headline.label == "2025 average"
    assert any("do not reach the end of 2026" in w for w in a.warnings)


def test_annual_basis_summary_fits_on_the_first_page(tmp_path: Path) -> None:
    # With an annual basis page 1 carries the table by year; the per-period table is the
    # supporting detail at the head of the outlook, so the cautions box stays on page 1
    # (it spilled onto an otherwise empty page 2 when both tables were on page 1).
    from pypdf import PdfReader

    qw.write(tmp_path, basis="calendar-year-average", simulations=2000)
    config = tmp_path / "config.toml"
    config.write_text(config.read_text().replace('formats = ["json"]', 'formats = ["pdf"]'))
    assert riskreport.cli.main(["build", str(config), "--out", str(tmp_path / "o"), "-q"]) == 0
    reader = PdfReader(next((tmp_path / "o").glob("brief-*.pdf")))
    first, second = (" ".join(reader.pages[i].extract_text().split()) for i in (0, 1))
    assert "The calendar-year average" in first
    assert "does not replace, the judgement of the policy committee" in first
    assert "Per period (supporting detail)" not in first
    assert "Per period (supporting detail)" in second
