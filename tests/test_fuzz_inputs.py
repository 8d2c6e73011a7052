"""Fuzz tests of the readers with a fixed, derandomized budget (hypothesis): whatever the
bytes of a CSV, .xlsx or TOML file, the reader returns or raises InputError with one line,
and the command line's ``check`` exits 0 or 2 with no traceback."""

from __future__ import annotations

import csv
import datetime as dt
import io
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import Any

import openpyxl
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from riskreport import cli
from riskreport.errors import InputError
from riskreport.reading import config_reader
from riskreport.reading.inputs import read_actuals, read_error_quantiles, read_forecasts

# Random headers name columns no table uses: each read warns about them, as it should.
pytestmark = pytest.mark.filterwarnings("ignore::riskreport.errors.UnusedColumnWarning")
BUDGET = settings(
    max_examples=50,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)
AS_OF = 600  # the pandas ordinal of 2020-01

TRICKY = [
    "2020-01",
    "2020-02",
    "2020-Q1",
    "2020-13",
    "0000-01",
    "9999-12",
    "2020-01-01",
    "1e308",
    "-1e308",
    "1e-320",
    "nan",
    "inf",
    "-0",
    "1.5",
    "0.5",
    "3",
    "",
    "   ",
    "1,5",
    '"',
    "=A1*2",
    "$x$",
    "a_b^c\\",
    "\ufeff",
    "\x00",
    "value",
]
HEADERS = ["origin", "period", "model", "value", "Value", " VALUE ", "horizon", "quantile", ""]

cell = st.one_of(
    st.sampled_from(TRICKY),
    st.text(max_size=10),
    st.floats().map(repr),
    st.integers(-(10**20), 10**20).map(str),
)
table = st.tuples(
    st.lists(st.sampled_from(HEADERS), max_size=5),
    st.lists(st.lists(cell, max_size=6), max_size=8),
)
# Mostly valid tables with a few odd cells or columns, so that the fuzzer gets past the
# first checks (a random table almost always fails on its header).
VALID = {
    "origin": st.sampled_from(["2019-12", "2020-01"]),
    "period": st.sampled_from(["2020-01", "2020-02", "2020-03"]),
    "model": st.sampled_from(["a", "b", "$x$"]),
    "value": st.sampled_from(["1.5", "-0.25", "3"]),
    "horizon": st.sampled_from(["0", "1"]),
    "quantile": st.sampled_from(["0.1", "0.5", "0.9"]),
}


@st.composite
def near_valid_table(draw: st.DrawFn) -> tuple[list[str], list[list[str]]]:
    names = draw(st.permutations(list(VALID)).map(lambda p: p[: draw(st.integers(2, 6))]))
    header = [draw(st.sampled_from([n, n.upper(), f" {n.title()} "])) for n in names]
    if draw(st.booleans()):
        header.append(draw(st.sampled_from([*names, "x", ""])).upper())
    rows = []
    for _ in range(draw(st.integers(1, 8))):
        row = [draw(st.one_of(*[VALID[n]] * 6, cell)) for n in names]
        rows.append(row + [draw(cell) for _ in range(len(header) - len(names))])
    return header, rows


def _csv_bytes(header: list[str], rows: list[list[str]], blank_every: int) -> bytes:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    for i, row in enumerate(rows):
        if blank_every and i % blank_every == 0:
            buffer.write("\n")
        writer.writerow(row)
    return buffer.getvalue().encode("utf-8", errors="surrogatepass")


