"""Mergeable summaries of one numeric column, built chunk by chunk and merged in any grouping.

Each summary has ``update(values, rows)`` for one chunk (float64 values, finite,
with their int64 source rows) and ``merge(other)`` for the summary of another
set of chunks; both change the summary in place and return it. Counts merge
exactly, in any grouping; a chunk's own sums are numpy's pairwise ones, and each
merge of floating-point sums adds a few rounding errors (the tests hold merged
results to 1e-12 relative of the in-memory ones).

===========================  ======================================================
Name                         What it keeps
===========================  ======================================================
:class:`MomentSummary`       n, mean and centred sums M2, M3, M4 (Chan, Golub &
                             LeVeque 1979; Pebay 2008 for M3 and M4)
:func:`merge_moments`        the parallel update of two MomentSummary values
:class:`ScaledMoments`       MomentSummary of x / factor (the engine's overflow guard)
:func:`row_hash`             SplitMix64 of a row number and a seed (the reservoir's keys)
:class:`ExtremeSummary`      min and max with their first rows, how often each
                             occurs, the next distinct values inwards
:class:`RankBins`           exact counts in narrow bins of the distance from a
                             reference value: brackets for any rank that always hold
:class:`BinBrackets`         the values of chosen runs of those bins (a later pass):
                             exact order statistics there
:class:`TailCandidates`      the k smallest and k largest values with rows
:class:`ReservoirSample`     a fixed-seed uniform sample without replacement
                             (bottom-k of a row hash), the same for any chunking
:class:`CodeCounts`          counts, first rows and counts below each suspect code
:class:`RoundCounts`         values at multiples of 10, 5 and 1 (heaping checks)
:class:`DistinctValues`      the distinct values, kept while there are few
:class:`PrecisionSummary`    whole-number test and the decimals the values carry
:class:`PartitionCounts`     exact counts in the cells cut by sorted boundaries,
                             and the values themselves in chosen cells
:class:`RangeMean`           count and mean of the values inside an open interval
:class:`BinCounts`           counts per bin of a fixed grid (bin index rule of
                             :mod:`narrator.engine.bins`)
:class:`LinearBinCounts`     linear binning on a fixed lattice (Wand 1994), additive
                             over chunks
:class:`EdgeCounts`          counts in half-open bins between given edges, and
                             beyond them (the histogram over the bulk)
:class:`FlaggedValues`       values an outlier rule flags, with their rows, and
                             the moments of the values it keeps
:class:`FarthestValue`       the first row of the largest distance from a centre
:class:`MeanDistance`        mean absolute distance from a centre
:class:`ExcludingMoments`    moments of the values other than one value
:class:`DistanceCounts`      distances from a centre: counts below and above a band,
                             the distances inside it (the MAD's bracket)
:class:`FlaggedBand`         FlaggedValues for any limits within given bands, gathered
                             before the limits are known
:class:`CentreBand`          DistanceCounts for any centre near a given one, gathered
                             before the centre is known
===========================  ======================================================
"""

from __future__ import annotations

import math

import numpy as np

from narrator.engine.moments import Moments, central_moments
from narrator.findings import LISTED_PER_SIDE

# The reservoir's hash: SplitMix64 (Steele, Lea & Flood 2014), a bijection of 64-bit integers whose
# output bits pass standard randomness tests; keying a value by the hash of its row and the seed
# makes "keep the m smallest keys" a uniform sample without replacement that no chunking changes.
_GOLDEN = np.uint64(0x9E3779B97F4A7C15)
_MIX_1 = np.uint64(0xBF58476D1CE4E5B9)
_MIX_2 = np.uint64(0x94D049BB133111EB)


def row_hash(rows: np.ndarray, seed: int) -> np.ndarray:
    """SplitMix64 of (row + seed * golden ratio constant), as unsigned 64-bit keys."""
    with np.errstate(over="ignore"):
        z = rows.astype(np.uint64) + np.uint64(seed % 2**64) * _GOLDEN + _GOLDEN
        z = (z ^ (z >> np.uint64(30))) * _MIX_1
        z = (z ^ (z >> np.uint64(27))) * _MIX_2
        return z ^ (z >> np.uint64(31))


# ---------------------------------------------------------------------------
# Moments
# ---------------------------------------------------------------------------


class MomentSummary:
    """n, mean and the centred sums M_k = sum (x - mean)^k, k = 2, 3, 4, of the values seen.

    The sums are kept as M_k / scale^k with ``scale`` a power of two (exact to apply), so tiny or
    huge spreads neither underflow nor overflow. A chunk's own sums come from
    :func:`narrator.engine.moments.central_moments` (two-pass, pairwise), so the only error added
    by chunking is that of the merge formula, a few units in the last place per merge.
    """

    __slots__ = ("n", "mean", "scale", "m2", "m3", "m4")

    def __init__(self) -> None:
        self.n = 0
        self.mean = 0.0
        self.scale = 1.0
        self.m2 = 0.0
        self.m3 = 0.0
        self.m4 = 0.0

    @classmethod
    def of(cls, values: np.ndarray) -> MomentSummary:
        summary = cls()
        if values.size:
            moments = central_moments(values)
            summary.n = moments.n
            summary.mean = moments.mean
            summary.scale = moments.deviation_scale
            summary.m2 = moments.s2 * moments.n
            summary.m3 = moments.s3 * moments.n
            summary.m4 = moments.s4 * moments.n
        return summary

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> MomentSummary:
        return self.merge(MomentSummary.of(values))

    def merge(self, other: MomentSummary) -> MomentSummary:
        merged = merge_moments(self, other)
        self.n, self.mean, self.scale = merged.n, merged.mean, merged.scale
        self.m2, self.m3, self.m4 = merged.m2, merged.m3, merged.m4
        return self

    def moments(self) -> Moments:
        """The same :class:`~narrator.engine.moments.Moments` the in-memory engine builds."""
        if self.n == 0:
            return Moments(0, math.nan, 1.0, math.nan, math.nan, math.nan)
        return Moments(self.n, self.mean, self.scale, self.m2 / self.n, self.m3 / self.n, self.m4 / self.n)

    def __getstate__(self):
        return (self.n, self.mean, self.scale, self.m2, self.m3, self.m4)

    def __setstate__(self, state) -> None:
        self.n, self.mean, self.scale, self.m2, self.m3, self.m4 = state


def merge_moments(a: MomentSummary, b: MomentSummary) -> MomentSummary:
    """The parallel update of Chan, Golub & LeVeque (1979) for the mean and M2, extended to M3 and M4
    by Pebay (2008, Sandia report SAND2008-6212, eqs. 3.1 to 3.3). With d = mean_b - mean_a, n = na + nb:

        mean = mean_a + d nb / n
        M2 = M2a + M2b + d^2 na nb / n
        M3 = M3a + M3b + d^3 na nb (na - nb) / n^2 + 3 d (na M2b - nb M2a) / n
        M4 = M4a + M4b + d^4 na nb (na^2 - na nb + nb^2) / n^3
             + 6 d^2 (na^2 M2b + nb^2 M2a) / n^2 + 4 d (na M3b - nb M3a) / n
    """
    result = MomentSummary()
    if b.n == 0:
        MomentSummary.__setstate__(result, MomentSummary.__getstate__(a))
        return result
    if a.n == 0:
        MomentSummary.__setstate__(result, MomentSummary.__getstate__(b))
        return result
    na, nb = float(a.n), float(b.n)
    n = na + nb
    delta_raw = b.mean - a.mean
    # A common power-of-two scale: the larger of the two, and large enough for the gap between the means.
    # A side without spread (one value, or equal values) has no scale of its own and imposes none.
    gap_scale = 2.0 ** math.floor(math.log2(abs(delta_raw))) if delta_raw != 0 else 0.0
    scale = max(a.scale if a.m2 > 0 else 0.0, b.scale if b.m2 > 0 else 0.0, gap_scale) or 1.0

    def rescaled(side: MomentSummary) -> tuple[float, float, float]:
        if side.m2 == 0:
            return 0.0, 0.0, 0.0
        ratio = side.scale / scale  # a power of two: exact
        return side.m2 * ratio**2, side.m3 * ratio**3, side.m4 * ratio**4

    a2, a3, a4 = rescaled(a)
    b2, b3, b4 = rescaled(b)
    d = delta_raw / scale
    result.n = a.n + b.n
    result.mean = a.mean + delta_raw * (nb / n)
    result.scale = scale
    result.m2 = a2 + b2 + d * d * na * nb / n
    result.m3 = a3 + b3 + d**3 * na * nb * (na - nb) / (n * n) + 3.0 * d * (na * b2 - nb * a2) / n
    result.m4 = (
        a4 + b4 + d**4 * na * nb * (na * na - na * nb + nb * nb) / n**3
        + 6.0 * d * d * (na * na * b2 + nb * nb * a2) / (n * n) + 4.0 * d * (na * b3 - nb * a3) / n
    )
    return result


