"""Exact location and spread summaries of one numeric array.

=========================  ===================================================
Function                   What it computes
=========================  ===================================================
:func:`scaled`             divides huge or tiny data by a power of two so sums cannot overflow
:func:`central_moments`    mean and centred moments, two-pass (NIST StRD safe)
:func:`two_pass_mean`      the mean alone, as central_moments computes it
:func:`quantiles_sorted`   Hyndman & Fan type 7 quantiles of sorted data
:func:`trimmed_mean`       symmetric trimmed mean of sorted data
:func:`median_abs_deviation_sorted`  median absolute deviation of sorted data, O(log n)
:func:`skewness_g1`        adjusted Fisher-Pearson skewness G1 and its SE
:func:`excess_kurtosis`    sample excess kurtosis G2
:func:`skewness_test`      D'Agostino's (1970) test that the skewness is zero
=========================  ===================================================

All functions are pure; inputs are float64 numpy arrays of finite values.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

QUANTILE_METHOD = "hyndman-fan-7"


@dataclass(frozen=True, slots=True)
class Moments:
    """Mean and the biased central moments m_k = sum(d^k) / n.

    The moments are kept as moments of d / deviation_scale (a power of two near
    the largest deviation), so ratios such as m3 / m2^1.5 stay exact even when
    m2 itself would underflow or overflow.
    """

    n: int
    mean: float
    deviation_scale: float
    s2: float  # mean of (d / deviation_scale)^2
    s3: float
    s4: float

    @property
    def m2(self) -> float:
        return self.s2 * self.deviation_scale**2

    @property
    def variance(self) -> float:
        """Sample variance with n - 1 in the denominator."""
        return self.m2 * self.n / (self.n - 1) if self.n > 1 else math.nan

    @property
    def sd(self) -> float:
        """sqrt of the sample variance, computed without squaring the scale."""
        if self.n < 2:
            return math.nan
        return math.sqrt(self.s2 * self.n / (self.n - 1)) * self.deviation_scale

    @property
    def has_spread(self) -> bool:
        return self.s2 > 0


def scaled(values: np.ndarray, *, largest: float | None = None) -> tuple[np.ndarray, float]:
    """Return (values / factor, factor) with factor a power of two chosen so that
    sums of squares and fourth powers of the scaled values cannot overflow or
    underflow. Power-of-two scaling is exact in binary floating point.

    ``largest`` (the largest absolute value, when the caller knows it, e.g. from
    the ends of sorted data) spares a pass over the values.

    >>> scaled(np.array([1.0, 2.0]))[1]
    1.0
    """
    if values.size == 0:
        return values, 1.0
    if largest is None:
        largest = float(np.max(np.abs(values)))
    if largest == 0.0 or 1e-60 < largest < 1e60:
        return values, 1.0
    # frexp gives largest = m * 2**e with 0.5 <= m < 1, exactly; log2 rounds to
    # 1024 for the largest doubles, and 2.0 ** 1024 overflows.
    _, exponent = math.frexp(largest)
    factor = math.ldexp(1.0, exponent - 1)
    return values / factor, factor


_BLOCK = 1 << 16  # values per block when the powers are summed block by block (the block stays in cache)


def central_moments(values: np.ndarray) -> Moments:
    """Mean and centred moments by two passes with pairwise summation.

    The one-pass sum-of-squares formula loses every digit on data such as
    NIST StRD NumAcc3 (values near 1e6 with SD 0.1); centring first keeps
    them. The mean gets one correction step (the mean of the residuals).
    Above ``_BLOCK`` values the residuals and their powers are formed and summed one block at
    a time, so no array the size of the data is made and each block is read from cache; the
    block sums are added pairwise, as numpy adds within a block.

    >>> central_moments(np.array([10000001.0, 10000003.0, 10000002.0])).sd
    1.0
    """
    n = int(values.size)
    if n == 0:
        return Moments(0, math.nan, 1.0, math.nan, math.nan, math.nan)
    mean = float(np.mean(values))
    if n <= _BLOCK:
        deviations = values - mean
        correction = float(np.mean(deviations))
        mean += correction
        deviations -= correction
        # max |d| without a temporary array: the same number as np.max(np.abs(deviations)).
        largest = max(-float(np.min(deviations)), float(np.max(deviations)))
        deviation_scale = 2.0 ** math.floor(math.log2(largest)) if largest > 0 else 1.0
        deviations /= deviation_scale
        squares = deviations * deviations
        s2 = float(np.mean(squares))
        # Two buffers for all three sums: d^3 overwrites d, then d^4 overwrites d^2.
        np.multiply(squares, deviations, out=deviations)
        s3 = float(np.mean(deviations))
        np.multiply(squares, squares, out=squares)
        s4 = float(np.mean(squares))
        return Moments(n, mean, deviation_scale, s2, s3, s4)
    starts = range(0, n, _BLOCK)
    work = np.empty(_BLOCK)
    residual_sums, lows, highs = [], [], []
    for start in starts:
        block = values[start : start + _BLOCK]
        part = work[: block.size]
        np.subtract(block, mean, out=part)
        residual_sums.append(float(np.sum(part)))
        lows.append(float(np.min(block)))
        highs.append(float(np.max(block)))
    first_mean = mean
    correction = float(np.sum(residual_sums)) / n
    mean += correction
    largest = max(-((min(lows) - first_mean) - correction), (max(highs) - first_mean) - correction)
    deviation_scale = 2.0 ** math.floor(math.log2(largest)) if largest > 0 else 1.0
    square = np.empty(_BLOCK)
    sums = np.empty((len(starts), 3))
    for k, start in enumerate(starts):
        block = values[start : start + _BLOCK]
        d, d2 = work[: block.size], square[: block.size]
        np.subtract(block, first_mean, out=d)
        d -= correction
        d /= deviation_scale
        np.multiply(d, d, out=d2)
        sums[k, 0] = np.sum(d2)
        np.multiply(d2, d, out=d)
        sums[k, 1] = np.sum(d)
        np.multiply(d2, d2, out=d2)
        sums[k, 2] = np.sum(d2)
    s2, s3, s4 = (float(total) / n for total in np.sum(sums, axis=0))
    return Moments(n, mean, deviation_scale, s2, s3, s4)


def two_pass_mean(values: np.ndarray) -> float:
    """The mean as :func:`central_moments` computes it (pairwise sum, one correction step), alone.

    >>> two_pass_mean(np.array([1.0, 2.0, 4.0]))
    2.3333333333333335
    """
    if values.size == 0:
        return math.nan
    mean = float(np.mean(values))
    if values.size <= _BLOCK:
        return mean + float(np.mean(values - mean))
    # The residuals block by block in one buffer (no array the size of the data).
    work = np.empty(_BLOCK)
    residuals = []
    for start in range(0, values.size, _BLOCK):
        block = values[start : start + _BLOCK]
        residuals.append(float(np.sum(np.subtract(block, mean, out=work[: block.size]))))
    return mean + float(np.sum(residuals)) / values.size


def quantiles_sorted(sorted_values: np.ndarray, probabilities) -> np.ndarray:
    """Type 7 sample quantiles (Hyndman & Fan 1996), numpy's ``method="linear"``.

    With h = (n - 1) p, Q(p) = x[floor(h)] + (h - floor(h)) (x[floor(h)+1] - x[floor(h)]),
    indices counted from 0 in the sorted data.

    >>> quantiles_sorted(np.array([1.0, 2.0, 3.0, 4.0]), [0.5]).tolist()
    [2.5]
    """
    n = sorted_values.size
    p = np.asarray(probabilities, dtype=float)
    h = (n - 1) * p
    low = np.floor(h).astype(np.int64)
    high = np.minimum(low + 1, n - 1)
    fraction = h - low
    lower_values = sorted_values[low]
    upper_values = sorted_values[high]
    # x_lo + f (x_hi - x_lo) is exact when the two are equal and cannot leave [x_lo, x_hi].
    return np.where(fraction == 0, lower_values, lower_values + fraction * (upper_values - lower_values))


def median_sorted(sorted_values: np.ndarray) -> float:
    """Middle value; for an even count the mean of the two middle values (common practice)."""
    n = sorted_values.size
    middle = n // 2
    if n % 2:
        return float(sorted_values[middle])
    below, above = float(sorted_values[middle - 1]), float(sorted_values[middle])
    if below == above:
        return below
    gap = above - below
    if math.isfinite(gap):
        # The same arithmetic as the type 7 quantile at p = 1/2, so the median can never fall
        # outside [below, above] or below Q1, even for subnormal values (halving each first
        # would send 5e-324 to 0).
        return below + 0.5 * gap
    return below / 2 + above / 2  # the gap overflows only for values near the largest double


def median_abs_deviation_sorted(sorted_values: np.ndarray, median: float) -> float:
    """The median of |x - median| from sorted data, without forming the n distances.

    The distances below the median, read from the median outwards, ascend; so do those at
    or above it. The wanted order statistics of their union come from a binary search over
    how many to take from each side (the k-th smallest of two sorted arrays), O(log n).
    Each distance is the same float subtraction numpy would do, and an even count gives the
    mean of the two middle distances as ``numpy.median`` does, so the result is the same
    number as ``float(np.median(np.abs(sorted_values - median)))``.

    >>> median_abs_deviation_sorted(np.array([1.0, 2.0, 3.0, 4.0, 9.0]), 3.0)
    1.0
    """
    n = sorted_values.size
    split = int(np.searchsorted(sorted_values, median, side="left"))
    below, above = split, n - split

    def lower_distance(i: int) -> float:  # i-th smallest distance among values below the median
        return median - float(sorted_values[split - 1 - i])

    def upper_distance(j: int) -> float:
        return float(sorted_values[split + j]) - median

    def smallest(k: int) -> float:
        """The k-th smallest distance (0-based): take i from below and k + 1 - i from above."""
        low, high = max(0, k + 1 - above), min(k + 1, below)
        while True:
            i = (low + high) // 2
            j = k + 1 - i
            if i < below and j > 0 and upper_distance(j - 1) > lower_distance(i):
                low = i + 1  # the (k+1) smallest include more values from below
            elif i > 0 and j < above and lower_distance(i - 1) > upper_distance(j):
                high = i - 1
            else:
                last_lower = lower_distance(i - 1) if i > 0 else -math.inf
                last_upper = upper_distance(j - 1) if j > 0 else -math.inf
                return max(last_lower, last_upper)

    middle = n // 2
    if n % 2:
        return smallest(middle)
    pair = np.array([smallest(middle - 1), smallest(middle)])
    return float(np.mean(pair))


def trimmed_mean(sorted_values: np.ndarray, proportion: float) -> float:
    """Mean after cutting floor(proportion * n) values from each end, as scipy.stats.trim_mean does.

    >>> trimmed_mean(np.arange(10.0), 0.1)
    4.5
    """
    n = sorted_values.size
    cut = int(proportion * n)
    kept = sorted_values[cut : n - cut]
    if kept.size == 0:
        return median_sorted(sorted_values)
    return two_pass_mean(kept)


def skewness_g1(moments: Moments) -> tuple[float | None, float | None]:
    """G1 = g1 sqrt(n (n-1)) / (n - 2) with g1 = m3 / m2^1.5 (Joanes & Gill 1998),
    and its standard error sqrt(6 n (n-1) / ((n-2)(n+1)(n+3))). None when n < 3 or no spread."""
    n = moments.n
    if n < 3 or not moments.has_spread:
        return None, None
    g1 = moments.s3 / moments.s2**1.5
    big_g1 = g1 * math.sqrt(n * (n - 1)) / (n - 2)
    se = math.sqrt(6.0 * n * (n - 1) / ((n - 2) * (n + 1) * (n + 3)))
    return big_g1, se


def excess_kurtosis(moments: Moments) -> float | None:
    """G2 = ((n+1) g2 + 6) (n-1) / ((n-2)(n-3)) with g2 = m4 / m2^2 - 3. None when n < 4."""
    n = moments.n
    if n < 4 or not moments.has_spread:
        return None
    g2 = moments.s4 / moments.s2**2 - 3.0
    return ((n + 1) * g2 + 6.0) * (n - 1) / ((n - 2) * (n - 3))


def skewness_test(moments: Moments) -> tuple[float | None, float | None]:
    """D'Agostino (1970) normal approximation for the sample skewness; (z, two-sided p).

    Defined for n >= 8, as scipy.stats.skewtest.
    """
    n = moments.n
    if n < 8 or not moments.has_spread:
        return None, None
    b2 = moments.s3 / moments.s2**1.5
    y = b2 * math.sqrt(((n + 1) * (n + 3)) / (6.0 * (n - 2)))
    beta2 = 3.0 * (n * n + 27 * n - 70) * (n + 1) * (n + 3) / ((n - 2.0) * (n + 5) * (n + 7) * (n + 9))
    w2 = -1 + math.sqrt(2 * (beta2 - 1))
    delta = 1 / math.sqrt(0.5 * math.log(w2))
    alpha = math.sqrt(2.0 / (w2 - 1))
    ratio = y / alpha
    z = delta * math.log(ratio + math.sqrt(ratio * ratio + 1))
    p = math.erfc(abs(z) / math.sqrt(2))
    return z, p
