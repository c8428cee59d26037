"""Invariants of describe() on generated data (hypothesis).

These are mathematical properties, not reference values: permutation
invariance, shift and scale equivariance of center and spread, the median's
resistance to one added extreme value (breakdown point 50 %, Hampel 1974),
ordered fences, and a with-and-without recomputation consistent with the
flagged set.
"""

import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

import narrator

finite = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False)
samples = arrays(np.float64, st.integers(min_value=3, max_value=60), elements=finite)
SETTINGS = settings(max_examples=40, deadline=None)


def close(a, b, scale):
    if a is None or b is None:
        return a is b
    return math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-9 * max(scale, 1.0))


@SETTINGS
@given(samples, st.randoms(use_true_random=False))
def test_permutation_invariance(values, random):
    shuffled = values.copy()
    random.shuffle(shuffled)
    a, b = narrator.describe(values), narrator.describe(shuffled)
    scale = float(np.max(np.abs(values))) if values.size else 1.0
    for key in ("mean", "median", "trimmed_mean_10"):
        assert close(getattr(a.center, key), getattr(b.center, key), scale)
    for key in ("sd", "q1", "q3", "iqr", "mad", "min", "max"):
        assert close(getattr(a.spread, key), getattr(b.spread, key), scale)
    assert a.shape.label == b.shape.label
    assert a.outliers.count == b.outliers.count


@SETTINGS
@given(samples, st.floats(min_value=-1e3, max_value=1e3), st.floats(min_value=0.01, max_value=100))
def test_shift_and_scale_equivariance(values, shift, factor):
    a = narrator.describe(values)
    b = narrator.describe(values * factor + shift)
    scale = (float(np.max(np.abs(values))) * factor + abs(shift)) * 1e3
    for key in ("mean", "median", "trimmed_mean_10"):
        assert close(getattr(a.center, key) * factor + shift, getattr(b.center, key), scale)
    for key in ("sd", "iqr", "mad_scaled"):
        assert close(getattr(a.spread, key) * factor, getattr(b.spread, key), scale)


@SETTINGS
@given(samples, st.floats(min_value=1e7, max_value=1e12))
def test_median_resists_one_extreme_value(values, extreme):
    before = narrator.describe(values)
    after = narrator.describe(np.append(values, extreme))
    ordered = np.sort(values)
    n = values.size
    # Adding one value above everything moves the median at most to the next order statistic.
    assert before.center.median <= after.center.median <= ordered[min(n // 2 + 1, n - 1)] + 1e-9
    # The mean moves by (extreme - mean) / (n + 1): no resistance (breakdown point 0).
    expected_shift = (extreme - before.center.mean) / (n + 1)
    assert math.isclose(after.center.mean - before.center.mean, expected_shift, rel_tol=1e-6)


@SETTINGS
@given(samples, st.sampled_from(["tukey", "adjusted", "modified-z", "esd", None]))
def test_fences_ordered_and_flags_consistent(values, rule):
    found = narrator.describe(values, outlier_rule=rule)
    o = found.outliers
    if o.lower_fence is not None and o.upper_fence is not None:
        assert o.lower_fence <= o.upper_fence
        if o.far_lower_fence is not None:
            assert o.far_lower_fence <= o.lower_fence and o.upper_fence <= o.far_upper_fence
        if rule != "esd":
            for value in o.values:
                assert value < o.lower_fence or value > o.upper_fence
    assert o.count == len(o.values) == len(o.rows) == o.count_low + o.count_high
    assert list(o.values) == sorted(o.values)
    assert set(o.far_out_values) <= set(o.values)
    for value, row in zip(o.values, o.rows, strict=True):
        assert values[row - 1] == value
    w = found.without_outliers
    assert w.n == found.n - o.count
    if o.count and w.n:
        kept = np.sort(values)
        for value in o.values:
            index = np.searchsorted(kept, value)
            kept = np.delete(kept, index)
        assert math.isclose(w.mean, float(np.mean(kept)), rel_tol=1e-9, abs_tol=1e-6)
        assert math.isclose(w.median, float(np.median(kept)), rel_tol=1e-12, abs_tol=1e-9)
