"""Moments, quantiles and the skewness test against scipy.stats and numpy as reference implementations."""

import numpy as np
import pytest
from scipy import stats

from narrator.engine.moments import (
    central_moments,
    excess_kurtosis,
    median_sorted,
    quantiles_sorted,
    skewness_g1,
    skewness_test,
    trimmed_mean,
)

RNG = np.random.default_rng(7)
SAMPLES = {
    "normal-30": RNG.normal(10, 2, 30),
    "lognormal-500": RNG.lognormal(0, 1, 500),
    "integers-101": RNG.integers(0, 20, 101).astype(float),
    "left-skewed-60": 100 - RNG.gamma(2.0, 3.0, 60),
    "tiny-8": np.array([1.0, 2, 2, 3, 9, 4, 5, 5]),
}


@pytest.mark.parametrize("name", SAMPLES)
def test_g1_g2_match_scipy(name):
    x = SAMPLES[name]
    m = central_moments(x)
    g1, se = skewness_g1(m)
    # scipy.stats.skew(bias=False) is the adjusted Fisher-Pearson G1 (Joanes & Gill 1998).
    assert g1 == pytest.approx(stats.skew(x, bias=False), rel=1e-10, abs=1e-12)
    # scipy.stats.kurtosis(bias=False) is the sample excess kurtosis G2.
    assert excess_kurtosis(m) == pytest.approx(stats.kurtosis(x, bias=False), rel=1e-10, abs=1e-12)
    n = x.size
    assert se == pytest.approx(np.sqrt(6 * n * (n - 1) / ((n - 2) * (n + 1) * (n + 3))))


@pytest.mark.parametrize("name", SAMPLES)
def test_skewness_test_matches_scipy(name):
    x = SAMPLES[name]
    z, p = skewness_test(central_moments(x))
    reference = stats.skewtest(x)  # D'Agostino (1970)
    assert z == pytest.approx(reference.statistic, rel=1e-9)
    assert p == pytest.approx(reference.pvalue, rel=1e-8, abs=1e-300)


def test_skewness_test_needs_eight_values():
    assert skewness_test(central_moments(np.arange(7.0))) == (None, None)


@pytest.mark.parametrize("name", SAMPLES)
def test_type7_quantiles_match_numpy_linear(name):
    x = np.sort(SAMPLES[name])
    p = [0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95]
    # Hyndman & Fan (1996) type 7 is numpy's method="linear".
    np.testing.assert_allclose(quantiles_sorted(x, p), np.quantile(x, p, method="linear"), rtol=1e-14)
    assert median_sorted(x) == pytest.approx(np.median(x), rel=1e-15)


@pytest.mark.parametrize("name", SAMPLES)
def test_trimmed_means_match_scipy(name):
    x = np.sort(SAMPLES[name])
    for proportion in (0.1, 0.2):
        assert trimmed_mean(x, proportion) == pytest.approx(stats.trim_mean(x, proportion), rel=1e-12)


def test_sd_matches_numpy_ddof1():
    x = SAMPLES["lognormal-500"]
    assert central_moments(x).sd == pytest.approx(np.std(x, ddof=1), rel=1e-13)


def test_even_count_median_is_mean_of_middle_pair():
    # Common practice: the median of an even count is the mean of the two middle values.
    assert median_sorted(np.array([1.0, 3.0, 8.0, 100.0])) == 5.5
