"""The few distribution functions the engine needs, without importing scipy.stats.

``import scipy.stats`` costs about half a second of start-up, more than the
whole engine needs for a million values. These wrappers call the same
scipy.special routines that scipy.stats' public methods end in, with the same
arguments, so each returns the same number to the last bit (checked in
tests/engine/test_scipy_equivalents.py):

========================  ===============================================  =====================
Function                  What it gives                                    Same as
========================  ===============================================  =====================
:func:`normal_isf`        upper-tail quantile of the standard normal       ``stats.norm.isf``
:func:`t_ppf`             quantile of Student's t with ``df`` degrees      ``stats.t.ppf``
:func:`binomial_cdf`      P(B <= k), B ~ Binomial(n, p)                    ``stats.binom.cdf``
:func:`binomial_ppf`      smallest k with P(B <= k) >= q                   ``stats.binom.ppf``
:func:`binomial_sf`       P(B > k)                                         ``stats.binom.sf``
========================  ===============================================  =====================

Arguments must lie inside each function's domain (0 < q < 1, df > 0,
0 <= p <= 1, n a whole number); the engine never calls them outside it.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special
from scipy.special import _ufuncs as special_ufuncs


def normal_isf(q):
    """x with P(Z > x) = q for a standard normal Z: -Phi^-1(q).

    >>> round(float(normal_isf(0.025)), 6)
    1.959964
    """
    return -special.ndtri(q) * 1.0 + 0.0


def t_ppf(q, df):
    """The q quantile of Student's t distribution with df degrees of freedom.

    >>> round(float(t_ppf(0.975, 10)), 6)
    2.228139
    """
    return special.stdtrit(df, q) * 1.0 + 0.0


def binomial_cdf(k: float, n: int, p: float) -> float:
    """P(B <= k) for B ~ Binomial(n, p); 0 below the support, 1 at or above n.

    >>> binomial_cdf(1, 4, 0.5)
    0.3125
    """
    k = math.floor(k)
    if k < 0:
        return 0.0
    if k >= n:
        return 1.0
    return float(special_ufuncs._binom_cdf(float(k), float(n), float(p)))


def binomial_sf(k: float, n: int, p: float) -> float:
    """P(B > k) for B ~ Binomial(n, p).

    >>> binomial_sf(2, 4, 0.5)
    0.3125
    """
    k = math.floor(k)
    if k < 0:
        return 1.0
    if k >= n:
        return 0.0
    return float(special_ufuncs._binom_sf(float(k), float(n), float(p)))


def binomial_ppf(q: float, n: int, p: float) -> float:
    """The smallest k with P(B <= k) >= q, for 0 < q < 1 (a float, as scipy returns it).

    >>> binomial_ppf(0.5, 4, 0.5)
    2.0
    """
    if not 0.0 < q < 1.0:
        raise ValueError(f"binomial quantile needs 0 < q < 1; got {q!r}")
    return float(np.asarray(special_ufuncs._binom_ppf(float(q), float(n), float(p))) + 0)
