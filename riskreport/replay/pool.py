"""Combine, don't switch: the optimal prediction pool of the candidate laws
(``distribution = "auto"``).

At each past origin the candidates' predictive densities are pooled linearly,
p(y) = sum_k w_k p_k(y), with the weights that maximise the pool's log score over the
outcomes known at that origin (an h-step score is known h + 1 periods later): the optimal
prediction pool of Hall & Mitchell (2007, International Journal of Forecasting 23(1)) and
Geweke & Amisano (2011, Journal of Econometrics 164(1)). The pool's log score is concave
in the weights, so a constrained optimiser (scipy's SLSQP) finds its maximum on the simplex.

While the record is short the weights are shrunk toward the first candidate (the normal
law): w = lam e_1 + (1 - lam) w_opt, lam = ``PRIOR_OUTCOMES`` / (``PRIOR_OUTCOMES`` +
n_eff), n_eff the record's effective number of scored outcomes (per horizon
:func:`riskreport.forecasts.overlap.effective_sample_size`, averaged over the horizons
scored), so the pool leaves the normal law only as the record earns it.

The replay of the pool (label ``auto``) grades it as it would have been run: at each origin
the weights known there. Its PIT and band probabilities are the weighted sums of the
candidates' (F = sum w_k F_k), its log score log sum_k w_k p_k(y); its CRPS is the weighted
sum of the candidates' CRPS, an upper bound of the pool's own (the CRPS is convex in F).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import optimize, special

from riskreport.forecasts.overlap import effective_sample_size
from riskreport.replay.calibration import HorizonReplay

LABEL = "auto"  # the pool's replay: the same label as a selected sequence
# The normal law's prior weight counts as this many effective outcomes: with 60 scored
# independent outcomes the pool is half the normal law, with 540 a tenth (our choice, no
# source). Measured on the simulated efficient world of tests/test_honest_defaults.py
# (three seeds), the pool's replay log score fell below the normal law's by at most 0.013
# with 20, 0.005 with 60 and 0.002 with 150; on the three real histories of
# bench/calibration.py by at most 0.013, 0.007 and 0.004 (the pool put nearly all its
# weight on the normal law there).
PRIOR_OUTCOMES = 60.0
# The bias stage (:func:`learn_nested`) shrinks by the evidence instead (:func:`shrinkage`),
# with a prior worth this many outcomes as its floor (our choice, no source).
EVIDENCE_PRIOR_OUTCOMES = 20.0
# Past origins at which the weights are learned afresh (evenly spaced; between two, the
# weights learned at the earlier one are used, so nothing is looked ahead). Learning at
# every origin changes the weights little between neighbours at several times the cost.
UPDATES = 60
OPTIMISER_ITERATIONS = 200
OPTIMISER_TOLERANCE = 1e-12
NEGLIGIBLE = 1e-9  # weights below this are the optimiser's zeros


@dataclass(frozen=True)
class PoolWeights:
    """The pool's weights at every past origin and today.

    Attributes
    ----------
    labels
        The candidates pooled (the first is the law shrunk toward).
    past
        Per panel origin row, the weights used there (rows x candidates).
    current
        Today's weights (from every score known now).
    optimal
        Today's unshrunk weights (the maximum of the past log score; with a nested pool,
        each stage's unshrunk weights multiplied).
    prior_share
        Today's share lam of the first candidate's prior weight (with a nested pool, in
        the pool of the uncorrected laws).
    effective_outcomes
        Today's effective number of scored outcomes n_eff.
    correction_share
        With a nested pool (:func:`learn_nested`): today's share of the uncorrected pool's
        prior weight in the pool of pools; None otherwise.
    """

    labels: tuple[str, ...]
    past: np.ndarray
    current: tuple[float, ...]
    optimal: tuple[float, ...]
    prior_share: float
    effective_outcomes: float
    correction_share: float | None = None


def optimal_weights(
    log_density: np.ndarray, column_weight: np.ndarray, start: np.ndarray | None = None
) -> np.ndarray:
    """The weights on the simplex maximising sum_i c_i log sum_k w_k p_k(y_i).

    scipy's SLSQP with the analytic gradient, the weights bounded in [0, 1] and summing to
    1; the objective is concave, so its maximum is the global one.

    Parameters
    ----------
    log_density
        candidates x outcomes: log p_k(y_i).
    column_weight
        c_i >= 0 per outcome (1 / the horizon's count: each horizon's mean counts once).
    start
        Initial weights (default equal).

    Returns
    -------
    numpy.ndarray
        The weights (sum 1).
    """
    k = log_density.shape[0]
    w0 = np.full(k, 1.0 / k) if start is None else np.clip(np.asarray(start, float), 1e-6, None)
    w0 = w0 / w0.sum()
    total = float(column_weight.sum())
    if total <= 0 or k == 1:
        return w0
    ok = np.all(np.isfinite(log_density), axis=0)
    # Each outcome's densities over their largest: the objective moves by a constant only.
    scaled = np.exp(log_density[:, ok] - np.max(log_density[:, ok], axis=0, keepdims=True))
    c = column_weight[ok] / total

    def minus(w: np.ndarray) -> tuple[float, np.ndarray]:
        mix = np.maximum(w @ scaled, 1e-300)
        return -float(c @ np.log(mix)), -(scaled @ (c / mix))

    result = optimize.minimize(
        minus,
        w0,
        jac=True,
        method="SLSQP",
        bounds=[(0.0, 1.0)] * k,
        constraints=[{"type": "eq", "fun": lambda w: np.sum(w) - 1.0, "jac": lambda w: np.ones(k)}],
        options={"ftol": OPTIMISER_TOLERANCE, "maxiter": OPTIMISER_ITERATIONS},
    )
    w = np.clip(result.x, 0.0, None)
    w[w < NEGLIGIBLE] = 0.0  # SLSQP's round-off of a zero weight (1e-18): the member goes
    return np.asarray(w / w.sum())


def mean_log_score(log_density: np.ndarray, column_weight: np.ndarray, w: np.ndarray) -> float:
    """sum_i c_i log sum_k w_k p_k(y_i) / sum_i c_i: the pool's mean log score."""
    with np.errstate(divide="ignore"):
        mixed = special.logsumexp(log_density + np.log(w)[:, None], axis=0)
    ok = np.isfinite(mixed)
    return float(column_weight[ok] @ mixed[ok] / max(float(column_weight[ok].sum()), 1e-300))


