"""Reading JSON from disk: the one reader, with a size and a nesting limit.

Every JSON file riskreport reads back (an earlier round's assessment, ``compare``'s
arguments, ``--previous``, manifests, staging journals, the build cache) goes through
:func:`parse`. Python's ``json`` decoder recurses once per level of nesting, so a file
nested a hundred thousand levels deep raises ``RecursionError`` instead of a decoding
error; and a file of gigabytes would be read whole. Both are refused first, as
:class:`JsonLimitError` (a ``ValueError``, as a decoding error is), before the decoder runs.

The files the tool writes are a few hundred kilobytes and at most six levels deep, so the
limits below (common practice, no source) leave ample room.
"""

from __future__ import annotations

import json
import re
from pathlib import Path
from typing import Any

import numpy as np

MAX_BYTES = 64 * 1024 * 1024
MAX_DEPTH = 64

# A JSON string (RFC 8259, section 7): quotes around characters and backslash escapes,
# written as an unrolled loop so a long string is matched without backtracking.
_STRING = re.compile(rb'"[^"\\]*(?:\\.[^"\\]*)*"', re.DOTALL)


class JsonLimitError(ValueError):
    """A JSON file larger or more deeply nested than the reader accepts."""


def depth(content: bytes) -> int:
    """The deepest nesting of arrays and objects in ``content``, counted without recursion.

    Strings are blanked out first (a bracket inside a string does not nest); the running
    count of opening minus closing brackets is then one cumulative sum.

    >>> depth(b'{"a": [1, {"b": "[[["}]}')
    3
    """
    skeleton = _STRING.sub(b'""', content)
    brackets = np.frombuffer(skeleton, dtype=np.uint8)
    steps = np.zeros(brackets.size, dtype=np.int64)
    steps[(brackets == ord("[")) | (brackets == ord("{"))] = 1
    steps[(brackets == ord("]")) | (brackets == ord("}"))] = -1
    return int(np.cumsum(steps).max(initial=0))


def parse(content: bytes) -> Any:
    """Decode a JSON document after checking its size and nesting.

    Raises
    ------
    JsonLimitError
        The content is larger than :data:`MAX_BYTES` or nested deeper than
        :data:`MAX_DEPTH` levels.
    ValueError
        It is not UTF-8 JSON (``UnicodeDecodeError`` and ``json.JSONDecodeError`` are
        both ``ValueError``).
    """
    if len(content) > MAX_BYTES:
        raise JsonLimitError(f"larger than {MAX_BYTES} bytes; not a file riskreport wrote")
    levels = depth(content)
    if levels > MAX_DEPTH:
        raise JsonLimitError(
            f"nested deeper than {MAX_DEPTH} levels ({levels}); not a file riskreport wrote"
        )
    return json.loads(content.decode("utf-8"))


def load(path: Path) -> Any:
    """Read and decode the JSON file at ``path`` (see :func:`parse`); the size is checked
    before the file is read whole.

    Raises
    ------
    JsonLimitError, ValueError
        As :func:`parse`.
    OSError
        The file cannot be read.
    """
    with path.open("rb") as handle:
        content = handle.read(MAX_BYTES + 1)
    return parse(content)
