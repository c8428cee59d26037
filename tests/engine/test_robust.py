"""Medcouple and Bowley skewness against outside references.

Reference for the medcouple: statsmodels' O(n^2) implementation, which builds
the whole kernel matrix and follows Brys, Hubert & Struyf (2004) for values tied
at the median (statsmodels GH5395). Newer statsmodels also has a fast variant
whose own documentation warns it is inexact for small n and heavy ties, so the
tests ask for the matrix version (use_fast=False) where that option exists.
"""

from __future__ import annotations

import inspect

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from statsmodels.stats.stattools import medcouple as statsmodels_medcouple

from narrator.engine import robust
from narrator.engine.robust import _insertion_points, bowley_skewness, medcouple, weighted_lower_median
from narrator.errors import NarratorError

_MATRIX_VERSION = (
    {"use_fast": False} if "use_fast" in inspect.signature(statsmodels_medcouple).parameters else {}
)


def reference_medcouple(values: np.ndarray) -> float:
    """statsmodels (matrix version); it cannot take a single value, whose medcouple is 0 by definition."""
    return float(statsmodels_medcouple(np.asarray(values, dtype=float), **_MATRIX_VERSION))


def _samples(rng: np.random.Generator, count: int, largest_n: int):
    makers = (
        lambda n: rng.normal(size=n),
        lambda n: rng.lognormal(sigma=1.0, size=n),
        lambda n: np.round(rng.lognormal(sigma=0.8, size=n), 1),  # heavy ties from rounding
        lambda n: rng.integers(0, 6, size=n).astype(float),  # few distinct integers
        lambda n: -rng.exponential(size=n),  # left-skewed: negative medcouple
        lambda n: np.round(rng.normal(size=n) * 2.0) / 2.0,
        lambda n: np.concatenate([np.zeros(n // 2 + 1), rng.exponential(size=n)]),  # many at the median
    )
    for index in range(count):
        n = int(rng.integers(2, largest_n + 1))
        yield np.sort(makers[index % len(makers)](n))


@pytest.fixture(params=["by distinct values", "by selection"])
def either_path(request, monkeypatch):
    """Each reference test runs through both of medcouple's ways: the weighted kernel of distinct values (taken
    whenever few distinct values make few pairs) and the selection over the whole kernel (taken otherwise)."""
    if request.param == "by selection":
        monkeypatch.setattr(robust, "_DISTINCT_PAIRS_MAX", 0)
    return request.param


def test_the_two_ways_agree_to_the_bit_on_tied_data(monkeypatch):
    # Whole numbers with ties (days, counts), decimals rounded to one place, a spike at the median, huge and tiny
    # magnitudes: the distinct-values way must give the very float the selection gives.
    rng = np.random.default_rng(20261203)
    makers = (
        lambda n: rng.poisson(20, n).astype(float),
        lambda n: np.round(rng.gamma(3.0, 5.0, n)),
        lambda n: np.round(rng.lognormal(0.0, 0.7, n), 1),
        lambda n: np.concatenate([np.zeros(n), rng.integers(1, 9, n // 3)]).astype(float),
        lambda n: rng.choice([-1e300, 0.0, 1e-300, 5.0, 5.0, 5.0], n),
        lambda n: rng.integers(-3, 4, n) * 0.1,
    )
    cases = []
    for index in range(600):
        n = int(rng.integers(1, 3000 if index % 10 == 0 else 300))
        cases.append(np.sort(makers[index % len(makers)](n)))
    distinct = [medcouple(values) for values in cases]
    monkeypatch.setattr(robust, "_DISTINCT_PAIRS_MAX", 0)
    selection = [medcouple(values) for values in cases]
    assert [float(v).hex() for v in distinct] == [float(v).hex() for v in selection]


def test_matches_statsmodels_on_many_small_samples(either_path):
    # Reference: statsmodels medcouple (matrix version), exact kernel median.
    rng = np.random.default_rng(20240611)
    for values in _samples(rng, count=700, largest_n=60):
        assert medcouple(values) == pytest.approx(reference_medcouple(values), abs=1e-12), values


def test_matches_statsmodels_up_to_two_thousand_values(either_path):
    # Reference: statsmodels medcouple (matrix version); n up to 2000 keeps its n^2/4 matrix small.
    rng = np.random.default_rng(7)
    for values in _samples(rng, count=28, largest_n=2000):
        assert medcouple(values) == pytest.approx(reference_medcouple(values), abs=1e-12)


@settings(max_examples=150, deadline=None)
@given(st.lists(st.integers(min_value=-4, max_value=4), min_size=2, max_size=40))
def test_matches_statsmodels_on_tied_integers(numbers):
    # Both ways (the hypothesis examples cannot take a fixture): distinct values, then the selection.
    # Reference: statsmodels medcouple; small integer ranges force every kind of tie at the median.
    values = np.sort(np.asarray(numbers, dtype=float))
    reference = reference_medcouple(values)
    assert medcouple(values) == pytest.approx(reference, abs=1e-12)
    saved = robust._DISTINCT_PAIRS_MAX
    robust._DISTINCT_PAIRS_MAX = 0
    try:
        assert medcouple(values) == pytest.approx(reference, abs=1e-12)
    finally:
        robust._DISTINCT_PAIRS_MAX = saved


def test_tiny_samples_and_constant_data():
    # Definition (Brys, Hubert & Struyf 2004): one value is its own median, kernel sign(0) = 0.
    assert medcouple(np.array([5.0])) == 0.0
    # Two values: the kernel is (b - m - (m - a)) / (b - a) = 0 with m the midpoint.
    assert medcouple(np.array([1.0, 3.0])) == 0.0
    for values in ([1.0, 2.0, 10.0], [1.0, 9.0, 10.0], [0.0, 0.0, 1.0], [0.0, 1.0, 1.0]):
        array = np.array(values)
        assert medcouple(array) == pytest.approx(reference_medcouple(array), abs=1e-12)
    assert medcouple(np.full(25, 3.7)) == 0.0
    assert medcouple(np.full(4, -2.0)) == 0.0


def test_symmetric_data_give_zero_and_mirroring_flips_the_sign():
    # Property of the definition: MC(-x) = -MC(x), and symmetric data give 0.
    rng = np.random.default_rng(3)
    skewed = np.sort(rng.lognormal(size=301))
    assert medcouple(np.sort(-skewed)) == pytest.approx(-medcouple(skewed), abs=1e-12)
    half = rng.exponential(size=200)
    symmetric = np.sort(np.concatenate([-half, half]))
    assert medcouple(symmetric) == pytest.approx(0.0, abs=1e-12)
    assert medcouple(skewed) > 0.2  # a lognormal has a clearly positive medcouple


def test_location_and_scale_invariance_including_huge_magnitudes():
    # Property of the definition: MC(a + b x) = MC(x) for b > 0. Power-of-two scales are exact, so the
    # values must agree to the last bit; a large shift costs digits of the data themselves.
    rng = np.random.default_rng(11)
    values = np.sort(np.round(rng.lognormal(size=500), 2))
    expected = reference_medcouple(values)
    assert medcouple(values) == pytest.approx(expected, abs=1e-12)
    assert medcouple(values * 2.0**1000) == medcouple(values)
    assert medcouple(values * 2.0**-1000) == medcouple(values)  # centred values rescaled up, exactly
    assert medcouple(values * 1e300) == pytest.approx(expected, abs=1e-12)
    assert medcouple(values * 1e-300) == pytest.approx(expected, abs=1e-12)
    shifted = np.sort(np.round(rng.normal(size=400), 3))
    assert medcouple(shifted + 1e6) == pytest.approx(medcouple(shifted), abs=1e-9)
    # Near the largest double the differences x - m would overflow without rescaling.
    near_max = np.sort(np.array([-1.7e308, -1.0e308, 0.0, 0.5e308, 1.7e308]))
    assert medcouple(near_max) == pytest.approx(medcouple(near_max / 1e300), abs=1e-12)


def test_two_hundred_thousand_values_complete_without_a_square_matrix():
    # Scale check, no timing: an n^2 kernel matrix would need 80 GB here. The answer is checked
    # against the same data thinned to every 50th order statistic only loosely (a consistency check).
    rng = np.random.default_rng(2026)
    values = np.sort(rng.lognormal(sigma=0.6, size=200_000))
    result = medcouple(values)
    thinned = values[::50]
    assert -1.0 <= result <= 1.0
    assert result == pytest.approx(reference_medcouple(thinned), abs=0.03)
    # Heavy ties at this size: integers 0..9 with the median value repeated tens of thousands of times.
    tied = np.sort(np.minimum(rng.poisson(2.0, size=200_000), 9).astype(float))
    assert -1.0 <= medcouple(tied) <= 1.0


def test_exact_value_from_the_definition_by_hand():
    # x = 1, 2, 3, 6, 12: median 3; pairs (x_i <= 3 <= x_j) give the kernel values
    # (x_j + x_i - 6) / (x_j - x_i); with the tie at 3 scored 0 the nine values have median 0.5.
    assert medcouple(np.array([1.0, 2.0, 3.0, 6.0, 12.0])) == pytest.approx(0.5, abs=1e-15)


@pytest.mark.parametrize(
    "bad",
    [np.array([]), np.array([3.0, 1.0, 2.0]), np.array([1.0, np.nan]), np.array([[1.0, 2.0]])],
)
def test_bad_input_raises_narrator_error(bad):
    with pytest.raises(NarratorError):
        medcouple(bad)


def test_bowley_skewness():
    # Definition (Bowley 1901): (Q3 + Q1 - 2 Q2) / (Q3 - Q1); quartiles from numpy (Hyndman-Fan type 7).
    rng = np.random.default_rng(5)
    values = rng.lognormal(size=999)
    q1, median, q3 = np.quantile(values, [0.25, 0.5, 0.75])
    assert bowley_skewness(q1, median, q3) == pytest.approx((q3 + q1 - 2 * median) / (q3 - q1), rel=1e-15)
    assert bowley_skewness(1.0, 2.0, 3.0) == 0.0
    assert bowley_skewness(1.0, 1.0, 3.0) == 1.0
    assert bowley_skewness(1.0, 3.0, 3.0) == -1.0
    assert bowley_skewness(2.0, 2.0, 2.0) is None  # IQR = 0: undefined
    with pytest.raises(NarratorError):
        bowley_skewness(3.0, 2.0, 1.0)
    with pytest.raises(NarratorError):
        bowley_skewness(1.0, float("nan"), 3.0)


@settings(max_examples=200, deadline=None)
@given(st.lists(st.tuples(st.integers(-20, 20), st.integers(0, 9)), min_size=1, max_size=400))
def test_weighted_median_by_selection_equals_the_sorted_definition(pairs):
    # Reference: the definition computed with numpy's stable sort and cumulative sums.
    values = np.array([float(v) for v, _ in pairs])
    weights = np.array([w for _, w in pairs], dtype=np.int64)
    if weights.sum() == 0:
        weights[0] = 1
    order = np.argsort(values, kind="stable")
    cumulative = np.cumsum(weights[order])
    expected = values[order][np.searchsorted(2 * cumulative, cumulative[-1], side="left")]
    assert weighted_lower_median(values, weights) == expected


@settings(max_examples=200, deadline=None)
@given(st.lists(st.integers(-50, 50), max_size=300), st.lists(st.integers(-60, 60), max_size=300))
def test_linear_merge_insertion_points_equal_numpy_searchsorted(haystack, needles):
    # Reference: numpy.searchsorted(side="left"); ties between needles and haystack values included.
    haystack = np.sort(np.array(haystack, dtype=float))
    found = np.sort(np.array(needles, dtype=float))
    assert np.array_equal(_insertion_points(haystack, found), np.searchsorted(haystack, found, side="left"))
