"""The ``riskreport`` command line.

Exit codes: 0 success; 2 bad input, bad config, refused overwrite, a symbolic link in the
output folder or the folder busy beyond the lock wait; 3 environment error (the file system
refused a write: read-only, full, no permission); 1 internal error.
Logs go to stderr; ``--json`` prints one machine-readable summary on stdout.
"""

from __future__ import annotations

import argparse
import contextlib
import dataclasses
import datetime as dt
import functools
import hashlib
import json
import logging
import os
import sys
import traceback
from collections.abc import Sequence
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING, Any

from riskreport import __version__, parallel, progress, stopping
from riskreport.errors import EnvironmentFailure, InputError
from riskreport.runlog import (
    EXIT_ENVIRONMENT,
    EXIT_INPUT,
    EXIT_INTERNAL,
    EXIT_OK,
    RunRecord,
    exit_code,
    one_line,
)

if TYPE_CHECKING:  # annotations only: `check` runs without loading the pipeline
    from riskreport.assessment import Assessment

log = logging.getLogger("riskreport")

DEMO_PREVIOUS_ROUND = "2026-10"


def _at_least_one(text: str) -> int:
    """A whole number of at least 1 (``--jobs``)."""
    try:
        value = int(text)
    except ValueError:
        value = 0
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a whole number of at least 1, got {text!r}")
    return value


def demo_config() -> Path:
    """The bundled, invented demo scenario's configuration."""
    return Path(str(resources.files("riskreport.example_inputs"))) / "config.toml"


def _cache_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--no-cache",
        dest="cache",
        action="store_false",
        help="neither read nor write the cache in the output folder (.riskreport.cache/)",
    )


