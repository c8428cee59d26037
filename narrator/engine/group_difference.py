"""How two groups' values compare, the way a statistician would say it: a sized difference and a verdict.

=================================  ==================================================
Name                               What it does
=================================  ==================================================
:func:`pairwise_difference_ranks`  chosen order statistics of all differences y_j - x_i
:func:`shift_interval`             Hodges-Lehmann shift and its distribution-free interval
:func:`mann_whitney_cdf`           exact null distribution of the Mann-Whitney count
:func:`interval_rank`              the rank of the interval's lower limit, and its coverage
:class:`Side`                      one side's values, spread and lead value
:func:`compare_two`                two sides -> :class:`~narrator.findings.Difference`
:func:`compare_groups`             every shown group -> :class:`~narrator.findings.GroupComparison`
=================================  ==================================================

The method (why this one)
-------------------------

The difference between two groups is the **Hodges-Lehmann shift**: the median of all m n
differences y_j - x_i between a value of the second group and one of the first (Hodges &
Lehmann 1963, *Annals of Mathematical Statistics* 34). Its interval is the one that inverts
the Mann-Whitney test (Moses' interval; Hollander, Wolfe & Chicken 2014, *Nonparametric
Statistical Methods*, 3rd ed., ch. 4): with U the Mann-Whitney count under no difference,
take the largest k with P(U <= k - 1) <= alpha / 2; the interval is [D_(k), D_(mn+1-k)],
the k-th smallest and k-th largest difference, with coverage 1 - 2 P(U <= k - 1).

We chose it over a percentile bootstrap of the difference of medians (Efron & Tibshirani 1993,
*An Introduction to the Bootstrap*) for four reasons:

1. **No randomness.** The same data give the same interval to the last bit, with no seed to
   record; a regenerated memo cannot move because of resampling.
2. **Coverage that holds.** Under a shift between the groups the coverage is exactly the
   stated one for continuous data and *at least* that with ties (integer days, amounts in
   whole dollars): with ties, #{y_j - x_i <= shift} can only be larger than the tie-broken
   count, whose distribution is the exact null one, so each tail can only shrink (our
   derivation; tests/engine/test_group_difference.py checks it by simulation). The bootstrap
   distribution of a median is lumpy for small or tied samples and its percentile interval
   can fall short of its level there (Efron & Tibshirani 1993, sec. 7.3 and ch. 13, from memory).
3. **Efficiency.** Against the difference of means under normal data the estimate keeps about
   95 % efficiency (3/pi relative to the variance; Hodges & Lehmann 1963), and it resists
   outliers like a median.
4. **Cost.** Up to ``DIRECT_PAIRS`` differences are formed and partitioned. Beyond, each order
   statistic is found by bisection on the floating-point numbers (at most 64 steps), counting
   the differences at or below a trial value row by row in the sorted values (a binary search
   per row, as in selection in X + Y, Johnson & Mizoguchi 1978), and the few differences left
   between the bounds are formed at the end: O(64 m log n), never the m n differences at once.

The shift is "the typical difference between a value of one group and one of the other"; it is
not the difference of medians (the two agree under a pure shift). The difference of the lead
measures is recorded beside it (``lead_difference``).

The null distribution of U is exact (the coefficients of the Gaussian binomial coefficient
[m+n choose m]_q, integer arithmetic) while min(m, n) * m n <= ``EXACT_WORK``; beyond, the
normal approximation with continuity correction, mean m n / 2 and variance m n (m + n + 1) / 12
(the no-ties variance, so the argument of point 2 still holds).

The verdict
-----------

The size is judged against the spread: ``scale`` is the pooled spread of the two groups,
s^2 = ((m - 1) s_1^2 + (n - 1) s_2^2) / (m + n - 2), each s_i the group's IQR / 1.349 (a
robust SD under normality), or its SD when both IQRs are 0. With d = shift / scale:

=====================  ===========================================================
verdict                when
=====================  ===========================================================
``different``          the interval excludes 0 and |d| > ``SMALL_EFFECT`` (0.2)
``slightly_different`` the interval excludes 0 and |d| <= 0.2: clear, but small
``alike``              the interval includes 0, |d| <= 0.2 and the whole interval lies
                       within +/- ``RULED_OUT_EFFECT`` (0.5) scales: any difference
                       of medium size or more is ruled out
``unclear``            otherwise: the data cannot tell
=====================  ===========================================================

0.2 and 0.5 are Cohen's (1988, *Statistical Power Analysis for the Behavioral Sciences*, 2nd
ed.) "small" and "medium" standardized differences (from memory; common practice). Both bounds
get half the unit the values are recorded in (half a day for whole days; ``Variable.decimals``):
rounding alone can move a shift between values recorded that coarsely by that much, and the
interval's limits of such values are whole or half units (our rule). Asking
the interval to exclude a medium difference before saying "about the same" is the logic of
equivalence testing (Schuirmann 1987, *J. Pharmacokinetics and Biopharmaceutics* 15) with a
95 % interval in place of the usual 90 %, so it errs towards "unclear". For a whole population
there is no interval: a difference is ``different`` when |d| > 0.2, else ``alike``.

With three groups or more every pair is compared, each interval at the Bonferroni-adjusted
level 1 - (1 - level) / pairs (Dunn 1961, *JASA* 56), so the verdicts hold together. A group
*stands apart* when it is ``different`` from every other group; groups *go together* when every
pair among them is ``alike``. Lists keep the groups' reading order: never by value, and never
by name to break a tie.
"""

