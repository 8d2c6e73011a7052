"""Every class of bad input: exit 2, one line on stderr naming file, row and column, no
traceback, nothing written (README, Inputs)."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest

from riskreport.errors import NameClashWarning
from riskreport.forecasts import track_record
from tests.conftest import Case, Result
from tests.conftest import build_fails as _fails


def test_good_case_builds(run: Callable[..., Result], case: Case) -> None:
    config = case.write()
    result = run("build", config, "--out", case.folder / "out", "-q")
    assert result.code == 0, result.stderr
    assert (case.folder / "out" / "assessment-2024-12.json").is_file()


@pytest.mark.parametrize("name", ["no-change", "Autoregression", "combination"])
def test_a_model_may_take_a_benchmarks_name(
    run: Callable[..., Result], case: Case, name: str
) -> None:
    # Staff commonly call their own random-walk forecaster "no-change": such a model was
    # refused (earlier still, silently replaced by the tool's own in every table). Now the
    # model keeps its name and the tool's own forecaster is renamed, with a warning.
    case.forecasts = [
        [*row[:2], name if i and row[2] == "b" else row[2], row[3]]
        for i, row in enumerate(case.forecasts)
    ]
    result = run("build", case.write(), "--out", case.folder / "out", "-q")
    assert result.code == 0, result.stderr
    data = json.loads((case.folder / "out" / "assessment-2024-12.json").read_text("utf-8"))
    forecasters = {row["model"] for row in data["accuracy"]}
    own = f"{name.casefold()} (riskreport)"
    assert {name, own} <= forecasters
    assert any(name in t["models"] for t in data["tests"])
    if own != "autoregression (riskreport)":  # the autoregression is scored, never tested
        assert any(own in t["models"] for t in data["tests"])
    assert any(repr(own) in w for w in data["warnings"])


def test_the_tools_own_names_step_aside_for_every_model() -> None:
    # Each of the tool's names is taken, and so is the first replacement of one of them.
    models = ["Combination", "no-change", "no-change (riskreport)", "autoregression"]
    with pytest.warns(NameClashWarning):
        names = track_record.own_names(models)
    assert names == track_record.OwnNames(
        "combination (riskreport)", "no-change (riskreport 2)", "autoregression (riskreport)"
    )
    chosen = [names.combination, names.no_change, names.autoregression]
    assert not {n.casefold() for n in chosen} & {m.casefold() for m in models}


def test_missing_column(run: Callable[..., Result], case: Case) -> None:
    case.forecasts = [row[:3] for row in case.forecasts]
    _fails(run, case, "forecasts.csv", "row 1", "missing column 'value'")


def test_unparseable_period(run: Callable[..., Result], case: Case) -> None:
    case.forecasts[5][0] = "2019/03"
    _fails(run, case, "forecasts.csv", "row 6", "column 'origin'", "'2019/03'")


@pytest.mark.parametrize("bad", ["abc", "inf", "nan", ""])
def test_non_numeric_or_non_finite_value(run: Callable[..., Result], case: Case, bad: str) -> None:
    case.actuals[9][1] = bad
    _fails(run, case, "actuals.csv", "row 10", "column 'value'", "finite number")


def test_duplicate_model_origin_period(run: Callable[..., Result], case: Case) -> None:
    case.forecasts.append(list(case.forecasts[3]))
    line = _fails(run, case, "forecasts.csv", f"row {len(case.forecasts)}", "duplicate")
    assert "row 4" in line


def test_origin_after_period(run: Callable[..., Result], case: Case) -> None:
    case.forecasts[7][0], case.forecasts[7][1] = "2019-05", "2019-02"
    _fails(run, case, "forecasts.csv", "row 8", "column 'origin'", "origin after period")


def test_mixed_frequencies(run: Callable[..., Result], case: Case) -> None:
    case.forecasts[12][1] = "2019-Q2"
    _fails(run, case, "forecasts.csv", "row 13", "column 'period'", "mixed frequencies")


def test_as_of_absent(run: Callable[..., Result], case: Case) -> None:
    case.config = case.config.replace('as_of = "2024-12"', 'as_of = "2025-06"')
    _fails(run, case, "forecasts.csv", "as_of 2025-06 is absent")


def test_band_lower_not_below_upper(run: Callable[..., Result], case: Case) -> None:
    case.config = case.config.replace("midpoint = 2.0\ntolerance = 1.0", "lower = 3.0\nupper = 3.0")
    _fails(run, case, "config.toml", "[target] lower", "lower < upper")


def test_negative_tolerance(run: Callable[..., Result], case: Case) -> None:
    case.config = case.config.replace("tolerance = 1.0", "tolerance = -1.0")
    _fails(run, case, "config.toml", "[target] tolerance")


def test_horizon_without_track_record(run: Callable[..., Result], case: Case) -> None:
    # Only the last two rounds: no forecast of horizon 3 has a known outcome.
    case.forecasts = [case.forecasts[0]] + [
        r for r in case.forecasts[1:] if r[0] in ("2024-11", "2024-12")
    ]
    _fails(run, case, "forecasts.csv", "horizon", "no track record")


def test_unknown_config_key(run: Callable[..., Result], case: Case) -> None:
    case.config = case.config.replace("tolerance = 1.0", "tolerence = 1.0")
    _fails(run, case, "config.toml", "[target] tolerence", "unknown key")


@pytest.mark.parametrize("family", ["skew-normal", "empirical"])
def test_ewma_spread_with_a_law_it_is_not_offered_for(
    run: Callable[..., Result], case: Case, family: str
) -> None:
    # Regression: spread = "ewma" with these laws left the replay no candidate
    # (IndexError, exit 1); the README offers it with the normal and two-piece normal.
    case.config = case.config.replace(
        'distribution = "normal"', f'distribution = "{family}"\nspread = "ewma"'
    )
    _fails(run, case, "config.toml", "[uncertainty] spread", family)


def test_a_window_too_short_for_a_fit_names_the_window(
    run: Callable[..., Result], case: Case
) -> None:
    # Regression: window = 1 was reported as "forecasts.csv, column 'origin': horizon 0
    # has no track record" although the file holds years of it; the cause is the key.
    case.config = case.config.replace("window = 0\n", "window = 1\n")
    _fails(run, case, "config.toml", "[uncertainty] window", "leaves 1 known error")


def test_invalid_toml(run: Callable[..., Result], case: Case) -> None:
    case.config = case.config + "\n[brief\n"
    _fails(run, case, "config.toml", "invalid TOML")


def test_missing_input_file(run: Callable[..., Result], case: Case) -> None:
    case.config = case.config.replace('"actuals.csv"', '"missing.csv"')
    _fails(run, case, "config.toml", "[inputs] actuals", "file not found")


def test_judgement_scale_must_be_positive(run: Callable[..., Result], case: Case) -> None:
    case.config += '\n[[judgement]]\nfrom = "2025-01"\nto = "2025-02"\nscale = 0\nreason = "x"\n'
    _fails(run, case, "config.toml", "[judgement 1] scale", "positive")


def test_judgement_to_before_from(run: Callable[..., Result], case: Case) -> None:
    case.config += '\n[[judgement]]\nfrom = "2025-03"\nto = "2025-01"\nreason = "x"\n'
    _fails(run, case, "config.toml", "[judgement 1] to")


def test_judgement_outside_reported_periods(run: Callable[..., Result], case: Case) -> None:
    case.config += '\n[[judgement]]\nfrom = "2030-01"\nto = "2030-02"\nreason = "x"\n'
    _fails(run, case, "config.toml", "[judgement 1] from", "covers no reported period")


def test_check_reports_bad_input_the_same_way(run: Callable[..., Result], case: Case) -> None:
    case.actuals[3][0] = "March 2018"
    config = case.write()
    result = run("check", config)
    assert result.code == 2
    assert "actuals.csv, row 4, column 'period'" in result.stderr


def test_json_summary_on_error(run: Callable[..., Result], case: Case) -> None:
    case.actuals[3][1] = "x"
    config = case.write()
    result = run("build", config, "--json")
    assert result.code == 2
    assert '"status": "error"' in result.stdout


def test_bom_is_tolerated(run: Callable[..., Result], case: Case) -> None:
    config = case.write()
    path = case.folder / "actuals.csv"
    path.write_bytes(b"\xef\xbb\xbf" + path.read_bytes())
    assert run("check", config, "-q").code == 0


def test_xlsx_input_with_row_numbers(run: Callable[..., Result], case: Case) -> None:
    import pandas as pd

    case.write()
    frame = pd.read_csv(case.folder / "actuals.csv", dtype=str)
    frame.loc[4, "value"] = "n/a"
    frame.to_excel(case.folder / "actuals.xlsx", index=False)
    case.config = case.config.replace('"actuals.csv"', '"actuals.xlsx"')
    _fails(run, case, "actuals.xlsx", "row 6", "column 'value'")


def test_xlsx_dates_read_as_months(run: Callable[..., Result], case: Case) -> None:
    import pandas as pd

    case.write()
    frame = pd.read_csv(case.folder / "actuals.csv", dtype=str)
    frame["period"] = pd.to_datetime(frame["period"] + "-01")  # what a spreadsheet makes
    frame["value"] = frame["value"].astype(float)
    frame.to_excel(case.folder / "actuals.xlsx", index=False)
    case.config = case.config.replace('"actuals.csv"', '"actuals.xlsx"')
    config = case.write()
    (case.folder / "actuals.csv").unlink()
    assert run("check", config, "-q").code == 0


def test_existing_output_is_not_replaced(run: Callable[..., Result], case: Case) -> None:
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--out", out, "-q").code == 0
    first = (out / "assessment-2024-12.json").read_bytes()
    # Identical inputs: the files are identical, so a re-run succeeds and changes nothing.
    assert run("build", config, "--out", out, "-q").code == 0
    case.config = case.config.replace("tolerance = 1.0", "tolerance = 1.5")
    case.write()
    result = run("build", config, "--out", out)
    assert result.code == 2
    assert "--force" in result.stderr
    assert (out / "assessment-2024-12.json").read_bytes() == first
    assert run("build", config, "--out", out, "--force", "-q").code == 0
    assert (out / "assessment-2024-12.json").read_bytes() != first
    records = (out / "runs.jsonl").read_text(encoding="utf-8").splitlines()
    assert len(records) == 4


def test_as_of_override(run: Callable[..., Result], case: Case, tmp_path: Path) -> None:
    config = case.write()
    result = run("build", config, "--as-of", "2024-06", "--out", tmp_path / "o", "-q")
    assert result.code == 0, result.stderr
    assert (tmp_path / "o" / "assessment-2024-06.json").is_file()
    bad = run("build", config, "--as-of", "2024-Q2", "--out", tmp_path / "p")
    assert bad.code == 2
    assert "--as-of" in bad.stderr


def test_backtest_prints_and_writes_tables(run: Callable[..., Result], case: Case) -> None:
    config = case.write()
    out = case.folder / "bt"
    result = run("backtest", config, "--out", out)
    assert result.code == 0, result.stderr
    assert "Diebold-Mariano" in result.stdout
    assert "combination" in result.stdout
    for name in ("accuracy", "tests", "weights"):
        assert (out / "tables" / f"{name}-2024-12.csv").is_file()
    header = (out / "tables" / "tests-2024-12.csv").read_text("utf-8").splitlines()[0]
    assert header.startswith("name,models,h,statistic,pvalue,nobs,null")


def test_batch_over_months_and_configs(
    run: Callable[..., Result], case: Case, tmp_path: Path
) -> None:
    config = case.write()
    out = tmp_path / "b"
    result = run("batch", config, "--months", "2024-10..2024-12", "--out", out, "--json", "-q")
    assert result.code == 0, result.stderr
    import json

    summary = json.loads(result.stdout)
    assert [b["as_of"] for b in summary["briefs"]] == ["2024-10", "2024-11", "2024-12"]
    latest = json.loads((out / "assessment-2024-12.json").read_text("utf-8"))
    assert latest["change"]["previous_as_of"] == "2024-11"
    # One bad config fails alone; the batch exits with the worst code.
    bad = tmp_path / "bad.toml"
    bad.write_text(case.config.replace('as_of = "2024-12"', 'as_of = "2031-01"'))
    (tmp_path / "forecasts.csv").write_bytes((case.folder / "forecasts.csv").read_bytes())
    (tmp_path / "actuals.csv").write_bytes((case.folder / "actuals.csv").read_bytes())
    mixed = run("batch", config, bad, "--out", tmp_path / "m", "--json", "-q")
    assert mixed.code == 2
    codes = [b["exit_code"] for b in json.loads(mixed.stdout)["briefs"]]
    assert codes == [0, 2]
    assert (tmp_path / "m" / "assessment-2024-12.json").is_file()
    assert run("batch", config, "--months", "2024-12..2024-10").code == 2
    # Quarters for a monthly config: said once, naming --months (it was said once per
    # round, naming --as-of, which the user never typed).
    wrong = run("batch", config, "--months", "2024-Q1..2024-Q3", "--out", tmp_path / "q")
    assert wrong.code == 2
    lines = wrong.stderr.strip().splitlines()
    assert len(lines) == 1, wrong.stderr
    assert "--months expected monthly periods like" in lines[0]
    assert "2024-Q1..2024-Q3" in lines[0]
    assert not (tmp_path / "q").exists()


def test_a_file_changed_between_reads_is_read_again(case: Case) -> None:
    # Parsed CSV files are kept for the rounds of a batch: a file whose content changed
    # must be parsed afresh, and a kept parse must not be changed by its reader.
    from riskreport.reading import inputs

    case.write()
    path = case.folder / "actuals.csv"
    first = inputs.read_actuals(path, "monthly")
    assert inputs._read_csv(path) is not inputs._read_csv(path)
    rows = path.read_text(encoding="utf-8").splitlines()
    label, value = rows[-1].split(",")
    rows[-1] = f"{label},{float(value) + 1:.3f}"
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    again = inputs.read_actuals(path, "monthly")
    assert again.value[-1] == pytest.approx(first.value[-1] + 1, abs=1e-9)
    assert np.array_equal(again.value[:-1], first.value[:-1])


def test_window_choice_needs_a_law_whose_window_it_chooses(
    run: Callable[..., Result], case: Case
) -> None:
    # The replay chooses the window of the normal law only: with another fixed law the
    # choice could not reach today's probabilities, and the brief contradicted itself.
    case.config = case.config.replace(
        'distribution = "normal"', 'distribution = "two-piece-normal"\nwindow_choice = "auto"'
    )
    _fails(run, case, "config.toml", "window_choice", "two-piece-normal")


@pytest.mark.parametrize("jobs", ["0", "-3", "two"])
def test_batch_jobs_must_be_at_least_one(run: Callable[..., Result], case: Case, jobs: str) -> None:
    # `--jobs 0` and `--jobs -3` ran silently (exit 0) before.
    config = case.write()
    with pytest.raises(SystemExit) as stopped:
        run("batch", config, "--jobs", jobs, "--out", case.folder / "out")
    assert stopped.value.code == 2
    assert not (case.folder / "out").exists()
