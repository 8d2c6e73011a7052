"""What changed since the previous brief, and why.

For each target period in both briefs, the change in P(inside) is split into the parts due
to the centre moving, the spread and shape changing, and the band changing: the Shapley
split, the average over the six orders of making the three replacements, so the parts add
up to the total change exactly.

A distribution is written as centre + shape: P(inside) = F_S(U - c) - F_S(L - c), with F_S
the distribution of (outcome - centre). The game's corners are exact: the mix that takes
every ingredient from the previous brief is worth its stored P(inside), the mix that takes
every ingredient from this brief is worth this brief's, and only the six mixed corners are
computed, from the shapes rebuilt from the percentiles in the JSON (normal-score
interpolation). So the parts add up to the stored change exactly, with no rescaling, and an
ingredient that did not change gets exactly zero (Shapley 1953, "A value for n-person
games", in Contributions to the Theory of Games II: efficiency and the null-player
property).
"""

from __future__ import annotations

import itertools
import logging
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Protocol

import numpy as np
from scipy import stats

from riskreport.errors import InputError
from riskreport.files import jsonfile

log = logging.getLogger("riskreport")

# Stored per horizon so a later brief can rebuild the shape.
PERCENTILES = tuple(range(1, 100))
SAME = 1e-9  # differences below this are the JSON's rounding, not a change


@dataclass(frozen=True)
class Side:
    """One brief's view of one target period: centre, band and the shape's quantiles."""

    centre: float
    band: tuple[float, float]
    levels: np.ndarray
    offsets: np.ndarray  # quantiles of (outcome - centre)
    p_inside: float

    def prob(self, centre: float, band: tuple[float, float]) -> float:
        """P(inside) with this side's shape, a given centre and band.

        The shape's CDF is the percentiles interpolated linearly in normal scores, and
        extended linearly in normal scores beyond the outermost ones (normal-like tails).
        """
        z = stats.norm.ppf(self.levels)
        v = self.offsets
        low = (z[1] - z[0]) / max(v[1] - v[0], 1e-12)
        high = (z[-1] - z[-2]) / max(v[-1] - v[-2], 1e-12)

        def cdf(x: float) -> float:
            if x < v[0]:
                score = z[0] + (x - v[0]) * low
            elif x > v[-1]:
                score = z[-1] + (x - v[-1]) * high
            else:
                score = float(np.interp(x, v, z))
            return float(stats.norm.cdf(score))

        return cdf(band[1] - centre) - cdf(band[0] - centre)


@dataclass(frozen=True)
class ChangeHorizon:
    """The change in P(inside) for one target period in both briefs, and its Shapley parts."""

    period: str
    p_inside_before: float
    p_inside_now: float
    due_to_centre: float
    due_to_spread: float
    due_to_band: float
    centre_before: float
    centre_now: float


@dataclass(frozen=True)
class ChangeRecord:
    """The change since the brief of ``previous_as_of``, by target period in both."""

    previous_as_of: str
    horizons: tuple[ChangeHorizon, ...]


def side(row: dict[str, Any]) -> Side:
    """A horizon row of an assessment JSON as a :class:`Side`."""
    if row.get("percentiles"):
        levels = np.array(PERCENTILES, dtype=float) / 100
        values = np.array(row["percentiles"], dtype=float)
    else:
        items = sorted((float(k), float(v)) for k, v in row["quantiles"].items())
        levels = np.array([k for k, _ in items])
        values = np.array([v for _, v in items])
    return Side(
        float(row["centre"]),
        (float(row["band"][0]), float(row["band"][1])),
        levels,
        values - float(row["centre"]),
        float(row["p_inside"]),
    )


def _same_shape(before: Side, now: Side) -> bool:
    return now.levels.shape == before.levels.shape and bool(
        np.allclose(now.levels, before.levels, rtol=0, atol=SAME)
        and np.allclose(now.offsets, before.offsets, rtol=0, atol=SAME)
    )


