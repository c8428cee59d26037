"""Benchmark: how the exact medcouple's time grows with n (run by hand; not collected by pytest).

    .venv/bin/python tests/benchmarks/bench_medcouple.py [--sizes 5e4 2e5 8e5 3.2e6] [--repeats 3]

For each size, on lognormal data with a few extremes (fixed seed, sorted once beforehand), prints
the median time of narrator.engine.robust.medcouple and of numpy.sort of the same values, and the
growth from one size to the next beside the growth an O(n log n) method would show,
(4n log 4n) / (n log n). statsmodels' matrix version (O(n^2) memory) is timed at the smallest size
as a cross-check of the value.
"""

from __future__ import annotations

import argparse
import math
import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _common import EXTREMES, SEED  # noqa: E402

from narrator.engine.robust import medcouple  # noqa: E402


def _values(n: int) -> np.ndarray:
    rng = np.random.default_rng(SEED)
    values = rng.lognormal(3.0, 1.0, n)
    values[: len(EXTREMES)] = EXTREMES
    return np.sort(values)


def _median_time(function, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        function()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=float, nargs="+", default=[5e4, 2e5, 8e5, 3.2e6])
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args()
    previous = None
    for size in args.sizes:
        n = int(size)
        values = _values(n)
        unsorted = np.random.default_rng(SEED + 1).permutation(values)
        took = _median_time(lambda v=values: medcouple(v), args.repeats)
        sorting = _median_time(lambda u=unsorted: np.sort(u), args.repeats)
        line = f"n={n:>11,}: medcouple {took * 1e3:9.1f} ms, numpy.sort {sorting * 1e3:7.1f} ms"
        if previous is not None:
            old_n, old_took = previous
            grown = took / old_took
            n_log_n = (n * math.log(n)) / (old_n * math.log(old_n))
            line += f"; grew x{grown:.2f} vs x{n_log_n:.2f} for n log n, x{(n / old_n) ** 2:.0f} for n^2"
        print(line, flush=True)
        previous = (n, took)
    small = _values(int(args.sizes[0]))[:: max(1, int(args.sizes[0]) // 2000)]
    from statsmodels.stats.stattools import medcouple as statsmodels_medcouple

    reference = float(statsmodels_medcouple(small))
    print(f"check at n={small.size}: narrator {medcouple(small)!r}, statsmodels {reference!r}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
