"""``riskreport build`` (and ``demo``): one round assessed, rendered and switched into the output folder under its lock, or recognised as an identical re-run."""

from __future__ import annotations

import contextlib
import datetime as dt
import hashlib
import logging
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from riskreport.files.runlog import RunRecord
from riskreport.processes import progress

if TYPE_CHECKING:  # annotations only: `check` runs without loading the pipeline
    from riskreport.assessment import Assessment

log = logging.getLogger("riskreport")


def sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def headline(assessment: Assessment) -> dict[str, Any]:
    r = assessment.policy
    head = assessment.headline  # the measure of [target] basis (the period, or a year)
    return {
        "period": r.period,
        "h": r.h,
        "basis": head.basis,
        "label": head.label,
        "p_below": head.p_below,
        "p_inside": head.p_inside,
        "p_above": head.p_above,
    }


@dataclass(frozen=True)
class HandOver:
    """What a round hands to the next one of a ``batch`` in memory: the earlier rounds as
    the next one would read them from the folder, latest first, and the latest one's
    assessment JSON (its path and content, for the build's key)."""

    earlier: tuple[Any, ...]  # riskreport.rounds.history.Earlier
    path: Path
    content: bytes


@dataclass
class Round:
    """One round assessed and not yet written, or (``done``) recognised as an identical
    re-run, whose summary is all there is to give."""

    cfg: Any
    out_dir: Path
    run: RunRecord
    existed: bool
    previous: Path | None
    replays: Any
    key: str | None
    assessment: Assessment | None = None
    earlier: tuple[Any, ...] | None = None
    done: dict[str, Any] | None = None
    handed: bool = False  # assessed from the previous round of a batch, in memory

    def hand_over(self) -> HandOver | None:
        """What the next round takes from this one in memory (None when it must read the
        folder, as when this round writes no JSON)."""
        from riskreport.rounds import change, history

        a = self.assessment
        if a is None or self.earlier is None or "json" not in self.cfg.output.formats:
            return None
        path = self.out_dir / f"assessment-{a.as_of}.json"
        content = a.to_json().encode("utf-8")  # byte for byte the file report/outputs writes
        data = change.parse(content, path)
        return HandOver(history.handed_over(data, self.earlier), path, content)


def build(
    config: Path,
    out: Path | None,
    as_of: str | None,
    force: bool,
    previous: Path | None = None,
    cache: bool = True,
) -> dict[str, Any]:
    from riskreport.report import outputs

    out_dir = out.resolve() if out is not None else None
    run = run_record("build", as_of)
    steps = progress.Steps.start(3)
    try:
        steps.step("assessing (replay, fits, simulation)")
        current = assess_round(config, out, as_of, run, previous=previous, cache=cache)
        out_dir = current.out_dir
        if current.done is not None:
            return current.done

        def render(assessment: Assessment) -> dict[str, bytes]:
            steps.step("rendering (charts, HTML, PDF)")
            files = outputs.files_for(assessment, current.cfg.output.formats)
            steps.step("writing")
            return files

        return write(current, render, force)
    except BaseException as exc:
        if out_dir is not None and out_dir.is_dir():
            run.failed(out_dir, exc)  # unless recorded under the lock already
        raise
    finally:
        steps.close()


def assess_round(
    config: Path,
    out: Path | None,
    as_of: str | None,
    run: RunRecord,
    *,
    previous: Path | None = None,
    cache: bool = True,
    replays: Any = None,
    handed: HandOver | None = None,
    in_batch: bool = False,
) -> Round:
    """Read the config and assess its round, or recognise an identical re-run.

    ``replays`` is a replay cache kept across rounds (else the folder's is loaded);
    ``handed`` the previous round of a ``batch``, in memory; ``in_batch`` reads the
    earlier rounds from the folder once and keeps them for the next round.
    """
    from riskreport import pipeline
    from riskreport.files import folder
    from riskreport.reading import config_reader, periods
    from riskreport.replay import cache as replay_cache
    from riskreport.rounds import change, history

    out_dir = out.resolve() if out is not None else None
    try:
        record = run.fields
        cfg = config_reader.load_config(config, as_of)
        out_dir = out.resolve() if out is not None else cfg.output.directory.resolve()
        label = periods.label(cfg.brief.as_of, cfg.brief.frequency)
        record["as_of"] = label
        record["config_sha256"] = sha256(cfg.path)
        # One writer at a time, from reading the previous brief to the run record. A folder
        # that does not exist yet is made only once the inputs are known to be good.
        existed = out_dir.is_dir()
        kept = replays
        if replays is None and cache:
            replays = replay_cache.ReplayCache(out_dir)
        key = None
        earlier = handed.earlier if handed is not None else None
        current = Round(cfg, out_dir, run, existed, previous, replays, key)
        with run.locked(out_dir) if existed else contextlib.nullcontext():
            if previous is not None:
                folder.check_listed(previous.resolve())
            if cache and existed:
                if handed is not None:
                    key = build_key(cfg, handed.path, handed.content)
                else:
                    key = build_key(cfg, previous or change.find_previous(out_dir, label))
                again = replay_cache.unchanged(out_dir, key, label)
                if again is not None:
                    current.done = rerun(out_dir, run, again)
                    return current
                if kept is None:
                    replays = replay_cache.ReplayCache.load(out_dir)
            if in_batch and earlier is None and previous is None:
                earlier = history.read_earlier(out_dir, label)
            if handed is None:
                current.assessment = pipeline.assess_config(
                    cfg, previous=previous, search=out_dir, cache=replays, earlier=earlier
                )
        if handed is not None:  # nothing of the folder is read: no need to hold its lock
            current.assessment = pipeline.assess_config(cfg, cache=replays, earlier=earlier)
        current.replays, current.key, current.earlier = replays, key, earlier
        current.handed = handed is not None
        return current
    except BaseException as exc:
        if out_dir is not None and out_dir.is_dir():
            run.failed(out_dir, exc)  # unless recorded under the lock already
        raise


