"""describe() on the awkward inputs named in the engine issue: each gives the right flags, never a crash."""

import math

import numpy as np
import pytest

import narrator
from narrator.errors import NarratorError
from narrator.findings import dumps, loads


def test_no_values():
    found = narrator.describe([])
    assert found.n == 0 and found.center is None
    assert found.quality.has("no_values")
    assert found.shape.label == "undetermined"
    loads(dumps(found))


def test_one_value():
    found = narrator.describe([42.0])
    assert found.center.mean == found.center.median == 42.0
    assert math.isnan(found.spread.sd)
    assert found.shape.label == "undetermined" and "no_spread" in found.shape.reasons
    assert found.intervals.mean is None and found.intervals.reason == "too_few"
    assert found.quality.has("too_few_for_shape")
    assert dumps(found)  # NaN becomes null, never invalid JSON


def test_two_values():
    found = narrator.describe([1.0, 3.0])
    assert found.center.median == 2.0 and found.spread.sd == pytest.approx(math.sqrt(2))
    assert found.shape.label == "undetermined" and found.shape.reasons == ("too_few",)
    assert found.outliers.count == 0


def test_all_values_equal():
    found = narrator.describe([7.0] * 25)
    assert found.spread.sd == 0 and found.spread.iqr == 0
    assert found.quality.has("constant")
    assert found.shape.label == "undetermined"
    assert found.outliers.count == 0
    assert found.intervals.mean is None


def test_infinities_are_excluded_and_counted():
    found = narrator.describe([1.0, 2.0, math.inf, 3.0, -math.inf, math.nan])
    assert found.n == 3 and found.n_missing == 1
    assert found.quality.get("non_finite").count == 2


def test_values_near_the_largest_double():
    values = np.array([1e308, 1.5e308, 1.7e308, 1.2e308, 1.1e308, 1.3e308, 1.6e308, 1.4e308, 1.05e308])
    found = narrator.describe(values)
    assert found.center.mean == pytest.approx(float(np.mean(values / 1e300)) * 1e300, rel=1e-12)
    assert math.isfinite(found.spread.sd)
    assert found.spread.sd == pytest.approx(float(np.std(values / 1e300, ddof=1)) * 1e300, rel=1e-12)
    loads(dumps(found))


def test_tiny_magnitudes():
    values = np.array([1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 100.0]) * 1e-300
    found = narrator.describe(values)
    assert found.center.median == pytest.approx(4.5e-300, rel=1e-12)
    assert found.outliers.count >= 1


def test_population_rows_get_no_intervals():
    found = narrator.describe(np.arange(1.0, 41.0), population=True)
    assert found.intervals.mean is None and found.intervals.reason == "population"
    assert found.variable.population


def test_valid_range_excludes_impossible_values_which_are_not_outliers():
    values = [3, 5, 4, 6, 5, -3, 4, 7, 5, 6, 212, 5]
    found = narrator.describe(values, valid_min=0, valid_max=100)
    assert found.n == 10 and found.quality.n_impossible == 2
    assert -3 not in found.outliers.values and 212 not in found.outliers.values


def test_lower_bound_implies_impossible_below_it():
    found = narrator.describe([2.0, 3.0, -1.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0], lower_bound=0)
    assert found.n == 8 and found.quality.n_impossible == 1
    assert found.density.reflected and min(found.density.grid) >= 0


def test_missing_value_code_is_flagged_not_dropped():
    rng = np.random.default_rng(3)
    values = np.append(rng.normal(30, 5, 60).round(), [-99, -99, -99])
    found = narrator.describe(values)
    flag = found.quality.get("missing_code")
    assert flag is not None and flag.values == (-99.0,) and flag.count == 3
    assert found.n == 63  # kept: the user is asked, nothing is silently dropped


def test_heaping_at_multiples_of_five():
    rng = np.random.default_rng(5)
    exact = rng.gamma(4, 10, 400).round()
    heaped = np.where(rng.random(400) < 0.6, np.round(exact / 5) * 5, exact)
    assert narrator.describe(heaped).quality.has("heaping")
    assert not narrator.describe(exact).quality.has("heaping")


def test_bad_options_raise_our_error():
    for kwargs in (
        {"outlier_rule": "nonsense"},
        {"level": 1.5},
        {"bin_rule": "nope"},
        {"valid_min": 5, "valid_max": 1},
        {"lower_bound": 3, "upper_bound": 1},
    ):
        with pytest.raises(NarratorError):
            narrator.describe([1.0, 2.0, 3.0], **kwargs)


