"""Verbal terms never sit on the other side of 50% from their number.

Scales: IPCC AR5 (Mastrandrea et al. 2010, Guidance Note for Lead Authors of the IPCC Fifth
Assessment Report on Consistent Treatment of Uncertainties, Table 1: "about as likely as not"
33-66%, "more likely than not" >50-100%), ICD 203 (ODNI 2015: "roughly even chance"
45-55%) and EFSA (2018, Guidance on Uncertainty Analysis: "about as likely as not" 33-66%).
A term's side is read from the published range.
"""

from __future__ import annotations

from types import SimpleNamespace

import pytest

from riskreport.report import verbal
from riskreport.report.sections import common

# The published middle ranges, typed from the sources above: each straddles 50%.
PUBLISHED_MIDDLE = {
    "ipcc-ar5": ("about as likely as not", 0.33, 0.66),
    "icd-203": ("roughly even chance", 0.45, 0.55),
    "efsa-2018": ("about as likely as not", 0.33, 0.66),
}


@pytest.mark.parametrize("key", sorted(verbal.SCALES))
def test_every_whole_percent_gets_a_word_on_its_side(key: str) -> None:
    scale = verbal.SCALES[key]
    for whole in range(101):
        word = verbal.sided_term(whole / 100, scale)
        expected = 0 if whole == 50 else 1 if whole > 50 else -1
        assert verbal.side(word, scale) == expected, (key, whole, word)


@pytest.mark.parametrize("key", sorted(verbal.SCALES))
def test_the_middle_term_is_kept_only_at_fifty(key: str) -> None:
    scale = verbal.SCALES[key]
    middle, low, high = PUBLISHED_MIDDLE[key]
    assert any(t.word == middle and t.low == low and t.high == high for t in scale.terms)
    assert verbal.sided_term(0.5, scale) == middle
    # The plain term would be the middle one here: the trap this guards against.
    assert verbal.term(0.47, scale) == middle
    assert verbal.sided_term(0.47, scale) == verbal.LESS_LIKELY
    assert verbal.sided_term(0.53, scale) == verbal.MORE_LIKELY


class _Stub:
    def __init__(self) -> None:
        self.uncertainty = SimpleNamespace(verbal_scale="ipcc-ar5")


def test_the_printed_split_names_the_likelier_side() -> None:
    stub: object = _Stub()
    text = common.inside_split(stub, ("24%", "41%", "35%"), "the band")  # type: ignore[arg-type]
    assert text == (
        "less likely than not to be inside the band: 41% inside, 59% outside (35% above, 24% below)"
    )
    text = common.inside_split(stub, ("<1%", ">99%", "<1%"), "the band")  # type: ignore[arg-type]
    assert text.startswith("virtually certain to be inside the band: >99% inside, <1% outside")
