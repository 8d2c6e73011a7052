"""``riskreport backtest``: the track record and its tests to the terminal, and their tables into the output folder."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from riskreport.commands.build import headline, kept_notes, run_record, sha256


def backtest(
    config: Path, out: Path | None, as_of: str | None, force: bool, horizons: str | None = None
) -> dict[str, Any]:
    from riskreport import pipeline
    from riskreport.files import folder
    from riskreport.reading import config_reader, periods
    from riskreport.report import outputs, tables

    out_dir = out.resolve() if out is not None else None
    run = run_record("backtest", as_of)
    record = run.fields
    try:
        cfg = config_reader.load_config(config, as_of)
        out_dir = out_dir or cfg.output.directory.resolve()
        record["as_of"] = periods.label(cfg.brief.as_of, cfg.brief.frequency)
        record["config_sha256"] = sha256(cfg.path)
        shown = periods.parse_ranges(horizons, largest=cfg.brief.horizons) if horizons else None
        assessment = pipeline.assess_config(cfg)
        record["inputs"] = {i.role: i.sha256 for i in assessment.inputs}
        files = {
            name: content
            for name, content in outputs.files_for(assessment, ["csv"]).items()
            if name.startswith(("tables/accuracy-", "tables/tests-", "tables/weights-"))
        }
        # Under the folder's lock like a build, and recorded in runs.jsonl like any run.
        with run.locked(out_dir):
            written = folder.write_round(
                out_dir, files, as_of=assessment.as_of, force=force, replace=False
            )
            run.succeeded(out_dir, written)
    except BaseException as exc:
        if out_dir is not None and out_dir.is_dir():
            run.failed(out_dir, exc)  # unless recorded under the lock already
        raise
    return {
        "status": "ok",
        "as_of": assessment.as_of,
        "summary": [
            *tables.track_record_text(assessment, shown),
            "",
            *tables.written_text(written.paths, out_dir),
        ],
        "outputs": [
            {"path": str(p), "sha256": h}
            for p, h in zip(written.paths, written.sha256, strict=True)
        ],
        "headline": headline(assessment),
        "warnings": [*assessment.warnings, *kept_notes(written)],
    }
