"""Past forecast errors, per horizon, as they were known at the current origin.

Errors are e(o, h) = actual(o + h) - forecast(o, o + h); only outcomes known at ``as_of``
enter (the panel holds no later outcome), so no error uses later data.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from riskreport.combination import Combination
from riskreport.panel import Panel


@dataclass(frozen=True)
class AccuracyRow:
    """Accuracy of one forecaster at one horizon over the error window."""

    model: str
    h: int
    n: int
    mae: float
    rmse: float
    mean_error: float


def error_matrix(forecast: np.ndarray, outcomes: np.ndarray) -> np.ndarray:
    """origins x horizons errors (actual - forecast), NaN where either is missing."""
    return outcomes - forecast


def window_mask(errors: np.ndarray, window: int) -> np.ndarray:
    """origins x horizons: True for the last ``window`` known errors of each horizon.

    ``window = 0`` keeps every known error.
    """
    known = np.isfinite(errors)
    if window == 0:
        return known
    # Count known errors from the latest origin backwards, per horizon.
    from_latest = np.cumsum(known[::-1], axis=0)[::-1]
    return known & (from_latest <= window)


def accuracy_rows(
    panel: Panel, combination: Combination, window: int, horizons: int
) -> list[AccuracyRow]:
    """MAE, RMSE and mean error of each model, the combination and the no-change forecast.

    Each forecaster is scored over the origins of the combination's error window, where it
    has a forecast.
    """
    combined_errors = error_matrix(combination.combined, panel.outcomes)
    mask = window_mask(combined_errors, window)
    no_change = np.repeat(panel.last_outcome[:, None], panel.max_h + 1, axis=1)
    forecasters = [
        *zip(panel.models, panel.forecasts, strict=True),
        ("combination", combination.combined),
        ("no-change", no_change),
    ]
    rows: list[AccuracyRow] = []
    for name, forecast in forecasters:
        errors = np.where(mask, error_matrix(forecast, panel.outcomes), np.nan)
        for h in range(horizons + 1):
            sample = errors[:, h][np.isfinite(errors[:, h])]
            if sample.size == 0:
                continue
            rows.append(
                AccuracyRow(
                    model=name,
                    h=h,
                    n=int(sample.size),
                    mae=float(np.mean(np.abs(sample))),
                    rmse=float(np.sqrt(np.mean(sample**2))),
                    mean_error=float(np.mean(sample)),
                )
            )
    return rows
