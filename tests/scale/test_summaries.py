"""Mergeable summaries (narrator.scale.summaries, narrator.scale.ranks) against outside references.

References:
- NIST Statistical Reference Datasets, univariate summary statistics: NumAcc1, NumAcc2, NumAcc3
  (certified mean and SD, exact by construction).
- numpy (np.sort, np.mean, np.std) and narrator.engine's in-memory two-pass moments as the
  reference for merged moments; scipy.stats.skew / kurtosis (bias=False) for G1 and G2.
- numpy.sort and numpy.count_nonzero as the reference for the rank bins' brackets and count bounds.
"""

from __future__ import annotations

import math
import pickle

import numpy as np
import pytest
from scipy import stats

from narrator.engine import bins as engine_bins
from narrator.engine import density as engine_density
from narrator.engine.moments import central_moments, excess_kurtosis, skewness_g1
from narrator.reading.sample import guess_decimals
from narrator.scale.ranks import OrderStatistics, plan_brackets, resolve, type7_quantiles, type7_ranks
from narrator.scale.summaries import (
    BinCounts,
    CentreBand,
    DistanceCounts,
    DistinctValues,
    EdgeCounts,
    ExtremeSummary,
    FlaggedBand,
    FlaggedValues,
    LinearBinCounts,
    MomentSummary,
    PartitionCounts,
    PrecisionSummary,
    RankBins,
    ReservoirSample,
    TailCandidates,
    merge_moments,
)

RNG_SEED = 20261201


def _chunks(values: np.ndarray, sizes) -> list[np.ndarray]:
    cuts = np.cumsum(sizes)[:-1]
    return np.split(values, cuts)


def _merged(chunks) -> MomentSummary:
    total = MomentSummary()
    for chunk in chunks:
        total.update(chunk)
    return total


def _tree(chunks) -> MomentSummary:
    level = [MomentSummary.of(c) for c in chunks]
    while len(level) > 1:
        level = [merge_moments(level[k], level[k + 1]) if k + 1 < len(level) else level[k]
                 for k in range(0, len(level), 2)]
    return level[0]


# NIST StRD univariate: NumAcc1 (certified mean 10000002, SD 1), NumAcc2 (mean 1.2, SD 0.1),
# NumAcc3 (mean 1000000.2, SD 0.1). Values as the StRD pages construct them.
NUMACC1 = np.array([10000001.0, 10000003.0, 10000002.0])
NUMACC2 = np.array([1.2] + [1.1, 1.3] * 500)
NUMACC3 = np.array([1000000.2] + [1000000.1, 1000000.3] * 500)


@pytest.mark.parametrize("values, mean, sd", [
    (NUMACC2, 1.2, 0.1),
    (NUMACC3, 1000000.2, 0.1),
])
def test_merged_moments_keep_nist_accuracy(values, mean, sd):
    # NIST StRD certified values; chunks of 1, 7, 300 and the rest, merged in order and as a tree.
    for merged in (_merged(_chunks(values, [1, 7, 300, values.size - 308])),
                   _tree(_chunks(values, [100] * 10 + [1]))):
        moments = merged.moments()
        assert moments.n == values.size
        assert moments.mean == pytest.approx(mean, rel=1e-15)
        assert moments.sd == pytest.approx(sd, rel=1e-9)
        # And the same as the in-memory two-pass moments to far better than the certified digits.
        reference = central_moments(values)
        assert moments.sd == pytest.approx(reference.sd, rel=1e-12)


def test_merged_moments_numacc1_one_value_per_chunk():
    # NIST StRD NumAcc1: mean 10000002 and SD 1 exactly, merged from three chunks of one value.
    moments = _merged([NUMACC1[:1], NUMACC1[1:2], NUMACC1[2:]]).moments()
    assert moments.mean == 10000002.0
    assert moments.sd == 1.0


