"""Choosing the error distribution family by out-of-sample log score
(``distribution = "best-past-score"``).

The scores come from the calibration replay (:mod:`riskreport.replay.calibration`): at each past
origin every family was fitted to the errors known then and scored on the error that
followed. The family with the best mean log score summed over horizons is chosen; the
runner-up is reported with it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from riskreport._typing import Family
from riskreport.laws.distributions import FAMILIES
from riskreport.replay.calibration import HorizonReplay


@dataclass(frozen=True)
class Selection:
    """The chosen family, the runner-up and each family's total log score (the per-horizon
    scores are in the calibration record)."""

    chosen: Family
    runner_up: Family | None
    total: dict[str, float]


def select(runs: dict[tuple[str, int], HorizonReplay]) -> Selection:
    """The family with the best total of per-horizon mean log scores.

    Only horizons scored for every family count, so the totals compare like with like.
    """
    horizons = sorted({h for _, h in runs})
    common = [h for h in horizons if all((f, h) in runs for f in FAMILIES)]
    total: dict[str, float] = dict.fromkeys(FAMILIES, 0.0)
    for h in common:
        for family in FAMILIES:
            total[family] += float(np.mean(runs[(family, h)].log_score))
    ranked: list[Family] = sorted(FAMILIES, key=lambda f: -total[f])
    return Selection(ranked[0], ranked[1], total)
