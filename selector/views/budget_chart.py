"""The error budget as a horizontal bar chart: each source's exact shift below and above
the nominal rail, largest at the top, with the small-signal estimate marked on each bar
(:func:`selector.physics.error_budget.error_budget`)."""

from __future__ import annotations

import numpy as np

from selector.physics.error_budget import INTERACTION, BudgetLine
from selector.views.plots import styled

#: Bar colours: a source's shift, the interaction remainder, the linear estimate's marks.
SOURCE_COLOUR = "#4b6a88"
INTERACTION_COLOUR = "#b0a58c"
LINEAR_COLOUR = "#1b1b1b"


def budget_figure(lines: list[BudgetLine], nominal_v: float, title: str):
    """A matplotlib Figure of one design's error budget (shifts in mV from ``nominal_v``)."""

    def make():
        from matplotlib.figure import Figure

        shown = [line for line in lines if np.isfinite(line.size_v)][::-1]
        figure = Figure(figsize=(7.2, 0.9 + 0.32 * max(len(shown), 1)))
        figure.subplots_adjust(left=0.36, right=0.97, bottom=0.5 / figure.get_figheight() * 1.6, top=0.88)
        axes = figure.add_subplot()
        rows = np.arange(len(shown))
        for side in ("low_v", "high_v"):
            values = np.array([1e3 * getattr(line, side) for line in shown])
            colours = [INTERACTION_COLOUR if line.source == INTERACTION else SOURCE_COLOUR for line in shown]
            axes.barh(rows, values, color=colours, height=0.62, zorder=2)
        for side in ("linear_low_v", "linear_high_v"):
            values = np.array([1e3 * getattr(line, side) for line in shown])
            axes.scatter(values, rows, marker="|", s=90, color=LINEAR_COLOUR, zorder=3,
                         label="small-signal estimate" if side == "linear_low_v" else None)
        axes.axvline(0.0, color="#333333", linewidth=0.8)
        axes.set_yticks(rows, [line.source for line in shown])
        axes.set_xlabel(f"rail shift from the nominal {nominal_v:.4g} V [mV]")
        axes.set_title(title)
        axes.grid(axis="x", zorder=0)
        if any(np.isfinite(line.linear_low_v) for line in shown):
            axes.legend(loc="lower right")
        return figure

    return styled(make)
