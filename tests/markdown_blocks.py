"""Running the documentation: the fenced code blocks of a markdown file, and the commands in
them, as a user would type them.

A block takes part when an HTML comment ``<!-- docs-test: ACTION ARGUMENT -->`` stands on
the line before its opening fence (blank lines between are allowed). The comment is
invisible in rendered markdown, so a page reads as usual. Actions used so far:

- ``file PATH``: write the block to PATH (relative to the folder the page's commands run in);
  ``file PATH (first lines)``: the block is the start of a longer file the test completes;
- ``run``: each line is a command; ``riskreport ...`` and ``.venv/bin/riskreport ...`` run
  the command line's ``main()`` (lines starting with ``#`` and text after `` # `` are
  comments);
- ``output``: what the command before printed, as lines that must appear in that order, any
  number standing for any number and ``...`` for lines left out;
- ``files``: paths, one a line, that must exist after the commands before it.

The parser follows CommonMark fences (``` or ~~~, at least three, closed by a fence of the
same character at least as long); written here rather than taken from a markdown library
because the test needs only fences and the comment before them.
"""

from __future__ import annotations

import contextlib
import io
import re
import shlex
from dataclasses import dataclass
from pathlib import Path

from riskreport import cli

MARK = re.compile(r"^\s*<!--\s*docs-test:\s*(.*?)\s*-->\s*$")
FENCE = re.compile(r"^ {0,3}(`{3,}|~{3,})\s*([^\s`]*)")
NUMBER = r"\d+(?:\.\d+)?"
COMMANDS = ("riskreport", ".venv/bin/riskreport")


@dataclass(frozen=True)
class Block:
    """One fenced code block of a markdown file.

    Attributes
    ----------
    language
        The fence's info word (``toml``, ``sh``, ``csv``; empty when none).
    text
        The block's content, ending with a newline.
    line
        The 1-based line of the opening fence, for messages.
    mark
        The text of the ``<!-- docs-test: ... -->`` comment before it, or None.
    """

    language: str
    text: str
    line: int
    mark: str | None

    @property
    def action(self) -> str:
        """The first word of the mark (``file``, ``run``, ``output``, ``files``)."""
        return (self.mark or "").split(" ", 1)[0]

    @property
    def argument(self) -> str:
        """The rest of the mark (e.g. the path of ``file``)."""
        parts = (self.mark or "").split(" ", 1)
        return parts[1].strip() if len(parts) > 1 else ""


def fenced_blocks(path: Path) -> tuple[Block, ...]:
    """Every fenced code block of a markdown file, in order, with its mark if any."""
    lines = path.read_text(encoding="utf-8").splitlines()
    blocks: list[Block] = []
    mark: str | None = None
    i = 0
    while i < len(lines):
        line = lines[i]
        if found := MARK.match(line):
            mark = found[1]
        elif opening := FENCE.match(line):
            fence = opening[1]
            closing = re.compile(rf"^ {{0,3}}{re.escape(fence[0])}{{{len(fence)},}}\s*$")
            end = next((j for j in range(i + 1, len(lines)) if closing.match(lines[j])), None)
            if end is None:
                raise ValueError(f"{path.name}, line {i + 1}: the code block is never closed")
            body = "".join(f"{text}\n" for text in lines[i + 1 : end])
            blocks.append(Block(opening[2], body, i + 1, mark))
            mark = None
            i = end
        elif line.strip():
            mark = None  # a mark belongs to the block right after it
        i += 1
    return tuple(blocks)


def marked_blocks(path: Path) -> tuple[Block, ...]:
    """The blocks of a markdown file that carry a ``docs-test`` mark."""
    return tuple(b for b in fenced_blocks(path) if b.mark is not None)


@dataclass(frozen=True)
class Ran:
    """A command as run: its line, exit code and what it printed."""

    command: str
    code: int
    stdout: str
    stderr: str


def commands(block: Block) -> list[str]:
    """The commands of a ``run`` block: one a line, without comments."""
    found = []
    for line in block.text.splitlines():
        text = line.split(" # ", 1)[0].strip()
        if text and not text.startswith("#"):
            found.append(text)
    return found


def run_command(command: str) -> Ran:
    """Run one documented command in the current folder.

    Raises
    ------
    ValueError
        A command other than ``riskreport`` (the harness runs nothing else).
    """
    words = shlex.split(command)
    if not words or words[0] not in COMMANDS:
        raise ValueError(f"the docs harness runs riskreport commands only, got {command!r}")
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            code = cli.main(words[1:])
        except SystemExit as stopped:  # argparse's --version and --help
            code = stopped.code if isinstance(stopped.code, int) else 2
    return Ran(command, code, out.getvalue(), err.getvalue())


def _pattern(expected: str) -> re.Pattern[str]:
    """A printed line as a pattern in which every number stands for any number and every
    run of spaces for any run (table columns widen with their contents)."""
    parts = re.split(rf"({NUMBER}|\s+)", expected.strip())
    return re.compile(
        "".join(
            NUMBER if re.fullmatch(NUMBER, p) else r"\s+" if p.isspace() else re.escape(p)
            for p in parts
            if p
        )
    )


def unmatched_output(expected: str, printed: str) -> list[str]:
    """The lines of an ``output`` block not found, in order, in what was printed."""
    lines = [line.strip() for line in printed.splitlines()]
    position, missing = 0, []
    for want in expected.splitlines():
        if not want.strip() or want.strip() == "...":
            continue
        pattern = _pattern(want)
        hit = next((i for i in range(position, len(lines)) if pattern.fullmatch(lines[i])), None)
        if hit is None:
            missing.append(want)
        else:
            position = hit + 1
    return missing
