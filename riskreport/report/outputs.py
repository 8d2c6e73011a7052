"""Writing a brief's files: all or nothing, never replacing a different file silently.

Every file is rendered in memory; :mod:`riskreport.files.folder` then writes the round under the
folder's lock, through a staging folder and a manifest written last, so a crash or a
concurrent run never leaves a mix of two briefs. An existing output that differs is
replaced only with ``force``; an identical one is left as it is.
"""

from __future__ import annotations

import csv
import datetime as dt
import hashlib
import io
import logging
from collections.abc import Iterable
from pathlib import Path

from riskreport._typing import OUTPUT_FORMATS, OutputFormat
from riskreport.assessment import ACCURACY_TEST_KEYS, Assessment, HorizonResult
from riskreport.files import folder
from riskreport.files.serialise import plain
from riskreport.processes import parallel
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


def situation_rows(assessment: Assessment) -> list[dict[str, object]]:
    """One row per situation and horizon, the intervals as ``_lo`` / ``_hi`` columns."""
    out = []
    for r in assessment.record_by_situation:
        row = plain(r)
        for key in ("coverage_50_interval", "coverage_90_interval"):
            interval = row.pop(key) or (None, None)
            stem = key.removesuffix("_interval")
            row[f"{stem}_lo"], row[f"{stem}_hi"] = interval
        out.append(row)
    return out


# The files besides the pages that go with the annex (in the forked child); the rest go with
# the brief. The annex has about twice the brief's pages and more charts, so every other
# file rides with the brief (measured on the demo: brief charts and PDF plus the PNG
# charts, slides and workbook take about as long as the annex's charts and PDF).
WITH_ANNEX: frozenset[OutputFormat] = frozenset()


def files_for(assessment: Assessment, formats: Iterable[OutputFormat]) -> dict[str, bytes]:
    """Every output file of a brief, by path relative to the output directory."""
    chosen = set(formats)
    unknown = chosen - set(OUTPUT_FORMATS)
    if unknown:
        raise ValueError(f"formats: expected items from {OUTPUT_FORMATS}, got {sorted(unknown)}")
    text = assessment.to_json()
    others = chosen - PAGE_FORMATS
    if not chosen & PAGE_FORMATS:
        return _other_files(others, assessment, text)
    from riskreport.report import charts  # noqa: F401  (imported once, inherited by the child)
    from riskreport.report import render as render_module

    # The two documents are independent: the brief's charts and PDF here, the annex's in a
    # forked child when a second core is free (riskreport.processes.parallel), each with its share of
    # the other files; then the HTML page, which holds both, from the charts of both. The
    # files are the same either way.
    a, as_of, rid = assessment, assessment.as_of, run_id(text)
    created = render_module.created_date(assessment)

    def brief_side() -> tuple[render_module.Blocks, dict[str, bytes]]:
        drawn = render_module.chart_blocks(a, "brief")
        out = _other_files(others - WITH_ANNEX, a, text)
        if "pdf" in chosen:
            page = render_module.page(a, rid, "brief", drawn[0])
            out[f"brief-{as_of}.pdf"] = _pdf(page, created, "brief")
        return drawn, out

    def annex_side() -> tuple[render_module.Blocks, dict[str, bytes]]:
        drawn = render_module.chart_blocks(a, "annex")
        out = _other_files(others & WITH_ANNEX, a, text)
        if "pdf" in chosen:
            page = render_module.page(a, rid, "annex", drawn[0])
            out[f"annex-{as_of}.pdf"] = _pdf(page, created, "annex")
        return drawn, out

    (brief_blocks, brief_files), (annex_blocks, annex_files) = parallel.both(brief_side, annex_side)
    blocks = {**brief_blocks[0], **annex_blocks[0]}
    svgs = {**brief_blocks[1], **annex_blocks[1]}
    files = {f"charts/{name}-{as_of}.svg": svg.encode("utf-8") for name, svg in svgs.items()}
    if "html" in chosen:
        files[f"brief-{as_of}.html"] = render_module.page(a, rid, "all", blocks).encode("utf-8")
    return {**annex_files, **brief_files, **files}


def _pdf(page: str, created: dt.date, name: str) -> bytes:
    """One PDF (brief or annex) of its HTML page, weasyprint's warnings logged."""
    from riskreport.report import render as render_module

    data, notes = render_module.pdf(page, created, name=name)
    for note in notes:
        # The missing HarfBuzz subset library is said once, by `make install`
        # (riskreport.report.system_check); repeated on every brief it is noise.
        level = logging.DEBUG if "HarfBuzz" in note else logging.WARNING
        log.log(level, "weasyprint: %s", note)
    return data


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
            {
                **plain(t, ACCURACY_TEST_KEYS),
                "models": " vs ".join(t.models),
                "notes": "; ".join(t.notes),
            }
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
        files[f"tables/model-forecasts-{as_of}.csv"] = _csv(_rows(a.model_forecasts))
        files[f"tables/past-errors-{as_of}.csv"] = _csv(_rows(a.past_errors))
        if a.thresholds:
            files[f"tables/thresholds-{as_of}.csv"] = _csv(threshold_rows(a))
        if a.change:
            files[f"tables/change-{as_of}.csv"] = _csv(_rows(a.change.horizons))
        files[f"tables/sensitivity-{as_of}.csv"] = _csv(
            {**plain(r), "band": "..".join(map(str, plain(r.band)))}
            for r in a.sensitivity_to_centre
        )
        files[f"tables/situations-{as_of}.csv"] = _csv(situation_rows(a))
        if a.attribution:
            files[f"tables/attribution-{as_of}.csv"] = _csv(_rows(a.attribution))
        if a.leave_one_out:
            files[f"tables/leave-one-out-{as_of}.csv"] = _csv(_rows(a.leave_one_out))
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


def write_all(
    out_dir: Path, files: dict[str, bytes], *, as_of: str, force: bool = False
) -> list[Path]:
    """Add files to round ``as_of`` in ``out_dir``, all or nothing (see :mod:`riskreport.files.folder`).

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
