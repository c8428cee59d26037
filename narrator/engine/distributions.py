"""The few distribution functions the engine needs, without importing scipy.

``import scipy.special`` costs about a fifth of a second of start-up (its array-API layer loads
numpy.f2py and the rest of numpy), as long as describing a million values. The engine needs five
functions of one number each, computed here with the standard library to about 1e-13 relative
accuracy (checked against scipy.stats over their whole range of use in
tests/engine/test_scipy_equivalents.py):

========================  ===============================================  =====================
Function                  What it gives                                    Checked against
========================  ===============================================  =====================
:func:`normal_isf`        upper-tail quantile of the standard normal       ``stats.norm.isf``
:func:`t_ppf`             quantile of Student's t with ``df`` degrees      ``stats.t.ppf``
:func:`binomial_cdf`      P(B <= k), B ~ Binomial(n, p)                    ``stats.binom.cdf``
:func:`binomial_ppf`      smallest k with P(B <= k) >= q                   ``stats.binom.ppf``
:func:`binomial_sf`       P(B > k)                                         ``stats.binom.sf``
========================  ===============================================  =====================

Methods:

* The normal quantile is the standard library's ``statistics.NormalDist.inv_cdf`` (Wichura's
  algorithm AS 241, 1988, about 1e-16 relative).
* Student's t: for ``df`` >= 100 000 the Cornish-Fisher expansion in powers of 1/df (Abramowitz &
  Stegun 1964, 26.7.5; the coefficients from memory, checked against scipy), whose first omitted
  term is below 1e-17 there; below that, Newton's method on the logarithm of the tail
  probability, which is 0.5 I_x(df/2, 1/2) with x = df / (df + t^2), the regularized incomplete
  beta function by its continued fraction (modified Lentz; Press et al., Numerical Recipes, 6.4).
  ``df`` = 1 and 2 have closed forms. Arrays of quantiles (the generalized ESD test asks for one
  per step) go to scipy.special.stdtrit, imported then.
* Binomial probabilities: the probability of the term nearest the tail's start, from the
  definition for n up to 1000 and above that by Loader's (2000) saddle-point formula (Stirling's
  series for the error terms and the deviance ``bd0``), as R's dbinom computes it, accurate to
  about 1e-15 relative for any n; the tail is the sum of the terms
  outward from it, each from the one before by the ratio of consecutive terms (a cumulative
  product), until they no longer change the sum. The shorter tail is summed and the other one is
  1 minus it.

Arguments must lie inside each function's domain (0 < q < 1, df > 0, 0 <= p <= 1, n a whole
number); the engine never calls them outside it.
"""

from __future__ import annotations

import math
from statistics import NormalDist

import numpy as np

_STANDARD_NORMAL = NormalDist()
_LOG_SQRT_2PI = 0.5 * math.log(2.0 * math.pi)
_CORNISH_FISHER_MIN_DF = 1e5
_TINY = 1e-300
_EPSILON = 1e-16


# --------------------------------------------------------------------------- normal


def normal_isf(q):
    """x with P(Z > x) = q for a standard normal Z: -Phi^-1(q).

    >>> round(float(normal_isf(0.025)), 6)
    1.959964
    """
    return -_STANDARD_NORMAL.inv_cdf(float(q)) + 0.0


# --------------------------------------------------------------------------- Student's t


def t_ppf(q, df):
    """The q quantile of Student's t distribution with df degrees of freedom.

    >>> round(float(t_ppf(0.975, 10)), 6)
    2.228139
    """
    if np.ndim(q) or np.ndim(df):
        from scipy.special import stdtrit

        return stdtrit(df, q) * 1.0 + 0.0
    q, df = float(q), float(df)
    if q == 0.5:
        return 0.0
    upper = q > 0.5
    tail = 1.0 - q if upper else q  # the smaller tail probability, as given
    t = _t_upper_isf(tail, df)
    return t if upper else -t


def _t_upper_isf(tail: float, df: float) -> float:
    """t > 0 with P(T > t) = tail < 1/2."""
    if df == 1.0:  # Cauchy
        return 1.0 / math.tan(math.pi * tail)  # tan(pi (1/2 - tail)), without 1/2 - tail
    if df == 2.0:  # P(T > t) = (1 - t / sqrt(2 + t^2)) / 2
        return (1.0 - 2.0 * tail) / math.sqrt(2.0 * tail * (1.0 - tail))
    z = -_STANDARD_NORMAL.inv_cdf(tail)
    start = _cornish_fisher(z, df)
    if df >= _CORNISH_FISHER_MIN_DF:
        return start
    if tail > 0.25:
        return _t_central(1.0 - 2.0 * tail, df, start)
    # Newton on log P(T > t): quadratic once close; the start is already close except for tiny df.
    log_tail = math.log(tail)

    def step(t: float) -> float | None:
        survival, density = _t_upper_tail(t, df), _t_density(t, df)
        if survival <= 0.0 or density <= 0.0:
            return None
        return t + (math.log(survival) - log_tail) * survival / density

    return _newton(start if start > 0 and math.isfinite(start) else z, step)


