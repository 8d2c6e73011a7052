"""Charts as PNG files: at their size in the brief (``png``) and at a 16:9 slide size
(``slides``), each with its alt text in the PNG metadata and in a sidecar text file, plus a
tidy quantile table (period, quantile, value) that any plotting tool can redraw.

A slide is 2667 x 1500 pixels at 200 dpi: the 16:9 widescreen slide of 13 1/3 x 7.5 in,
its width rounded to whole pixels (13.335 in). The chart is drawn at half that size and
rendered at twice the resolution, so its 8 pt text reads at 16 pt on the slide; the PNG
then records 200 dpi, so it prints at the full slide size.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Callable
from dataclasses import dataclass

import matplotlib
from matplotlib.figure import Figure
from PIL.PngImagePlugin import PngInfo

from riskreport.assessment import Assessment
from riskreport.report import cells, charts
from riskreport.report.sections import outlook, summary

SLIDE_PIXELS = (2667, 1500)
SLIDE_DPI = 200
SLIDE_INCHES = (SLIDE_PIXELS[0] / SLIDE_DPI, SLIDE_PIXELS[1] / SLIDE_DPI)
BRIEF_DPI = 200
ENLARGE = 2  # slide charts are drawn at 1/ENLARGE of the slide and rendered ENLARGE x finer


@dataclass(frozen=True)
class Picture:
    """One chart as PNG bytes, with the alt text it carries."""

    name: str
    png: bytes
    alt: str


def _png(fig: Figure, *, dpi: float, recorded_dpi: int, title: str, alt: str) -> bytes:
    """PNG bytes with no clock in them, the given recorded resolution and the alt text."""
    info = PngInfo()
    info.add_text("Title", title)
    info.add_itxt("Description", alt)
    buffer = io.BytesIO()
    with matplotlib.rc_context(charts._RC):
        # pil_kwargs: one encoding, with our pHYs resolution and text chunks (and no
        # "Software" chunk, which would carry the matplotlib version)
        fig.savefig(
            buffer,
            format="png",
            dpi=dpi,
            pil_kwargs={"pnginfo": info, "dpi": (recorded_dpi, recorded_dpi), "compress_level": 3},
        )
    return buffer.getvalue()


def _charts(a: Assessment) -> list[tuple[str, Callable[[float, float], Figure], str]]:
    """(name, draw at a size in mm, alt text) of the slide charts."""
    made: list[tuple[str, Callable[[float, float], Figure], str]] = [
        ("outlook", lambda w, h: charts.outlook_figure(a, w, h), outlook.outlook_alt(a)),
        (
            "band-probabilities",
            lambda w, h: charts.band_probabilities_figure(a, w, h),
            outlook.probabilities_alt(a),
        ),
    ]
    if a.change and a.change.horizons:
        # The board brief's third chart: the change since the last brief, by period.
        made.append(
            (
                "change",
                lambda w, h: charts.change_parts_figure(a, w, h),
                summary.change_alt(a),
            )
        )
    for c in a.density:
        made.append(
            (
                f"density-h{c.h}",
                lambda w, h, c=c: charts.density_figure(a, c, w, h),  # type: ignore[misc]
                outlook.density_alt(a, c),
            )
        )
    return made


def slides(a: Assessment) -> tuple[Picture, ...]:
    """The board brief's charts (outlook, probabilities, change) and the density charts at
    slide size (16:9, 200 dpi)."""
    width_mm = SLIDE_INCHES[0] * 25.4 / ENLARGE
    height_mm = SLIDE_INCHES[1] * 25.4 / ENLARGE
    return tuple(
        Picture(
            name,
            _png(
                draw(width_mm, height_mm),
                dpi=SLIDE_DPI * ENLARGE,
                recorded_dpi=SLIDE_DPI,
                title=f"{a.title}, {a.as_of}: {name}",
                alt=alt,
            ),
            alt,
        )
        for name, draw, alt in _charts(a)
    )


BRIEF_SIZES_MM = {
    "outlook": (170.0, 66.0),
    "band-probabilities": (170.0, 46.0),
    "change": (170.0, 48.0),
}


def pictures(a: Assessment) -> tuple[Picture, ...]:
    """The same charts at their size in the brief, at print resolution."""
    return tuple(
        Picture(
            name,
            _png(
                draw(*BRIEF_SIZES_MM.get(name, (84.0, 52.0))),
                dpi=BRIEF_DPI,
                recorded_dpi=BRIEF_DPI,
                title=f"{a.title}, {a.as_of}: {name}",
                alt=alt,
            ),
            alt,
        )
        for name, draw, alt in _charts(a)
    )


def quantile_table(a: Assessment) -> bytes:
    """Tidy CSV, one row per (period, quantile): the fan chart's numbers, after judgement."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["period", "h", "quantile", "value"])
    for r in a.horizons:
        for q, v in r.quantiles.items():
            row = [r.period, r.h, q, f"{v:.12g}"]  # as in the JSON
            writer.writerow([cells.csv_value(c) for c in row])
    return buffer.getvalue().encode("utf-8")
