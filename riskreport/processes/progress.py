"""Progress bars on stderr for long runs (``batch``, and the steps of one ``build``).

tqdm draws them only when stderr is a terminal (``disable=None``), never under ``--quiet``
or ``--json``, and never on stdout, so scripts and logs see nothing extra.
"""

from __future__ import annotations

import sys
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from typing import Any, TypeVar

T = TypeVar("T")

_state = {"enabled": False}


def configure(*, enabled: bool) -> None:
    """Allow bars for this process (the command line sets it; library use stays silent)."""
    _state["enabled"] = enabled


def _tqdm() -> Any:
    """tqdm's bar class, without its monitor thread (a thread must not be running when
    :mod:`riskreport.processes.parallel` forks; the monitor only tunes how often a bar redraws)."""
    from tqdm import tqdm

    tqdm.monitor_interval = 0
    return tqdm


def _options(description: str, total: int | None) -> dict[str, Any]:
    return {
        "desc": description,
        "total": total,
        "file": sys.stderr,
        "leave": False,
        # None: drawn only on a terminal; True: never drawn.
        "disable": None if _state["enabled"] else True,
        "dynamic_ncols": True,
    }


def bar(items: Iterable[T], description: str, total: int | None = None) -> Iterator[T]:
    """Iterate ``items`` with a bar on stderr (on a terminal only)."""
    if not _state["enabled"]:
        yield from items
        return
    yield from _tqdm()(items, **_options(description, total))


@dataclass
class Steps:
    """A bar over the steps of one run: :meth:`step` names the step now running,
    :meth:`close` ends the bar (both do nothing when bars are off)."""

    total: int
    _bar: Any = field(default=None, repr=False)
    _started: bool = field(default=False, repr=False)

    @classmethod
    def start(cls, total: int) -> Steps:
        """A bar of ``total`` steps (drawn on a terminal only)."""
        if not _state["enabled"]:
            return cls(total)
        options = {**_options("", total), "bar_format": "{desc} {bar} {n}/{total}"}
        return cls(total, _tqdm()(**options))

    def step(self, name: str) -> None:
        """Mark the previous step done and show ``name`` as running."""
        if self._bar is None:
            return
        if self._started:
            self._bar.update(1)
        self._started = True
        self._bar.set_description_str(name)

    def close(self) -> None:
        """Remove the bar."""
        if self._bar is not None:
            self._bar.close()
            self._bar = None
