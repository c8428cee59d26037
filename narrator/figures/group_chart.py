"""The side-by-side figure of a grouped report: one row per shown group, on one value axis.

=============================  ================================================
Name                           What it is
=============================  ================================================
:func:`group_rows`             the figure for a list of (findings, sample) groups
:data:`GROUP_LABEL_KEYS`       the label keys the figure needs
:data:`STRIP_LIMIT`            groups up to this size also show every value
=============================  ================================================

Each row shows, for one group: a thin line from the lowest to the highest
value that was not flagged (the boxplot's whiskers, Tukey 1977), a box over
the middle half (Q1 to Q3), the median as a thick vertical bar and the mean
as a diamond. Small groups also show every value as a strip above the box:
open circles, and flagged values as filled triangles (the markers of
:func:`narrator.figures.charts.with_and_without`). Every mark differs by shape, not
only by colour; the colours are from the Okabe & Ito (2008) palette
(:data:`narrator.figures.charts.PALETTE`). Rows are labelled with the group and its
n, directly at the left, so no colour key is needed to tell groups apart.

Only the groups given are drawn: the caller passes the shown groups, never
a suppressed one.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, Rectangle

from narrator.errors import NarratorError
from narrator.figures import charts as figure_kit
from narrator.figures.charts import (
    AXIS_GREY,
    BAR_FILL,
    CURVE,
    DPI,
    FONT_FAMILY,
    FONT_SIZE,
    GRID_GREY,
    MEAN_COLOUR,
    MEDIAN_COLOUR,
    PAGE_SIZE,
    SMALL_FONT_SIZE,
    FigureSize,
    LocaleTickFormatter,
    RenderedFigure,
)
from narrator.findings import Findings
from narrator.phrasing.narrative import FigureText
from narrator.phrasing.numbers import NumberFormatter
from narrator.reading.sample import Sample

GROUP_LABEL_KEYS = ("x", "median", "mean", "middle_half", "values", "flagged")  # plus group_<i> per row
STRIP_LIMIT = 300  # beyond this many values a strip is a smear; the box says it better
_LEFT_MIN_IN = 1.0
_LABEL_CHAR_IN = 0.068  # width of one character of a row label at the small font size, with some slack


def _whisker_ends(findings: Findings, values: np.ndarray) -> tuple[float, float]:
    """Lowest and highest value inside the outlier fences (all values when none were flagged)."""
    flagged = findings.outliers
    inside = values
    if flagged is not None and flagged.count:
        keep = np.ones(values.size, dtype=bool)
        if flagged.lower_fence is not None:
            keep &= values >= flagged.lower_fence
        if flagged.upper_fence is not None:
            keep &= values <= flagged.upper_fence
        inside = values[keep] if keep.any() else values
    return float(inside.min()), float(inside.max())


def _draw(groups: Sequence[tuple[Findings, Sample]], text: FigureText, *, locale: str,
          size: FigureSize = PAGE_SIZE) -> Figure:
    missing = [key for key in GROUP_LABEL_KEYS if not text.labels.get(key)]
    missing += [f"group_{i}" for i in range(len(groups)) if not text.labels.get(f"group_{i}")]
    if missing:
        raise NarratorError(f"figure {text.key!r}: the phrase bank gave no label for {', '.join(missing)}")
    if not groups:
        raise NarratorError(f"figure {text.key!r} needs at least one group")
    labels = text.labels
    numbers = NumberFormatter(locale)
    width_in = size.width_in
    top_in, bottom_in, right_in = 0.62, 0.5, 0.2  # the top is set again below, to the legend's height
    height = top_in + bottom_in + 0.03 + size.group_row_in * len(groups)
    fig = Figure(figsize=(width_in, height), dpi=DPI, facecolor="white")
    FigureCanvasAgg(fig)
    # Room on the left for the longest row label ("Northside office (n = 177)"), never the whole page.
    longest = max(len(labels[f"group_{i}"]) for i in range(len(groups)))
    left_in = min(max(_LEFT_MIN_IN, 0.25 + _LABEL_CHAR_IN * longest), width_in / 2.5)
    ax = fig.add_axes((
        left_in / width_in, bottom_in / height,
        1 - (left_in + right_in) / width_in, 1 - (top_in + bottom_in) / height,
    ))
    low = min(float(sample.values.min()) for _, sample in groups)
    high = max(float(sample.values.max()) for _, sample in groups)
    any_strip = any_flagged = False
    for row, (findings, sample) in enumerate(groups):
        center, spread = findings.center, findings.spread
        if center is None:
            raise NarratorError(f"figure {text.key!r}: group {row + 1} has no values to draw")
        y = len(groups) - 1 - row  # first group at the top
        values = np.asarray(sample.values, dtype=float)
        whisker_low, whisker_high = _whisker_ends(findings, values)
        ax.plot([whisker_low, whisker_high], [y, y], color=AXIS_GREY, linewidth=1.0, zorder=2,
                solid_capstyle="butt")
        for end in (whisker_low, whisker_high):
            ax.plot([end, end], [y - 0.08, y + 0.08], color=AXIS_GREY, linewidth=1.0, zorder=2)
        ax.add_patch(Rectangle((spread.q1, y - 0.17), spread.q3 - spread.q1, 0.34, facecolor=BAR_FILL,
                               edgecolor=CURVE, linewidth=0.9, zorder=3))
        ax.plot([center.median, center.median], [y - 0.17, y + 0.17], color=MEDIAN_COLOUR, linewidth=2.4,
                zorder=4, solid_capstyle="butt")
        ax.plot([center.mean], [y], marker="D", markersize=5.5, color=MEAN_COLOUR,
                markeredgecolor="white", markeredgewidth=0.6, linestyle="none", zorder=5)
        if values.size <= STRIP_LIMIT:
            any_strip = True
            mask = figure_kit._flagged_mask(findings, sample)
            heights = y + 0.22 + 0.18 * figure_kit._spread_positions(values.size, phase=0.3 * row)
            ax.scatter(values[~mask], heights[~mask], s=7, facecolors="none", edgecolors=CURVE,
                       linewidths=0.6, zorder=3)
            if mask.any():
                any_flagged = True
                ax.scatter(values[mask], heights[mask], s=14, marker="^", color=figure_kit.FLAGGED_COLOUR,
                           linewidths=0, zorder=4)
    ax.set_ylim(-0.55, len(groups) - 0.45 + 0.1)
    ax.set_yticks(range(len(groups)))
    ax.set_yticklabels([labels[f"group_{len(groups) - 1 - y}"] for y in range(len(groups))])
    ax.tick_params(axis="y", length=0, labelsize=SMALL_FONT_SIZE + 0.5, labelfontfamily=FONT_FAMILY,
                   labelcolor="#000000")
    for side in ("top", "right", "left"):
        ax.spines[side].set_visible(False)
    ax.grid(axis="x", color=GRID_GREY, linewidth=0.6)
    ax.set_axisbelow(True)
    figure_kit._value_scale(ax, low, high)
    ax.set_xlim(figure_kit._padded(low, high, 0.02))
    ax.spines["bottom"].set_color(AXIS_GREY)
    ax.xaxis.set_major_locator(figure_kit._x_locator(ax, 8))
    ax.xaxis.set_major_formatter(LocaleTickFormatter(numbers))
    ax.tick_params(axis="x", labelsize=SMALL_FONT_SIZE, labelfontfamily=FONT_FAMILY, colors=AXIS_GREY,
                   labelcolor="#000000", length=3)
    ax.set_xlabel(labels["x"], fontproperties=figure_kit._font(FONT_SIZE))
    handles = [
        Patch(facecolor=BAR_FILL, edgecolor=CURVE, linewidth=0.9, label=labels["middle_half"]),
        Line2D([], [], color=MEDIAN_COLOUR, linewidth=2.4, label=labels["median"]),
        Line2D([], [], marker="D", markersize=5.5, color=MEAN_COLOUR, linestyle="none", label=labels["mean"]),
    ]
    if any_strip:
        handles.append(Line2D([], [], marker="o", markersize=3.5, markerfacecolor="none",
                              markeredgecolor=CURVE, linestyle="none", label=labels["values"]))
    if any_flagged:
        handles.append(Line2D([], [], marker="^", markersize=4.5, color=figure_kit.FLAGGED_COLOUR,
                              linestyle="none", label=labels["flagged"]))
    legend_in = _fitted_legend(fig, handles, width_in)
    # The rows keep their height; the figure grows or shrinks with the legend above them.
    top_in = legend_in + 0.1
    height = top_in + bottom_in + 0.03 + size.group_row_in * len(groups)
    fig.set_size_inches(width_in, height)
    ax.set_position((left_in / width_in, bottom_in / height,
                     1 - (left_in + right_in) / width_in, 1 - (top_in + bottom_in) / height))
    return fig


_LEGEND_MARGIN_IN = 0.08  # the legend starts this far from the figure's left edge, and ends as far from its right


def _fitted_legend(fig: Figure, handles, width_in: float) -> float:
    """The legend across the top of the figure, in as few lines as fit its width; returns its height in inches.

    Measured with the figure's own renderer, so no word is cut at the right edge in any language.
    """
    renderer = fig.canvas.get_renderer()
    for columns in range(len(handles), 0, -1):
        legend = fig.legend(handles=handles, loc="upper left", bbox_to_anchor=(_LEGEND_MARGIN_IN / width_in, 1.0),
                            ncol=columns, frameon=False, prop=figure_kit._font(SMALL_FONT_SIZE),
                            handletextpad=0.4, columnspacing=1.2, borderaxespad=0.2)
        extent = legend.get_window_extent(renderer)
        if extent.width / DPI <= width_in - 2 * _LEGEND_MARGIN_IN or columns == 1:
            break
        legend.remove()
    for item in legend.get_texts():
        item.set_color("#000000")
    return extent.height / DPI


def group_rows(groups: Sequence[tuple[Findings, Sample]], text: FigureText, *, locale: str,
               size: FigureSize = PAGE_SIZE) -> RenderedFigure:
    """One row per group: whiskers, middle-half box, median bar, mean diamond, and small groups' values.

    ``groups`` are (findings, sample) pairs in the order the text lists them;
    ``text.labels`` holds ``x``, ``median``, ``mean``, ``middle_half``,
    ``values``, ``flagged`` and ``group_<i>`` for each row. Whiskers end at
    the most extreme values inside the outlier fences (Tukey 1977), the
    figure's only departure from showing every value being that groups above
    :data:`STRIP_LIMIT` values show no strip. Drawn at ``size`` (a row is ``size.group_row_in`` tall).
    """
    return figure_kit._render(_draw(groups, text, locale=locale, size=size), text)

