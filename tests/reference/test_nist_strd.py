"""NIST Statistical Reference Datasets (StRD), univariate summary statistics.

The three constructed "NumAcc" sets have certified mean and standard
deviation that are exact by construction (NIST StRD, Univariate Summary
Statistics: NumAcc1, NumAcc2, NumAcc3). They defeat the one-pass
sum-of-squares formula; the engine's two-pass moments must hit them.
"""

import numpy as np
import pytest

from narrator.engine.moments import central_moments

pytestmark = pytest.mark.smoke  # also run inside the README's fresh environment (tests/conftest.py)


def numacc1():
    # NIST StRD NumAcc1: 3 values, certified mean 10000002, SD 1.
    return np.array([10000001.0, 10000003.0, 10000002.0]), 10000002.0, 1.0


def numacc2():
    # NIST StRD NumAcc2: 1.2, then 1.1 and 1.3 alternating 500 times (1001 values);
    # certified mean 1.2, SD 0.1.
    values = [1.2] + [1.1, 1.3] * 500
    return np.array(values), 1.2, 0.1


def numacc3():
    # NIST StRD NumAcc3: the NumAcc2 pattern around 1000000.2; certified mean 1000000.2, SD 0.1.
    values = [1000000.2] + [1000000.1, 1000000.3] * 500
    return np.array(values), 1000000.2, 0.1


@pytest.mark.parametrize("dataset", [numacc1, numacc2, numacc3], ids=["NumAcc1", "NumAcc2", "NumAcc3"])
def test_certified_mean_and_sd(dataset):
    values, certified_mean, certified_sd = dataset()
    moments = central_moments(values)
    assert moments.n == values.size
    assert abs(moments.mean - certified_mean) / certified_mean < 1e-12
    # The acceptance: relative SD error below 1e-9 (NIST certifies 15 significant digits).
    assert abs(moments.sd - certified_sd) / certified_sd < 1e-9


def test_numacc3_through_describe():
    import narrator

    values, certified_mean, certified_sd = numacc3()
    found = narrator.describe(values)
    assert abs(found.center.mean - certified_mean) / certified_mean < 1e-12
    assert abs(found.spread.sd - certified_sd) / certified_sd < 1e-9


def test_one_pass_formula_would_fail_here():
    # Why the test matters: the naive formula loses the digits on NumAcc3 (NIST StRD).
    values, _, certified_sd = numacc3()
    n = values.size
    naive = np.sqrt((np.sum(values**2) - np.sum(values) ** 2 / n) / (n - 1))
    assert abs(naive - certified_sd) / certified_sd > 1e-9