def write(
    current: Round, render: Callable[[Assessment], dict[str, bytes]], force: bool
) -> dict[str, Any]:
    """Render (``render`` gives the files of an assessment) and switch the round into its
    folder under the lock; record the run and remember the build for identical re-runs."""
    from riskreport import pipeline
    from riskreport.files import folder
    from riskreport.replay import cache as replay_cache
    from riskreport.rounds import change

    cfg, out_dir, run, replays = current.cfg, current.out_dir, current.run, current.replays
    assessment = current.assessment
    assert assessment is not None
    record = run.fields
    previous = current.previous
    with run.locked(out_dir):  # a failure here is recorded before the lock is let go
        if (
            not current.existed
            and previous is None
            and not current.handed
            and folder.rounds(out_dir)
        ):
            # Another run made the folder meanwhile: compare with what it wrote.
            assessment = pipeline.assess_config(cfg, search=out_dir, cache=replays)
        log.info("assessed %s: %d horizons", assessment.as_of, len(assessment.horizons))
        record["as_of"] = assessment.as_of
        record["inputs"] = {i.role: i.sha256 for i in assessment.inputs}
        files = render(assessment)
        written = folder.write_round(out_dir, files, as_of=assessment.as_of, force=force)
        listed = [
            {"path": str(p), "sha256": h}
            for p, h in zip(written.paths, written.sha256, strict=True)
        ]
        run.succeeded(out_dir, written)
        if replays is not None:
            replays.save()
            log.debug("replay: %d past origins reused, %d fitted", replays.hits, replays.misses)
            key = current.key or build_key(
                cfg, previous or change.find_previous(out_dir, assessment.as_of)
            )
            replay_cache.remember(
                out_dir,
                key,
                assessment.as_of,
                {
                    "order": [str(p.relative_to(out_dir)) for p in written.paths],
                    "inputs": record["inputs"],
                    "headline": headline(assessment),
                    "warnings": list(assessment.warnings),
                },
            )
    for p in written.paths:
        log.debug("wrote %s", p)
    for warning in assessment.warnings:
        log.warning("warning: %s", warning)
    pdf = [p for p in written.paths if p.suffix == ".pdf" and p.name.startswith("brief-")]
    from riskreport.report.tables import shown

    log.info("brief written to %s", shown(pdf[0] if pdf else out_dir))
    return {
        "status": "ok",
        "as_of": assessment.as_of,
        "outputs": listed,
        "headline": headline(assessment),
        "warnings": [*assessment.warnings, *kept_notes(written)],
    }


def run_record(command: str, as_of: str | None) -> RunRecord:
    """The run's line in runs.jsonl, before its round and inputs are known."""
    return RunRecord(
        {
            "time": dt.datetime.now(dt.UTC).isoformat(timespec="seconds"),
            "command": command,
            "as_of": as_of,
            "config_sha256": None,
            "inputs": {},
        }
    )


def kept_notes(written: Any) -> list[str]:
    """The files of the round moved aside rather than replaced, as warnings (the log has
    them too: riskreport.files.round_files)."""
    return [f"{old} was not as riskreport wrote it: kept as {new}" for old, new in written.kept]


def build_key(cfg: Any, previous: Path | None, content: bytes | None = None) -> str:
    """The digest of everything the build's files are made from (see riskreport.replay.cache)."""
    from riskreport.reading import periods
    from riskreport.replay import cache as replay_cache

    inputs = {"forecasts": cfg.inputs.forecasts, "actuals": cfg.inputs.actuals}
    if cfg.inputs.error_quantiles:
        inputs["error_quantiles"] = cfg.inputs.error_quantiles
    label = periods.label(cfg.brief.as_of, cfg.brief.frequency)
    return replay_cache.build_key(cfg.path, label, inputs, previous, cfg.output.formats, content)


def rerun(out_dir: Path, run: RunRecord, again: dict[str, Any]) -> dict[str, Any]:
    """An identical re-run: the folder already holds exactly this build's files. Only the
    run record is written (as for any build that changes nothing)."""
    record = run.fields
    files = again["files"]
    order = [n for n in again.get("order", []) if n in files] or sorted(files)
    outputs = [{"path": name, "sha256": files[name]} for name in order]
    run.append(out_dir, {"inputs": again["inputs"], "outputs": outputs})
    log.info("inputs, config and software unchanged: %s is up to date", out_dir)
    for warning in again["warnings"]:
        log.warning("warning: %s", warning)
    return {
        "status": "ok",
        "as_of": record["as_of"],
        "outputs": [{"path": str(out_dir / o["path"]), "sha256": o["sha256"]} for o in outputs],
        "headline": again["headline"],
        "warnings": list(again["warnings"]),
    }
