"""Honest selection: the method (family and spread option) chosen at each past origin from
the log scores known at that origin.

Every candidate is replayed (:mod:`riskreport.replay.calibration`); at origin j a candidate's
record is its mean log score at each horizon over the replayed forecasts whose outcome came
before j (o' + h <= j - 1), summed over the horizons scored by then. The candidate with the
best record is the one used at j, so the replay of the selected sequence grades the
selection as it would have been made, not the in-sample best (the prequential principle,
Dawid 1984, JRSS A 147(2)). Before any score is known the first candidate is used (the
normal law with a constant spread when it is among them). The current round's choice uses
every score known now.

With ``window_choice = "auto"`` the error window is chosen the same way, first: the normal
law is replayed over each window of :func:`window_grid` under each spread option, and at
each origin the window with the best record known there is the one that origin uses.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from riskreport._typing import Family
from riskreport.laws import bias, dynamics, joint, revisions
from riskreport.laws.dynamics import SpreadOption
from riskreport.processes import parallel
from riskreport.reading.config import Band
from riskreport.reading.panel import Panel
from riskreport.replay import calibration
from riskreport.replay.calibration import HorizonReplay

if TYPE_CHECKING:
    from riskreport.replay.cache import Pending, ReplayCache

Key = tuple[str, int]  # (candidate label, horizon)

SELECTED = "auto"  # the label of the selected sequence in the replay
# The families whose window the replay chooses (``window_choice = "auto"``): the law the
# window is chosen with, whose closed-form fit and scores make a window as long as the
# whole record cheap. The other laws keep the configured window: their fits grow in cost
# with the sample (with the two-piece normal included, the demo's replay took 3.6 s more
# instead of 1.4 s).
WINDOW_FAMILIES: tuple[Family, ...] = ("normal",)


@dataclass(frozen=True)
class Candidate:
    """One method the replay can choose: an error-law family, a spread option and whether
    the centre is bias-corrected (:mod:`riskreport.laws.bias`)."""

    family: Family
    spread: SpreadOption
    half_life: float | None = None  # of the bias correction, in years (None: uncorrected)

    @property
    def corrected(self) -> bool:
        """Whether the centre is bias-corrected."""
        return self.half_life is not None

    @property
    def label(self) -> str:
        """The family name for a constant spread, else ``family, ewma 0.9`` or
        ``family, joint``; ``, bias-corrected 2y`` added for a corrected centre."""
        name = (
            self.family if self.spread.kind == "constant" else f"{self.family}, {self.spread.label}"
        )
        return name if self.half_life is None else f"{name}, {bias.label(self.half_life)}"


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


def window_grid(window: int) -> tuple[int, ...]:
    """The windows ``window_choice = "auto"`` chooses among: the configured one, half of it
    and every known error (0).

    Halving and the whole record bracket the configured window on either side: a shorter
    window follows a change of regime sooner, a longer one estimates a stable law more
    precisely (common practice, no source). Half is offered only when it still holds
    ``calibration.MIN_TRAINING`` errors; with ``window = 0`` (all) there is nothing to
    choose.
    """
    if window <= 0:
        return (0,)
    half = (window // 2,) if window // 2 >= calibration.MIN_TRAINING else ()
    return (window, *half, 0)


def window_label(label: str, window: int) -> str:
    """The label of a candidate replayed over one fixed window (the window stage)."""
    return f"{label}, {'all errors' if window == 0 else f'window {window}'}"


def _windowed(
    errors: np.ndarray, h: int, windows: np.ndarray, values: np.ndarray | None
) -> np.ndarray:
    """The training samples of :func:`calibration.training` with one window per origin
    (``windows`` per panel origin row, 0: all), left-aligned and NaN padded; built by
    indexing, without a loop over origins."""
    column = errors[:, h]
    source = column if values is None else values[:, h]
    known = np.flatnonzero(np.isfinite(column))
    usable = np.searchsorted(known, known - h - 1, side="right")
    keep = usable >= calibration.MIN_TRAINING
    tests, ends = known[keep], usable[keep]
    w = windows[tests]
    starts = np.where(w > 0, np.maximum(ends - w, 0), 0)
    longest = -(-int((ends - starts).max(initial=0)) // calibration.PAD) * calibration.PAD
    at = starts[:, None] + np.arange(max(longest, 1))[None, :]
    inside = at < ends[:, None]
    picked = source[known][np.minimum(at, max(known.size - 1, 0))] if known.size else at * np.nan
    return np.where(inside, picked, np.nan)


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
    windows: dict[SpreadOption, np.ndarray] | None = None,
    predictive: bool = False,
) -> dict[tuple[str, int], HorizonReplay]:
    """Replay every candidate at every horizon, keyed by (candidate label, h).

    A constant-spread candidate is the plain replay of its family; an EWMA candidate trains
    on standardised errors and rescales by the volatility of each evaluation origin; a
    joint candidate trains on the errors and rescales each origin's law by the ratio of the
    joint to the own ML spread known there (:mod:`riskreport.laws.joint`). ``windows``, per
    spread option, gives each panel origin row its own window (chosen by
    :func:`choose_windows`) for the families of ``WINDOW_FAMILIES``; otherwise every
    origin uses ``window``. With a ``cache``, origins replayed before with identical inputs
    are taken from it. With ``predictive`` the normal law is replayed as its Student t
    predictive (:mod:`riskreport.laws.predictive`).
    """
    spreads = list(dict.fromkeys(c.spread for c in candidates))
    per_row = {s: (windows or {}).get(s) for s in spreads}
    standardised = {s: dynamics.standardise(errors, s) for s in spreads}
    ratios = {
        s: joint.ratios(errors, _rows_or(per_row[s], window, errors.shape[0]))
        for s in spreads
        if s.kind == "joint"
    }
    ratios.update(
        {
            s: revisions.ratios(combined, errors, _rows_or(per_row[s], window, errors.shape[0]))
            for s in spreads
            if s.kind == "revisions"
        }
    )

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
                fixed, chosen, at = _shared(
                    data, errors, window, spread, standardised[spread], per_row[spread], ratios
                )
                for c in candidates:
                    if c.spread != spread:
                        continue
                    shared = chosen if c.family in WINDOW_FAMILIES else fixed
                    if cache is None or pending is None:
                        # the same replay, through the cache when there is one
                        replay = (
                            calibration.replay_horizon if cache is None else cache.replay_horizon
                        )
                        out[(c.label, h)] = replay(
                            c.family,
                            shared,
                            mode=mode,
                            scale=at,
                            label=c.label,
                            predictive=predictive,
                        )
                    else:
                        out[(c.label, h)], found = cache.lookup(
                            c.family,
                            shared,
                            mode=mode,
                            scale=at,
                            label=c.label,
                            predictive=predictive,
                        )
                        pending.append(found)
        return out

    def there() -> tuple[dict[Key, HorizonReplay], list[Pending]]:
        pending: list[Pending] = []
        return replay_some(second, pending), pending

    # The horizons in two halves, one in a forked child when a second core is free
    # (riskreport.processes.parallel); every horizon's replay is the same either way.
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
    rows: np.ndarray | None,
    ratios: dict[SpreadOption, np.ndarray],
) -> tuple[calibration.HorizonData, calibration.HorizonData, np.ndarray | None]:
    """The horizon's data for one spread option over the configured window and over each
    origin's chosen window (``rows``; the same when None), and the scale at each evaluation
    origin (the volatility for ``ewma``, the joint-to-own ratio for ``joint``; None for a
    constant spread)."""
    z, scale = standardised
    values = z if spread.kind == "ewma" else None
    fixed = data
    if values is not None:
        _, train, _ = calibration.training(errors, data.h, window, values=values)
        fixed = dataclasses.replace(data, train=train)
    chosen = (
        fixed
        if rows is None
        else dataclasses.replace(data, train=_windowed(errors, data.h, rows, values))
    )
    at: np.ndarray | None = None
    if spread.kind == "ewma":
        at = scale[data.tests]
    elif spread.kind in ("joint", "revisions"):
        at = ratios[spread][data.tests, data.h]
    if at is not None:
        at = np.where(np.isfinite(at), at, 1.0)
    return fixed, chosen, at


def _rows_or(rows: np.ndarray | None, window: int, n: int) -> np.ndarray:
    return np.full(n, window) if rows is None else rows


@dataclass(frozen=True)
class WindowChoice:
    """The window chosen at every past origin for one spread option, and today's.

    Attributes
    ----------
    spread
        The spread option the window serves (every family under it uses this window).
    grid
        The windows chosen among (0: every known error).
    rows
        Per panel origin row, the window used there (from the records known then).
    current
        Today's window (from every record known now).
    totals
        Per window of the grid, today's record of the normal law with this spread option.
    spells
        The windows used as runs of origins (``candidate`` holds the window's words).
    """

    spread: SpreadOption
    grid: tuple[int, ...]
    rows: np.ndarray
    current: int
    totals: tuple[float, ...]
    spells: tuple[ChoiceSpell, ...]


def choose_windows(
    panel: Panel,
    combined: np.ndarray,
    errors: np.ndarray,
    horizons: int,
    *,
    window: int,
    mode: float | None,
    band_for: Callable[[int], Band],
    spreads: tuple[SpreadOption, ...],
    cache: ReplayCache | None = None,
    predictive: bool = False,
) -> tuple[dict[tuple[str, int], HorizonReplay], dict[SpreadOption, WindowChoice]]:
    """Choose the window at each past origin, per spread option, prequentially.

    The normal law (closed-form fit and scores: the cheapest replay) is replayed under each
    spread option over every window of :func:`window_grid`; at each origin the window with
    the best record known there is used by the ``WINDOW_FAMILIES`` under that spread
    option. The
    window stage's replays come back under :func:`window_label` labels.
    """
    grid = window_grid(window)
    runs: dict[tuple[str, int], HorizonReplay] = {}
    for w in grid:
        base = tuple(Candidate("normal", s) for s in spreads)
        for (label, h), run in replay(
            panel,
            combined,
            errors,
            horizons,
            window=w,
            mode=mode,
            band_for=band_for,
            candidates=base,
            cache=cache,
            predictive=predictive,
        ).items():
            runs[(window_label(label, w), h)] = run
    n = panel.origins.size
    chosen: dict[SpreadOption, WindowChoice] = {}
    for s in spreads:
        label = Candidate("normal", s).label
        labels = [window_label(label, w) for w in grid]
        if not any((labels[0], h) in runs for h in range(horizons + 1)):
            pick = np.zeros(n + 1, dtype=int)
            now = np.zeros(len(grid))
        else:
            records = _records(runs, labels, n)
            pick = np.argmax(records, axis=0)  # ties and no scores yet: the configured window
            now = records[:, -1]
        words = [window_label("", w)[2:] for w in grid]
        chosen[s] = WindowChoice(
            s,
            grid,
            np.asarray(grid)[pick[:-1]],
            grid[int(pick[-1])],
            tuple(float(v) for v in now),
            _spells(pick[:-1], words),
        )
    return runs, chosen


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


# Mean log score per forecast by which a candidate must beat the first one (the plain
# method, no adaptation) to be used: a stay-put margin, so that noise in a world where
# nothing changes does not switch the method (issue "Honest by default"; the size is ours,
# no source: a fiftieth of a nat is inside the noise of a few hundred overlapping rounds and
# far below the gains of adaptation on the real histories of bench/calibration.py).
SWITCH_MARGIN = 0.02


def _scored(runs: dict[tuple[str, int], HorizonReplay], label: str, n_origins: int) -> np.ndarray:
    """The number of horizons with a known score at each origin row (the last: now)."""
    at = np.arange(n_origins + 1)
    out = np.zeros(n_origins + 1)
    for (lab, h), run in runs.items():
        if lab != label:
            continue
        count = np.searchsorted(run.origins + h, at - 1, side="right")
        count[-1] = run.origins.size
        out += count > 0
    return out


def select(
    runs: dict[tuple[str, int], HorizonReplay],
    candidates: tuple[Candidate, ...],
    n_origins: int,
) -> PrequentialSelection:
    """The candidate used at each past origin (scores known then) and today's."""
    labels = [c.label for c in candidates]
    records = _records(runs, labels, n_origins)
    # Adaptation earns its place: another candidate replaces the first (no adaptation)
    # only when its record is better by SWITCH_MARGIN per horizon scored.
    scored = _scored(runs, labels[0], n_origins)
    handicap = SWITCH_MARGIN * scored[None, :] * (np.arange(len(labels)) > 0)[:, None]
    choice = np.argmax(records - handicap, axis=0)  # ties, no scores yet: the first candidate
    now = records[:, -1]
    current = candidates[int(choice[-1])]
    order = [int(i) for i in np.argsort(-now, kind="stable") if candidates[int(i)] != current]
    runner = candidates[order[0]] if order else None
    past = choice[:-1]
    return PrequentialSelection(
        candidates, past, current, runner, tuple(float(v) for v in now), _spells(past, labels)
    )


def _spells(past: np.ndarray, labels: list[str]) -> tuple[ChoiceSpell, ...]:
    """Runs of consecutive origins with the same choice."""
    if past.size == 0:
        return ()
    starts = np.flatnonzero(np.concatenate([[True], past[1:] != past[:-1]]))
    ends = np.concatenate([starts[1:] - 1, [past.size - 1]])
    return tuple(
        ChoiceSpell(int(s), int(e), labels[int(past[s])]) for s, e in zip(starts, ends, strict=True)
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