def test_merged_higher_moments_match_scipy():
    rng = np.random.default_rng(RNG_SEED)
    values = rng.lognormal(1.0, 0.9, 20_000)
    merged = _tree(_chunks(values, [1, 2, 3, 5000, 14_994])).moments()
    g1, _ = skewness_g1(merged)
    # scipy.stats.skew / kurtosis with bias=False are the adjusted G1 and G2 (Joanes & Gill 1998).
    assert g1 == pytest.approx(stats.skew(values, bias=False), rel=1e-12)
    assert excess_kurtosis(merged) == pytest.approx(stats.kurtosis(values, bias=False), rel=1e-11)
    assert merged.mean == pytest.approx(np.mean(values), rel=1e-15)


def test_merge_is_the_same_in_any_grouping():
    rng = np.random.default_rng(RNG_SEED + 1)
    values = rng.normal(50, 3, 9_999)
    chunks = _chunks(values, [1000] * 9 + [999])
    forward, backward = _merged(chunks).moments(), _merged(chunks[::-1]).moments()
    assert forward.n == backward.n
    assert forward.mean == pytest.approx(backward.mean, rel=1e-15)
    assert forward.sd == pytest.approx(backward.sd, rel=1e-13)


def test_extremes_with_rows_and_counts():
    values = np.array([5.0, 1.0, 9.0, 1.0, 9.0, 4.0, 2.0])
    rows = np.arange(2, 9)
    whole = ExtremeSummary().update(values, rows)
    parts = ExtremeSummary().update(values[4:], rows[4:]).merge(ExtremeSummary().update(values[:4], rows[:4]))
    for summary in (whole, parts):
        assert (summary.low, summary.low_row, summary.low_count) == (1.0, 3, 2)
        assert (summary.high, summary.high_row, summary.high_count) == (9.0, 4, 2)
        assert (summary.second_low, summary.second_high) == (2.0, 5.0)


def test_reservoir_does_not_depend_on_chunking():
    rng = np.random.default_rng(RNG_SEED + 2)
    values = rng.normal(size=30_000)
    rows = np.arange(2, values.size + 2)
    one = ReservoirSample(1000, seed=7).update(values, rows)
    many = ReservoirSample(1000, seed=7)
    for chunk_values, chunk_rows in zip(np.array_split(values, 37), np.array_split(rows, 37), strict=True):
        many.merge(ReservoirSample(1000, seed=7).update(chunk_values, chunk_rows))
    assert np.array_equal(np.sort(one.rows), np.sort(many.rows))
    assert np.array_equal(one.in_row_order()[0], many.in_row_order()[0])
    other_seed = ReservoirSample(1000, seed=8).update(values, rows)
    assert not np.array_equal(np.sort(one.rows), np.sort(other_seed.rows))
    # Uniform without replacement: the sample's mean is within 4 standard errors of the data's.
    assert abs(one.values.mean() - values.mean()) < 4 * values.std() / np.sqrt(1000)


def test_tail_candidates_are_the_extremes():
    rng = np.random.default_rng(RNG_SEED + 3)
    values = rng.normal(size=5000)
    rows = np.arange(2, 5002)
    tails = TailCandidates(10)
    for chunk_values, chunk_rows in zip(np.array_split(values, 9), np.array_split(rows, 9), strict=True):
        tails.merge(TailCandidates(10).update(chunk_values, chunk_rows))
    assert np.array_equal(tails.low_values, np.sort(values)[:10])
    assert np.array_equal(tails.high_values, np.sort(values)[::-1][:10])
    assert np.array_equal(values[tails.high_rows - 2], tails.high_values)



def test_tail_candidates_of_large_chunks_with_ties():
    # A fresh summary's first chunk selects its extremes from a strided probe's cut: checked against
    # numpy.lexsort of the whole (value, then row) on whole numbers that tie often, in chunks of 40 000.
    rng = np.random.default_rng(RNG_SEED + 13)
    values = np.round(rng.normal(0, 30, 120_000))
    rows = np.arange(2, values.size + 2)
    tails = TailCandidates(200)
    for chunk_values, chunk_rows in zip(np.array_split(values, 3), np.array_split(rows, 3), strict=True):
        tails.merge(TailCandidates(200).update(chunk_values, chunk_rows))
    low, high = np.lexsort((rows, values))[:200], np.lexsort((rows, -values))[:200]
    assert np.array_equal(tails.low_values, values[low]) and np.array_equal(tails.low_rows, rows[low])
    assert np.array_equal(tails.high_values, values[high]) and np.array_equal(tails.high_rows, rows[high])

