"""Confidence intervals for the mean and the median.

==============================  ================================================
Name                            What it does
==============================  ================================================
:func:`mean_interval`           t interval, or BCa bootstrap (Efron 1987)
:func:`choose_mean_method`      which of the two, with a reason code
:func:`median_interval`         distribution-free order-statistic interval
                                (Conover 1999), with its achieved coverage
:func:`median_interval_min_n`   the smallest n for which that interval exists
:func:`median_rank`             the rank k of that interval [x_(k), x_(n-k+1)]
:func:`median_coverage`         its achieved coverage
``SMALL_SAMPLE_N``              below this, a clearly skewed sample gets the
                                bootstrap (30, common practice)
``BOOTSTRAP_MIN_N``             fewest values for the bootstrap (8)
``BOOTSTRAP_MAX_N``             most values for the bootstrap (10 000)
``DEFAULT_SEED``                the fixed seed of the bootstrap
==============================  ================================================

All intervals assume independent observations from the population of
interest; the report says so once.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from narrator.engine.distributions import binomial_cdf, binomial_ppf, t_ppf
from narrator.errors import NarratorError
from narrator.findings import Interval

DEFAULT_SEED = 20261201
DEFAULT_RESAMPLES = 9999
# Common practice: the t interval is trusted from about 30 values even for skewed data.
SMALL_SAMPLE_N = 30
# The skewness test needs 8 values (D'Agostino 1970), so a sample cannot be "clearly skewed"
# below that; a bootstrap of fewer values has too few distinct resamples to mean much.
BOOTSTRAP_MIN_N = 8
# The bootstrap draws resamples x n indices (about 0.3 to 0.6 s at n = 10 000 here); it is chosen for small
# samples and as the fallback of a t interval past the values' range, and this cap stops longer requests.
BOOTSTRAP_MAX_N = 10_000
# Efron & Tibshirani (1993) ask for at least 1000 resamples for percentile-type intervals.
BOOTSTRAP_MIN_RESAMPLES = 1000
# Keep one batch of resamples (batch x n floats) near 16 MB.
_BOOTSTRAP_BATCH_CELLS = 2_000_000
_RESCALE_ABOVE = 2.0**500



def choose_mean_method(n: int, skewness: float | None, skew_clear: bool) -> tuple[str, str]:
    """The mean interval's method and its reason code.

    ``("bca-bootstrap", "small_skewed_bootstrap")`` when the sample is small
    (``BOOTSTRAP_MIN_N <= n < SMALL_SAMPLE_N``; 30 is common practice) and
    clearly skewed (``skew_clear`` with a known skewness): there the t
    interval's coverage suffers and a BCa bootstrap (Efron 1987) does better.
    Otherwise ``("t", "default_t")``.

    >>> choose_mean_method(12, 1.8, True)
    ('bca-bootstrap', 'small_skewed_bootstrap')
    >>> choose_mean_method(200, 1.8, True)
    ('t', 'default_t')
    """
    if n < 0:
        raise NarratorError(f"a sample size cannot be negative; got {n}")
    skew_known = skewness is not None and math.isfinite(skewness)
    if skew_clear and skew_known and BOOTSTRAP_MIN_N <= n < SMALL_SAMPLE_N:
        return "bca-bootstrap", "small_skewed_bootstrap"
    return "t", "default_t"


def mean_interval(
    values: np.ndarray,
    *,
    level: float = 0.95,
    method: str = "t",
    seed: int = DEFAULT_SEED,
    resamples: int = DEFAULT_RESAMPLES,
) -> Interval:
    """A confidence interval for the population mean.

    ``method="t"``: mean +/- t_{(1+level)/2, n-1} s / sqrt(n), s the sample SD
    (Student 1908). Needs n >= 2; constant data give a zero-width interval.

    ``method="bca-bootstrap"``: the bias-corrected and accelerated bootstrap
    (Efron 1987), the steps and draws of ``scipy.stats.bootstrap(method="BCa")``
    with ``numpy.random.default_rng(seed)`` and ``resamples`` resamples, both
    recorded in the result (the jackknife in O(n), from the sum). Needs ``BOOTSTRAP_MIN_N`` to ``BOOTSTRAP_MAX_N``
    values, at least two of them different.

    >>> interval = mean_interval(np.array([1.0, 2.0, 3.0, 4.0, 5.0]))
    >>> round(interval.low, 4), round(interval.high, 4)
    (1.0368, 4.9632)
    """
    data = _finite_vector(values, "a mean interval")
    _check_level(level)
    n = data.size
    data, factor = _scaled(data)
    if method == "t":
        if n < 2:
            raise NarratorError(f"a t interval for the mean needs at least 2 values; got {n}")
        mean = float(np.mean(data))
        sd = float(np.std(data, ddof=1))
        half_width = float(t_ppf((1.0 + level) / 2.0, n - 1)) * sd / math.sqrt(n)
        return Interval(
            low=(mean - half_width) * factor, high=(mean + half_width) * factor, level=level, method="t"
        )
    if method == "bca-bootstrap":
        low, high = _bca(data, level=level, seed=seed, resamples=resamples)
        return Interval(
            low=low * factor,
            high=high * factor,
            level=level,
            method="bca-bootstrap",
            seed=int(seed),
            resamples=int(resamples),
        )
    raise NarratorError(f"unknown mean interval method {method!r}; choose 't' or 'bca-bootstrap'")


def median_interval(sorted_values: np.ndarray, *, level: float = 0.95) -> Interval | None:
    """Distribution-free confidence interval for the population median (Conover 1999).

    With B ~ Binomial(n, 1/2), k is the largest whole number with
    P(B <= k - 1) <= (1 - level) / 2. The interval is [x_(k), x_(n-k+1)], the
    k-th smallest and k-th largest values; it covers the median with
    probability 1 - 2 P(B <= k - 1) >= level for any continuous distribution
    (Thompson 1936). The result records the 1-based ranks and that achieved
    coverage. Returns None when no k exists: n below
    :func:`median_interval_min_n` (6 for 95 %), where even [min, max] covers
    with probability under ``level``.

    ``sorted_values`` must be sorted ascending.

    >>> interval = median_interval(np.arange(1.0, 11.0))
    >>> interval.ranks, round(interval.coverage, 4)
    ((2, 9), 0.9785)
    """
    data = _finite_vector(sorted_values, "a median interval")
    _check_level(level)
    n = data.size
    if n > 1 and bool(np.any(data[1:] < data[:-1])):
        raise NarratorError("a median interval needs values sorted ascending")
    rank = median_rank(n, level)
    if rank is None:
        return None
    coverage = median_coverage(rank, n)
    return Interval(
        low=float(data[rank - 1]),
        high=float(data[n - rank]),
        level=level,
        method="order-statistic",
        coverage=coverage,
        ranks=(rank, n - rank + 1),
    )


def median_interval_min_n(level: float = 0.95) -> int:
    """The smallest n with an order-statistic median interval at ``level``: 2 (1/2)^n <= 1 - level.

    >>> median_interval_min_n(0.95), median_interval_min_n(0.99)
    (6, 8)
    """
    _check_level(level)
    n = 1
    while median_rank(n, level) is None:
        n += 1
    return n


def median_coverage(rank: int, n: int) -> float:
    """The coverage 1 - 2 P(B <= k - 1), B ~ Binomial(n, 1/2), of the interval [x_(k), x_(n-k+1)].

    >>> round(median_coverage(2, 10), 4)
    0.9785
    """
    return 1.0 - 2.0 * binomial_cdf(rank - 1, n, 0.5)


def median_rank(n: int, level: float) -> int | None:
    """The k of the median interval [x_(k), x_(n-k+1)]: the largest k with P(B <= k - 1) <= (1 - level) / 2,
    B ~ Binomial(n, 1/2); None if there is none.

    >>> median_rank(10, 0.95)
    2
    """
    if n == 0:
        return None
    tail = (1.0 - level) / 2.0
    # A hair of tolerance so a tail probability that equals the target exactly (possible for
    # levels such as 0.5) is not lost to rounding in the binomial CDF.
    limit = tail * (1.0 + 1e-12)
    below = int(binomial_ppf(tail, n, 0.5))  # smallest j with P(B <= j) >= tail
    # The largest j with P(B <= j) <= tail is `below` or one less; check and step to be sure.
    j = below
    while j >= 0 and binomial_cdf(j, n, 0.5) > limit:
        j -= 1
    while j + 1 < n and binomial_cdf(j + 1, n, 0.5) <= limit:
        j += 1
    # k = j + 1 never passes the middle: P(B <= j) <= tail < 1/2 forces j + 1 <= n - j.
    return j + 1 if j >= 0 else None


def _bca(data: np.ndarray, *, level: float, seed: int, resamples: int) -> tuple[float, float]:
    """The BCa interval (Efron 1987; Efron & Tibshirani 1993, 14.3) for the mean of ``data``.

    The steps of ``scipy.stats.bootstrap(method="BCa")``, the reference the tests hold it to,
    with the same draws (``resamples`` resamples of n indices from
    ``numpy.random.default_rng(seed)``, a block of them at a time), so the interval is the
    same to rounding; the jackknife for the acceleration takes O(n) instead of O(n^2): the mean
    without value i is (sum - x_i) / (n - 1).
    """
    n = data.size
    if not BOOTSTRAP_MIN_N <= n <= BOOTSTRAP_MAX_N:
        raise NarratorError(
            f"the BCa bootstrap interval needs {BOOTSTRAP_MIN_N} to {BOOTSTRAP_MAX_N} values; got {n}. "
            "Use the t interval."
        )
    if bool(np.all(data == data[0])):
        raise NarratorError("the BCa bootstrap interval needs at least two different values")
    if isinstance(resamples, bool) or not isinstance(resamples, int | np.integer):
        raise NarratorError(f"the number of bootstrap resamples must be a whole number; got {resamples!r}")
    if resamples < BOOTSTRAP_MIN_RESAMPLES:
        raise NarratorError(
            f"the BCa bootstrap needs at least {BOOTSTRAP_MIN_RESAMPLES} resamples; got {resamples}"
        )
    if isinstance(seed, bool) or not isinstance(seed, int | np.integer) or seed < 0:
        raise NarratorError(f"the bootstrap seed must be a whole number >= 0; got {seed!r}")
    resamples = int(resamples)
    batch = max(1, min(resamples, _BOOTSTRAP_BATCH_CELLS // n))
    rng = np.random.default_rng(int(seed))
    means = np.empty(resamples)
    for start in range(0, resamples, batch):
        count = min(batch, resamples - start)
        means[start:start + count] = np.mean(data[rng.integers(0, n, (count, n))], axis=-1)
    mean = np.mean(data)
    # Bias correction: the share of resampled means below the mean, ties counted half.
    below = (np.count_nonzero(means < mean) + np.count_nonzero(means <= mean)) / (2 * resamples)
    z0 = float(special.ndtri(below))
    # Acceleration from the jackknife means.
    jackknife = (np.sum(data) - data) / (n - 1)
    u = (n - 1) * (np.mean(jackknife) - jackknife)
    acceleration = float(np.sum(u**3) / n**3 / 6.0 / (np.sum(u**2) / n**2) ** 1.5)
    z_alpha = float(special.ndtri((1.0 - level) / 2.0))
    shares = []
    for z in (z_alpha, -z_alpha):
        shifted = z0 + z
        shares.append(float(special.ndtr(z0 + shifted / (1.0 - acceleration * shifted))))
    if not all(math.isfinite(share) for share in shares):
        raise NarratorError("the BCa bootstrap interval could not be computed for these values")
    low, high = (float(v) for v in np.quantile(means, shares))
    if not (math.isfinite(low) and math.isfinite(high)):
        raise NarratorError("the BCa bootstrap interval could not be computed for these values")
    return low, high


def _finite_vector(values: np.ndarray, purpose: str) -> np.ndarray:
    data = np.asarray(values, dtype=np.float64)
    if data.ndim != 1:
        raise NarratorError(f"{purpose} needs a one-dimensional array of values")
    if not np.all(np.isfinite(data)):
        raise NarratorError(f"{purpose} needs finite values (no NaN or infinity)")
    return data


def _check_level(level: float) -> None:
    if not (isinstance(level, float | int) and 0.0 < level < 1.0):
        raise NarratorError(f"a confidence level must lie strictly between 0 and 1; got {level!r}")


def _scaled(data: np.ndarray) -> tuple[np.ndarray, float]:
    """Data times an exact power of two so sums cannot overflow, and the factor to undo it."""
    largest = float(np.max(np.abs(data))) if data.size else 0.0
    if largest <= _RESCALE_ABOVE:
        return data, 1.0
    # largest = f * 2**e with 0.5 <= f < 1: dividing by 2**(e - 1) leaves values below 2 in size,
    # and 2**(e - 1) itself is still a finite double.
    _, exponent = math.frexp(largest)
    return np.ldexp(data, 1 - exponent), math.ldexp(1.0, exponent - 1)
