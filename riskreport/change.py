"""What changed since the previous brief, and why.

For each target period in both briefs, the change in P(inside) is split into the parts due
to the centre moving, the spread and shape changing, and the band changing: the Shapley
split, the average over the six orders of making the three replacements, so the parts add
up to the total change exactly.

A distribution is written as centre + shape: P(inside) = F_S(U - c) - F_S(L - c), with F_S
the distribution of (outcome - centre). Both briefs' shapes are rebuilt from the
percentiles in their JSON (normal-score interpolation), so a part is exactly zero when its
ingredient did not change; the split of the approximated total is then scaled to the
exact total.
"""

from __future__ import annotations

import itertools
import json
import logging
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from scipy import stats

from riskreport.errors import InputError

log = logging.getLogger("riskreport")

PERCENTILES = tuple(range(1, 100))
SAME = 1e-9  # differences below this are the JSON's rounding, not a change  # stored per horizon so a later brief can rebuild the shape


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


def decompose(before: Side, now: Side) -> tuple[float, float, float]:
    """Shapley parts (centre, spread/shape, band) of the change in P(inside).

    The value of a mix takes each ingredient from ``before`` or ``now``; each part is its
    average marginal contribution over the six orders.
    """

    # Ingredients equal up to the JSON's rounding count as unchanged, so their parts are 0.
    if abs(now.centre - before.centre) < SAME:
        now = Side(before.centre, now.band, now.levels, now.offsets, now.p_inside)
    if now.levels.shape == before.levels.shape and np.allclose(
        now.offsets, before.offsets, rtol=0, atol=SAME
    ):
        now = Side(now.centre, now.band, before.levels, before.offsets, now.p_inside)
    if max(abs(now.band[0] - before.band[0]), abs(now.band[1] - before.band[1])) < SAME:
        now = Side(now.centre, before.band, now.levels, now.offsets, now.p_inside)

    def value(use: tuple[bool, bool, bool]) -> float:
        centre = now.centre if use[0] else before.centre
        shape = now if use[1] else before
        band = now.band if use[2] else before.band
        return shape.prob(centre, band)

    parts = np.zeros(3)
    orders = list(itertools.permutations(range(3)))
    for order in orders:
        use = [False, False, False]
        previous = value((False, False, False))
        for player in order:
            use[player] = True
            current = value((use[0], use[1], use[2]))
            parts[player] += current - previous
            previous = current
    parts /= len(orders)
    exact = now.p_inside - before.p_inside
    approx = parts.sum()
    if abs(approx) > 1e-12:
        parts *= exact / approx
    else:
        parts[int(np.argmax(np.abs(parts)))] += exact - approx
    return float(parts[0]), float(parts[1]), float(parts[2])


def find_previous(directory: Path, as_of: str) -> Path | None:
    """The latest ``assessment-<as_of>.json`` in ``directory`` earlier than ``as_of`` that
    belongs to a complete round (listed in a manifest that matches its files)."""
    from riskreport import folder

    for earlier in reversed(folder.rounds(directory)):
        if earlier >= as_of:
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
        if p.stem.removeprefix("assessment-") < as_of
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
    """Read a previous assessment JSON; a broken file is an input error, not a crash."""
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
        data["as_of"], data["horizons"]
    except (OSError, ValueError, KeyError, TypeError) as exc:
        raise InputError(
            f"cannot read the previous brief's assessment ({exc})", file=path
        ) from None
    return data


def compare(previous: dict[str, Any], current_rows: list[dict[str, Any]]) -> dict[str, Any]:
    """The ``change`` record: by target period present in both briefs."""
    before = {row["period"]: row for row in previous["horizons"]}
    rows = []
    for row in current_rows:
        old = before.get(row["period"])
        if old is None:
            continue
        centre, spread, band = decompose(side(old), side(row))
        rows.append(
            {
                "period": row["period"],
                "p_inside_before": float(old["p_inside"]),
                "p_inside_now": float(row["p_inside"]),
                "due_to_centre": centre,
                "due_to_spread": spread,
                "due_to_band": band,
                "centre_before": float(old["centre"]),
                "centre_now": float(row["centre"]),
            }
        )
    return {"previous_as_of": previous["as_of"], "horizons": rows}
