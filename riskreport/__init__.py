"""riskreport: probabilities for inflation relative to a target band, and a board brief.

Public API: :func:`assess` computes every number of a brief; :func:`render` writes it.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from riskreport import combination, distributions, stats
    from riskreport.assessment import Assessment
    from riskreport.errors import InputError
    from riskreport.pipeline import assess
    from riskreport.report.outputs import render

__all__ = ["Assessment", "InputError", "assess", "combination", "distributions", "render", "stats"]
__version__ = "0.1.0"

# Every name loads on first use: `riskreport check` and `--version` need neither scipy.stats
# nor matplotlib, jinja2 or weasyprint (render pulls those in).
_LAZY = {
    "Assessment": ("riskreport.assessment", "Assessment"),
    "InputError": ("riskreport.errors", "InputError"),
    "assess": ("riskreport.pipeline", "assess"),
    "render": ("riskreport.report.outputs", "render"),
    "combination": ("riskreport.combination", None),
    "distributions": ("riskreport.distributions", None),
    "stats": ("riskreport.stats", None),
}


def __getattr__(name: str) -> object:
    if name not in _LAZY:
        raise AttributeError(f"module 'riskreport' has no attribute {name!r}")
    module_name, attribute = _LAZY[name]
    module = importlib.import_module(module_name)
    value = module if attribute is None else getattr(module, attribute)
    globals()[name] = value
    return value
