"""All rounding and number formatting of the brief, in one tested place.

Templates never round or compute; they print the strings made here.
"""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal

MINUS = "\u2212"  # typographic minus


def round_half_up(value: float, digits: int) -> Decimal:
    """Round half away from zero on the shortest decimal form of ``value``.

    Python's ``round`` rounds half to even on the binary value (2.45 -> 2.4); a brief must
    print what a reader would compute by hand (2.45 -> 2.5).
    """
    quantum = Decimal(1).scaleb(-digits)
    return Decimal(repr(float(value))).quantize(quantum, rounding=ROUND_HALF_UP)


def number(value: float, digits: int = 1, *, signed: bool = False) -> str:
    """A number with a typographic minus and never "-0.0".

    Examples
    --------
    >>> number(-0.04)
    '0.0'
    >>> number(-1.25, 1) == MINUS + "1.3"
    True
    >>> number(0.2, 1, signed=True)
    '+0.2'
    """
    rounded = round_half_up(value, digits)
    if rounded == 0:
        rounded = abs(rounded)
    text = f"{rounded:.{digits}f}"
    if text.startswith("-"):
        return MINUS + text[1:]
    if signed and rounded > 0:
        return "+" + text
    return text


def percentages(probabilities: list[float]) -> list[int]:
    """Whole percentages that add to exactly 100 (largest remainder method).

    Each probability is floored to a whole percent; the points still missing go to the
    largest remainders (ties to the earlier entry).

    Examples
    --------
    >>> percentages([0.333, 0.333, 0.334])
    [33, 33, 34]
    >>> percentages([0.125, 0.7, 0.175])
    [13, 70, 17]
    """
    total = sum(probabilities)
    if not probabilities or not math.isclose(total, 1.0, abs_tol=1e-6):
        raise ValueError(f"probabilities: expected values that add to 1, got {total!r}")
    scaled = [100.0 * p / total for p in probabilities]
    floors = [math.floor(s + 1e-9) for s in scaled]
    missing = 100 - sum(floors)
    order = sorted(range(len(scaled)), key=lambda i: (-(scaled[i] - floors[i]), i))
    for i in order[:missing]:
        floors[i] += 1
    return floors


def percent_text(whole: int) -> str:
    """A whole percentage for print; never 0% or 100%.

    A probability that rounds to 0 or 100 is printed "<1%" or ">99%": these are model
    estimates, and even a simulated or fitted zero is not a certainty.
    """
    if whole <= 0:
        return "<1%"
    if whole >= 100:
        return ">99%"
    return f"{whole}%"


def outcome_texts(p_below: float, p_inside: float, p_above: float) -> tuple[str, str, str]:
    """Below / inside / above as printed: whole percentages adding to 100, never 0 or 100.

    Examples
    --------
    >>> outcome_texts(0.004, 0.7, 0.296)
    ('<1%', '70%', '30%')
    """
    below, inside, above = (percent_text(w) for w in percentages([p_below, p_inside, p_above]))
    return below, inside, above


def single_percent(probability: float) -> str:
    """One probability as a whole percentage (for intervals and path probabilities)."""
    whole = int(round_half_up(100 * probability, 0))
    return percent_text(whole)


def points(value: float) -> str:
    """A change in percentage points, signed: "+3 pp", "-2 pp" (with a typographic minus), "0 pp"."""
    rounded = int(round_half_up(100 * value, 0))
    if rounded == 0:
        return "0 pp"
    return f"+{rounded} pp" if rounded > 0 else f"{MINUS}{abs(rounded)} pp"


def p_value(p: float) -> str:
    """A p-value for print: "p = 0.012", and "p < 0.001" rather than "p = 0.000".

    Examples
    --------
    >>> p_value(0.0004), p_value(0.0123)
    ('p < 0.001', 'p = 0.012')
    """
    if p < 0.0005:
        return "p < 0.001"
    return f"p = {number(p, 3)}"
