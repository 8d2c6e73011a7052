"""Many models and a short error window: the joint test that cannot be formed is skipped
with a warning, never an internal error (regression: 12 models, 120 rows, h = 5 raised
ValueError and the build exited 1)."""

from __future__ import annotations

import numpy as np
import pytest

from riskreport.errors import SmallSampleWarning
from riskreport.forecasts import track_record


def test_mariano_preve_skipped_when_models_outnumber_frequencies() -> None:
    rng = np.random.default_rng(3)
    rows, horizons, k = 120, 5, 12
    models = [f"m{i}" for i in range(k)]
    errors = {name: rng.normal(0, 1, (rows, horizons + 1)) for name in models}
    errors["combination"] = np.mean([errors[m] for m in models], axis=0)
    errors["no-change"] = rng.normal(0, 1.2, (rows, horizons + 1))
    # floor(120^(1/3)) = 4 frequencies carry at most 8 loss differentials; 12 models give 11.
    with pytest.warns(SmallSampleWarning, match="Mariano-Preve"):
        rows_out = track_record._tests(errors, [models] * (horizons + 1), horizons)
    joint = [r for r in rows_out if r.name == "mariano-preve"]
    assert [r.horizon for r in joint] == [0]  # one step ahead: Hotelling F needs no frequencies
    assert any(r.name == "diebold-mariano" for r in rows_out)
