"""Property-based tests (hypothesis) of the number parser, the column reader and the engine.

Only narrator's own exception type may escape, whatever the text or numbers;
the engine's order and equivariance invariants must hold on generated data
that includes ties, huge (about 1e300) and tiny (about 1e-300) magnitudes and
mixed signs. The invariants are mathematical facts (the order statistics are
ordered, the mean lies between the extremes), not reference values.
"""

from __future__ import annotations

import csv
import math
import tempfile
from pathlib import Path

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import narrator
from narrator.errors import NarratorError
from narrator.reading.cells import parse_number
from narrator.reading.columns import read_column

SETTINGS = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])

# Text that looks like numbers more often than arbitrary text does.
number_like = st.text(alphabet="0123456789 ,.'-+()%$€eE\u00a0\u2212infINFnaNA∞", max_size=14)
cell_text = st.one_of(st.text(max_size=20), number_like)


@SETTINGS
@given(cell_text, st.booleans())
def test_parse_number_returns_a_float_or_none(text, decimal_comma):
    value = parse_number(text, decimal_comma=decimal_comma)
    assert value is None or isinstance(value, float)
    if value is not None and not math.isinf(value):
        assert not math.isnan(value)


@SETTINGS
@given(st.lists(cell_text, min_size=0, max_size=30), st.booleans())
def test_read_column_only_raises_its_own_error_and_accounts_for_every_row(cells, decimal_comma):
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "cells.csv"
        with open(path, "w", newline="", encoding="utf-8") as handle:
            writer = csv.writer(handle)
            writer.writerow(["value", "other"])
            for cell in cells:
                writer.writerow([cell, "x"])
        try:
            sample = read_column(path, "value", decimal_comma=decimal_comma)
        except NarratorError:
            return
        assert np.all(np.isfinite(sample.values))
        left_out = sum(exclusion.count for exclusion in sample.exclusions)
        assert sample.values.size + left_out == sample.n_rows
        assert sample.rows.size == sample.values.size
        assert np.all(np.diff(sample.rows) > 0)


magnitudes = st.sampled_from([1.0, 1e-300, 1e-150, 1e150, 1e300])
base_values = st.lists(st.integers(min_value=-50, max_value=50), min_size=1, max_size=40)


@st.composite
def hard_samples(draw):
    """Small integers (many ties, mixed signs) times one huge or tiny magnitude, sometimes with repeats."""
    base = draw(base_values)
    repeats = draw(st.integers(min_value=1, max_value=3))
    scale = draw(magnitudes)
    return np.asarray(base * repeats, dtype=float) * scale


def _check_order(found, values):
    center, spread = found.center, found.spread
    low, high = float(values.min()), float(values.max())
    slack = 1e-9 * max(abs(low), abs(high))
    assert spread.min == low and spread.max == high
    assert low <= spread.q1 <= center.median <= spread.q3 <= high
    assert low - slack <= center.mean <= high + slack
    assert low - slack <= center.trimmed_mean_10 <= high + slack
    if values.size >= 2:
        assert spread.sd >= 0 and math.isfinite(spread.sd)
    else:  # the n - 1 standard deviation is undefined for one value
        assert spread.sd is None or math.isnan(spread.sd)
    assert spread.iqr >= 0 and spread.mad >= 0


@SETTINGS
@given(hard_samples())
def test_describe_invariants_on_huge_tiny_tied_and_mixed_sign_data(values):
    try:
        found = narrator.describe(values)
    except NarratorError:
        return
    assert found.n == values.size
    _check_order(found, values)
    o = found.outliers
    if o is not None and o.lower_fence is not None and o.upper_fence is not None:
        assert o.lower_fence <= o.upper_fence
    assert found.without_outliers is None or found.without_outliers.n == found.n - (o.count if o else 0)


@SETTINGS
@given(hard_samples(), st.randoms(use_true_random=False))
def test_permutation_invariance_at_extreme_magnitudes(values, random):
    shuffled = values.copy()
    random.shuffle(shuffled)
    a, b = narrator.describe(values), narrator.describe(shuffled)
    scale = float(np.max(np.abs(values))) or 1.0
    for key in ("median", "mean"):
        assert math.isclose(getattr(a.center, key), getattr(b.center, key), rel_tol=1e-9, abs_tol=1e-9 * scale)
    for key in ("q1", "q3", "min", "max"):
        assert getattr(a.spread, key) == getattr(b.spread, key)
    assert a.shape.label == b.shape.label
    assert (a.outliers.count if a.outliers else 0) == (b.outliers.count if b.outliers else 0)


@SETTINGS
@given(base_values, magnitudes)
def test_scale_equivariance_across_magnitudes(base, scale):
    values = np.asarray(base, dtype=float)
    a, b = narrator.describe(values), narrator.describe(values * scale)
    for key in ("median", "mean"):
        expected = getattr(a.center, key) * scale
        assert math.isclose(getattr(b.center, key), expected, rel_tol=1e-9, abs_tol=1e-12 * scale)
    if values.size >= 2:
        assert math.isclose(b.spread.sd, a.spread.sd * scale, rel_tol=1e-9, abs_tol=1e-12 * scale)
    assert a.shape.label == b.shape.label


@SETTINGS
@given(st.lists(st.floats(allow_nan=True, allow_infinity=True, width=64), max_size=40))
def test_describe_takes_any_floats(values):
    try:
        found = narrator.describe(np.asarray(values, dtype=float))
    except NarratorError:
        return
    finite = np.asarray([v for v in values if math.isfinite(v)])
    assert found.n == finite.size
    if finite.size:
        assert found.spread.min == finite.min() and found.spread.max == finite.max()