def test_flagged_values_keep_the_farthest_out_per_side_in_any_chunking():
    # Checked against numpy directly: counts, ranges and the k farthest out on each side, with ties
    # (whole numbers repeat) resolved as the in-memory engine lists them (numpy.lexsort order).
    rng = np.random.default_rng(RNG_SEED + 4)
    values = np.round(rng.normal(0, 10, 6000))
    rows = rng.permutation(np.arange(2, 6002))
    test = ("fences", -12.0, 15.0)
    whole = FlaggedValues(test, 1.0, k=7).update(values, rows)
    parts = FlaggedValues(test, 1.0, k=7)
    for chunk_values, chunk_rows in zip(np.array_split(values, 13), np.array_split(rows, 13), strict=True):
        parts.merge(pickle.loads(pickle.dumps(FlaggedValues(test, 1.0, k=7).update(chunk_values, chunk_rows))))
    low, high = values < -12.0, values > 15.0
    order = np.lexsort((rows, values))
    low_order, high_order = order[low[order]], order[high[order]]
    for found in (whole, parts):
        assert (found.count_low, found.count_high) == (low.sum(), high.sum())
        assert found.low_max == values[low].max() and found.high_min == values[high].min()
        assert np.array_equal(found.low_rows, rows[low_order[:7]])
        assert np.array_equal(found.high_rows, rows[high_order[-7:]])
        assert np.array_equal(found.low_values, values[low_order[:7]])
        inside = central_moments(values[~(low | high)])
        assert found.inside.moments().n == inside.n


def test_bin_brackets_give_exact_order_statistics():
    rng = np.random.default_rng(RNG_SEED + 4)
    values = np.round(rng.lognormal(2, 1, 50_000), 1)  # ties on purpose
    bins = RankBins.around(values[:5000])
    for chunk in np.array_split(values, 13):
        bins.merge(RankBins(bins.centre, bins.scale).update(chunk))
    n = values.size
    assert bins.n == n
    ranks = type7_ranks(n, [0.05, 0.25, 0.5, 0.75, 0.95])
    partition = plan_brackets(bins, [(r, r) for r in ranks])
    for chunk in np.array_split(values, 17):
        partition.update(chunk)
    statistics = OrderStatistics(n)
    statistics.add(partition)
    # The bins count exactly, so their brackets hold: no further pass.
    assert statistics.missing(ranks) == []
    ordered = np.sort(values)
    for rank in ranks:
        assert statistics(rank) == ordered[rank]
    # numpy.quantile(method="linear") is Hyndman-Fan type 7.
    probabilities = [0.05, 0.25, 0.5, 0.75, 0.95]
    assert np.array_equal(type7_quantiles(statistics, n, probabilities),
                          np.quantile(values, probabilities, method="linear"))


