"""Generalized ESD test against the worked example of the NIST/SEMATECH e-Handbook.

Source: NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.5.17.3
"Generalized Extreme Studentized Deviate Test for Outliers", which works
Rosner's (1983) example: 54 values, up to r = 10 outliers, alpha = 0.05;
result: exactly 3 outliers. The 54 values and the table of R_i and lambda_i
below are typed FROM MEMORY of that page, not looked up; the handbook prints
three decimals (apparently cut, not rounded), so the checks allow 0.0015.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from narrator.engine.outliers import detect_outliers, esd_critical_values

# From memory: the handbook's 54 values, in its order.
ROSNER_VALUES = np.array(
    [
        -0.25, 0.68, 0.94, 1.15, 1.20, 1.26, 1.26,
        1.34, 1.38, 1.43, 1.49, 1.49, 1.55, 1.56,
        1.58, 1.65, 1.69, 1.70, 1.76, 1.77, 1.81,
        1.91, 1.94, 1.96, 1.99, 2.06, 2.09, 2.10,
        2.14, 2.15, 2.23, 2.24, 2.26, 2.35, 2.37,
        2.40, 2.47, 2.54, 2.62, 2.64, 2.90, 2.92,
        2.92, 2.93, 3.21, 3.26, 3.30, 3.59, 3.68,
        4.30, 4.64, 5.34, 5.42, 6.01,
    ]
)  # fmt: skip

# From memory: the handbook's summary table, i = 1..10.
HANDBOOK_STATISTICS = (3.118, 2.942, 3.179, 2.810, 2.815, 2.848, 2.279, 2.310, 2.101, 2.067)
HANDBOOK_CRITICAL = (3.158, 3.151, 3.143, 3.136, 3.128, 3.120, 3.111, 3.103, 3.094, 3.085)
TABLE_TOLERANCE = 0.0015


def _rosner_critical_values_directly(n: int, r: int, alpha: float) -> list[float]:
    """Rosner (1983) lambda_i written out again with scipy.stats.t, independent of narrator."""
    values = []
    for i in range(1, r + 1):
        p = 1 - alpha / (2 * (n - i + 1))
        t = stats.t.ppf(p, n - i - 1)
        values.append((n - i) * t / math.sqrt((n - i - 1 + t**2) * (n - i + 1)))
    return values


def _statistics_by_brute_force(values: np.ndarray, r: int) -> list[float]:
    remaining = list(values)
    result = []
    for _ in range(r):
        array = np.array(remaining)
        deviations = np.abs(array - array.mean())
        result.append(float(deviations.max() / array.std(ddof=1)))
        remaining.pop(int(np.argmax(deviations)))
    return result


def _detect(values: np.ndarray, **options):
    q1, median, q3 = np.quantile(values, [0.25, 0.5, 0.75])
    return detect_outliers(
        values,
        np.arange(2, values.size + 2),  # spreadsheet rows: the header is row 1
        rule="esd",
        q1=float(q1),
        median=float(median),
        q3=float(q3),
        medcouple=None,
        skew_clear=False,
        mad=float(np.median(np.abs(values - median))),
        mean=float(np.mean(values)),
        sd=float(np.std(values, ddof=1)),
        **options,
    )


def test_the_data_typed_from_memory_reproduce_the_handbook_table():
    # Guards the memory of the data: the brute-force R_i must match the handbook's printed R_i.
    assert ROSNER_VALUES.size == 54
    assert _statistics_by_brute_force(ROSNER_VALUES, 10) == pytest.approx(
        HANDBOOK_STATISTICS, abs=TABLE_TOLERANCE
    )


def test_critical_values_match_the_handbook_and_a_direct_scipy_computation():
    # NIST e-Handbook 1.3.5.17.3 table (from memory): lambda_1 = 3.158 ... lambda_10 = 3.085 for n = 54.
    ours = esd_critical_values(54, 10, alpha=0.05)
    assert ours == pytest.approx(_rosner_critical_values_directly(54, 10, 0.05), rel=1e-12)
    assert ours == pytest.approx(HANDBOOK_CRITICAL, abs=TABLE_TOLERANCE)


def test_three_outliers_as_in_the_handbook():
    # NIST e-Handbook 1.3.5.17.3: with r = 10 and alpha = 0.05 the test finds 3 outliers,
    # the three largest values (R_3 = 3.179 > lambda_3 = 3.143 although R_1 and R_2 fall short).
    found = _detect(ROSNER_VALUES, esd_alpha=0.05, esd_max_outliers=10)
    assert found.rule == "esd"
    assert found.count == 3
    assert found.values == (5.34, 5.42, 6.01)
    assert found.rows == (53, 54, 55)  # the last three of the 54 values; the header is row 1
    assert found.count_high == 3 and found.count_low == 0
    assert found.lower_fence is None and found.upper_fence is None  # ESD defines no fences
    assert found.constants["max_outliers"] == 10.0
    assert found.constants["alpha"] == 0.05
    assert found.constants["statistic_at_count"] == pytest.approx(3.179, abs=TABLE_TOLERANCE)
    assert found.constants["critical_value_at_count"] == pytest.approx(3.143, abs=TABLE_TOLERANCE)
    assert found.constants["first_critical_value"] == pytest.approx(3.158, abs=TABLE_TOLERANCE)