from __future__ import annotations

import functools
import math
import struct
from collections.abc import Sequence
from dataclasses import dataclass
from statistics import NormalDist

import numpy as np

from narrator.engine.moments import central_moments, median_sorted, quantiles_sorted
from narrator.errors import NarratorError
from narrator.findings import Difference, Findings, GroupComparison, GroupPair, GroupVersusRest

SMALL_EFFECT = 0.2  # Cohen (1988): a small standardized difference
RULED_OUT_EFFECT = 0.5  # Cohen (1988): a medium one; "alike" needs the interval inside +/- this
NORMAL_IQR = 1.349  # IQR of the standard normal, so IQR / 1.349 estimates the SD
EXACT_WORK = 250_000  # min(m, n) * m * n up to this: the exact null distribution of U
DIRECT_PAIRS = 4_000_000  # up to this many differences they are formed and partitioned directly
MAX_GROUPS = 12  # 66 pairs; more groups are not compared pair by pair
_GATHER = 1_000_000  # differences left between the bounds when they are formed and partitioned


def pairwise_difference_ranks(first, second, ranks: Sequence[int]) -> tuple[float, ...]:
    """The ``ranks``-th smallest (1-based) of the m n differences second_j - first_i.

    Exact: the differences are compared as floats computed exactly as ``second[j] - first[i]``,
    so the answer is one of them. Up to ``DIRECT_PAIRS`` differences they are formed and
    partitioned; beyond, each rank is found by bisection (see the module docstring), with the
    smaller side as the rows.

    >>> pairwise_difference_ranks([1.0, 2.0], [4.0, 7.0], [1, 2, 3, 4])
    (2.0, 3.0, 5.0, 6.0)
    """
    x = np.sort(np.asarray(first, dtype=float).ravel())
    y = np.sort(np.asarray(second, dtype=float).ravel())
    total = x.size * y.size
    if total == 0:
        raise NarratorError("pairwise differences need values on both sides")
    for rank in ranks:
        if not 1 <= rank <= total:
            raise NarratorError(f"rank {rank} is outside 1..{total}")
    if total <= DIRECT_PAIRS:
        differences = (y[None, :] - x[:, None]).ravel()
        wanted = sorted({int(r) - 1 for r in ranks})
        differences.partition(wanted)
        return tuple(float(differences[int(r) - 1]) for r in ranks)
    if x.size > y.size:
        # Rows are the smaller side: y_j - x_i is exactly -(x_i - y_j) in floating point.
        return tuple(-_select(y, x, total + 1 - int(rank)) for rank in ranks)
    return tuple(_select(x, y, int(rank)) for rank in ranks)


_EPSILON = 2.0**-52


