"""Figures: the pictures a report carries, as PNG bytes with caption and alt text.

==================================  ===============================================
Name                                What it draws
==================================  ===============================================
:class:`RenderedFigure`             one finished picture (PNG bytes, size, texts)
:func:`render_figures`              every figure the narrative asks for, in order
:class:`FigureSize`                 the size a figure is drawn at: :data:`PAGE_SIZE`, :data:`MEMO_SIZE`
:func:`histogram`                   the engine's bin plan, density curve, mean and median
:func:`dot_plot`                    one dot per value, at its value, stacked in the plan's bins
:func:`draws_curve`                 whether the histogram's density curve agrees with its bars
:func:`with_and_without`            where flagged values sit; how mean and median move
:func:`bin_sensitivity_panel`       small multiples over the bin widths and offsets tried
:class:`LocaleTickFormatter`        axis tick labels through the report's number formatter
:data:`PALETTE`                     the colours used, from Okabe & Ito (2008)
==================================  ===============================================

Words on a figure (axis titles, the words "mean" and "median", row names) come
from :attr:`FigureText.labels`, which the phrase builder fills from the phrase
bank; numbers on the axes go through :class:`narrator.phrasing.numbers.
NumberFormatter`, so a German report shows ``1.000`` where an English one shows
``1,000``. The label keys each figure reads are listed in :data:`LABEL_KEYS`.

Design choices, and why:

* Mean and median differ by line style (solid vs dashed), by marker shape and
  by a direct text label, never by colour alone, so the figure survives
  grey-scale printing and colour-blind readers.
* Colours come from the palette of Okabe & Ito (2008, "Color universal design",
  J*Fly), chosen to stay distinct under the common colour-vision deficiencies.
* The object-oriented matplotlib API (``Figure`` + ``FigureCanvasAgg``) is used
  without pyplot: no global figure state, safe from several threads, no display.
* Every style property is set explicitly rather than read from rcParams, so a
  user's matplotlibrc cannot change a report, and the PNG bytes are stable
  (no "Software" or date chunk is written).
* A figure is drawn at the size it is placed at (:class:`FigureSize`), never drawn big and
  scaled down, so its font sizes are the sizes on paper: a memo's figure is drawn shorter and
  narrower (:data:`MEMO_SIZE`), with the same fonts as a full report's.
* Beyond :data:`MARKER_LIMIT` values no figure draws one marker per value; the
  with-and-without view then shows a density band and at most
  :data:`FLAGGED_DRAW_LIMIT` flagged values.

The stacked dot plot follows Wilkinson (1999, "Dot plots", The American
Statistician 53), with stacks counted in the histogram plan's bins (the
"histodot" variant) so the dot plot and the histogram agree on where values
fall; each dot is drawn at its own value, so no dot sits on the wrong side of
the median line.
"""

from __future__ import annotations

import io
import math
import sys
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from matplotlib import ticker, transforms
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import LineCollection
from matplotlib.container import BarContainer
from matplotlib.figure import Figure
from matplotlib.font_manager import FontProperties
from matplotlib.lines import Line2D
from matplotlib.patches import Rectangle, StepPatch
from matplotlib.text import Text
from matplotlib.transforms import blended_transform_factory
from PIL import Image

from narrator.engine.window import histogram_window
from narrator.errors import NarratorError
from narrator.figures.rendered import RenderedFigure
from narrator.findings import Findings
from narrator.phrasing.narrative import FigureText, Narrative
from narrator.phrasing.numbers import SCIENTIFIC_DIGITS, SCIENTIFIC_FROM, NumberFormatter
from narrator.reading.sample import Sample

# Okabe & Ito (2008) palette, by their names. Only some are used; the rest are
# kept so a reader of this module sees the whole set the choice was made from.
PALETTE = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish_purple": "#CC79A7",
}
BAR_FILL = "#CFE3EE"  # sky blue mixed with white, so lines drawn over the bars stay readable
BAR_EDGE = "#FFFFFF"
CURVE = PALETTE["blue"]
MEAN_COLOUR = PALETTE["vermillion"]
MEDIAN_COLOUR = PALETTE["black"]
FLAGGED_COLOUR = PALETTE["vermillion"]
KEPT_COLOUR = PALETTE["blue"]
AXIS_GREY = "#555555"
GRID_GREY = "#E4E4E4"
MEAN_STYLE = "-"
MEDIAN_STYLE = (0, (5, 2.5))  # long dashes: distinct from the solid mean line in print

FONT_FAMILY = "DejaVu Sans"  # ships with matplotlib, so every machine draws the same glyphs
FONT_SIZE = 8.5
SMALL_FONT_SIZE = 7.5
DPI = 180
# 15.2 cm wide fits the text block of A4 and US Letter pages with 2.5 cm margins.
PAGE_WIDTH_IN = 6.0



@dataclass(frozen=True, slots=True)
class FigureSize:
    """The size a figure is drawn at, in inches; the writer places it at this width (or the text's, if narrower).

    ``height_in`` is a histogram's height and a dot plot's greatest; ``group_row_in`` is the height of
    one row of the groups' figure (:mod:`narrator.figures.group_chart`). The other figures take their
    heights from their content.
    """

    width_in: float
    height_in: float
    group_row_in: float


PAGE_SIZE = FigureSize(width_in=PAGE_WIDTH_IN, height_in=3.3, group_row_in=0.62)
# A memo's page holds the summary, the small table, this figure and the compact block. Our choice.
MEMO_SIZE = FigureSize(width_in=5.5, height_in=1.8, group_row_in=0.4)


def figure_size(audience: str) -> FigureSize:
    """The size the figures of a report for ``audience`` are drawn at: a memo's are smaller.

    >>> figure_size("memo") is MEMO_SIZE, figure_size("full") is PAGE_SIZE
    (True, True)
    """
    return MEMO_SIZE if audience == "memo" else PAGE_SIZE


# Margins around a single plot, in inches: room for tick labels and axis titles.
_LEFT_IN, _RIGHT_IN, _BOTTOM_IN, _TOP_IN = 0.75, 0.2, 0.55, 0.15

MARKER_LIMIT = 5_000  # beyond this, no marker per value
FLAGGED_DRAW_LIMIT = 400
DOT_PLOT_LIMIT = 1_000  # a dot plot of more values is unreadable; the histogram serves
MAX_PANEL_BINS = 400

