"""Honest selection: the method (family and spread option) chosen at each past origin from
the log scores known at that origin.

Every candidate is replayed (:mod:`riskreport.calibration`); at origin j a candidate's
record is its mean log score at each horizon over the replayed forecasts whose outcome came
before j (o' + h <= j - 1), summed over the horizons scored by then. The candidate with the
best record is the one used at j, so the replay of the selected sequence grades the
selection as it would have been made, not the in-sample best (the prequential principle,
Dawid 1984, JRSS A 147(2)). Before any score is known the first candidate is used (the
normal law with a constant spread when it is among them). The current round's choice uses
every score known now.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from riskreport import calibration, dynamics, parallel
from riskreport._typing import Family
from riskreport.calibration import HorizonReplay
from riskreport.config import Band
from riskreport.dynamics import SpreadOption
from riskreport.panel import Panel

if TYPE_CHECKING:
    from riskreport.replay_cache import Pending, ReplayCache

Key = tuple[str, int]  # (candidate label, horizon)

SELECTED = "auto"  # the label of the selected sequence in the replay


@dataclass(frozen=True)
class Candidate:
    """One method the replay can choose: an error-law family and a spread option."""

    family: Family
    spread: SpreadOption

    @property
    def label(self) -> str:
        """The family name for a constant spread, else ``family, ewma 0.9``."""
        if self.spread.smoothing is None:
            return self.family
        return f"{self.family}, {self.spread.label}"


@dataclass(frozen=True)
class ChoiceSpell:
    """A run of consecutive past origins that used the same candidate."""

    first_origin: int  # row of the panel's origins
    last_origin: int
    candidate: str


@dataclass(frozen=True)
class PrequentialSelection:
    """The candidates, the choice at every past origin and today's choice.

    Attributes
    ----------
    candidates
        Every candidate, in order (the first is the default before any score is known).
    choice
        Per panel origin row, the index of the candidate used there (from scores known then).
    current, runner_up
        Today's choice (from every score known now) and the best candidate of another family
        or spread option.
    totals
        Per candidate, today's record (sum over horizons of the mean log score).
    spells
        The choice sequence as runs of origins (for the record).
    """

    candidates: tuple[Candidate, ...]
    choice: np.ndarray
    current: Candidate
    runner_up: Candidate | None
    totals: tuple[float, ...]
    spells: tuple[ChoiceSpell, ...]


def replay(
    panel: Panel,
    combined: np.ndarray,
    errors: np.ndarray,
    horizons: int,
    *,
    window: int,
    mode: float | None,
    band_for: Callable[[int], Band],
    candidates: tuple[Candidate, ...],
    cache: ReplayCache | None = None,
) -> dict[tuple[str, int], HorizonReplay]:
    """Replay every candidate at every horizon, keyed by (candidate label, h).

    A constant-spread candidate is the plain replay of its family; an EWMA candidate trains
    on standardised errors and rescales by the volatility of each evaluation origin. With a
    ``cache``, origins replayed before with identical inputs are taken from it.
    """
    spreads = list(dict.fromkeys(c.spread for c in candidates))
    standardised = {s: dynamics.standardise(errors, s) for s in spreads}

    def replay_some(hs: list[int], pending: list[Pending] | None) -> dict[Key, HorizonReplay]:
        """The replays at horizons ``hs``; with ``pending``, cached origins are looked up
        and what is new is collected there instead of recorded."""
        out: dict[Key, HorizonReplay] = {}
        for h in hs:
            data = calibration.horizon_data(
                panel, combined, errors, h, window=window, band_for=band_for
            )
            if data is None:
                continue
            for spread in spreads:
                shared, at = _shared(data, errors, window, spread, standardised[spread])
                for c in candidates:
                    if c.spread != spread:
                        continue
                    if cache is None:
                        out[(c.label, h)] = calibration.replay_horizon(
                            c.family, shared, mode=mode, scale=at, label=c.label
                        )
                    elif pending is None:
                        out[(c.label, h)] = cache.replay_horizon(
                            c.family, shared, mode=mode, scale=at, label=c.label
                        )
                    else:
                        out[(c.label, h)], found = cache.lookup(
                            c.family, shared, mode=mode, scale=at, label=c.label
                        )
                        pending.append(found)
        return out

    def there() -> tuple[dict[Key, HorizonReplay], list[Pending]]:
        pending: list[Pending] = []
        return replay_some(second, pending), pending

    # The horizons in two halves, one in a forked child when a second core is free
    # (riskreport.parallel); every horizon's replay is the same either way.
    first, second = parallel.split(list(range(horizons + 1)))
    mine, (theirs, pending) = parallel.both(lambda: replay_some(first, None), there)
    if cache is not None:
        for found in pending:
            cache.record(found)
    merged = {**mine, **theirs}
    return {key: merged[key] for key in sorted(merged, key=lambda key: key[1])}


def _shared(
    data: calibration.HorizonData,
    errors: np.ndarray,
    window: int,
    spread: SpreadOption,
    standardised: tuple[np.ndarray, np.ndarray],
) -> tuple[calibration.HorizonData, np.ndarray | None]:
    """The horizon's data for one spread option, and the volatility at each evaluation
    origin (None for a constant spread)."""
    if spread.smoothing is None:
        return data, None
    z, scale = standardised
    _, train, _ = calibration.training(errors, data.h, window, values=z)
    shared = calibration.HorizonData(
        data.h,
        data.tests,
        train,
        data.test,
        data.lower,
        data.upper,
        data.category,
        data.climatology,
    )
    at = scale[data.tests]
    return shared, np.where(np.isfinite(at), at, 1.0)


def _records(
    runs: dict[tuple[str, int], HorizonReplay], labels: list[str], n_origins: int
) -> np.ndarray:
    """candidates x (n_origins + 1): the record known at each origin row (the last column:
    now, every score)."""
    horizons = sorted({h for (label, h) in runs if label == labels[0]})
    common = [h for h in horizons if all((label, h) in runs for label in labels)]
    records = np.zeros((len(labels), n_origins + 1))
    at = np.arange(n_origins + 1)
    for h in common:
        first = runs[(labels[0], h)]
        outcome = first.origins + h  # rows of the outcome periods
        count = np.searchsorted(outcome, at - 1, side="right")
        count[-1] = outcome.size
        for i, label in enumerate(labels):
            cum = np.concatenate([[0.0], np.cumsum(runs[(label, h)].log_score)])
            records[i] += np.where(count > 0, cum[count] / np.maximum(count, 1), 0.0)
    return records


def select(
    runs: dict[tuple[str, int], HorizonReplay],
    candidates: tuple[Candidate, ...],
    n_origins: int,
) -> PrequentialSelection:
    """The candidate used at each past origin (scores known then) and today's."""
    labels = [c.label for c in candidates]
    records = _records(runs, labels, n_origins)
    choice = np.argmax(records, axis=0)  # ties and no scores yet: the first candidate
    now = records[:, -1]
    order = np.argsort(-now, kind="stable")
    current = candidates[int(order[0])]
    runner = next((candidates[int(i)] for i in order[1:]), None)
    past = choice[:-1]
    starts = np.flatnonzero(np.concatenate([[True], past[1:] != past[:-1]]))
    ends = np.concatenate([starts[1:] - 1, [past.size - 1]])
    spells = tuple(
        ChoiceSpell(int(s), int(e), labels[int(past[s])]) for s, e in zip(starts, ends, strict=True)
    )
    return PrequentialSelection(
        candidates, past, current, runner, tuple(float(v) for v in now), spells
    )


def selected_sequence(
    runs: dict[tuple[str, int], HorizonReplay], chosen: PrequentialSelection
) -> dict[int, HorizonReplay]:
    """Per horizon, the replay of the method as selected at each origin (label ``auto``)."""
    labels = [c.label for c in chosen.candidates]
    out: dict[int, HorizonReplay] = {}
    for h in sorted({h for (label, h) in runs if label == labels[0]}):
        if not all((label, h) in runs for label in labels):
            continue
        mine = [runs[(label, h)] for label in labels]
        first = mine[0]
        pick = chosen.choice[first.origins]
        rows = np.arange(first.origins.size)

        stacked = {
            name: np.stack([getattr(r, name) for r in mine])[pick, rows]
            for name in ("pit", "probabilities", "log_score", "crps")
        }
        out[h] = HorizonReplay(
            family=SELECTED,
            h=h,
            origins=first.origins,
            pit=stacked["pit"],
            probabilities=stacked["probabilities"],
            category=first.category,
            climatology=first.climatology,
            log_score=stacked["log_score"],
            crps=stacked["crps"],
        )
    return out
