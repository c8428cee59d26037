"""Engine speed: narrator.describe against numpy.sort of the same array, in the same process.

    .venv/bin/python tests/benchmarks/bench_engine.py [--runs 7] [--sizes 1e4,1e5,1e7]

For each size and each kind of invented data (normal; lognormal with a few extremes far out in the
tail) the two are timed in turn (sort, describe, sort, describe, ...) on the same array, so a noisy
neighbour slows both alike; the medians, their ratio and the targets are printed:

* n = 1e7: describe at most 2.5 x numpy.sort of the same array;
* n = 1e4: describe at most 10 ms; n = 1e5: at most 40 ms (the ratio to the sort is printed too).

Peak memory is measured in a child process that makes the lognormal data and runs describe once
(the child's own ru_maxrss), against four times the data's size plus 300 MB.
"""

from __future__ import annotations

import argparse
import os
import sys
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402
from _common import SEED, lognormal_with_extremes, median, memory_limit_mb, run_child, verdict  # noqa: E402

import narrator  # noqa: E402

SORT_RATIO_TARGET = 2.5  # at n = 1e7
SORT_RATIO_N = 10_000_000
MILLISECOND_TARGETS = {10_000: 10.0, 100_000: 40.0}

CHILD = (
    "import sys; sys.path.insert(0, {here!r}); from _common import lognormal_with_extremes; import narrator; "
    "narrator.describe(lognormal_with_extremes({n}))"
)


def normal(n: int) -> np.ndarray:
    """Invented data: n normal values (mean 50, SD 10), fixed seed."""
    return np.random.default_rng(SEED).normal(50.0, 10.0, n)


def time_pair(values: np.ndarray, runs: int) -> tuple[list[float], list[float]]:
    sort_times, describe_times = [], []
    narrator.describe(values[:1000])  # warm imports and caches outside the clock
    for _ in range(runs):
        start = time.perf_counter()
        np.sort(values)
        sort_times.append(time.perf_counter() - start)
        start = time.perf_counter()
        narrator.describe(values)
        describe_times.append(time.perf_counter() - start)
    return sort_times, describe_times


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=7)
    parser.add_argument("--sizes", default="1e4,1e5,1e7")
    parser.add_argument("--no-memory", action="store_true", help="skip the peak-memory child")
    args = parser.parse_args()
    here = os.path.dirname(os.path.abspath(__file__))
    print(f"engine benchmark: {os.cpu_count()} cores, numpy {np.__version__}, {args.runs} runs each, medians")
    all_met = True
    for n in (int(float(size)) for size in args.sizes.split(",")):
        for kind, make in (("normal", normal), ("lognormal", lognormal_with_extremes)):
            values = make(n)
            sort_times, describe_times = time_pair(values, args.runs)
            sort_ms, describe_ms = median(sort_times) * 1000, median(describe_times) * 1000
            ratio = describe_ms / sort_ms
            line = (f"n = {n:>10,} {kind:9s}  np.sort {sort_ms:8.1f} ms  describe {describe_ms:8.1f} ms"
                    f"  ratio {ratio:6.2f}")
            if n == SORT_RATIO_N:
                met = ratio <= SORT_RATIO_TARGET
                all_met &= met
                line += f"  target ratio <= {SORT_RATIO_TARGET}: {verdict(met)}"
            if n in MILLISECOND_TARGETS:
                met = describe_ms <= MILLISECOND_TARGETS[n]
                all_met &= met
                line += f"  target <= {MILLISECOND_TARGETS[n]:.0f} ms: {verdict(met)}"
            print(line)
        if not args.no_memory:
            _, peak = run_child([sys.executable, "-c", CHILD.format(here=here, n=n)])
            limit = memory_limit_mb(values.nbytes)
            met = peak <= limit
            all_met &= met
            print(f"{'':16}peak memory {peak:7.0f} MB (data {values.nbytes / 2**20:.0f} MB)"
                  f"  target <= {limit:.0f} MB: {verdict(met)}")
    return 0 if all_met else 1


if __name__ == "__main__":
    sys.exit(main())