def _parser() -> argparse.ArgumentParser:
    common = argparse.ArgumentParser(add_help=False)
    noise = common.add_mutually_exclusive_group()
    noise.add_argument("--quiet", "-q", action="store_true", help="only errors on stderr")
    noise.add_argument("--verbose", "-v", action="store_true", help="more detail on stderr")
    common.add_argument(
        "--json", action="store_true", help="print one machine-readable summary on stdout"
    )
    parser = argparse.ArgumentParser(
        prog="riskreport",
        description="Probabilities for inflation below, inside and above the target band, "
        "and a brief for the board.",
    )
    parser.add_argument("--version", action="version", version=f"riskreport {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    demo = sub.add_parser("demo", parents=[common], help="the invented scenario, end to end")
    demo.add_argument("--out", type=Path, default=Path("riskreport-demo"), help="output folder")
    demo.add_argument("--force", action="store_true", help="replace existing outputs")
    _cache_option(demo)

    build = sub.add_parser("build", parents=[common], help="build the brief of a config")
    build.add_argument("config", type=Path)
    build.add_argument("--out", type=Path, help="output folder (default: [output] directory)")
    build.add_argument("--as-of", dest="as_of", help="override [brief] as_of, e.g. 2026-11")
    build.add_argument("--force", action="store_true", help="replace an existing brief")
    build.add_argument(
        "--previous",
        type=Path,
        help="an earlier assessment JSON to compare with (default: the latest earlier one in the output folder)",
    )
    _cache_option(build)

    backtest = sub.add_parser(
        "backtest", parents=[common], help="accuracy and tests only (tables to stdout and CSV)"
    )
    backtest.add_argument("config", type=Path)
    backtest.add_argument("--out", type=Path, help="output folder (default: [output] directory)")
    backtest.add_argument("--as-of", dest="as_of", help="override [brief] as_of")
    backtest.add_argument("--force", action="store_true", help="replace existing tables")
    backtest.add_argument(
        "--horizons", help="horizons to print, e.g. 0,6,12 or 0-8 (default: every one)"
    )

    batch = sub.add_parser(
        "batch", parents=[common], help="many briefs: several configs, or one re-run over months"
    )
    batch.add_argument("configs", type=Path, nargs="+", metavar="CONFIG")
    batch.add_argument(
        "--months", help="FROM..TO: re-run each config with as_of set to every period in the range"
    )
    batch.add_argument(
        "--jobs",
        type=_at_least_one,
        default=1,
        help="configs built in parallel (periods of one config run in order)",
    )
    batch.add_argument(
        "--out", type=Path, help="output folder (default: each config's [output] directory)"
    )
    batch.add_argument("--force", action="store_true", help="replace existing briefs")
    _cache_option(batch)

    compare = sub.add_parser(
        "compare", parents=[common], help="the change in P(inside) between any two rounds"
    )
    compare.add_argument("old", type=Path, metavar="OLD.json")
    compare.add_argument("new", type=Path, metavar="NEW.json")

    check = sub.add_parser("check", parents=[common], help="validate inputs and config only")
    check.add_argument("config", type=Path)
    check.add_argument("--as-of", dest="as_of", help="override [brief] as_of")
    return parser


def _setup_logging(args: argparse.Namespace) -> None:
    level = logging.ERROR if args.quiet else logging.DEBUG if args.verbose else logging.INFO
    handler = logging.StreamHandler(sys.stderr)
    handler.setFormatter(logging.Formatter("riskreport: %(message)s"))
    log.handlers[:] = [handler]
    log.setLevel(level)
    log.propagate = False
    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    logging.getLogger("fontTools").setLevel(logging.ERROR)


def _sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _headline(assessment: Assessment) -> dict[str, Any]:
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


def _build(
    config: Path,
    out: Path | None,
    as_of: str | None,
    force: bool,
    previous: Path | None = None,
    cache: bool = True,
) -> dict[str, Any]:
    from riskreport import folder, outputs, pipeline
    from riskreport.reading import config as config_module
    from riskreport.reading import periods
    from riskreport.replay import cache as replay_cache
    from riskreport.rounds import change

    out_dir = out.resolve() if out is not None else None
    run = _run_record("build", as_of)
    record = run.fields
    steps = progress.Steps.start(3)
    try:
        steps.step("assessing (replay, fits, simulation)")
        cfg = config_module.load_config(config, as_of)
        if out_dir is None:
            out_dir = cfg.output.directory.resolve()
        record["as_of"] = periods.label(cfg.brief.as_of, cfg.brief.frequency)
        record["config_sha256"] = _sha256(cfg.path)
        # One writer at a time, from reading the previous brief to the run record. A folder
        # that does not exist yet is made only once the inputs are known to be good.
        existed = out_dir.is_dir()
        replays = replay_cache.ReplayCache(out_dir) if cache else None
        key = None
        with run.locked(out_dir) if existed else contextlib.nullcontext():
            if previous is not None:
                folder.check_listed(previous.resolve())
            if cache and existed:
                key = _build_key(cfg, previous or change.find_previous(out_dir, record["as_of"]))
                again = replay_cache.unchanged(out_dir, key, record["as_of"])
                if again is not None:
                    return _rerun(out_dir, run, again)
                replays = replay_cache.ReplayCache.load(out_dir)
            assessment = pipeline.assess_config(
                cfg, previous=previous, search=out_dir, cache=replays
            )
        with run.locked(out_dir):  # a failure here is recorded before the lock is let go
            if not existed and previous is None and folder.rounds(out_dir):
                # Another run made the folder meanwhile: compare with what it wrote.
                assessment = pipeline.assess_config(cfg, search=out_dir, cache=replays)
            log.info("assessed %s: %d horizons", assessment.as_of, len(assessment.horizons))
            record["as_of"] = assessment.as_of
            record["inputs"] = {i.role: i.sha256 for i in assessment.inputs}
            steps.step("rendering (charts, HTML, PDF)")
            files = outputs.files_for(assessment, cfg.output.formats)
            steps.step("writing")
            written = folder.write_round(out_dir, files, as_of=assessment.as_of, force=force)
            listed = [
                {"path": str(p), "sha256": h}
                for p, h in zip(written.paths, written.sha256, strict=True)
            ]
            run.succeeded(out_dir, written)
            if replays is not None:
                replays.save()
                log.debug("replay: %d past origins reused, %d fitted", replays.hits, replays.misses)
                key = key or _build_key(
                    cfg, previous or change.find_previous(out_dir, assessment.as_of)
                )
                replay_cache.remember(
                    out_dir,
                    key,
                    assessment.as_of,
                    {
                        "order": [str(p.relative_to(out_dir)) for p in written.paths],
                        "inputs": record["inputs"],
                        "headline": _headline(assessment),
                        "warnings": list(assessment.warnings),
                    },
                )
    except BaseException as exc:
        if out_dir is not None and out_dir.is_dir():
            run.failed(out_dir, exc)  # unless recorded under the lock already
        raise
    finally:
        steps.close()
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
        "headline": _headline(assessment),
        "warnings": [*assessment.warnings, *_kept_notes(written)],
    }


