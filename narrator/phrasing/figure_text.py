"""Captions, alt text and axis labels for the figures, worded and formatted for the locale.

=====================  ==========================================================
FigureText key         Made when
=====================  ==========================================================
``histogram``          the engine planned a histogram (there is spread)
``dotplot``            there is at least one value (Wilkinson 1999 dot plot)
``with_without``       outliers were flagged and values remain without them
``bin_sensitivity``    the engine ran the bin-width and offset grid
=====================  ==========================================================

Alt text says what the figure shows, with its numbers, so a reader who
cannot see it gets the same facts (the Word picture description). Label
keys: ``x``, ``y`` and legend words (``mean``, ``median``, ``density``,
``flagged``, ``all``, ``without``); the bin grid adds ``width_<i>`` and
``offset_<j>`` panel labels in the grid's order.
"""

from __future__ import annotations

from narrator.engine.bins import DOMINANT_BIN_SHARE
from narrator.engine.window import histogram_window
from narrator.phrasing.context import WordingContext
from narrator.phrasing.memo import flagged_claim
from narrator.phrasing.narrative import Claim, FigureText
from narrator.phrasing.technical import _width_decimals, grid_values, width_text


def _labels(ctx: WordingContext, key: str, names: tuple[str, ...], **values: str) -> dict[str, str]:
    return {name: ctx.text(f"figures.{key}.{name}", axis_name=ctx.axis_name, **values) for name in names}


def histogram_text(ctx: WordingContext) -> FigureText | None:
    findings = ctx.findings
    plan = findings.histogram
    if plan is None or findings.center is None or not plan.counts:
        return None
    plan = findings.histogram_focus or plan  # the bins the figure draws
    top = max(range(len(plan.counts)), key=lambda i: (plan.counts[i], -i))
    # The text's own rounding (the memo's), so the alt text never gives more digits than the
    # report; ranges write the unit once ("from 4 to 129 days").
    edge_low, edge_high = plan.edges[top], plan.edges[top + 1]
    top_low, top_high = ctx.fmt.quantity_pair(edge_low, edge_high, max(_width_decimals(edge_low),
                                                                       _width_decimals(edge_high)))
    low, high = ctx.memo_recorded_pair(findings.spread.min, findings.spread.max)
    values = {
        "name": ctx.name,
        "n_values": ctx.count(findings.n, "value"),
        "width": width_text(ctx, plan.width),
        "min": low,
        "max": high,
        "top_low": top_low,
        "top_high": top_high,
        "top_count": ctx.count(plan.counts[top], "value"),
        "median": ctx.memo(findings.center.median),
        "mean": ctx.memo(findings.center.mean),
    }
    caption = ctx.caption("figures.histogram.caption", **values)
    alt_text = ctx.text("figures.histogram.alt", **values)
    labels = _labels(ctx, "histogram", ("x", "y", "mean", "median", "density"))
    caption, alt_text = _beyond_the_window(ctx, labels, caption, alt_text)
    claim = Claim("figure", {"figure": "histogram", **_common_claim(findings), "edges": tuple(plan.edges),
                             "counts": tuple(plan.counts), "width": plan.width, "top": top,
                             "below": plan.below, "above": plan.above, **_window_claim(ctx)})
    return FigureText(key="histogram", caption=caption, alt_text=alt_text, labels=labels, claims=(claim,))


def _common_claim(findings) -> dict:
    return {"n": findings.n, "min": findings.spread.min, "max": findings.spread.max,
            "median": findings.center.median, "mean": findings.center.mean}


def _window_claim(ctx: WordingContext) -> dict:
    window = histogram_window(ctx.findings)
    if window is None:
        return {}
    return {"window_low": window.low, "window_high": window.high, "hidden_low": window.hidden_low,
            "hidden_high": window.hidden_high, "lowest": window.lowest, "highest": window.highest}


def _beyond_the_window(ctx: WordingContext, labels: dict[str, str], caption: str, alt_text: str) -> tuple[str, str]:
    """Words for a value axis focused on the bulk (narrator.engine.window): labels by the edge, and caption sentences.

    A few far-out values would squeeze the bulk into a corner: the figures with a value axis
    show the bulk and say, on the figure and in the caption, what lies beyond the edge.
    """
    window = histogram_window(ctx.findings)
    if window is None:
        return caption, alt_text
    for side, hidden, edge, extreme, field in (
        ("high", window.hidden_high, window.high, window.highest, "max"),
        ("low", window.hidden_low, window.low, window.lowest, "min"),
    ):
        if not hidden:
            continue
        words = {"count": ctx.count(hidden, "value"), field: ctx.memo_recorded(extreme), "edge": ctx.memo(edge)}
        labels[f"beyond_{side}"] = ctx.text(f"figures.histogram.beyond_{side}", **words)
        sentence = ctx.text(f"figures.histogram.caption_beyond_{side}", ctx.plural(hidden), **words)
        caption = f"{caption} {sentence}"
        alt_text = f"{alt_text} {sentence}"
    return caption, alt_text


