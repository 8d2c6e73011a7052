"""Short track records: the brief is built and says what could not be checked."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import numpy as np

from tests.conftest import Result, constant_forecast_world


def test_too_short_a_record_to_replay_is_said_not_hidden(
    tmp_path: Path, run: Callable[..., Result]
) -> None:
    # Seven past rounds: enough to fit an error law at each horizon, too few for any past
    # round to be replayed. It used to crash (exit 1) and, before that, the brief claimed the
    # 90% ranges "held about as often as they should" with nothing replayed.
    config = constant_forecast_world(tmp_path, np.random.default_rng(1).normal(size=8), horizons=3)
    config.write_text(config.read_text() + '[output]\nformats = ["html", "json"]\n')
    result = run("build", config, "--out", tmp_path / "out", "-q")
    assert result.code == 0, result.stderr
    html = next((tmp_path / "out").glob("brief-*.html")).read_text(encoding="utf-8")
    assert "too few past rounds to replay the method" in html
    assert "about as often as they should" not in html
    assert "does not reject calibration" not in html