def _ordered_key(value: float) -> int:
    """An integer that orders floats as their values (-0.0 and 0.0 alike), for bisection on floats."""
    bits = struct.unpack("<q", struct.pack("<d", value))[0]
    return bits if bits >= 0 else -(bits & 0x7FFFFFFFFFFFFFFF)


def _from_key(key: int) -> float:
    bits = key if key >= 0 else (-key) | -0x8000000000000000
    return struct.unpack("<d", struct.pack("<q", bits))[0]


def _positions_above(x: np.ndarray, y: np.ndarray, t: float) -> np.ndarray:
    """Per row i: the number of j with y[j] - x[i] <= t, the differences compared as computed.

    ``searchsorted`` on y against x + t is exact except within rounding of the boundary; the
    window of ``margin`` either side is settled by a binary search on the computed differences,
    which are monotone in j.
    """
    margin = 8.0 * _EPSILON * (np.abs(x) + abs(t)) + 1e-300
    lo = np.searchsorted(y, (x + t) - margin, side="left")
    hi = np.searchsorted(y, (x + t) + margin, side="right")
    while True:
        active = lo < hi
        if not active.any():
            return lo
        mid = (lo + hi) // 2
        safe = np.minimum(mid, y.size - 1)
        at_most = (y[safe] - x) <= t
        lo = np.where(active & at_most, mid + 1, lo)
        hi = np.where(active & ~at_most, mid, hi)


def _largest_at_most(x: np.ndarray, y: np.ndarray, counts: np.ndarray) -> float:
    """The largest difference among those counted in ``counts`` (each row's first counts[i] columns)."""
    rows = np.flatnonzero(counts > 0)
    return float((y[counts[rows] - 1] - x[rows]).max())


def _smallest_above(x: np.ndarray, y: np.ndarray, counts: np.ndarray) -> float:
    """The smallest difference not counted in ``counts``."""
    rows = np.flatnonzero(counts < y.size)
    return float((y[counts[rows]] - x[rows]).min())


