"""The calibration adjustments of a round: which method the replay chose at each origin,
whether the probabilities were recalibrated, what the replay says of the result, and how
much the choice matters (the sensitivity panel).

The replay graded here is the method as it would have been run: the candidate chosen at
each past origin from the scores known then (:mod:`riskreport.replay.prequential`), then, with
``recalibrate = true``, the beta map learned from the PITs known then
(:mod:`riskreport.replay.recalibration`).
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from typing import Literal

import numpy as np

from riskreport._typing import FAMILIES
from riskreport.laws import dynamics, probabilities
from riskreport.laws.distributions import Distribution
from riskreport.reading.config import Config
from riskreport.reading.inputs import ErrorQuantiles
from riskreport.replay import calibration, prequential, recalibration
from riskreport.replay.calibration import HorizonReplay
from riskreport.replay.prequential import Candidate
from riskreport.replay.replays import Replays

NEAR = 0.05  # |coverage - nominal| the brief calls "near nominal" (common practice, no source)


@dataclass(frozen=True)
class RecalibrationRow:
    """One horizon's map and the probabilities before and after it.

    ``method`` is ``beta`` (parameters ``a``, ``b``; NaN for tracking) or ``tracking``
    (``levels``: the PIT levels now used for the nominal levels ``nominal``).
    """

    h: int
    method: str
    a: float
    b: float
    levels: tuple[float, ...]
    nominal: tuple[float, ...]
    n_pits: int
    p_below_raw: float
    p_inside_raw: float
    p_above_raw: float
    p_below: float
    p_inside: float
    p_above: float


def recalibrate(
    cfg: Config,
    result: Replays,
    outcome: tuple[Distribution, ...],
    *,
    given: frozenset[int] = frozenset(),
) -> tuple[tuple[Distribution, ...], tuple[RecalibrationRow, ...]]:
    """Today's distributions through each horizon's map (fitted on every PIT of the raw
    graded sequence), with the raw and recalibrated band probabilities.

    Horizons in ``given`` (an ``error_quantiles`` distribution) are used exactly as given:
    the replay graded the learned method there, not the given distribution, so its map
    says nothing about it.
    """
    raw_label = prequential.SELECTED if len(result.candidates) > 1 else result.candidates[0].label
    dists, rows = [], []
    for h, dist in enumerate(outcome):
        run = None if h in given else result.runs.get((raw_label, h))
        new: Distribution = dist
        a = b = float("nan")
        levels: tuple[float, ...] = ()
        n = 0 if run is None else int(run.pit.size)
        if run is not None and cfg.uncertainty.recalibration == "beta":
            beta = recalibration.current_map(run)
            a, b = beta.a, beta.b
            if (a, b) != (1.0, 1.0):
                new = recalibration.Recalibrated(dist, a, b)
        elif run is not None and n >= recalibration.MIN_PITS:
            u, v = recalibration.current_tracked(run)
            levels = u[1:-1]
            new = recalibration.Tracked(dist, u, v)
        band = cfg.band_for(cfg.brief.as_of + h)
        before = probabilities.band_probabilities(dist, band.lower, band.upper)
        after = probabilities.band_probabilities(new, band.lower, band.upper)
        dists.append(new)
        rows.append(
            RecalibrationRow(
                h,
                cfg.uncertainty.recalibration,
                a,
                b,
                levels,
                recalibration.LEVELS if levels else (),
                n,
                before.p_below,
                before.p_inside,
                before.p_above,
                after.p_below,
                after.p_inside,
                after.p_above,
            )
        )
    return tuple(dists), tuple(rows)


@dataclass(frozen=True)
class SensitivityRow:
    """P(inside) at the policy horizon under one method, with its replay record there.

    ``log_score`` and ``coverage_90`` are the replay's mean log score and 90% coverage at
    the policy horizon (NaN when it was not replayed); ``chosen`` marks today's choice.
    ``window`` is the error window today's law rests on (0: every known error; -1 for the
    graded sequence, whose window may differ by horizon); ``window_fixed`` is False where
    the replay used the window chosen at each past origin rather than this one throughout.
    """

    method: str
    family: str
    spread: str
    p_inside: float
    log_score: float
    coverage_90: float
    chosen: bool
    window: int = -1
    window_fixed: bool = True


def _record_at(run: HorizonReplay | None) -> tuple[float, float]:
    if run is None:
        return float("nan"), float("nan")
    coverage = float(np.mean(np.abs(run.pit - 0.5) <= 0.45))
    return float(np.mean(run.log_score)), coverage


def _methods(cfg: Config, result: Replays) -> dict[str, tuple[Candidate, int, bool]]:
    """Every replayed label the panel shows, with its candidate and today's window: each
    family under each spread option, then (window chosen) the normal law over each window
    of the grid under a constant spread and under today's spread option."""
    out: dict[str, tuple[Candidate, int, bool]] = {}
    for s in dynamics.options("auto"):
        chosen = result.windows.get(s)
        for f in FAMILIES:
            c = Candidate(f, s)
            if chosen is None or f not in prequential.WINDOW_FAMILIES:
                out[c.label] = (c, cfg.uncertainty.window, True)
            else:
                out[c.label] = (c, chosen.current, False)
    for c in result.candidates:  # the bias-corrected laws (centre = "auto"), constant spread
        if c.corrected and c.spread == dynamics.CONSTANT:
            chosen = result.windows.get(c.spread)
            if chosen is None or c.family not in prequential.WINDOW_FAMILIES:
                out[c.label] = (c, cfg.uncertainty.window, True)
            else:
                out[c.label] = (c, chosen.current, False)
    shown = dict.fromkeys((dynamics.CONSTANT, result.selection.current.spread))
    for s in shown:
        if s in result.windows:
            c = Candidate("normal", s)
            for w in result.windows[s].grid:
                out[prequential.window_label(c.label, w)] = (c, w, True)
    return out