def changed_ingredients(before: Side, now: Side) -> tuple[bool, bool, bool]:
    """Which ingredients (centre, spread/shape, band) changed beyond the JSON's rounding.

    A change in P(inside) with the same centre and band is the shape's, even where the
    percentiles do not show it (beyond the outermost ones).
    """
    centre = abs(now.centre - before.centre) >= SAME
    band = max(abs(now.band[0] - before.band[0]), abs(now.band[1] - before.band[1])) >= SAME
    shape = not _same_shape(before, now)
    if not (centre or band) and abs(now.p_inside - before.p_inside) >= SAME:
        shape = True
    return centre, shape, band


def decompose(before: Side, now: Side) -> tuple[float, float, float]:
    """Shapley parts (centre, spread/shape, band) of the change in P(inside).

    The value of a mix takes each ingredient from ``before`` or ``now``; each part is its
    average marginal contribution over the six orders (Shapley 1953). The all-``before``
    and all-``now`` mixes are worth the stored P(inside) of each brief, so the parts add
    up to ``now.p_inside - before.p_inside`` with no rescaling; an unchanged ingredient
    adds nothing to any mix, so its part is exactly 0.
    """
    changed = changed_ingredients(before, now)

    def value(use: tuple[bool, ...]) -> float:
        # Taking an unchanged ingredient from ``now`` is the same mix as from ``before``.
        mix = tuple(u and c for u, c in zip(use, changed, strict=True))
        if not any(mix):
            return before.p_inside
        if mix == changed:
            return now.p_inside
        centre = now.centre if mix[0] else before.centre
        shape = now if mix[1] else before
        band = now.band if mix[2] else before.band
        return shape.prob(centre, band)

    corners = {use: value(use) for use in itertools.product((False, True), repeat=3)}
    parts = np.zeros(3)
    orders = list(itertools.permutations(range(3)))
    for order in orders:
        use = [False, False, False]
        for player in order:
            previous = corners[(use[0], use[1], use[2])]
            use[player] = True
            parts[player] += corners[(use[0], use[1], use[2])] - previous
    parts /= len(orders)
    return float(parts[0]), float(parts[1]), float(parts[2])


def find_previous(directory: Path, as_of: str) -> Path | None:
    """The latest ``assessment-<as_of>.json`` in ``directory`` earlier than ``as_of`` that
    belongs to a complete round (listed in a manifest that matches its files)."""
    from riskreport.files import folder

    for earlier in reversed(folder.rounds(directory)):
        # Labels of one frequency sort in time order; a round of the other frequency
        # ("2024-Q3" beside "2024-10") is not an earlier round of this one.
        if earlier >= as_of or ("Q" in earlier) != ("Q" in as_of):
            continue
        name = f"assessment-{earlier}.json"
        entries = folder.verified(directory, earlier)
        if entries is not None and name in entries:
            return directory / name
        if entries is None:
            log.warning(
                "the round %s in %s is incomplete or altered; not compared", earlier, directory
            )
    unlisted = [
        p.name
        for p in directory.glob("assessment-*.json")
        if p.stem.removeprefix("assessment-") < as_of and ("Q" in p.stem) == ("Q" in as_of)
    ]
    if unlisted:
        log.warning(
            "%s: no complete round's manifest lists %s (written by an older version, or "
            "altered); not compared; name it with --previous to compare with it",
            directory,
            ", ".join(sorted(unlisted)),
        )
    return None


def load(path: Path) -> dict[str, Any]:
    """Read a previous assessment JSON; a broken file is an input error, not a crash (one
    beyond the JSON reader's size or nesting limit included: :mod:`riskreport.files.jsonfile`)."""
    try:
        with path.open("rb") as handle:  # the size is checked before the file is read whole
            content = handle.read(jsonfile.MAX_BYTES + 1)
    except OSError as exc:
        raise InputError(
            f"cannot read the previous brief's assessment ({exc})", file=path
        ) from None
    return parse(content, path)


