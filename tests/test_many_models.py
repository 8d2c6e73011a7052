"""Many models and a short error window: the joint test that cannot hold its size declines
with a note, never an internal error (regression: 12 models, 120 rows, h = 5 raised
ValueError and the build exited 1)."""

from __future__ import annotations

import numpy as np

from riskreport.forecasts import track_record
from riskreport.forecasts.fixed_smoothing import TOO_FEW


def test_mariano_preve_skipped_when_models_outnumber_frequencies() -> None:
    rng = np.random.default_rng(3)
    rows, horizons, k = 120, 5, 12
    models = [f"m{i}" for i in range(k)]
    errors = {name: rng.normal(0, 1, (rows, horizons + 1)) for name in models}
    errors["combination"] = np.mean([errors[m] for m in models], axis=0)
    errors["no-change"] = rng.normal(0, 1.2, (rows, horizons + 1))
    # Beyond one step, 11 loss differentials need at least 13 frequencies (fixed_smoothing:
    # m >= q + 2) and floor(120^(1/3)) = 4 is the most 120 rows allow: the test declines
    # with a note, no p-value, never a rejection.
    rows_out = track_record._tests(errors, [models] * (horizons + 1), horizons)
    joint = [r for r in rows_out if r.name == "mariano-preve"]
    assert [r.horizon for r in joint if np.isfinite(r.pvalue)] == [0]  # one step: Hotelling F
    assert all(r.notes[0].startswith(TOO_FEW) for r in joint if r.horizon > 0)
    assert any(r.name == "diebold-mariano" for r in rows_out)