def test_bin_brackets_answer_counts_as_numpy_does():
    # Reference: numpy.sort (order statistics), numpy.count_nonzero (counts below and at a value). The kept
    # runs of bins, filled chunk by chunk, merged in pieces and pickled, give every rank inside them, the
    # counts at any value in a kept or an empty bin, and None (never a wrong count) elsewhere.
    rng = np.random.default_rng(RNG_SEED + 12)
    values = np.round(rng.lognormal(2, 1, 30_000), 2)  # ties on purpose
    bins = RankBins.around(values[:3000]).update(values)
    n = values.size
    ordered = np.sort(values)
    ranges = [(0, 0), (n // 4, n // 4 + 40), (n // 2, n // 2), (n - 1, n - 1)]
    plan = plan_brackets(bins, ranges)
    whole = pickle.loads(pickle.dumps(plan)).update(values)
    pieces = [pickle.loads(pickle.dumps(plan_brackets(bins, ranges).update(c))) for c in np.array_split(values, 11)]
    merged = pieces[0]
    for piece in pieces[1:]:
        merged.merge(piece)
    for found in (whole, merged):
        for a, b in ranges:
            for rank in range(a, b + 1):
                assert found.order_statistic(rank) == ordered[rank]
        for value in [*rng.choice(values, 200), *(ordered[r] for r in (0, n // 4, n // 2, n - 1)), -1.0, 1e9]:
            answer = found.counts_at(float(value))
            key = bins.keys(np.array([value]))[0]
            kept = any(bins.bin_of_rank(a) <= key <= bins.bin_of_rank(b) for a, b in ranges)
            if kept or value < ordered[0] or value > ordered[-1]:
                assert answer == (np.count_nonzero(values < value), np.count_nonzero(values == value))
            else:
                assert answer is None or answer == (np.count_nonzero(values < value), 0)
        low, high = ordered[n // 4], ordered[n // 4 + 40]
        assert found.covers(low, high)
        kept_values, kept_counts = found.kept_between(low, high)
        inside = values[(values >= low) & (values <= high)]
        assert np.array_equal(np.repeat(kept_values, kept_counts), np.sort(inside))
        assert not found.covers(ordered[n // 4], ordered[n // 2])


@pytest.mark.parametrize("kind", ["normal", "far_from_zero", "sorted_parts", "zero_spike", "signed_tiny"])
def test_rank_bins_bracket_every_rank_and_bound_every_count(kind):
    # Reference: numpy.sort (the order statistic of each rank) and numpy.count_nonzero (counts below and
    # at a value). The brackets must hold for any data, the centre taken from the first chunk only.
    rng = np.random.default_rng(RNG_SEED + 9)
    if kind == "normal":
        values = rng.normal(0.0, 1.0, 40_000)
    elif kind == "far_from_zero":
        values = 1e6 + rng.normal(0.0, 0.1, 40_000)
    elif kind == "sorted_parts":  # the first chunk holds the smallest values only
        values = np.sort(rng.lognormal(3.0, 0.8, 40_000))
    elif kind == "zero_spike":
        values = np.where(rng.random(40_000) < 0.4, 0.0, rng.lognormal(0.0, 1.0, 40_000))
    else:
        values = np.concatenate([rng.normal(0.0, 1e-30, 1000), rng.normal(0.0, 1e30, 1000), [1e308, -1e308, 0.0]])
    chunks = np.array_split(values, 7)
    bins = RankBins.around(chunks[0])
    for chunk in chunks:
        bins.update(chunk)
    ordered = np.sort(values)
    n = values.size
    for rank in [0, 1, n // 4, n // 2, n - 2, n - 1, *rng.integers(0, n, 300)]:
        assert bins.value_below(rank) < ordered[rank] < bins.value_above(rank)
    for value in [*rng.choice(values, 300), 0.0, -math.inf, math.inf, float(ordered[n // 2])]:
        least, most = bins.count_bounds(value)
        assert least <= np.count_nonzero(values < value) <= np.count_nonzero(values <= value) <= most
    # A bin is at most 2^-12 of its distance from the centre wide: the median's bracket is narrow.
    if kind == "normal":
        assert np.count_nonzero((values > bins.value_below(n // 2)) & (values < bins.value_above(n // 2))) < 50


def test_rank_bins_merge_exactly_in_any_grouping():
    rng = np.random.default_rng(RNG_SEED + 10)
    values = rng.lognormal(1.0, 2.0, 30_000)
    chunks = np.array_split(values, 9)
    whole = RankBins(1.0, 2.0).update(values)
    level = [RankBins(1.0, 2.0).update(chunk) for chunk in chunks]
    while len(level) > 1:
        level = [level[k].merge(level[k + 1]) if k + 1 < len(level) else level[k] for k in range(0, len(level), 2)]
    assert (level[0].first, level[0].counts.tolist()) == (whole.first, whole.counts.tolist())
    with pytest.raises(ValueError):
        whole.merge(RankBins(1.5, 2.0))


def test_a_missed_bracket_is_widened_until_exact():
    values = np.arange(1000.0)
    bins = RankBins.around(values).update(values)
    # A wrong guess (one boundary, nothing kept) still ends exact after widening passes.
    statistics = OrderStatistics(values.size)
    statistics.add(PartitionCounts(np.array([990.0]), np.array([False, False])).update(values))
    passes = resolve(lambda plan: plan.update(values), statistics, bins, [3, 500, 997])
    assert passes >= 1
    assert [statistics(r) for r in (3, 500, 997)] == [3.0, 500.0, 997.0]


def test_rank_bins_survive_pickling():
    bins = RankBins.around(np.arange(10_000.0)).update(np.arange(10_000.0))
    copy = pickle.loads(pickle.dumps(bins))
    assert copy.n == 10_000
    assert (copy.value_below(5000), copy.value_above(5000)) == (bins.value_below(5000), bins.value_above(5000))


def test_precision_and_distinct_values():
    values = np.array([1.5, 2.25, 3.0, 4.125])
    summary = PrecisionSummary()
    for chunk in (values[:2], values[2:]):
        summary.merge(PrecisionSummary().update(chunk))
    assert summary.decimals == guess_decimals(values) == 3
    assert not summary.whole
    distinct = DistinctValues(11).update(np.array([1.0, 2.0, 2.0])).merge(DistinctValues(11).update(np.array([3.0])))
    assert distinct.count_up_to(10) == 3
    assert DistinctValues(11).update(np.arange(50.0)).count_up_to(10) == 11



def test_precision_when_only_a_late_value_misfits():
    # The summary tests the first values of a chunk before all of them: a value with more decimals far
    # into the chunk must still count, as in the in-memory engine (guess_decimals looks at all 1000 here).
    values = np.arange(1000) * 0.5 + 10.0
    values[900] = 10.125
    summary = PrecisionSummary().update(values)
    assert summary.decimals == guess_decimals(values) == 3
    assert not summary.whole
    assert PrecisionSummary().update(np.arange(1000.0)).whole

def test_bin_counts_are_additive_and_exact():
    rng = np.random.default_rng(RNG_SEED + 5)
    values = rng.normal(size=10_000)
    whole = BinCounts(0.25, 0.0, -20.0, 1e-12, 40, clip=True).update(values)
    parts = BinCounts(0.25, 0.0, -20.0, 1e-12, 40, clip=True)
    for chunk in np.array_split(values, 7):
        parts.update(chunk)
    assert np.array_equal(whole.counts, parts.counts)
    assert whole.counts.sum() == values.size


def test_linear_binning_is_additive():
    rng = np.random.default_rng(RNG_SEED + 6)
    values = rng.normal(size=10_000)
    whole = LinearBinCounts(0.0, 5.0, -2.0, 0.01, 401).update(values)
    parts = LinearBinCounts(0.0, 5.0, -2.0, 0.01, 401)
    for chunk in np.array_split(values, 11):
        parts.update(chunk)
    assert np.allclose(whole.counts, parts.counts, rtol=1e-12, atol=1e-12)
    assert parts.counts.sum() == pytest.approx(values.size, rel=1e-12)


def test_edge_counts_equal_a_binary_search():
    # Reference: numpy.searchsorted (side="right") of every value, on print-clean edges of any width and
    # offset, with values on, next to and far from the edges.
    rng = np.random.default_rng(RNG_SEED + 5)
    for _ in range(60):
        width = 10.0 ** rng.uniform(-4, 3) * rng.choice([1.0, 2.0, 2.5, 5.0])
        shift = float(rng.choice([0.0, rng.uniform(-1e3, 1e3), 1e9]))
        edges = engine_bins._edges(float(rng.integers(-50, 50)), int(rng.integers(1, 200)), width, shift)
        values = np.concatenate([rng.uniform(edges[0] - 3 * width, edges[-1] + 3 * width, 5000), edges,
                                 np.nextafter(edges, np.inf), np.nextafter(edges, -np.inf), [1e308, -1e308]])
        counts = EdgeCounts(edges)
        for chunk in _chunks(values, [1000, 7, 4000, 10_000]):
            counts.update(chunk, np.zeros(chunk.size, dtype=np.int64))
        reference = np.bincount(np.searchsorted(edges, values, side="right"), minlength=edges.size + 1)
        assert np.array_equal(counts.counts, reference)


def test_flagged_band_settles_to_the_exact_limits():
    # Reference: FlaggedValues with the exact limits, fed the same chunks.
    rng = np.random.default_rng(RNG_SEED + 6)
    values = np.round(rng.lognormal(2.0, 1.0, 30_000), 2)
    rows = np.arange(2, values.size + 2, dtype=np.int64)
    band = FlaggedBand(-1.0, 0.5, 30.0, 31.0, 1.0, k=50)
    for chunk, chunk_rows in zip(_chunks(values, [5000, 333, 20_000]), _chunks(rows, [5000, 333, 20_000]),
                                 strict=True):
        band.update(chunk, chunk_rows)
    band = pickle.loads(pickle.dumps(band))
    for lower, upper in [(0.25, 30.0), (-1.0, 31.0), (0.5, 30.5)]:
        exact = FlaggedValues(("fences", lower, upper), 1.0, k=50).update(values, rows)
        settled = band.settle(lower, upper)
        assert (settled.count_low, settled.count_high) == (exact.count_low, exact.count_high)
        assert np.array_equal(settled.high_values, exact.high_values)
        assert np.array_equal(settled.high_rows, exact.high_rows)
        assert np.array_equal(settled.low_rows, exact.low_rows)
        assert (settled.low_max, settled.high_min) == (exact.low_max, exact.high_min)
        assert settled.inside.n == exact.inside.n
        assert settled.inside.mean == pytest.approx(exact.inside.mean, rel=1e-12)
        assert settled.inside.m2 == pytest.approx(exact.inside.m2, rel=1e-12)
    assert band.settle(0.6, 30.0) is None  # outside the band: not settled, never guessed


def test_centre_band_gives_the_distances_from_any_centre_in_reach():
    # Reference: DistanceCounts with the exact centre (the MAD's median of distances, as numpy computes it).
    rng = np.random.default_rng(RNG_SEED + 7)
    values = rng.normal(10.0, 2.0, 20_001)
    band = CentreBand(10.0, 0.05, 1.2, 1.5, 1.0)
    for chunk in _chunks(values, [4000, 16_001]):
        band.update(chunk)
    for centre in (9.97, 10.0, 10.04):
        settled = band.settle(centre)
        distances = np.sort(np.abs(values - centre))
        rank = values.size // 2
        assert settled.smallest(rank) == distances[rank]
        direct = DistanceCounts(centre, 1.0, settled.inner, settled.outer).update(values)
        assert (settled.below, settled.above) == (direct.below, direct.above)
    assert band.settle(10.06) is None


def test_a_lattice_binning_coarsens_exactly():
    # Linear binning on a lattice of 2^(L+1) + 1 points, coarsened, equals binning on 2^L + 1 points directly
    # (to rounding), and the weights still add up to the number of values.
    rng = np.random.default_rng(RNG_SEED + 8)
    scaled = np.concatenate([[-1.0, 1.0], rng.uniform(-1.0, 1.0, 5000)])
    fine = LinearBinCounts(0.0, 1.0, -1.0, 2.0**-9, 2**10 + 1).update(scaled)
    coarse = LinearBinCounts(0.0, 1.0, -1.0, 2.0**-8, 2**9 + 1).update(scaled)
    coarsened = engine_density.coarsen_lattice(fine.counts)
    np.testing.assert_allclose(coarsened, coarse.counts, rtol=0, atol=1e-12)
    assert coarsened.sum() == pytest.approx(scaled.size, rel=1e-14)


def test_partition_counts_at_values_inside_kept_gaps():
    rng = np.random.default_rng(RNG_SEED + 9)
    values = np.round(rng.normal(0.0, 1.0, 4000), 2)
    partition = PartitionCounts(np.array([-0.5, 0.5, 1.0]), np.array([False, True, False, False]))
    partition.update(values)
    for value in (-0.5, -0.2, 0.0, 0.37, 0.5):
        below, equal = partition.counts_at(value)
        assert below == int(np.count_nonzero(values < value))
        assert equal == int(np.count_nonzero(values == value))
    assert partition.counts_at(0.7) is None  # a gap whose values were not kept
    assert partition.covers(-0.5, 0.5) and not partition.covers(-0.6, 0.5)