def _run_record(command: str, as_of: str | None) -> RunRecord:
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


def _kept_notes(written: Any) -> list[str]:
    """The files of the round moved aside rather than replaced, as warnings (the log has
    them too: riskreport.round_files)."""
    return [f"{old} was not as riskreport wrote it: kept as {new}" for old, new in written.kept]


def _build_key(cfg: Any, previous: Path | None) -> str:
    """The digest of everything the build's files are made from (see riskreport.replay.cache)."""
    from riskreport.reading import periods
    from riskreport.replay import cache as replay_cache

    inputs = {"forecasts": cfg.inputs.forecasts, "actuals": cfg.inputs.actuals}
    if cfg.inputs.error_quantiles:
        inputs["error_quantiles"] = cfg.inputs.error_quantiles
    label = periods.label(cfg.brief.as_of, cfg.brief.frequency)
    return replay_cache.build_key(cfg.path, label, inputs, previous, cfg.output.formats)


def _rerun(out_dir: Path, run: RunRecord, again: dict[str, Any]) -> dict[str, Any]:
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


def _check(config: Path, as_of: str | None) -> dict[str, Any]:
    # Validation only: nothing is fitted, so there are no probabilities ("headline": null).
    from riskreport.reading import config as config_module
    from riskreport.reading import screening

    cfg = config_module.load_config(config, as_of)
    found = screening.screen(cfg)
    n = [k for k in found.n_errors if k > 0] or [0]
    lines = [
        f"config {Path(config).name}: valid; as_of {found.as_of} ({found.frequency})",
        f"band {found.lower:g} to {found.upper:g} ({found.basis}); horizons 0 to "
        f"{found.horizons}, policy horizon {found.policy_horizon}",
        f"models in the current round: {', '.join(found.current_models)}"
        + (f"; left out: {', '.join(found.left_out_models)}" if found.left_out_models else ""),
        f"past errors per horizon in the error window: {min(n)} to {max(n)}"
        + (
            f" (the window holds the last {cfg.uncertainty.window})"
            if cfg.uncertainty.window and max(n) == cfg.uncertainty.window
            else ""
        ),
        *(
            f"input {i.role}: {i.path}" + (f" ({i.rows} rows)" if i.rows is not None else "")
            for i in found.inputs
        ),
        *(f"warning: {w}" for w in found.warnings),
        "nothing fitted: probabilities, fit and replay warnings come with build",
    ]
    return {
        "status": "ok",
        "as_of": found.as_of,
        "summary": lines,
        "headline": None,
        "warnings": list(found.warnings),
        "outputs": [],
    }


def _backtest(
    config: Path, out: Path | None, as_of: str | None, force: bool, horizons: str | None = None
) -> dict[str, Any]:
    from riskreport import folder, outputs, pipeline
    from riskreport.reading import config as config_module
    from riskreport.reading import periods
    from riskreport.report import tables

    out_dir = out.resolve() if out is not None else None
    run = _run_record("backtest", as_of)
    record = run.fields
    try:
        cfg = config_module.load_config(config, as_of)
        out_dir = out_dir or cfg.output.directory.resolve()
        record["as_of"] = periods.label(cfg.brief.as_of, cfg.brief.frequency)
        record["config_sha256"] = _sha256(cfg.path)
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
        "headline": _headline(assessment),
        "warnings": [*assessment.warnings, *_kept_notes(written)],
    }


