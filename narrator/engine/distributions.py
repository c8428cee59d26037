"""The few distribution functions the engine needs, from scipy.special.

========================  ===============================================  =====================
Function                  What it gives                                    Checked against
========================  ===============================================  =====================
:func:`normal_isf`        upper-tail quantile of the standard normal       ``stats.norm.isf``
:func:`t_ppf`             quantile of Student's t with ``df`` degrees      ``stats.t.ppf``
:func:`binomial_cdf`      P(B <= k), B ~ Binomial(n, p)                    ``stats.binom.cdf``
:func:`binomial_ppf`      smallest k with P(B <= k) >= q                   ``stats.binom.ppf``
:func:`binomial_sf`       P(B > k)                                         ``stats.binom.sf``
========================  ===============================================  =====================

``scipy.special.ndtri`` (the normal quantile), ``stdtrit`` and ``betaincinv`` (Student's t quantile in
the tails and near the median) and ``betainc``
(the binomial tails as regularized incomplete beta functions; Cephes' ``bdtr`` loses about 1e-9
relative deep in the tails of large n, Boost's ``betainc`` does not) do the work;
scipy.stats, which costs half a second more to import, is only the tests' reference
(tests/engine/test_scipy_equivalents.py). Importing scipy.special costs about 0.2 s of start-up;
tests/benchmarks/bench_report.py measures the whole command with it.

Arguments must lie inside each function's domain (0 < q < 1, df > 0, 0 <= p <= 1, n a whole
number); the engine never calls them outside it.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special


def normal_isf(q):
    """x with P(Z > x) = q for a standard normal Z: -Phi^-1(q).

    >>> round(float(normal_isf(0.025)), 6)
    1.959964
    """
    return float(-special.ndtri(float(q))) + 0.0


def t_ppf(q, df):
    """The q quantile of Student's t distribution with df degrees of freedom (arrays too).

    >>> round(float(t_ppf(0.975, 10)), 6)
    2.228139
    """
    q_array, df_array = np.asarray(q, dtype=np.float64), np.asarray(df, dtype=np.float64)
    central = np.abs(2.0 * q_array - 1.0)
    # Near the median stdtrit's inversion leaves about 1e-13 of probability; there the central probability
    # P(|T| < t) = I_x(1/2, df/2), x = t^2 / (df + t^2), is inverted instead (Abramowitz & Stegun 26.7.1).
    x = special.betaincinv(0.5, df_array / 2.0, np.minimum(central, 0.5))
    with np.errstate(divide="ignore", invalid="ignore"):
        near_median = np.sign(q_array - 0.5) * np.sqrt(df_array * x / (1.0 - x))
    t = np.where(central < 0.5, near_median, special.stdtrit(df_array, q_array))
    if np.ndim(q) or np.ndim(df):
        return t * 1.0 + 0.0
    return float(t) + 0.0


def binomial_cdf(k: float, n: int, p: float) -> float:
    """P(B <= k) for B ~ Binomial(n, p); 0 below the support, 1 at or above n.

    >>> binomial_cdf(1, 4, 0.5)
    0.3125
    """
    return _tails_at(k, n, p)[0]


def binomial_sf(k: float, n: int, p: float) -> float:
    """P(B > k) for B ~ Binomial(n, p).

    >>> binomial_sf(2, 4, 0.5)
    0.3125
    """
    return _tails_at(k, n, p)[1]


def _tails_at(k: float, n: int, p: float) -> tuple[float, float]:
    """(P(B <= k), P(B > k)) for any k: k is floored, and outside 0..n-1 the tails are 0 and 1."""
    k = math.floor(k)
    if k < 0:
        return 0.0, 1.0
    if k >= n:
        return 1.0, 0.0
    if p <= 0.0:
        return 1.0, 0.0
    if p >= 1.0:
        return 0.0, 1.0
    # P(B <= k) = I_(1-p)(n - k, k + 1) and P(B > k) = I_p(k + 1, n - k) (Abramowitz & Stegun 26.5.24),
    # the regularized incomplete beta function of the Boost library (as scipy.stats.binom uses it).
    n = int(n)
    return float(special.betainc(n - k, k + 1, 1.0 - p)), float(special.betainc(k + 1, n - k, p))


def binomial_ppf(q: float, n: int, p: float) -> float:
    """The smallest k with P(B <= k) >= q, for 0 < q < 1 (a float, as scipy returns it).

    >>> binomial_ppf(0.5, 4, 0.5)
    2.0
    """
    if not 0.0 < q < 1.0:
        raise ValueError(f"binomial quantile needs 0 < q < 1; got {q!r}")
    n = int(n)
    if p <= 0.0:
        return 0.0
    if p >= 1.0:
        return float(n)
    z = -normal_isf(q)
    k = min(max(math.floor(n * p + z * math.sqrt(n * p * (1.0 - p))), 0), n)
    # Step from the normal guess; each step recomputes the CDF, so no error accumulates.
    while k > 0 and binomial_cdf(k - 1, n, p) >= q:
        k -= 1
    while k < n and binomial_cdf(k, n, p) < q:
        k += 1
    return float(k)
