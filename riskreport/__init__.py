"""riskreport: probabilities for inflation relative to a target band, and a board brief.

Public API: :func:`assess` computes every number of a brief; :func:`render` writes it.
"""

from __future__ import annotations

from riskreport import combination, distributions, stats
from riskreport.assessment import Assessment
from riskreport.errors import InputError
from riskreport.pipeline import assess

__all__ = ["Assessment", "InputError", "assess", "combination", "distributions", "render", "stats"]
__version__ = "0.1.0"


def __getattr__(name: str) -> object:
    # render pulls in matplotlib, jinja2 and weasyprint: load it only when asked for.
    if name == "render":
        from riskreport.outputs import render

        return render
    raise AttributeError(name)