def _compare(old: Path, new: Path) -> dict[str, Any]:
    from riskreport.rounds import compare

    result = compare.compare_files(old, new)
    return {
        "status": "ok",
        "old_as_of": result.old_as_of,
        "new_as_of": result.new_as_of,
        "swapped": result.swapped,
        "horizons": [dataclasses.asdict(r) for r in result.rows],
        "methods_differ": result.methods_differ,
        "old_method": result.old_method,
        "new_method": result.new_method,
        "summary": compare.text(result),
    }


def _periods_between(text: str) -> list[str]:
    """The periods FROM..TO (inclusive), both written like the config's as_of."""
    from riskreport.reading import periods

    if ".." not in text:
        raise InputError(f"--months expected FROM..TO, e.g. 2026-01..2026-11, got {text!r}")
    first, last = (periods.parse(part) for part in text.split("..", 1))
    if (
        first is None
        or last is None
        or first.frequency != last.frequency
        or first.ordinal > last.ordinal
    ):
        raise InputError(
            f"--months expected FROM..TO with FROM <= TO in one frequency, got {text!r}"
        )
    return [periods.label(o, first.frequency) for o in range(first.ordinal, last.ordinal + 1)]


def _months_mismatch(config: Path, months: list[str] | None) -> str | None:
    """Why ``--months`` cannot apply to this config (another frequency), or None. A config
    that cannot be read is left to the rounds, which report it."""
    from riskreport.reading import config as config_module
    from riskreport.reading import periods

    if not months:
        return None
    try:
        frequency = config_module.load(config).brief.frequency
    except InputError:
        return None
    first = periods.parse(months[0])
    if first is None or first.frequency == frequency:
        return None
    return (
        f"--months expected {frequency} periods like {periods.EXAMPLE[frequency]} for this "
        f"config, got {months[0]}..{months[-1]}"
    )


def _one_config(
    config: Path,
    months: list[str] | None,
    out: Path | None,
    force: bool,
    verbose: bool,
    cache: bool = True,
) -> list[dict[str, Any]]:
    """Every brief of one config, in period order; each failure is recorded, not raised."""
    results = []
    mismatch = _months_mismatch(config, months)
    if mismatch is not None:
        # Said once for the config, not once per round (each round's --as-of would fail).
        print(f"riskreport: {config.name}: error: {mismatch}", file=sys.stderr)
        return [
            {
                "config": str(config),
                "as_of": None,
                "exit_code": EXIT_INPUT,
                "status": "error",
                "error": mismatch,
            }
        ]
    rounds: list[str | None] = list(months) if months else [None]
    if len(rounds) > 1 and parallel.workers() > 1:
        # Each round renders its workbook and PNG charts in a forked child; imported here
        # once, the child of every round inherits them instead of importing them again.
        from riskreport.report import slides, workbook  # noqa: F401
    for as_of in progress.bar(rounds, config.name) if len(rounds) > 1 else rounds:
        try:
            summary = _build(config, out, as_of, force, cache=cache)
            code = EXIT_OK
        except Exception as exc:  # one brief failing must not stop the others
            code = exit_code(exc)
            detail = traceback.format_exc() if verbose and code == EXIT_INTERNAL else one_line(exc)
            summary = {"status": "error", "error": " ".join(detail.split())}
        if code != EXIT_OK:
            print(
                f"riskreport: {config.name} {as_of or ''}: error: {summary['error']}",
                file=sys.stderr,
            )
        results.append(
            {
                "config": str(config),
                "as_of": as_of or summary.get("as_of"),
                "exit_code": code,
                **summary,
            }
        )
    return results


def _batch(args: argparse.Namespace) -> dict[str, Any]:
    months = _periods_between(args.months) if args.months else None
    configs = list(args.configs)
    results: list[dict[str, Any]] = []
    if args.jobs > 1 and len(configs) > 1:
        from riskreport import workers

        # Each config in its own short-lived worker (weasyprint's memory goes with it) that
        # stops with this process, after the round it is switching (riskreport.workers).
        tasks = [
            functools.partial(
                _one_config, c, months, args.out, args.force, args.verbose, args.cache
            )
            for c in configs
        ]
        for config, outcome in zip(configs, workers.run_each(tasks, args.jobs), strict=True):
            results.extend(outcome.value if outcome.ok else [_worker_failed(config, outcome)])
    else:
        for config in configs:
            results.extend(
                _one_config(config, months, args.out, args.force, args.verbose, args.cache)
            )
    worst = max(r["exit_code"] for r in results)
    return {
        "status": "ok" if worst == 0 else "error",
        "briefs": results,
        "exit_code": worst,
        "outputs": [o for r in results for o in r.get("outputs", [])],
    }