# Label keys each figure needs (a missing one is an error: a figure must not go
# out with unlabelled marks) and those it uses when given.
LABEL_KEYS: Mapping[str, tuple[str, ...]] = {
    "histogram": ("x", "y", "mean", "median"),
    "dotplot": ("x", "mean", "median"),
    "with_without": ("mean", "median", "all", "without"),
    "bin_sensitivity": ("x",),  # plus width_<i> and offset_<j> for every width and offset
}
OPTIONAL_LABEL_KEYS: Mapping[str, tuple[str, ...]] = {
    "histogram": ("density",),
    "dotplot": ("y", "flagged", "kept"),
    "with_without": ("x", "y", "flagged", "kept"),  # the value axis takes "x", else "y"
    "bin_sensitivity": (),  # no count axis: the panels show where peaks are, not counts
}


# --------------------------------------------------------------------------- public


def render_figures(
    findings: Findings, sample: Sample, narrative: Narrative, *, locale: str
) -> list[RenderedFigure]:
    """Render every figure the narrative carries a text for, in the narrative's order.

    ``narrative.figures`` holds one :class:`FigureText` per figure the document
    plan wants; its ``key`` picks the drawing function (see :data:`DRAWERS`).
    They are drawn at the size of the narrative's audience (:func:`figure_size`).
    """
    size = figure_size(narrative.audience)
    rendered = []
    for text in narrative.figures:
        drawer = DRAWERS.get(text.key)
        if drawer is None:
            known = ", ".join(sorted(DRAWERS))
            raise NarratorError(f"figure {text.key!r} is not one narrator draws (known: {known})")
        # Near the largest double, layout arithmetic inside matplotlib overflows to inf harmlessly
        # (every limit and edge is clamped); keep its warnings off the user's terminal.
        with np.errstate(over="ignore"):
            rendered.append(drawer(findings, sample, text, locale=locale, size=size))
    return rendered


# --------------------------------------------------------------------------- drawing
# Each _draw_* builds the matplotlib Figure; the public functions below render it.


def _draw_histogram(
    findings: Findings, sample: Sample, text: FigureText, *, locale: str, size: FigureSize = PAGE_SIZE
) -> Figure:

    labels = _labels(text, "histogram")
    plan = _require(findings.histogram, "histogram", "a bin plan")
    # Far-out values would squeeze the bulk: the engine's focused plan bins the bulk at the rule's width.
    plan = findings.histogram_focus or plan
    curve_of = findings.density_focus or findings.density  # the focused curve comes with the focused plan
    center = _require(findings.center, "histogram", "a mean and median")
    numbers = NumberFormatter(locale)
    edges = np.asarray(plan.edges, dtype=float)
    counts = np.asarray(plan.counts, dtype=float)

    fig, ax = _single_axes(size.width_in, height_in=size.height_in)
    _value_scale(ax, edges[0], edges[-1])
    _add_bars(ax, edges, counts, linewidth=0.6 if counts.size <= 120 else 0.0)
    ax.set_xlim(_padded(edges[0], edges[-1], 0.01))
    top = float(counts.max()) if counts.size else 1.0
    if curve_of is not None and curve_of.grid and draws_curve(findings, plan, curve_of):
        grid = np.asarray(curve_of.grid, dtype=float)
        curve = np.asarray(curve_of.values, dtype=float) * findings.n * plan.width
        ax.plot(grid, curve, color=CURVE, linewidth=1.5, zorder=3, solid_capstyle="round")
        shown = (grid >= edges[0]) & (grid <= edges[-1])
        top = max(top, float(np.nanmax(curve[shown] if shown.any() else curve)))
        if labels.get("density"):
            _label_curve(fig, ax, grid, curve, labels["density"], avoid=(center.mean, center.median))
    ax.set_ylim(0, top * 1.16 if top > 0 else 1)
    window = histogram_window(findings)
    if window is not None:
        # Show the bulk; the words beside the edge say what lies beyond (narrator.engine.window).
        ax.set_xlim(_padded(window.low, window.high, 0.01))
        for key, x, align in (("beyond_high", 0.995, "right"), ("beyond_low", 0.005, "left")):
            if labels.get(key):
                ax.text(x, 0.55, labels[key], transform=ax.transAxes, ha=align, va="bottom",
                        fontproperties=_font(SMALL_FONT_SIZE), color=FLAGGED_COLOUR, zorder=6)
    _mark_center(ax, center.mean, center.median, labels)
    _finish_axes(ax, numbers, labels["x"], labels["y"], integer_y=True)
    return fig


# A density curve is drawn over the bars only when it agrees with them (the issue a reader sees when it does
# not: a curve half as high again as the bar at 0, or peaking two bins from the tallest bar). Our cut points.
CURVE_HEIGHT_RANGE = (0.5, 1.5)  # the curve's highest point, in tallest bars
CURVE_PEAK_REACH_BINS = 3  # the curve's highest point lies within this many bin widths of the tallest bar
MIN_CURVE_VALUES = 5  # as narrator.phrasing.licences.TINY_N: a curve through two to four values says nothing
FEW_WHOLE_VALUES = 30  # whole numbers in bins of width 1 spanning at most this many: the bars are the distribution


def draws_curve(findings: Findings, plan, curve_of) -> bool:
    """Whether the histogram carries its density curve (see CURVE_HEIGHT_RANGE and CURVE_PEAK_REACH_BINS).

    No curve for whole numbers with many ties: a count per whole number (bins of width 1 over at most
    ``FEW_WHOLE_VALUES`` values, or a column the engine flagged for many ties or few distinct values) is
    the distribution itself, and a smooth curve over it invents values between the whole numbers. Any
    other curve is drawn only when its highest point is 0.5 to 1.5 times the tallest bar and within three
    bin widths of it (the curve is scaled to counts: density x n x bin width).
    """
    counts = np.asarray(plan.counts, dtype=float)
    if curve_of is None or not curve_of.grid or counts.size == 0 or counts.max() <= 0 or findings.n < MIN_CURVE_VALUES:
        return False
    quality = findings.quality
    if findings.variable.integer_valued and (
            quality.has("many_ties") or quality.has("few_distinct")
            or (plan.width <= 1 and len(plan.counts) <= FEW_WHOLE_VALUES)):
        return False
    edges = np.asarray(plan.edges, dtype=float)
    grid = np.asarray(curve_of.grid, dtype=float)
    curve = np.asarray(curve_of.values, dtype=float) * findings.n * plan.width
    shown = (grid >= edges[0]) & (grid <= edges[-1])
    if not shown.any():
        return False
    peak = int(np.argmax(np.where(shown, curve, -np.inf)))
    tallest = int(np.argmax(counts))
    height = curve[peak] / counts[tallest]
    centre = (edges[tallest] + edges[tallest + 1]) / 2
    near = abs(grid[peak] - centre) <= CURVE_PEAK_REACH_BINS * plan.width
    return CURVE_HEIGHT_RANGE[0] <= height <= CURVE_HEIGHT_RANGE[1] and near


