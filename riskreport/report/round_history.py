"""The brief's "across rounds" block: how P(inside) for the policy-horizon period moved
from one brief to the next (a small chart, a table and their words)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

from riskreport.assessment import Assessment
from riskreport.report import formatting as fmt

if TYPE_CHECKING:
    from riskreport.report.charts import Chart


def shown(a: Assessment) -> bool:
    """Whether there is anything to show: at least one earlier round reported the period."""
    return len(a.round_history) >= 2


@dataclass(frozen=True)
class RoundRow:
    """One brief's statement about the policy-horizon period, as printed."""

    brief: str
    ahead: str
    inside: str


def rows(a: Assessment) -> tuple[RoundRow, ...]:
    """Table rows: brief (as_of), periods ahead then, P(inside) as printed."""
    return tuple(
        RoundRow(
            p.as_of + (" (this brief)" if p.current else ""),
            str(p.h),
            fmt.single_percent(p.p_inside),
        )
        for p in a.round_history
    )


def text(a: Assessment) -> str:
    """From the first round shown to this one: the policy-horizon period, then the current
    calendar year when earlier briefs stated it."""
    first, last = a.round_history[0], a.round_history[-1]
    sentence = (
        f"The probability of inflation inside the band in {last.period} (the policy horizon) "
        f"as each brief in the output folder stated it: {fmt.single_percent(first.p_inside)} "
        f"in the brief of {first.as_of}, {fmt.single_percent(last.p_inside)} now "
        f"({fmt.points(last.p_inside - first.p_inside)})."
    )
    if len(a.year_history) >= 2:
        y0, y1 = a.year_history[0], a.year_history[-1]
        measure = "year-end rate" if y1.basis == "year-end" else "average"
        sentence += (
            f" For {y1.year} as a whole ({measure}): {fmt.single_percent(y0.p_inside)} in the "
            f"brief of {y0.as_of}, {fmt.single_percent(y1.p_inside)} now "
            f"({fmt.points(y1.p_inside - y0.p_inside)})."
        )
    return sentence


def chart(a: Assessment, width_mm: float = 84, height_mm: float = 40) -> Chart:
    """P(inside) for the policy-horizon period, by brief."""
    # charts imports the context module, which imports this one: load it when drawing
    import matplotlib

    from riskreport.report.charts import _RC, BAND_EDGE, GRID, OUTCOME_STYLE, Chart
    from riskreport.report.charts import _figure as figure
    from riskreport.report.charts import _svg as svg

    style = OUTCOME_STYLE["inside"]
    points = a.round_history
    with matplotlib.rc_context(_RC):
        fig = figure(width_mm, height_mm)
        ax = fig.add_subplot()
        x = list(range(len(points)))
        y = [100 * p.p_inside for p in points]
        ax.plot(x, y, color=style["color"], ls=style["linestyle"], marker=style["marker"], ms=4)
        for xi, yi, p in zip(x, y, points, strict=True):
            ax.annotate(
                fmt.single_percent(p.p_inside),
                (xi, yi),
                xytext=(0, 5),
                textcoords="offset points",
                ha="center",
                fontsize=7,
                color=style["color"],
            )
        ax.set_xticks(x, [p.as_of for p in points], fontsize=7)
        ax.set_xlim(-0.5, len(points) - 0.5)
        ax.set_ylim(0, 100)
        ax.set_ylabel(f"inside in {points[-1].period}, %", fontsize=7)
        ax.set_xlabel("brief", fontsize=7, color=BAND_EDGE)
        ax.grid(axis="y", color=GRID, lw=0.4)
        ax.spines[["top", "right"]].set_visible(False)
        return Chart("round-history", svg(fig), width_mm, height_mm)


def alt_text(a: Assessment) -> str:
    """The chart in words."""
    parts = [f"{p.as_of}: {fmt.single_percent(p.p_inside)}" for p in a.round_history]
    return (
        f"Line chart of the probability of inflation inside the band in "
        f"{a.round_history[-1].period}, as stated by each brief: " + "; ".join(parts) + "."
    )


CAPTION = "Probability of inside for the policy-horizon period, by the brief that stated it."
