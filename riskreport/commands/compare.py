"""``riskreport compare``: the change in P(inside) between two rounds' assessment files."""

from __future__ import annotations

import dataclasses
from pathlib import Path
from typing import Any


def compare(old: Path, new: Path) -> dict[str, Any]:
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