def _add_bars(ax: Axes, edges: np.ndarray, counts: np.ndarray, *, linewidth: float) -> None:
    """The histogram's bars, as ``ax.bar(edges[:-1], counts, width=np.diff(edges), align="edge")`` adds them.

    The same rectangles, in the same order, with the same colours, zorder, label and sticky
    bottom edge, in a BarContainer; but the data limits are updated once for all bars, where
    Axes.bar updates them bar by bar through transform arithmetic (half the time of the whole
    figure at 150 bars). The histogram sets both view limits itself, so nothing reads them.
    """
    bars = []
    for left, width, height in zip(edges[:-1], np.diff(edges), counts, strict=True):
        bar = Rectangle((left, 0.0), width, height, facecolor=BAR_FILL, edgecolor=BAR_EDGE, linewidth=linewidth,
                        label="_nolegend_", zorder=2)
        bar.sticky_edges.y.append(0.0)
        ax.add_artist(bar)
        bars.append(bar)
    ax.add_container(BarContainer(bars, datavalues=counts, orientation="vertical", label=""))
    if bars:
        ax.update_datalim([(float(edges[0]), 0.0), (float(edges[-1]), float(np.max(counts)))])


def _draw_dot_plot(
    findings: Findings, sample: Sample, text: FigureText, *, locale: str, size: FigureSize = PAGE_SIZE
) -> Figure:

    labels = _labels(text, "dotplot")
    plan = _require(findings.histogram, "dotplot", "a bin plan")
    center = _require(findings.center, "dotplot", "a mean and median")
    values = np.asarray(sample.values, dtype=float)
    if values.size > DOT_PLOT_LIMIT:
        raise NarratorError(
            f"a dot plot of {values.size} values would be unreadable (limit {DOT_PLOT_LIMIT}); "
            "use the histogram"
        )
    numbers = NumberFormatter(locale)
    plan_edges = np.asarray(plan.edges, dtype=float)
    x_low, x_high = _padded(plan_edges[0], plan_edges[-1], 0.01)
    axes_width_pt = (size.width_in - _LEFT_IN - _RIGHT_IN) * 72.0
    points_per_unit = axes_width_pt / (x_high - x_low)
    # At most the size's height (less 0.3 in); 20 % of the axes height stays free for the mean and median labels.
    tallest_room_pt = 0.8 * (size.height_in - 0.3 - _BOTTOM_IN - _TOP_IN) * 72.0
    width, index = _dot_bins(
        values, plan_edges, plan.width, points_per_unit, tallest_room_pt,
        integer_aligned=plan.integer_aligned,
    )
    centers = plan_edges[0] + (np.arange(index.max() + 1 if index.size else 1) + 0.5) * width
    stack_height = np.bincount(index, minlength=centers.size)
    tallest = int(stack_height.max()) if values.size else 1
    diameter_pt = min(width * points_per_unit, tallest_room_pt / max(tallest, 1))
    # Shrink the figure to the tallest stack, so short stacks leave no empty band.
    axes_height_pt = max(tallest * diameter_pt / 0.8, 72.0)
    fig, ax = _single_axes(size.width_in, height_in=axes_height_pt / 72.0 + _BOTTOM_IN + _TOP_IN)
    _value_scale(ax, x_low, x_high)
    ax.set_xlim(x_low, x_high)
    ax.set_ylim(0, axes_height_pt)  # y in points, so dots stay round
    order = np.lexsort((values, index))  # within a stack, smaller values at the bottom
    level = np.empty(values.size, dtype=float)
    seen: dict[int, int] = {}
    for position in order:
        bin_index = int(index[position])
        level[position] = seen.get(bin_index, 0)
        seen[bin_index] = seen.get(bin_index, 0) + 1
    flagged = _flagged_mask(findings, sample)
    # Each dot sits at its own value (the caption says each dot is one value); the bins only stack them.
    x_dots, y_dots = values, (level + 0.5) * diameter_pt
    ax.scatter(
        x_dots[~flagged], y_dots[~flagged], s=(0.86 * diameter_pt) ** 2, marker="o",
        facecolor=BAR_FILL, edgecolor=CURVE, linewidth=0.7, zorder=3, label=labels.get("kept") or None,
    )
    if flagged.any():
        # Flagged values: filled triangles, so shape and fill (not only colour) set them apart.
        ax.scatter(
            x_dots[flagged], y_dots[flagged], s=(1.0 * diameter_pt) ** 2, marker="^",
            facecolor=FLAGGED_COLOUR, edgecolor=PALETTE["black"], linewidth=0.4, zorder=3,
            label=labels.get("flagged") or None,
        )
        if labels.get("flagged"):
            _legend(ax, loc="upper right")
    _mark_center(ax, center.mean, center.median, labels)
    _finish_axes(ax, numbers, labels["x"], labels.get("y", ""), integer_y=False)
    # Count ticks: a stack of k dots reaches k * diameter.
    step = _nice_count_step(tallest)
    ticks = np.arange(0, tallest + 1, step)
    ax.yaxis.set_major_locator(ticker.FixedLocator(ticks * diameter_pt))
    ax.yaxis.set_major_formatter(
        ticker.FixedFormatter([numbers.fixed(float(t), 0) for t in ticks])
    )
    return fig