class ScaledMoments(MomentSummary):
    """Moments of values divided by a fixed power of two (the in-memory engine's overflow guard)."""

    __slots__ = ("factor",)

    def __init__(self, factor: float = 1.0) -> None:
        super().__init__()
        self.factor = factor

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> ScaledMoments:
        self.merge(MomentSummary.of(values if self.factor == 1.0 else values / self.factor))
        return self

    def merge(self, other: MomentSummary) -> ScaledMoments:
        MomentSummary.merge(self, other)
        return self

    def __getstate__(self):
        return (*MomentSummary.__getstate__(self), self.factor)

    def __setstate__(self, state) -> None:
        MomentSummary.__setstate__(self, state[:6])
        self.factor = state[6]


# ---------------------------------------------------------------------------
# First-pass summaries
# ---------------------------------------------------------------------------


class ExtremeSummary:
    """Smallest and largest value, the first row of each, how many values equal each, and the next
    distinct value inwards from each end (the in-memory engine's "next_up" and "next_down")."""

    __slots__ = ("n", "low", "low_row", "low_count", "second_low", "high", "high_row", "high_count",
                 "second_high")

    def __init__(self) -> None:
        self.n = 0
        self.low = math.inf
        self.low_row = -1
        self.low_count = 0
        self.second_low = math.inf
        self.high = -math.inf
        self.high_row = -1
        self.high_count = 0
        self.second_high = -math.inf

    def update(self, values: np.ndarray, rows: np.ndarray) -> ExtremeSummary:
        if values.size == 0:
            return self
        other = ExtremeSummary()
        other.n = int(values.size)
        low_at, high_at = int(np.argmin(values)), int(np.argmax(values))
        other.low, other.high = float(values[low_at]), float(values[high_at])
        other.low_row, other.high_row = int(rows[low_at]), int(rows[high_at])
        # the next values inwards by masked reductions (no copy of the chunk without its extremes)
        not_low, not_high = values != other.low, values != other.high
        other.low_count = int(values.size - np.count_nonzero(not_low))
        other.high_count = int(values.size - np.count_nonzero(not_high))
        other.second_low = float(np.min(values, where=not_low, initial=math.inf))
        other.second_high = float(np.max(values, where=not_high, initial=-math.inf))
        return self.merge(other)

    def merge(self, other: ExtremeSummary) -> ExtremeSummary:
        if other.n == 0:
            return self
        if self.n == 0:
            for name in self.__slots__:
                setattr(self, name, getattr(other, name))
            return self
        lows = sorted({self.low, self.second_low, other.low, other.second_low})
        highs = sorted({self.high, self.second_high, other.high, other.second_high}, reverse=True)
        if other.low < self.low:
            self.low_row, self.low_count = other.low_row, other.low_count
        elif other.low == self.low:
            self.low_row = min(self.low_row, other.low_row)
            self.low_count += other.low_count
        if other.high > self.high:
            self.high_row, self.high_count = other.high_row, other.high_count
        elif other.high == self.high:
            self.high_row = min(self.high_row, other.high_row)
            self.high_count += other.high_count
        self.low, self.second_low = lows[0], (lows[1] if len(lows) > 1 else math.inf)
        self.high, self.second_high = highs[0], (highs[1] if len(highs) > 1 else -math.inf)
        self.n += other.n
        return self

    def __getstate__(self):
        return tuple(getattr(self, name) for name in self.__slots__)

    def __setstate__(self, state) -> None:
        for name, value in zip(self.__slots__, state, strict=True):
            setattr(self, name, value)


# Distances from the reference below TINY and beyond HUGE scales (powers of two) share one bin each side,
# which bounds the bins to 2 x 96 doublings whatever the values.
_RANK_BINS_TINY = 2.0**-48
_RANK_BINS_HUGE = 2.0**48
RANK_BIN_BITS = 12  # 2^12 = 4096 bins to each doubling of the distance from the reference


class RankBins:
    """Exact counts of the values in narrow bins of their distance from a reference value, which give
    brackets for any rank that always hold (the counts are exact, not estimated).

    A value x is binned by the float32 image of d = (x - centre) / scale: its sign, its exponent and
    the first ``bits`` bits of its significand, so each doubling of |d| has 2^bits bins and a bin is at
    most 2^-bits of its own distance from the centre wide (|d| below 2^-48 or beyond 2^48 shares one bin
    a side). Every step (the subtraction, the product, the rounding to float32, the bits) is monotone in
    x, so each bin is an interval of values and the count of values below any bin is exact; a bin
    holding a wanted rank is a bracket for it. The counts merge exactly by addition in any grouping;
    memory is one int64 count per bin between the lowest and highest seen (at most 2 x 96 x 2^bits).
    ``centre`` and ``scale`` must be the same for every chunk merged (the engine takes them from the
    first chunk read).
    """

    __slots__ = ("centre", "scale", "bits", "first", "counts", "_inverse", "_tiny", "_huge", "_below")

    def __init__(self, centre: float, scale: float, bits: int = RANK_BIN_BITS) -> None:
        if not (math.isfinite(centre) and 0 < scale < math.inf and 1 <= bits <= 20):
            raise ValueError("RankBins needs a finite centre, a positive finite scale and 1 to 20 bits")
        self.centre, self.scale, self.bits = float(centre), float(scale), int(bits)
        self.first = 0
        self.counts = np.zeros(0, dtype=np.int64)
        self._setup()

    def _setup(self) -> None:
        self._inverse = 1.0 / self.scale
        shift = 23 - self.bits
        self._tiny = int(np.array([_RANK_BINS_TINY], dtype=np.float32).view(np.int32)[0]) >> shift
        self._huge = int(np.array([_RANK_BINS_HUGE], dtype=np.float32).view(np.int32)[0]) >> shift
        self._below = None

    @classmethod
    def around(cls, values: np.ndarray, bits: int = RANK_BIN_BITS) -> RankBins:
        """Empty bins centred on the median of ``values`` (a first chunk), scaled by their IQR (or their
        range, or the centre's size, or 1 when those are 0)."""
        if values.size == 0:
            return cls(0.0, 1.0, bits)
        q1, centre, q3 = (float(v) for v in np.percentile(values, [25, 50, 75]))
        for scale in (q3 - q1, float(values.max()) - float(values.min()), abs(centre), 1.0):
            if 0 < scale < math.inf:
                break
        return cls(centre if math.isfinite(centre) else 0.0, scale, bits)

    @property
    def n(self) -> int:
        return int(self._cumulative()[-1])

    def keys(self, values: np.ndarray) -> np.ndarray:
        """Each value's bin (int32, non-decreasing in the value; 0 is the bin of the centre)."""
        with np.errstate(over="ignore", invalid="ignore"):
            distance = values - self.centre
            distance *= self._inverse
            key = distance.astype(np.float32).view(np.int32)
        key ^= (key >> 31) & np.int32(0x7FFFFFFF)  # sign and magnitude to an order-keeping integer
        key >>= 23 - self.bits
        np.clip(key, -self._huge, self._huge, out=key)
        key -= np.clip(key, -self._tiny, self._tiny)
        return key

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> RankBins:
        if values.size:
            key = self.keys(values)
            low, high = int(key.min()), int(key.max())
            key -= low
            self._add(low, np.bincount(key, minlength=high - low + 1))
        return self

    def _add(self, first: int, counts: np.ndarray) -> None:
        if counts.size == 0:
            return
        if self.counts.size == 0:
            self.first, self.counts = first, counts.astype(np.int64)
        else:
            low = min(self.first, first)
            high = max(self.first + self.counts.size, first + counts.size)
            if low != self.first or high != self.first + self.counts.size:
                grown = np.zeros(high - low, dtype=np.int64)
                grown[self.first - low : self.first - low + self.counts.size] = self.counts
                self.first, self.counts = low, grown
            self.counts[first - self.first : first - self.first + counts.size] += counts
        self._below = None

    def merge(self, other: RankBins) -> RankBins:
        if (other.centre, other.scale, other.bits) != (self.centre, self.scale, self.bits):
            raise ValueError("RankBins with different centres, scales or bits do not merge")
        self._add(other.first, other.counts)
        return self

    def _cumulative(self) -> np.ndarray:
        """below[j]: how many values lie in the bins before bin first + j (length bins + 1)."""
        if self._below is None:
            self._below = np.concatenate([[0], np.cumsum(self.counts)])
        return self._below

    def bin_of_rank(self, rank: int) -> int:
        """The key of the bin that holds 0-based rank ``rank`` (0 <= rank < n)."""
        below = self._cumulative()
        return int(np.searchsorted(below, rank, side="right")) - 1 + self.first

    def _key_of(self, value: float) -> int:
        """:meth:`keys` of one value, the same steps on Python integers (no array overhead)."""
        with np.errstate(over="ignore", invalid="ignore"):
            distance = (float(value) - self.centre) * self._inverse
            key = int(np.array([distance], dtype=np.float64).astype(np.float32).view(np.int32)[0])
        key ^= (key >> 31) & 0x7FFFFFFF
        key >>= 23 - self.bits
        key = min(max(key, -self._huge), self._huge)
        return key - min(max(key, -self._tiny), self._tiny)

    def _edge(self, key: int) -> float:
        """A value near the lower end of bin ``key`` (data units), before checking."""
        # the key before the centre's bin was folded in: bin 0 starts at -tiny
        inner = -self._tiny if key == 0 else key + self._tiny if key > 0 else key - self._tiny
        bits = np.array([inner << (23 - self.bits)], dtype=np.int64)
        bits = np.where(bits < 0, bits ^ 0x7FFFFFFF, bits).astype(np.int32)
        return self.centre + float(bits.view(np.float32)[0]) * self.scale

    def value_below(self, rank: int) -> float:
        """A value below every value of the bin holding 0-based rank ``rank`` (-inf for the first bin):
        the order statistic of that rank is greater than it."""
        rank = min(max(int(rank), 0), max(self.n - 1, 0))
        key = self.bin_of_rank(rank)
        if key <= self.first or key <= -self._huge + self._tiny:
            return -math.inf
        value = self._edge(key)
        return self._step_until(value, -1, lambda v: self._key_of(v) < key)

    def value_above(self, rank: int) -> float:
        """A value above every value of the bin holding 0-based rank ``rank`` (inf for the last bin)."""
        rank = min(max(int(rank), 0), max(self.n - 1, 0))
        key = self.bin_of_rank(rank)
        if key >= self.first + self.counts.size - 1 or key >= self._huge - self._tiny:
            return math.inf
        value = self._edge(key + 1)
        return self._step_until(value, 1, lambda v: self._key_of(v) > key)

    def _step_until(self, value: float, direction: int, holds) -> float:
        """``value`` moved outwards (``direction``) by growing steps until ``holds(value)``."""
        # about a float32 step of the distance: a bin's edge is crossed in a step or two
        step = max(abs(value - self.centre) * 2.0**-23, abs(value) * 2.0**-50, self.scale * _RANK_BINS_TINY * 2.0**-23)
        for _ in range(1100):
            if math.isfinite(value) and holds(value):
                return value
            value += direction * step
            step *= 2.0
        return -math.inf if direction < 0 else math.inf

    def count_bounds(self, value: float) -> tuple[int, int]:
        """(a, b) with a <= the number of values below ``value`` and the number at or below it <= b."""
        below = self._cumulative()
        j = self._key_of(value) - self.first
        if j < 0:
            return 0, 0
        if j >= self.counts.size:
            return int(below[-1]), int(below[-1])
        return int(below[j]), int(below[j + 1])

    def __getstate__(self):
        return (self.centre, self.scale, self.bits, self.first, self.counts)

    def __setstate__(self, state) -> None:
        self.centre, self.scale, self.bits, self.first, self.counts = state
        self._setup()


