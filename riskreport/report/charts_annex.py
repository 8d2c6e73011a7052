"""The staff annex's own charts: each model's path in the current round, the combined
forecast's past errors over time, the PIT histograms and the reliability of P(inside) (drawing only; captions and alt texts are the annex
section's). Same palette, sizes and SVG settings as :mod:`riskreport.report.charts`."""

from __future__ import annotations

import matplotlib
import numpy as np

from riskreport.assessment import Assessment
from riskreport.report.charts import (
    _RC,
    BAND_EDGE,
    BELOW,
    FAN,
    GRID,
    INK,
    OUTCOME_STYLE,
    Chart,
    _ahead_ticks,
    _figure,
    _ordinal,
    _svg,
    _units,
    _year_ticks,
    short_label,
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
            ends.append((short_label(name), rows[-1].h, rows[-1].value, colour))
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


def pit_histograms(assessment: Assessment, width_mm: float = 170, height_mm: float = 40) -> Chart:
    """PIT histograms by horizon group: a flat histogram means well-calibrated densities."""
    groups = assessment.calibration.pit
    with matplotlib.rc_context(_RC):
        fig = _figure(width_mm, height_mm)
        axes = fig.subplots(1, max(len(groups), 1), sharey=True)
        axes = np.atleast_1d(axes)
        for ax, group in zip(axes, groups, strict=True):
            counts = np.array(group.counts, dtype=float)
            share = counts / counts.sum() * len(counts)
            edges = np.linspace(0, 1, len(counts) + 1)
            ax.bar(
                edges[:-1],
                share,
                width=np.diff(edges),
                align="edge",
                color=FAN["80%"],
                edgecolor=INK,
                linewidth=0.4,
            )
            ax.axhline(1.0, color=INK, lw=0.8, ls=(0, (3, 2)))
            ax.set_title(
                f"{group.h_from}\u2013{group.h_to} {_units(assessment)} ahead"
                if group.h_from != group.h_to
                else f"{group.h_from} {_units(assessment)} ahead",
                fontsize=7.5,
            )
            ax.set_xticks([0, 0.5, 1], ["0", "0.5", "1"])
            ax.spines[["top", "right"]].set_visible(False)
        axes[0].set_ylabel("density (1 = uniform)")
        fig.supxlabel("PIT of the outcome", fontsize=7.5)
        return Chart("pit", _svg(fig), width_mm, height_mm)


def reliability(assessment: Assessment, width_mm: float = 80, height_mm: float = 62) -> Chart:
    """Said-versus-happened for P(inside): the forecast probability against the observed
    frequency, bins of 10 points, each labelled with its count."""
    table = assessment.calibration.brier.reliability
    with matplotlib.rc_context(_RC):
        fig = _figure(width_mm, height_mm)
        ax = fig.add_subplot()
        ax.plot(
            [0, 100], [0, 100], color=BAND_EDGE, lw=0.8, ls=(0, (3, 2)), label="said = happened"
        )
        x = [100 * r.forecast_mean for r in table]
        y = [100 * r.observed_frequency for r in table]
        ax.plot(
            x,
            y,
            color=OUTCOME_STYLE["inside"]["color"],
            marker="o",
            markersize=3.5,
            lw=1.2,
            label="past statements",
        )
        for xi, yi, r in zip(x, y, table, strict=True):
            # Each count on the side of its point away from the diagonal, so it never sits
            # on the said = happened line.
            above = yi >= xi
            ax.annotate(
                str(r.n),
                (xi, yi),
                xytext=(-3, 4) if above else (3, -4),
                textcoords="offset points",
                ha="right" if above else "left",
                va="bottom" if above else "top",
                fontsize=6,
                color=BAND_EDGE,
            )
        ax.legend(
            fontsize=6.5, frameon=False, ncol=2, loc="upper center", bbox_to_anchor=(0.5, -0.22)
        )
        ax.set_xlim(0, 100)
        ax.set_ylim(0, 100)
        ax.set_xlabel("said: probability inside, %")
        ax.set_ylabel("happened: share inside, %")
        ax.grid(color=GRID, lw=0.4)
        ax.spines[["top", "right"]].set_visible(False)
        return Chart("reliability", _svg(fig), width_mm, height_mm)
