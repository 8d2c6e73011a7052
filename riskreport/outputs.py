"""Writing a brief's files: all or nothing, never replacing a different file silently.

Every file is rendered in memory; :mod:`riskreport.folder` then writes the round under the
folder's lock, through a staging folder and a manifest written last, so a crash or a
concurrent run never leaves a mix of two briefs. An existing output that differs is
replaced only with ``force``; an identical one is left as it is.
"""

from __future__ import annotations

import csv
import hashlib
import io
import logging
from collections.abc import Iterable
from pathlib import Path

from riskreport import folder, parallel
from riskreport._typing import OUTPUT_FORMATS, OutputFormat
from riskreport.assessment import Assessment, HorizonResult, plain
from riskreport.report import cells

log = logging.getLogger("riskreport")

PAGE_FORMATS: frozenset[OutputFormat] = frozenset({"html", "pdf"})


def run_id(assessment_json: str) -> str:
    """A stable identifier of a brief: the first 12 hex digits of its JSON's SHA-256."""
    return hashlib.sha256(assessment_json.encode("utf-8")).hexdigest()[:12]


def _csv(rows: Iterable[dict[str, object]]) -> bytes:
    """CSV bytes; text a spreadsheet would read as a formula (a model named ``=1+2``) is
    neutralised, numbers stay numbers (:mod:`riskreport.report.cells`)."""
    rows = [{k: cells.csv_value(v) for k, v in row.items()} for row in rows]
    buffer = io.StringIO()
    if rows:
        writer = csv.DictWriter(buffer, fieldnames=list(rows[0]), lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)
    return buffer.getvalue().encode("utf-8")


def _rows(items: Iterable[object]) -> list[dict[str, object]]:
    """Result objects as CSV rows, flattened as in the JSON (:func:`plain`)."""
    return [plain(item) for item in items]


def _horizon_rows(rows: Iterable[HorizonResult]) -> list[dict[str, object]]:
    return [
        plain(
            {
                "period": r.period,
                "h": r.h,
                "lower": r.band[0],
                "upper": r.band[1],
                "centre": r.centre,
                "point_forecast": r.point_forecast,
                "p_below": r.p_below,
                "p_inside": r.p_inside,
                "p_above": r.p_above,
                "p_inside_lo": r.p_inside_interval[0],
                "p_inside_hi": r.p_inside_interval[1],
                **{f"q{k}": v for k, v in r.quantiles.items()},
                "distribution": r.distribution,
                "n_errors": r.n_errors,
            }
        )
        for r in rows
    ]


def _digits(value: float) -> float:
    """12 significant digits, as in the JSON."""
    return float(f"{value:.12g}")


def threshold_rows(assessment: Assessment) -> list[dict[str, object]]:
    """One row per threshold and period: the ``thresholds`` table (CSV and workbook)."""
    return [
        {
            "threshold": t.threshold,
            "period": at.period,
            "h": at.h,
            "p_below": _digits(at.p_below),
            "p_above": _digits(at.p_above),
            "p_below_at_least_once": _digits(path.p_below_at_least_once),
            "p_above_at_least_once": _digits(path.p_above_at_least_once),
        }
        for t in assessment.thresholds
        for at, path in zip(t.horizons, t.path, strict=True)
    ]


def files_for(assessment: Assessment, formats: Iterable[OutputFormat]) -> dict[str, bytes]:
    """Every output file of a brief, by path relative to the output directory."""
    chosen = set(formats)
    unknown = chosen - set(OUTPUT_FORMATS)
    if unknown:
        raise ValueError(f"formats: expected items from {OUTPUT_FORMATS}, got {sorted(unknown)}")
    text = assessment.to_json()
    others = chosen - PAGE_FORMATS

    def page() -> dict[str, bytes]:
        return _page_files(chosen, assessment, text)

    def rest() -> dict[str, bytes]:
        return _other_files(others, assessment, text)

    if chosen & PAGE_FORMATS and others:
        # The page (SVG charts, HTML, PDF) here, the rest in a forked child when a second
        # core is free (riskreport.parallel); the files are the same either way. The chart
        # modules both sides use are imported first, so the child inherits them.
        from riskreport.report import charts  # noqa: F401

        made, more = parallel.both(page, rest)
    else:
        made, more = page(), rest()
    return {**more, **made}


