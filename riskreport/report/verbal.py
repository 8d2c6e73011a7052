"""Words for probabilities, from one published verbal scale, always with the number.

Default scale: the IPCC AR5 calibrated likelihood language, core terms (Mastrandrea et al.
2010, Guidance Note for Lead Authors of the IPCC Fifth Assessment Report on Consistent
Treatment of Uncertainties, Table 1). Its ranges are nested, not a partition; the term used
is the narrowest range that contains p. Ties (p exactly 33% or 66%) go to "about as likely
as not", the narrower middle range. Selectable alternatives: ICD 203 and the EFSA scale,
both partitions (a probability on a shared edge takes the term nearer to 50%).
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

ICD_203 = Scale(
    key="icd-203",
    name="US Intelligence Community ICD 203 expressions of likelihood",
    source="Office of the Director of National Intelligence (2015), Intelligence Community Directive 203, Analytic Standards",
    terms=(
        Term("almost no chance", 0.00, 0.05),
        Term("very unlikely", 0.05, 0.20),
        Term("unlikely", 0.20, 0.45),
        Term("roughly even chance", 0.45, 0.55),
        Term("likely", 0.55, 0.80),
        Term("very likely", 0.80, 0.95),
        Term("almost certain", 0.95, 1.00),
    ),
)

EFSA_2018 = Scale(
    key="efsa-2018",
    name="EFSA approximate probability scale",
    source="EFSA Scientific Committee (2018), Guidance on Uncertainty Analysis in Scientific Assessments, EFSA Journal 16(1):5123",
    terms=(
        Term("almost impossible", 0.00, 0.01),
        Term("extremely unlikely", 0.01, 0.05),
        Term("very unlikely", 0.05, 0.10),
        Term("unlikely", 0.10, 0.33),
        Term("about as likely as not", 0.33, 0.66),
        Term("likely", 0.66, 0.90),
        Term("very likely", 0.90, 0.95),
        Term("extremely likely", 0.95, 0.99),
        Term("almost certain", 0.99, 1.00),
    ),
)

SCALES: dict[str, Scale] = {s.key: s for s in (IPCC_AR5, ICD_203, EFSA_2018)}


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


MORE_LIKELY = (
    "more likely than not"  # IPCC AR5 additional term, >50-100% (Mastrandrea et al. 2010, Table 1)
)
LESS_LIKELY = "less likely than not"  # its complement, below 50% (our wording)


def sided_term(p: float, scale: Scale = IPCC_AR5) -> str:
    """The term for ``p``, never on the other side of 50% from ``p``.

    A term whose range straddles 50% ("about as likely as not", "roughly even chance")
    reads as an even chance; for any ``p`` other than exactly 50% it is replaced by
    "more likely than not" or "less likely than not", so the word says which side is more
    likely. Terms wholly above or below 50% are kept.

    Examples
    --------
    >>> sided_term(0.41)
    'less likely than not'
    >>> sided_term(0.72)
    'likely'
    >>> sided_term(0.5)
    'about as likely as not'
    """
    word = term(p, scale)
    chosen = next(t for t in scale.terms if t.word == word)
    if chosen.low < 0.5 < chosen.high and p != 0.5:
        return MORE_LIKELY if p > 0.5 else LESS_LIKELY
    return word


def side(word: str, scale: Scale = IPCC_AR5) -> int:
    """Which side of 50% a term stands for: +1 above, -1 below, 0 straddling.

    Examples
    --------
    >>> side("unlikely"), side("likely"), side("about as likely as not")
    (-1, 1, 0)
    """
    if word == MORE_LIKELY:
        return 1
    if word == LESS_LIKELY:
        return -1
    t = next(t for t in scale.terms if t.word == word)
    return 1 if t.low >= 0.5 else -1 if t.high <= 0.5 else 0
