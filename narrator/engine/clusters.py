"""Clusters of values: where the kernel density's valleys split the values, and what each part holds.

=========================  ======================================================
Name                       What it does
=========================  ======================================================
:func:`peak_regions`       each prominent peak's region of the curve and its share
:func:`find_clusters`      sorted values + density + shape -> :class:`~narrator.findings.Clusters`
:func:`cluster_of`         which cluster each value falls in, from the cuts
=========================  ======================================================

Method (common practice; Silverman 1981, "Using kernel density estimates to investigate
multimodality", *JRSS B* 43, on counting the modes of a kernel estimate): the values form
several clusters when the shape judgement found several peaks (:mod:`narrator.engine.shape`:
two or more prominent peaks of the density, each holding at least ``MIN_PEAK_MASS`` of the
curve's area, confirmed by a second signal). The values are then split at the **antimode**
between each two neighbouring substantial peaks: the lowest point of the density between
them. A smaller peak between two substantial ones joins the cluster on its side of that
valley. A value exactly at a cut belongs to the cluster above it.

Each cluster reports its range (smallest and largest value), its count and share of the
values, its median (the middle of its sorted values, :func:`narrator.engine.moments.median_sorted`)
and where its peak is. The same peaks and shares decide the shape label
(:func:`narrator.engine.shape.substantial_peaks` reads :func:`peak_regions`), so the number of
clusters is always the number of peaks the shape speaks of.

**A spike is not a cluster** (our rule): when at least ``SPIKE_SHARE`` (half) of a part's values
are one and the same value (60 % of households used 0 kWh), that part is a large share at one
value, which the memo states as that share (narrator.phrasing.selection, ``share_at_one_value``);
the values are then not said to form clusters (reason ``spike_at_one_value``), so the same
values are never described twice, once as a share and once as a cluster around that value.
"""

from __future__ import annotations

import numpy as np

from narrator.engine.moments import median_sorted
from narrator.findings import Cluster, Clusters, Density

SEVERAL_PEAKS = ("bimodal", "multimodal")
SPIKE_SHARE = 0.5


def peak_regions(density: Density) -> tuple[tuple[int, ...], tuple[int, ...], tuple[float, ...]]:
    """(peak indices, valley indices, shares) of the density's prominent peaks, left to right.

    ``valleys[i]`` is the grid index of the lowest point between peak i and peak i + 1; each
    peak's region runs from the valley before it (or the grid's start) to the valley after it
    (or the grid's end), and ``shares[i]`` is its area (trapezoid rule) over the whole area.
    """
    grid = np.asarray(density.grid, dtype=float)
    curve = np.asarray(density.values, dtype=float)
    positions = sorted(int(np.clip(np.searchsorted(grid, peak), 0, grid.size - 1)) for peak in density.peaks)
    valleys = [left + int(np.argmin(curve[left : right + 1])) for left, right in zip(positions, positions[1:],
                                                                                       strict=False)]
    cuts = [0, *valleys, grid.size - 1]
    areas = np.array([np.trapezoid(curve[a : b + 1], grid[a : b + 1]) for a, b in zip(cuts, cuts[1:], strict=False)])
    total = float(areas.sum())
    shares = tuple(float(area / total) for area in areas) if total > 0 else tuple(0.0 for _ in areas)
    return tuple(positions), tuple(valleys), shares


def find_clusters(sorted_values: np.ndarray, density: Density, shape_label: str, *, min_share: float) -> Clusters:
    """The clusters of ``sorted_values`` (ascending, the data's units) by the module's rule.

    ``shape_label`` is the shape judgement's label; clusters are split only when it speaks of
    several peaks, with ``min_share`` the share a peak's region must hold (the shape rule's own).

    >>> from narrator.engine.describe import describe
    >>> values = np.r_[np.linspace(10, 20, 60), np.linspace(60, 70, 40)]
    >>> found = describe(values).clusters
    >>> found.count, [part.count for part in found.parts]
    (2, [60, 40])
    """
    if shape_label not in SEVERAL_PEAKS:
        reason = "too_few" if shape_label == "undetermined" else "one_peak"
        if reason == "one_peak" and len(density.peaks) >= 2:
            shares = peak_regions(density)[2]
            if sum(share >= min_share for share in shares) >= 2:
                reason = "peaks_not_confirmed"
        return Clusters(count=1, reason=reason, min_peak_share=min_share)
    positions, _, shares = peak_regions(density)
    substantial = [position for position, share in zip(positions, shares, strict=True) if share >= min_share]
    grid = np.asarray(density.grid, dtype=float)
    curve = np.asarray(density.values, dtype=float)
    cuts = [float(grid[left + int(np.argmin(curve[left : right + 1]))])
            for left, right in zip(substantial, substantial[1:], strict=False)]
    peaks = [float(grid[position]) for position in substantial]
    while True:
        edges = [0, *(int(np.searchsorted(sorted_values, cut, side="left")) for cut in cuts), int(sorted_values.size)]
        empty = next((k for k in range(len(edges) - 1) if edges[k + 1] == edges[k]), None)
        if empty is None:
            break
        # No value between two valleys (a peak made by the reflection at a bound): merge it with a neighbour.
        del cuts[min(empty, len(cuts) - 1)]
        del peaks[empty]
    if not cuts:
        return Clusters(count=1, reason="one_peak", min_peak_share=min_share)
    n = int(sorted_values.size)
    parts = []
    for (start, stop), peak in zip(zip(edges, edges[1:], strict=False), peaks, strict=True):
        part = sorted_values[start:stop]
        if _largest_tie(part) >= SPIKE_SHARE * part.size:
            return Clusters(count=1, reason="spike_at_one_value", min_peak_share=min_share)
        parts.append(Cluster(low=float(part[0]), high=float(part[-1]), count=int(part.size),
                             share=part.size / n, median=float(median_sorted(part)), peak=peak))
    return Clusters(count=len(parts), reason="several_peaks", min_peak_share=min_share, cuts=tuple(cuts),
                    parts=tuple(parts))


def _largest_tie(part: np.ndarray) -> int:
    """How many values of the sorted ``part`` share one value, at most."""
    if part.size == 0:
        return 0
    starts = np.flatnonzero(np.r_[True, part[1:] != part[:-1], True])
    return int(np.diff(starts).max())


def cluster_of(values, cuts) -> np.ndarray:
    """The 0-based cluster index of each value: how many cuts lie at or below it.

    >>> cluster_of([1.0, 5.0, 9.0, 12.0], (5.0, 10.0)).tolist()
    [0, 1, 1, 2]
    """
    return np.searchsorted(np.asarray(cuts, dtype=float), np.asarray(values, dtype=float), side="right")