def dotplot_text(ctx: WordingContext) -> FigureText | None:
    findings = ctx.findings
    # The dots stack in the histogram plan's bins; one value, or values all
    # equal, have no plan (no spread to bin), so there is no dot plot either.
    if findings.n == 0 or findings.center is None or findings.histogram is None:
        return None
    flagged = findings.outliers
    any_flagged = flagged is not None and flagged.count > 0
    low, high = ctx.memo_recorded_pair(findings.spread.min, findings.spread.max)
    values = {
        "name": ctx.name,
        "n_values": ctx.count(findings.n, "value"),
        "min": low,
        "max": high,
        "median": ctx.memo(findings.center.median),
        "mean": ctx.memo(findings.center.mean),
        "flagged_sentence": ctx.text("figures.dotplot.flagged_sentence" if any_flagged
                                     else "figures.dotplot.none_flagged"),
    }
    return FigureText(
        key="dotplot",
        caption=ctx.caption("figures.dotplot.caption", **values),
        alt_text=ctx.text("figures.dotplot.alt", **values).strip(),
        labels=_labels(ctx, "dotplot", ("x", "y", "mean", "median", "flagged")),
        claims=(Claim("figure", {"figure": "dotplot", **_common_claim(findings),
                                 "flagged_count": flagged.count if flagged is not None else 0}),),
    )


def with_without_text(ctx: WordingContext) -> FigureText | None:
    findings = ctx.findings
    flagged, without = findings.outliers, findings.without_outliers
    if flagged is None or flagged.count == 0 or without is None or without.n == 0 or without.mean is None:
        return None
    values = {
        "name": ctx.name,
        "n_values": ctx.count(findings.n, "value"),
        "flagged_count": ctx.whole(flagged.count),
        "mean": ctx.memo(findings.center.mean),
        "median": ctx.memo(findings.center.median),
        "mean_without": ctx.memo(without.mean),
        "median_without": ctx.memo(without.median),
    }
    labels = _labels(ctx, "with_without", ("x", "y", "all", "without", "mean", "median"))
    caption, alt_text = _beyond_the_window(ctx, labels, ctx.caption("figures.with_without.caption", **values),
                                           ctx.text("figures.with_without.alt", ctx.plural(flagged.count), **values))
    claim = Claim("figure", {"figure": "with_without", **_common_claim(findings), "flagged_count": flagged.count,
                             "mean_without": without.mean, "median_without": without.median,
                             **flagged_claim(findings), **_window_claim(ctx)})
    return FigureText(key="with_without", caption=caption, alt_text=alt_text, labels=labels, claims=(claim,))


def bin_sensitivity_text(ctx: WordingContext) -> FigureText | None:
    grid = ctx.findings.shape.bin_sensitivity
    if grid is None:
        return None
    values = {
        "name": ctx.name,
        # "at three bin widths and four starting points": small counts in words, like every count
        "widths_count": ctx.fmt.count_number(len(grid.widths), "bin_width"),
        "offsets_count": ctx.fmt.count_number(len(grid.offsets), "starting_point"),
        "grids": ctx.whole(len(grid.widths) * len(grid.offsets)),
        "peaks": ctx.count(grid.min_peaks, "peak"),
        "min_peaks": ctx.whole(grid.min_peaks),
        "max_peaks": ctx.whole(grid.max_peaks),
    }
    if grid.undecided:
        alt_key = "figures.bin_sensitivity.alt_undecided"
    else:
        alt_key = "figures.bin_sensitivity.alt_sensitive" if grid.sensitive else "figures.bin_sensitivity.alt_stable"
    values["dominant"] = ctx.fmt.percent(DOMINANT_BIN_SHARE, 0)
    labels = _labels(ctx, "bin_sensitivity", ("x", "y"))
    # One label per panel row (width_0, width_1, ...) and column (offset_0, ...), in the grid's order.
    for index, width in enumerate(grid.widths):
        labels[f"width_{index}"] = ctx.text("figures.bin_sensitivity.width", width=width_text(ctx, width))
    for index, offset in enumerate(grid.offsets):
        labels[f"offset_{index}"] = ctx.text("figures.bin_sensitivity.offset", offset=ctx.fmt.fixed(offset, 2))
    _, claim = grid_values(ctx)
    return FigureText(
        key="bin_sensitivity",
        caption=ctx.caption("figures.bin_sensitivity.caption", **values),
        alt_text=ctx.text(alt_key, **values),
        labels=labels,
        claims=(Claim("bins", claim),),
    )


FIGURE_BUILDERS = (histogram_text, dotplot_text, with_without_text, bin_sensitivity_text)
