"""A skew is set aside as "from a few far values" only when the body of the data is symmetric.

Whole-number data can tie their quartiles into a symmetric picture: gamma waits with shape 3 (skewness
2 / sqrt(3) = 1.15, the gamma distribution's textbook value; scipy.stats.gamma(3).stats("s") gives it)
rounded to whole days had quartiles 9, 15 and 21, Bowley's skewness 0.00 and a medcouple of 0.07, and
the report called them "probably roughly symmetric", said the values "spread roughly evenly on both sides
of the middle" and that 12 values outside Tukey's fences were more than "data of this shape usually
have". Hinkley's skewness at the 5th and 95th percentiles (Hinkley 1975) sees the long right tail.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from narrator import describe
from narrator.phrasing import narrate


def _rounded_gamma(seed: int, n: int = 300) -> np.ndarray:
    return np.round(np.random.default_rng(seed).gamma(3.0, 5.0, n))


def test_the_reference_skewness_of_the_gamma_shape():
    assert float(stats.gamma(3.0).stats("s")) == pytest.approx(2 / np.sqrt(3))


@pytest.mark.parametrize("seed", range(6))
def test_rounded_gamma_waits_are_right_skewed_not_symmetric(seed):
    values = _rounded_gamma(seed)
    found = describe(values, name="days", unit="days")
    tail = found.shape.tail_skewness
    p5, median, p95 = np.percentile(values, [5, 50, 95])  # numpy's default (type 7) percentiles
    assert tail == pytest.approx((p95 + p5 - 2 * median) / (p95 - p5), abs=1e-12)
    assert found.shape.label == "right-skewed", (found.shape, seed)
    summary = narrate(found, "memo", "en_US").section("summary").paragraphs[0].text
    assert "spread roughly evenly" not in summary and "than data of this shape usually have" not in summary


def test_normal_values_with_a_few_far_ones_keep_the_few_values_reason():
    # The case the reason exists for: a symmetric body (normal, 300 values) and three far values.
    rng = np.random.default_rng(4)
    values = np.concatenate([rng.normal(50, 10, 297), [130.0, 140.0, 160.0]])
    found = describe(values, name="score")
    assert abs(found.shape.tail_skewness) < 0.1
    assert found.shape.label == "symmetric" and "skew_from_few_values" in found.shape.reasons
