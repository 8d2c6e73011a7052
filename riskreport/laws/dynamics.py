"""Time-varying spread: past errors standardised by the error volatility known at their time.

Filtered historical simulation (Barone-Adesi, Giannopoulos & Vosper 1999, "VaR without
correlations for portfolios of derivative securities", Journal of Futures Markets 19(5)):
each past error e(o, h) is divided by the volatility s(o) known at its origin, the error
law is learned on the standardised errors z(o, h) = e(o, h) / s(o), and today's law is
that of z rescaled by today's volatility. The volatility is one series for every horizon:
an exponentially weighted mean of the squared errors of the shortest horizon with a track
record (the nowcast), so that the recent size of short-horizon errors propagates to the
longer horizons, whose shape and relative size are learned from their own standardised
errors. In the spirit of Clark, McCracken & Mertens (2020, "Modeling time-varying
uncertainty of multiple-horizon forecast errors", REStat 102(1)), where the errors of
all horizons are built from the same underlying forecast updates with time-varying
volatilities; their model is richer (stochastic volatility per update, estimated by
Bayesian methods; this description is recalled from memory) and a single EWMA factor is
our simplification, not theirs.

No look-ahead: s(o) uses only errors e(o', b) of the base horizon b whose outcome period
o' + b is at most o - 1.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import signal

from riskreport._typing import EWMA_FAMILIES, Family, SpreadKind

LAMBDAS: tuple[float, ...] = (0.8, 0.9, 0.95)  # smoothing constants the replay chooses among
# The families offered with a time-varying spread: closed-form fits and CRPS keep the
# replay of every smoothing constant within the build's time.
FAMILIES: tuple[Family, ...] = EWMA_FAMILIES
FLOOR = 1e-6  # smallest volatility used (guards a run of exact nowcasts)


@dataclass(frozen=True)
class SpreadOption:
    """One way of handling the spread over time.

    Attributes
    ----------
    kind
        ``"constant"`` (one error law over the window), ``"ewma"`` (filtered historical
        simulation with an exponentially weighted volatility), ``"joint"`` (each
        horizon's spread rescaled to the ML estimate of all horizons' errors jointly,
        :mod:`riskreport.laws.joint`) or ``"revisions"`` (rescaled to the spread the
        forecasts' revisions imply, :mod:`riskreport.laws.revisions`).
    smoothing
        The EWMA smoothing constant lambda (weight of the past), None for ``constant``.
    """

    kind: SpreadKind
    smoothing: float | None = None

    @property
    def label(self) -> str:
        """A short name, e.g. ``constant``, ``ewma 0.9`` or ``joint``."""
        return self.kind if self.smoothing is None else f"{self.kind} {self.smoothing:g}"


CONSTANT = SpreadOption("constant")
JOINT = SpreadOption("joint")
REVISIONS = SpreadOption("revisions")


def options(spread: str) -> tuple[SpreadOption, ...]:
    """The spread options a configuration lets the replay choose among."""
    ewma = tuple(SpreadOption("ewma", lam) for lam in LAMBDAS)
    if spread == "constant":
        return (CONSTANT,)
    if spread == "ewma":
        return ewma
    if spread == "joint":
        return (JOINT,)
    if spread == "revisions":
        return (REVISIONS,)
    return (CONSTANT, *ewma, JOINT, REVISIONS)


def base_horizon(errors: np.ndarray) -> int:
    """The shortest horizon with any known error (0 when none is known)."""
    known = np.flatnonzero(np.isfinite(errors).any(axis=0))
    return int(known[0]) if known.size else 0


def volatility(errors: np.ndarray, smoothing: float) -> np.ndarray:
    """s(o) for every origin row of ``errors`` (origins x horizons, consecutive origins).

    s(o)^2 = sum_t w_t e_b(t)^2 / sum_t w_t over the known base-horizon errors with outcome
    period t <= o - 1, weights w_t = lambda^(o - 1 - t): the EWMA with the normalisation of
    pandas' ``ewm(adjust=True, ignore_na=False)`` (weights decay across missing periods;
    the first values are not biased towards
    a made-up start). NaN before any base-horizon error is known.

    Notes
    -----
    The recursion is a first-order linear filter, run with ``scipy.signal.lfilter`` on the
    weighted squares and on the weights, so the cost is linear in the origins.
    """
    b = base_horizon(errors)
    n = errors.shape[0]
    column = errors[:, b]
    # Indexed by outcome period + 1: e(o, b) sits at o + b + 1, so the filter's value at
    # origin o has seen exactly the outcomes up to o - 1.
    squares = np.zeros(n + b + 1)
    weights = np.zeros(n + b + 1)
    known = np.isfinite(column)
    squares[b + 1 : b + 1 + n] = np.where(known, column, 0.0) ** 2
    weights[b + 1 : b + 1 + n] = known
    numerator = signal.lfilter([1.0], [1.0, -smoothing], squares)[:n]
    denominator = signal.lfilter([1.0], [1.0, -smoothing], weights)[:n]
    with np.errstate(invalid="ignore", divide="ignore"):
        variance = np.where(denominator > 1e-12, numerator / denominator, np.nan)
    return np.maximum(np.sqrt(variance), FLOOR)


def standardise(errors: np.ndarray, option: SpreadOption) -> tuple[np.ndarray, np.ndarray]:
    """The errors divided by the volatility of their origin, and that volatility.

    For ``constant`` and ``joint`` the errors come back unchanged with a volatility of 1
    everywhere (the joint spread rescales each horizon instead: :func:`factors`).
    """
    if option.smoothing is None:
        return errors, np.ones(errors.shape[0])
    scale = volatility(errors, option.smoothing)
    return errors / scale[:, None], scale


def current(errors: np.ndarray, option: SpreadOption) -> float:
    """Today's volatility: the EWMA over every base-horizon error known now (1 for constant).

    The current round is the last row of ``errors``; its volatility uses outcomes up to the
    period before it, like every past origin's.
    """
    if option.smoothing is None:
        return 1.0
    value = float(volatility(errors, option.smoothing)[-1])
    return value if np.isfinite(value) else 1.0


def factors(
    errors: np.ndarray,
    option: SpreadOption,
    window: int,
    forecasts: np.ndarray | None = None,
) -> np.ndarray:
    """Today's scale factor per horizon (columns of ``errors``; the current round is the
    last row): the volatility for ``ewma``, the joint-to-own spread ratio for ``joint``
    over the last ``window`` origins (0: all), the revision-implied to own ratio for
    ``revisions`` (from ``forecasts``, origins x horizons like ``errors``), 1 for
    ``constant``."""
    if option.kind == "revisions":
        from riskreport.laws import revisions

        if forecasts is None:
            raise ValueError("the revisions spread needs the forecasts")
        return revisions.ratios(forecasts, errors, window)[-1]
    if option.kind == "joint":
        from riskreport.laws import joint

        n = errors.shape[0]
        return joint.ratios(errors, np.full(n, window))[-1]
    return np.full(errors.shape[1], current(errors, option))