def _other_files(chosen: set[OutputFormat], assessment: Assessment, text: str) -> dict[str, bytes]:
    """The JSON, CSV tables, workbook, PNG charts and slides of ``chosen``."""
    as_of = assessment.as_of
    files: dict[str, bytes] = {}
    if "json" in chosen:
        files[f"assessment-{as_of}.json"] = text.encode("utf-8")
    if "csv" in chosen:
        a = assessment
        files[f"tables/horizons-{as_of}.csv"] = _csv(_horizon_rows(a.horizons))
        files[f"tables/model-based-horizons-{as_of}.csv"] = _csv(
            _horizon_rows(a.model_based_horizons)
        )
        files[f"tables/path-{as_of}.csv"] = _csv(_rows(a.path))
        files[f"tables/accuracy-{as_of}.csv"] = _csv(_rows(a.accuracy))
        files[f"tables/tests-{as_of}.csv"] = _csv(
            {**plain(t), "models": " vs ".join(t.models), "notes": "; ".join(t.notes)}
            for t in a.tests
        )
        files[f"tables/weights-{as_of}.csv"] = _csv(_rows(a.combination.weights))
        files[f"tables/annual-{as_of}.csv"] = _csv(
            {**plain(r), "band": "..".join(map(str, plain(r.band)))} for r in a.annual
        )
        calibration = a.calibration
        files[f"tables/coverage-{as_of}.csv"] = _csv(_rows(calibration.coverage))
        files[f"tables/scores-{as_of}.csv"] = _csv(_rows(calibration.scores))
        files[f"tables/brier-{as_of}.csv"] = _csv(_rows(calibration.brier.by_horizon))
        files[f"tables/reliability-{as_of}.csv"] = _csv(
            {**plain(r), "bin": "..".join(map(str, plain(r.bin)))}
            for r in calibration.brier.reliability
        )
        files[f"tables/scenarios-{as_of}.csv"] = _csv(
            {"scenario": sc.name, **plain(row)} for sc in a.scenarios for row in sc.horizons
        )
        if a.thresholds:
            files[f"tables/thresholds-{as_of}.csv"] = _csv(threshold_rows(a))
        if a.change:
            files[f"tables/change-{as_of}.csv"] = _csv(_rows(a.change.horizons))
    if "xlsx" in chosen:
        from riskreport.report import workbook

        files[f"workbook-{as_of}.xlsx"] = workbook.workbook(assessment)
    if chosen & {"png", "slides"}:
        from riskreport.report import slides

        made = [("charts", slides.pictures(assessment))] if "png" in chosen else []
        if "slides" in chosen:
            made.append(("slides", slides.slides(assessment)))
            files[f"slides/quantiles-{as_of}.csv"] = slides.quantile_table(assessment)
        for folder, pictures in made:
            for picture in pictures:
                files[f"{folder}/{picture.name}-{as_of}.png"] = picture.png
                files[f"{folder}/{picture.name}-{as_of}.txt"] = (picture.alt + "\n").encode("utf-8")
    return files


def _page_files(chosen: set[OutputFormat], assessment: Assessment, text: str) -> dict[str, bytes]:
    """The SVG charts, HTML page and PDF of ``chosen`` (none unless html or pdf is in it)."""
    as_of = assessment.as_of
    files: dict[str, bytes] = {}
    if chosen & {"html", "pdf"}:
        from riskreport.report import render as render_module

        page, svgs = render_module.html(assessment, run_id(text))
        for name, svg in svgs.items():
            files[f"charts/{name}-{as_of}.svg"] = svg.encode("utf-8")
        if "html" in chosen:
            files[f"brief-{as_of}.html"] = page.encode("utf-8")
        if "pdf" in chosen:
            files[f"brief-{as_of}.pdf"], notes = render_module.pdf(
                page, render_module.created_date(assessment)
            )
            for note in notes:
                # The missing HarfBuzz subset library is said once, by `make install`
                # (riskreport._system); repeated on every brief it is noise.
                level = logging.DEBUG if "HarfBuzz" in note else logging.WARNING
                log.log(level, "weasyprint: %s", note)
    return files


def write_all(
    out_dir: Path, files: dict[str, bytes], *, as_of: str, force: bool = False
) -> list[Path]:
    """Add files to round ``as_of`` in ``out_dir``, all or nothing (see :mod:`riskreport.folder`).

    Raises
    ------
    OverwriteRefused
        A file exists with other content and ``force`` is false; nothing is written.
    """
    written = folder.write_round(out_dir, files, as_of=as_of, force=force, replace=False)
    return list(written.paths)


def render(
    assessment: Assessment,
    out_dir: str | Path,
    *,
    formats: Iterable[OutputFormat] = OUTPUT_FORMATS,
    force: bool = False,
) -> list[Path]:
    """Write the brief's files (PDF, HTML, JSON, CSV tables, SVG charts).

    Parameters
    ----------
    assessment
        From :func:`riskreport.assess`.
    out_dir
        The output directory (created if needed).
    formats
        Any of ``"pdf"``, ``"html"``, ``"json"``, ``"csv"``, ``"xlsx"``, ``"png"``,
        ``"slides"``.
    force
        Replace existing files for this as_of that differ.

    Returns
    -------
    list of Path
        The files written.
    """
    files = files_for(assessment, formats)
    written = folder.write_round(Path(out_dir), files, as_of=assessment.as_of, force=force)
    return list(written.paths)
