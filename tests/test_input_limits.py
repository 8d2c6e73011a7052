"""Hostile and extreme input: implausible magnitudes and years, unbounded config numbers,
over-long texts, repeated columns, files that are not what their name says, blank lines,
byte-order marks, formula cells without values, and user text in chart labels. Each is exit
2 with one line naming the file, row and column (or the config key), no traceback and no
output."""

from __future__ import annotations

import re
from collections.abc import Callable
from pathlib import Path
from types import SimpleNamespace
from xml.etree import ElementTree

import openpyxl
import pytest

from riskreport.assessment import WeightRow
from riskreport.errors import InputError
from riskreport.reading.inputs import read_actuals, read_forecasts
from riskreport.report import charts
from tests.conftest import Case, Result
from tests.conftest import build_fails as _fails

LONG_NAMES = tuple(f"{i}-" + "a long and descriptive model name " * 3 for i in range(8))

# --- implausible magnitudes and years ---------------------------------------------------


@pytest.mark.parametrize("bad", ["1e308", "-1e308", "1000.5", "1e5"])
def test_implausible_actual(run: Callable[..., Result], case: Case, bad: str) -> None:
    case.actuals[9][1] = bad
    _fails(run, case, "actuals.csv", "row 10", "column 'value'", "implausible", "max_abs_value")


def test_implausible_forecast(run: Callable[..., Result], case: Case) -> None:
    case.forecasts[20][3] = "1e308"
    _fails(run, case, "forecasts.csv", "row 21", "column 'value'", "between -1000 and 1000")


def test_max_abs_value_override(run: Callable[..., Result], case: Case) -> None:
    case.actuals[9][1] = "1500"
    case.config = case.config.replace(
        'actuals = "actuals.csv"', 'actuals = "actuals.csv"\nmax_abs_value = 2000'
    )
    assert run("check", case.write(), "-q").code == 0
    case.config = case.config.replace("max_abs_value = 2000", "max_abs_value = 1e9")
    _fails(run, case, "config.toml", "[inputs] max_abs_value")


@pytest.mark.parametrize("year", ["0000", "1799", "2201", "9999"])
def test_implausible_year_in_a_table(run: Callable[..., Result], case: Case, year: str) -> None:
    case.actuals[3][0] = f"{year}-03"
    _fails(run, case, "actuals.csv", "row 4", "column 'period'", "from 1800 to 2200")


def test_implausible_year_in_the_config(run: Callable[..., Result], case: Case) -> None:
    case.config = case.config.replace('as_of = "2024-12"', 'as_of = "0000-12"')
    _fails(run, case, "config.toml", "[brief] as_of", "from 1800 to 2200")


def test_implausible_year_in_as_of_option(run: Callable[..., Result], case: Case) -> None:
    result = run("check", case.write(), "--as-of", "0000-01")
    assert result.code == 2
    assert "--as-of" in result.stderr
    assert "1800" in result.stderr


# --- config numbers without upper bounds --------------------------------------------------


@pytest.mark.parametrize(
    ("old", "new", "key"),
    [
        (
            "bootstrap_replicates = 100",
            "bootstrap_replicates = 2000000000",
            "[uncertainty] bootstrap_replicates",
        ),
        ("simulations = 2000", "simulations = 2000000000", "[uncertainty] simulations"),
        ("window = 0", "window = 100000000", "[uncertainty] window"),
        ("horizons = 3", "horizons = 100000", "[brief] horizons"),
        ("policy_horizon = 2", "policy_horizon = 100000", "[brief] policy_horizon"),
        ('method = "equal"', 'method = "equal"\nwindow = 10000000', "[combination] window"),
        ("midpoint = 2.0", "midpoint = 1e308", "[target] midpoint"),
        ("tolerance = 1.0", "tolerance = 1e300", "[target] tolerance"),
    ],
)
def test_config_upper_bounds(
    run: Callable[..., Result], case: Case, old: str, new: str, key: str
) -> None:
    assert old in case.config
    case.config = case.config.replace(old, new)
    line = _fails(run, case, "config.toml", key)
    # The message names the allowed range, e.g. "from 50 to 100000" or "from -1000 to 1000".
    assert re.search(r"from -?[\d.]+ to [\d.]+", line), line


@pytest.mark.parametrize(("key", "value"), [("shift", "1e300"), ("scale", "1e9"), ("skew", "-1e9")])
def test_judgement_upper_bounds(
    run: Callable[..., Result], case: Case, key: str, value: str
) -> None:
    case.config += (
        f'\n[[judgement]]\nfrom = "2025-01"\nto = "2025-02"\n{key} = {value}\nreason = "x"\n'
    )
    _fails(run, case, "config.toml", f"[judgement 1] {key}")


# --- texts without length limits -------------------------------------------------------


# Reproduction of the issue: an 80 KB title took 135 s and made a 60-page brief.
@pytest.mark.parametrize(("key", "limit"), [("title", 200), ("institution", 200)])
def test_long_brief_texts(run: Callable[..., Result], case: Case, key: str, limit: int) -> None:
    old = next(line for line in case.config.splitlines() if line.startswith(f"{key} = "))
    case.config = case.config.replace(old, f'{key} = "{"x" * limit}"')
    assert run("check", case.write(), "-q").code == 0
    case.config = case.config.replace(f'{key} = "{"x" * limit}"', f'{key} = "{"x" * 80_000}"')
    _fails(run, case, "config.toml", f"[brief] {key}", f"at most {limit} characters", "80000")