class BinBrackets:
    """The values of chosen runs of :class:`RankBins` bins, kept in a later pass: with the bins' exact
    counts, every order statistic whose rank falls in a kept run is known exactly.

    ``runs`` are inclusive (first, last) bin keys. A later pass bins each value as the first did (the
    same keys) and keeps those in a run, so the values below a run are counted by the first pass
    already: one binning and one lookup a value, whatever the number of brackets. The methods answer
    as :class:`PartitionCounts` does (``order_statistic``, ``counts_at``, ``covers``, ``kept_between``).
    """

    __slots__ = ("bins", "runs", "_store", "_table", "_kept_keys")

    def __init__(self, bins: RankBins, runs) -> None:
        self.bins = bins
        merged: list[list[int]] = []
        for first, last in sorted((int(a), int(b)) for a, b in runs):
            if merged and first <= merged[-1][1] + 1:
                merged[-1][1] = max(merged[-1][1], last)
            else:
                merged.append([first, last])
        self.runs = [tuple(run) for run in merged]
        self._store = PartitionCounts(np.zeros(0), np.ones(1, dtype=bool))
        self._setup()

    def _setup(self) -> None:
        bins = self.bins
        # kept[1 + key - first] for every key of the bins, False for any key outside them
        table = np.zeros(bins.counts.size + 2, dtype=bool)
        for first, last in self.runs:
            table[1 + max(first - bins.first, -1) : 2 + min(last - bins.first, bins.counts.size)] = True
        table[0] = table[-1] = False
        self._table = table
        self._kept_keys = None

    @property
    def kept_values(self) -> np.ndarray:
        return self._store.kept_values

    @property
    def kept_counts(self) -> np.ndarray:
        return self._store.kept_counts

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> BinBrackets:
        if values.size and self.runs:
            index = self.bins.keys(values)
            index -= self.bins.first - 1
            np.clip(index, 0, self._table.size - 1, out=index)
            kept = values[self._table[index]]
            if kept.size:
                self._store._add_kept(kept, np.ones(kept.size, dtype=np.int64))
                self._kept_keys = None
        return self

    def merge(self, other: BinBrackets) -> BinBrackets:
        self._store._add_kept(other.kept_values, other.kept_counts)
        self._kept_keys = None
        return self

    def _run_of(self, key: int) -> tuple[int, int] | None:
        return next((run for run in self.runs if run[0] <= key <= run[1]), None)

    def _below(self, key: int) -> int:
        """How many values lie in the bins before ``key`` (from the first pass)."""
        below = self.bins._cumulative()
        return int(below[min(max(key - self.bins.first, 0), below.size - 1)])

    def _slice(self, run: tuple[int, int]) -> tuple[np.ndarray, np.ndarray] | None:
        """The kept values of one run with their counts, or None when they do not add up to the bins'
        count (the data changed between the passes)."""
        if self._kept_keys is None:
            self._kept_keys = self.bins.keys(self.kept_values) if self.kept_values.size else np.zeros(0, np.int32)
        start = int(np.searchsorted(self._kept_keys, run[0], side="left"))
        stop = int(np.searchsorted(self._kept_keys, run[1], side="right"))
        values, counts = self.kept_values[start:stop], self.kept_counts[start:stop]
        if int(counts.sum()) != self._below(run[1] + 1) - self._below(run[0]):
            return None
        return values, counts

    def order_statistic(self, rank: int) -> float | None:
        """The value of 0-based rank ``rank`` in ascending order, or None when its bin was not kept."""
        if not 0 <= rank < self.bins.n:
            return None
        run = self._run_of(self.bins.bin_of_rank(rank))
        found = None if run is None else self._slice(run)
        if found is None:
            return None
        values, counts = found
        cumulative = np.cumsum(counts)
        return float(values[int(np.searchsorted(cumulative, rank - self._below(run[0]), side="right"))])

    def counts_at(self, value: float) -> tuple[int, int] | None:
        """(values below ``value``, values equal to it), exactly, or None when its bin holds values and
        was not kept."""
        key = self.bins._key_of(value)
        run = self._run_of(key)
        if run is None:
            if self._below(key + 1) == self._below(key):  # an empty bin: nothing equals the value
                return self._below(key), 0
            return None
        found = self._slice(run)
        if found is None:
            return None
        values, counts = found
        at = int(np.searchsorted(values, value, side="left"))
        equal = int(counts[at]) if at < values.size and values[at] == value else 0
        return self._below(run[0]) + int(counts[:at].sum()), equal

    def covers(self, low: float, high: float) -> bool:
        """Whether every value in [low, high] was kept: each bin between theirs is kept or empty."""
        first, last = self.bins._key_of(low), self.bins._key_of(high)
        start, stop = first - self.bins.first, last - self.bins.first
        if start < 0 or stop >= self.bins.counts.size:
            return False
        return bool(np.all(self._table[1 + start : 2 + stop] | (self.bins.counts[start : stop + 1] == 0)))

    def kept_between(self, low: float, high: float) -> tuple[np.ndarray, np.ndarray]:
        """Kept distinct values in [low, high] with counts, ascending."""
        inside = (self.kept_values >= low) & (self.kept_values <= high)
        return self.kept_values[inside], self.kept_counts[inside]

    def __getstate__(self):
        return (self.bins, self.runs, self._store.__getstate__())

    def __setstate__(self, state) -> None:
        self.bins, self.runs = state[0], state[1]
        self._store = PartitionCounts(np.zeros(0), np.ones(1, dtype=bool))
        self._store.__setstate__(state[2])
        self._setup()