def shrinkage(
    log_density: np.ndarray, column_weight: np.ndarray, w: np.ndarray, effective: float
) -> float:
    """The share lam of the first candidate in the weights of a pool shrunk by evidence.

    The larger of a prior worth EVIDENCE_PRIOR_OUTCOMES outcomes and the positive-part
    Stein factor of the fitted gain, 2 df / LR, where
    LR = 2 n_eff (mean log score of the optimal pool - the first candidate's) is the
    likelihood-ratio statistic of the pool against the first candidate on the record's
    independent outcomes and df the pool's free weights (candidates - 1). Where nothing
    changes, LR is about df (the optimiser's own fit of noise) and the pool stays at the
    first candidate; a fitted gain pays out of sample only beyond twice that optimism
    (Akaike's argument), hence 2 df. Where the record shows a large gain, the first
    candidate keeps little weight however long the record is. (Shrinking a fitted gain by
    its expected optimism over its chi-square statistic is the positive-part James-Stein
    rule in likelihood form; our adaptation, no source.)
    """
    if effective <= 0:
        return 1.0
    prior = EVIDENCE_PRIOR_OUTCOMES / (EVIDENCE_PRIOR_OUTCOMES + effective)
    # Both scores on the same outcomes: those where every candidate's density is finite.
    finite = np.all(np.isfinite(log_density), axis=0)
    log_density, column_weight = log_density[:, finite], column_weight[finite]
    gain = mean_log_score(log_density, column_weight, w) - mean_log_score(
        log_density, column_weight, np.eye(w.size)[0]
    )
    statistic = 2.0 * effective * gain
    df = max(w.size - 1, 1)
    stein = 1.0 if statistic <= 2 * df else 2 * df / statistic
    return float(min(1.0, max(prior, stein)))


def _known_counts(runs: list[HorizonReplay], rows: np.ndarray) -> np.ndarray:
    """horizons x rows: how many of each horizon's forecasts had their outcome before the
    row (outcome row <= row - 1)."""
    return np.array([np.searchsorted(r.origins + r.h, rows - 1, side="right") for r in runs])


def _effective(counts: np.ndarray, runs: list[HorizonReplay]) -> np.ndarray:
    """Per row: the mean over scored horizons of the effective number of known outcomes."""
    eff = np.array(
        [
            [effective_sample_size(int(c), r.h + 1) if c > 0 else 0.0 for c in row]
            for row, r in zip(counts, runs, strict=True)
        ]
    )
    scored = (counts > 0).sum(axis=0)
    return np.where(scored > 0, eff.sum(axis=0) / np.maximum(scored, 1), 0.0)


