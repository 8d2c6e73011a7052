"""From an assessment to the brief's context: every number already rounded and phrased.

Each section of the brief phrases its own numbers, headings and captions in
:mod:`riskreport.report.sections` and returns its own frozen context; this module only
gathers them into the one object the template prints (``c.outlook.paths.rows`` etc.).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from riskreport.assessment import Assessment
from riskreport.report.sections import (
    annex,
    appendix,
    calibration,
    howsure,
    judgement,
    method,
    outlook,
    summary,
    track_record,
)
from riskreport.report.sections.common import ChartBlock

__all__ = ["BriefContext", "ChartBlock", "build"]

FOOTER = "Model estimates; not a substitute for the committee's judgement."


@dataclass(frozen=True)
class BriefContext:
    """Everything the template prints: the document's own lines, then one field per section."""

    title: str
    institution: str
    as_of: str
    language: str
    run_id: str
    description: str
    as_of_label: str
    footer: str
    annex_title: str
    annex_footer: str
    summary: summary.SummaryContext
    outlook: outlook.OutlookContext
    judgement: judgement.JudgementContext
    howsure: howsure.HowSureContext
    annex: annex.AnnexContext
    track_record: track_record.TrackRecordContext
    calibration: calibration.CalibrationContext
    method: method.MethodContext
    appendix: appendix.AppendixContext


def build(a: Assessment, charts: Mapping[str, ChartBlock], run_id: str) -> BriefContext:
    """Phrase every number of the assessment for the template (``charts``: the drawn charts
    by name; a section whose chart is missing gets None for it)."""
    return BriefContext(
        title=a.title,
        institution=a.institution,
        as_of=a.as_of,
        language="en",
        run_id=run_id,
        description=(
            f"Probabilities of inflation below, inside and above the target band, as of {a.as_of}"
        ),
        as_of_label=f"as of {a.as_of}",
        # The run id means nothing to a board member: the staff annex carries it.
        footer=FOOTER,
        annex_title=f"{a.title}: staff annex",
        annex_footer=f"Run {run_id}. {FOOTER}",
        summary=summary.context(a),
        outlook=outlook.context(a, charts),
        judgement=judgement.context(a),
        howsure=howsure.context(a),
        annex=annex.context(a, charts),
        track_record=track_record.context(a, charts),
        calibration=calibration.context(a, charts),
        method=method.context(a),
        appendix=appendix.context(a),
    )
