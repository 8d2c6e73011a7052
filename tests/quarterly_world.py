"""A small invented quarterly world written to a folder: two models, as_of 2024-Q4, h = 0..7.

The test computes everything it checks from the values it wrote here, not from the tool.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

FIRST = pd.Period("2010Q1", freq="Q").ordinal
AS_OF = pd.Period("2024Q4", freq="Q").ordinal
HORIZONS = 7


def label(ordinal: int, dash: bool = True) -> str:
    """``2024-Q4`` (dash) or ``2024Q4`` (as pandas writes a quarter)."""
    text = str(pd.Period(ordinal=ordinal, freq="Q"))
    return text.replace("Q", "-Q") if dash else text


@dataclass
class World:
    """The written values: outcomes by period ordinal and the combined (mean) forecasts."""

    folder: Path
    outcomes: dict[int, float]
    combined: dict[tuple[int, int], float]  # (origin, h) -> equal-weight mean of the models

    @property
    def config(self) -> Path:
        return self.folder / "config.toml"


CONFIG = """[brief]
title = "Quarterly test"
institution = "Test authority"
as_of = "{as_of}"
frequency = "quarterly"
horizons = {horizons}
policy_horizon = 4

[inputs]
forecasts = "forecasts.csv"
actuals = "actuals.csv"

[target]
midpoint = 2.0
tolerance = 1.0
basis = "{basis}"
{extra_target}
[combination]
method = "equal"

[uncertainty]
distribution = "normal"
window = 0
centre = "estimated"
predictive = "plug-in"
monotone = false
bootstrap_replicates = 50
simulations = {simulations}
{extra}
[output]
directory = "out"
formats = ["json"]
"""


def write(
    folder: Path,
    *,
    basis: str = "period",
    dash: bool = True,
    with_as_of_outcome: bool = False,
    simulations: int = 40000,
    extra: str = "",
    extra_target: str = "",
) -> World:
    """Write forecasts, actuals and config; errors share an origin shock across horizons."""
    rng = np.random.default_rng(2024)
    last_outcome = AS_OF if with_as_of_outcome else AS_OF - 1
    truth = {p: 2.2 + 0.8 * np.sin(p / 5.0) for p in range(FIRST - 1, AS_OF + HORIZONS + 1)}
    outcomes = {p: round(truth[p], 3) for p in range(FIRST - 1, last_outcome + 1)}
    rows = ["origin,period,model,value"]
    combined: dict[tuple[int, int], float] = {}
    for origin in range(FIRST, AS_OF + 1):
        shock = rng.normal(0.0, 0.4)
        for h in range(HORIZONS + 1):
            values = []
            for model, noise in (("a", 0.2), ("b", 0.3)):
                v = round(truth[origin + h] + shock * (1 + h / 4) + rng.normal(0.0, noise), 3)
                values.append(v)
                rows.append(f"{label(origin, dash)},{label(origin + h, dash)},{model},{v:.3f}")
            combined[origin, h] = float(np.mean(values))
    (folder / "forecasts.csv").write_text("\n".join(rows) + "\n")
    actuals = ["period,value"] + [f"{label(p, dash)},{v:.3f}" for p, v in outcomes.items()]
    (folder / "actuals.csv").write_text("\n".join(actuals) + "\n")
    (folder / "config.toml").write_text(
        CONFIG.format(
            as_of=label(AS_OF, dash),
            horizons=HORIZONS,
            basis=basis,
            simulations=simulations,
            extra=extra,
            extra_target=extra_target,
        )
    )
    known = {p: v for p, v in outcomes.items() if p < AS_OF}
    return World(folder, known, combined)


def errors(world: World) -> np.ndarray:
    """origins x horizons: outcome - combined forecast where the outcome came before as_of."""
    origins = range(FIRST, AS_OF + 1)
    out = np.full((len(origins), HORIZONS + 1), np.nan)
    for i, o in enumerate(origins):
        for h in range(HORIZONS + 1):
            if o + h < AS_OF:
                out[i, h] = world.outcomes[o + h] - world.combined[o, h]
    return out
