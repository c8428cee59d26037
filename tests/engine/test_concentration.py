"""Concentration of a total (narrator.engine.concentration) against the definitions and known values.

References: the Gini coefficient's definition as the mean absolute difference over twice the mean,
G = sum_i sum_j |x_i - x_j| / (2 n^2 mean), computed by brute force with numpy (an independent
implementation); the known Gini coefficients of textbook distributions (from memory): 1/2 for the
exponential, 1/3 for the uniform on (0, b), 1 / (2 alpha - 1) for the Pareto with shape alpha,
2 Phi(sigma / sqrt 2) - 1 for the lognormal; large generated samples (fixed seeds).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from narrator.engine.concentration import concentration, gini, lorenz_points, not_computed_reason
from narrator.engine.describe import describe
from narrator.findings import dumps, loads


def _gini_by_definition(values) -> float:
    x = np.asarray(values, dtype=float)
    return float(np.abs(x[:, None] - x[None, :]).sum() / (2 * x.size**2 * x.mean()))


@settings(max_examples=80, deadline=None)
@given(st.lists(st.floats(0, 1e6, allow_nan=False), min_size=1, max_size=60).filter(lambda v: sum(v) > 0))
def test_gini_matches_its_definition(values):
    assert gini(np.sort(values)) == pytest.approx(_gini_by_definition(values), abs=1e-9)


@pytest.mark.parametrize(("draw", "expected"), [
    (lambda rng, n: rng.exponential(40.0, n), 0.5),
    (lambda rng, n: rng.uniform(0, 250.0, n), 1 / 3),
    (lambda rng, n: (rng.pareto(3.0, n) + 1) * 20.0, 1 / (2 * 3.0 - 1)),
    (lambda rng, n: rng.lognormal(3.0, 1.2, n), 2 * stats.norm.cdf(1.2 / math.sqrt(2)) - 1),
])
def test_gini_of_known_distributions(draw, expected):
    values = np.sort(draw(np.random.default_rng(20261201), 400_000))
    assert gini(values) == pytest.approx(expected, abs=0.01)


def test_shares_of_the_largest_values():
    rng = np.random.default_rng(3)
    gifts = np.round(rng.lognormal(3.5, 1.4, 2345), 2)
    found = concentration(np.sort(gifts))
    descending = np.sort(gifts)[::-1]
    assert found.total == pytest.approx(gifts.sum(), rel=1e-12)
    assert found.top_percent_count == 24  # ceil(2345 / 100)
    assert found.top_percent_share == pytest.approx(descending[:24].sum() / gifts.sum(), rel=1e-12)
    assert found.top_tenth_count == 235
    assert found.top_tenth_share == pytest.approx(descending[:235].sum() / gifts.sum(), rel=1e-12)
    assert [k for k, _ in found.top_counts] == [1, 3, 10]
    for k, share in found.top_counts:
        assert share == pytest.approx(descending[:k].sum() / gifts.sum(), rel=1e-12)


def test_lorenz_curve_points():
    # Four values 1, 1, 2, 4 (total 8): the lowest half holds 2 / 8; the curve is linear between points.
    assert lorenz_points([1.0, 1.0, 2.0, 4.0], [0.25, 0.5, 0.75]) == (0.125, 0.25, 0.5)
    equal = lorenz_points(np.full(10, 3.0))
    assert equal == pytest.approx((0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9))


def test_reasons_when_not_computed():
    assert not_computed_reason(np.array([-1.0, 2.0])) == "negative_values"
    assert not_computed_reason(np.zeros(5)) == "total_not_positive"
    assert not_computed_reason(np.zeros(0)) == "no_values"
    found = describe([-5.0, 1.0, 2.0, 3.0])
    assert found.concentration is None and found.not_computed["concentration"] == "negative_values"


def test_concentration_survives_json():
    found = describe(np.random.default_rng(1).lognormal(3, 1, 500))
    assert loads(dumps(found)).concentration == found.concentration