def _draw_with_and_without(
    findings: Findings, sample: Sample, text: FigureText, *, locale: str, size: FigureSize = PAGE_SIZE
) -> Figure:

    labels = _labels(text, "with_without")
    value_axis = labels.get("x") or labels.get("y") or ""
    center = _require(findings.center, "with_without", "a mean and median")
    without = findings.without_outliers
    numbers = NumberFormatter(locale)
    values = np.asarray(sample.values, dtype=float)
    flagged_mask = _flagged_mask(findings, sample)
    flagged = np.sort(values[flagged_mask])
    kept = values[~flagged_mask]

    fig = Figure(figsize=(size.width_in, 3.0), dpi=DPI, facecolor="white")
    FigureCanvasAgg(fig)
    left, right = 1.55 / size.width_in, 0.25 / size.width_in
    strip = fig.add_axes((left, 0.54, 1 - left - right, 0.36))
    rows = fig.add_axes((left, 0.19, 1 - left - right, 0.29), sharex=strip)

    low = float(values.min()) if values.size else 0.0
    high = float(values.max()) if values.size else 1.0
    window = histogram_window(findings)
    if window is not None:  # the bulk, as the histogram shows it; the words by the edge say what lies beyond
        low, high = window.low, window.high
        for key, x, align in (("beyond_high", 0.995, "right"), ("beyond_low", 0.005, "left")):
            if labels.get(key):
                strip.text(x, 0.98, labels[key], transform=strip.transAxes, ha=align, va="top",
                           fontproperties=_font(SMALL_FONT_SIZE), color=FLAGGED_COLOUR, zorder=6)
    _value_scale(strip, low, high)
    strip.set_xlim(_padded(low, high, 0.03))
    if values.size <= MARKER_LIMIT:
        jitter = _spread_positions(kept.size)
        strip.scatter(
            kept, jitter, s=16, marker="o", facecolor="none", edgecolor=KEPT_COLOUR,
            linewidth=0.8, zorder=3, label=labels.get("kept") or None,
        )
    else:
        _density_band(strip, findings, kept)
        if labels.get("kept"):
            strip.add_line(Line2D([], [], color=BAR_FILL, linewidth=6, label=labels["kept"]))
    drawn = flagged
    if flagged.size > FLAGGED_DRAW_LIMIT:
        drawn = flagged[np.linspace(0, flagged.size - 1, FLAGGED_DRAW_LIMIT).round().astype(int)]
    strip.scatter(
        drawn, _spread_positions(drawn.size, phase=0.37), s=30 if drawn.size <= 100 else 14, marker="^",
        facecolor=FLAGGED_COLOUR, edgecolor=PALETTE["black"], linewidth=0.5, zorder=4,
        label=labels.get("flagged") or None,
    )
    strip.set_ylim(-0.12, 1.12)
    strip.set_yticks([])
    for side in ("top", "right", "left", "bottom"):
        strip.spines[side].set_visible(False)
    strip.tick_params(axis="x", labelbottom=False, length=0)
    if labels.get("flagged") or labels.get("kept"):
        _legend(strip, loc="lower left", bbox_to_anchor=(0.0, 1.0), ncol=2)

    with_row, without_row = 1.0, 0.0
    mean_without = without.mean if without is not None and without.mean is not None else center.mean
    median_without = (
        without.median if without is not None and without.median is not None else center.median
    )
    for start, end, marker, colour, face in (
        (center.mean, mean_without, "D", MEAN_COLOUR, MEAN_COLOUR),
        (center.median, median_without, "s", MEDIAN_COLOUR, "white"),
    ):
        rows.plot([start, end], [with_row, without_row], color=GRID_GREY, linewidth=1.2, zorder=2)
        rows.scatter(
            [start, end], [with_row, without_row], s=38, marker=marker, facecolor=face,
            edgecolor=colour, linewidth=1.2, zorder=3,
        )
    # Direct labels on the upper row, pushed apart so they never overlap.
    mean_left = center.mean < center.median
    x_low, x_high = (float(v) for v in strip.get_xlim())
    for x, word, colour, to_left in (
        (center.mean, labels["mean"], MEAN_COLOUR, mean_left),
        (center.median, labels["median"], MEDIAN_COLOUR, not mean_left),
    ):
        if x_low <= x <= x_high:
            rows.annotate(
                word, (x, with_row), xytext=(-7 if to_left else 7, 6), textcoords="offset points",
                ha="right" if to_left else "left", va="bottom", color=colour,
                fontproperties=_font(SMALL_FONT_SIZE),
            )
    # A centre beyond the bulk the axis shows (the mean of all values, pulled out by far values) would
    # vanish and leave the row looking as if mean and median agreed: its word and an arrow at the edge
    # say it lies that way (its value is in the text, the caption's words beyond the edge and the alt text).
    for row, values_at in ((with_row, (center.mean, center.median)), (without_row, (mean_without, median_without))):
        for x, word, colour in zip(values_at, (labels["mean"], labels["median"]), (MEAN_COLOUR, MEDIAN_COLOUR),
                                   strict=True):
            if x_low <= x <= x_high:
                continue
            beyond_high = x > x_high
            rows.annotate(
                f"{word} →" if beyond_high else f"← {word}",
                (1.0 if beyond_high else 0.0, row), xycoords=blended_transform_factory(rows.transAxes, rows.transData),
                xytext=(0, 6), textcoords="offset points", ha="right" if beyond_high else "left", va="bottom",
                color=colour, fontproperties=_font(SMALL_FONT_SIZE), zorder=5,
            )
    rows.set_ylim(-0.6, 1.75)
    margin_pt = (left * size.width_in - 0.12) * 72.0
    rows.set_yticks([with_row, without_row],
                    [_fit_lines(labels[key], margin_pt, SMALL_FONT_SIZE) for key in ("all", "without")])
    rows.tick_params(axis="y", length=0, labelsize=SMALL_FONT_SIZE, labelfontfamily=FONT_FAMILY)
    rows.grid(axis="x", color=GRID_GREY, linewidth=0.6)
    rows.set_axisbelow(True)
    for side in ("top", "right", "left"):
        rows.spines[side].set_visible(False)
    _style_x(rows, numbers, value_axis)
    return fig


