"""Robust measures of asymmetry: the medcouple and Bowley's quartile skewness.

=========================  =====================================================
Name                       What it computes
=========================  =====================================================
:func:`medcouple`          exact medcouple of sorted data (Brys, Hubert & Struyf
                           2004), found by Johnson & Mizoguchi (1978) selection;
                           O(n) memory, no n x n kernel matrix is ever built
:func:`bowley_skewness`    (Q3 + Q1 - 2 Q2) / (Q3 - Q1), None when the IQR is 0
:func:`medcouple_of_sample`  the medcouple a report states: exact up to
                           ``MEDCOUPLE_EXACT_MAX_N`` values, else the exact
                           medcouple of a fixed-seed random subsample of
                           ``MEDCOUPLE_SUBSAMPLE_SIZE`` values; with its method
                           code ("exact" or "subsample:<size>:<seed>")
=========================  =====================================================

Both are robust: a few extreme values cannot drive them to their limits
(the medcouple lies in [-1, 1] and breaks down at 25 %, Brys et al. 2004).
"""

from __future__ import annotations

import math

import numpy as np

from narrator.errors import NarratorError

# Rescale by a power of two (an exact operation) only when the centred values are so large that a
# difference could overflow, or so small that the kernel would work in subnormal numbers.
_RESCALE_ABOVE = 2.0**500
_RESCALE_BELOW = 2.0**-500

# Above this many values the medcouple is taken on a random subsample (our choice, for speed): the exact
# algorithm costs about 50 ms at 50 000 values on the benchmark machine (tests/benchmarks/) and grows
# as n log^2 n. Its standard error at the normal is about sqrt(1.25 / m) for m values (the asymptotic
# variance from Brys, Hubert & Struyf 2004; the 1.25 is from memory), so a subsample of 50 000 leaves
# about 0.005: a fence multiplier e^(3 MC) moves by about 1.5 %.
MEDCOUPLE_EXACT_MAX_N = 50_000
# The sampling that narrows the selection's band (speed only; the result is exact whatever it draws).
_SAMPLING_SEED = 20261201
_SAMPLING_ROUNDS = 4
_SAMPLE_SIZE = 4096
# A band of at most max(_GATHER_PER_LINE x (rows + columns), _GATHER_MAX) entries is evaluated whole and the
# entry picked by np.partition; a larger one takes another round. A round costs a few passes over the rows,
# evaluating costs each entry, so the limit grows with n (measured at n = 1e4 and 5e4, tests/benchmarks/).
_GATHER_MAX = 1 << 14
_GATHER_PER_LINE = 4
MEDCOUPLE_SUBSAMPLE_SIZE = 50_000
# With at most this many pairs of distinct values (one above or at the median, one below or at it), the kernel is
# evaluated once per pair of distinct values, weighted by how often each pair occurs: whole numbers with many ties
# (days, counts) take microseconds instead of the selection's rounds. The result is the same to the bit.
_DISTINCT_PAIRS_MAX = 1 << 16


def bowley_skewness(q1: float, median: float, q3: float) -> float | None:
    """Bowley's quartile skewness (Bowley 1901; Kenney & Keeping 1962).

    ``(Q3 + Q1 - 2 Q2) / (Q3 - Q1)``: 0 for a symmetric middle half, positive when
    the upper quartile lies farther from the median than the lower one. It lies
    in [-1, 1]. Returns None when the interquartile range is 0 (undefined).

    >>> bowley_skewness(1.0, 2.0, 5.0)
    0.5
    """
    for name, value in (("q1", q1), ("median", median), ("q3", q3)):
        if not math.isfinite(value):
            raise NarratorError(f"Bowley skewness needs finite quartiles; {name} is {value!r}")
    if not q1 <= median <= q3:
        raise NarratorError(f"Bowley skewness needs q1 <= median <= q3; got {q1!r}, {median!r}, {q3!r}")
    iqr = q3 - q1
    if iqr == 0:
        return None
    return float((q3 + q1 - 2.0 * median) / iqr)


