"""Fixed-smoothing long-run variances, and the rule that says whether a test may speak.

The tests of equal accuracy, encompassing and calibration compare a mean of overlapping
h-step quantities (loss differentials, raw moments of PITs) with zero. Their long-run
(co)variance here is the weighted periodogram of the first m Fourier frequencies, and the
reference distribution is the fixed-smoothing t or F that treats m as fixed (Sun 2013,
Econometrics Journal 16(1):1-26; Coroneo & Iacone 2020, J. Applied Econometrics
35(4):391-409; Lazarus, Lewis, Stock & Watson 2018, JBES 36(4):541-559, on why the
fixed-b / fixed-smoothing reference distributions are the ones that hold size). Those
reference distributions are exact only when the spectrum is flat over the m frequencies
used. Overlapping h-step errors are not flat: the spectrum of efficient h-step errors with
equal shock weights (the most persistent case) falls as the Fejer kernel, to zero at 2 pi / h.

The rule, for a test of q means: m = floor(n_eff / c_q), at most floor(T^(1/3)), with n_eff
the number of independent outcomes in the record
(:func:`riskreport.forecasts.overlap.effective_sample_size`, about T / h) and c_1 = 4,
c_q = 5q for q >= 2. For one mean, one frequency per four independent outcomes keeps the
first m frequencies where the Fejer kernel is within about 10% of its peak on average
(about 0.3 T / h frequencies). Several means (Knueppel's moments, Mariano-Preve's
differentials) need more: a Wald form with few degrees of freedom also feels the
non-normality of the moments, and simulated sizes stayed under 7% only with at least ten
independent outcomes per frequency for two means. The test needs m >= 2 for one mean
(t(4) or more) and m >= q + 2 for q >= 2 (F(q, q + 5) or more); with fewer independent
outcomes it declines: NaN, with a note saying how many there were. One step ahead the
t and Hotelling F need no smoothing; they are exact for normal rows, but the Hotelling F of
two PIT moments (far from normal) rejects 8.6% at T = 20 and 11% at T = 12 (simulated), so
Knueppel's test speaks one step ahead only with as many outcomes as beyond one step
(c_q times the fewest frequencies: 40 for two moments). The cap T^(1/3) is
Coroneo & Iacone's smaller bandwidth (recalled from memory); it limits m where the
overlap is short, so that persistence beyond the overlap is less harmful. Every constant
here was chosen from the sizes simulated in ``bench/size.py`` (docs/method.md, "Tests and
their size").

Written here rather than taken from a library: statsmodels' HAC estimators are kernel
(Bartlett, uniform) estimators with chi-square or normal reference distributions, none of
them fixed-smoothing.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from riskreport.forecasts.overlap import effective_sample_size

TOO_FEW = "too few independent outcomes to test"  # every declining note starts with this


@dataclass(frozen=True)
class Smoothing:
    """How many frequencies a test of q means on T overlapping h-step rows may use.

    Attributes
    ----------
    frequencies
        m, the Fourier frequencies of the weighted periodogram (0 when the test declines).
    n_effective
        Independent outcomes among the T rows (``effective_sample_size(T, h)``).
    declined
        Why the test may not speak, or None when it may.
    """

    frequencies: int
    n_effective: float
    declined: str | None


def outcomes_per_frequency(means: int) -> int:
    """Independent outcomes per Fourier frequency for a test of ``means`` means."""
    return 4 if means == 1 else 5 * means


def fewest_frequencies(means: int) -> int:
    """The fewest frequencies with which a test of ``means`` means may speak."""
    return 2 if means == 1 else means + 2


def smoothing(nobs: int, steps: int, means: int = 1) -> Smoothing:
    """The frequencies a fixed-smoothing test of ``means`` means may use, or why it declines.

    Parameters
    ----------
    nobs
        T, rows of consecutive origins.
    steps
        Steps ahead (1: no overlap).
    means
        q, the number of means tested jointly (1 for Diebold-Mariano).

    Examples
    --------
    >>> smoothing(300, 4, 2).frequencies  # Knueppel on a long record: floor(300^(1/3))
    6
    >>> smoothing(30, 6).declined is not None  # about 5 independent outcomes
    True
    """
    n_eff = effective_sample_size(int(nobs), int(steps))
    per_frequency = outcomes_per_frequency(means)
    least = fewest_frequencies(means)
    needed = per_frequency * least
    cap = int(np.floor(nobs ** (1 / 3) + 1e-9))
    m = min(cap, int(np.floor(n_eff / per_frequency)))
    what = f"a test of {means} mean{'s' if means > 1 else ''} that holds its size needs"
    if steps == 1:
        # One step ahead the outcomes are independent and the t or Hotelling F needs no
        # smoothing, only enough outcomes: the same count as beyond one step.
        if n_eff >= needed:
            return Smoothing(m, n_eff, None)
        note = f"{TOO_FEW}: {nobs} outcomes; {what} at least {needed}"
        return Smoothing(0, n_eff, note)
    if m < least:
        note = (
            f"{TOO_FEW}: {n_eff:.0f} independent outcomes among {nobs} overlapping "
            f"{steps}-step rows; {what} at least {needed}"
            + (f" and {least**3} rows" if cap < least else "")
        )
        return Smoothing(0, n_eff, note)
    return Smoothing(m, n_eff, None)


def periodogram_covariance(d: np.ndarray, m: int) -> np.ndarray:
    """Weighted-periodogram long-run covariance of d from its first m Fourier frequencies.

    Omega = (1/(2m)) sum_{j=1}^{2m} L_j L_j', with L the projections of d on the
    orthonormal basis sqrt(2/T) cos(2 pi j t/T), sqrt(2/T) sin(2 pi j t/T), j = 1..m;
    equivalently (2 pi / m) sum_j Re I(lambda_j), I the cross-periodogram (Daniell kernel).
    The basis is orthogonal to a constant, so no demeaning is needed; Omega is positive
    semi-definite by construction. ``d`` may be 1-d (one mean) or T x q.
    """
    matrix = d[:, None] if d.ndim == 1 else d
    t = matrix.shape[0]
    angle = 2 * np.pi * np.outer(np.arange(1, t + 1), np.arange(1, m + 1)) / t
    basis = np.sqrt(2 / t) * np.concatenate([np.cos(angle), np.sin(angle)], axis=1)
    projections = basis.T @ matrix
    return np.asarray(projections.T @ projections / (2 * m))


def positive_definite(omega: np.ndarray) -> bool:
    """All eigenvalues clearly above zero (relative to the largest)."""
    values = np.linalg.eigvalsh(omega)
    return bool(values.min() > 1e-12 * max(float(values.max()), 1e-300))
