"""The brief's template only loops and prints: every word of the brief comes from the
section modules (riskreport/report/sections/), none is written in the template."""

from __future__ import annotations

import re

from riskreport.report import render


def _template() -> str:
    return (render._templates_dir() / render.TEMPLATE).read_text("utf-8")


def test_template_holds_no_wording() -> None:
    text = _template()
    text = re.sub(r"\{[{%#].*?[}%#]\}", " ", text, flags=re.S)  # jinja expressions and tags
    text = re.sub(r"<style>.*?</style>|<!DOCTYPE[^>]*>|<[^>]*>", " ", text, flags=re.S)
    text = re.sub(r"&[a-z]+;", " ", text)  # entities such as &middot;
    words = re.findall(r"[A-Za-z]{2,}", text)
    assert words == [], f"words written in the template: {words[:10]}"


def test_template_reads_one_context_per_section() -> None:
    # Every name the template reads from the context is a document field or a section.
    names = set(re.findall(r"\bc\.([a-z_]+)", _template()))
    sections = {"summary", "outlook", "judgement", "track_record", "calibration", "method"}
    sections |= {"appendix", "howsure", "annex"}
    document = {"language", "title", "as_of", "institution", "description", "as_of_label", "footer"}
    document |= {"annex_title", "annex_footer"}
    assert names <= sections | document, names - sections - document
