"""The staff annex's own charts: each model's path in the current round and the combined
forecast's past errors over time (drawing only; captions and alt texts are the annex
section's). Same palette, sizes and SVG settings as :mod:`riskreport.report.charts`."""

from __future__ import annotations

import matplotlib

from riskreport.assessment import Assessment
from riskreport.report.charts import (
    _RC,
    BELOW,
    GRID,
    INK,
    OUTCOME_STYLE,
    Chart,
    _ahead_ticks,
    _figure,
    _ordinal,
    _svg,
    _year_ticks,
    spread_labels,
)

# Line styles cycle so models stay apart in greyscale; colour is not the only signal.
MODEL_STYLES = ("-", (0, (5, 2)), (0, (1, 1.5)), (0, (6, 2, 1, 2)), (0, (3, 1, 1, 1, 1, 1)))
BAND_FILL = "#eeeeec"  # the target band, a plain wash under the lines
MODEL_GREYS = ("#4a4641", "#6f6a63", "#8d877f", "#a59f96")


def model_paths(a: Assessment, width_mm: float = 170, height_mm: float = 62) -> Chart:
    """Each model's forecast path in the current round, with the combined forecast; every
    line labelled at its end (labels moved apart so they never overlap)."""
    with matplotlib.rc_context(_RC):
        fig = _figure(width_mm, height_mm)
        ax = fig.add_subplot()
        names = list(dict.fromkeys(r.model for r in a.model_forecasts))
        ends: list[tuple[str, int, float, str]] = []  # label, x, y, colour
        for k, name in enumerate(names):
            rows = [r for r in a.model_forecasts if r.model == name]
            colour = MODEL_GREYS[k % len(MODEL_GREYS)]
            ax.plot(
                [r.h for r in rows],
                [r.value for r in rows],
                lw=0.9,
                color=colour,
                linestyle=MODEL_STYLES[k % len(MODEL_STYLES)],
            )
            ends.append((name, rows[-1].h, rows[-1].value, colour))
        combined = OUTCOME_STYLE["inside"]
        ax.plot(
            [r.h for r in a.horizons],
            [r.point_forecast for r in a.horizons],
            lw=1.8,
            color=combined["color"],
            linestyle=combined["linestyle"],
        )
        last = a.horizons[-1]
        ends.append(("combined", last.h, last.point_forecast, combined["color"]))
        lower, upper = a.horizons[0].band
        ax.axhspan(lower, upper, color=BAND_FILL, lw=0, zorder=0)
        h_first, h_last = a.horizons[0].h, a.horizons[-1].h
        # one reported period alone (horizons = 0): half a period either side, not a
        # singular axis
        ax.set_xlim(*((h_first, h_last) if h_last > h_first else (h_first - 0.5, h_last + 0.5)))
        low, high = ax.get_ylim()
        placed = spread_labels([y for _, _, y, _ in ends], gap=0.075 * (high - low))
        for (label, x, _, colour), at in zip(ends, placed, strict=True):
            ax.annotate(
                label,
                (x, at),
                xytext=(4, 0),
                textcoords="offset points",
                va="center",
                fontsize=6.5,
                color=colour,
                annotation_clip=False,
            )
        _ahead_ticks(ax, a)
        ax.set_ylabel("inflation, %", color=INK)
        ax.grid(axis="y", color=GRID, lw=0.5)
        return Chart("model-paths", _svg(fig), width_mm, height_mm)


def past_errors(a: Assessment, width_mm: float = 170, height_mm: float = 58) -> Chart:
    """The combined forecast's past errors (outcome minus forecast) by the round that made
    them, at the first horizon and at the policy horizon: shifts in size show as regimes."""
    with matplotlib.rc_context(_RC):
        fig = _figure(width_mm, height_mm)
        ax = fig.add_subplot()
        hs = sorted({e.h for e in a.past_errors})
        for h in hs:
            rows = [e for e in a.past_errors if e.h == h]
            style = OUTCOME_STYLE["inside"] if h == a.policy_horizon else OUTCOME_STYLE["below"]
            ax.plot(
                [_ordinal(e.origin) for e in rows],
                [e.error for e in rows],
                lw=0.9 if h == a.policy_horizon else 0.7,
                color=style["color"] if h == a.policy_horizon else BELOW,
                linestyle=style["linestyle"],
                label=f"{h} {'months' if a.frequency == 'monthly' else 'quarters'} ahead",
            )
        ax.axhline(0, color=INK, lw=0.6)
        origins = [_ordinal(e.origin) for e in a.past_errors]
        _year_ticks(ax, min(origins), max(origins), a.frequency)
        # One label every few years on a long record, so the labels never overlap.
        ticks = list(ax.get_xticks())
        step = max(1, -(-len(ticks) // 8))
        labels = [t.get_text() for t in ax.get_xticklabels()]
        ax.set_xticks(ticks[::step], labels[::step])
        ax.set_ylabel("outcome minus forecast, pp", color=INK)
        ax.grid(axis="y", color=GRID, lw=0.5)
        ax.legend(loc="upper left", frameon=False, fontsize=7, ncols=2)
        return Chart("past-errors", _svg(fig), width_mm, height_mm)
