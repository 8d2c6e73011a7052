"""Charts of the brief as matplotlib Figure objects (no pyplot state), written as SVG.

Our palette: an umber ramp for the probability bands (light to dark with probability, so it
reads in greyscale), a hatched grey target band, and for the three outcomes three hues that
stay apart for the common colour-vision deficiencies (a slate blue below, the umber inside,
a sea green above; tests/reference/test_palette.py measures the pair under simulated
deuteranopia and protanopia and in greyscale), each also with its own line style and
marker, labelled directly on the chart.
"""

from __future__ import annotations

import io
from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import matplotlib
import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from riskreport._typing import Frequency
from riskreport.assessment import Assessment, HorizonResult
from riskreport.reading import periods
from riskreport.report import formatting as fmt
from riskreport.report.sections.common import summary_horizons

if TYPE_CHECKING:
    from riskreport.laws.density import DensityCurve
    from riskreport.rounds.change import ChangeHorizon

MM = 1 / 25.4  # inches per millimetre: figures are sized to their box in the page CSS

INK = "#26231f"
GRID = "#d9d4cc"
BAND_EDGE = "#6f6a63"
FAN = {"90%": "#efe4cc", "80%": "#dcc49a", "50%": "#b98d4f"}
BELOW = "#2f6497"
ABOVE = "#3f8f6b"
OUTCOME_STYLE: dict[str, dict[str, Any]] = {
    "below": {"color": BELOW, "linestyle": (0, (5, 2)), "marker": "v"},
    "inside": {"color": "#7a4e12", "linestyle": "-", "marker": "o"},
    "above": {"color": ABOVE, "linestyle": (0, (6, 2, 1, 2)), "marker": "^"},
}

# Any: matplotlib's stubs type rcParams keys as one large Literal.
_RC: Any = {
    "svg.hashsalt": "riskreport",
    # Text as <text> in DejaVu Sans (the brief's font), not one path per glyph: half the SVG,
    # about a third less time for weasyprint to draw the charts, and the words stay text.
    "svg.fonttype": "none",
    "font.family": "DejaVu Sans",
    "font.size": 8,
    "axes.edgecolor": BAND_EDGE,
    "axes.linewidth": 0.6,
    "xtick.color": INK,
    "ytick.color": INK,
    "axes.labelcolor": INK,
    # Labels carry user text (model names): "$" must not start mathtext, so
    # "$x$", "a_b", "^" and backslashes print as written instead of failing to parse.
    "text.parse_math": False,
}


@dataclass(frozen=True)
class Chart:
    """A rendered chart: a stable name, its SVG text and size in millimetres."""

    name: str
    svg: str
    width_mm: float
    height_mm: float


def _svg(fig: Figure) -> str:
    buffer = io.StringIO()
    with matplotlib.rc_context(_RC):
        fig.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None})
    return buffer.getvalue()


def _figure(width_mm: float, height_mm: float) -> Figure:
    with matplotlib.rc_context(_RC):
        return Figure(figsize=(width_mm * MM, height_mm * MM), layout="constrained")


def _ordinal(label: str) -> int:
    parsed = periods.parse(label)
    assert parsed is not None
    return parsed.ordinal