def _read_all(path: Path) -> None:
    """Every reader on one file: each returns or raises InputError (one line)."""
    readers: list[Callable[[], Any]] = [
        lambda: read_forecasts(path, "monthly", AS_OF),
        lambda: read_forecasts(path, "quarterly", AS_OF // 3),
        lambda: read_actuals(path, "monthly"),
        lambda: read_error_quantiles(path),
    ]
    for read in readers:
        try:
            read()
        except InputError as exc:
            message = exc.one_line()
        else:
            message = ""
        assert "\n" not in message


@BUDGET
@given(
    st.one_of(
        st.tuples(st.one_of(near_valid_table(), table), st.integers(0, 3)),
        st.tuples(near_valid_table(), st.integers(0, 3)),
        st.binary(max_size=300),
    )
)
def test_csv_reader_fuzz(data: Any) -> None:
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "table.csv"
        if isinstance(data, bytes):
            path.write_bytes(data)
        else:
            (header, rows), blank_every = data
            path.write_bytes(_csv_bytes(header, rows, blank_every))
        _read_all(path)


xlsx_cell = st.one_of(
    cell,
    st.none(),
    st.floats(allow_nan=False),
    st.integers(-(10**15), 10**15),
    st.booleans(),
    st.datetimes(min_value=dt.datetime(1900, 3, 1), max_value=dt.datetime(2200, 1, 1)),
    st.sampled_from(["=1/0", "=B2", "=SUM(A1:A3)"]),
)


def _clean(value: Any) -> Any:
    # openpyxl refuses control characters in cells (a workbook cannot hold them).
    if isinstance(value, str):
        return "".join(ch for ch in value if ch.isprintable() or ch == " ")
    return value


@settings(BUDGET, max_examples=30)  # each example writes and reads a workbook
@given(
    st.one_of(
        st.tuples(
            st.lists(st.sampled_from(HEADERS), max_size=5),
            st.lists(st.lists(xlsx_cell, max_size=6), max_size=6),
            st.integers(0, 2),
        ),
        st.binary(max_size=200),
        st.binary(max_size=200).map(lambda b: b"PK\x03\x04" + b),
    )
)
def test_xlsx_reader_fuzz(data: Any) -> None:
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "table.xlsx"
        if isinstance(data, bytes):
            path.write_bytes(data)
        else:
            header, rows, extra_sheets = data
            book = openpyxl.Workbook()
            sheet = book.active
            assert sheet is not None
            sheet.append([_clean(h) for h in header])
            for row in rows:
                sheet.append([_clean(v) for v in row])
            for i in range(extra_sheets):
                book.create_sheet(f"other {i}")
            book.save(path)
        _read_all(path)


# 36 monthly rounds 2017-01..2019-12 (horizons 0 and 1), outcomes up to 2019-11.
_ROUNDS = [f"{2017 + i // 12}-{i % 12 + 1:02d}" for i in range(38)]
GOOD_TABLES = {
    "forecasts.csv": "origin,period,value\n"
    + "".join(f"{_ROUNDS[i]},{_ROUNDS[i + h]},{2 + h / 10}\n" for i in range(36) for h in (0, 1)),
    "actuals.csv": "period,value\n"
    + "".join(f"{_ROUNDS[i]},{2 + (i % 7) / 10:.2f}\n" for i in range(35)),
}
GOOD_CONFIG = """[brief]
title = "t"
institution = "i"
as_of = "2019-12"
horizons = 1
policy_horizon = 1
[inputs]
forecasts = "forecasts.csv"
actuals = "actuals.csv"
[target]
midpoint = 2.0
tolerance = 1.0
[uncertainty]
distribution = "normal"
min_errors = 5
bootstrap_replicates = 50
simulations = 1000
"""
toml_value = st.one_of(
    st.sampled_from(
        [
            "0",
            "-1",
            "2000000000",
            "9223372036854775807",
            "1e308",
            "nan",
            "inf",
            "true",
            '"2019-12"',
            '"0000-01"',
            '"x"',
            '""',
            "[]",
            "{}",
            '"forecasts.csv"',
            '"../missing.csv"',
        ]
    ),
    st.integers().map(str),
    st.floats().map(lambda f: repr(f).replace("nan", "nan").replace("inf", "inf")),
    st.text(max_size=8).map(lambda t: '"' + t.replace("\\", "\\\\").replace('"', '\\"') + '"'),
)
config_lines = GOOD_CONFIG.splitlines()


@st.composite
def mutated_config(draw: st.DrawFn) -> bytes:
    lines = list(config_lines)
    for _ in range(draw(st.integers(1, 3))):
        i = draw(st.integers(0, len(lines) - 1))
        kind = draw(st.integers(0, 3))
        if kind == 0 and "=" in lines[i]:
            lines[i] = lines[i].split("=")[0] + "= " + draw(toml_value)
        elif kind == 1:
            del lines[i]
        elif kind == 2:
            lines.insert(i, draw(st.text(max_size=20)))
        else:
            key = draw(st.sampled_from(["window", "seed", "scale", "max_abs_value", "horizons"]))
            lines.insert(i, f"{key} = {draw(toml_value)}")
    text = "\n".join(lines)
    prefix = draw(st.sampled_from([b"", b"\xef\xbb\xbf", b"\xff\xfe"]))
    return prefix + text.encode("utf-8", errors="surrogatepass")


@BUDGET
@given(st.one_of(mutated_config(), st.binary(max_size=200)))
def test_toml_reader_fuzz(data: bytes) -> None:
    with tempfile.TemporaryDirectory() as folder:
        for name, text in GOOD_TABLES.items():
            (Path(folder) / name).write_text(text, encoding="utf-8")
        path = Path(folder) / "config.toml"
        path.write_bytes(data)
        try:
            config_reader.load(path)
        except InputError as exc:
            message = exc.one_line()
        else:
            message = ""
        assert "\n" not in message


def test_good_fuzz_baseline_is_valid(capsys: pytest.CaptureFixture[str]) -> None:
    # The unmutated files the fuzzers start from pass, so the fuzzers test more than parse
    # errors.
    with tempfile.TemporaryDirectory() as folder:
        for name, text in GOOD_TABLES.items():
            (Path(folder) / name).write_text(text, encoding="utf-8")
        (Path(folder) / "config.toml").write_text(GOOD_CONFIG, encoding="utf-8")
        assert cli.main(["check", str(Path(folder) / "config.toml"), "-q"]) == 0, (
            capsys.readouterr().err
        )


@settings(
    max_examples=25,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)
@given(
    st.one_of(st.just(None), mutated_config()),
    st.one_of(
        st.just(None), table.map(lambda t: _csv_bytes(t[0], t[1], 2)), st.binary(max_size=100)
    ),
)
def test_check_command_fuzz(
    capsys: pytest.CaptureFixture[str], config_bytes: bytes | None, actuals: bytes | None
) -> None:
    with tempfile.TemporaryDirectory() as folder:
        for name, text in GOOD_TABLES.items():
            (Path(folder) / name).write_text(text, encoding="utf-8")
        path = Path(folder) / "config.toml"
        path.write_bytes(config_bytes if config_bytes is not None else GOOD_CONFIG.encode())
        if actuals is not None:
            (Path(folder) / "actuals.csv").write_bytes(actuals)
        capsys.readouterr()
        code = cli.main(["check", str(path), "-q"])
        err = capsys.readouterr().err
        assert code in (0, 2), err
        assert "Traceback" not in err
        assert len(err.strip().splitlines()) <= 1, err