def _select(x: np.ndarray, y: np.ndarray, rank: int) -> float:
    """The rank-th smallest y[j] - x[i] (x, y ascending): bisection on the floats, then a direct look.

    Invariant: the differences counted in ``below_low`` are fewer than ``rank``, ``next_up`` is the
    smallest difference not counted there, at least ``rank`` differences are <= ``high``, and
    ``high`` is itself a difference. Each step halves the floats between next_up and high (at most
    64 steps) and snaps the bounds to differences, so ties end it at once; once few differences
    lie between the bounds, they are formed and partitioned.
    """
    below_low = np.zeros(x.size, dtype=np.int64)  # nothing is <= a float just under the smallest difference
    below_high = np.full(x.size, y.size, dtype=np.int64)
    high = float(y[-1] - x[0])  # the largest difference
    next_up = float(y[0] - x[-1])  # the smallest difference not counted in below_low
    while True:
        if next_up == high:
            return high
        remaining = int((below_high - below_low).sum())
        if remaining <= _GATHER:
            lengths = below_high - below_low
            live = np.flatnonzero(lengths)
            lengths = lengths[live]
            row_of = np.repeat(live, lengths)
            starts = np.cumsum(lengths) - lengths
            columns = below_low[row_of] + (np.arange(remaining) - np.repeat(starts, lengths))
            candidates = y[columns] - x[row_of]
            position = rank - int(below_low.sum()) - 1
            candidates.partition(position)
            return float(candidates[position])
        middle = _from_key((_ordered_key(next_up) + _ordered_key(high)) // 2)
        counts = _positions_above(x, y, middle)
        if int(counts.sum()) >= rank:
            high, below_high = _largest_at_most(x, y, counts), counts
        else:
            below_low = counts
            next_up = _smallest_above(x, y, counts)


def mann_whitney_cdf(m: int, n: int) -> np.ndarray:
    """P(U <= u), u = 0..m n, for the Mann-Whitney count U of two samples of m and n with no difference.

    The counts are the coefficients of the Gaussian binomial coefficient [m+n choose m]_q, built
    as the product over i of (1 - q^(n+i)) / (1 - q^i) in integer arithmetic, so the
    probabilities are exact up to the last division.

    >>> [round(float(p), 4) for p in mann_whitney_cdf(2, 2)]
    [0.1667, 0.3333, 0.6667, 0.8333, 1.0]
    """
    if m < 1 or n < 1:
        raise NarratorError("the Mann-Whitney distribution needs two non-empty samples")
    small, large = min(m, n), max(m, n)
    top = small * large
    counts = np.zeros(top + 1, dtype=object)
    counts[0] = 1
    for i in range(1, small + 1):
        # multiply by (1 - q^(large + i)), then divide by (1 - q^i): a running sum with stride i
        shift = large + i
        if shift <= top:
            counts[shift:] = counts[shift:] - counts[: top + 1 - shift]
        for residue in range(i):
            counts[residue::i] = np.cumsum(counts[residue::i])
    total = math.comb(m + n, m)
    running = np.cumsum(counts)
    return np.array([float(value) / total for value in running], dtype=float)


@functools.lru_cache(maxsize=256)
def interval_rank(m: int, n: int, level: float) -> tuple[int, float, str] | None:
    """(k, coverage, method): the interval is [D_(k), D_(mn+1-k)] with coverage 1 - 2 P(U <= k - 1).

    None when even the widest interval (k = 1) cannot reach ``level``. ``method`` is "exact" or
    "normal" (see the module docstring).

    >>> interval_rank(6, 13, 0.98)[:2]
    (13, 0.983266991006929)
    """
    if not 0 < level < 1:
        raise NarratorError(f"interval level must be between 0 and 1, not {level}")
    tail = (1.0 - level) / 2.0
    pairs = m * n
    if min(m, n) * pairs <= EXACT_WORK:
        cdf = mann_whitney_cdf(m, n)
        # P(U <= k - 1) <= tail; cdf[k - 1] for k >= 1 (k - 1 = -1 has probability 0)
        allowed = np.flatnonzero(cdf <= tail * (1 + 1e-12))
        if allowed.size == 0:
            return None
        k = int(allowed[-1]) + 1
        if 2 * k > pairs + 1:
            return None
        return k, 1.0 - 2.0 * float(cdf[k - 1]), "exact"
    sd = math.sqrt(pairs * (m + n + 1) / 12.0)
    z = NormalDist().inv_cdf(1.0 - tail)
    k = math.floor(pairs / 2.0 + 0.5 - z * sd)
    if k < 1:
        return None
    tail_probability = NormalDist().cdf((k - 0.5 - pairs / 2.0) / sd)
    return k, 1.0 - 2.0 * tail_probability, "normal"


def shift_interval(first, second, level: float | None = 0.95):
    """(shift, low, high, k, coverage, method) for second minus first; limits None when level is None
    or the samples are too small for the level.

    The shift is the median of the m n differences (the mean of the two middle ones when m n is even).
    """
    x = np.asarray(first, dtype=float).ravel()
    y = np.asarray(second, dtype=float).ravel()
    pairs = x.size * y.size
    if pairs == 0:
        raise NarratorError("a shift needs values on both sides")
    middle = [(pairs + 1) // 2, pairs // 2 + 1]
    choice = interval_rank(x.size, y.size, level) if level is not None else None
    ranks = list(middle) + ([choice[0], pairs + 1 - choice[0]] if choice is not None else [])
    found = pairwise_difference_ranks(x, y, ranks)
    shift = (found[0] + found[1]) / 2.0
    if choice is None:
        return shift, None, None, None, None, None
    return shift, found[2], found[3], choice[0], choice[1], choice[2]


def pooled_scale(sizes: Sequence[int], sds: Sequence[float], iqrs: Sequence[float]) -> tuple[float | None, str | None]:
    """The pooled spread of groups of ``sizes``: from IQR / 1.349 when any IQR is positive, else from the SDs.

    >>> pooled_scale([10, 10], [2.0, 2.0], [1.349, 1.349])
    (1.0, 'pooled-iqr')
    """
    use_iqr = any(iqr > 0 for iqr in iqrs)
    scales = [iqr / NORMAL_IQR for iqr in iqrs] if use_iqr else list(sds)
    weights = [size - 1 for size in sizes]
    if sum(weights) <= 0 or not all(math.isfinite(s) for s in scales):
        return None, None
    pooled = math.sqrt(sum(w * s * s for w, s in zip(weights, scales, strict=True)) / sum(weights))
    return pooled, ("pooled-iqr" if use_iqr else "pooled-sd")


@dataclass(frozen=True, slots=True)
class Side:
    """One side of a comparison: its values, and the spread and lead value it is judged with."""

    values: np.ndarray
    sd: float
    iqr: float
    lead_value: float | None
    decimals: int = 0  # decimals the values are recorded with

    @classmethod
    def of_group(cls, values, findings: Findings, lead: str) -> Side:
        """A shown group: its figures are the ones its findings state."""
        spread = findings.spread
        return cls(np.asarray(values, dtype=float), spread.sd if spread is not None else math.nan,
                   spread.iqr if spread is not None else math.nan,
                   None if findings.center is None else getattr(findings.center, lead), findings.variable.decimals)

    @classmethod
    def of_values(cls, values, lead: str, decimals: int = 0) -> Side:
        """Pooled values (the others of a group that stands apart), figured as the engine figures them."""
        ordered = np.sort(np.asarray(values, dtype=float))
        if ordered.size == 0:
            return cls(ordered, math.nan, math.nan, None, decimals)
        q1, q3 = (float(v) for v in quantiles_sorted(ordered, [0.25, 0.75]))
        moments = central_moments(ordered)
        lead_value = median_sorted(ordered) if lead == "median" else moments.mean
        return cls(ordered, moments.sd, q3 - q1, float(lead_value), decimals)


def compare_two(first: Side, second: Side, *, lead: str, level: float, population: bool) -> Difference:
    """Second against first: the shift, its interval, its size against the pooled spread, the verdict."""
    m, n = int(first.values.size), int(second.values.size)
    lead_difference = (None if first.lead_value is None or second.lead_value is None
                       else second.lead_value - first.lead_value)
    if m == 0 or n == 0:
        return Difference(n_first=m, n_second=n, shift=None, low=None, high=None, level=None, coverage=None,
                          ranks=None, rank_method=None, interval_reason="too_few", lead=lead,
                          lead_difference=lead_difference, scale=None, scale_method=None, small_bound=None,
                          ruled_out_bound=None, verdict="not_compared", direction="none", reasons=("no_values",))
    scale, scale_method = pooled_scale([m, n], [first.sd, second.sd], [first.iqr, second.iqr])
    shift, low, high, k, coverage, method = shift_interval(first.values, second.values,
                                                           None if population else level)
    if population:
        interval_reason = "population"
    elif k is None:
        interval_reason = "too_few"
    else:
        interval_reason = "computed"
    reasons: list[str] = []
    small_bound = ruled_out = None
    if scale is None or scale <= 0:
        # No spread to judge a size against: equal values are alike, separate ones different.
        reasons.append("no_spread")
        if shift == 0 and (low is None or low == high == 0):
            verdict = "alike"
        elif (low is None and population) or (low is not None and (low > 0 or high < 0)):
            verdict = "different"
        else:
            verdict = "unclear"
    else:
        # Values recorded in whole units cannot show a difference finer than rounding: half a unit is added.
        rounding = 0.5 * 10.0 ** -max(first.decimals, second.decimals)
        small_bound = SMALL_EFFECT * scale + rounding
        ruled_out = RULED_OUT_EFFECT * scale + rounding
        small = abs(shift) <= small_bound
        if interval_reason == "population":
            verdict = "alike" if small else "different"
            reasons.append("population")
        elif interval_reason == "too_few":
            verdict = "unclear"
            reasons.append("too_few_for_interval")
        else:
            excludes_zero = low > 0 or high < 0
            if excludes_zero:
                verdict = "slightly_different" if small else "different"
                reasons.append("interval_excludes_zero")
            else:
                reasons.append("interval_includes_zero")
                inside = -ruled_out <= low and high <= ruled_out
                verdict = "alike" if small and inside else "unclear"
                if small and not inside:
                    reasons.append("medium_difference_not_ruled_out")
            reasons.append("small" if small else "not_small")
    direction = "none"
    if verdict in ("different", "slightly_different"):
        direction = "higher" if shift > 0 else "lower"
    return Difference(
        n_first=m, n_second=n, shift=shift, low=low, high=high,
        level=None if population or k is None else level, coverage=coverage,
        ranks=None if k is None else (k, m * n + 1 - k), rank_method=method, interval_reason=interval_reason,
        lead=lead, lead_difference=lead_difference, scale=scale, scale_method=scale_method,
        small_bound=small_bound, ruled_out_bound=ruled_out, verdict=verdict, direction=direction,
        reasons=tuple(reasons),
    )


def compare_groups(groups: Sequence[tuple[str, np.ndarray, Findings]], *, lead: str, level: float = 0.95,
                   population: bool = False) -> GroupComparison:
    """Every pair of shown groups, in reading order, and what the pairs say together.

    ``groups`` are (label, values, findings) in reading order; ``lead`` the measure the report leads
    with (the overall findings' choice, so every group is spoken of with the same measure).

    >>> from narrator.engine.describe import describe
    >>> a, b = [10.0, 11, 12, 13, 14, 15, 16, 17, 18, 19], [30.0, 31, 32, 33, 34, 35, 36, 37, 38, 39]
    >>> result = compare_groups([("a", a, describe(a)), ("b", b, describe(b))], lead="median")
    >>> result.pairs[0].difference.shift, result.pairs[0].difference.verdict
    (20.0, 'different')
    """
    if len(groups) < 2:
        return GroupComparison(reason="one_group", lead=lead)
    if len(groups) > MAX_GROUPS:
        return GroupComparison(reason="too_many_groups", lead=lead)
    sides = [(label, Side.of_group(values, findings, lead)) for label, values, findings in groups]
    count = len(sides) * (len(sides) - 1) // 2
    adjusted = level if count == 1 else 1.0 - (1.0 - level) / count
    pairs = []
    for a in range(len(sides)):
        for b in range(a + 1, len(sides)):
            (label_a, side_a), (label_b, side_b) = sides[a], sides[b]
            pairs.append(GroupPair(label_a, label_b, compare_two(
                side_a, side_b, lead=lead, level=adjusted, population=population)))
    labels = [label for label, _ in sides]
    verdict = {(pair.first, pair.second): pair.difference.verdict for pair in pairs}
    verdict.update({(pair.second, pair.first): pair.difference.verdict for pair in pairs})
    stand_apart: tuple[str, ...] = ()
    together: list[tuple[str, ...]] = []
    if len(sides) >= 3:
        stand_apart = tuple(label for label in labels
                            if all(verdict[(label, other)] == "different" for other in labels if other != label))
        together = _alike_sets(labels, verdict)
    versus_rest = []
    for label in stand_apart:
        own = dict(sides)[label]
        others = [(other, side) for other, side in sides if other != label]
        rest = Side.of_values(np.concatenate([side.values for _, side in others]), lead,
                              max(side.decimals for _, side in others))
        versus_rest.append(GroupVersusRest(label, tuple(other for other, _ in others), compare_two(
            rest, own, lead=lead, level=adjusted, population=population)))
    return GroupComparison(
        reason="computed", lead=lead, level=None if population else adjusted, family_level=level,
        adjustment="none" if count == 1 or population else "bonferroni", pairs=tuple(pairs),
        stand_apart=stand_apart, together=tuple(together), versus_rest=tuple(versus_rest),
    )


def _alike_sets(labels: Sequence[str], verdict: dict) -> list[tuple[str, ...]]:
    """Connected sets of the "alike" graph in which every pair is alike, each in reading order.

    A chain (A alike B, B alike C, A not alike C) is not a set of groups that go together: it is left out.
    """
    seen: set[str] = set()
    found = []
    for label in labels:
        if label in seen:
            continue
        component = [label]
        frontier = [label]
        seen.add(label)
        while frontier:
            current = frontier.pop()
            for other in labels:
                if other not in seen and verdict[(current, other)] == "alike":
                    seen.add(other)
                    component.append(other)
                    frontier.append(other)
        members = [other for other in labels if other in component]
        if len(members) >= 2 and all(verdict[(a, b)] == "alike" for a in members for b in members if a != b):
            found.append(tuple(members))
    return found
