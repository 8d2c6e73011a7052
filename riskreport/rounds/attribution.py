"""Who moved the centre: the change of the published centre since the previous brief, by model.

For each target period in both briefs the published centre (after judgement) is

    centre = combined point forecast + bias correction + judgement,

with the bias correction the model-based law's centre minus the point forecast (the fitted
location of past errors; 0 when the point forecast is the mode) and the judgement the final
centre minus the model-based one. The change of the centre is split into:

- one term per model: a Shapley split (Shapley 1953, "A value for n-person games", in
  Contributions to the Theory of Games II) of the change of the combined point forecast
  over the models, each player replacing its forecast and its weight of the previous round
  by today's. The value of a mix is the combination rule applied to the mixed inputs: the
  median or trimmed mean of the forecasts present, the average for equal weights, and for
  estimated weights sum(w f) over the models present, divided by sum(w) when every weight
  of both rounds is non-negative (so every mix is a weighted average, as the method's
  sum-to-one constraint makes each round) and not divided otherwise (``ols``, or negative
  weights). A model in one round only is a player too, whose replacement makes it enter
  (term ``model entering``) or leave (``model leaving``). The corners are each brief's
  stored point forecast, so the terms add up to its change exactly by construction (the
  efficiency of the Shapley value), for median and trimmed rules too. Exact over all
  subsets up to :data:`EXACT_UP_TO` models; beyond, averaged over :data:`ORDERINGS` seeded
  random orderings (each ordering's steps add up to the change, so the average does too);
- ``intercept``: the change of the ``ols`` intercept;
- ``bias correction`` and ``judgement``: the changes of those two parts;
- ``previous round recomputed``: when the previous brief's JSON holds no model forecasts
  (written by an older version), its round is recomputed from the forecasts file as of its
  ``as_of`` with today's configuration; this term is the stored point forecast's gap to the
  recomputed one (zero unless the file or the configuration changed since).

The module also gives P(inside) at the policy horizon with each model left out: the
combination recomputed without it (weights re-estimated over the other models' history, as
the method does), the published law moved by the change of the point forecast.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from riskreport.forecasts import combination as combination_module
from riskreport.laws.distributions import Distribution
from riskreport.laws.sensitivity import p_inside_shifted
from riskreport.reading.panel import Panel

if TYPE_CHECKING:
    from riskreport.reading.config import Config

EXACT_UP_TO = 10  # 2**10 mixes per period; more models: sampled orderings
ORDERINGS = 2000
SEED = 20270  # orderings sampled with this seed (reproducible)
ROBUST = ("median", "trimmed")


@dataclass(frozen=True)
class ModelForecast:
    """One model's forecast in the current round (the combination's input), per period."""

    period: str
    h: int
    model: str
    value: float


@dataclass(frozen=True)
class AttributionRow:
    """One term of the change of the published centre of one target period.

    Attributes
    ----------
    period, h
        The target period and its horizon in this brief.
    term
        ``model``, ``model entering``, ``model leaving``, ``intercept``, ``bias correction``,
        ``judgement`` or ``previous round recomputed``.
    model
        The model of a model term (None otherwise).
    centre_change
        This term's part of the change of the centre (pp); the terms of a period add up to
        ``centre_now - centre_before``.
    centre_before, centre_now
        The published centres of the period in the two briefs.
    """

    period: str
    h: int
    term: str
    model: str | None
    centre_change: float
    centre_before: float
    centre_now: float


@dataclass(frozen=True)
class LeaveOneOut:
    """P(inside) at the policy horizon with one model left out of the combination."""

    model: str
    period: str
    h: int
    centre: float
    p_inside: float
    centre_change: float
    p_inside_change: float


@dataclass(frozen=True)
class RoundInputs:
    """One round's combination inputs and centres for one target period."""

    forecasts: Mapping[str, float]
    weights: Mapping[str, float]
    intercept: float
    point: float  # the combination's value (the game's corner)
    published_point: float  # the point forecast the brief printed
    model_centre: float
    centre: float
    recomputed: bool = False


def model_forecasts(
    panel: Panel, included: np.ndarray, labels: Sequence[str]
) -> tuple[ModelForecast, ...]:
    """The current round's forecast of every included model at each reported period."""
    return tuple(
        ModelForecast(label, h, model, float(panel.current[k, h]))
        for h, label in enumerate(labels)
        for k, model in enumerate(panel.models)
        if included[k, h]
    )