def _draw_bin_sensitivity(
    findings: Findings, sample: Sample, text: FigureText, *, locale: str, size: FigureSize = PAGE_SIZE
) -> Figure:
    """Small multiples, one histogram per width (rows) and offset (columns), drawn on one set of axes.

    The values are sorted once and each panel's counts are read off by binary search at its edges
    (numpy.histogram's counts: half-open bins, the last one closed); each panel is one filled and one
    outlined step patch placed by its own transform, so the twelve panels cost about one histogram.
    """
    labels = _labels(text, "bin_sensitivity")
    sensitivity = _require(findings.shape.bin_sensitivity, "bin_sensitivity", "bin sensitivity results")
    numbers = NumberFormatter(locale)
    values = np.sort(np.asarray(sample.values, dtype=float))
    if values.size == 0:
        raise NarratorError("figure 'bin_sensitivity' needs values to draw")
    widths, offsets = sensitivity.widths, sensitivity.offsets
    n_rows, n_cols = len(widths), len(offsets)
    missing = [f"width_{i}" for i in range(n_rows) if not labels.get(f"width_{i}")]
    missing += [f"offset_{j}" for j in range(n_cols) if not labels.get(f"offset_{j}")]
    if missing:
        raise NarratorError(
            f"figure 'bin_sensitivity': the phrase bank gave no label for {', '.join(missing)}"
        )
    panel_height = 0.95
    width_in = size.width_in
    fig = Figure(figsize=(width_in, 0.75 + panel_height * n_rows), dpi=DPI, facecolor="white")
    FigureCanvasAgg(fig)
    ax = fig.add_axes((0.0, 0.0, 1.0, 1.0))
    ax.set_axis_off()
    for axis in (ax.xaxis, ax.yaxis):  # no ticks are ever made for the hidden axes
        axis.set_major_locator(ticker.NullLocator())
    height_in = fig.get_figheight()
    left, right, top, bottom = 1.0 / width_in, 0.99, 1 - 0.3 / height_in, 0.5 / height_in
    # The panel grid of subplots_adjust(wspace=0.1, hspace=0.35), in figure fractions.
    panel_w = (right - left) / (n_cols + 0.1 * (n_cols - 1))
    panel_h = (top - bottom) / (n_rows + 0.35 * (n_rows - 1))
    low, high = float(values[0]), float(values[-1])
    x_low, x_high = _padded(low, high, 0.02)
    # Panels are placed in units of a power of ten when the values reach past HUGE_AXIS, so no
    # transform multiplies a span near the largest double (see _value_scale); labels show the values.
    # (``largest``, not ``top``: ``top`` is the panels' upper edge on the page, used below.)
    largest = max(abs(low), abs(high))
    unit = 10.0 ** math.floor(math.log10(largest)) if math.isfinite(largest) and largest > HUGE_AXIS else 1.0
    x_low, x_high = x_low / unit, x_high / unit
    ticks = [t for t in ticker.MaxNLocator(nbins=3, steps=[1, 2, 2.5, 5, 10]).tick_values(x_low, x_high)
             if x_low <= t <= x_high]
    formatter = LocaleTickFormatter(numbers)
    formatter.set_locs([t * unit for t in ticks])
    tick_font = _font(SMALL_FONT_SIZE - 1)
    label_font = _font(SMALL_FONT_SIZE - 0.5)
    point_w, point_h = 1.0 / (width_in * 72.0), 1.0 / (height_in * 72.0)  # one point, in figure fractions
    plan = findings.histogram
    whole = findings.variable.integer_valued or (plan is not None and plan.integer_aligned)
    segments: list[list[tuple[float, float]]] = []  # every panel's axis line and tick marks, drawn as one
    for row, width in enumerate(widths):
        y0 = top - (row + 1) * panel_h - row * 0.35 * panel_h
        for col, offset in enumerate(offsets):
            x0 = left + col * panel_w * 1.1
            edges = _offset_edges(low, high, width, offset, half_unit=whole)
            counts = np.diff(np.searchsorted(values, edges, side="left"))
            edges = edges / unit
            tallest = max(int(counts.max()), 1) * 1.05  # as the autoscaled count axis: 5 % headroom
            place = (transforms.Affine2D().translate(-x_low, 0.0)
                     .scale(panel_w / (x_high - x_low), panel_h / tallest).translate(x0, y0) + ax.transAxes)
            clip = Rectangle((x0, y0), panel_w, panel_h, transform=ax.transAxes)
            # Added as plain artists: the panels are placed by their own transforms, so the axes' data
            # limits (which matplotlib would work out from every step of every patch) are not needed.
            for patch in (StepPatch(counts, edges, fill=True, color=BAR_FILL, linewidth=0),
                          StepPatch(counts, edges, fill=False, color=CURVE, linewidth=0.6)):
                patch.set_transform(place)
                ax.add_artist(patch)
                patch.set_clip_path(clip)
            segments.append([(x0, y0), (x0 + panel_w, y0)])
            for tick in ticks:
                at = x0 + (tick - x_low) / (x_high - x_low) * panel_w
                segments.append([(at, y0), (at, y0 - 2 * point_h)])
                if row == n_rows - 1:
                    ax.text(at, y0 - 3.5 * point_h, formatter(tick * unit), transform=ax.transAxes, ha="center",
                            va="top", fontproperties=tick_font, color=AXIS_GREY)
            if row == 0:
                ax.text(x0, y0 + panel_h + 4 * point_h,
                        _fit_lines(labels[f"offset_{col}"], panel_w * width_in * 72.0, SMALL_FONT_SIZE - 0.5),
                        transform=ax.transAxes, ha="left", va="bottom", fontproperties=label_font)
            if col == 0:
                # Row titles in the left margin, level with the middle of the row.
                margin_pt = (x0 - 10 * point_w) * width_in * 72.0
                ax.text(x0 - 6 * point_w, y0 + panel_h / 2,
                        _fit_lines(labels[f"width_{row}"], margin_pt, SMALL_FONT_SIZE - 0.5),
                        transform=ax.transAxes, ha="right", va="center", fontproperties=label_font)
    ax.add_collection(LineCollection(segments, colors=AXIS_GREY, linewidths=0.8, transform=ax.transAxes))
    fig.supxlabel(labels["x"], fontproperties=_font(FONT_SIZE), y=0.02, x=0.5 + 0.5 / width_in)
    return fig


# --------------------------------------------------------------------------- rendering


def histogram(
    findings: Findings, sample: Sample, text: FigureText, *, locale: str, size: FigureSize = PAGE_SIZE
) -> RenderedFigure:
    """Histogram with the engine's bin plan, its density curve, and mean and median lines.

    Bars are the plan's counts (``findings.histogram``); the kernel density
    estimate (``findings.density``, reflected at a declared bound per Schuster
    1985) is scaled to counts as ``density * n * bin width`` so both share the
    count axis. ``sample`` is not read; it is accepted so every drawer has one
    signature.
    """
    return _render(_draw_histogram(findings, sample, text, locale=locale, size=size), text)


def dot_plot(
    findings: Findings, sample: Sample, text: FigureText, *, locale: str, size: FigureSize = PAGE_SIZE
) -> RenderedFigure:
    """Stacked dot plot: one dot per value, at its value, stacked within bins aligned to the engine's plan.

    Wilkinson (1999) dot plot, "histodot" form: the dots of a bin are stacked
    upward, so the height of a stack is its count and the dot diameter equals
    the bin width; each dot's horizontal place is its own value. The bins are the plan's own
    (``findings.histogram``) or, when the tallest stack would not fit the
    figure, the plan's bins split into 2, 4, 5, 10... equal parts, so every
    dot-plot bin lies inside one histogram bin and the two pictures agree.
    """
    return _render(_draw_dot_plot(findings, sample, text, locale=locale, size=size), text)


def with_and_without(
    findings: Findings, sample: Sample, text: FigureText, *, locale: str, size: FigureSize = PAGE_SIZE
) -> RenderedFigure:
    """Where the flagged values sit, and how the mean and median move without them.

    Top: every value as a strip, the flagged ones (``findings.outliers``) drawn
    as filled triangles and the others as open circles, so shape and fill both
    tell them apart. Above :data:`MARKER_LIMIT` values the others are drawn as
    a density band instead, and at most :data:`FLAGGED_DRAW_LIMIT` flagged
    values, evenly spread over their sorted order. Bottom: two rows, with all
    values and without the flagged ones, each showing the mean (diamond) and
    the median (square), joined across rows to show the move.
    """
    return _render(_draw_with_and_without(findings, sample, text, locale=locale, size=size), text)