@pytest.mark.parametrize("kind", ["judgement", "scenario"])
def test_long_reasons_and_scenario_names(run: Callable[..., Result], case: Case, kind: str) -> None:
    name = 'name = "s"\n' if kind == "scenario" else ""
    entry = f'\n[[{kind}]]\n{name}from = "2025-01"\nto = "2025-02"\nshift = 0.1\n'
    base = case.config
    case.config = base + entry + f'reason = "{"r" * 2000}"\n'
    assert run("check", case.write(), "-q").code == 0
    case.config = base + entry + f'reason = "{"r" * 2001}"\n'
    _fails(run, case, "config.toml", f"[{kind} 1] reason", "at most 2000 characters")
    if kind == "scenario":
        case.config = base + entry.replace('"s"', f'"{"n" * 81}"') + 'reason = "r"\n'
        _fails(run, case, "config.toml", "[scenario 1] name", "at most 80 characters")


def test_long_model_name(run: Callable[..., Result], case: Case) -> None:
    first = next(i for i, row in enumerate(case.forecasts) if row[2] == "b")
    for row in case.forecasts[1:]:
        if row[2] == "b":
            row[2] = "m" * 81
    where = f"row {first + 1}"  # the header is row 1
    _fails(run, case, "forecasts.csv", where, "column 'model'", "at most 80 characters")


# --- files that are not what they seem ---------------------------------------------------


def test_duplicate_columns_after_case_folding(run: Callable[..., Result], case: Case) -> None:
    case.actuals = [[*row, row[1]] for row in case.actuals]
    case.actuals[0][2] = "Value"
    _fails(run, case, "actuals.csv", "row 1", "'value' appears 2 times", "'Value'")


@pytest.mark.parametrize("content", [b"", b"period,value\n2020-01,1.0\n", b"PK\x03\x04broken"])
def test_xlsx_that_is_not_a_workbook(
    run: Callable[..., Result], case: Case, content: bytes
) -> None:
    case.write()
    (case.folder / "actuals.xlsx").write_bytes(content)
    case.config = case.config.replace('"actuals.csv"', '"actuals.xlsx"')
    _fails(run, case, "actuals.xlsx", "workbook")


def test_row_numbers_count_blank_lines(tmp_path: Path) -> None:
    # Lines 1-11 as a text editor or spreadsheet shows them: blank lines 3, 6 and 8,
    # an all-empty record on line 9; the bad value is on line 11.
    path = tmp_path / "actuals.csv"
    path.write_text(
        "period,value\n2020-01,1.0\n\n2020-02,1.1\n2020-03,1.2\n\n2020-04,1.3\n\n,\n"
        "2020-05,1.4\n2020-06,oops\n",
        encoding="utf-8",
    )
    with pytest.raises(InputError) as caught:
        read_actuals(path, "monthly")
    assert caught.value.row == 11
    assert "row 11, column 'value'" in caught.value.one_line()


def test_blank_lines_before_the_header(tmp_path: Path) -> None:
    path = tmp_path / "actuals.csv"
    path.write_text("\n\nperiod,value\n2020-01,1.0\n2020-02,x\n", encoding="utf-8")
    with pytest.raises(InputError) as caught:
        read_actuals(path, "monthly")
    assert caught.value.row == 5


def test_duplicate_row_message_uses_file_rows(tmp_path: Path) -> None:
    path = tmp_path / "actuals.csv"
    path.write_text("period,value\n\n2020-01,1.0\n\n2020-01,1.1\n", encoding="utf-8")
    with pytest.raises(InputError) as caught:
        read_actuals(path, "monthly")
    assert caught.value.row == 5
    assert "already on row 3" in caught.value.one_line()


def test_toml_with_byte_order_mark(run: Callable[..., Result], case: Case) -> None:
    config = case.write()
    config.write_bytes(b"\xef\xbb\xbf" + config.read_bytes())
    assert run("check", config, "-q").code == 0


def _workbook(path: Path, rows: list[list[object]], *, extra_sheet: bool = False) -> None:
    book = openpyxl.Workbook()
    sheet = book.active
    assert sheet is not None
    sheet.title = "Outcomes"
    for row in rows:
        sheet.append(row)
    if extra_sheet:
        book.create_sheet("Notes")["A1"] = "not read"
    book.save(path)


def test_formula_without_saved_value(tmp_path: Path) -> None:
    # openpyxl writes formulas without cached values, as a script-made workbook would.
    path = tmp_path / "actuals.xlsx"
    _workbook(path, [["period", "value"], ["2020-01", 1.0], ["2020-02", "=B2*2"]])
    with pytest.raises(InputError) as caught:
        read_actuals(path, "monthly")
    line = caught.value.one_line()
    assert "row 3, column 'value'" in line
    assert "formula with no saved value" in line
    assert "got ''" not in line


