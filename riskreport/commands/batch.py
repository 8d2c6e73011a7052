"""``riskreport batch``: many briefs (several configs, or one config re-run for every period of ``--months``), each failing alone; configs in parallel workers that die with this process."""

from __future__ import annotations

import argparse
import functools
import sys
import traceback
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from riskreport.commands.build import build
from riskreport.errors import InputError
from riskreport.files.runlog import EXIT_INPUT, EXIT_INTERNAL, EXIT_OK, exit_code, one_line
from riskreport.processes import parallel, progress, workers


def periods_between(text: str) -> list[str]:
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


def months_mismatch(config: Path, months: list[str] | None) -> str | None:
    """Why ``--months`` cannot apply to this config (another frequency), or None. A config
    that cannot be read is left to the rounds, which report it."""
    from riskreport.reading import config_reader, periods

    if not months:
        return None
    try:
        frequency = config_reader.load(config).brief.frequency
    except InputError:
        return None
    first = periods.parse(months[0])
    if first is None or first.frequency == frequency:
        return None
    return (
        f"--months expected {frequency} periods like {periods.EXAMPLE[frequency]} for this "
        f"config, got {months[0]}..{months[-1]}"
    )


def one_config(
    config: Path,
    months: list[str] | None,
    out: Path | None,
    force: bool,
    verbose: bool,
    cache: bool = True,
    *,
    jobs: int = 1,
    in_memory: bool = True,
) -> list[dict[str, Any]]:
    """Every brief of one config, in period order; each failure is recorded, not raised.

    Over several periods each round hands its assessment to the next in memory
    (``in_memory``; false builds each round on its own, reading the previous one's file:
    the files are the same), and with ``jobs`` above 1 a worker renders each round while
    this process assesses the next (:func:`pipelined`).
    """
    mismatch = months_mismatch(config, months)
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
    if months and len(months) > 1 and in_memory:
        return pipelined(config, months, out, force, verbose, cache, jobs)
    results = []
    for as_of in progress.bar(rounds, config.name) if len(rounds) > 1 else rounds:
        try:
            summary = build(config, out, as_of, force, cache=cache)
        except Exception as exc:  # one brief failing must not stop the others
            results.append(failure(config, as_of, exc, verbose))
            continue
        results.append(success(config, as_of, summary))
    return results


def success(config: Path, as_of: str | None, summary: dict[str, Any]) -> dict[str, Any]:
    """The result of one brief that was written (or was up to date)."""
    return {
        "config": str(config),
        "as_of": as_of or summary.get("as_of"),
        "exit_code": EXIT_OK,
        **summary,
    }


def failure(config: Path, as_of: str | None, exc: BaseException, verbose: bool) -> dict[str, Any]:
    """The result of one brief that failed, said on stderr."""
    code = exit_code(exc)
    detail = traceback.format_exc() if verbose and code == EXIT_INTERNAL else one_line(exc)
    summary = {"status": "error", "error": " ".join(detail.split())}
    print(f"riskreport: {config.name} {as_of or ''}: error: {summary['error']}", file=sys.stderr)
    return {"config": str(config), "as_of": as_of, "exit_code": code, **summary}


@dataclass(frozen=True)
class Pending:
    """A round assessed and being rendered (by ``started``, or here when it is None)."""

    index: int
    as_of: str
    current: Any  # riskreport.commands.build.Round
    started: workers.Started | None


