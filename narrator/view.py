"""Which part of the value axis a figure shows: a pure function of the findings.

When a few far-out values (beyond the outlier rule's far-out fences) would
stretch the axis so much that the bulk of the data is squeezed into a corner,
the histogram shows the bulk and says, on the figure and in its caption, how
many values lie beyond the edge and how far they reach. The figure and its
words both ask this module, so they always agree.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from narrator.findings import Findings

STRETCH_LIMIT = 0.5  # far-out values may widen the axis by at most half of the bulk's range


@dataclass(frozen=True, slots=True)
class Window:
    low: float
    high: float
    hidden_low: int  # values below ``low`` not drawn
    hidden_high: int
    lowest: float  # the smallest and largest values, for the words beside the edge
    highest: float


def histogram_window(findings: Findings) -> Window | None:
    """The focused axis range for the histogram, or None when every value fits comfortably."""
    plan, outliers, spread = findings.histogram, findings.outliers, findings.spread
    if plan is None or outliers is None or spread is None or not outliers.far_out_values:
        return None
    edges = plan.edges
    low, high = edges[0], edges[-1]
    upper, lower = outliers.far_upper_fence, outliers.far_lower_fence
    far_high = [v for v in outliers.far_out_values if upper is not None and v > upper]
    far_low = [v for v in outliers.far_out_values if lower is not None and v < lower]
    bulk_low = outliers.far_lower_fence if far_low else spread.min
    bulk_high = outliers.far_upper_fence if far_high else spread.max
    bulk = bulk_high - bulk_low
    if not bulk > 0:
        return None
    cut_high = bool(far_high) and (spread.max - bulk_high) > STRETCH_LIMIT * bulk
    cut_low = bool(far_low) and (bulk_low - spread.min) > STRETCH_LIMIT * bulk
    if not (cut_high or cut_low):
        return None
    width = plan.width
    counts = plan.counts
    # The window ends on bin edges; the bars beyond it are the values not drawn.
    hidden_low = hidden_high = 0
    if cut_high:
        stop = min(math.ceil((bulk_high - edges[0]) / width), len(counts))
        high = edges[0] + stop * width
        hidden_high = int(sum(counts[stop:]))
    if cut_low:
        start = max(math.floor((bulk_low - edges[0]) / width), 0)
        low = edges[0] + start * width
        hidden_low = int(sum(counts[:start]))
    return Window(
        low=low,
        high=high,
        hidden_low=hidden_low,
        hidden_high=hidden_high,
        lowest=spread.min,
        highest=spread.max,
    )
