"""HTML and PDF of the brief: jinja2 (autoescape, StrictUndefined) and weasyprint."""

from __future__ import annotations

import base64
import datetime as dt
import logging
import os
from importlib import resources
from pathlib import Path

import jinja2
import markupsafe

from riskreport import periods
from riskreport.assessment import Assessment
from riskreport.report import charts as charts_module
from riskreport.report import context as context_module
from riskreport.report import formatting as fmt

TEMPLATE = "brief.html"
STYLESHEET = "brief.css"


def _templates_dir() -> Path:
    return Path(str(resources.files("report_templates")))


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


def _alt_outlook(a: Assessment) -> str:
    first, last, policy = a.horizons[0], a.horizons[-1], a.policy
    return (
        f"Line chart of inflation outcomes up to {a.history[-1].period if a.history else a.as_of} "
        f"and the forecast from {first.period} to {last.period}, over the target band "
        f"{context_module.band_label(policy.band)}. The centre path runs from "
        f"{fmt.number(first.centre)}% to {fmt.number(last.centre)}%; at the policy horizon "
        f"({policy.period}) the 90% band spans {fmt.number(policy.quantiles['0.05'])}% to "
        f"{fmt.number(policy.quantiles['0.95'])}%. The numbers are in the appendix table."
    )


def _alt_probabilities(a: Assessment) -> str:
    first, policy = a.horizons[0], a.policy
    return (
        f"Line chart of the probability of inflation below, inside and above the band by "
        f"horizon. Inside falls from {fmt.single_percent(first.p_inside)} at h = 0 to "
        f"{fmt.single_percent(policy.p_inside)} at the policy horizon (h = {policy.h}); above "
        f"is {fmt.single_percent(policy.p_above)} and below {fmt.single_percent(policy.p_below)} "
        "there. The numbers are in the appendix table."
    )


def _alt_change(a: Assessment) -> str:
    assert a.change is not None
    parts = [
        f"{r['period']}: {fmt.points(r['p_inside_now'] - r['p_inside_before'])} "
        f"(centre {fmt.points(r['due_to_centre'])}, spread {fmt.points(r['due_to_spread'])}, band {fmt.points(r['due_to_band'])})"
        for r in a.change["horizons"]
    ]
    return (
        f"Bar chart of the change in the probability of being inside since {a.change['previous_as_of']}: "
        + "; ".join(parts)
        + "."
    )


def _alt_weights(a: Assessment) -> str:
    by_model: dict[str, list[float]] = {}
    for w in a.combination["weights"]:
        by_model.setdefault(w["model"], []).append(w["weight"])
    parts = [
        f"{m} from {fmt.number(min(ws), 2)} to {fmt.number(max(ws), 2)}"
        for m, ws in by_model.items()
    ]
    return (
        "Stacked bar chart of the combination weights by horizon: "
        + "; ".join(parts)
        + ". The weights table is beside it."
    )


def _alt_pit(a: Assessment) -> str:
    parts = []
    for g in a.calibration["pit"]:
        counts = g["counts"]
        n = sum(counts)
        parts.append(
            f"h {g['h_from']} to {g['h_to']}: {fmt.single_percent(counts[0] / n)} in the lowest tenth and "
            f"{fmt.single_percent(counts[-1] / n)} in the highest (10% each if calibrated)"
        )
    return (
        "Histograms of the probability integral transforms of past outcomes. "
        + "; ".join(parts)
        + "."
    )


def _alt_reliability(a: Assessment) -> str:
    rows = a.calibration["brier"]["reliability"]
    parts = [
        f"said {fmt.single_percent(r['forecast_mean'])}, happened {fmt.single_percent(r['observed_frequency'])} ({r['n']} rounds)"
        for r in rows
    ]
    return "Reliability of the probability of being inside the band: " + "; ".join(parts) + "."


def chart_blocks(a: Assessment) -> tuple[dict[str, context_module.ChartBlock], dict[str, str]]:
    """The charts as blocks for the template, and their SVG text by name."""
    made = [
        (
            charts_module.outlook(a),
            _alt_outlook(a),
            "Outlook: outcomes, the target band (hatched), the centre path (dotted) and the "
            "50/80/90% probability bands, after staff judgement.",
        ),
        (
            charts_module.band_probabilities(a),
            _alt_probabilities(a),
            "Probability of inflation below, inside and above the band by horizon; shading is "
            "the 90% bootstrap interval for inside.",
        ),
    ]
    from riskreport.report import density_chart

    for curve in a.density:
        made.append(
            (
                density_chart.density(a, curve),
                density_chart.alt_text(a, curve),
                density_chart.caption(a, curve),
            )
        )
    from riskreport.report import round_history

    if round_history.shown(a):
        made.append((round_history.chart(a), round_history.alt_text(a), round_history.CAPTION))
    if a.change and a.change["horizons"]:
        made.append(
            (
                charts_module.change_parts(a),
                _alt_change(a),
                f"Change in the probability of being inside since {a.change['previous_as_of']}, "
                "by target period, split into centre, spread and shape, and band.",
            )
        )
    if a.combination["method"] not in ("equal", "given"):
        made.append(
            (
                charts_module.weights(a),
                _alt_weights(a),
                f"Combination weights of the current round by horizon ({a.combination['method']}).",
            )
        )
    calibration = a.calibration
    if calibration["pit"]:
        made.append(
            (
                charts_module.pit_histograms(a),
                _alt_pit(a),
                "PIT histograms of past rounds by horizon group (replay of the model-based method). "
                "Bars above the dashed line mark outcomes that fell there more often than the "
                "distributions said.",
            )
        )
    if calibration["brier"]["reliability"]:
        made.append(
            (
                charts_module.reliability(a),
                _alt_reliability(a),
                "Said versus happened: the probability of being inside the band, against how "
                "often it was (labels: rounds).",
            )
        )
    blocks = {
        chart.name: context_module.ChartBlock(
            chart.name, _uri(chart.svg), chart.width_mm, chart.height_mm, alt, caption
        )
        for chart, alt, caption in made
    }
    return blocks, {chart.name: chart.svg for chart, _, _ in made}


def html(a: Assessment, run_id: str) -> tuple[str, dict[str, str]]:
    """The self-contained HTML brief (charts inline) and the charts' SVG text by name."""
    blocks, svgs = chart_blocks(a)
    context = context_module.build(a, blocks, run_id)
    # The stylesheet is the package's own file, not user text: mark it safe so quotes survive.
    css = markupsafe.Markup((_templates_dir() / STYLESHEET).read_text(encoding="utf-8"))
    created = created_date(a).isoformat()
    text = _environment().get_template(TEMPLATE).render(c=context, css=css, created=created)
    return text, svgs


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


def pdf(text: str, created: dt.date) -> tuple[bytes, list[str]]:
    """The tagged PDF (PDF/UA-1) of an HTML brief, and weasyprint's warnings.

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
        data = document.write_pdf(pdf_variant="pdf/ua-1", pdf_identifier=b"riskreport-brief")
    finally:
        logger.removeHandler(counter)
        if previous is None:
            os.environ.pop("SOURCE_DATE_EPOCH", None)
        else:
            os.environ["SOURCE_DATE_EPOCH"] = previous
    assert data is not None
    return data, counter.messages