def _kth_smallest(values: np.ndarray, k: int) -> float:
    """The k-th smallest of ``values`` (k >= 1). The k-th smallest of every 16k-th value is at or above it,
    so only the values up to that one are selected from (a fresh summary's first chunk, as each row
    group's on a cluster, costs a comparison instead of a partition of the chunk)."""
    step = values.size // (16 * k)
    if step > 1:
        values = values[values <= np.partition(values[::step], k - 1)[k - 1]]
    return np.partition(values, k - 1)[k - 1]


class TailCandidates:
    """The ``k`` smallest and ``k`` largest values with their rows; ties broken by the earlier row."""

    __slots__ = ("k", "low_values", "low_rows", "high_values", "high_rows")

    def __init__(self, k: int) -> None:
        self.k = int(k)
        self.low_values = np.zeros(0)
        self.low_rows = np.zeros(0, dtype=np.int64)
        self.high_values = np.zeros(0)
        self.high_rows = np.zeros(0, dtype=np.int64)

    def _keep(self, values, rows) -> None:
        order = np.lexsort((rows, values))[: self.k]
        self.low_values, self.low_rows = values[order], rows[order]
        order = np.lexsort((rows, -values))[: self.k]
        self.high_values, self.high_rows = values[order], rows[order]

    def update(self, values: np.ndarray, rows: np.ndarray) -> TailCandidates:
        if values.size == 0 or self.k == 0:
            return self
        if self.low_values.size == self.k and self.high_values.size == self.k:
            # Only values at or beyond the k-th smallest and k-th largest kept so far can enter.
            keep = (values <= self.low_values[-1]) | (values >= self.high_values[0])
            if not keep.all():
                values, rows = values[keep], rows[keep]
                if values.size == 0:
                    return self
        if values.size > 4 * self.k:
            # Only the chunk's own k extremes can survive: select them first, in O(chunk).
            low_cut = _kth_smallest(values, self.k)
            high_cut = -_kth_smallest(-values, self.k)
            keep = (values <= low_cut) | (values >= high_cut)
            values, rows = values[keep], rows[keep]
        self._keep(np.concatenate([self.low_values, self.high_values, values]),
                   np.concatenate([self.low_rows, self.high_rows, rows]))
        return self

    def merge(self, other: TailCandidates) -> TailCandidates:
        values = np.concatenate([self.low_values, self.high_values, other.low_values, other.high_values])
        rows = np.concatenate([self.low_rows, self.high_rows, other.low_rows, other.high_rows])
        # A value held in both lists of one side is one value: drop repeated rows.
        rows, first = np.unique(rows, return_index=True)
        self._keep(values[first], rows)
        return self

    def __getstate__(self):
        return (self.k, self.low_values, self.low_rows, self.high_values, self.high_rows)

    def __setstate__(self, state) -> None:
        self.k, self.low_values, self.low_rows, self.high_values, self.high_rows = state


class ReservoirSample:
    """A uniform random sample of ``size`` values without replacement, with their rows.

    Each value is keyed by :func:`row_hash` of its source row and the seed and the ``size`` smallest
    keys are kept ("bottom-k" sampling; Cohen & Kaplan 2007): for distinct rows every subset of that
    size is equally likely, and because a key depends only on the row, the sample is the same for
    any chunking, any order of the chunks and any grouping of merges, on one machine or many.
    """

    __slots__ = ("size", "seed", "keys", "values", "rows")

    def __init__(self, size: int, seed: int) -> None:
        self.size = int(size)
        self.seed = int(seed)
        self.keys = np.zeros(0, dtype=np.uint64)
        self.values = np.zeros(0)
        self.rows = np.zeros(0, dtype=np.int64)

    def _keep(self, keys, values, rows) -> None:
        if keys.size > self.size:
            part = np.argpartition(keys, self.size - 1)[: self.size]
            keys, values, rows = keys[part], values[part], rows[part]
        self.keys, self.values, self.rows = keys, values, rows

    def update(self, values: np.ndarray, rows: np.ndarray) -> ReservoirSample:
        if values.size:
            keys = row_hash(rows, self.seed)
            if self.keys.size == self.size:  # full: only keys below the largest kept can enter
                enter = keys < self.keys.max()
                keys, values, rows = keys[enter], values[enter], rows[enter]
                if keys.size == 0:
                    return self
            self._keep(np.concatenate([self.keys, keys]), np.concatenate([self.values, values]),
                       np.concatenate([self.rows, rows]))
        return self

    def merge(self, other: ReservoirSample) -> ReservoirSample:
        self._keep(np.concatenate([self.keys, other.keys]), np.concatenate([self.values, other.values]),
                   np.concatenate([self.rows, other.rows]))
        return self

    def in_row_order(self) -> tuple[np.ndarray, np.ndarray]:
        order = np.argsort(self.rows, kind="stable")
        return self.values[order], self.rows[order]

    def __getstate__(self):
        return (self.size, self.seed, self.keys, self.values, self.rows)

    def __setstate__(self, state) -> None:
        self.size, self.seed, self.keys, self.values, self.rows = state


class CodeCounts:
    """For each candidate missing-value code: how many values equal it, how many lie below it, and the
    first rows where it occurs."""

    __slots__ = ("codes", "equal", "below", "rows", "rows_kept")

    def __init__(self, codes, rows_kept: int) -> None:
        self.codes = tuple(float(c) for c in codes)
        self.equal = np.zeros(len(self.codes), dtype=np.int64)
        self.below = np.zeros(len(self.codes), dtype=np.int64)
        self.rows = [np.zeros(0, dtype=np.int64) for _ in self.codes]
        self.rows_kept = rows_kept

    def update(self, values: np.ndarray, rows: np.ndarray) -> CodeCounts:
        for k, code in enumerate(self.codes):
            hits = values == code
            count = int(np.count_nonzero(hits))
            self.below[k] += int(np.count_nonzero(values < code))
            if count:
                self.equal[k] += count
                self.rows[k] = np.sort(np.concatenate([self.rows[k], rows[hits][: self.rows_kept]]))[: self.rows_kept]
        return self

    def merge(self, other: CodeCounts) -> CodeCounts:
        self.equal += other.equal
        self.below += other.below
        self.rows = [np.sort(np.concatenate([a, b]))[: self.rows_kept] for a, b in zip(self.rows, other.rows,
                                                                                         strict=True)]
        return self

    def __getstate__(self):
        return (self.codes, self.equal, self.below, self.rows, self.rows_kept)

    def __setstate__(self, state) -> None:
        self.codes, self.equal, self.below, self.rows, self.rows_kept = state


class RoundCounts:
    """How many values sit on a multiple of each base, with the test the heaping check uses:
    |x / base - round(x / base)| < 1e-9 max(1, |x / base|)."""

    __slots__ = ("bases", "hits")

    def __init__(self, bases=(10.0, 5.0, 1.0)) -> None:
        self.bases = tuple(bases)
        self.hits = np.zeros(len(self.bases), dtype=np.int64)

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> RoundCounts:
        # A value near a multiple of any base (10, 5, 1) is near a whole number: one cheap test keeps
        # those (with a wide allowance), and the exact test of each base runs on them alone, value by
        # value the same arithmetic as on the whole chunk.
        if values.size and all(float(base).is_integer() and 1.0 <= base <= 100.0 for base in self.bases):
            near_whole = np.abs(values - np.round(values)) < 1e-6 * np.maximum(np.abs(values), 1.0)
            if not near_whole.all():
                values = values[near_whole]
        for k, base in enumerate(self.bases):
            ratio = values if base == 1.0 else values / base
            distance = np.abs(ratio - np.round(ratio))
            tolerance = np.maximum(np.abs(ratio), 1.0) * 1e-9
            self.hits[k] += int(np.count_nonzero(distance < tolerance))
        return self

    def merge(self, other: RoundCounts) -> RoundCounts:
        self.hits += other.hits
        return self

    def count(self, base: float) -> int:
        return int(self.hits[self.bases.index(base)])

    def __getstate__(self):
        return (self.bases, self.hits)

    def __setstate__(self, state) -> None:
        self.bases, self.hits = state


