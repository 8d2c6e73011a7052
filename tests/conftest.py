"""Shared fixtures: a small synthetic case written to a temporary folder, and a CLI runner."""

from __future__ import annotations

import csv
import shutil
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest

from riskreport import cli

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "example_inputs"


@pytest.fixture
def rng() -> np.random.Generator:
    return np.random.default_rng(12345)


def _label(i: int) -> str:
    year, month = divmod(i, 12)
    return f"{year:04d}-{month + 1:02d}"


def _ordinal(year: int, month: int) -> int:
    return year * 12 + month - 1


@dataclass
class Case:
    """A small monthly case: 3 models, origins 2018-01..2024-12, horizons 0..3."""

    folder: Path
    forecasts: list[list[str]]
    actuals: list[list[str]]
    config: str

    @property
    def config_path(self) -> Path:
        return self.folder / "config.toml"

    def write(self) -> Path:
        for name, rows in (("forecasts.csv", self.forecasts), ("actuals.csv", self.actuals)):
            with (self.folder / name).open("w", newline="", encoding="utf-8") as handle:
                csv.writer(handle, lineterminator="\n").writerows(rows)
        self.config_path.write_text(self.config, encoding="utf-8")
        return self.config_path


# The small case pins the centre on the forecast: most tests built on it test files,
# commands and pages, not the method; the default centre (a pooled bias correction) is
# tested in tests/test_bias.py, tests/test_replay_cache.py and on the demo.
CONFIG = """
[brief]
title = "Test brief"
institution = "Test authority"
as_of = "2024-12"
frequency = "monthly"
horizons = 3
policy_horizon = 2

[inputs]
forecasts = "forecasts.csv"
actuals = "actuals.csv"

[target]
midpoint = 2.0
tolerance = 1.0

[combination]
method = "equal"

[uncertainty]
distribution = "normal"
window = 0
centre = "forecast"
bootstrap_replicates = 100
simulations = 2000

[output]
directory = "out"
formats = ["json", "csv"]
"""


def make_case(folder: Path) -> Case:
    """The small monthly case in ``folder`` (not yet written: call ``write``)."""
    rng = np.random.default_rng(7)
    first, as_of = _ordinal(2018, 1), _ordinal(2024, 12)
    periods = range(first - 1, as_of)
    truth = {p: 2.0 + 0.5 * np.sin(p / 9.0) for p in range(first - 1, as_of + 4)}
    actuals = [["period", "value"]] + [[_label(p), f"{truth[p]:.3f}"] for p in periods]
    forecasts = [["origin", "period", "model", "value"]]
    for model, noise in (("a", 0.2), ("b", 0.3), ("c", 0.4)):
        for origin in range(first, as_of + 1):
            for h in range(4):
                value = truth[origin + h] + rng.normal(0, noise * (1 + h / 3))
                forecasts.append([_label(origin), _label(origin + h), model, f"{value:.3f}"])
    return Case(folder, forecasts, actuals, CONFIG)


@pytest.fixture
def case(tmp_path: Path) -> Case:
    return make_case(tmp_path)


@dataclass
class Result:
    code: int
    stdout: str
    stderr: str


@pytest.fixture
def run(capsys: pytest.CaptureFixture[str]) -> Callable[..., Result]:
    def runner(*args: str) -> Result:
        code = cli.main([str(a) for a in args])
        captured = capsys.readouterr()
        return Result(code, captured.out, captured.err)

    return runner


@pytest.fixture(scope="session")
def demo_build(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The demo scenario built once into a temporary folder (all formats)."""
    folder = tmp_path_factory.mktemp("demo")
    inputs = folder / "inputs"
    shutil.copytree(DEMO, inputs, ignore=shutil.ignore_patterns("__pycache__", "*.py"))
    code = cli.main(["build", str(inputs / "config.toml"), "--out", str(folder / "out"), "-q"])
    assert code == 0
    return folder


def constant_forecast_world(
    folder: Path,
    errors: np.ndarray,
    *,
    horizons: int = 1,
    distribution: str = "normal",
    band: tuple[float, float] = (1.0, 3.0),
    window: int = 0,
    policy_horizon: int = 0,
    centre: str = "estimated",
    predictive: str = "plug-in",
    spread: str = "constant",
) -> Path:
    """A monthly world where every forecast is 2.0 and the outcome of period t is
    2.0 + errors[t]; the last len(errors) - 1 origins have a known outcome for h = 0 and the
    current round (origin len(errors) - 1) has none. Returns the config path. The method is
    pinned to the plain estimators the tests compare with references (the centre estimated,
    the plug-in predictive, the constant spread), not the defaults."""
    n = errors.size
    forecasts = ["origin,period,value"] + [
        f"{_label(24000 + o)},{_label(24000 + o + h)},2.0"
        for o in range(n)
        for h in range(horizons + 1)
    ]
    actuals = ["period,value"] + [
        f"{_label(24000 + i)},{2.0 + e:.6f}" for i, e in enumerate(errors[:-1])
    ]
    (folder / "f.csv").write_text("\n".join(forecasts) + "\n")
    (folder / "a.csv").write_text("\n".join(actuals) + "\n")
    config = folder / "c.toml"
    config.write_text(
        f'[brief]\ntitle = "t"\ninstitution = "i"\nas_of = "{_label(24000 + n - 1)}"\n'
        f"horizons = {horizons}\npolicy_horizon = {policy_horizon}\n"
        '[inputs]\nforecasts = "f.csv"\nactuals = "a.csv"\n'
        f"[target]\nlower = {band[0]}\nupper = {band[1]}\n"
        f'[uncertainty]\ndistribution = "{distribution}"\nwindow = {window}\n'
        f'centre = "{centre}"\npredictive = "{predictive}"\nspread = "{spread}"\n'
        "bootstrap_replicates = 100\nsimulations = 1000\n"
    )
    return config


def build_fails(run: Callable[..., Result], case: Case, *expected: str) -> str:
    """Build a case that must be refused: exit 2, one line naming each ``expected`` text,
    no traceback, no output folder."""
    config = case.write()
    out = case.folder / "out"
    result = run("build", config, "--out", out)
    assert result.code == 2, result.stderr
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert "Traceback" not in result.stderr
    for text in expected:
        assert text in lines[0], lines[0]
    assert not out.exists(), "bad input must leave no output"
    return lines[0]