def _value(
    method: str,
    forecasts: Mapping[str, float],
    weights: Mapping[str, float],
    normalise: bool,
    empty: float,
) -> float:
    """The combination rule on one mix of the two rounds' inputs."""
    if not forecasts:
        return empty
    values = np.sort(np.array(list(forecasts.values()), dtype=float))
    if method == "median":
        return float(np.median(values))
    if method == "trimmed":
        return float(values[1:-1].mean()) if values.size >= 3 else float(values.mean())
    if method in ("equal", "given"):
        return float(values.mean())
    total = sum(weights[m] * f for m, f in forecasts.items())
    if normalise:
        mass = sum(weights[m] for m in forecasts)
        return total / mass if mass > 0 else empty
    return total


def shapley(
    players: Sequence[str],
    value: Any,
    *,
    start: float,
    end: float,
    rng: np.random.Generator | None = None,
) -> dict[str, float]:
    """Shapley value of each player; ``value(frozenset)`` gives a mix's value.

    The empty and full mixes are worth ``start`` and ``end`` (pinned), so the values add up
    to ``end - start`` exactly. Exact over all subsets for up to :data:`EXACT_UP_TO`
    players, else the average over :data:`ORDERINGS` random orderings.
    """
    n = len(players)
    everyone = frozenset(players)
    cache: dict[frozenset[str], float] = {frozenset(): start, everyone: end}

    def v(mix: frozenset[str]) -> float:
        if mix not in cache:
            cache[mix] = float(value(mix))
        return cache[mix]

    out = dict.fromkeys(players, 0.0)
    if n == 0:
        return out
    if n <= EXACT_UP_TO:
        for i, player in enumerate(players):
            others = [p for j, p in enumerate(players) if j != i]
            for size in range(n):
                weight = math.factorial(size) * math.factorial(n - size - 1) / math.factorial(n)
                for group in itertools.combinations(others, size):
                    without = frozenset(group)
                    out[player] += weight * (v(without | {player}) - v(without))
        return out
    generator = rng if rng is not None else np.random.default_rng(SEED)
    for _ in range(ORDERINGS):
        mix: frozenset[str] = frozenset()
        for j in generator.permutation(n):
            player = players[int(j)]
            bigger = mix | {player}
            out[player] += v(bigger) - v(mix)
            mix = bigger
    return {p: total / ORDERINGS for p, total in out.items()}


def split(
    method: str, before: RoundInputs, now: RoundInputs
) -> list[tuple[str, str | None, float]]:
    """(term, model, part) of the change from ``before`` to ``now`` of one period's centre."""
    players = sorted(set(before.forecasts) | set(now.forecasts))
    normalise = all(w >= 0 for w in (*before.weights.values(), *now.weights.values()))

    def value(mix: frozenset[str]) -> float:
        forecasts: dict[str, float] = {}
        weights: dict[str, float] = {}
        for m in players:
            side = now if m in mix else before
            if m in side.forecasts:
                forecasts[m] = side.forecasts[m]
                weights[m] = side.weights.get(m, 0.0)
        return _value(method, forecasts, weights, normalise, before.point - before.intercept)

    parts = shapley(
        players, value, start=before.point - before.intercept, end=now.point - now.intercept
    )
    terms: list[tuple[str, str | None, float]] = []
    for m in players:
        kind = (
            "model"
            if m in before.forecasts and m in now.forecasts
            else "model entering"
            if m in now.forecasts
            else "model leaving"
        )
        terms.append((kind, m, parts[m]))
    if before.intercept or now.intercept:
        terms.append(("intercept", None, now.intercept - before.intercept))
    terms.append(
        (
            "bias correction",
            None,
            (now.model_centre - now.published_point)
            - (before.model_centre - before.published_point),
        )
    )
    terms.append(
        (
            "judgement",
            None,
            (now.centre - now.model_centre) - (before.centre - before.model_centre),
        )
    )
    if before.recomputed or now.recomputed:
        terms.append(
            (
                "previous round recomputed",
                None,
                (before.point - before.published_point) - (now.point - now.published_point),
            )
        )
    return terms


def round_inputs(data: Mapping[str, Any]) -> dict[str, RoundInputs]:
    """Each period's :class:`RoundInputs` from an assessment's JSON (or its :func:`plain`).

    Needs ``model_forecasts``; periods without a model forecast are left out.
    """
    by_h_weights: dict[int, dict[str, float]] = {}
    for w in data["combination"]["weights"]:
        by_h_weights.setdefault(int(w["h"]), {})[str(w["model"])] = float(w["weight"])
    intercepts = {
        int(r["h"]): float(r["intercept"]) for r in data["combination"].get("intercepts", [])
    }
    forecasts: dict[str, dict[str, float]] = {}
    for row in data["model_forecasts"]:
        forecasts.setdefault(str(row["period"]), {})[str(row["model"])] = float(row["value"])
    model_based = {r["period"]: r for r in data.get("model_based_horizons") or data["horizons"]}
    out = {}
    for row in data["horizons"]:
        period, h = str(row["period"]), int(row["h"])
        if period not in forecasts:
            continue
        base = model_based.get(period, row)
        point = float(base.get("point_forecast", base["centre"]))
        out[period] = RoundInputs(
            forecasts[period],
            by_h_weights.get(h, {}),
            intercepts.get(h, 0.0),
            point,
            point,
            float(base["centre"]),
            float(row["centre"]),
        )
    return out