class DistinctValues:
    """The distinct values while there are at most ``limit`` of them; beyond that only "more"."""

    __slots__ = ("limit", "values", "more")

    def __init__(self, limit: int) -> None:
        self.limit = int(limit)
        self.values: set[float] = set()
        self.more = False

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> DistinctValues:
        if self.more or values.size == 0:
            return self
        # np.unique of a large chunk is a sort: look at a few values first to catch a many-valued column.
        if np.unique(values[: 4 * (self.limit + 1)]).size > self.limit:
            self.more = True
            return self
        self.values.update(float(v) for v in np.unique(values))
        if len(self.values) > self.limit:
            self.more, self.values = True, set()
        return self

    def merge(self, other: DistinctValues) -> DistinctValues:
        if self.more or other.more:
            self.more, self.values = True, set()
        else:
            self.values |= other.values
            if len(self.values) > self.limit:
                self.more, self.values = True, set()
        return self

    def count_up_to(self, limit: int) -> int:
        """The distinct count, or ``limit + 1`` when there are more than ``limit``."""
        return limit + 1 if self.more or len(self.values) > limit else len(self.values)

    def __getstate__(self):
        return (self.limit, self.values, self.more)

    def __setstate__(self, state) -> None:
        self.limit, self.values, self.more = state


_PROBE = 256  # values tested first by PrecisionSummary


def _whole_numbers(values: np.ndarray) -> bool:
    return bool(np.all(np.floor(values) == values))


def _fit(values: np.ndarray, scale: int) -> bool:
    """Whether every value times ``scale`` is within 1e-6 (relative, at least absolute) of a whole number."""
    times = values * scale
    error = np.abs(times - np.round(times))
    return bool(np.all(error <= 1e-6 * np.maximum(1.0, np.abs(times))))


class PrecisionSummary:
    """Whether every value is a whole number, and the decimals needed to write every value as recorded.

    :func:`narrator.reading.sample.guess_decimals` takes the smallest d at which every value it looks at fits
    (|x 10^d - round(x 10^d)| <= 1e-6 max(1, |x 10^d|)), capped. Fitting at d does not imply fitting
    at d + 1 (a tiny value fits at 0 and not at 2), so the summary keeps, for every d up to the cap,
    whether all values seen fit: that merges exactly (a logical and), and the answer is the first d
    where they all do. The in-memory engine looks at up to 2000 evenly spaced sorted values; this
    looks at all of them, which can only differ when a rare value carries more decimals than those.
    """

    __slots__ = ("whole", "fits", "cap", "seen")

    def __init__(self, cap: int = 6) -> None:
        self.whole = True
        self.cap = cap
        self.fits = np.ones(cap + 1, dtype=bool)
        self.seen = False  # any value below 1e15 in size (larger ones carry no decimals a float holds)

    @property
    def decimals(self) -> int:
        if not self.seen:
            return 0
        found = np.flatnonzero(self.fits)
        return int(found[0]) if found.size else self.cap

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> PrecisionSummary:
        if values.size == 0:
            return self
        if self.whole and not (_whole_numbers(values[:_PROBE]) and _whole_numbers(values)):
            self.whole = False
        low, high = float(values.min()), float(values.max())
        if not (low > -1e15 and high < 1e15):
            values = values[np.abs(values) < 1e15]
            if values.size == 0:
                return self
            low, high = float(values.min()), float(values.max())
        self.seen = True
        if low > 0 or high < 0:  # the smallest size, without a pass when no value is 0 or changes sign
            smallest = low if low > 0 else -high
        else:
            nonzero = np.abs(values[values != 0])
            smallest = float(nonzero.min()) if nonzero.size else math.inf
        for decimals in np.flatnonzero(self.fits):
            # The first values alone usually show a misfit (a fresh summary, as each row group's on a
            # cluster, tests every d); all of them are tested only when those fit.
            scale = 10 ** int(decimals)
            self.fits[decimals] = _fit(values[:_PROBE], scale) and _fit(values, scale)
            if self.fits[decimals] and smallest * 10.0 ** int(decimals) >= 1.0:
                # Every x 10^d is at least 1 in size, so the test is relative: fitting at d, the values fit
                # at every larger d too (the fits already recorded there stay as they are).
                break
        return self

    def merge(self, other: PrecisionSummary) -> PrecisionSummary:
        self.whole = self.whole and other.whole
        self.fits &= other.fits
        self.seen = self.seen or other.seen
        return self

    def __getstate__(self):
        return (self.whole, self.fits, self.cap, self.seen)

    def __setstate__(self, state) -> None:
        self.whole, self.fits, self.cap, self.seen = state


# ---------------------------------------------------------------------------
# Later passes: summaries that need figures from an earlier pass
# ---------------------------------------------------------------------------


_COMPARE_BOUNDARIES = 64  # up to this many boundaries a chunk is counted by comparisons, not searches


class PartitionCounts:
    """Exact counts of the values in every cell of the line cut by sorted, distinct ``boundaries``
    b_0 < ... < b_(m-1): the open gaps (-inf, b_0), (b_0, b_1), ..., (b_(m-1), inf) and the single
    points b_j. For the gaps marked in ``collect`` the values themselves are kept, as distinct values
    with counts (a tie costs one entry). Any order statistic that falls in a point or a kept gap is
    then known exactly.
    """

    __slots__ = ("boundaries", "collect", "gap_counts", "point_counts", "_kept", "_pending", "_pending_size")

    def __init__(self, boundaries: np.ndarray, collect: np.ndarray) -> None:
        self.boundaries = np.asarray(boundaries, dtype=np.float64)
        self.collect = np.asarray(collect, dtype=bool)
        size = self.boundaries.size
        self.gap_counts = np.zeros(size + 1, dtype=np.int64)
        self.point_counts = np.zeros(size, dtype=np.int64)
        self._kept = (np.zeros(0), np.zeros(0, dtype=np.int64))
        # Chunks' kept values wait here and are folded in once they outnumber what is kept, so the
        # cost stays O(k log k) for k kept values however many chunks there are.
        self._pending: list[tuple[np.ndarray, np.ndarray]] = []
        self._pending_size = 0

    def _add_kept(self, values: np.ndarray, counts: np.ndarray) -> None:
        if values.size == 0:
            return
        self._pending.append((values, counts))
        self._pending_size += values.size
        if self._pending_size > max(65_536, self._kept[0].size):
            self._fold()

    def _fold(self) -> None:
        if self._pending:
            values = np.concatenate([self._kept[0]] + [v for v, _ in self._pending])
            counts = np.concatenate([self._kept[1]] + [c for _, c in self._pending])
            unique, inverse = np.unique(values, return_inverse=True)
            self._kept = (unique, np.bincount(inverse, weights=counts.astype(np.float64),
                                              minlength=unique.size).astype(np.int64))
            self._pending, self._pending_size = [], 0

    @property
    def kept_values(self) -> np.ndarray:
        self._fold()
        return self._kept[0]

    @property
    def kept_counts(self) -> np.ndarray:
        self._fold()
        return self._kept[1]

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> PartitionCounts:
        if values.size == 0:
            return self
        size = self.boundaries.size
        if size <= _COMPARE_BOUNDARIES:
            return self._update_by_comparing(values)
        gap = np.searchsorted(self.boundaries, values, side="left")
        if size:
            at = self.boundaries[np.minimum(gap, size - 1)] == values
            at &= gap < size
            self.point_counts += np.bincount(gap[at], minlength=size)[:size]
        else:
            at = np.zeros(values.size, dtype=bool)
        in_gap = ~at
        self.gap_counts += np.bincount(gap[in_gap], minlength=size + 1)
        kept = values[in_gap & self.collect[gap]]
        if kept.size:
            self._add_kept(kept, np.ones(kept.size, dtype=np.int64))
        return self

    def _update_by_comparing(self, values: np.ndarray) -> PartitionCounts:
        """The same counts by one vectorised comparison per boundary and side (a few boundaries are
        several times faster this way than a binary search per value), and the kept values by a
        comparison per kept gap."""
        below = np.array([np.count_nonzero(values < b) for b in self.boundaries], dtype=np.int64)
        at_or_below = np.array([np.count_nonzero(values <= b) for b in self.boundaries], dtype=np.int64)
        self.point_counts += at_or_below - below
        self.gap_counts += self._gaps(below, at_or_below, values.size)
        for j in np.flatnonzero(self.collect):
            inside = np.ones(values.size, dtype=bool) if j == 0 else values > self.boundaries[j - 1]
            if j < self.boundaries.size:
                inside &= values < self.boundaries[j]
            kept = values[inside]
            if kept.size:
                self._add_kept(kept, np.ones(kept.size, dtype=np.int64))
        return self

    @staticmethod
    def _gaps(below: np.ndarray, at_or_below: np.ndarray, n: int) -> np.ndarray:
        """Counts in the open gaps from the counts below and at or below each boundary."""
        if below.size == 0:
            return np.array([n], dtype=np.int64)
        return np.concatenate((below[:1], below[1:] - at_or_below[:-1], [n - at_or_below[-1]]))

    def merge(self, other: PartitionCounts) -> PartitionCounts:
        self.gap_counts += other.gap_counts
        self.point_counts += other.point_counts
        other._fold()
        self._add_kept(*other._kept)
        return self

    def count_below(self, boundary: float) -> int:
        """Exact number of values strictly below one of the boundaries."""
        j = int(np.searchsorted(self.boundaries, boundary))
        return int(self.gap_counts[: j + 1].sum() + self.point_counts[:j].sum())

    def count_equal(self, boundary: float) -> int:
        return int(self.point_counts[int(np.searchsorted(self.boundaries, boundary))])

    def order_statistic(self, rank: int) -> float | None:
        """The value of 0-based rank ``rank`` in ascending order, or None when its cell was not kept."""
        total = 0
        for j in range(self.boundaries.size + 1):
            gap = int(self.gap_counts[j])
            if rank < total + gap:
                if not self.collect[j]:
                    return None
                low = -math.inf if j == 0 else self.boundaries[j - 1]
                high = math.inf if j == self.boundaries.size else self.boundaries[j]
                inside = (self.kept_values > low) & (self.kept_values < high)
                cumulative = np.cumsum(self.kept_counts[inside])
                return float(self.kept_values[inside][int(np.searchsorted(cumulative, rank - total, side="right"))])
            total += gap
            if j < self.boundaries.size:
                if rank < total + int(self.point_counts[j]):
                    return float(self.boundaries[j])
                total += int(self.point_counts[j])
        return None

    def covers(self, low: float, high: float) -> bool:
        """Whether every value in [low, high] is counted as itself: each gap the interval meets is kept
        or empty (boundary points are counted as themselves)."""
        first = int(np.searchsorted(self.boundaries, low, side="right"))
        last = int(np.searchsorted(self.boundaries, high, side="left"))
        return bool(np.all(self.collect[first : last + 1] | (self.gap_counts[first : last + 1] == 0)))

    def counts_at(self, value: float) -> tuple[int, int] | None:
        """(values below ``value``, values equal to it), exactly, or None when ``value`` lies in a gap
        that holds values and whose values were not kept."""
        size = self.boundaries.size
        j = int(np.searchsorted(self.boundaries, value, side="left"))
        if j < size and self.boundaries[j] == value:
            return int(self.gap_counts[: j + 1].sum() + self.point_counts[:j].sum()), int(self.point_counts[j])
        below = int(self.gap_counts[:j].sum() + self.point_counts[:j].sum())
        if not self.collect[j]:
            # an empty gap needs no kept values (two brackets of consecutive ranks have one between them)
            return (below, 0) if self.gap_counts[j] == 0 else None
        kept, counts = self.kept_values, self.kept_counts
        gap_low = -math.inf if j == 0 else self.boundaries[j - 1]
        start = int(np.searchsorted(kept, gap_low, side="right"))
        at = int(np.searchsorted(kept, value, side="left"))
        below += int(counts[start:at].sum())
        equal = int(counts[at]) if at < kept.size and kept[at] == value else 0
        return below, equal

    def kept_between(self, low: float, high: float) -> tuple[np.ndarray, np.ndarray]:
        """Kept distinct values in [low, high] with counts, the boundary points in it included."""
        inside = (self.kept_values >= low) & (self.kept_values <= high)
        points = (self.boundaries >= low) & (self.boundaries <= high) & (self.point_counts > 0)
        values = np.concatenate([self.kept_values[inside], self.boundaries[points]])
        counts = np.concatenate([self.kept_counts[inside], self.point_counts[points]])
        order = np.argsort(values, kind="stable")
        return values[order], counts[order]

    def __getstate__(self):
        self._fold()
        return (self.boundaries, self.collect, self.gap_counts, self.point_counts, self._kept)

    def __setstate__(self, state) -> None:
        self.boundaries, self.collect, self.gap_counts, self.point_counts, self._kept = state
        self._pending, self._pending_size = [], 0


