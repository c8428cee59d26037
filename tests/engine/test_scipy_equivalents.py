"""The engine's stand-ins for scipy.stats / scipy.signal, and its sorted-data shortcuts, against the originals.

Reference libraries: scipy (stats.norm, stats.t, stats.binom, stats.binomtest,
signal.fftconvolve, signal.find_peaks) and numpy (median, quantile, bincount).
The signal and sorted-data stand-ins must give the same number to the last bit, so
findings do not change when the engine avoids a slow import or a pass over the data; the
distribution functions (scipy.special underneath) agree to about 1e-11 relative or better.
"""

import numpy as np
import pytest
from scipy import signal, stats

import narrator
from narrator.engine import bins, density, distributions, quality, robust
from narrator.engine.moments import median_abs_deviation_sorted, median_sorted

RNG = np.random.default_rng(20261201)


def _relative(found: float, expected: float) -> float:
    return abs(found - expected) / abs(expected) if expected else abs(found)


def test_distribution_functions_match_scipy_stats():
    # Reference: scipy.stats (norm.isf, t.ppf, binom.cdf/sf/ppf). Our functions call scipy.special
    # (narrator.engine.distributions, without importing scipy.stats); they must agree to about 1e-11
    # relative wherever the engine calls them, and the binomial quantile exactly.
    for _ in range(1500):
        q = float(RNG.choice([RNG.uniform(1e-9, 1 - 1e-9), RNG.uniform(0.49, 0.51), 10 ** -RNG.uniform(1, 9)]))
        df = float(RNG.choice([RNG.integers(1, 30), RNG.integers(1, 10**5), RNG.uniform(0.5, 50),
                               RNG.integers(10**5, 10**8)]))
        n = int(RNG.choice([RNG.integers(1, 50), RNG.integers(1, 10**6), RNG.integers(10**6, 10**7)]))
        p = float(RNG.choice([0.5, 0.1, 0.01, RNG.uniform()]))
        k = int(RNG.integers(0, n + 1))
        assert _relative(distributions.normal_isf(q), stats.norm.isf(q)) < 1e-14
        if abs(q - 0.5) > 0.01 or df >= 30:  # near the median scipy is the less accurate (closed-form test)
            assert _relative(distributions.t_ppf(q, df), stats.t.ppf(q, df)) < 1e-11, (q, df)
        expected = stats.binom.cdf(k, n, p)
        if expected > 1e-250:  # deep in the tail scipy itself loses digits (see the exact test below)
            assert _relative(distributions.binomial_cdf(k, n, p), expected) < 1e-10, (k, n, p)
        expected = stats.binom.sf(k - 1, n, p)
        if expected > 1e-250:
            assert _relative(distributions.binomial_sf(k - 1, n, p), expected) < 1e-10, (k - 1, n, p)
        if n <= 10**6:
            assert distributions.binomial_ppf(q, n, p) == stats.binom.ppf(q, n, p), (q, n, p)
    for k, n, p in ((3, 15, 0.1), (40, 300, 0.1), (1, 1, 0.5)):
        expected = stats.binomtest(k, n, p, alternative="greater").pvalue
        assert _relative(min(1.0, distributions.binomial_sf(k - 1, n, p)), expected) < 1e-12


def test_binomial_tails_against_exact_rational_sums():
    # Reference: the binomial sum computed exactly in integers (the definition itself), for
    # p = m / 100: P(B <= k) = sum C(n, i) m^i (100 - m)^(n - i) / 100^n.
    from fractions import Fraction
    from math import comb

    for _ in range(300):
        n = int(RNG.integers(1, 400))
        k = int(RNG.integers(0, n))
        m = int(RNG.integers(1, 100))
        exact = float(Fraction(sum(comb(n, i) * m**i * (100 - m) ** (n - i) for i in range(k + 1)), 100**n))
        if exact > 1e-290:
            assert _relative(distributions.binomial_cdf(k, n, m / 100), exact) < 1e-12, (k, n, m)


def test_t_quantiles_against_closed_forms():
    # Closed forms of Student's t (common knowledge): df = 1 is the Cauchy distribution,
    # F(t) = 1/2 + atan(t) / pi; df = 4 has F(t) = 1/2 + (3/4) u - (1/4) u^3 with u = t / sqrt(4 + t^2).
    import math

    for q in (0.6, 0.9, 0.975, 0.999, 1 - 1e-9, 0.5002):
        t = distributions.t_ppf(q, 1.0)
        assert _relative(0.5 + math.atan(t) / math.pi, q) < 1e-14
        t = distributions.t_ppf(q, 4.0)
        u = t / math.sqrt(4.0 + t * t)
        assert abs(0.5 + 0.75 * u - 0.25 * u**3 - q) < 2e-16


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
    # Short curves take the point-by-point scan, long ones (above density._SCAN_MAX_POINTS) the
    # vectorised search: both against scipy.signal, plateaus included.
    for trial in range(400):
        size = int(RNG.integers(1, 80)) if trial < 300 else int(RNG.integers(150, 1500))
        curve = RNG.integers(0, 6, size).astype(float) if trial % 2 else RNG.normal(size=size)
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
            got = quality.linear_quantiles(lambda i, v=values: v[i], n, [0.25, 0.75])
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
