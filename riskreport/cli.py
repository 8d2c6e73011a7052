"""The ``riskreport`` command line.

Exit codes: 0 success; 2 bad input, bad config, refused overwrite, a symbolic link in the
output folder or the folder busy beyond the lock wait; 3 environment error (the file system
refused a write: read-only, full, no permission); 1 internal error.
Logs go to stderr; ``--json`` prints one machine-readable summary on stdout.
"""

from __future__ import annotations

import argparse
import json
import logging
import os
import sys
import traceback
from collections.abc import Sequence
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING, Any

from riskreport import __version__
from riskreport.errors import EnvironmentFailure, InputError
from riskreport.files.runlog import (
    EXIT_ENVIRONMENT,
    EXIT_INPUT,
    EXIT_INTERNAL,
    EXIT_OK,
    one_line,
)
from riskreport.processes import parallel, progress, stopping

if TYPE_CHECKING:  # annotations only: `check` runs without loading the pipeline
    pass

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
        help="configs built in parallel; one config over --months: rounds rendered in parallel "
        "while the next is assessed (written in order)",
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


def _run(args: argparse.Namespace) -> dict[str, Any]:
    if args.command == "batch":
        from riskreport.commands.batch import batch

        return batch(args)
    if args.command == "backtest":
        from riskreport.commands.backtest import backtest

        return backtest(args.config, args.out, args.as_of, args.force, args.horizons)
    if args.command == "compare":
        from riskreport.commands.compare import compare

        return compare(args.old, args.new)
    if args.command == "check":
        from riskreport.commands.check import check

        return check(args.config, args.as_of)
    from riskreport.commands.build import build

    if args.command == "demo":
        # Two rounds, so the demo brief shows what changed since the previous one.
        build(demo_config(), args.out, DEMO_PREVIOUS_ROUND, args.force, cache=args.cache)
        return build(demo_config(), args.out, None, args.force, cache=args.cache)
    return build(args.config, args.out, args.as_of, args.force, args.previous, args.cache)


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code."""
    os.environ.setdefault("MPLBACKEND", "Agg")
    args = _parser().parse_args(argv)
    _setup_logging(args)
    progress.configure(enabled=not (args.quiet or args.json))
    parallel.configure(enabled=True)  # the second core, for this command only
    try:
        with (
            stopping.handled()
        ):  # SIGTERM stops the run as Ctrl-C does (riskreport.processes.stopping)
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
    except KeyboardInterrupt as exc:  # Ctrl-C, or SIGTERM (riskreport.processes.stopping.Stopped)
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
