"""Where the values sit against the median, the quartiles and the two ends: counts, no judgement.

A sentence such as "half were lower and half were higher" is true only when few values tie at
the median; "58 % were 0, the lowest value" needs the count at the minimum. The phrase builder
must not count values itself (it only reads Findings), so the engine records these counts once.

=============================  ==================================================
Name                           What it does
=============================  ==================================================
:func:`order_counts_sorted`    sorted values + quartiles -> :class:`~narrator.findings.OrderCounts`
:func:`order_counts_from`      the same from counts another engine gathered
=============================  ==================================================
"""

from __future__ import annotations

import numpy as np

from narrator.findings import OrderCounts


def order_counts_from(
    *, n: int, below_q1: int, below_median: int, at_median: int, above_q3: int, at_min: int, at_max: int,
    next_above_min: float | None, next_below_max: float | None,
) -> OrderCounts:
    """OrderCounts from counts gathered elsewhere (the stream engine counts them chunk by chunk)."""
    return OrderCounts(
        below_median=int(below_median), at_median=int(at_median),
        above_median=int(n - below_median - at_median), below_q1=int(below_q1), above_q3=int(above_q3),
        at_min=int(at_min), at_max=int(at_max),
        next_above_min=None if next_above_min is None else float(next_above_min),
        next_below_max=None if next_below_max is None else float(next_below_max),
    )


def order_counts_sorted(sorted_values: np.ndarray, *, q1: float, median: float, q3: float) -> OrderCounts:
    """Counts by binary search in the sorted values (ascending).

    >>> counts = order_counts_sorted(np.array([0.0, 0.0, 0.0, 1.0, 4.0]), q1=0.0, median=0.0, q3=1.0)
    >>> counts.below_median, counts.at_median, counts.above_median, counts.at_min, counts.next_above_min
    (0, 3, 2, 3, 1.0)
    """
    n = int(sorted_values.size)
    low, high = float(sorted_values[0]), float(sorted_values[-1])
    below_median = int(np.searchsorted(sorted_values, median, side="left"))
    through_median = int(np.searchsorted(sorted_values, median, side="right"))
    at_min = int(np.searchsorted(sorted_values, low, side="right"))
    at_max = n - int(np.searchsorted(sorted_values, high, side="left"))
    return order_counts_from(
        n=n,
        below_q1=int(np.searchsorted(sorted_values, q1, side="left")),
        below_median=below_median,
        at_median=through_median - below_median,
        above_q3=n - int(np.searchsorted(sorted_values, q3, side="right")),
        at_min=at_min,
        at_max=at_max,
        next_above_min=float(sorted_values[at_min]) if at_min < n else None,
        next_below_max=float(sorted_values[n - at_max - 1]) if at_max < n else None,
    )
