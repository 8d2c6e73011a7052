"""IPCC AR5 likelihood terms, narrowest range containing p.

Mastrandrea et al. (2010), Guidance Note for Lead Authors of the IPCC Fifth Assessment
Report on Consistent Treatment of Uncertainties, Table 1 (core terms); the rule that maps
p to a term (the narrowest range containing p, ties at 33% and 66% to the middle term) is
ours, since the guidance's ranges are nested and have "fuzzy" boundaries.
"""

from __future__ import annotations

import pytest

from riskreport.report.verbal import term


@pytest.mark.parametrize(
    ("p", "expected"),
    [
        (0.995, "virtually certain"),
        (0.97, "very likely"),
        (0.92, "very likely"),
        (0.80, "likely"),
        (0.55, "about as likely as not"),
        (0.20, "unlikely"),
        (0.07, "very unlikely"),
        (0.03, "very unlikely"),
        (0.005, "exceptionally unlikely"),
        (0.33, "about as likely as not"),
        (0.66, "about as likely as not"),
    ],
)
def test_ipcc_terms(p: float, expected: str) -> None:
    assert term(p) == expected


def test_out_of_range() -> None:
    with pytest.raises(ValueError, match="probability"):
        term(1.2)


@pytest.mark.parametrize(
    ("p", "expected"),
    # Intelligence Community Directive 203, Analytic Standards (ODNI, 2015), table of
    # likelihood terms: 45-55% roughly even chance, 80-95% very likely, 01-05% almost no
    # chance, 20-45% unlikely.
    [
        (0.50, "roughly even chance"),
        (0.85, "very likely"),
        (0.03, "almost no chance"),
        (0.30, "unlikely"),
    ],
)
def test_icd_203(p: float, expected: str) -> None:
    from riskreport.report.verbal import ICD_203

    assert term(p, ICD_203) == expected


@pytest.mark.parametrize(
    ("p", "expected"),
    # EFSA Scientific Committee (2018), "Guidance on Uncertainty Analysis in Scientific
    # Assessments", EFSA Journal 16(1):5123, approximate probability scale: 95-99% extremely
    # likely, 5-10% very unlikely, 33-66% about as likely as not, 99-100% almost certain.
    [
        (0.97, "extremely likely"),
        (0.07, "very unlikely"),
        (0.50, "about as likely as not"),
        (0.995, "almost certain"),
    ],
)
def test_efsa(p: float, expected: str) -> None:
    from riskreport.report.verbal import EFSA_2018

    assert term(p, EFSA_2018) == expected