def recomputed_inputs(cfg: Config, data: Mapping[str, Any]) -> dict[str, RoundInputs] | None:
    """The previous round's inputs recomputed from the forecasts file as of its ``as_of``
    (today's configuration), with its stored centres; None when that round cannot be built
    from today's files."""
    from riskreport.errors import InputError
    from riskreport.reading import panel as panel_module
    from riskreport.reading import periods, screening
    from riskreport.reading.inputs import read_actuals, read_forecasts

    parsed = periods.parse(str(data["as_of"]))
    if parsed is None or parsed.frequency != cfg.brief.frequency:
        return None
    as_of = parsed.ordinal
    try:
        fc = read_forecasts(
            cfg.inputs.forecasts, cfg.brief.frequency, as_of, cfg.inputs.max_abs_value
        )
        act = read_actuals(
            cfg.inputs.actuals, cfg.brief.frequency, cfg.inputs.max_abs_value, as_of=as_of
        )
        method = screening.combination_method(cfg, fc)
    except InputError:
        return None
    panel = panel_module.build(fc, act, as_of=as_of, max_h=cfg.brief.horizons)
    combo = combination_module.combine(
        method, panel, window=cfg.combination.window, shrinkage=cfg.combination.shrinkage
    )
    labels = [periods.label(as_of + h, cfg.brief.frequency) for h in range(cfg.brief.horizons + 1)]
    rebuilt = {
        "horizons": data["horizons"],
        "model_based_horizons": data.get("model_based_horizons"),
        "combination": {
            "weights": [
                {"h": h, "model": m, "weight": float(combo.current_weights[k, h])}
                for h in range(len(labels))
                for k, m in enumerate(panel.models)
                if combo.included[k, h]
            ],
            "intercepts": [{"h": h, "intercept": float(b)} for h, b in enumerate(combo.intercepts)],
        },
        "model_forecasts": [
            dataclasses.asdict(f) for f in model_forecasts(panel, combo.included, labels)
        ],
    }
    out = round_inputs(rebuilt)
    stored = {r["period"]: r for r in data.get("model_based_horizons") or data["horizons"]}
    for period, inputs in out.items():
        point = float(combo.combined[-1, labels.index(period)])
        printed = stored.get(period, {}).get("point_forecast")
        out[period] = dataclasses.replace(
            inputs,
            point=point,
            # a brief without its point forecast: its bias correction is taken against
            # the recomputed one
            published_point=point if printed is None else float(printed),
            recomputed=True,
        )
    return out


def attribute(
    method: str,
    before: Mapping[str, RoundInputs],
    now: Mapping[str, RoundInputs],
    horizons: Mapping[str, int],
) -> tuple[AttributionRow, ...]:
    """The ``attribution`` rows for every target period in both rounds."""
    rows: list[AttributionRow] = []
    for period, current in now.items():
        earlier = before.get(period)
        if earlier is None:
            continue
        rows.extend(
            AttributionRow(
                period, horizons[period], term, model, part, earlier.centre, current.centre
            )
            for term, model, part in split(method, earlier, current)
        )
    return tuple(rows)


def leave_one_out(
    method: combination_module.CombinationMethod,
    panel: Panel,
    combo: combination_module.Combination,
    dist: Distribution,
    band: tuple[float, float],
    *,
    period: str,
    h: int,
    window: int,
    shrinkage: float,
) -> tuple[LeaveOneOut, ...]:
    """P(inside) at horizon ``h`` with each included model left out (weights re-estimated,
    the published law ``dist`` moved by the change of the combined point forecast)."""
    idx = np.flatnonzero(combo.included[:, h])
    if idx.size < 2:
        return ()
    point = float(combo.combined[-1, h])
    now = float(p_inside_shifted(dist, band[0], band[1], np.array([0.0]))[0])
    rows = []
    for k in idx:
        cube = panel.forecasts.copy()
        cube[k, -1, :] = np.nan
        without = combination_module.combine(
            method, dataclasses.replace(panel, forecasts=cube), window=window, shrinkage=shrinkage
        )
        moved = float(without.combined[-1, h]) - point
        p = float(p_inside_shifted(dist, band[0], band[1], np.array([moved]))[0])
        rows.append(
            LeaveOneOut(
                panel.models[k],
                period,
                h,
                float(dist.mode) + moved,
                p,
                moved,
                p - now,
            )
        )
    return tuple(rows)