def test_text_values_raise_our_error():
    with pytest.raises(NarratorError):
        narrator.describe(["a", "b"])


def test_deterministic():
    rng = np.random.default_rng(11)
    values = rng.lognormal(2, 1, 25)
    assert dumps(narrator.describe(values)) == dumps(narrator.describe(values))


def test_a_real_value_equal_to_a_code_is_not_flagged():
    # A million long-tailed measurements recorded to one decimal: 99.0 sits far out (beyond the
    # far-out fences) and repeats, but about as often as 98.9 and 99.1, so it is a real value,
    # not a code (the spike check in narrator.engine.quality).
    rng = np.random.default_rng(0)
    values = rng.lognormal(1, 1.5, 1_000_000).round(1)
    q1, q3 = np.quantile(values, [0.25, 0.75])
    assert (values == 99.0).sum() >= 2 and q3 + 3 * (q3 - q1) < 99.0
    assert not narrator.describe(values).quality.has("missing_code")
    with_code = np.append(values, [99.0] * 200)  # the same data with a typed code piled on 99
    assert narrator.describe(with_code).quality.has("missing_code")


def test_median_of_equal_subnormal_middle_values_is_that_value():
    # Found by hypothesis (tests/engine/test_properties.py): halving each middle value first sent two
    # equal subnormals to 0, below the first quartile, and the Bowley skewness refused the quartiles.
    # numpy.median is the reference for the median and the quartiles.
    values = np.array([1.0, 5e-324, 5e-324, 5e-324])
    found = narrator.describe(values)
    assert found.center.median == float(np.median(values)) == 5e-324
    assert found.spread.q1 <= found.center.median <= found.spread.q3


def test_interval_of_tiny_values_keeps_its_width():
    # Scale equivariance (a mathematical property): the t interval of 1e-223 * x is 1e-223 times
    # that of x; squaring such values directly would underflow to a zero width.
    x = np.arange(1.0, 11.0)
    tiny = narrator.describe(x * 1e-223).intervals.mean
    plain = narrator.describe(x).intervals.mean
    assert tiny.low == pytest.approx(plain.low * 1e-223, rel=1e-12)
    assert tiny.high == pytest.approx(plain.high * 1e-223, rel=1e-12)


def test_a_lone_99_among_real_values_in_the_90s_is_not_a_missing_code():
    # Generated waits (days): a long right tail of real values in the 80s and 90s, and one 99. A value typed
    # for "missing" repeats and piles up against its neighbours; a single 99 does neither.
    rng = np.random.default_rng(12)
    values = np.concatenate([rng.gamma(2.0, 6.0, 300).round(), rng.uniform(80, 98, 6).round(), [99.0]])
    q1, q3 = np.quantile(values[values != 99.0], [0.25, 0.75])
    assert q3 + 3 * (q3 - q1) < 99.0  # far out: only the spike and repeat checks can clear it
    assert not narrator.describe(values).quality.has("missing_code")
    assert not narrator.describe(np.append(values, 99.0)).quality.has("missing_code")  # two, among neighbours
    coded = np.append(values, [-99.0] * 4)  # a value people type for "missing", four times, far from the rest
    assert narrator.describe(coded).quality.get("missing_code").values == (-99.0,)
    assert not narrator.describe(np.append(values, [97.0] * 4)).quality.has("missing_code")  # not a code value


def test_order_counts_match_a_direct_count():
    # Generated Likert-like scores with heavy ties, counted by numpy.
    rng = np.random.default_rng(2)
    values = rng.choice([1.0, 2.0, 3.0, 4.0, 5.0], size=301, p=[0.1, 0.15, 0.45, 0.2, 0.1])
    found = narrator.describe(values)
    counts = found.order_counts
    median = np.median(values)
    q1, q3 = np.quantile(values, [0.25, 0.75])
    assert (counts.below_median, counts.at_median, counts.above_median) == (
        int((values < median).sum()), int((values == median).sum()), int((values > median).sum()))
    assert (counts.below_q1, counts.above_q3) == (int((values < q1).sum()), int((values > q3).sum()))
    assert (counts.at_min, counts.at_max, counts.next_above_min, counts.next_below_max) == (
        int((values == 1).sum()), int((values == 5).sum()), 2.0, 4.0)
    assert counts.within_quartiles == int(((values >= q1) & (values <= q3)).sum())