def test_sheet_is_named_in_messages(tmp_path: Path) -> None:
    path = tmp_path / "actuals.xlsx"
    _workbook(path, [["period", "value"], ["2020-01", 1.0], ["2020-02", "n/a"]], extra_sheet=True)
    with pytest.raises(InputError) as caught:
        read_actuals(path, "monthly")
    assert caught.value.one_line().startswith("actuals.xlsx, sheet 'Outcomes', row 3")


def test_forecasts_duplicate_columns_read_directly(tmp_path: Path) -> None:
    path = tmp_path / "f.csv"
    path.write_text("origin,period,VALUE,value\n2020-01,2020-01,1,1\n", encoding="utf-8")
    with pytest.raises(InputError, match="appears 2 times"):
        read_forecasts(path, "monthly", 600)


# --- user text in chart labels -------------------------------------------------------------

# "$" starts matplotlib mathtext; "_", "^" and "\" are special inside it. Unbalanced "$"
# raised a ValueError from the mathtext parser before labels were taken literally.
NAMES = ("$x$", "cost $5", "a_b", "c^2", "back\\slash", r"$\frac{1}{2}$")


def test_model_names_with_mathtext_characters_in_chart_legend() -> None:
    hs = [0, 1]
    assessment = SimpleNamespace(
        combination=SimpleNamespace(
            weights=[WeightRow(h, name, 1 / len(NAMES)) for name in NAMES for h in hs]
        ),
        horizons=[SimpleNamespace(h=h) for h in hs],
        frequency="monthly",
    )
    chart = charts.weights(assessment)  # type: ignore[arg-type]
    # Text is kept as SVG text: every name appears literally (parsed with the standard
    # library's XML parser), and mathtext's italic face is never asked for.
    root = ElementTree.fromstring(chart.svg)
    texts = {"".join(e.itertext()) for e in root.iter("{http://www.w3.org/2000/svg}text")}
    for name in NAMES:
        assert name in texts, name
    assert "italic" not in chart.svg
    assert "Oblique" not in chart.svg


def test_long_model_names_keep_the_legend_inside_the_canvas() -> None:
    # Reproduction of the issue: a very long model name ran the legend off the canvas.
    # Oracle: matplotlib's own layout (each legend's window extent after drawing).
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    names = tuple(name[:80] for name in LONG_NAMES)  # the longest a model name may be
    hs = [0, 1, 2]
    assessment = SimpleNamespace(
        combination=SimpleNamespace(
            weights=[WeightRow(h, name, 1 / len(names)) for name in names for h in hs]
        ),
        horizons=[SimpleNamespace(h=h) for h in hs],
        frequency="monthly",
    )
    fig = charts.weights_figure(assessment)  # type: ignore[arg-type]
    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    renderer = canvas.get_renderer()
    legend = fig.axes[0].get_legend()
    page = fig.bbox
    # What is drawn of the legend (its frame is off): every label and every swatch.
    for artist in [*legend.get_texts(), *legend.legend_handles]:
        box = artist.get_window_extent(renderer)
        assert box.x0 >= page.x0, (box, page)
        assert box.x1 <= page.x1, (box, page)
        assert box.y0 >= page.y0, (box, page)
        assert box.y1 <= page.y1, (box, page)
    labels = [t.get_text() for t in legend.get_texts()]
    assert len(labels) == len(names)
    assert all(len(t) <= charts.LEGEND_CHARACTERS and t.endswith("\u2026") for t in labels)
    assert [t[:-1] for t in labels] == [n[: len(t) - 1] for n, t in zip(names, labels, strict=True)]


def test_a_long_model_name_wraps_on_the_page(
    run: Callable[..., Result], case: Case, tmp_path: Path
) -> None:
    # Reproduction of the issue: a very long model name ran off the page. One word of the
    # longest allowed length, in wide letters, is the worst case. Oracle: pypdf's text
    # extraction, one line of text per line on the page.
    from pypdf import PdfReader

    name = "M" * 80
    for row in case.forecasts[1:]:
        if row[2] == "b":
            row[2] = name
    case.config = case.config.replace('["json", "csv"]', '["json", "pdf"]')
    out = tmp_path / "o"
    assert run("build", case.write(), "--out", out, "-q").code == 0
    # The models' tables and charts are the staff annex's pages; the board brief names a
    # model where it moved the centre. Both documents are read.
    pages = [
        *PdfReader(out / "brief-2024-12.pdf").pages,
        *PdfReader(out / "annex-2024-12.pdf").pages,
    ]
    runs = [len(m) for page in pages for m in re.findall("M{2,}", page.extract_text())]
    assert sum(runs) >= 2 * len(name)  # the name is on the pages (more than once)
    assert max(runs) < len(name)  # and always broken across lines: none runs off


def test_a_config_nested_too_deeply(run: Callable[..., Result], case: Case) -> None:
    # A sibling of the deep JSON of the issue: tomllib recurses once per level of nesting.
    case.config += "\n[output.deep]\nx = " + "[" * 100_000 + "]" * 100_000 + "\n"
    _fails(run, case, "config.toml", "nested too deeply")