def medcouple_of_sample(sorted_values: np.ndarray, seed: int) -> tuple[float, str]:
    """(medcouple, method code) of sorted data, as the report states it.

    Up to ``MEDCOUPLE_EXACT_MAX_N`` values: the exact :func:`medcouple`, method ``"exact"``.
    Above: the exact medcouple of ``MEDCOUPLE_SUBSAMPLE_SIZE`` values drawn without replacement
    by ``numpy.random.default_rng(seed)``, method ``"subsample:<size>:<seed>"``. The positions
    are drawn in the sorted data and taken in increasing order, so the subsample is itself
    sorted and does not depend on the order of the rows.

    >>> medcouple_of_sample(np.array([1.0, 2.0, 3.0, 6.0, 12.0]), seed=1)
    (0.5, 'exact')
    """
    n = int(np.asarray(sorted_values).size)
    if n <= MEDCOUPLE_EXACT_MAX_N:
        return medcouple(sorted_values), "exact"
    if isinstance(seed, bool) or not isinstance(seed, int | np.integer) or seed < 0:
        raise NarratorError(f"the medcouple subsample needs a whole-number seed >= 0; got {seed!r}")
    generator = np.random.default_rng(int(seed))
    positions = generator.choice(n, size=MEDCOUPLE_SUBSAMPLE_SIZE, replace=False)
    values = np.asarray(sorted_values, dtype=np.float64)
    if n <= 64 * MEDCOUPLE_SUBSAMPLE_SIZE:
        # The positions are distinct: marking them and reading the marked values in order takes them in
        # increasing order without a sort (a pass over n flags, cheaper than sorting the positions here).
        chosen = np.zeros(n, dtype=bool)
        chosen[positions] = True
        subsample = values[chosen]
    else:
        subsample = values[np.sort(positions)]
    return medcouple(subsample), f"subsample:{MEDCOUPLE_SUBSAMPLE_SIZE}:{int(seed)}"


def medcouple(sorted_values: np.ndarray) -> float:
    """The medcouple of Brys, Hubert & Struyf (2004), computed exactly.

    With ``m`` the median, the medcouple is the median of the kernel

        h(x_i, x_j) = ((x_j - m) - (m - x_i)) / (x_j - x_i)

    over all pairs with ``x_i <= m <= x_j`` and ``x_i != x_j``. Pairs where both
    values equal the median get the value -1, 0 or +1 by position (the paper's
    definition, which statsmodels follows): numbering the k tied values 0..k-1
    from each side, the pair (r, c) gets ``sign(k - 1 - r - c)`` counted so the
    kernel matrix stays monotone. When the number of kernel values is even the
    medcouple is the mean of the two middle ones.

    The kernel matrix is never built. Its rows and columns are monotone, so the
    element of a given rank is found by the selection of Johnson & Mizoguchi
    (1978) as used by Brys et al.: take the weighted median of the row medians,
    count the entries above it in every row, and discard the part of the matrix
    that cannot hold the answer. Each round removes at least a quarter of the
    remaining entries, so there are O(log n) rounds. Memory is O(n).

    Cost per round is O(n): the paper counts with a sequential two-pointer sweep,
    slow as a Python loop; here the kernel is solved for the lower value, which
    gives one ascending threshold per row, and the counts come from one linear
    merge of the thresholds with the lower values (a stable sort of two sorted
    runs), checked entry by entry with the kernel itself; the weighted median
    comes from a quickselect (O(n), not a sort). So the medcouple takes
    O(n log n) time, the same order as the sort before it. Rows where rounding
    or ties at the median make a count uncertain are bisected, which adds
    O(log n) per such row. The result is exact: every comparison that decides
    the answer uses the kernel value itself.

    ``sorted_values`` must be finite and sorted ascending. Constant data give 0.
    Values are rescaled by a power of two only when needed, which is exact, so
    huge or tiny magnitudes give the same result as moderate ones.

    >>> medcouple(np.array([1.0, 2.0, 3.0, 6.0, 12.0]))
    0.5
    """
    values = np.asarray(sorted_values, dtype=np.float64)
    if values.ndim != 1:
        raise NarratorError("medcouple needs a one-dimensional array of values")
    n = values.size
    if n == 0:
        raise NarratorError("medcouple needs at least one value")
    if not np.all(np.isfinite(values)):
        raise NarratorError("medcouple needs finite values (no NaN or infinity)")
    if n > 1 and bool(np.any(values[1:] < values[:-1])):
        raise NarratorError("medcouple needs values sorted ascending")
    if values[0] == values[-1]:
        return 0.0

    largest = max(abs(float(values[0])), abs(float(values[-1])))
    if largest > _RESCALE_ABOVE:
        values = _scale_by_power_of_two(values, largest)
    half = n // 2
    centre = values[half] if n % 2 else (values[half - 1] + values[half]) / 2.0
    centred = values - centre
    spread = max(abs(float(centred[0])), abs(float(centred[-1])))
    if spread > _RESCALE_ABOVE or spread < _RESCALE_BELOW:
        centred = _scale_by_power_of_two(centred, spread)

    first_at_median = int(np.searchsorted(centred, 0.0, side="left"))
    first_above_median = int(np.searchsorted(centred, 0.0, side="right"))
    by_distinct = _medcouple_of_distinct(centred, first_at_median, first_above_median)
    if by_distinct is not None:
        return by_distinct
    # Upper values (>= median) and lower values (<= median), each in decreasing order, so
    # the kernel matrix H[i, j] = h(upper[i], lower[j]) is non-increasing along rows and columns.
    kernel = _Kernel(
        upper=np.ascontiguousarray(centred[first_at_median:][::-1]),
        lower=np.ascontiguousarray(centred[:first_above_median][::-1]),
    )
    total = kernel.rows * kernel.columns
    middle = total // 2
    # Ranks below are 0-based in decreasing order.
    if total % 2 == 1:
        return float(kernel.select(middle))
    lower_middle, upper_middle = kernel.select(middle, with_previous=True)
    if upper_middle is None:
        upper_middle = kernel.next_larger(lower_middle, rank=middle)
    return float((upper_middle + lower_middle) / 2.0)


