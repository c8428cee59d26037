"""How concentrated a total is: the share held by the largest values, the Lorenz curve, the Gini coefficient.

==========================  =====================================================
Name                        What it does
==========================  =====================================================
:func:`concentration`       sorted non-negative values -> :class:`~narrator.findings.Concentration`
:func:`not_computed_reason` why there is no finding for these values, if there is none
:func:`gini`                the Gini coefficient of sorted non-negative values
:func:`lorenz_points`       the Lorenz curve read at chosen shares of the values
==========================  =====================================================

When the values are money a manager asks where the money went. The common answers in
fundraising and income statistics (common practice) are the total, the share of it held by
the largest 1 % of values (``ceil(n / 100)`` of them, at least one) and by the largest 10 %,
and by the few largest values (the largest 1, 3 and 10). The textbook measures are the
Lorenz curve (Lorenz 1905, *Publications of the American Statistical Association* 9) and the
Gini coefficient, G = sum_i sum_j |x_i - x_j| / (2 n^2 mean), which equals
(2 sum_i i x_(i)) / (n sum x) - (n + 1) / n for the ascending values and 1 - 2 times the area
under the Lorenz curve drawn through (i / n, L_i) (Gini 1912; e.g. Cowell 2011, *Measuring
Inequality*, 3rd ed., ch. 2, from memory). No small-sample correction n / (n - 1) is applied:
the rows are described as they are.

Computed for any column whose values are all at least 0 with a positive total; whether the
memo speaks of it is decided by the document plan (money only). Everything is exact sums of
the sorted values: the total by numpy's pairwise summation, the Lorenz curve by one running sum
(of the values divided by the largest when a partial sum could overflow), the top shares by
running sums of the largest values.
"""

from __future__ import annotations

import math

import numpy as np

from narrator.findings import Concentration

TOP_COUNTS = (1, 3, 10)  # "the few largest"
LORENZ_SHARES = (0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9)


def _lorenz_ordinates(x: np.ndarray) -> np.ndarray:
    """L_1, ..., L_n = 1: the share of the total held by the lowest i values (L_0 = 0 is left out)."""
    # Divided by the largest value first when a partial sum could overflow.
    cumulative = np.cumsum(x if float(x[-1]) * x.size < 1e300 else x / x[-1])
    cumulative /= cumulative[-1]
    return cumulative


def gini(sorted_values) -> float:
    """The Gini coefficient of ascending non-negative values with a positive total.

    Computed as 1 - (2 sum_{i=1..n} L_i - 1) / n, the trapezoid area under the Lorenz curve,
    which equals the mean-difference definition in the module docstring.

    >>> gini([0.0, 0.0, 0.0, 1.0])  # one holds everything: (n - 1) / n
    0.75
    >>> gini([5.0, 5.0, 5.0])
    0.0
    """
    x = np.asarray(sorted_values, dtype=float)
    return _gini_from(_lorenz_ordinates(x))


def _gini_from(ordinates: np.ndarray) -> float:
    n = ordinates.size
    value = 1.0 - (2.0 * float(ordinates.sum()) - 1.0) / n
    return min(max(value, 0.0), 1.0)


def lorenz_points(sorted_values, shares=LORENZ_SHARES) -> tuple[float, ...]:
    """L(p): the share of the total held by the lowest p of the values, on the curve through (i / n, L_i).

    >>> lorenz_points([1.0, 1.0, 2.0, 4.0], [0.5])
    (0.25,)
    """
    return _lorenz_at(_lorenz_ordinates(np.asarray(sorted_values, dtype=float)), shares)


def _lorenz_at(ordinates: np.ndarray, shares) -> tuple[float, ...]:
    n = ordinates.size

    def ordinate(i: int) -> float:
        return 0.0 if i == 0 else float(ordinates[i - 1])

    points = []
    for p in shares:
        position = p * n
        k = min(int(math.floor(position)), n - 1)
        fraction = position - k
        points.append(ordinate(k) + fraction * (ordinate(k + 1) - ordinate(k)))
    return tuple(points)


def not_computed_reason(sorted_values) -> str | None:
    """Why :func:`concentration` gives None for these values ("no_values", "negative_values",
    "total_not_positive", "total_overflows"), or None when it gives a finding."""
    x = np.asarray(sorted_values, dtype=float)
    if x.size == 0:
        return "no_values"
    if x[0] < 0:
        return "negative_values"
    with np.errstate(over="ignore"):
        total = float(x.sum())
    if not math.isfinite(total):
        return "total_overflows"
    return None if total > 0 else "total_not_positive"


def concentration(sorted_values) -> Concentration | None:
    """The total and its concentration; None when :func:`not_computed_reason` gives a reason.

    >>> found = concentration(np.array([1.0] * 99 + [101.0]))
    >>> found.total, found.top_percent_count, found.top_percent_share
    (200.0, 1, 0.505)
    """
    x = np.asarray(sorted_values, dtype=float)
    if not_computed_reason(x) is not None:
        return None
    n = int(x.size)
    total = float(x.sum())
    percent = max(1, math.ceil(n / 100))
    tenth = max(1, math.ceil(n / 10))
    largest = max(tenth, *TOP_COUNTS)
    suffix = np.cumsum(x[::-1][:largest])  # suffix[k - 1]: the sum of the k largest values

    def top(k: int) -> float:
        return float(suffix[min(k, n) - 1]) / total

    ordinates = _lorenz_ordinates(x)
    return Concentration(
        total=total, n=n, top_percent_count=percent, top_percent_share=top(percent), top_tenth_count=tenth,
        top_tenth_share=top(tenth), top_counts=tuple((k, top(k)) for k in TOP_COUNTS if k < n),
        gini=_gini_from(ordinates), lorenz=_lorenz_at(ordinates, LORENZ_SHARES),
    )
