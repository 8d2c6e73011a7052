"""``riskreport check``: the inputs and the config validated, a summary printed, nothing fitted or written."""

from __future__ import annotations

from pathlib import Path
from typing import Any


def check(config: Path, as_of: str | None) -> dict[str, Any]:
    # Validation only: nothing is fitted, so there are no probabilities ("headline": null).
    from riskreport.reading import config_reader, screening

    cfg = config_reader.load_config(config, as_of)
    found = screening.screen(cfg)
    n = [k for k in found.n_errors if k > 0] or [0]
    lines = [
        f"config {Path(config).name}: valid; as_of {found.as_of} ({found.frequency})",
        f"band {found.lower:g} to {found.upper:g} ({found.basis}); horizons 0 to "
        f"{found.horizons}, policy horizon {found.policy_horizon}",
        f"models in the current round: {', '.join(found.current_models)}"
        + (f"; left out: {', '.join(found.left_out_models)}" if found.left_out_models else ""),
        f"past errors per horizon in the error window: {min(n)} to {max(n)}"
        + (
            f" (the window holds the last {cfg.uncertainty.window})"
            if cfg.uncertainty.window and max(n) == cfg.uncertainty.window
            else ""
        ),
        *(
            f"input {i.role}: {i.path}" + (f" ({i.rows} rows)" if i.rows is not None else "")
            for i in found.inputs
        ),
        *(f"warning: {w}" for w in found.warnings),
        "nothing fitted: probabilities, fit and replay warnings come with build",
    ]
    return {
        "status": "ok",
        "as_of": found.as_of,
        "summary": lines,
        "headline": None,
        "warnings": list(found.warnings),
        "outputs": [],
    }
