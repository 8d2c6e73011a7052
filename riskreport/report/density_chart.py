"""The outcome density chart: the predictive density in one period, the band shaded, the
three probabilities labelled, model-based and after judgement overlaid. Its alt text and
caption are built from the same numbers."""

from __future__ import annotations

import matplotlib
import numpy as np
from matplotlib.figure import Figure

from riskreport.assessment import Assessment, HorizonResult
from riskreport.density import DensityCurve
from riskreport.report import formatting as fmt
from riskreport.report.charts import _RC, BAND_EDGE, FAN, GRID, INK, OUTCOME_STYLE, Chart
from riskreport.report.charts import _figure as figure
from riskreport.report.charts import _svg as svg
from riskreport.report.sections.common import band_label


def _row(a: Assessment, h: int) -> HorizonResult:
    return a.horizon_result(h)


def plotted(c: DensityCurve) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The x grid and the two densities exactly as drawn (after judgement, model-based)."""
    return np.array(c.x), np.array(c.pdf), np.array(c.model_based_pdf)


def density(a: Assessment, c: DensityCurve, width_mm: float = 84, height_mm: float = 52) -> Chart:
    """The density chart of one period (``c`` from ``a.density``), as SVG."""
    with matplotlib.rc_context(_RC):
        fig = draw(a, c, width_mm, height_mm)
        return Chart(f"density-h{c.h}", svg(fig), width_mm, height_mm)


def draw(a: Assessment, c: DensityCurve, width_mm: float = 84, height_mm: float = 52) -> Figure:
    """The density chart's Figure: the first line is the density after judgement."""
    r = _row(a, c.h)
    lower, upper = r.band
    x, f, g = plotted(c)
    below, inside, above = fmt.outcome_texts(r.p_below, r.p_inside, r.p_above)
    judged = bool(a.judgement) and c.pdf != c.model_based_pdf
    with matplotlib.rc_context(_RC):
        fig = figure(width_mm, height_mm)
        ax = fig.add_subplot()
        top = float(max(f.max(), g.max())) * 1.45
        ax.axvspan(lower, upper, facecolor="none", edgecolor=GRID, hatch="////", lw=0)
        ax.axvline(lower, color=BAND_EDGE, lw=0.6)
        ax.axvline(upper, color=BAND_EDGE, lw=0.6)
        inside_mask = (x >= lower) & (x <= upper)
        ax.fill_between(x, 0, f, where=inside_mask, color=FAN["80%"], lw=0, alpha=0.9)
        ax.plot(x, f, color=INK, lw=1.2, label="after judgement" if judged else "outcome density")
        if judged:
            ax.plot(x, g, color=BAND_EDGE, lw=1.0, ls=(0, (4, 2)), label="model-based")
        # inside on the top row, below and above one row lower, so narrow bands stay legible
        for text, xpos, ha, key, row in (
            (f"below {below}", lower, "right", "below", 0.86),
            (f"inside {inside}", (lower + upper) / 2, "center", "inside", 0.98),
            (f"above {above}", upper, "left", "above", 0.86),
        ):
            offset = {"right": -3, "center": 0, "left": 3}[ha]
            ax.annotate(
                text,
                (xpos, top * row),
                xytext=(offset, 0),
                textcoords="offset points",
                ha=ha,
                va="top",
                fontsize=7.5,
                color=OUTCOME_STYLE[key]["color"],
                bbox={"facecolor": "white", "edgecolor": "none", "pad": 1},
            )
        ax.set_ylim(0, top)
        ax.set_xlim(float(x[0]), float(x[-1]))
        ax.set_xlabel(f"inflation in {c.period}, %")
        ax.set_ylabel("density")
        ax.set_yticks([])
        ax.grid(axis="x", color=GRID, lw=0.4)
        ax.spines[["top", "right", "left"]].set_visible(False)
        if judged:
            ax.legend(loc="center right", frameon=False, fontsize=7)
        return fig


def alt_text(a: Assessment, c: DensityCurve) -> str:
    """What the chart shows, in words and numbers."""
    r = _row(a, c.h)
    below, inside, above = fmt.outcome_texts(r.p_below, r.p_inside, r.p_above)
    text = (
        f"Density of inflation in {c.period} (h = {c.h}) over the target band "
        f"{band_label(r.band)}: most likely {fmt.number(r.centre)}%, 90% between "
        f"{fmt.number(r.quantiles.q05)}% and {fmt.number(r.quantiles.q95)}%; "
        f"below the band {below}, inside {inside}, above {above}."
    )
    if a.judgement and c.pdf != c.model_based_pdf:
        m = a.horizon_result(c.h, model_based=True)
        mb, mi, ma = fmt.outcome_texts(m.p_below, m.p_inside, m.p_above)
        text += (
            f" The model-based density (dashed) is centred at {fmt.number(m.centre)}%, "
            f"with below {mb}, inside {mi}, above {ma}."
        )
    return text


def caption(a: Assessment, c: DensityCurve) -> str:
    """The caption under the chart."""
    judged = a.judgement and c.pdf != c.model_based_pdf
    return f"Outcome density in {c.period}: the band hatched, the share inside it shaded" + (
        "; model-based (dashed) and after judgement (solid)." if judged else "."
    )