def sensitivity(
    cfg: Config,
    result: Replays,
    errors: np.ndarray,
    point: np.ndarray,
    headline: float,
    given: ErrorQuantiles | None = None,
) -> tuple[SensitivityRow, ...]:
    """One row per replayed method (each family under each spread option, and with a chosen
    window the normal law over each window), then the graded sequence with today's
    model-based P(inside) (``headline``)."""
    from riskreport.laws import uncertainty

    h = cfg.brief.policy_horizon
    band = cfg.band_for(cfg.brief.as_of + h)
    methods = _methods(cfg, result)
    labels = [
        label for label in dict.fromkeys(label for label, _ in result.runs) if label in methods
    ]
    current = result.selection.current
    today = result.window if result.window is not None else cfg.uncertainty.window
    rows = []
    for label in labels:
        candidate, window, fixed = methods[label]
        short = cfg.replaced("brief", horizons=h).replaced(
            "uncertainty", window=window
        )  # h and below suffice
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            margins = uncertainty.build(
                short,
                errors,
                point[: h + 1],
                given,
                family=candidate.family,
                spread=candidate.spread,
                correction=result.correction(candidate),
                forecasts=result.forecasts,
            )
        p = probabilities.band_probabilities(margins.outcome[h], band.lower, band.upper)
        log_score, coverage = _record_at(result.runs.get((label, h)))
        rows.append(
            SensitivityRow(
                label,
                candidate.family,
                candidate.spread.label,
                p.p_inside,
                log_score,
                coverage,
                # With a pool no single member is today's law: the pool's row is.
                result.pool is None
                and candidate == current
                and window == today
                and label == candidate.label,
                window,
                fixed,
            )
        )
    if any(c.label == result.graded for c in result.candidates):
        return tuple(rows)  # the graded sequence is one of the rows above
    log_score, coverage = _record_at(result.runs.get((result.graded, h)))
    rows.append(
        SensitivityRow(
            result.graded, "as selected", "as selected", headline, log_score, coverage, True
        )
    )
    return tuple(rows)


# Mean log scores closer than this are read as equal (common practice, no source: a
# hundredth of a nat per forecast is far inside the noise of a few hundred past rounds).
SAME_SCORE = 0.01


@dataclass(frozen=True)
class Verdict:
    """What the replay says of the graded method against the constant-spread normal law.

    Mean |coverage - nominal| over the replayed horizons, at 50% and 90%, and the mean log
    score over horizons; ``near`` is whether both gaps are within NEAR. ``short_horizons``
    are the horizons whose 90% coverage misses by more than NEAR, ``worst_h`` the horizon
    with the largest miss and ``worst_coverage_90`` its 90% coverage (-1 and NaN when no
    horizon was replayed).
    """

    method: str
    spread: str
    recalibrated: bool
    gap_50: float
    gap_90: float
    log_score: float
    baseline_gap_50: float
    baseline_gap_90: float
    baseline_log_score: float
    near: bool
    short_horizons: tuple[int, ...] = ()
    worst_h: int = -1
    worst_coverage_90: float = float("nan")

    @property
    def against_baseline(self) -> Literal["better", "about the same", "worse"]:
        """The graded method's mean replay log score against the constant normal law's,
        with differences within ``SAME_SCORE`` read as no difference."""
        gap = self.log_score - self.baseline_log_score
        if not np.isfinite(gap) or abs(gap) <= SAME_SCORE:
            return "about the same"
        return "better" if gap > 0 else "worse"


