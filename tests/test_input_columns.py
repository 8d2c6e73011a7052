"""A newcomer's mistakes, each named: misnamed and unknown columns (CSV and .xlsx, in every
input table), gaps in the outcome series, a round without a nowcast, and the backtest's
horizons and files (docs/quickstart.md)."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pytest

from riskreport.errors import InputError
from riskreport.reading import periods
from tests.conftest import Case, Result
from tests.conftest import build_fails as _fails


def _rename(rows: list[list[str]], old: str, new: str) -> list[list[str]]:
    return [[new if i == 0 and cell == old else cell for cell in row] for i, row in enumerate(rows)]


def _add_column(rows: list[list[str]], name: str, value: str) -> list[list[str]]:
    return [[*row, name if i == 0 else value] for i, row in enumerate(rows)]


# Columns.


def test_a_model_column_under_another_name_is_named(run: Callable[..., Result], case: Case) -> None:
    # Was: "row 3, column 'period': duplicate (model, origin, period)": the unknown column
    # was ignored and the file read as one combined forecast.
    case.forecasts = _rename(case.forecasts, "model", "forecaster")
    line = _fails(run, case, "forecasts.csv", "row 1")
    assert line.endswith(
        "no column 'model'; found 'forecaster': rename it to 'model', or remove it for an "
        "already-combined forecast"
    )


def test_the_same_in_a_workbook(run: Callable[..., Result], case: Case) -> None:
    import pandas as pd

    case.forecasts = _rename(case.forecasts, "model", "Forecaster")
    case.write()
    pd.read_csv(case.folder / "forecasts.csv", dtype=str).to_excel(
        case.folder / "forecasts.xlsx", index=False, sheet_name="fc"
    )
    case.config = case.config.replace('"forecasts.csv"', '"forecasts.xlsx"')
    _fails(run, case, "forecasts.xlsx", "sheet 'fc'", "row 1", "found 'forecaster'")


@pytest.mark.parametrize(
    ("table", "old", "new", "expected"),
    [
        ("forecasts", "value", "valeu", "missing column 'value'"),
        ("forecasts", "origin", "orgin", "missing column 'origin'"),
        ("actuals", "period", "perod", "missing column 'period'"),
        ("actuals", "value", "Values", "missing column 'value'"),
    ],
)
def test_a_misspelt_column_is_named_with_the_closest_match(
    run: Callable[..., Result], case: Case, table: str, old: str, new: str, expected: str
) -> None:
    rows = case.forecasts if table == "forecasts" else case.actuals
    renamed = _rename(rows, old, new)
    if table == "forecasts":
        case.forecasts = renamed
    else:
        case.actuals = renamed
    line = _fails(run, case, f"{table}.csv", "row 1", expected)
    assert f"{new.lower()!r} looks like '{old}' misspelt: rename it to '{old}'" in line
    assert "expected columns" in line


def test_a_horizon_column_instead_of_the_period_says_how_to_convert(
    run: Callable[..., Result], case: Case
) -> None:
    case.forecasts = _rename(case.forecasts, "period", "h")
    _fails(run, case, "forecasts.csv", "missing column 'period'", "period = origin + h")


def test_error_quantiles_columns_are_checked_the_same_way(case: Case) -> None:
    path = case.folder / "q.csv"
    path.write_text("horizon,quantiles,value\n0,0.1,-1\n0,0.9,1\n", encoding="utf-8")
    from riskreport.reading.inputs import read_error_quantiles

    with pytest.raises(InputError, match="'quantiles' looks like 'quantile' misspelt"):
        read_error_quantiles(path)


@pytest.mark.parametrize(
    ("table", "old", "new"), [("actuals", "", "vintages"), ("forecasts", "model", "modle")]
)
def test_a_misspelt_optional_column_is_refused(
    run: Callable[..., Result], case: Case, table: str, old: str, new: str
) -> None:
    # Ignored, a misspelt optional column changes what the file means (every release
    # taken as one value, several models taken as one combined forecast).
    if table == "actuals":
        case.actuals = _add_column(case.actuals, new, "2030-01")
    else:
        case.forecasts = _rename(case.forecasts, old, new)
    line = _fails(run, case, f"{table}.csv", "row 1", f"unknown column '{new}'")
    assert "misspelt" in line


def test_an_unused_column_is_named_in_a_warning(
    run: Callable[..., Result], case: Case, tmp_path: Path
) -> None:
    case.forecasts = _add_column(case.forecasts, "source", "staff")
    case.actuals = _add_column(case.actuals, "note", "")
    config = case.write()
    checked = run("check", config)
    assert checked.code == 0, checked.stderr
    assert "warning: forecasts.csv: column 'source' is not used" in checked.stdout
    assert "warning: actuals.csv: column 'note' is not used" in checked.stdout
    built = run("build", config, "--out", tmp_path / "out", "--json", "-q")
    assert built.code == 0, built.stderr
    warnings = json.loads(built.stdout)["warnings"]
    assert any("'source'" in w and "forecasts.csv" in w for w in warnings)


def test_a_column_with_values_but_no_heading_is_named(
    run: Callable[..., Result], case: Case
) -> None:
    case.actuals = _add_column(case.actuals, "", "x")
    # A trailing comma on every line (an empty column) is not worth a warning.
    case.forecasts = _add_column(case.forecasts, "", "")
    checked = run("check", case.write())
    assert checked.code == 0, checked.stderr
    assert "warning: actuals.csv: column 3 (no heading) is not used" in checked.stdout
    assert "forecasts.csv: column" not in checked.stdout


def test_a_combined_forecast_without_model_column_still_reads(
    run: Callable[..., Result], case: Case
) -> None:
    case.forecasts = [[o, p, v] for o, p, m, v in case.forecasts if m in ("model", "a")]
    assert run("check", case.write(), "-q").code == 0


# Gaps in the outcomes.


def test_a_gap_in_the_outcomes_is_named_in_check_build_and_json(
    run: Callable[..., Result], case: Case, tmp_path: Path
) -> None:
    # One month, then three in a row, missing between the first and the last outcome.
    case.actuals = [
        r for r in case.actuals if r[0] not in ("2020-06", "2021-02", "2021-03", "2021-04")
    ]
    config = case.write()
    checked = run("check", config)
    assert checked.code == 0, checked.stderr
    line = next(x for x in checked.stdout.splitlines() if "no outcome for" in x)
    assert "2020-06, 2021-02 to 2021-04: 4 months missing between 2017-12 and 2024-11" in line
    built = run("build", config, "--out", tmp_path / "out", "--json")
    assert built.code == 0, built.stderr
    assert any("2021-02 to 2021-04" in w for w in json.loads(built.stdout)["warnings"])
    assert "riskreport: warning: The actuals (actuals.csv) have no outcome" in built.stderr
    assessment = json.loads((tmp_path / "out" / "assessment-2024-12.json").read_text("utf-8"))
    assert any("2020-06" in w for w in assessment["warnings"])


def test_many_gaps_are_counted_beyond_the_first_dozen(
    run: Callable[..., Result], case: Case
) -> None:
    # Every other month of 2018-2020 missing: the first 12 named, the other 6 counted.
    dropped = {f"{y}-{m:02d}" for y in (2018, 2019, 2020) for m in range(1, 13, 2)}
    case.actuals = [r for r in case.actuals if r[0] not in dropped]
    checked = run("check", case.write())
    line = next(x for x in checked.stdout.splitlines() if "no outcome for" in x)
    assert "no outcome for 2018-01, 2018-03" in line
    assert "2019-11 and 6 more months: 18 months missing" in line
    assert "2020-01" not in line


def test_outcomes_without_a_gap_give_no_gap_warning(run: Callable[..., Result], case: Case) -> None:
    checked = run("check", case.write())
    assert "no outcome for" not in checked.stdout


# The current round's horizons.


def test_a_round_without_a_nowcast_explains_the_convention(
    run: Callable[..., Result], case: Case
) -> None:
    case.forecasts = [r for r in case.forecasts if not (r[0] == "2024-12" and r[1] == "2024-12")]
    line = _fails(run, case, "forecasts.csv", "horizon 0", "h = 0 is the nowcast", "h = k - 1")
    assert "origin = period = 2024-12" in line
    assert "outcomes up to 2024-11" in line


def test_forecasts_dated_by_their_last_observation_are_told_to_move(
    run: Callable[..., Result], case: Case
) -> None:
    # The user's round 2024-12 holds only h >= 1 and the actuals hold 2024-12 itself: the
    # forecasts start from that observation, so the round is 2025-01.
    case.forecasts = [r for r in case.forecasts if not (r[0] == "2024-12" and r[1] == "2024-12")]
    case.actuals.append(["2024-12", "2.1"])
    _fails(run, case, "forecasts.csv", "horizon 0", "set as_of to 2025-01")


def test_a_missing_later_horizon_names_the_config_key(
    run: Callable[..., Result], case: Case
) -> None:
    case.forecasts = [r for r in case.forecasts if not (r[0] == "2024-12" and r[1] == "2025-03")]
    _fails(run, case, "forecasts.csv", "horizon 3", "[brief] horizons = 2")


@pytest.mark.parametrize("method", ["equal", "inverse-mse"])
def test_a_forecaster_that_never_nowcasts_is_combined_where_it_forecasts(
    run: Callable[..., Result], case: Case, tmp_path: Path, method: str
) -> None:
    # What docs/quickstart.md tells a user whose forecaster gives no h = 0.
    case.forecasts = [r for r in case.forecasts if not (r[2] == "c" and r[0] == r[1])]
    case.config = case.config.replace('method = "equal"', f'method = "{method}"')
    config = case.write()
    result = run("build", config, "--out", tmp_path / "out", "-q")
    assert result.code == 0, result.stderr
    weights = json.loads((tmp_path / "out" / "assessment-2024-12.json").read_text("utf-8"))[
        "combination"
    ]["weights"]
    assert {w["model"] for w in weights if w["h"] == 0} == {"a", "b"}
    assert {w["model"] for w in weights if w["h"] == 1} == {"a", "b", "c"}


# backtest.


def test_backtest_prints_every_horizon_and_the_files_it_wrote(
    run: Callable[..., Result], case: Case
) -> None:
    config = case.write()
    out = case.folder / "bt"
    result = run("backtest", config, "--out", out)
    assert result.code == 0, result.stderr
    lines = result.stdout.splitlines()
    first = [x.split()[0] for x in lines if x[:1].isdigit()]
    assert first == ["0", "1", "2", "3"] * 2  # the RMSE table, then the tests
    written = [Path(x.strip()) for x in lines if x.startswith("  ")]
    assert len(written) == 3
    assert all((p if p.is_absolute() else Path.cwd() / p).is_file() for p in written)
    assert any(x.startswith("Run recorded in") and "runs.jsonl" in x for x in lines)


def test_backtest_prints_the_horizons_asked(run: Callable[..., Result], case: Case) -> None:
    config = case.write()
    result = run("backtest", config, "--out", case.folder / "bt", "--horizons", "0,2-3")
    assert result.code == 0, result.stderr
    first = [x.split()[0] for x in result.stdout.splitlines() if x[:1].isdigit()]
    assert first == ["0", "2", "3"] * 2


@pytest.mark.parametrize("asked", ["0-4", "x", "3-1", "", "1,,2"])
def test_backtest_refuses_horizons_it_does_not_report(
    run: Callable[..., Result], case: Case, asked: str
) -> None:
    config = case.write()
    result = run("backtest", config, "--out", case.folder / "bt", "--horizons", asked)
    if asked == "":
        assert result.code == 0  # an empty choice is no choice: every horizon
        return
    assert result.code == 2
    assert "--horizons expected whole numbers from 0 to 3" in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1


def test_horizon_ranges_round_trip() -> None:
    values = [0, 1, 2, 5, 7, 8, 9]
    text = periods.ranges(values).replace("\u2013", "-")
    assert periods.parse_ranges(text, largest=9) == tuple(values)
    assert periods.parse_ranges(" 4 , 0-1 ,1", largest=9) == (0, 1, 4)


# The windows on the method page.


def test_the_method_page_states_both_windows_and_why(case: Case) -> None:
    import dataclasses

    import riskreport
    from riskreport.report.sections import method

    a = riskreport.assess(case.write())  # equal weights, every past error
    assert "none estimated (the equal method uses no past rounds)" in method.windows_text(a)

    def variant(weights: int, errors: int) -> str:
        return method.windows_text(
            dataclasses.replace(
                a,
                combination=dataclasses.replace(a.combination, method="ols", window=weights),
                uncertainty=dataclasses.replace(a.uncertainty, window=errors),
            )
        )

    longer = variant(0, 60)
    assert "the last 60 rounds with a known outcome" in longer
    assert "Combination weights: every past round" in longer
    assert "The weights look further back" in longer
    assert "look less far back" in variant(40, 0)
    assert "Both use the same past rounds" in variant(60, 60)
