"""The staff judgement: explicit, labelled shifts, spread scalings and skews.

Each ``[[judgement]]`` entry maps the model-based distribution of every period from
``from`` to ``to`` by a monotone map of the outcome (see
:class:`~riskreport.distributions.Adjusted`):

* ``shift`` (pp) moves the mode, so the whole distribution moves by that amount;
* ``scale`` multiplies every distance from the mode (the spread);
* ``skew`` (pp) adds that much to the mean minus the mode, by a two-piece tilt around the
  mode (:class:`~riskreport.distributions.Tilted`: the side above the mode is stretched by
  (1 + k) and the side below by (1 - k), k solved so that the mean minus the mode grows by
  exactly ``skew`` after scaling). A positive skew tilts the risks upwards; on a normal
  distribution the result is a two-piece normal.

Order within an entry: tilt, then scale, then shift.

Overlapping entries compose in the order written: the second acts on the result of the first.
"""

from __future__ import annotations

from dataclasses import dataclass

from riskreport._typing import Frequency
from riskreport.errors import InputError
from riskreport.laws.distributions import Adjusted, Distribution, Tilted, tilt_for_skew
from riskreport.reading import periods
from riskreport.reading.config import Judgement


@dataclass(frozen=True)
class AppliedJudgement:
    """One judgement entry as applied: its terms, reason and the reported periods it moved."""

    start: str
    end: str
    shift: float
    scale: float
    skew: float
    reason: str
    periods: tuple[str, ...]


def apply_one(dist: Distribution, judgement: Judgement) -> Distribution:
    """Apply one judgement entry to one period's distribution.

    Raises
    ------
    ValueError
        When the skew is too large for the spread (no tilt with |k| <= 0.9 reaches it).
    """
    tilted = dist
    if judgement.skew != 0.0:
        tilted = Tilted(dist, tilt_for_skew(dist, judgement.skew / judgement.scale))
    return Adjusted(tilted, shift=judgement.shift, scale=judgement.scale)


def apply(
    dists: list[Distribution],
    ordinals: list[int],
    judgements: tuple[Judgement, ...],
    *,
    frequency: Frequency,
    config_file: str,
) -> tuple[list[Distribution], list[AppliedJudgement]]:
    """Apply every judgement entry to the reported periods it covers.

    Returns
    -------
    adjusted, applied
        The distributions after judgement, and each entry as applied.

    Raises
    ------
    InputError
        An entry covers no reported period, or its skew is too large for the spread.
    """
    adjusted = list(dists)
    applied: list[AppliedJudgement] = []
    for judgement in judgements:
        covered = [i for i, o in enumerate(ordinals) if judgement.start <= o <= judgement.end]
        if not covered:
            raise InputError(
                f"covers no reported period (the brief reports "
                f"{periods.label(ordinals[0], frequency)} to "
                f"{periods.label(ordinals[-1], frequency)})",
                file=config_file,
                column=f"[{judgement.label}] from",
            )
        for i in covered:
            try:
                adjusted[i] = apply_one(adjusted[i], judgement)
            except ValueError as exc:
                raise InputError(
                    f"{exc} (period {periods.label(ordinals[i], frequency)})",
                    file=config_file,
                    column=f"[{judgement.label}] skew",
                ) from None
        applied.append(
            AppliedJudgement(
                start=periods.label(judgement.start, frequency),
                end=periods.label(judgement.end, frequency),
                shift=judgement.shift,
                scale=judgement.scale,
                skew=judgement.skew,
                reason=judgement.reason,
                periods=tuple(periods.label(ordinals[i], frequency) for i in covered),
            )
        )
    return adjusted, applied


def scenarios(
    baseline: list[Distribution],
    ordinals: list[int],
    entries: tuple[tuple[str, Judgement], ...],
    *,
    frequency: Frequency,
    config_file: str,
) -> list[tuple[str, tuple[str, ...], list[Distribution]]]:
    """Named alternative scenarios, each a further judgement on the baseline (after judgement).

    Entries sharing a name compose in the order written, like judgement entries.
    """
    out = []
    for name in dict.fromkeys(n for n, _ in entries):
        mine = tuple(j for n, j in entries if n == name)
        dists, applied = apply(
            baseline, ordinals, mine, frequency=frequency, config_file=config_file
        )
        out.append((name, tuple(a.reason for a in applied), dists))
    return out