def _gaps(result: Replays, label: str) -> tuple[float, float, float]:
    mine = [r for (lab, _), r in result.runs.items() if lab == label]
    if not mine:
        return float("nan"), float("nan"), float("nan")
    gap = {
        nominal: float(
            np.mean([abs(np.mean(np.abs(r.pit - 0.5) <= nominal / 2) - nominal) for r in mine])
        )
        for nominal in calibration.NOMINAL
    }
    return gap[0.5], gap[0.9], float(np.mean([np.mean(r.log_score) for r in mine]))


def verdict(result: Replays) -> Verdict:
    """The graded method's coverage gaps and log score beside the constant normal law's."""
    gap_50, gap_90, log_score = _gaps(result, result.graded)
    base_50, base_90, base_log = _gaps(result, result.baseline)
    cover = {
        h: float(np.mean(np.abs(r.pit - 0.5) <= 0.45))
        for (lab, h), r in result.runs.items()
        if lab == result.graded
    }
    worst = max(sorted(cover), key=lambda h: abs(cover[h] - 0.9), default=-1)
    return Verdict(
        result.method,
        result.spread,
        result.graded == recalibration.LABEL,
        gap_50,
        gap_90,
        log_score,
        base_50,
        base_90,
        base_log,
        bool(gap_50 <= NEAR and gap_90 <= NEAR),
        tuple(h for h in sorted(cover) if abs(cover[h] - 0.9) > NEAR),
        worst,
        cover.get(worst, float("nan")),
    )


def method_reason(cfg: Config) -> tuple[str, str]:
    """Whether the method is the default or configured, and one sentence on why it ran."""
    u = cfg.uncertainty
    what = (
        f"distribution = {u.distribution}, spread = {u.spread}, centre = {u.centre}, "
        f"predictive = {u.predictive}, recalibrate = {'true' if u.recalibrate else 'false'}, "
        f"window = {u.window or 'all'}"
    )
    if not u.configured:
        return "defaults", (
            f"The default method ({what}): the one whose replay held best on real inflation "
            "histories (docs/method.md, 'The default method and its evidence')."
        )
    keys = ", ".join(u.configured)
    return "configured", f"As configured ({keys} set in [uncertainty]): {what}."


def family_totals(result: Replays) -> dict[str, float]:
    """Per family, today's best record over its spread options (for the ``auto`` record)."""
    totals: dict[str, float] = {}
    for c, value in zip(result.candidates, result.selection.totals, strict=True):
        totals[c.family] = max(totals.get(c.family, -np.inf), value)
    return totals


@dataclass(frozen=True)
class MethodSpell:
    """The method used at the past origins from ``first`` to ``last`` (period labels)."""

    first: str
    last: str
    method: str


@dataclass(frozen=True)
class Adjustments:
    """The calibration adjustments of the round, as carried in the assessment.

    Attributes
    ----------
    spread_option
        The configured ``[uncertainty] spread`` (``constant``, ``ewma`` or ``auto``).
    spread
        The spread used today (``constant`` or ``ewma <lambda>``).
    volatility
        Today's error volatility (1 for a constant spread).
    method, runner_up
        Today's choice (family and spread) and the runner-up, from every score known now.
    graded
        The sequence whose calibration the brief reports (``auto`` when chosen
        prequentially, ``auto, recalibrated`` after the beta map).
    choices
        The method used at each past origin, as spells of origins (labels of the periods).
    recalibrate
        Whether the beta map was applied.
    recalibration
        Per horizon, the map and the probabilities before and after it (empty when off).
    verdict
        What the replay says of the graded sequence beside the constant normal law.
    sensitivity
        P(inside) at the policy horizon under every replayed method.
    window_choice
        The configured ``[uncertainty] window_choice`` (``fixed`` or ``auto``).
    window
        The error window today's law rests on (0: every known error): the configured one,
        or the one chosen by the replay for today's spread option.
    window_grid
        The windows chosen among (empty when fixed).
    window_spells
        The window used at each past origin under today's spread option (empty when fixed).
    factors
        Per horizon, today's scale factor of the spread: the volatility (``ewma``), the
        ratio of the joint to the own ML spread (``joint``) or 1 (``constant``).
    method_source
        ``defaults`` when the config sets no method key in ``[uncertainty]``, else
        ``configured``.
    method_reason
        Which method ran and why, in one sentence.
    predictive
        The configured ``[uncertainty] predictive`` (``student-t`` or ``plug-in``).
    """

    spread_option: str
    spread: str
    volatility: float
    method: str
    runner_up: str | None
    graded: str
    choices: tuple[MethodSpell, ...]
    recalibrate: bool
    recalibration: tuple[RecalibrationRow, ...]
    verdict: Verdict
    sensitivity: tuple[SensitivityRow, ...]
    window_choice: str = "fixed"
    window: int = 0
    window_grid: tuple[int, ...] = ()
    window_spells: tuple[MethodSpell, ...] = ()
    factors: tuple[float, ...] = ()
    method_source: str = "defaults"
    method_reason: str = ""
    predictive: str = "plug-in"
