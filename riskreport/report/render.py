"""HTML and PDF of the brief: jinja2 (autoescape, StrictUndefined) and weasyprint."""

from __future__ import annotations

import base64
import datetime as dt
import logging
import os
from collections.abc import Mapping
from importlib import resources
from pathlib import Path

import jinja2
import markupsafe

from riskreport.assessment import Assessment
from riskreport.reading import periods
from riskreport.report import charts as charts_module
from riskreport.report import charts_annex
from riskreport.report import context as context_module
from riskreport.report.sections import annex, calibration, outlook, summary, track_record
from riskreport.report.sections.common import ChartBlock

TEMPLATE = "brief.html"
STYLESHEET = "brief.css"


def _templates_dir() -> Path:
    return Path(str(resources.files("riskreport.report_templates")))


def _environment() -> jinja2.Environment:
    # Autoescape everything (not by file extension) and fail on any undefined name.
    return jinja2.Environment(
        loader=jinja2.FileSystemLoader(_templates_dir()),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=False,
    )


def _uri(svg: str) -> str:
    return "data:image/svg+xml;base64," + base64.b64encode(svg.encode("utf-8")).decode("ascii")


Drawn = tuple[charts_module.Chart, str, str]  # a chart, its alt text and its caption


def _board_charts(a: Assessment) -> list[Drawn]:
    """The board brief's charts: the outlook, the probabilities by horizon, the change."""
    made = [
        (charts_module.outlook(a), outlook.outlook_alt(a), outlook.outlook_caption(a)),
        (
            charts_module.band_probabilities(a),
            outlook.probabilities_alt(a),
            outlook.PROBABILITIES_CAPTION,
        ),
    ]
    if a.change and a.change.horizons:
        made.append(
            (charts_module.change_parts(a), summary.change_alt(a), summary.change_caption(a))
        )
    return made


def _annex_charts(a: Assessment) -> list[Drawn]:
    """The staff annex's charts: densities, rounds, weights, PIT and reliability."""
    made = [
        (
            charts_module.density(a, curve),
            outlook.density_alt(a, curve),
            outlook.density_caption(a, curve),
        )
        for curve in a.density
    ]
    if outlook.rounds_shown(a):
        made.append((charts_module.round_history(a), outlook.round_alt(a), outlook.ROUND_CAPTION))
    if a.combination.method not in ("equal", "given"):
        made.append(
            (charts_module.weights(a), track_record.weights_alt(a), track_record.weights_caption(a))
        )
    if a.model_forecasts:
        made.append((charts_annex.model_paths(a), annex.models_alt(a), annex.MODELS_CAPTION))
    if a.past_errors:
        made.append((charts_annex.past_errors(a), annex.errors_alt(a), annex.ERRORS_CAPTION))
    if a.calibration.pit:
        made.append(
            (charts_annex.pit_histograms(a), calibration.pit_alt(a), calibration.PIT_CAPTION)
        )
    if a.calibration.brier.reliability:
        made.append(
            (
                charts_annex.reliability(a),
                calibration.reliability_alt(a),
                calibration.RELIABILITY_CAPTION,
            )
        )
    return made


Blocks = tuple[dict[str, ChartBlock], dict[str, str]]  # blocks and SVG text, by chart name


def chart_blocks(a: Assessment, part: str = "all") -> Blocks:
    """The charts of ``part`` ("brief", "annex" or "all") as blocks for the template, and
    their SVG text by name.

    Each section owns its charts' captions and alt texts; this only puts them together.
    """
    made = (_board_charts(a) if part != "annex" else []) + (
        _annex_charts(a) if part != "brief" else []
    )
    blocks = {
        chart.name: ChartBlock(
            chart.name, _uri(chart.svg), chart.width_mm, chart.height_mm, alt, caption
        )
        for chart, alt, caption in made
    }
    return blocks, {chart.name: chart.svg for chart, _, _ in made}


PARTS = ("all", "brief", "annex")  # the HTML page holds both; each PDF one of them


def page(a: Assessment, run_id: str, part: str, blocks: Mapping[str, ChartBlock]) -> str:
    """One HTML page of ``part``: "all" (the self-contained page with brief and annex),
    "brief" or "annex" (the sources of the two PDFs), with the charts drawn for it."""
    if part not in PARTS:
        raise ValueError(f"part: expected one of {PARTS}, got {part!r}")
    context = context_module.build(a, blocks, run_id)
    # The stylesheet is the package's own file, not user text: mark it safe so quotes survive.
    css = markupsafe.Markup((_templates_dir() / STYLESHEET).read_text(encoding="utf-8"))
    created = created_date(a).isoformat()
    template = _environment().get_template(TEMPLATE)
    return template.render(c=context, css=css, created=created, part=part)


def html(a: Assessment, run_id: str) -> tuple[str, dict[str, str]]:
    """The self-contained HTML page (brief and annex, charts inline) and the charts' SVG
    text by name."""
    blocks, svgs = chart_blocks(a)
    return page(a, run_id, "all", blocks), svgs


class WeasyprintWarnings(logging.Handler):
    """Counts warnings from weasyprint during a render."""

    def __init__(self) -> None:
        super().__init__(level=logging.WARNING)
        self.messages: list[str] = []

    def emit(self, record: logging.LogRecord) -> None:
        self.messages.append(record.getMessage())


def created_date(a: Assessment) -> dt.date:
    """The document date: the first day of the as_of period (never the clock)."""
    parsed = periods.parse(a.as_of)
    assert parsed is not None
    start = periods.to_period(parsed.ordinal, parsed.frequency).start_time
    return dt.date(start.year, start.month, start.day)


def pdf(text: str, created: dt.date, *, name: str = "brief") -> tuple[bytes, list[str]]:
    """The tagged PDF (PDF/UA-1) of an HTML page, and weasyprint's warnings (``name``, the
    document's kind, "brief" or "annex", makes its fixed PDF identifier).

    Font subsetting stamps the embedded fonts with a time; SOURCE_DATE_EPOCH pins it to the
    document date so that identical inputs give a byte-identical PDF.
    """
    import weasyprint
    from weasyprint.urls import FatalURLFetchingError, URLFetcher

    class InlineOnly(URLFetcher):
        """Allow only inline ``data:`` URLs: a brief never reaches outside itself."""

        def fetch(self, url: str, headers: object = None) -> object:
            if not url.startswith("data:"):
                raise FatalURLFetchingError(f"the brief refers to an outside resource: {url[:80]}")
            return super().fetch(url, headers)

    logger = logging.getLogger("weasyprint")
    counter = WeasyprintWarnings()
    logger.addHandler(counter)
    previous = os.environ.get("SOURCE_DATE_EPOCH")
    epoch = dt.datetime(created.year, created.month, created.day, tzinfo=dt.UTC).timestamp()
    os.environ["SOURCE_DATE_EPOCH"] = str(int(epoch))
    try:
        document = weasyprint.HTML(
            string=text, base_url=None, url_fetcher=InlineOnly(allowed_protocols={"data"})
        )
        data = document.write_pdf(
            pdf_variant="pdf/ua-1", pdf_identifier=f"riskreport-{name}".encode("ascii")
        )
    finally:
        logger.removeHandler(counter)
        if previous is None:
            os.environ.pop("SOURCE_DATE_EPOCH", None)
        else:
            os.environ["SOURCE_DATE_EPOCH"] = previous
    assert data is not None
    return data, counter.messages
