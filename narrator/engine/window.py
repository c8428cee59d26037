"""Which part of the value axis a figure shows: a pure function of the findings.

When a few far-out values (beyond the outlier rule's far-out fences) would
stretch the axis so much that the bulk of the data is squeezed into a corner,
the engine bins the bulk at the rule's own width (``Findings.histogram_focus``,
from :func:`narrator.engine.bins.focus_layout`, with the values beyond counted)
and reads the density there (``Findings.density_focus``); the histogram and
the with-and-without view show that part of the axis and say, on the figure
and in the caption, how many values lie beyond the edge and how far they
reach. The figures and their words both ask this module, so they always agree.
"""

from __future__ import annotations

from dataclasses import dataclass

from narrator.findings import Findings


@dataclass(frozen=True, slots=True)
class Window:
    low: float
    high: float
    hidden_low: int  # values below ``low`` not drawn
    hidden_high: int
    lowest: float  # the smallest and largest values, for the words beside the edge
    highest: float


def histogram_window(findings: Findings) -> Window | None:
    """The focused axis range for the histogram, or None when every value fits comfortably.

    The engine decides and counts (``Findings.histogram_focus``, from
    :func:`narrator.engine.bins.focus_layout`); this reads it for the figures and their words.
    """
    focus, spread = findings.histogram_focus, findings.spread
    if focus is None or spread is None or not focus.edges:
        return None
    return Window(
        low=focus.edges[0],
        high=focus.edges[-1],
        hidden_low=focus.below,
        hidden_high=focus.above,
        lowest=spread.min,
        highest=spread.max,
    )
