"""Figures of the design review report: rail sweeps, error against margin, Monte Carlo spread.

The sweep data come from :mod:`selector.physics.sweeps`. The figures are
plain :class:`matplotlib.figure.Figure` objects drawn without ``pyplot``, so making them
changes no global backend; :func:`svg_markup` turns one into inline SVG for an HTML page
and :func:`png_bytes` rasterises it with the Agg backend.

The style is our own and survives black-and-white print: every curve differs by line
style and marker, not by colour alone, and windows are hatched as well as tinted.
"""

from __future__ import annotations

import io
import re

import numpy as np

from selector.physics.montecarlo import MonteCarloResult
from selector.physics.sweeps import Sweep
from selector.search.ranking import pareto_front
from selector.spec.rail_spec import RailSpec
from selector.spec.units import format_quantity

#: Histogram bins of the Monte Carlo figure.
HISTOGRAM_BINS = 60

#: Ink of the four curves: dark, print-safe hues of our own choosing.
INKS: tuple[str, ...] = ("#14323f", "#8a4b08", "#3d6b35", "#6b2d5c")
#: Line style and marker per curve, so curves stay apart in black-and-white print.
LINE_STYLES: tuple[str, ...] = ("-", "--", "-.", ":")
MARKERS: tuple[str, ...] = ("o", "s", "^", "D")
WINDOW_TINT = "#d9d4c7"
RANGE_TINT = "#efefef"

#: rcParams of the report figures (applied per figure, never globally).
STYLE: dict[str, object] = {
    "font.family": "DejaVu Sans",
    "font.size": 9.0,
    "axes.titlesize": 10.0,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    # A fixed title place: placing it automatically measures every tick label again.
    "axes.titley": 1.02,
    "axes.labelsize": 9.0,
    "axes.edgecolor": "#333333",
    "axes.linewidth": 0.8,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "grid.color": "#b0b0b0",
    "grid.linestyle": ":",
    "grid.linewidth": 0.6,
    "legend.frameon": False,
    "legend.fontsize": 8.0,
    "lines.linewidth": 1.6,
    "lines.markersize": 4.5,
    "hatch.color": "#8c8575",
    "hatch.linewidth": 0.6,
    "svg.fonttype": "none",
    "svg.hashsalt": "railwright-report",
}

#: The worst-case band of a sweep, and the part of it outside the window.
BAND_TINT = "#9fb3c8"
OUTSIDE_TINT = "#c0392b"

#: Figure size [inch], and the axes' place in it [fraction of the figure].
FIGURE_SIZE = (7.2, 3.8)
FIGURE_MARGINS = dict(left=0.09, right=0.62, bottom=0.13, top=0.91)


# Figures -------------------------------------------------------------------------------


def _figure():
    from matplotlib.figure import Figure
    from matplotlib.ticker import MaxNLocator

    figure = Figure(figsize=FIGURE_SIZE)
    # Fixed margins: a layout engine costs more than drawing the figure.
    figure.subplots_adjust(**FIGURE_MARGINS)
    axes = figure.add_subplot()
    for axis in (axes.xaxis, axes.yaxis):
        axis.set_major_locator(MaxNLocator(nbins=6))
    return figure, axes


def styled(make):
    """Run a figure-making function under :data:`STYLE` without touching global rcParams."""
    import matplotlib

    with matplotlib.rc_context(STYLE):
        return make()


def _window(axes, spec: RailSpec, *, vertical: bool = False) -> None:
    low, high = spec.target_v - spec.tolerance_v, spec.target_v + spec.tolerance_v
    span = axes.axvspan if vertical else axes.axhspan
    span(low, high, facecolor=WINDOW_TINT, edgecolor="#8c8575", hatch="////", alpha=0.55, linewidth=0.0,
         label=f"window {format_quantity(spec.target_v, 'V')} ± {format_quantity(spec.tolerance_v, 'V')}", zorder=0)
    line = axes.axvline if vertical else axes.axhline
    line(spec.target_v, color="#333333", linewidth=0.8, linestyle=(0, (6, 3)), zorder=1)


