"""The engine's stand-ins for scipy.stats / scipy.signal, and its sorted-data shortcuts, against the originals.

Reference libraries: scipy (stats.norm, stats.t, stats.binom, stats.binomtest,
signal.fftconvolve, signal.find_peaks) and numpy (median, quantile, bincount).
Each stand-in must give the same number to the last bit, so findings do not
change when the engine avoids importing the slow modules or a pass over the data.
"""

import numpy as np
import pytest
from scipy import signal, stats

import narrator
from narrator.engine import bins, density, distributions, quality, robust
from narrator.engine.moments import median_abs_deviation_sorted, median_sorted

RNG = np.random.default_rng(20261201)


def test_distribution_functions_match_scipy_stats_bit_for_bit():
    for _ in range(500):
        q = float(RNG.uniform(1e-9, 1 - 1e-9))
        df = float(RNG.integers(1, 10**5))
        n = int(RNG.integers(1, 10**6))
        p = float(RNG.choice([0.5, 0.1, 0.01, RNG.uniform()]))
        k = int(RNG.integers(0, n + 1))
        assert distributions.normal_isf(q) == stats.norm.isf(q)
        assert distributions.t_ppf(q, df) == stats.t.ppf(q, df)
        assert distributions.binomial_cdf(k, n, p) == stats.binom.cdf(k, n, p)
        assert distributions.binomial_sf(k - 1, n, p) == stats.binom.sf(k - 1, n, p)
        assert distributions.binomial_ppf(q, n, p) == stats.binom.ppf(q, n, p)
    for k, n, p in ((3, 15, 0.1), (40, 300, 0.1), (1, 1, 0.5)):
        expected = stats.binomtest(k, n, p, alternative="greater").pvalue
        assert min(1.0, distributions.binomial_sf(k - 1, n, p)) == expected


@pytest.mark.parametrize("size", [7, 100, 4096, 5000, 300_000])
def test_convolution_matches_scipy_signal(size):
    data = RNG.uniform(size=size)
    kernel = np.exp(-0.5 * np.linspace(-4, 4, 2 * (size // 3) + 1) ** 2)
    assert np.array_equal(density._convolve_same(data, kernel), signal.fftconvolve(data, kernel, mode="same"))


def test_fast_length_matches_scipy_fft():
    # scipy.fft.next_fast_len(target, real=True) is the reference; every length up to 20 000 and some large ones.
    from scipy import fft

    targets = [*range(1, 20_001), *(int(t) for t in RNG.integers(20_001, 2**26, 2000))]
    assert [density.next_fast_length(t) for t in targets] == [fft.next_fast_len(t, True) for t in targets]


def test_peaks_and_prominences_match_scipy_signal():
    for trial in range(300):
        curve = RNG.integers(0, 6, int(RNG.integers(1, 80))).astype(float) if trial % 2 else RNG.normal(size=60)
        found, prominences = density._peaks_and_prominences(curve)
        expected, properties = signal.find_peaks(curve, prominence=0.0)
        assert np.array_equal(found, expected)
        assert np.array_equal(prominences, properties["prominences"])


def test_sorted_shortcuts_match_full_passes():
    for trial in range(300):
        n = int(RNG.integers(1, 80))
        values = np.sort(RNG.integers(0, 6, n).astype(float) if trial % 2 else RNG.lognormal(0, 1, n).round(1))
        middle = median_sorted(values)
        assert median_abs_deviation_sorted(values, middle) == float(np.median(np.abs(values - middle)))
        if n >= 2:
            expected = np.quantile(values, [0.25, 0.75])
            got = quality._linear_quantiles(lambda i, v=values: v[i], n, [0.25, 0.75])
            assert np.array_equal(got, expected)
        width = float(RNG.choice([0.5, 1.0, 0.3]))
        tolerance = bins._edge_tolerance(values[0], values[-1], width, 0.0)
        first = bins._first_index(values[0], width, 0.0, tolerance)
        index = np.clip(bins._bin_index(values, width, 0.0, first, tolerance), 0, 7)
        assert np.array_equal(bins._sorted_bin_counts(values, width, 0.0, first, tolerance, 8),
                              np.bincount(index, minlength=8))


def test_large_samples_record_the_medcouple_subsample():
    values = RNG.lognormal(3.0, 0.8, robust.MEDCOUPLE_EXACT_MAX_N + 1)
    found = narrator.describe(values, seed=7)
    assert found.shape.medcouple_method == f"subsample:{robust.MEDCOUPLE_SUBSAMPLE_SIZE}:7"
    small = narrator.describe(values[: robust.MEDCOUPLE_EXACT_MAX_N], seed=7)
    assert small.shape.medcouple_method == "exact"
    # Same seed, same data in another row order: the same subsample medcouple.
    again = narrator.describe(values[::-1].copy(), seed=7)
    assert again.shape.medcouple == found.shape.medcouple