def learn(
    runs: dict[tuple[str, int], HorizonReplay],
    labels: list[str],
    n_origins: int,
    *,
    by_evidence: bool = False,
) -> PoolWeights:
    """The pool's weights at each past origin row and today, from the scores known then.

    Only horizons replayed for every candidate count, so the candidates are compared on
    the same outcomes. Shrunk toward the first candidate by the prior of PRIOR_OUTCOMES
    outcomes, or with ``by_evidence`` by :func:`shrinkage`.
    """
    horizons = sorted({h for (label, h) in runs if label == labels[0]})
    common = [h for h in horizons if all((label, h) in runs for label in labels)]
    k = len(labels)
    first = np.eye(k)[0]
    by_h = [[runs[(label, h)] for label in labels] for h in common]
    rows = np.arange(n_origins + 1)
    if not common or k == 1:
        past = np.tile(first, (n_origins, 1))
        return PoolWeights(tuple(labels), past, tuple(first), tuple(first), 1.0, 0.0)
    base = [group[0] for group in by_h]
    counts = _known_counts(base, rows)
    counts[:, -1] = [r.origins.size for r in base]  # now: every score
    updates = np.unique(np.linspace(0, n_origins, min(UPDATES, n_origins + 1)).astype(int))
    updates = np.union1d(updates, [n_origins])
    stacked = [np.stack([r.log_score for r in group]) for group in by_h]
    eff = _effective(counts[:, updates], base)
    weights = np.tile(first, (updates.size, 1))
    shares = np.ones(updates.size)
    optimal = first
    w = None
    for i, row in enumerate(updates):
        known = counts[:, row]
        if known.sum() == 0:
            continue
        density = np.concatenate([s[:, :c] for s, c in zip(stacked, known, strict=True)], axis=1)
        column = np.concatenate([np.full(c, 1.0 / c) for c in known if c > 0])
        w = optimal_weights(density, column, w)
        share = (
            shrinkage(density, column, w, eff[i])
            if by_evidence
            else PRIOR_OUTCOMES / (PRIOR_OUTCOMES + eff[i])
        )
        weights[i] = share * first + (1 - share) * w
        optimal = w
        shares[i] = share
    at = np.searchsorted(updates, rows[:-1], side="right") - 1  # the last update at or before
    share_now = float(shares[-1])
    return PoolWeights(
        tuple(labels),
        weights[at],
        tuple(float(v) for v in weights[-1]),
        tuple(float(v) for v in optimal),
        share_now,
        float(eff[-1]),
    )


def learn_nested(
    runs: dict[tuple[str, int], HorizonReplay], groups: list[list[str]], n_origins: int
) -> PoolWeights:
    """A pool of pools: each group of candidates pooled as :func:`learn` does, then the
    groups' pools pooled, shrunk by evidence toward the first group's
    (:func:`shrinkage`). The weights returned are the products, per candidate of every
    group in order.

    One adaptive step earns its place against no adaptation: the groups are the
    uncorrected laws and the same laws bias-corrected (``centre = "auto"``), so the
    correction gains weight only as far as its pooled laws scored better than the
    uncorrected ones on past rounds, whatever the spread stage does.
    """
    inner = [learn(runs, group, n_origins) for group in groups]
    staged = dict(runs)
    names = [f"{LABEL} {j}" for j in range(len(groups))]
    for name, weights in zip(names, inner, strict=True):
        for h, run in pooled_sequence(runs, weights).items():
            staged[(name, h)] = run
    outer = learn(staged, names, n_origins, by_evidence=True)

    def flat(rows: np.ndarray, parts: list[np.ndarray]) -> np.ndarray:
        return np.concatenate([rows[..., j : j + 1] * p for j, p in enumerate(parts)], axis=-1)

    return PoolWeights(
        tuple(label for group in groups for label in group),
        flat(outer.past, [w.past for w in inner]),
        tuple(
            float(v)
            for v in flat(np.asarray(outer.current), [np.asarray(w.current) for w in inner])
        ),
        tuple(
            float(v)
            for v in flat(np.asarray(outer.optimal), [np.asarray(w.optimal) for w in inner])
        ),
        inner[0].prior_share,
        inner[0].effective_outcomes,
        outer.prior_share,
    )


def pooled_sequence(
    runs: dict[tuple[str, int], HorizonReplay], pool: PoolWeights
) -> dict[int, HorizonReplay]:
    """Per horizon, the replay of the pool with the weights known at each origin."""
    labels = list(pool.labels)
    out: dict[int, HorizonReplay] = {}
    for h in sorted({h for (label, h) in runs if label == labels[0]}):
        if not all((label, h) in runs for label in labels):
            continue
        mine = [runs[(label, h)] for label in labels]
        first = mine[0]
        w = pool.past[first.origins].T  # candidates x forecasts
        with np.errstate(divide="ignore"):
            log_w = np.log(w)
        log_score = special.logsumexp(np.stack([r.log_score for r in mine]) + log_w, axis=0)
        out[h] = HorizonReplay(
            family=LABEL,
            h=h,
            origins=first.origins,
            pit=np.sum(w * np.stack([r.pit for r in mine]), axis=0),
            probabilities=np.einsum("kn,knc->nc", w, np.stack([r.probabilities for r in mine])),
            category=first.category,
            climatology=first.climatology,
            log_score=np.asarray(log_score),
            crps=np.sum(w * np.stack([r.crps for r in mine]), axis=0),
        )
    return out