def _t_central(central: float, df: float, start: float) -> float:
    """t > 0 with P(-t < T < t) = central < 1/2, by Newton on that probability.

    For a quantile near the median the central probability I_y(1/2, df/2), y = t^2 / (df + t^2),
    is small and computed without cancellation, where the tail would be 1/2 minus it.
    """
    log_beta = _log_beta_half(df / 2.0)

    def step(t: float) -> float | None:
        spread = df + t * t
        density = _t_density(t, df)
        if density <= 0.0:
            return None
        return t - (_incomplete_beta(0.5, df / 2.0, t * t / spread, df / spread, log_beta) - central) / (2.0 * density)

    return _newton(start if start > 0 else 1e-3, step)


def _newton(t: float, step) -> float:
    """Iterate ``t = step(t)`` on t > 0 (halving a step that would cross 0) until it settles to a few ulps."""
    for _ in range(100):
        new = step(t)
        if new is None:
            break
        if new <= 0.0:
            new = t / 2.0
        if abs(new - t) <= 4e-16 * abs(new):
            return new
        t = new
    return t


def _cornish_fisher(z: float, df: float) -> float:
    z2 = z * z
    g1 = (z2 + 1.0) * z / 4.0
    g2 = ((5.0 * z2 + 16.0) * z2 + 3.0) * z / 96.0
    g3 = (((3.0 * z2 + 19.0) * z2 + 17.0) * z2 - 15.0) * z / 384.0
    g4 = ((((79.0 * z2 + 776.0) * z2 + 1482.0) * z2 - 1920.0) * z2 - 945.0) * z / 92160.0
    return z + (g1 + (g2 + (g3 + g4 / df) / df) / df) / df


def _t_upper_tail(t: float, df: float) -> float:
    """P(T > t) for t >= 0: 0.5 I_x(df/2, 1/2), x = df / (df + t^2)."""
    spread = df + t * t
    return 0.5 * _incomplete_beta(df / 2.0, 0.5, df / spread, t * t / spread, _log_beta_half(df / 2.0))


def _t_density(t: float, df: float) -> float:
    log_norm = _log_gamma_half_step(df / 2.0) - 0.5 * math.log(df * math.pi)
    return math.exp(log_norm - (df + 1.0) / 2.0 * math.log1p(t * t / df))


def _log_gamma_half_step(a: float) -> float:
    """log Gamma(a + 1/2) - log Gamma(a), without the cancellation of two large log-gammas.

    With lgamma(x + 1) = stirling_error(x) + (x + 1/2) log x - x + log sqrt(2 pi), the difference
    is stirling_error(a - 1/2) - stirling_error(a - 1) + log(a - 1) / 2 + a log1p(1 / (2 (a - 1))) - 1/2,
    every term of moderate size.
    """
    if a <= 16.0:
        return math.lgamma(a + 0.5) - math.lgamma(a)
    return (_stirling_error(a - 0.5) - _stirling_error(a - 1.0) + 0.5 * math.log(a - 1.0)
            + a * math.log1p(0.5 / (a - 1.0)) - 0.5)


def _log_beta_half(a: float) -> float:
    """log B(a, 1/2) = log Gamma(1/2) - (log Gamma(a + 1/2) - log Gamma(a))."""
    return 0.5 * math.log(math.pi) - _log_gamma_half_step(a)


def _incomplete_beta(a: float, b: float, x: float, y: float, log_beta: float) -> float:
    """The regularized incomplete beta function I_x(a, b), given y = 1 - x (computed directly by the
    caller: for large a, a log x needs x's distance from 1 to full precision) and log B(a, b)."""
    if x <= 0.0:
        return 0.0
    if y <= 0.0:
        return 1.0
    log_x = math.log(x) if x < 0.5 else math.log1p(-y)
    log_y = math.log(y) if y < 0.5 else math.log1p(-x)
    front = math.exp(a * log_x + b * log_y - log_beta)
    if x < (a + 1.0) / (a + b + 2.0):
        return front * _beta_fraction(a, b, x) / a
    return 1.0 - front * _beta_fraction(b, a, y) / b


def _beta_fraction(a: float, b: float, x: float) -> float:
    """The continued fraction of I_x(a, b), by the modified Lentz method (Numerical Recipes 6.4)."""
    total, plus, minus = a + b, a + 1.0, a - 1.0
    c = 1.0
    d = 1.0 - total * x / plus
    d = 1.0 / (d if abs(d) > _TINY else _TINY)
    h = d
    for m in range(1, 100_000):
        m2 = 2 * m
        for numerator in (m * (b - m) * x / ((minus + m2) * (a + m2)),
                          -(a + m) * (total + m) * x / ((a + m2) * (plus + m2))):
            d = 1.0 + numerator * d
            d = 1.0 / (d if abs(d) > _TINY else _TINY)
            c = 1.0 + numerator / c
            c = c if abs(c) > _TINY else _TINY
            change = d * c
            h *= change
        if abs(change - 1.0) < _EPSILON:
            break
    return h