def _year_ticks(ax: Axes, first: int, last: int, frequency: str) -> None:
    freq: Frequency = "monthly" if frequency == "monthly" else "quarterly"
    per_year = periods.PERIODS_PER_YEAR[freq]
    ticks = [o for o in range(first, last + 1) if periods.position_in_year(o, freq) == 1]
    ax.set_xticks(ticks, [str(periods.year_of(o, freq)) for o in ticks])
    ax.set_xlim(first - 1, last + per_year // 6 + 1)


def outlook(assessment: Assessment, width_mm: float = 170, height_mm: float = 66) -> Chart:
    """History, the target band, the centre path and graded probability bands."""
    with matplotlib.rc_context(_RC):
        fig = outlook_figure(assessment, width_mm, height_mm)
        return Chart("outlook", _svg(fig), width_mm, height_mm)


def outlook_figure(assessment: Assessment, width_mm: float = 170, height_mm: float = 66) -> Figure:
    """The outlook chart's Figure (for SVG in the brief and PNG on slides)."""
    with matplotlib.rc_context(_RC):
        fig = _figure(width_mm, height_mm)
        ax = fig.add_subplot()
        rows = assessment.horizons
        x = [_ordinal(r.period) for r in rows]
        hist_x = [_ordinal(o.period) for o in assessment.history]
        hist_y = [o.value for o in assessment.history]
        first = min(hist_x + x)
        last = max(x)
        lowers = [r.band[0] for r in rows]
        uppers = [r.band[1] for r in rows]
        band_x = [first - 1, *x]
        ax.fill_between(
            band_x,
            [lowers[0], *lowers],
            [uppers[0], *uppers],
            step="post",
            facecolor="none",
            edgecolor=GRID,
            hatch="////",
            linewidth=0,
            zorder=0,
        )
        for edge in (lowers, uppers):
            ax.step(band_x, [edge[0], *edge], where="post", color=BAND_EDGE, lw=0.8, ls=(0, (3, 2)))
        for name, ranges in (
            ("90%", [r.quantiles.range_90 for r in rows]),
            ("80%", [r.quantiles.range_80 for r in rows]),
            ("50%", [r.quantiles.range_50 for r in rows]),
        ):
            ax.fill_between(
                x,
                [lo for lo, _ in ranges],
                [hi for _, hi in ranges],
                color=FAN[name],
                linewidth=0,
                zorder=1,
                label=f"{name} probability band",
            )
        ax.plot(hist_x, hist_y, color=INK, lw=1.4, zorder=3)
        ax.plot(x, [r.centre for r in rows], color=INK, lw=1.4, ls=(0, (1, 1.2)), zorder=3)
        ax.axvline(x[0] - 0.5, color=BAND_EDGE, lw=0.6, zorder=2)
        ax.annotate(
            "outcomes",
            (hist_x[int(np.argmax(hist_y))], max(hist_y)),  # above the peak: always clear
            xytext=(0, 4),
            textcoords="offset points",
            ha="center",
            color=INK,
            fontsize=7,
        )
        ax.annotate(
            f"forecast from {rows[0].period}",
            (x[0], ax.get_ylim()[1]),
            xytext=(3, -10),
            textcoords="offset points",
            ha="left",
            va="top",
            color=INK,
            fontsize=7,
        )
        ax.annotate(
            "target band",  # at the end of the history, clear of the "outcomes" label
            (x[0] - 2, uppers[0]),
            xytext=(0, 3),
            textcoords="offset points",
            ha="right",
            va="bottom",
            color=BAND_EDGE,
            fontsize=7,
        )
        ax.set_ylabel("inflation, % (year on year)")
        ax.grid(axis="y", color=GRID, lw=0.4)
        ax.spines[["top", "right"]].set_visible(False)
        _year_ticks(ax, first, last, assessment.frequency)
        handles, labels = ax.get_legend_handles_labels()
        ax.legend(
            handles[::-1],
            labels[::-1],
            loc="upper center",
            bbox_to_anchor=(0.5, -0.09),
            frameon=False,
            fontsize=7,
            ncol=3,
        )
        return fig


def spread_labels(positions: list[float], gap: float) -> list[float]:
    """Move label positions apart so neighbours are at least ``gap`` apart, keeping order."""
    order = sorted(range(len(positions)), key=lambda i: positions[i])
    placed = [positions[i] for i in order]
    for _ in range(len(placed)):
        for j in range(1, len(placed)):
            if placed[j] - placed[j - 1] < gap:
                middle = (placed[j] + placed[j - 1]) / 2
                placed[j - 1], placed[j] = middle - gap / 2, middle + gap / 2
    result = [0.0] * len(positions)
    for rank, i in enumerate(order):
        result[i] = placed[rank]
    return result


def _units(assessment: Assessment) -> str:
    return "months" if assessment.frequency == "monthly" else "quarters"


def _ahead_ticks(ax: Axes, assessment: Assessment) -> None:
    """Ticks in periods ahead with the target period under each, about six of them."""
    rows = assessment.horizons
    step = max(1, int(np.ceil(len(rows) / 6)))
    if assessment.frequency == "monthly" and len(rows) > 8:
        step = 6 if len(rows) > 13 else 3
    chosen = [r for r in rows if r.h % step == 0]
    ax.set_xticks([r.h for r in chosen], [f"{r.h}\n{r.period}" for r in chosen])
    ax.set_xlabel(f"{_units(assessment)} ahead (and the target period)")


def _outcome_lines(ax: Axes, x: list[int], series: dict[str, list[float]]) -> None:
    ends = spread_labels([100 * values[-1] for values in series.values()], gap=10.0)
    for (key, values), end in zip(series.items(), ends, strict=True):
        style = OUTCOME_STYLE[key]
        ax.plot(x, [100 * v for v in values], lw=1.3, markersize=3, markevery=3, label=key, **style)
        ax.annotate(
            key,
            (x[-1], end),
            xytext=(5, 0),
            textcoords="offset points",
            va="center",
            color=style["color"],
            fontsize=8,
            annotation_clip=False,
        )


def band_probabilities(
    assessment: Assessment, width_mm: float = 170, height_mm: float = 46
) -> Chart:
    """Probability of landing below, inside and above the band, by horizon."""
    with matplotlib.rc_context(_RC):
        fig = band_probabilities_figure(assessment, width_mm, height_mm)
        return Chart("band-probabilities", _svg(fig), width_mm, height_mm)


def band_probabilities_figure(
    assessment: Assessment, width_mm: float = 170, height_mm: float = 46
) -> Figure:
    """The probability-by-horizon chart's Figure."""
    with matplotlib.rc_context(_RC):
        fig = _figure(width_mm, height_mm)
        ax = fig.add_subplot()
        rows: tuple[HorizonResult, ...] = assessment.horizons
        x = [r.h for r in rows]
        ax.fill_between(
            x,
            [100 * r.p_inside_interval[0] for r in rows],
            [100 * r.p_inside_interval[1] for r in rows],
            color=FAN["90%"],
            lw=0,
            label="plausible range of inside",
        )
        _outcome_lines(
            ax,
            x,
            {
                "below": [r.p_below for r in rows],
                "inside": [r.p_inside for r in rows],
                "above": [r.p_above for r in rows],
            },
        )
        ax.axvline(assessment.policy_horizon, color=BAND_EDGE, lw=0.6, ls=(0, (2, 2)))
        ax.annotate(
            "policy horizon",
            (assessment.policy_horizon, 100),
            xytext=(3, -2),
            textcoords="offset points",
            va="top",
            fontsize=7,
            color=BAND_EDGE,
        )
        ax.set_ylim(0, 100)
        # The axis ends at the last horizon (labels sit beyond it); a nowcast-only brief
        # (horizons = 0) gets half a period either side, not a singular axis.
        ax.set_xlim(*((x[0], x[-1]) if len(x) > 1 else (x[0] - 0.5, x[0] + 0.5)))
        ax.set_ylabel("probability, %")
        _ahead_ticks(ax, assessment)
        ax.grid(axis="y", color=GRID, lw=0.4)
        ax.spines[["top", "right"]].set_visible(False)
        return fig


PART_STYLE: dict[str, dict[str, Any]] = {
    "centre": {"color": "#7a4e12", "hatch": ""},
    "spread and shape": {"color": ABOVE, "hatch": "////"},
    "band": {"color": "#a8a29a", "hatch": ".."},
}


def change_parts(assessment: Assessment, width_mm: float = 170, height_mm: float = 48) -> Chart:
    """Change in P(inside) since the previous brief, split into its three parts, by period."""
    with matplotlib.rc_context(_RC):
        fig = change_parts_figure(assessment, width_mm, height_mm)
        return Chart("change", _svg(fig), width_mm, height_mm)


def change_parts_figure(
    assessment: Assessment, width_mm: float = 170, height_mm: float = 48
) -> Figure:
    """The change chart's Figure (for SVG in the brief and PNG on slides)."""
    change = assessment.change.horizons if assessment.change else ()
    wanted = set(summary_horizons(assessment))
    shown = {r.period for r in assessment.horizons if r.h in wanted}
    rows = [r for r in change if r.period in shown]
    with matplotlib.rc_context(_RC):
        fig = _figure(width_mm, height_mm)
        ax = fig.add_subplot()
        x = np.arange(len(rows))
        keys: tuple[tuple[str, Callable[[ChangeHorizon], float]], ...] = (
            ("centre", lambda r: r.due_to_centre),
            ("spread and shape", lambda r: r.due_to_spread),
            ("band", lambda r: r.due_to_band),
        )
        # A part that is zero everywhere gets no bars, so it gets no legend entry either.
        keys = tuple(k for k in keys if any(abs(k[1](r)) >= 0.005 for r in rows)) or keys[:1]
        width = 0.78 / len(keys)
        for i, (label, part) in enumerate(keys):
            style = PART_STYLE[label]
            ax.bar(
                x + (i - (len(keys) - 1) / 2) * width,
                [100 * part(r) for r in rows],
                width=width,
                color=style["color"],
                hatch=style["hatch"],
                edgecolor=INK,
                linewidth=0.3,
                label=label,
            )
        total = [100 * (r.p_inside_now - r.p_inside_before) for r in rows]
        ax.plot(x, total, linestyle="none", marker="D", markersize=3, color=INK, label="total")
        ax.axhline(0, color=INK, lw=0.6)
        ax.set_xticks(x, [r.period for r in rows])
        ax.set_ylabel("change in inside,\npercentage points")
        ax.grid(axis="y", color=GRID, lw=0.4)
        ax.spines[["top", "right"]].set_visible(False)
        ax.legend(
            fontsize=7.5, frameon=False, ncol=4, loc="upper center", bbox_to_anchor=(0.5, -0.14)
        )
        return fig


MODEL_SHADES = (
    "#7a4e12",
    "#2f6497",
    "#3f8f6b",
    "#b98d4f",
    "#6f6a63",
    "#8fb3d9",
    "#a9cfbf",
    "#26231f",
)
MODEL_HATCHES = ("", "////", "\\\\", "..", "xx", "--", "++", "oo")


LEGEND_CHARACTERS = 28  # a longer model name is shortened in the legend
_CHARACTER_MM, _HANDLE_MM = 6.5 * 0.6 * 25.4 / 72, 9.0  # 0.6 em a character at 6.5 pt; swatch


def short_label(text: str, characters: int = LEGEND_CHARACTERS) -> str:
    """``text`` cut to ``characters`` with an ellipsis where longer (the tables keep it whole).

    >>> short_label("a model with a very long name indeed", 20)
    'a model with a very…'
    """
    return text if len(text) <= characters else text[: characters - 1].rstrip() + "\u2026"


def weights(assessment: Assessment, width_mm: float = 170, height_mm: float = 48) -> Chart:
    """The current round's combination weights by horizon, stacked (negative ones below 0)."""
    with matplotlib.rc_context(_RC):
        fig = weights_figure(assessment, width_mm, height_mm)
        return Chart("weights", _svg(fig), width_mm, height_mm)


def weights_figure(assessment: Assessment, width_mm: float = 170, height_mm: float = 48) -> Figure:
    """The weights chart's Figure: names shortened, as many legend columns as fit the width."""
    table: dict[str, dict[int, float]] = {}
    for w in assessment.combination.weights:
        table.setdefault(w.model, {})[w.h] = w.weight
    hs = [r.h for r in assessment.horizons]
    with matplotlib.rc_context(_RC):
        fig = _figure(width_mm, height_mm)
        ax = fig.add_subplot()
        up = np.zeros(len(hs))
        down = np.zeros(len(hs))
        for i, (model, by_h) in enumerate(table.items()):
            values = np.array([by_h.get(h, 0.0) for h in hs])
            base = np.where(values >= 0, up, down)
            ax.bar(
                hs,
                values,
                bottom=base,
                width=0.8,
                color=MODEL_SHADES[i % 8],
                hatch=MODEL_HATCHES[i % 8],
                edgecolor=INK,
                linewidth=0.3,
                label=short_label(model),
            )
            up += np.where(values >= 0, values, 0)
            down += np.where(values < 0, values, 0)
        ax.axhline(0, color=INK, lw=0.6)
        ax.set_xlabel(f"{_units(assessment)} ahead")
        ax.set_ylabel("weight")
        ax.spines[["top", "right"]].set_visible(False)
        longest = max((len(short_label(m)) for m in table), default=1)
        fitting = int(0.95 * width_mm // (longest * _CHARACTER_MM + _HANDLE_MM))
        ax.legend(
            fontsize=6.5,
            frameon=False,
            ncol=max(1, min(len(table), 5, fitting)),
            loc="upper center",
            bbox_to_anchor=(0.5, -0.28),
        )
        return fig


def density_curves(c: DensityCurve) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The x grid and the two densities exactly as drawn (after judgement, model-based)."""
    return np.array(c.x), np.array(c.pdf), np.array(c.model_based_pdf)


def density(a: Assessment, c: DensityCurve, width_mm: float = 84, height_mm: float = 52) -> Chart:
    """The outcome density chart of one period (``c`` from ``a.density``), as SVG."""
    with matplotlib.rc_context(_RC):
        fig = density_figure(a, c, width_mm, height_mm)
        return Chart(f"density-h{c.h}", _svg(fig), width_mm, height_mm)


def density_figure(
    a: Assessment, c: DensityCurve, width_mm: float = 84, height_mm: float = 52
) -> Figure:
    """The predictive density in one period, the band shaded, the three probabilities
    labelled, model-based and after judgement overlaid; the first line drawn after the two
    band edges is the density after judgement."""
    r = a.horizon_result(c.h)
    lower, upper = r.band
    x, f, g = density_curves(c)
    below, inside, above = fmt.outcome_texts(r.p_below, r.p_inside, r.p_above)
    judged = bool(a.judgement) and c.pdf != c.model_based_pdf
    with matplotlib.rc_context(_RC):
        fig = _figure(width_mm, height_mm)
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


def round_history(a: Assessment, width_mm: float = 84, height_mm: float = 40) -> Chart:
    """P(inside) for the policy-horizon period, by the brief that stated it."""
    style = OUTCOME_STYLE["inside"]
    points = a.round_history
    with matplotlib.rc_context(_RC):
        fig = _figure(width_mm, height_mm)
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
        return Chart("round-history", _svg(fig), width_mm, height_mm)