def pipelined(
    config: Path,
    months: list[str],
    out: Path | None,
    force: bool,
    verbose: bool,
    cache: bool,
    jobs: int,
) -> list[dict[str, Any]]:
    """One config's rounds in period order, each handed to the next in memory (change,
    attribution and history from the previous assessment's JSON as it would be read from
    its file), one replay cache for all.

    With ``jobs`` above 1, up to ``jobs`` workers render the latest rounds while this
    process assesses the next (an assessment that reuses the replay costs a fraction of a
    render); this process switches each round into the folder under its lock, in order.
    A round that fails fails alone: the rounds after it are assessed again from the folder
    (what they were handed is not there), as builds of their own would be.
    """
    from riskreport.commands import build as build_module

    done: dict[int, dict[str, Any]] = {}
    handed: build_module.HandOver | None = None
    replays: Any = None
    pending: list[Pending] = []
    bar = progress.Steps.start(len(months))
    i = 0

    def settle(keep: int) -> bool:
        """Switch in the oldest rounds until ``keep`` are left; False when one failed and
        the later ones were dropped to be assessed again."""
        nonlocal i, handed
        while len(pending) > keep:
            ok, done[pending[0].index] = finish(pending[0], force, verbose, config)
            pending.pop(0)  # only once finished: a stop meanwhile stops its worker too
            if ok:
                continue
            handed = None  # the next round reads the folder
            if pending:  # assessed from what the failed round handed over: again
                workers.stop([p.started for p in pending if p.started is not None])
                i = pending[0].index
                pending.clear()
                return False
        return True

    try:
        while i < len(months):
            as_of = months[i]
            if pending and handed is None and not settle(0):  # this round reads the folder
                continue
            bar.step(f"{config.name} {as_of}")
            run = build_module.run_record("build", as_of)
            try:
                current = build_module.assess_round(
                    config,
                    out,
                    as_of,
                    run,
                    cache=cache,
                    replays=replays,
                    handed=handed,
                    in_batch=True,
                )
            except Exception as exc:  # one brief failing must not stop the others
                done[i] = failure(config, as_of, exc, verbose)
                handed, i = None, i + 1
                continue
            replays = current.replays
            if current.done is not None:  # an identical re-run: nothing to render
                done[i] = success(config, as_of, current.done)
                handed, i = None, i + 1
                continue
            started = None
            if jobs > 1:
                started = workers.start(
                    functools.partial(render, current.assessment, current.cfg.output.formats)
                )
            pending.append(Pending(i, as_of, current, started))
            handed, i = current.hand_over(), i + 1
            settle(max(jobs - 1, 0))
        settle(0)
    finally:
        workers.stop([p.started for p in pending if p.started is not None])
        bar.close()
    return [done[k] for k in sorted(done)]


def render(assessment: Any, formats: Any) -> dict[str, bytes]:
    """Every file of a round (in a worker: :func:`riskreport.report.outputs.files_for`)."""
    from riskreport.report import outputs

    return outputs.files_for(assessment, formats)


def finish(
    pending: Pending, force: bool, verbose: bool, config: Path
) -> tuple[bool, dict[str, Any]]:
    """Switch a rendered round into its folder: whether it was written, and its result. A
    worker that gave no files leaves the round to be rendered here (so its failure, if
    any, is told as a build of its own would tell it)."""
    from riskreport.commands import build as build_module

    as_of, current, started = pending.as_of, pending.current, pending.started
    try:
        outcome = started.outcome() if started is not None else None
    except BaseException as exc:  # stopped while the worker rendered: said in the record
        if current.out_dir.is_dir():
            current.run.failed(current.out_dir, exc)
        raise
    made = outcome.value if outcome is not None and outcome.ok else None
    formats = current.cfg.output.formats

    def files_of(assessment: Any) -> dict[str, bytes]:
        if made is not None and assessment is current.assessment:
            return made
        return render(assessment, formats)

    try:
        summary = build_module.write(current, files_of, force)
    except Exception as exc:  # one brief failing must not stop the others
        if current.out_dir.is_dir():
            current.run.failed(current.out_dir, exc)  # unless recorded under the lock
        return False, failure(config, as_of, exc, verbose)
    return True, success(config, as_of, summary)


def batch(args: argparse.Namespace) -> dict[str, Any]:
    months = periods_between(args.months) if args.months else None
    configs = list(args.configs)
    results: list[dict[str, Any]] = []
    if args.jobs > 1 and len(configs) > 1:
        # Each config in its own short-lived worker (weasyprint's memory goes with it) that
        # stops with this process, after the round it is switching (riskreport.processes.workers).
        tasks = [
            functools.partial(one_config, c, months, args.out, args.force, args.verbose, args.cache)
            for c in configs
        ]
        for config, outcome in zip(configs, workers.run_each(tasks, args.jobs), strict=True):
            results.extend(outcome.value if outcome.ok else [worker_failed(config, outcome)])
    else:
        for config in configs:
            results.extend(
                one_config(
                    config, months, args.out, args.force, args.verbose, args.cache, jobs=args.jobs
                )
            )
    worst = max(r["exit_code"] for r in results)
    return {
        "status": "ok" if worst == 0 else "error",
        "briefs": results,
        "exit_code": worst,
        "outputs": [o for r in results for o in r.get("outputs", [])],
    }


def worker_failed(config: Path, outcome: Any) -> dict[str, Any]:
    """The result of a config whose worker gave no result (stopped, or killed)."""
    print(f"riskreport: {config.name}: error: {outcome.error}", file=sys.stderr)
    return {
        "config": str(config),
        "as_of": None,
        "exit_code": EXIT_INTERNAL,
        "status": "error",
        "error": outcome.error,
    }