# --------------------------------------------------------------------------- binomial


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
    return _binomial_tails(k, int(n), float(p))


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
    z = _STANDARD_NORMAL.inv_cdf(q)
    k = min(max(math.floor(n * p + z * math.sqrt(n * p * (1.0 - p))), 0), n)
    # Step from the normal guess; each step recomputes the CDF, so no error accumulates.
    while k > 0 and binomial_cdf(k - 1, n, p) >= q:
        k -= 1
    while k < n and binomial_cdf(k, n, p) < q:
        k += 1
    return float(k)


def _binomial_tails(k: int, n: int, p: float) -> tuple[float, float]:
    """(P(B <= k), P(B > k)) for 0 <= k < n: the shorter tail summed, the other 1 minus it."""
    if p <= 0.0:
        return 1.0, 0.0
    if p >= 1.0:
        return 0.0, 1.0
    if k < n * p:
        lower = _lower_tail(k, n, p)
        return lower, 1.0 - lower
    upper = _lower_tail(n - k - 1, n, 1.0 - p)  # P(B > k) = P(n - B <= n - k - 1)
    return 1.0 - upper, upper


def _lower_tail(k: int, n: int, p: float) -> float:
    """P(B <= k) for B ~ Binomial(n, p), k below the mean: terms summed from k downwards."""
    q = 1.0 - p
    first = _binomial_pmf(k, n, p)
    if first == 0.0 or k == 0:
        return first
    # pmf(i - 1) / pmf(i) = i q / ((n - i + 1) p) shrinks as i goes down, so once a term is
    # below epsilon times the sum, everything after it (at most term * r / (1 - r)) is as well.
    total = first
    top = k
    block = 1024
    while top > 0:
        i = np.arange(top, max(top - block, 0), -1, dtype=np.float64)
        terms = np.cumprod(i * q / ((n - i + 1.0) * p)) * first
        total += float(terms.sum())
        first = float(terms[-1])
        top -= i.size
        ratio = top * q / ((n - top + 1.0) * p)
        if top == 0 or first == 0.0 or (ratio < 1.0 and first * ratio / (1.0 - ratio) < _EPSILON * total):
            break
        block *= 2
    return min(total, 1.0)


def _binomial_pmf(x: int, n: int, p: float) -> float:
    """P(B = x): directly for n up to 1000, else by Loader's (2000) saddle-point formula (R's dbinom_raw)."""
    q = 1.0 - p
    if n <= 1000:  # small n: the definition itself, C(n, x) p^x q^(n - x), unless the powers underflow
        powers = p**x * q ** (n - x)
        if powers > 1e-290:
            return math.comb(n, x) * powers
    if x == 0:
        return math.exp(n * math.log1p(-p)) if n else 1.0
    if x == n:
        return math.exp(n * math.log(p))
    exponent = (_stirling_error(n) - _stirling_error(x) - _stirling_error(n - x)
                - _deviance(x, n * p) - _deviance(n - x, n * q))
    return math.exp(exponent) * math.sqrt(n / (2.0 * math.pi * x * (n - x)))


_STIRLING = (1.0 / 12.0, 1.0 / 360.0, 1.0 / 1260.0, 1.0 / 1680.0, 1.0 / 1188.0)


def _stirling_error(n: float) -> float:
    """log(n!) - log(sqrt(2 pi n) (n / e)^n), by Stirling's series above 15 (Bernoulli-number terms)."""
    if n <= 15.0:
        return math.lgamma(n + 1.0) - (n + 0.5) * math.log(n) + n - _LOG_SQRT_2PI
    s0, s1, s2, s3, s4 = _STIRLING
    nn = n * n
    if n > 500:
        return (s0 - s1 / nn) / n
    if n > 80:
        return (s0 - (s1 - s2 / nn) / nn) / n
    if n > 35:
        return (s0 - (s1 - (s2 - s3 / nn) / nn) / nn) / n
    return (s0 - (s1 - (s2 - (s3 - s4 / nn) / nn) / nn) / nn) / n


def _deviance(x: float, mean: float) -> float:
    """x log(x / mean) + mean - x, without cancellation when x is near the mean (Loader's bd0)."""
    if abs(x - mean) < 0.1 * (x + mean):
        v = (x - mean) / (x + mean)
        s = (x - mean) * v
        term = 2.0 * x * v
        v2 = v * v
        for j in range(1, 1000):
            term *= v2
            new = s + term / (2 * j + 1)
            if new == s:
                return new
            s = new
        return s
    return x * math.log(x / mean) + mean - x
