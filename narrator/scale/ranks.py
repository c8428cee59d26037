"""Exact order statistics in a second pass, inside brackets taken from the first pass's rank bins.

For each wanted range of ranks [a, b] (0-based, ascending order) the first pass's exact bin counts
(:class:`~.summaries.RankBins`) tell which bins hold ranks a to b and how many values lie below
them; the next pass keeps the (few) values of those bins (:class:`~.summaries.BinBrackets`), and
the wanted order statistic is read off exactly. Every bracket is checked against the exact counts
all the same, and one that missed (it cannot, short of a fault) is widened by ``WIDEN_FACTOR`` times
more ranks and read again in another pass; the result is exact either way.

=========================  =====================================================
Name                       What it does
=========================  =====================================================
:func:`plan_brackets`      rank ranges + rank bins -> BinBrackets to fill
:class:`OrderStatistics`   exact values by rank from filled BinBrackets
:func:`type7_ranks`        the two ranks each type 7 quantile interpolates
:func:`type7_quantiles`    type 7 quantiles from an order-statistic lookup
                           (:func:`narrator.engine.rules.quantiles_at`)
=========================  =====================================================
"""

from __future__ import annotations

from collections.abc import Callable, Iterable

import numpy as np

from narrator.engine.rules import median_at, quantiles_at
from narrator.scale.summaries import BinBrackets, PartitionCounts, RankBins

# The type 7 quantiles and the median from an order-statistic lookup are the engine's own.
type7_quantiles = quantiles_at
median_of = median_at

WIDEN_FACTOR = 8.0
FIRST_WIDENING = 64  # ranks added on each side of a bracket that missed, the first time


def plan_brackets(bins: RankBins, ranges: Iterable[tuple[int, int]], widen: int = 0) -> BinBrackets:
    """The runs of bins holding every rank range, each widened by ``widen`` ranks a side, to keep."""
    n = bins.n
    if n == 0:
        return BinBrackets(bins, [])
    runs = [(bins.bin_of_rank(max(a - widen, 0)), bins.bin_of_rank(min(b + widen, n - 1))) for a, b in ranges]
    return BinBrackets(bins, runs)


class OrderStatistics:
    """Exact order statistics by 0-based rank, from one or more filled :class:`~.summaries.BinBrackets`
    (or :class:`~.summaries.PartitionCounts`: anything with ``order_statistic``)."""

    def __init__(self, n: int) -> None:
        self.n = n
        self.partitions: list[BinBrackets | PartitionCounts] = []
        self.known: dict[int, float] = {}

    def add(self, partition: BinBrackets | PartitionCounts) -> None:
        self.partitions.append(partition)

    def value(self, rank: int) -> float | None:
        if rank in self.known:
            return self.known[rank]
        for partition in self.partitions:
            found = partition.order_statistic(rank)
            if found is not None:
                self.known[rank] = found
                return found
        return None

    def missing(self, ranks: Iterable[int]) -> list[int]:
        return sorted({r for r in ranks if self.value(r) is None})

    def __call__(self, rank: int) -> float:
        found = self.value(rank)
        if found is None:
            raise LookupError(f"order statistic {rank} was not bracketed")
        return found


def resolve(run_pass: Callable[[BinBrackets], BinBrackets], statistics: OrderStatistics,
            bins: RankBins, ranks: Iterable[int]) -> int:
    """Extra passes until every rank in ``ranks`` is known; returns how many passes it took."""
    passes = 0
    wanted = list(ranks)
    widen = FIRST_WIDENING
    while True:
        missing = statistics.missing(wanted)
        if not missing:
            return passes
        statistics.add(run_pass(plan_brackets(bins, [(r, r) for r in missing], widen)))
        widen = int(widen * WIDEN_FACTOR)
        passes += 1


def type7_ranks(n: int, probabilities) -> list[int]:
    """The ranks floor(h) and min(floor(h) + 1, n - 1), h = (n - 1) p, of type 7 quantiles."""
    p = np.asarray(probabilities, dtype=float)
    low = np.floor((n - 1) * p).astype(np.int64)
    high = np.minimum(low + 1, n - 1)
    return sorted({int(r) for r in np.concatenate([low, high])})


def median_ranks(n: int) -> list[int]:
    return [n // 2] if n % 2 else [n // 2 - 1, n // 2]