class RangeMean:
    """Count and mean (of x / ``factor``, the engine's scaled units) of the values strictly between
    ``low`` and ``high`` (a trimmed mean's middle), merged like the mean of :class:`MomentSummary`."""

    __slots__ = ("low", "high", "factor", "n", "mean")

    def __init__(self, low: float, high: float, factor: float = 1.0) -> None:
        self.low, self.high, self.factor = float(low), float(high), factor
        self.n = 0
        self.mean = 0.0

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> RangeMean:
        inside = values[(values > self.low) & (values < self.high)]
        if inside.size:
            if self.factor != 1.0:
                inside = inside / self.factor
            mean = float(np.mean(inside))
            mean += float(np.mean(inside - mean))
            self._add(int(inside.size), mean)
        return self

    def _add(self, count: int, mean: float) -> None:
        if count == 0:
            return
        total = self.n + count
        self.mean = self.mean + (mean - self.mean) * (count / total) if self.n else mean
        self.n = total

    def merge(self, other: RangeMean) -> RangeMean:
        self._add(other.n, other.mean)
        return self

    def __getstate__(self):
        return (self.low, self.high, self.factor, self.n, self.mean)

    def __setstate__(self, state) -> None:
        self.low, self.high, self.factor, self.n, self.mean = state


class EdgeCounts:
    """Counts of values in [e_i, e_(i+1)) for given ascending edges, plus those below the first edge
    and at or above the last: the half-open bins of :func:`narrator.engine.bins.focus_from_sorted`."""

    __slots__ = ("edges", "counts")

    def __init__(self, edges: np.ndarray) -> None:
        self.edges = np.asarray(edges, dtype=np.float64)
        self.counts = np.zeros(self.edges.size + 1, dtype=np.int64)  # below, bins..., above

    def update(self, values: np.ndarray, rows: np.ndarray) -> EdgeCounts:
        if values.size:
            self.counts += self._counts(values)
        return self

    def _counts(self, values: np.ndarray) -> np.ndarray:
        """How many values have each ``np.searchsorted(edges, values, side="right")`` (how many edges are
        at or below them), without a binary search per value (several times slower on a million values).

        The edges are evenly spaced up to rounding (and the print-clean rounding of
        :func:`narrator.engine.bins.focus_edges`, at most 1e-6 of a width), so each value's index is
        found by arithmetic; a value within ``_slack`` of an edge, in units of the step (far more than
        any of those roundings), is placed by the binary search instead, so every index is the search's.
        """
        edges = self.edges
        last = edges.size
        if last < 2:
            return np.bincount(np.searchsorted(edges, values, side="right"), minlength=last + 1)
        step = (edges[-1] - edges[0]) / (last - 1)
        slack = self._slack(step)
        if not (step > 0 and math.isfinite(step) and slack < 0.25):
            return np.bincount(np.searchsorted(edges, values, side="right"), minlength=last + 1)
        with np.errstate(invalid="ignore", over="ignore"):
            position = values - edges[0]
            position /= step
        # Far outside the grid the arithmetic may overflow or lose the fraction; there the index is 0 or
        # ``last`` and half a step away from any edge.
        np.clip(position, -1.5, last - 0.5, out=position)
        whole = np.floor(position)
        position -= whole  # the fraction of a step past the edge below
        near = position < slack
        near |= position > 1.0 - slack
        whole += 1.0
        np.clip(whole, 0, last, out=whole)
        index = whole.astype(np.intp)
        counts = np.bincount(index, minlength=last + 1)
        if near.any():
            counts -= np.bincount(index[near], minlength=last + 1)
            counts += np.bincount(np.searchsorted(edges, values[near], side="right"), minlength=last + 1)
        return counts

    def _slack(self, step: float) -> float:
        """A bound, in steps, on how far a value's computed position (value - first edge) / step may sit
        from its true place among the edges: twice the edges' measured distance from the line
        first edge + i step (the print-clean rounding of the edges, and their arithmetic), and 64 units
        of rounding of the largest magnitude involved (edges and index) for the position itself, with
        a floor of 1e-6 of a step."""
        edges = self.edges
        line = edges[0] + np.arange(edges.size) * step
        off_line = float(np.max(np.abs(edges - line))) / step
        magnitude = (abs(float(edges[0])) + abs(float(edges[-1]))) / step + edges.size
        return 1e-6 + 2.0 * off_line + 64.0 * np.finfo(float).eps * magnitude

    def merge(self, other: EdgeCounts) -> EdgeCounts:
        self.counts += other.counts
        return self

    def __getstate__(self):
        return (self.edges, self.counts)

    def __setstate__(self, state) -> None:
        self.edges, self.counts = state