def _distinct(values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The distinct values of a sorted array and how often each occurs."""
    starts = np.flatnonzero(np.concatenate(([True], values[1:] != values[:-1])))
    return values[starts], np.diff(np.append(starts, values.size))


def _medcouple_of_distinct(centred: np.ndarray, first_at_median: int, first_above_median: int) -> float | None:
    """The medcouple from the kernel at each pair of distinct values, weighted by the pair's count; None when
    there are more than ``_DISTINCT_PAIRS_MAX`` such pairs.

    Every entry of the kernel matrix for the values ``a`` (>= median) and ``b`` (<= median) is the same float
    h(a, b), computed the same way, except where both equal the median: among k tied values those entries are
    +1, 0 and -1 (Brys et al. 2004), k(k - 1)/2, k and k(k - 1)/2 of them. So the entries of each rank, and the
    medcouple, are those of the whole matrix.
    """
    upper, upper_counts = _distinct(centred[first_at_median:])
    if upper.size > _DISTINCT_PAIRS_MAX:  # continuous data: no need to look at the lower half
        return None
    lower, lower_counts = _distinct(centred[:first_above_median])
    if upper.size * lower.size > _DISTINCT_PAIRS_MAX:
        return None
    a, b = upper[:, None], lower[None, :]
    tied = (a == 0.0) & (b == 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        kernel = ((a + b) / (a - b))[~tied]
    weights = (upper_counts[:, None] * lower_counts[None, :])[~tied]
    k = first_above_median - first_at_median  # values equal to the median
    if k:
        kernel = np.concatenate((kernel, [1.0, 0.0, -1.0]))
        weights = np.concatenate((weights, [k * (k - 1) // 2, k, k * (k - 1) // 2]))
    order = np.argsort(-kernel, kind="stable")  # decreasing, as the selection ranks
    kernel, ends = kernel[order], np.cumsum(weights[order])
    total = int(ends[-1])

    def at_rank(rank: int) -> float:
        return kernel[int(np.searchsorted(ends, rank, side="right"))]

    middle = total // 2
    if total % 2 == 1:
        return float(at_rank(middle))
    return float((at_rank(middle - 1) + at_rank(middle)) / 2.0)


def _scale_by_power_of_two(values: np.ndarray, magnitude: float) -> np.ndarray:
    """Values times 2**-e with 2**(e-1) <= magnitude < 2**e: exact, barring underflow."""
    _, exponent = math.frexp(magnitude)
    return np.ldexp(values, -exponent)


class _Kernel:
    """The medcouple kernel matrix, evaluated on demand.

    ``upper`` holds the centred values >= 0 in decreasing order (p of them),
    ``lower`` those <= 0 in decreasing order (q of them). Values equal to the
    median appear in both: last in ``upper``, first in ``lower``.
    """

    __slots__ = ("upper", "lower", "rows", "columns", "ties", "every_row", "upper_ascending", "lower_negated")

    def __init__(self, upper: np.ndarray, lower: np.ndarray) -> None:
        self.upper = upper
        self.lower = lower
        self.rows = int(upper.size)
        self.columns = int(lower.size)
        self.ties = bool(self.rows and upper[-1] == 0.0)  # some value equals the median
        # Made once for the counting rounds: 0..rows-1, upper ascending, -lower (ascending).
        self.every_row = np.arange(self.rows)
        self.upper_ascending = np.ascontiguousarray(upper[::-1])
        self.lower_negated = -lower

    def at(self, i: np.ndarray, j: np.ndarray) -> np.ndarray:
        """h(upper[i], lower[j]) for index arrays of equal shape."""
        return self._kernel_of(self.upper[i], self.lower[j], i, j)

    def at_each_row(self, j: np.ndarray) -> np.ndarray:
        """h(upper[i], lower[j[i]]) for every row i (no gather of the rows' values)."""
        return self._kernel_of(self.upper, self.lower[j], self.every_row, j)

    def _kernel_of(self, a: np.ndarray, b: np.ndarray, i: np.ndarray, j: np.ndarray) -> np.ndarray:
        """h(a, b) for a = upper[i], b = lower[j]."""
        if not self.ties:
            return (a + b) / (a - b)  # no value equals the median: a > 0 > b, the denominator is positive
        both_at_median = (a == 0.0) & (b == 0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            h = (a + b) / (a - b)
        if both_at_median.any():
            # Brys et al. (2004): -1, 0, +1 by position among the values tied at the median.
            # In this layout that is sign(p - 1 - i - j), which keeps rows and columns monotone.
            tie_value = np.sign(self.rows - 1 - i - j).astype(np.float64)
            h = np.where(both_at_median, tie_value, h)
        return h

    def count_above(
        self,
        value: float,
        low: np.ndarray,
        high: np.ndarray,
        *,
        strict: bool,
        rows: np.ndarray | None = None,
    ) -> np.ndarray:
        """Per row, how many entries are > value (strict) or >= value.

        The count for row ``rows[k]`` (row k when ``rows`` is None) is known to lie in
        [low[k], high[k]]; bisection finds it.
        """
        if rows is None:
            rows = self.every_row if low.size == self.rows else np.arange(low.size)
        low = low.copy()
        high = high.copy()
        pending = np.nonzero(low < high)[0]
        while pending.size:
            middle = (low[pending] + high[pending]) // 2
            h = self.at(rows[pending], middle)
            above = h > value if strict else h >= value
            low[pending] = np.where(above, middle + 1, low[pending])
            high[pending] = np.where(above, high[pending], middle)
            pending = pending[low[pending] < high[pending]]
        return low

    def count_larger(self, value: float, low: np.ndarray, high: np.ndarray) -> np.ndarray:
        """Per row, how many entries are > value; row i's count lies in [low[i], high[i]].

        For a > 0 or b < 0 the denominator a - b is positive, so for -1 < value < 1
        h(a, b) > value exactly when b > a (value - 1) / (value + 1). That gives a guess
        by binary search in ``lower``; the kernel itself then checks the guess, and rows
        where rounding or ties at the median make it wrong are bisected.
        """
        if not -1.0 < value < 1.0:
            return self.count_above(value, low, high, strict=True)
        # Row i's threshold is upper[i] (value - 1) / (value + 1). -lower is ascending; the number of lower
        # values > threshold is the insertion point of -threshold, which decreases with i (upper decreases,
        # the multiplier is negative): in ascending order it is upper ascending times -multiplier (negation
        # is exact), and the insertion points come from one linear merge.
        negated_thresholds = self.upper_ascending * -((value - 1.0) / (value + 1.0))
        guess = np.clip(_insertion_points(self.lower_negated, negated_thresholds)[::-1], low, high)
        last_column = self.columns - 1
        left_ok = (guess == low) | (self.at_each_row(np.maximum(guess - 1, 0)) > value)
        right_ok = (guess == high) | (self.at_each_row(np.minimum(guess, last_column)) <= value)
        wrong = np.nonzero(~(left_ok & right_ok))[0]
        if wrong.size:
            guess[wrong] = self.count_above(value, low[wrong], high[wrong], strict=True, rows=wrong)
        return guess

    def count_at_least(self, value: float, larger: np.ndarray, high: np.ndarray) -> np.ndarray:
        """Per row, how many entries are >= value, given ``larger``, the counts of entries > value.

        Entries equal to value are rare, so probe the entry just after the strict count first
        and bisect only in the rows where it equals value.
        """
        rows = np.nonzero(larger < high)[0]
        ties = rows[self.at(rows, larger[rows]) >= value]
        if ties.size == 0:
            return larger
        at_least = larger.copy()
        at_least[ties] = self.count_above(value, larger[ties] + 1, high[ties], strict=False, rows=ties)
        return at_least

    def select(self, rank: int, *, with_previous: bool = False):
        """The entry of the given 0-based rank in decreasing order (Johnson & Mizoguchi 1978).

        ``with_previous=True`` returns (that entry, the entry of rank - 1 or None when this search did
        not meet it; :meth:`next_larger` finds it then).
        """
        p, q = self.rows, self.columns
        first = rank - 1 if with_previous else rank
        # Row i's remaining band is columns left[i]..right[i]. Entries left of it are known to be
        # larger than the answer, entries right of it smaller.
        left = np.zeros(p, dtype=np.int64)
        right = np.full(p, q - 1, dtype=np.int64)
        known_larger = 0  # sum of left
        up_to_right = p * q  # sum of right + 1
        left, right, known_larger, up_to_right = self._narrow_by_sampling(first, rank, left, right, known_larger,
                                                                          up_to_right)
        while not self._small_enough(up_to_right - known_larger):
            candidate = self._weighted_median_of_row_medians(left, right)
            larger = self.count_larger(candidate, left, right + 1)
            at_least = self.count_at_least(candidate, larger, right + 1)
            n_larger = int(larger.sum())
            n_at_least = int(at_least.sum())
            if rank < n_larger:
                right = larger - 1
                up_to_right = n_larger
            elif rank >= n_at_least:
                left = at_least
                known_larger = n_at_least
            else:
                return (candidate, None) if with_previous else candidate
        # Few entries remain: evaluate them all and pick the one of the wanted rank.
        rows = np.nonzero(left <= right)[0]
        widths = right[rows] - left[rows] + 1
        row_index = np.repeat(rows, widths)
        starts = np.cumsum(widths) - widths
        column_index = np.arange(int(widths.sum())) - np.repeat(starts - left[rows], widths)
        remaining = -self.at(row_index, column_index)  # negated: np.partition orders ascending
        position = rank - known_larger
        if with_previous and position >= 1:
            picked = np.partition(remaining, (position - 1, position))
            return float(-picked[position]), float(-picked[position - 1])
        value = float(-np.partition(remaining, position)[position])
        return (value, None) if with_previous else value

    def _small_enough(self, band: int) -> bool:
        """Whether a band of this many entries is evaluated whole rather than narrowed further."""
        return band <= max(_GATHER_PER_LINE * (self.rows + self.columns), _GATHER_MAX)

    def _narrow_by_sampling(self, first, rank, left, right, known_larger, up_to_right):
        """Narrow the band around the entry of ``rank`` before the selection rounds (a speed-up only).

        A fixed-seed stratified sample of the band's entries (one uniform draw in each of equal strata)
        gives two values that bracket the wanted entry with near certainty (five standard errors of a
        sample quantile either side); exact counts above and below them, by the same counting the
        rounds use, keep only the band between them. When a bracket misses (the counts show it), the
        band is left as it was, so the result is exact either way; only the time changes (a few rounds
        of sampling replace most selection rounds).
        """
        generator = np.random.default_rng(_SAMPLING_SEED)
        for _ in range(_SAMPLING_ROUNDS):
            total = up_to_right - known_larger
            if self._small_enough(total):
                break
            widths = np.maximum(right - left + 1, 0)
            cumulative = np.cumsum(widths)
            size = _SAMPLE_SIZE
            # One draw in each of `size` equal strata of the band: ascending, so the row lookups run in
            # order with no sort, and the sample quantile's variance is at most a simple random sample's
            # (a sum of independent indicators, one per stratum), so the margin below still holds.
            draws = np.floor((np.arange(size) + generator.random(size)) * (total / size)).astype(np.int64)
            np.minimum(draws, total - 1, out=draws)
            rows = np.searchsorted(cumulative, draws, side="right")
            columns = left[rows] + draws - (cumulative[rows] - widths[rows])
            sample = -self.at(rows, columns)  # negated: np.partition orders ascending, ranks here descend
            share = ((first + rank) / 2 - known_larger) / total
            margin = 5.0 * math.sqrt(share * (1.0 - share) / size) + 2.0 / size
            upper_rank, lower_rank = math.floor((share - margin) * size), math.ceil((share + margin) * size)
            if upper_rank < 0 or lower_rank >= size:
                break
            picked = np.partition(sample, (upper_rank, lower_rank))
            high_value, low_value = -float(picked[upper_rank]), -float(picked[lower_rank])
            larger = self.count_larger(high_value, left, right + 1)
            n_larger = int(larger.sum())
            if n_larger > first:
                break
            below_high = self.count_larger(low_value, left, right + 1)
            at_least = self.count_at_least(low_value, below_high, right + 1)
            n_at_least = int(at_least.sum())
            if rank >= n_at_least:
                break
            left, right, known_larger, up_to_right = larger, at_least - 1, n_larger, n_at_least
        return left, right, known_larger, up_to_right

    def next_larger(self, value: float, *, rank: int) -> float:
        """The entry of 0-based decreasing rank ``rank - 1``, given that ``value`` has rank ``rank``."""
        p, q = self.rows, self.columns
        larger = self.count_larger(value, np.zeros(p, dtype=np.int64), np.full(p, q, dtype=np.int64))
        if int(larger.sum()) < rank:
            return value  # value is repeated, so it also holds rank - 1
        # Exactly `rank` entries exceed value: the smallest of them has rank - 1. In each row the
        # smallest entry above value is the last one counted.
        rows = np.nonzero(larger > 0)[0]
        return float(np.min(self.at(rows, larger[rows] - 1)))

    def _weighted_median_of_row_medians(self, left: np.ndarray, right: np.ndarray) -> float:
        rows = np.nonzero(left <= right)[0]
        medians = self.at(rows, (left[rows] + right[rows]) // 2)
        weights = right[rows] - left[rows] + 1
        return weighted_lower_median(medians, weights)


def weighted_lower_median(values: np.ndarray, weights: np.ndarray) -> float:
    """The smallest value whose cumulative weight (over values <= it) reaches half the total.

    Quickselect on the values (numpy's introselect finds each pivot), keeping only the side that
    holds the answer: the sizes halve, so the work is O(n) where sorting would be O(n log n).

    >>> weighted_lower_median(np.array([3.0, 1.0, 2.0]), np.array([1, 1, 5]))
    2.0
    """
    values = np.asarray(values, dtype=np.float64)
    weights = np.asarray(weights)
    total = int(weights.sum())
    below = 0  # weight of the values already known to lie below the answer
    while values.size > 64:
        pivot = float(np.partition(values, values.size // 2)[values.size // 2])
        less = values < pivot
        weight_less = int(weights[less].sum())
        if 2 * (below + weight_less) >= total:
            values, weights = values[less], weights[less]
            continue
        equal = values == pivot
        weight_equal = int(weights[equal].sum())
        if 2 * (below + weight_less + weight_equal) >= total:
            return pivot
        below += weight_less + weight_equal
        greater = ~(less | equal)
        values, weights = values[greater], weights[greater]
    order = np.argsort(values, kind="stable")
    cumulative = below + np.cumsum(weights[order])
    position = int(np.searchsorted(2 * cumulative, total, side="left"))
    return float(values[order][position])


def _insertion_points(haystack: np.ndarray, needles: np.ndarray) -> np.ndarray:
    """``numpy.searchsorted(haystack, needles, side="left")`` for ascending needles, in linear time.

    A stable sort of the needles followed by the haystack puts each needle before the equal
    haystack values (side "left"); the stable sort (timsort) finds the two ascending runs and
    merges them in one linear pass. A needle's place in the merge, less the needles before it
    (its own index, the needles being ascending), is its insertion point.
    """
    merged = np.argsort(np.concatenate([needles, haystack]), kind="stable")
    # The needles keep their order in the merge (ascending, and the sort is stable), so needle k is the
    # k-th of the merged positions holding a needle.
    return np.flatnonzero(merged < needles.size) - np.arange(needles.size)