def bin_sensitivity_panel(
    findings: Findings, sample: Sample, text: FigureText, *, locale: str, size: FigureSize = PAGE_SIZE
) -> RenderedFigure:
    """Small multiples of the histogram at each bin width and offset the engine tried.

    Rows are the widths of ``findings.shape.bin_sensitivity``, columns its
    offsets (fractions of a bin by which the edges move, as the engine placed
    them: edges at ``(j + offset) * width``, less half a unit for whole-number
    data). Row ``i`` is titled with label ``width_<i>``, column ``j`` with
    ``offset_<j>`` (worded and formatted by the phrase builder). Counts are not
    labelled: each panel is about where the peaks are, and heights differ.
    """
    return _render(_draw_bin_sensitivity(findings, sample, text, locale=locale, size=size), text)


DRAWERS: Mapping[str, Callable[..., RenderedFigure]] = {
    "histogram": histogram,
    "dotplot": dot_plot,
    "with_without": with_and_without,
    "bin_sensitivity": bin_sensitivity_panel,
}


# --------------------------------------------------------------------------- helpers


class LocaleTickFormatter(ticker.Formatter):
    """Tick labels through the report's number formatter, all ticks of an axis with one precision."""

    def __init__(self, numbers: NumberFormatter) -> None:
        self._numbers = numbers
        self._decimals = 0
        self._significant: int | None = None  # set when the ticks are written in scientific form

    def set_locs(self, locs: Sequence[float]) -> None:
        self._decimals = _decimals_for(locs)
        self._significant = _significant_for(locs)

    def __call__(self, x: float, pos: int | None = None) -> str:
        if abs(x) < 1e-12:
            x = 0.0  # never print "-0"
        if self._significant is not None and x != 0.0:
            return self._numbers.scientific(float(x), self._significant)
        return self._numbers.fixed(float(x), self._decimals)


def _significant_for(locs: Sequence[float]) -> int | None:
    """Fewest significant digits (up to SCIENTIFIC_DIGITS) that write every tick, when ticks are huge.

    None when the ticks are below SCIENTIFIC_FROM and the formatter writes them in fixed form.
    """
    finite = [float(v) for v in locs if math.isfinite(v) and v != 0]
    if not finite or max(abs(v) for v in finite) < SCIENTIFIC_FROM:
        return None
    for digits in range(1, SCIENTIFIC_DIGITS):
        if all(abs(v - float(f"{v:.{digits - 1}e}")) <= 1e-9 * abs(v) for v in finite):
            return digits
    return SCIENTIFIC_DIGITS


def _decimals_for(locs: Sequence[float]) -> int:
    """Fewest decimals (up to 6) that write every tick exactly."""
    finite = [float(v) for v in locs if math.isfinite(v)]
    for decimals in range(7):
        if all(abs(v - round(v, decimals)) <= 1e-9 * max(1.0, abs(v)) for v in finite):
            return decimals
    return 6


def _legend(ax: Axes, **placement) -> None:
    legend = ax.legend(
        frameon=False, prop=_font(SMALL_FONT_SIZE), handletextpad=0.3, columnspacing=1.4,
        borderaxespad=0.1, **placement,
    )
    for legend_text in legend.get_texts():
        legend_text.set_color(PALETTE["black"])


def _label_curve(
    fig: Figure, ax: Axes, grid: np.ndarray, curve: np.ndarray, word: str, *, avoid: Sequence[float]
) -> None:
    """Name the density curve directly, where the curve has fallen to half its height.

    Tries the right flank (text to the right), then the left flank (text to the
    left), and takes the first place where the words stay inside the axes and
    cross neither the mean nor the median line. When none fits, a one-entry
    key in the upper right corner names the curve instead.
    """
    peak = int(np.nanargmax(curve))
    half = 0.5 * float(curve[peak])
    x_low, x_high = ax.get_xlim()
    axes_width_pt, _ = _axes_size_points(fig, ax)
    half_span = float(x_high) / 2 - float(x_low) / 2  # never overflows near the largest double
    text_span = float((len(word) * SMALL_FONT_SIZE * 0.6 + 8) * (half_span / axes_width_pt) * 2)
    right_side = np.nonzero(curve[peak:] <= half)[0]
    left_side = np.nonzero(curve[: peak + 1] <= half)[0]
    candidates = []
    if right_side.size:
        candidates.append((peak + int(right_side[0]), False))
    if left_side.size:
        candidates.append((int(left_side[-1]), True))
    for index, to_left in candidates:
        x = float(grid[index])
        start, end = (x - text_span, x) if to_left else (x, x + text_span)
        if start < x_low or end > x_high or any(start <= line <= end for line in avoid):
            continue
        ax.annotate(
            word, (x, float(curve[index])), xytext=(-6 if to_left else 6, 4), textcoords="offset points",
            ha="right" if to_left else "left", va="bottom", color=CURVE,
            fontproperties=_font(SMALL_FONT_SIZE), zorder=5,
            bbox={"boxstyle": "square,pad=0.1", "facecolor": "white", "edgecolor": "none", "alpha": 0.85},
        )
        return
    ax.add_line(Line2D([], [], color=CURVE, linewidth=1.5, label=word))
    _legend(ax, loc="upper right", bbox_to_anchor=(1.0, 0.9))


def _labels(text: FigureText, figure: str) -> Mapping[str, str]:
    missing = [key for key in LABEL_KEYS[figure] if not text.labels.get(key)]
    if missing:
        raise NarratorError(
            f"figure {figure!r}: the phrase bank gave no label for {', '.join(missing)}"
        )
    return text.labels


def _require(value, figure: str, what: str):
    if value is None:
        raise NarratorError(f"figure {figure!r} needs {what}, and the findings have none")
    return value


def _font(size: float = FONT_SIZE) -> FontProperties:
    return FontProperties(family=FONT_FAMILY, size=size)


def _fit_lines(word: str, width_pt: float, size: float) -> str:
    """``word`` broken at spaces into lines about ``width_pt`` wide at ``size`` (0.6 em a character, as the
    curve's label reckons), so a long label in a margin is wrapped, not cut at the picture's edge."""
    import textwrap

    per_line = max(8, int(width_pt / (size * 0.6)))
    return "\n".join(textwrap.wrap(word, per_line, break_long_words=False, break_on_hyphens=False)) or word