class BinCounts:
    """Counts per bin index floor((x / factor - shift) / width - first + tolerance), clipped to
    0..bins-1: the bin rule of :mod:`narrator.engine.bins`, value by value, so the counts equal the
    in-memory ones exactly (``factor`` is the power of two the engine divides huge values by)."""

    __slots__ = ("width", "shift", "first", "tolerance", "bins", "clip", "counts", "factor")

    def __init__(self, width: float, shift: float, first: float, tolerance: float, bins: int, clip: bool,
                 factor: float = 1.0):
        self.width, self.shift, self.first, self.tolerance = width, shift, first, tolerance
        self.bins, self.clip, self.factor = int(bins), bool(clip), factor
        self.counts = np.zeros(self.bins, dtype=np.int64)

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> BinCounts:
        if values.size == 0:
            return self
        if self.factor != 1.0:
            values = values / self.factor
        position = (values - self.shift) / self.width
        index = np.floor(position - self.first + self.tolerance).astype(np.int64)
        np.clip(index, 0, self.bins - 1, out=index)
        self.counts += np.bincount(index, minlength=self.bins)[: self.bins]
        return self

    def merge(self, other: BinCounts) -> BinCounts:
        self.counts += other.counts
        return self

    def __getstate__(self):
        return tuple(getattr(self, name) for name in self.__slots__)

    def __setstate__(self, state) -> None:
        for name, value in zip(self.__slots__, state, strict=True):
            setattr(self, name, value)


class LinearBinCounts:
    """Linear binning (Fan & Marron 1994; Wand 1994) on the lattice anchor + j step, j = 0..nodes-1, of the
    values in standard units (x - centre) / unit, with ``lead`` empty points before and after: each value
    splits its unit weight between the two nearest lattice points. The same arithmetic as the in-memory
    density's binning (:func:`narrator.engine.density.fine_lattice`); only the order in which the
    weights are added differs, so the counts agree to rounding."""

    __slots__ = ("centre", "unit", "anchor", "step", "nodes", "lead", "counts")

    def __init__(self, centre: float, unit: float, anchor: float, step: float, nodes: int, lead: int = 0) -> None:
        self.centre, self.unit, self.anchor, self.step = centre, unit, anchor, step
        self.nodes, self.lead = int(nodes), int(lead)
        self.counts = np.zeros(self.nodes + 2 * self.lead)

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> LinearBinCounts:
        if values.size == 0:
            return self
        position = (values - self.centre) / self.unit
        position -= self.anchor
        position /= self.step
        index = np.floor(position).astype(np.intp)
        np.clip(index, 0, self.nodes - 2, out=index)
        position -= index
        index += self.lead
        size = self.counts.size
        self.counts += np.bincount(index, weights=1.0 - position, minlength=size)
        index += 1
        self.counts += np.bincount(index, weights=position, minlength=size)
        return self

    def merge(self, other: LinearBinCounts) -> LinearBinCounts:
        self.counts += other.counts
        return self

    def __getstate__(self):
        return (self.centre, self.unit, self.anchor, self.step, self.nodes, self.lead, self.counts)

    def __setstate__(self, state) -> None:
        self.centre, self.unit, self.anchor, self.step, self.nodes, self.lead, self.counts = state