def _worker_failed(config: Path, outcome: Any) -> dict[str, Any]:
    """The result of a config whose worker gave no result (stopped, or killed)."""
    print(f"riskreport: {config.name}: error: {outcome.error}", file=sys.stderr)
    return {
        "config": str(config),
        "as_of": None,
        "exit_code": EXIT_INTERNAL,
        "status": "error",
        "error": outcome.error,
    }


def _run(args: argparse.Namespace) -> dict[str, Any]:
    if args.command == "batch":
        return _batch(args)
    if args.command == "backtest":
        return _backtest(args.config, args.out, args.as_of, args.force, args.horizons)
    if args.command == "demo":
        # Two rounds, so the demo brief shows what changed since the previous one.
        _build(demo_config(), args.out, DEMO_PREVIOUS_ROUND, args.force, cache=args.cache)
        return _build(demo_config(), args.out, None, args.force, cache=args.cache)
    if args.command == "compare":
        return _compare(args.old, args.new)
    if args.command == "build":
        return _build(args.config, args.out, args.as_of, args.force, args.previous, args.cache)
    return _check(args.config, args.as_of)


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code."""
    os.environ.setdefault("MPLBACKEND", "Agg")
    args = _parser().parse_args(argv)
    _setup_logging(args)
    progress.configure(enabled=not (args.quiet or args.json))
    parallel.configure(enabled=True)  # the second core, for this command only
    try:
        with stopping.handled():  # SIGTERM stops the run as Ctrl-C does (riskreport.stopping)
            return _main(args)
    finally:
        parallel.configure(enabled=False)


def _main(args: argparse.Namespace) -> int:
    try:
        summary = _run(args)
        code = int(summary.pop("exit_code", EXIT_OK))
    except InputError as exc:
        print(f"riskreport: error: {exc.one_line()}", file=sys.stderr)
        summary, code = {"status": "error", "error": exc.one_line()}, EXIT_INPUT
    except (EnvironmentFailure, OSError) as exc:
        print(f"riskreport: environment error: {one_line(exc)}", file=sys.stderr)
        summary, code = {"status": "error", "error": one_line(exc)}, EXIT_ENVIRONMENT
    except KeyboardInterrupt as exc:  # Ctrl-C, or SIGTERM (riskreport.stopping.Stopped)
        # A round switches over as a unit, and a stop waits for a switch under way: every
        # round in the folder is whole.
        print(
            f"riskreport: {one_line(exc)}; every round in the output folder is whole (the "
            "brief being made was written completely or not at all)",
            file=sys.stderr,
        )
        summary, code = {"status": "error", "error": one_line(exc)}, EXIT_INTERNAL
    except Exception as exc:
        detail = traceback.format_exc() if args.verbose else f"{type(exc).__name__}: {exc}"
        print(
            f"riskreport: internal error: {' '.join(detail.split()) if not args.verbose else detail}",
            file=sys.stderr,
        )
        summary, code = {"status": "error", "error": f"{type(exc).__name__}: {exc}"}, EXIT_INTERNAL
    summary["exit_code"] = code
    try:
        if args.json:
            print(json.dumps(summary, ensure_ascii=False))
        elif (
            code == EXIT_OK and args.command in ("check", "backtest", "compare") and not args.quiet
        ):
            print("\n".join(summary["summary"]))
        sys.stdout.flush()
    except BrokenPipeError:
        # The reader went away (e.g. `| head`): not an error of ours. Point stdout at devnull
        # so the interpreter's final flush does not raise again (Python docs, "Note on
        # SIGPIPE" in the signal module).
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
    return code


if __name__ == "__main__":
    sys.exit(main())
