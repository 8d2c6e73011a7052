"""``riskreport batch``: many briefs (several configs, or one config re-run for every period of ``--months``), each failing alone; configs in parallel workers that die with this process."""

from __future__ import annotations

import argparse
import functools
import sys
import traceback
from pathlib import Path
from typing import Any

from riskreport.commands.build import build
from riskreport.errors import InputError
from riskreport.files.runlog import EXIT_INPUT, EXIT_INTERNAL, EXIT_OK, exit_code, one_line
from riskreport.processes import parallel, progress


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
) -> list[dict[str, Any]]:
    """Every brief of one config, in period order; each failure is recorded, not raised."""
    results = []
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
    for as_of in progress.bar(rounds, config.name) if len(rounds) > 1 else rounds:
        try:
            summary = build(config, out, as_of, force, cache=cache)
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


def batch(args: argparse.Namespace) -> dict[str, Any]:
    months = periods_between(args.months) if args.months else None
    configs = list(args.configs)
    results: list[dict[str, Any]] = []
    if args.jobs > 1 and len(configs) > 1:
        from riskreport.processes import workers

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
                one_config(config, months, args.out, args.force, args.verbose, args.cache)
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