def _single_axes(width_in: float, *, height_in: float) -> tuple[Figure, Axes]:
    """A figure with one axes at fixed margins (in inches, so sizes are predictable)."""
    fig = Figure(figsize=(width_in, height_in), dpi=DPI, facecolor="white")
    FigureCanvasAgg(fig)
    left, right, bottom, top = _LEFT_IN, _RIGHT_IN, _BOTTOM_IN, _TOP_IN
    ax = fig.add_axes((
        left / width_in, bottom / height_in,
        1 - (left + right) / width_in, 1 - (bottom + top) / height_in,
    ))
    return fig, ax


def _axes_size_points(fig: Figure, ax: Axes) -> tuple[float, float]:
    position = ax.get_position()
    return (
        position.width * fig.get_figwidth() * 72.0,
        position.height * fig.get_figheight() * 72.0,
    )


def _finish_axes(
    ax: Axes, numbers: NumberFormatter, x_label: str, y_label: str, *, integer_y: bool
) -> None:
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.spines["left"].set_color(AXIS_GREY)
    ax.grid(axis="y", color=GRID_GREY, linewidth=0.6)
    ax.set_axisbelow(True)
    ax.yaxis.set_major_locator(ticker.MaxNLocator(nbins=5, integer=integer_y, steps=[1, 2, 2.5, 5, 10]))
    ax.yaxis.set_major_formatter(LocaleTickFormatter(numbers))
    ax.tick_params(
        axis="y", labelsize=SMALL_FONT_SIZE, labelfontfamily=FONT_FAMILY, colors=AXIS_GREY,
        labelcolor=PALETTE["black"], length=3,
    )
    ax.set_ylabel(y_label, fontproperties=_font(FONT_SIZE))
    _style_x(ax, numbers, x_label)


def _style_x(ax: Axes, numbers: NumberFormatter, x_label: str) -> None:
    ax.spines["bottom"].set_color(AXIS_GREY)
    ax.xaxis.set_major_locator(_x_locator(ax, 8))
    ax.xaxis.set_major_formatter(LocaleTickFormatter(numbers))
    ax.tick_params(
        axis="x", labelsize=SMALL_FONT_SIZE, labelfontfamily=FONT_FAMILY, colors=AXIS_GREY,
        labelcolor=PALETTE["black"], length=3,
    )
    ax.set_xlabel(x_label, fontproperties=_font(FONT_SIZE))


def _mark_center(ax: Axes, mean: float, median: float, labels: Mapping[str, str]) -> None:
    """Vertical mean (solid) and median (dashed) lines with direct labels on opposite sides.

    A label that would run past the axes (a median at the left edge, its word over the y-axis title) goes
    to the other side of its line; one that would then cross the other line or its label drops one row.
    """
    ax.axvline(mean, color=MEAN_COLOUR, linestyle=MEAN_STYLE, linewidth=1.6, zorder=4)
    ax.axvline(median, color=MEDIAN_COLOUR, linestyle=MEDIAN_STYLE, linewidth=1.4, zorder=4)
    at_top = blended_transform_factory(ax.transData, ax.transAxes)
    x_low, x_high = (float(v) for v in ax.get_xlim())
    axes_width_pt, _ = _axes_size_points(ax.figure, ax)
    per_point = (x_high / 2 - x_low / 2) * 2 / axes_width_pt  # data units a point; no overflow near the largest double
    mean_left = mean < median
    placed: list[tuple[float, float, int]] = []  # (start, end, row) of each label in data units
    for x, word, colour, to_left in (
        (mean, labels["mean"], MEAN_COLOUR, mean_left),
        (median, labels["median"], MEDIAN_COLOUR, not mean_left),
    ):
        if not x_low <= x <= x_high:
            continue  # its line lies outside the axes: no word floating beside them
        span = (len(word) * SMALL_FONT_SIZE * 0.6 + 4) * per_point
        if (x - span < x_low) if to_left else (x + span > x_high):
            to_left = not to_left
        start, end = (x - span, x) if to_left else (x, x + span)
        others = [line for line in (mean, median) if line != x]
        row = 0
        if any(start < line < end for line in others) or any(
            start < other_end and other_start < end and other_row == row for other_start, other_end, other_row in placed
        ):
            row = 1
        placed.append((start, end, row))
        ax.annotate(
            word, (x, 0.985), xycoords=at_top,
            xytext=(-4 if to_left else 4, -row * (SMALL_FONT_SIZE * 1.5)),
            textcoords="offset points", ha="right" if to_left else "left", va="top",
            color=colour, fontproperties=_font(SMALL_FONT_SIZE), zorder=5,
            bbox={"boxstyle": "square,pad=0.1", "facecolor": "white", "edgecolor": "none", "alpha": 0.85},
        )


def _dot_bins(
    values: np.ndarray,
    plan_edges: np.ndarray,
    plan_width: float,
    points_per_unit: float,
    room_pt: float,
    *,
    integer_aligned: bool,
) -> tuple[float, np.ndarray]:
    """The widest split of the plan's bin width whose tallest stack of dots fits ``room_pt``.

    Returns the bin width and each value's bin index (bins counted from the
    plan's first edge, right-open as in numpy.histogram, the last one closed).
    Whole-number data keep whole-number bins, so no stack sits between two
    possible values. When no split fits, the narrowest allowed one is returned
    and the caller shrinks the dots.
    """
    start, stop = float(plan_edges[0]), float(plan_edges[-1])
    splits = [
        parts for parts in (1, 2, 4, 5, 10, 20, 25, 50, 100)
        if not integer_aligned or float(plan_width / parts).is_integer()
    ]
    for parts in splits:
        width = plan_width / parts
        last = max(0, math.ceil((stop - start) / width - 1e-9) - 1)
        index = np.clip(np.floor((values - start) / width).astype(np.int64), 0, last)
        tallest = int(np.bincount(index).max()) if values.size else 1
        if tallest * width * points_per_unit <= room_pt:
            return width, index
    return width, index


HUGE_AXIS = 1e100  # beyond this, an axis is drawn in scaled units (see _value_scale)


def _value_scale(ax: Axes, low: float, high: float) -> None:
    """Draw a value axis reaching past ``HUGE_AXIS`` in units of a power of ten.

    matplotlib's affine transforms multiply the data span by the axes' size in
    pixels; near the largest double that product overflows or its determinant
    underflows ("Singular matrix"). A function scale divides the data by a
    power of ten before the affine part, so values up to the largest finite
    double draw; the tick labels still show the values themselves.
    """
    top = max(abs(float(low)), abs(float(high)))
    if not (math.isfinite(top) and top > HUGE_AXIS):
        return
    unit = 10.0 ** math.floor(math.log10(top))
    ax.set_xscale("function", functions=(lambda x: np.asarray(x) / unit, lambda x: np.asarray(x) * unit))
    ax.xaxis.set_major_locator(_ScaledLocator(unit, ticker.MaxNLocator(nbins=5, steps=[1, 2, 5, 10])))


