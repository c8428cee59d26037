"""The findings a memo leads with, added in one place for every engine.

:func:`add_decision_findings` takes the findings an engine has made and adds:

=================  ====================================  ==========================================
Field              Module                                Needs
=================  ====================================  ==========================================
``clusters``       :mod:`narrator.engine.clusters`       the sorted values and the density
``unusual``        :mod:`narrator.engine.entry_errors`   the findings only
``concentration``  :mod:`narrator.engine.concentration`  the sorted values
``above_minimum``  :func:`above_minimum` (here)          the sorted values
``below_maximum``  :func:`below_maximum` (here)          the sorted values
=================  ====================================  ==========================================

The in-memory engine passes its sorted values. The engines that read in passes
(:mod:`narrator.scale`) pass them when their fixed-seed sample holds every value, so the
findings are the same numbers; otherwise they pass None, and the fields that need every value
are None with the reason ``"engine_in_passes"`` in ``Findings.not_computed``. ``unusual`` reads
only the findings, so every engine gives the same one.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from narrator.engine.clusters import find_clusters
from narrator.engine.concentration import concentration, not_computed_reason
from narrator.engine.entry_errors import unusual_values
from narrator.engine.moments import median_sorted
from narrator.engine.shape import MIN_PEAK_MASS
from narrator.findings import AboveMinimum, BelowMaximum, Findings

NOT_IN_PASSES = "engine_in_passes"


def above_minimum(sorted_values: np.ndarray) -> AboveMinimum | None:
    """The count and the middle value (an order statistic) of the values above the
    lowest one; None when every value is the lowest (moments.median_sorted, the median of the whole).

    >>> above_minimum(np.array([0.0, 0.0, 0.0, 120.0, 300.0, 410.0]))
    AboveMinimum(minimum=0.0, count=3, median=300.0)
    """
    n = int(sorted_values.size)
    if n == 0:
        return None
    lowest = float(sorted_values[0])
    at_min = int(np.searchsorted(sorted_values, lowest, side="right"))
    if at_min == n:
        return None
    return AboveMinimum(minimum=lowest, count=n - at_min,
                        median=median_sorted(sorted_values[at_min:]))


def below_maximum(sorted_values: np.ndarray) -> BelowMaximum | None:
    """The count and the middle value (an order statistic) of the values below the highest one; None when every
    value is the highest (moments.median_sorted, the median of the whole).

    >>> below_maximum(np.array([40.0, 70.0, 85.0, 100.0, 100.0, 100.0]))
    BelowMaximum(maximum=100.0, count=3, median=70.0)
    """
    n = int(sorted_values.size)
    if n == 0:
        return None
    highest = float(sorted_values[-1])
    below = int(np.searchsorted(sorted_values, highest, side="left"))
    if below == 0:
        return None
    return BelowMaximum(maximum=highest, count=below, median=median_sorted(sorted_values[:below]))


def add_decision_findings(findings: Findings, sorted_values: np.ndarray | None) -> Findings:
    """``findings`` with clusters, unusual values and concentration (see the module docstring).

    ``sorted_values`` are every value, ascending, in the data's units; None when the engine does
    not hold them.
    """
    not_computed = dict(findings.not_computed)
    clusters = total = above = below = None
    if sorted_values is None:
        # The middle value above the lowest one is one more order statistic; the engines that read in passes
        # would need another pass for it once they know how many values sit at the lowest, so they leave it out.
        not_computed["clusters"] = NOT_IN_PASSES
        not_computed["concentration"] = NOT_IN_PASSES
        not_computed["above_minimum"] = NOT_IN_PASSES
        not_computed["below_maximum"] = NOT_IN_PASSES
    else:
        above = above_minimum(sorted_values)
        below = below_maximum(sorted_values)
        if findings.density is None:
            not_computed["clusters"] = "no_spread" if findings.n else "no_values"
        else:
            clusters = find_clusters(sorted_values, findings.density, findings.shape.label, min_share=MIN_PEAK_MASS)
        total = concentration(sorted_values)
        if total is None:
            not_computed["concentration"] = not_computed_reason(sorted_values)
    return replace(findings, clusters=clusters, unusual=unusual_values(findings), concentration=total,
                   above_minimum=above, below_maximum=below, not_computed=not_computed)
