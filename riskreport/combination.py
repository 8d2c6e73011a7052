"""Combining the models' forecasts, per horizon, from each origin's own past.

The public :func:`weights` estimates one set of weights from a track record; the pipeline
uses :func:`combine` to build the combined forecast for every origin (the combined
forecast's own history feeds the error distribution) and for the current round.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from riskreport._typing import CombinationMethod
from riskreport.panel import Panel


def weights(method: CombinationMethod, forecasts: ArrayLike, outcomes: ArrayLike) -> np.ndarray:
    """Combination weights estimated from a track record.

    Parameters
    ----------
    method
        ``"equal"`` or ``"given"`` in this version.
    forecasts
        T x k past forecasts of k models.
    outcomes
        T outcomes.

    Returns
    -------
    numpy.ndarray
        k weights summing to one.

    Examples
    --------
    >>> weights("equal", [[1.0, 2.0, 3.0]], [2.0]).tolist()
    [0.3333333333333333, 0.3333333333333333, 0.3333333333333333]
    """
    matrix = np.atleast_2d(np.asarray(forecasts, dtype=float))
    y = np.asarray(outcomes, dtype=float)
    if y.shape != (matrix.shape[0],):
        raise ValueError("outcomes: expected one outcome per row of forecasts")
    k = matrix.shape[1]
    if method == "given":
        if k != 1:
            raise ValueError(f"method 'given' expects one combined forecast, got {k} columns")
        return np.ones(1)
    if method == "equal":
        return np.full(k, 1.0 / k)
    raise ValueError(f"method: expected 'equal' or 'given' in this version, got {method!r}")


@dataclass(frozen=True)
class Combination:
    """The combined forecast for every origin and horizon, and the current weights.

    Attributes
    ----------
    method
        The method used.
    combined
        origins x horizons; NaN where no included model forecast.
    current_weights
        models x horizons: the weights of the current round (0 for models left out).
    included
        models x horizons: which models have a current-round forecast at that horizon.
    """

    method: CombinationMethod
    combined: np.ndarray
    current_weights: np.ndarray
    included: np.ndarray


def combine(method: CombinationMethod, panel: Panel) -> Combination:
    """Combine the panel's models without look-ahead.

    At each horizon the models with a current-round forecast are combined; at a past origin
    the combination uses those of them that forecast then (equal weights need no past
    outcomes, so no outcome later than the origin can enter).
    """
    included = ~np.isnan(panel.current)
    cube = np.where(included[:, None, :], panel.forecasts, np.nan)
    count = np.sum(~np.isnan(cube), axis=0)
    total = np.nansum(cube, axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        combined = np.where(count > 0, total / np.maximum(count, 1), np.nan)
    current = included / np.maximum(included.sum(axis=0, keepdims=True), 1)
    return Combination(method=method, combined=combined, current_weights=current, included=included)
