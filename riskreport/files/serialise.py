"""How a record becomes JSON values: the one flattening of every result to plain data.

The floor below all records: every frozen result of the pipeline (the assessment's records
and those of the track record, the replay and the rounds) declares here, through
:func:`json_key`, how :func:`plain` writes it. This module imports nothing of the package,
so any record can use it without an import pointing up a floor.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

Layout = tuple[str | tuple[str, str], ...]
"""The keys of a JSON object in order; an item ``(key, attribute)`` writes an attribute
under another key (``("h", "horizon")``)."""


def json_key(
    *,
    name: str | None = None,
    skip: bool = False,
    omit_none: bool = False,
    keyed: tuple[str, str] | None = None,
    layout: Layout | None = None,
) -> dict[str, tuple[str | None, bool, bool, tuple[str, str] | None, Layout | None]]:
    """A dataclass field's metadata saying how :func:`plain` writes it.

    Parameters
    ----------
    name
        The JSON key, where it differs from the attribute (``from`` is a Python keyword).
    skip
        Kept on the object only, not written to the JSON.
    omit_none
        The key is left out of the JSON when the value is None.
    keyed
        ``(key, value)``: a tuple of dataclasses written as one JSON object mapping each
        item's ``key`` attribute to its ``value`` attribute (e.g. family -> score).
    layout
        The keys each item of a tuple of dataclasses is written with, in order (see
        :data:`Layout`): one record type can appear in several places of the contract, each
        with the keys the contract fixes there.
    """
    return {"json": (name, skip, omit_none, keyed, layout)}


def plain(value: Any, layout: Layout | None = None) -> Any:
    """Any part of an assessment as plain JSON values: the one place results are flattened.

    Dataclasses become objects with their fields in declaration order (see
    :func:`json_key`), or with the keys of ``layout``; tuples become lists and floats are
    rounded to 12 significant digits (stable across BLAS); a non-finite float becomes None
    (JSON null).

    Examples
    --------
    >>> from dataclasses import dataclass, field
    >>> @dataclass(frozen=True)
    ... class Row:
    ...     start: str = field(metadata=json_key(name="from"))
    ...     value: float = 0.0
    ...     note: str | None = field(default=None, metadata=json_key(omit_none=True))
    >>> plain(Row("2026-11", 1 / 3))
    {'from': '2026-11', 'value': 0.333333333333}
    >>> plain(Row("2026-11", float("nan")), layout=("value", ("period", "start")))
    {'value': None, 'period': '2026-11'}
    """
    if not (dataclasses.is_dataclass(value) and not isinstance(value, type)):
        return _clean(value)
    if layout is not None:
        pairs = [(item, item) if isinstance(item, str) else item for item in layout]
        return {key: plain(getattr(value, attribute)) for key, attribute in pairs}
    out: dict[str, Any] = {}
    for f in dataclasses.fields(value):
        name, skip, omit_none, keyed, items = f.metadata.get(
            "json", (None, False, False, None, None)
        )
        item = getattr(value, f.name)
        if skip or (omit_none and item is None):
            continue
        if keyed is not None:
            key, attribute = keyed
            item = {getattr(x, key): getattr(x, attribute) for x in item}
        if items is not None:
            out[name or f.name] = [plain(x, items) for x in item]
        else:
            out[name or f.name] = plain(item)
    return out


def _clean(value: Any) -> Any:
    """Tuples to lists and floats rounded to 12 significant digits (stable across BLAS)."""
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return plain(value)
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    if isinstance(value, float):
        if not math.isfinite(value):
            return None
        return float(f"{value:.12g}")
    return value