def parse(content: bytes, path: Path) -> dict[str, Any]:
    """:func:`load` of a file's ``content``: how ``batch`` hands a round's assessment JSON to
    the next round in memory, read exactly as its file would be (``path`` names it in
    messages)."""
    try:
        data = jsonfile.parse(content)
        data["as_of"], data["horizons"]
    except (ValueError, KeyError, TypeError) as exc:
        raise InputError(
            f"cannot read the previous brief's assessment ({exc})", file=path
        ) from None
    if not isinstance(data["as_of"], str) or not isinstance(data["horizons"], list):
        raise InputError("expected 'as_of' text and a 'horizons' list", file=path)
    for i, row in enumerate(data["horizons"], start=1):
        _check_row(path, i, row)
    return data


def _check_row(path: Path, i: int, row: object) -> None:
    """Refuse a horizon row whose numbers could not come from a brief (an edited file):
    else the change since it would be printed from them silently, or crash."""

    def bad(column: str, expected: str) -> InputError:
        return InputError(f"expected {expected}", file=path, row=i, column=f"horizons.{column}")

    if not isinstance(row, dict):
        raise bad("", "an object per horizon")
    if not isinstance(row.get("period"), str):
        raise bad("period", "a period label")
    for key in ("centre", "p_inside"):
        value = row.get(key)
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise bad(key, "a number")
        if not np.isfinite(value) or (key == "p_inside" and not 0 <= value <= 1):
            raise bad(key, "a finite number" + (" from 0 to 1" if key == "p_inside" else ""))
    band = row.get("band")
    if not (
        isinstance(band, list)
        and len(band) == 2
        and all(isinstance(v, int | float) and not isinstance(v, bool) for v in band)
        and np.all(np.isfinite(band))
        and band[0] < band[1]
    ):
        raise bad("band", "[lower, upper], finite numbers with lower < upper")
    try:
        shape = side(row)
    except (KeyError, TypeError, ValueError, AttributeError):
        raise bad("percentiles", f"{len(PERCENTILES)} percentiles or a quantiles object") from None
    if (row.get("percentiles") and len(shape.offsets) != len(PERCENTILES)) or len(
        shape.offsets
    ) < 2:
        raise bad("percentiles", f"{len(PERCENTILES)} percentiles or at least two quantiles")
    ok = np.all(np.isfinite(shape.offsets)) and np.all(np.diff(shape.offsets) >= 0)
    if not ok or not np.all((shape.levels > 0) & (shape.levels < 1)):
        raise bad("percentiles", "finite quantiles, non-decreasing, at levels inside (0, 1)")


class Reported(Protocol):
    """What :func:`side_of` reads of a reported period (an assessment's ``HorizonResult``,
    which lives a floor above and is not imported here)."""

    @property
    def centre(self) -> float: ...
    @property
    def band(self) -> tuple[float, float]: ...
    @property
    def percentiles(self) -> tuple[float, ...]: ...
    @property
    def p_inside(self) -> float: ...


def side_of(r: Reported) -> Side:
    """This brief's view of one reported period, from its typed result (the same numbers as
    :func:`side` of its JSON row, before the JSON's rounding)."""
    levels = np.array(PERCENTILES, dtype=float) / 100
    return Side(
        r.centre, r.band, levels, np.array(r.percentiles, dtype=float) - r.centre, r.p_inside
    )


def compare(previous: dict[str, Any], current: Sequence[tuple[str, Side]]) -> ChangeRecord:
    """The ``change`` record: by target period present in both briefs.

    ``previous`` is the earlier assessment JSON (read by :func:`load`); ``current`` holds
    (period, side) pairs of the later brief, from :func:`side_of` or :func:`side`.
    """
    before = {row["period"]: row for row in previous["horizons"]}
    rows = []
    for period, now in current:
        old = before.get(period)
        if old is None:
            continue
        centre, spread, band = decompose(side(old), now)
        rows.append(
            ChangeHorizon(
                period=period,
                p_inside_before=float(old["p_inside"]),
                p_inside_now=now.p_inside,
                due_to_centre=centre,
                due_to_spread=spread,
                due_to_band=band,
                centre_before=float(old["centre"]),
                centre_now=now.centre,
            )
        )
    return ChangeRecord(str(previous["as_of"]), tuple(rows))
