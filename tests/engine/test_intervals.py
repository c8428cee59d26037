"""Mean and median intervals against scipy and against simulation."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from narrator.engine.intervals import (
    BOOTSTRAP_MIN_N,
    DEFAULT_SEED,
    SMALL_SAMPLE_N,
    choose_mean_method,
    mean_interval,
    median_interval,
    median_interval_min_n,
)
from narrator.errors import NarratorError


def test_t_interval_matches_scipy():
    # Reference: scipy.stats.t.interval(level, n - 1, loc=mean, scale=s / sqrt(n)).
    rng = np.random.default_rng(12)
    for n, level in ((2, 0.95), (9, 0.95), (40, 0.9), (1000, 0.99)):
        values = rng.gamma(2.0, 3.0, size=n)
        ours = mean_interval(values, level=level)
        low, high = stats.t.interval(level, n - 1, loc=np.mean(values), scale=stats.sem(values))
        assert (ours.low, ours.high) == pytest.approx((low, high), rel=1e-12)
        assert (ours.method, ours.level, ours.seed, ours.resamples) == ("t", level, None, None)


def test_t_interval_on_huge_and_constant_values():
    # NumAcc-style stiff data (NIST StRD NumAcc1 pattern): 10000001, 10000003, 10000002, mean 10000002, SD 1.
    ours = mean_interval(np.array([10000001.0, 10000003.0, 10000002.0]))
    half = stats.t.ppf(0.975, 2) / math.sqrt(3)
    assert (ours.low, ours.high) == pytest.approx((10000002 - half, 10000002 + half), rel=1e-15)
    huge = np.array([1.0, 2.0, 4.0, 8.0]) * 2.0**1020  # sums would overflow without rescaling
    scaled = mean_interval(huge / 2.0**1020)
    assert mean_interval(huge).low == scaled.low * 2.0**1020
    constant = mean_interval(np.full(5, 3.0))
    assert (constant.low, constant.high) == (3.0, 3.0)


def test_bca_matches_a_direct_scipy_bootstrap_call():
    # Reference: scipy.stats.bootstrap(method="BCa") with numpy.random.default_rng(same seed).
    rng = np.random.default_rng(99)
    values = rng.lognormal(sigma=1.2, size=18)
    ours = mean_interval(values, method="bca-bootstrap", seed=4321, resamples=2000)
    keyword = "rng" if "rng" in _bootstrap_parameters() else "random_state"
    direct = stats.bootstrap(
        (values,), np.mean, n_resamples=2000, method="BCa", **{keyword: np.random.default_rng(4321)}
    )
    assert ours.low == pytest.approx(direct.confidence_interval.low, rel=1e-12)
    assert ours.high == pytest.approx(direct.confidence_interval.high, rel=1e-12)
    assert (ours.method, ours.seed, ours.resamples) == ("bca-bootstrap", 4321, 2000)
    # Same seed, same interval: the report is reproducible.
    assert mean_interval(values, method="bca-bootstrap", seed=4321, resamples=2000) == ours
    # The default seed is recorded too.
    assert mean_interval(values, method="bca-bootstrap", resamples=1000).seed == DEFAULT_SEED


def test_bca_matches_scipy_in_batches_at_the_fallbacks_size():
    # Reference: scipy.stats.bootstrap(method="BCa") with the same seed and the same batch of resamples (a
    # block of batch x n indices at a time, as narrator draws them); its jackknife is the O(n^2) one.
    from narrator.engine.intervals import _BOOTSTRAP_BATCH_CELLS

    rng = np.random.default_rng(7)
    values = np.round(rng.lognormal(4, 0.8, 3000), 2)
    values[:3] = [250000.0, 90000.0, 41000.0]  # the t interval reaches below the smallest value here
    ours = mean_interval(values, method="bca-bootstrap", seed=11, resamples=1500)
    keyword = "rng" if "rng" in _bootstrap_parameters() else "random_state"
    batch = _BOOTSTRAP_BATCH_CELLS // values.size
    assert batch < 1500
    direct = stats.bootstrap((values,), np.mean, n_resamples=1500, batch=batch, vectorized=True, method="BCa",
                             **{keyword: np.random.default_rng(11)})
    assert ours.low == pytest.approx(direct.confidence_interval.low, rel=1e-12)
    assert ours.high == pytest.approx(direct.confidence_interval.high, rel=1e-12)


def test_bca_is_asymmetric_toward_the_long_tail():
    # Efron (1987): BCa follows the skew of the sampling distribution; for right-skewed data the
    # upper half-width exceeds the lower one, unlike the symmetric t interval.
    rng = np.random.default_rng(5)
    values = rng.lognormal(sigma=1.0, size=20)
    ours = mean_interval(values, method="bca-bootstrap", resamples=3000)
    mean = np.mean(values)
    assert ours.high - mean > mean - ours.low


def test_choose_mean_method():
    # SMALL_SAMPLE_N = 30 is common practice, not a published cut-off.
    assert SMALL_SAMPLE_N == 30
    assert choose_mean_method(12, 1.8, True) == ("bca-bootstrap", "small_skewed_bootstrap")
    assert choose_mean_method(SMALL_SAMPLE_N - 1, 1.2, True) == ("bca-bootstrap", "small_skewed_bootstrap")
    assert choose_mean_method(SMALL_SAMPLE_N, 1.8, True) == ("t", "default_t")
    assert choose_mean_method(12, 0.1, False) == ("t", "default_t")
    assert choose_mean_method(12, None, True) == ("t", "default_t")
    assert choose_mean_method(BOOTSTRAP_MIN_N - 1, 2.0, True) == ("t", "default_t")


@pytest.mark.parametrize(
    ("n", "ranks"),
    # Ranks FROM MEMORY of the usual tables of the sign-test interval (e.g. Conover 1999):
    # n = 6 and 7 use the extremes; n = 10 gives [x_(2), x_(9)]; n = 20 gives [x_(6), x_(15)];
    # n = 30 gives [x_(10), x_(21)].
    [(6, (1, 6)), (7, (1, 7)), (9, (2, 8)), (10, (2, 9)), (20, (6, 15)), (30, (10, 21))],
)
def test_median_interval_ranks_and_coverage(n, ranks):
    # Coverage reference: 1 - 2 P(B <= k - 1), B ~ Binomial(n, 1/2), from scipy.stats.binom.
    values = np.arange(1.0, n + 1) * 1.5
    ours = median_interval(values)
    assert ours.ranks == ranks
    k = ranks[0]
    assert ours.coverage == pytest.approx(1 - 2 * stats.binom.cdf(k - 1, n, 0.5), rel=1e-12)
    assert ours.coverage >= 0.95
    assert 1 - 2 * stats.binom.cdf(k, n, 0.5) < 0.95  # k is the largest rank that keeps 95 %
    assert (ours.low, ours.high) == (values[k - 1], values[n - k])
    assert ours.method == "order-statistic" and ours.level == 0.95


def test_median_interval_for_n_10_has_coverage_0_9785():
    # From memory: the n = 10, 95 % interval [x_(2), x_(9)] covers with probability 0.9785 (= 1 - 22/1024).
    ours = median_interval(np.sort(np.random.default_rng(1).normal(size=10)))
    assert ours.ranks == (2, 9)
    assert ours.coverage == pytest.approx(0.9785, abs=5e-5)
    assert ours.coverage == pytest.approx(1 - 22 / 1024, rel=1e-12)


def test_median_interval_needs_enough_values():
    # 2 (1/2)^n <= 1 - level: n >= 6 at 95 %, n >= 8 at 99 %, n >= 2 at 50 %.
    assert median_interval_min_n(0.95) == 6
    assert median_interval_min_n(0.99) == 8
    assert median_interval_min_n(0.5) == 2
    assert median_interval(np.arange(5.0)) is None
    assert median_interval(np.arange(6.0)) is not None
    assert median_interval(np.arange(7.0), level=0.99) is None
    assert median_interval(np.array([]), level=0.95) is None


def test_median_interval_other_levels_and_large_n():
    # Reference: the definition evaluated directly with scipy.stats.binom over every k.
    for n, level in ((57, 0.9), (1000, 0.99), (100_001, 0.95)):
        values = np.arange(float(n))
        ours = median_interval(values, level=level)
        cdf = stats.binom.cdf(np.arange(n), n, 0.5)
        expected_k = int(np.nonzero(cdf <= (1 - level) / 2)[0].max()) + 1
        assert ours.ranks == (expected_k, n - expected_k + 1)
        assert ours.coverage >= level


@pytest.mark.parametrize("n", [20, 50, 200])
def test_median_interval_coverage_by_simulation(n):
    # Exponential(1) has median ln 2. Fixed seed; empirical coverage must reach the stated
    # coverage minus 3 simulation standard errors (4000 replications).
    replications = 4000
    rng = np.random.default_rng(20261201 + n)
    samples = np.sort(rng.exponential(size=(replications, n)), axis=1)
    covered = 0
    stated = None
    for sample in samples:
        interval = median_interval(sample)
        stated = interval.coverage
        covered += interval.low <= math.log(2) <= interval.high
    empirical = covered / replications
    standard_error = math.sqrt(stated * (1 - stated) / replications)
    assert empirical >= stated - 3 * standard_error
    assert empirical <= stated + 3 * standard_error  # the interval is exact, not merely conservative


@pytest.mark.parametrize(
    ("call", "message"),
    [
        (lambda: mean_interval(np.array([1.0])), "at least 2"),
        (lambda: mean_interval(np.array([1.0, np.nan])), "finite"),
        (lambda: mean_interval(np.arange(5.0), level=1.0), "confidence level"),
        (lambda: mean_interval(np.arange(5.0), method="normal"), "unknown mean interval method"),
        (lambda: mean_interval(np.arange(5.0), method="bca-bootstrap"), "needs 8 to"),
        (lambda: mean_interval(np.full(12, 2.0), method="bca-bootstrap"), "two different values"),
        (lambda: mean_interval(np.arange(12.0), method="bca-bootstrap", resamples=50), "resamples"),
        (lambda: median_interval(np.array([3.0, 1.0, 2.0, 4.0, 5.0, 6.0])), "sorted"),
        (lambda: median_interval(np.arange(10.0), level=0.0), "confidence level"),
    ],
)
def test_bad_requests_raise_narrator_error(call, message):
    with pytest.raises(NarratorError, match=message):
        call()


def _bootstrap_parameters():
    import inspect

    return inspect.signature(stats.bootstrap).parameters