class _ScaledLocator(ticker.Locator):
    """A locator that places ticks in units of ``unit`` (so its arithmetic never overflows)."""

    def __init__(self, unit: float, base: ticker.Locator) -> None:
        self.unit = unit
        self.base = base

    def __call__(self):
        low, high = self.axis.get_view_interval()
        return self.tick_values(low, high)

    def tick_values(self, vmin: float, vmax: float):
        scaled = np.asarray(self.base.tick_values(vmin / self.unit, vmax / self.unit), dtype=float)
        with np.errstate(over="ignore"):
            ticks = scaled * self.unit
        return ticks[np.isfinite(ticks)]


def _x_locator(ax: Axes, nbins: int) -> ticker.Locator:
    """The value axis's tick locator: MaxNLocator, in scaled units on a huge axis (see _value_scale)."""
    current = ax.xaxis.get_major_locator()
    if isinstance(current, _ScaledLocator):  # scientific labels are wider: fewer, rounder ticks
        return _ScaledLocator(current.unit, ticker.MaxNLocator(nbins=min(nbins, 5), steps=[1, 2, 5, 10]))
    return ticker.MaxNLocator(nbins=nbins, steps=[1, 2, 2.5, 5, 10])


def _padded(low: float, high: float, share: float) -> tuple[float, float]:
    """The limits widened by ``share`` of their span on each side, kept finite up to the largest double."""
    low, high = float(low), float(high)  # Python floats overflow to inf quietly; clamped below
    half_span = high / 2 - low / 2  # half of the span never overflows, even from -max to +max
    if not half_span > 0:
        half_span = abs(low) / 2 if low else 0.5
    pad = 2 * share * half_span
    largest = sys.float_info.max
    return max(low - pad, -largest), min(high + pad, largest)


def _nice_count_step(tallest: int) -> int:
    for step in (1, 2, 5, 10, 20, 25, 50, 100, 200, 250, 500):
        if tallest / step <= 6:
            return step
    return 1000


def _spread_positions(count: int, phase: float = 0.0) -> np.ndarray:
    """Vertical positions in [0, 1] for a strip, spread by the golden-ratio sequence.

    A low-discrepancy sequence (Weyl's equidistribution) separates
    neighbouring points as random jitter would, but with no random numbers, so
    the picture is the same on every run.
    """
    golden = (math.sqrt(5) - 1) / 2
    return ((np.arange(count) * golden + phase) % 1.0) * 0.9 + 0.05


def _density_band(ax: Axes, findings: Findings, kept: np.ndarray) -> None:
    """A mirrored density band (the values' spread) for strips too large to draw one by one."""
    curve_of = findings.density_focus or findings.density  # the focused curve when the axis shows the bulk
    if curve_of is not None and curve_of.grid:
        grid = np.asarray(curve_of.grid, dtype=float)
        height = np.asarray(curve_of.values, dtype=float)
    else:
        counts, edges = np.histogram(kept, bins=200)
        grid = (edges[:-1] + edges[1:]) / 2
        height = counts.astype(float)
    peak = float(height.max()) if height.size and height.max() > 0 else 1.0
    half = 0.45 * height / peak
    ax.fill_between(grid, 0.5 - half, 0.5 + half, color=BAR_FILL, linewidth=0, zorder=2)
    ax.plot(grid, 0.5 + half, color=CURVE, linewidth=0.8, zorder=3)
    ax.plot(grid, 0.5 - half, color=CURVE, linewidth=0.8, zorder=3)


def _flagged_mask(findings: Findings, sample: Sample) -> np.ndarray:
    values = np.asarray(sample.values, dtype=float)
    outliers = findings.outliers
    if outliers is None or outliers.count == 0:
        return np.zeros(values.size, dtype=bool)
    if outliers.rows and len(outliers.rows) == outliers.count:
        return np.isin(np.asarray(sample.rows), np.asarray(outliers.rows))
    # Rows not recorded for every flagged value: fall back to the fences.
    mask = np.zeros(values.size, dtype=bool)
    if outliers.lower_fence is not None:
        mask |= values < outliers.lower_fence
    if outliers.upper_fence is not None:
        mask |= values > outliers.upper_fence
    return mask


def _offset_edges(low: float, high: float, width: float, offset: float, *, half_unit: bool) -> np.ndarray:
    """Bin edges ``(j + offset) * width`` (less 0.5 for whole-number data) covering [low, high].

    The same placement as :func:`narrator.engine.bins.bin_sensitivity`, so each
    panel is the histogram whose peaks the engine counted.
    """
    if not width > 0:
        raise NarratorError(f"bin width must be positive, not {width}")
    shift = offset * width - (0.5 if half_unit else 0.0)
    # Counted in bin widths, so values near the largest double do not overflow.
    first = math.floor(low / width - shift / width)
    count = max(1, math.ceil(high / width - shift / width - first + 1e-9))
    largest = sys.float_info.max
    with np.errstate(over="ignore"):
        if count > MAX_PANEL_BINS:
            start = first * width + shift
            count = MAX_PANEL_BINS
            width = high / count - start / count
            edges = start + width * np.arange(count + 1)
        else:
            edges = (first + np.arange(count + 1)) * width + shift
        if edges[-1] <= high:  # numpy's last bin is closed; make sure the maximum is inside it
            edges = np.append(edges, edges[-1] + width)
    # An edge past the largest double is drawn at it (the last bin is then narrower on the page).
    return np.clip(edges, -largest, largest)


def _render(fig: Figure, text: FigureText) -> RenderedFigure:
    canvas = fig.canvas
    # Words on a figure can come from the data (a column named "$x$ and $y$"):
    # they are drawn as written, never read as mathtext markup.
    for artist in fig.findobj(Text):
        artist.set_parse_math(False)
    canvas.draw()
    rgba = np.asarray(canvas.buffer_rgba())
    # Opaque RGB on white: no alpha channel (which PDF converters split into a
    # second "soft mask" image), and no text chunks (no software name, no
    # time), so the same figure gives the same bytes.
    buffer = io.BytesIO()
    Image.fromarray(np.ascontiguousarray(rgba[..., :3])).save(buffer, format="PNG", dpi=(DPI, DPI))
    height_px, width_px = rgba.shape[:2]
    return RenderedFigure(
        key=text.key,
        png=buffer.getvalue(),
        width_px=int(width_px),
        height_px=int(height_px),
        caption=text.caption,
        alt_text=text.alt_text,
    )
