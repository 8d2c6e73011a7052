"""Words for probabilities, from one published verbal scale, always with the number.

Default scale: the IPCC AR5 calibrated likelihood language, core terms (Mastrandrea et al.
2010, Guidance Note for Lead Authors of the IPCC Fifth Assessment Report on Consistent
Treatment of Uncertainties, Table 1). Its ranges are nested, not a partition; the term used
is the narrowest range that contains p. Ties (p exactly 33% or 66%) go to "about as likely
as not", the narrower middle range.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Term:
    """A likelihood term and its probability range [low, high]."""

    word: str
    low: float
    high: float


@dataclass(frozen=True)
class Scale:
    """A named verbal probability scale."""

    key: str
    name: str
    source: str
    terms: tuple[Term, ...]


IPCC_AR5 = Scale(
    key="ipcc-ar5",
    name="IPCC AR5 calibrated likelihood language",
    source=(
        "Mastrandrea et al. (2010), Guidance Note for Lead Authors of the IPCC Fifth "
        "Assessment Report on Consistent Treatment of Uncertainties"
    ),
    terms=(
        Term("virtually certain", 0.99, 1.00),
        Term("very likely", 0.90, 1.00),
        Term("likely", 0.66, 1.00),
        Term("about as likely as not", 0.33, 0.66),
        Term("unlikely", 0.00, 0.33),
        Term("very unlikely", 0.00, 0.10),
        Term("exceptionally unlikely", 0.00, 0.01),
    ),
)

SCALES: dict[str, Scale] = {IPCC_AR5.key: IPCC_AR5}


def term(p: float, scale: Scale = IPCC_AR5) -> str:
    """The narrowest term of ``scale`` whose range contains ``p``.

    Examples
    --------
    >>> term(0.72)
    'likely'
    >>> term(0.55)
    'about as likely as not'
    """
    if not 0.0 <= p <= 1.0:
        raise ValueError(f"p: expected a probability in [0, 1], got {p!r}")
    containing = [t for t in scale.terms if t.low <= p <= t.high]
    # Narrowest first; among equal widths the middle range wins (the documented tie rule).
    return min(
        containing, key=lambda t: (round(t.high - t.low, 9), t.word != "about as likely as not")
    ).word