def sweep_figure(sweep: Sweep, spec: RailSpec, title: str):
    """Line figure of a :class:`Sweep` with the tolerance window hatched and the spec range tinted.

    Returns
    -------
    matplotlib.figure.Figure
    """

    def make():
        figure, axes = _figure()
        _window(axes, spec)
        axes.axvspan(*sweep.spec_range, facecolor=RANGE_TINT, zorder=-1, linewidth=0.0, label="spec range")  # under the window
        if sweep.band_low_v is not None:
            axes.fill_between(sweep.x, sweep.band_low_v, sweep.band_high_v, color=BAND_TINT, alpha=0.45, linewidth=0.0,
                              zorder=2, label="worst-case band (parts, R at tolerance)")  # fmt: skip
            if sweep.outside_window(spec).any():
                # Only what lies beyond the window is red: how far out, and where.
                with np.errstate(invalid="ignore"):
                    above, below = sweep.band_high_v > spec.rail_max_v, sweep.band_low_v < spec.rail_min_v
                axes.fill_between(sweep.x, np.maximum(sweep.band_low_v, spec.rail_max_v), sweep.band_high_v,
                                  where=above, color=OUTSIDE_TINT, alpha=0.7, linewidth=0.0, zorder=2,
                                  label="band outside the window")  # fmt: skip
                axes.fill_between(sweep.x, sweep.band_low_v, np.minimum(sweep.band_high_v, spec.rail_min_v),
                                  where=below, color=OUTSIDE_TINT, alpha=0.7, linewidth=0.0, zorder=2)  # fmt: skip
        every = max(sweep.x.size // 8, 1)
        for i, (curve, label) in enumerate(zip(sweep.vout_v, sweep.labels, strict=True)):
            axes.plot(sweep.x, curve, color=INKS[i % 4], linestyle=LINE_STYLES[i % 4], marker=MARKERS[i % 4],
                      markevery=(i * every // 4, every), markerfacecolor="white", label=label, zorder=3)
        axes.set_xlabel("supply [V]" if sweep.quantity == "supply" else "ambient [°C]")
        axes.set_ylabel("rail [V]")
        axes.set_title(title)
        axes.legend(loc="center left", bbox_to_anchor=(1.02, 0.5))
        return figure

    return styled(make)


def error_margin_figure(
    error_v: np.ndarray,
    margin: np.ndarray,
    shortlist_error_v: np.ndarray,
    shortlist_margin: np.ndarray,
    shortlist_rank: np.ndarray,
    spec: RailSpec,
    title: str,
):
    """Worst-case error against dissipation margin, Pareto front drawn, shortlist labelled.

    Parameters
    ----------
    error_v, margin : arrays [V], [1]
        Every design to plot (feasible designs the search returned).
    shortlist_error_v, shortlist_margin, shortlist_rank : arrays [V], [1], [1]
        The shortlist, labelled with its ranks.
    spec : RailSpec
        For the tolerance line.
    title : str

    Returns
    -------
    matplotlib.figure.Figure

    Notes
    -----
    The front is the designs no other design beats on both error (lower) and margin
    (higher), from :func:`selector.search.ranking.pareto_front` with the part count held equal.
    """
    error_v, margin = np.asarray(error_v, dtype=float), np.asarray(margin, dtype=float)

    def make():
        figure, axes = _figure()
        axes.axhspan(0.0, spec.tolerance_v * 1e3, facecolor=WINDOW_TINT, edgecolor="#8c8575", hatch="////",
                     alpha=0.55, linewidth=0.0, zorder=0, label="meets the tolerance")
        axes.scatter(100 * margin, 1e3 * error_v, s=10, facecolors="none", edgecolors="#5a5a5a", linewidths=0.6,
                     label=f"feasible designs ({error_v.size})", zorder=2)
        if error_v.size:
            front = pareto_front(error_v, margin, np.zeros(error_v.size))
            order = np.argsort(margin[front])
            axes.step(100 * margin[front][order], 1e3 * error_v[front][order], where="post", color=INKS[1],
                      linestyle="--", marker="v", markerfacecolor="white", label="Pareto front", zorder=3)
        axes.scatter(100 * np.asarray(shortlist_margin), 1e3 * np.asarray(shortlist_error_v), s=30, marker="s",
                     color=INKS[0], label="shortlist", zorder=4)
        for rank, x, y in zip(shortlist_rank, shortlist_margin, shortlist_error_v, strict=True):
            axes.annotate(str(int(rank)), (100 * x, 1e3 * y), xytext=(4, 3), textcoords="offset points",
                          fontsize=8, color=INKS[0], zorder=5)
        axes.set_xlabel("dissipation margin [%]")
        axes.set_ylabel("worst-case error [mV]")
        axes.set_title(title)
        axes.legend(loc="center left", bbox_to_anchor=(1.02, 0.5))
        return figure

    return styled(make)


def monte_carlo_figure(result: MonteCarloResult, spec: RailSpec, title: str):
    """Histograms of each unit's lowest and highest rail over its environment corners,
    against the hatched tolerance window: a unit passes only if both lie inside.

    Returns
    -------
    matplotlib.figure.Figure
    """
    solved = np.isfinite(result.unit_low_v)
    lows, highs = result.unit_low_v[solved], result.unit_high_v[solved]

    def make():
        figure, axes = _figure()
        _window(axes, spec, vertical=True)
        if lows.size:
            bins = np.histogram_bin_edges(np.concatenate([lows, highs]), bins=HISTOGRAM_BINS)
            axes.hist(lows, bins=bins, histtype="stepfilled", facecolor="#9fb3bd", edgecolor=INKS[0], alpha=0.75,
                      linewidth=1.0, zorder=2, label=f"lowest rail of each unit ({lows.size})")
            axes.hist(highs, bins=bins, histtype="step", edgecolor=INKS[1], linestyle=LINE_STYLES[1],
                      linewidth=1.4, zorder=3, label=f"highest rail of each unit ({highs.size})")
        axes.set_xlabel("rail [V]")
        axes.set_ylabel("units")
        axes.set_title(title)
        axes.text(0.99, 0.97, f"yield {result.yield_fraction:.2%}\n95 % {result.yield_low:.2%} … "
                  f"{result.yield_high:.2%}\nseed {result.seed}", transform=axes.transAxes, ha="right", va="top",
                  fontsize=8)  # fmt: skip
        axes.legend(loc="center left", bbox_to_anchor=(1.02, 0.5))
        return figure

    return styled(make)


# Output --------------------------------------------------------------------------------

_XML_PROLOGUE = re.compile(r"\A.*?(?=<svg\b)", re.DOTALL)
_NAMESPACE = re.compile(r'\s+xmlns(?::\w+)?="[^"]*"')


def svg_markup(figure, prefix: str) -> str:
    """The figure as an ``<svg>`` element to place inside an HTML page.

    The XML prologue, DOCTYPE and namespace declarations go (HTML parsers supply the SVG
    namespace), ``xlink:href`` becomes SVG 2 ``href``, and every ``id`` is given
    ``prefix`` so that several figures on one page never share an id.

    Parameters
    ----------
    figure : matplotlib.figure.Figure
    prefix : str
        Letters, digits and hyphens, unique on the page.
    """
    import matplotlib

    buffer = io.StringIO()
    with matplotlib.rc_context(STYLE):
        figure.savefig(buffer, format="svg", metadata={"Creator": None, "Date": None, "Format": None, "Type": None})
    text = _XML_PROLOGUE.sub("", buffer.getvalue(), count=1)
    text = _NAMESPACE.sub("", text).replace("xlink:href=", "href=")
    text = re.sub(r'\bid="', f'id="{prefix}-', text)
    text = text.replace('href="#', f'href="#{prefix}-').replace("url(#", f"url(#{prefix}-")
    return text.strip()


def png_bytes(figure, dpi: int = 150) -> bytes:
    """The figure rasterised to PNG with the Agg backend (written by the caller through
    :func:`selector.files.output_files.write_atomically`)."""
    import matplotlib

    buffer = io.BytesIO()
    with matplotlib.rc_context(STYLE):
        figure.savefig(buffer, format="png", dpi=dpi, metadata={"Software": None})
    return buffer.getvalue()
