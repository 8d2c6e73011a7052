"""A brief of the current period alone (``horizons = 0``): a nowcast's probabilities are a
sensible brief, so it builds, with no warning of the plotting library on the way."""

from __future__ import annotations

import json
import warnings
from collections.abc import Callable

import riskreport
from riskreport.report import charts
from tests.conftest import Case, Result


def _nowcast_only(case: Case) -> Case:
    case.config = (
        case.config.replace("horizons = 3", "horizons = 0")
        .replace("policy_horizon = 2", "policy_horizon = 0")
        .replace('formats = ["json", "csv"]', 'formats = ["json", "html", "png"]')
    )
    return case


def test_a_nowcast_only_brief_builds_without_plotting_warnings(
    run: Callable[..., Result], case: Case
) -> None:
    # horizons = 0 let two matplotlib warnings through (the probability chart's x axis from
    # horizon 0 to horizon 0 is singular), once in each process of the render.
    out = case.folder / "out"
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        result = run("build", _nowcast_only(case).write(), "--out", out, "-q")
    assert result.code == 0, result.stderr
    assert "Warning" not in result.stderr
    data = json.loads((out / "assessment-2024-12.json").read_text("utf-8"))
    assert [row["h"] for row in data["horizons"]] == [0]
    assert (out / "charts" / "band-probabilities-2024-12.png").is_file()


def test_the_probability_chart_of_one_horizon_spans_half_a_period_either_side(
    case: Case,
) -> None:
    a = riskreport.assess(_nowcast_only(case).write())
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        fig = charts.band_probabilities_figure(a)
    assert fig.axes[0].get_xlim() == (-0.5, 0.5)