class FlaggedValues:
    """Values an outlier rule flags: counts, ranges and the farthest out with their rows, per side.

    The rule's test runs on x / ``factor`` (the in-memory engine's scaled units), as the engine runs
    it: ``("fences", lower, upper)`` flags x / factor < lower or > upper; ``("score", centre, scale,
    threshold)`` flags (x / factor - centre) / scale < -threshold or > threshold. Each side keeps its
    ``k`` values farthest out (as the in-memory engine lists them: the lowest low values with ties
    in row order, the highest high values with ties going to the later rows), so memory is bounded
    however many values are flagged; the moments of the values kept inside are merged as well.
    """

    __slots__ = ("test", "factor", "k", "low_values", "low_rows", "high_values", "high_rows", "count_low",
                 "count_high", "low_max", "high_min", "inside")

    def __init__(self, test: tuple, factor: float, k: int = LISTED_PER_SIDE) -> None:
        self.test = tuple(test)
        self.factor = factor
        self.k = int(k)
        self.low_values = np.zeros(0)
        self.low_rows = np.zeros(0, dtype=np.int64)
        self.high_values = np.zeros(0)
        self.high_rows = np.zeros(0, dtype=np.int64)
        self.count_low = 0
        self.count_high = 0
        self.low_max = -math.inf  # the highest low-side value
        self.high_min = math.inf  # the lowest high-side value
        self.inside = ScaledMoments(factor)

    def sides(self, values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(low, high) masks of the flagged values."""
        units = values if self.factor == 1.0 else values / self.factor
        if self.test[0] == "fences":
            return units < self.test[1], units > self.test[2]
        _, centre, scale, threshold = self.test
        score = (units - centre) / scale
        return score < -threshold, score > threshold

    def _keep(self, low_values, low_rows, high_values, high_rows) -> None:
        order = np.lexsort((low_rows, low_values))[: self.k]
        self.low_values, self.low_rows = low_values[order], low_rows[order]
        order = np.lexsort((-high_rows, -high_values))[: self.k][::-1]
        self.high_values, self.high_rows = high_values[order], high_rows[order]

    def update(self, values: np.ndarray, rows: np.ndarray) -> FlaggedValues:
        low, high = self.sides(values)
        outside = low | high
        if not outside.any():
            self.inside.update(values)
            return self
        self.inside.update(values[~outside])
        return self.add_flagged(values, rows, low, high)

    def add_flagged(self, values: np.ndarray, rows: np.ndarray, low: np.ndarray, high: np.ndarray) -> FlaggedValues:
        """Count and keep the values marked ``low`` and ``high`` as flagged on that side (no moments)."""
        low_values, high_values = values[low], values[high]
        if low_values.size:
            self.count_low += int(low_values.size)
            self.low_max = max(self.low_max, float(low_values.max()))
        if high_values.size:
            self.count_high += int(high_values.size)
            self.high_min = min(self.high_min, float(high_values.min()))
        low_rows, high_rows = rows[low], rows[high]
        # Only a chunk's own k farthest out on each side (ties included) can be among the k kept: select
        # them in O(chunk) before the sort.
        if low_values.size > self.k:
            enter = low_values <= np.partition(low_values, self.k - 1)[self.k - 1]
            low_values, low_rows = low_values[enter], low_rows[enter]
        if high_values.size > self.k:
            enter = high_values >= -np.partition(-high_values, self.k - 1)[self.k - 1]
            high_values, high_rows = high_values[enter], high_rows[enter]
        self._keep(np.concatenate([self.low_values, low_values]), np.concatenate([self.low_rows, low_rows]),
                   np.concatenate([self.high_values, high_values]), np.concatenate([self.high_rows, high_rows]))
        return self

    def merge(self, other: FlaggedValues) -> FlaggedValues:
        self.count_low += other.count_low
        self.count_high += other.count_high
        self.low_max = max(self.low_max, other.low_max)
        self.high_min = min(self.high_min, other.high_min)
        self._keep(np.concatenate([self.low_values, other.low_values]),
                   np.concatenate([self.low_rows, other.low_rows]),
                   np.concatenate([self.high_values, other.high_values]),
                   np.concatenate([self.high_rows, other.high_rows]))
        self.inside.merge(other.inside)
        return self

    def __getstate__(self):
        return (self.test, self.factor, self.k, self.low_values, self.low_rows, self.high_values, self.high_rows,
                self.count_low, self.count_high, self.low_max, self.high_min, self.inside.__getstate__())

    def __setstate__(self, state) -> None:
        (self.test, self.factor, self.k, self.low_values, self.low_rows, self.high_values, self.high_rows,
         self.count_low, self.count_high, self.low_max, self.high_min) = state[:11]
        self.inside = ScaledMoments()
        self.inside.__setstate__(state[11])


class FarthestValue:
    """The largest |x - centre| and the first row where it occurs."""

    __slots__ = ("centre", "distance", "value", "row")

    def __init__(self, centre: float) -> None:
        self.centre = centre
        self.distance = -math.inf
        self.value = math.nan
        self.row = -1

    def update(self, values: np.ndarray, rows: np.ndarray) -> FarthestValue:
        if values.size == 0:
            return self
        distances = np.abs(values - self.centre)
        at = int(np.argmax(distances))
        self._take(float(distances[at]), float(values[at]), int(rows[at]))
        return self

    def _take(self, distance: float, value: float, row: int) -> None:
        if distance > self.distance or (distance == self.distance and row < self.row):
            self.distance, self.value, self.row = distance, value, row

    def merge(self, other: FarthestValue) -> FarthestValue:
        if other.row >= 0:
            self._take(other.distance, other.value, other.row)
        return self

    def __getstate__(self):
        return (self.centre, self.distance, self.value, self.row)

    def __setstate__(self, state) -> None:
        self.centre, self.distance, self.value, self.row = state


__all__ = [
    "BinBrackets",
    "BinCounts",
    "CodeCounts",
    "DistanceCounts",
    "DistinctValues",
    "ExcludingMoments",
    "ExtremeSummary",
    "CentreBand",
    "FarthestValue",
    "EdgeCounts",
    "FlaggedBand",
    "FlaggedValues",
    "LinearBinCounts",
    "MeanDistance",
    "MomentSummary",
    "PartitionCounts",
    "PrecisionSummary",
    "RangeMean",
    "RankBins",
    "ReservoirSample",
    "RoundCounts",
    "ScaledMoments",
    "TailCandidates",
    "merge_moments",
    "row_hash",
]


class MeanDistance:
    """Count and mean of |x / factor - centre| (the mean absolute deviation from the median that the
    modified z rule falls back on when the MAD is 0), merged like the mean of :class:`MomentSummary`."""

    __slots__ = ("centre", "factor", "n", "mean")

    def __init__(self, centre: float, factor: float = 1.0) -> None:
        self.centre, self.factor = centre, factor
        self.n = 0
        self.mean = 0.0

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> MeanDistance:
        if values.size:
            distances = np.abs((values if self.factor == 1.0 else values / self.factor) - self.centre)
            self._add(int(distances.size), float(np.mean(distances)))
        return self

    def _add(self, count: int, mean: float) -> None:
        if count:
            total = self.n + count
            self.mean = self.mean + (mean - self.mean) * (count / total) if self.n else mean
            self.n = total

    def merge(self, other: MeanDistance) -> MeanDistance:
        self._add(other.n, other.mean)
        return self

    def __getstate__(self):
        return (self.centre, self.factor, self.n, self.mean)

    def __setstate__(self, state) -> None:
        self.centre, self.factor, self.n, self.mean = state


class DistanceCounts:
    """Distances d = |x / factor - centre| (as the in-memory MAD forms them: centre - x below the centre,
    x - centre at or above it): how many are below ``inner``, the distances in [inner, outer] themselves
    (distinct values with counts), and how many are above ``outer``."""

    __slots__ = ("centre", "factor", "inner", "outer", "below", "above", "_kept")

    def __init__(self, centre: float, factor: float, inner: float, outer: float) -> None:
        self.centre, self.factor, self.inner, self.outer = centre, factor, inner, outer
        self.below = 0
        self.above = 0
        self._kept = PartitionCounts(np.zeros(0), np.ones(1, dtype=bool))

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> DistanceCounts:
        if values.size == 0:
            return self
        units = values if self.factor == 1.0 else values / self.factor
        distances = np.where(units < self.centre, self.centre - units, units - self.centre)
        low = distances < self.inner
        high = distances > self.outer
        self.below += int(np.count_nonzero(low))
        self.above += int(np.count_nonzero(high))
        self._kept.update(distances[~(low | high)])
        return self

    def merge(self, other: DistanceCounts) -> DistanceCounts:
        self.below += other.below
        self.above += other.above
        self._kept.merge(other._kept)
        return self

    def smallest(self, rank: int) -> float | None:
        """The distance of 0-based rank ``rank`` in ascending order, or None when it was not kept."""
        if rank < self.below:
            return None
        found = self._kept.order_statistic(rank - self.below)
        return found

    def __getstate__(self):
        return (self.centre, self.factor, self.inner, self.outer, self.below, self.above, self._kept.__getstate__())

    def __setstate__(self, state) -> None:
        self.centre, self.factor, self.inner, self.outer, self.below, self.above = state[:6]
        self._kept = PartitionCounts(np.zeros(0), np.ones(1, dtype=bool))
        self._kept.__setstate__(state[6])


class ExcludingMoments(MomentSummary):
    """Moments of the values other than one value (the rest of a column beside a suspected code)."""

    __slots__ = ("excluded",)

    def __init__(self, excluded: float) -> None:
        super().__init__()
        self.excluded = float(excluded)

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> ExcludingMoments:
        MomentSummary.merge(self, MomentSummary.of(values[values != self.excluded]))
        return self

    def merge(self, other: MomentSummary) -> ExcludingMoments:
        MomentSummary.merge(self, other)
        return self

    def population_sd(self) -> float:
        """sqrt(M2 / n), as numpy.std with its default ddof = 0; 0 for no values."""
        return math.sqrt(self.m2 / self.n) * self.scale if self.n else 0.0

    def __getstate__(self):
        return (*MomentSummary.__getstate__(self), self.excluded)

    def __setstate__(self, state) -> None:
        MomentSummary.__setstate__(self, state[:6])
        self.excluded = state[6]


class FlaggedBand:
    """What :class:`FlaggedValues` needs for any limits (lower, upper) with lower in [lower_min, lower_max]
    and upper in [upper_min, upper_max] (x / factor units), gathered before the limits are known: the
    values below lower_min and above upper_max as flagged, the moments of the values strictly between
    lower_max and upper_min, and the values in the two bands themselves with their rows.
    :meth:`settle` gives the FlaggedValues of the exact limits, or None when they fall outside the bands.
    """

    def __init__(self, lower_min: float, lower_max: float, upper_min: float, upper_max: float,
                 factor: float, k: int = LISTED_PER_SIDE) -> None:
        self.bands = (float(lower_min), float(lower_max), float(upper_min), float(upper_max))
        self.factor = factor
        self.definite = FlaggedValues(("fences", lower_min, upper_max), factor, k)
        self.band_values: list[np.ndarray] = []
        self.band_rows: list[np.ndarray] = []

    def update(self, values: np.ndarray, rows: np.ndarray) -> FlaggedBand:
        if values.size == 0:
            return self
        lower_min, lower_max, upper_min, upper_max = self.bands
        units = values if self.factor == 1.0 else values / self.factor
        low, high = units < lower_min, units > upper_max
        inside = (units > lower_max) & (units < upper_min)
        band = ~(low | high | inside)
        self.definite.inside.update(values[inside] if not inside.all() else values)
        if low.any() or high.any():
            self.definite.add_flagged(values, rows, low, high)
        if band.any():
            self.band_values.append(values[band])
            self.band_rows.append(rows[band])
        return self

    def merge(self, other: FlaggedBand) -> FlaggedBand:
        self.definite.merge(other.definite)
        self.band_values.extend(other.band_values)
        self.band_rows.extend(other.band_rows)
        return self

    def settle(self, lower: float, upper: float) -> FlaggedValues | None:
        lower_min, lower_max, upper_min, upper_max = self.bands
        if not (lower_min <= lower <= lower_max and upper_min <= upper <= upper_max):
            return None
        exact = FlaggedValues(("fences", lower, upper), self.factor, self.definite.k)
        if self.band_values:
            exact.update(np.concatenate(self.band_values), np.concatenate(self.band_rows))
        return exact.merge(self.definite)


class CentreBand:
    """For the distances |x - m| from any centre m within ``reach`` of ``centre`` (data units): how many
    values lie nearer ``centre`` than ``inner``, how many farther than ``outer``, and the values in between
    themselves (distinct, with counts). :meth:`settle` turns them into the :class:`DistanceCounts` of the
    exact centre, or None when it lies farther than ``reach``."""

    def __init__(self, centre: float, reach: float, inner: float, outer: float, factor: float) -> None:
        self.centre, self.reach, self.inner, self.outer, self.factor = centre, reach, inner, outer, factor
        self.below = 0
        self.above = 0
        self.kept = PartitionCounts(np.zeros(0), np.ones(1, dtype=bool))

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> CentreBand:
        if values.size == 0:
            return self
        distances = np.abs(values - self.centre)
        near = distances < self.inner
        far = distances > self.outer
        self.below += int(np.count_nonzero(near))
        self.above += int(np.count_nonzero(far))
        self.kept.update(values[~(near | far)])
        return self

    def merge(self, other: CentreBand) -> CentreBand:
        self.below += other.below
        self.above += other.above
        self.kept.merge(other.kept)
        return self

    def settle(self, centre_units: float) -> DistanceCounts | None:
        """The DistanceCounts of centre ``centre_units`` (x / factor units), its band [inner, outer]
        shrunk by the reach and a rounding allowance so the values counted below and above lie there."""
        factor = self.factor
        allowance = 1e-12 * (abs(self.centre) + self.outer + self.reach)
        if abs(centre_units * factor - self.centre) > self.reach - allowance:
            return None
        inner = (self.inner + self.reach + allowance) / factor
        outer = (self.outer - self.reach - allowance) / factor
        if not inner <= outer:
            return None
        counts = DistanceCounts(centre_units, factor, inner, outer)
        values, copies = self.kept.kept_values, self.kept.kept_counts
        units = values if factor == 1.0 else values / factor
        distances = np.where(units < centre_units, centre_units - units, units - centre_units)
        low, high = distances < inner, distances > outer
        counts.below = self.below + int(copies[low].sum())
        counts.above = self.above + int(copies[high].sum())
        middle = ~(low | high)
        counts._kept._add_kept(distances[middle], copies[middle])
        counts._kept.gap_counts[0] = int(copies[middle].sum())
        return counts
