"""Engine speed: narrator.describe against numpy.sort of the same array, in the same process.

    .venv/bin/python tests/benchmarks/bench_engine.py [--runs 5] [--sizes 1e6,1e7]

For each size the two are timed in turn (sort, describe, sort, describe, ...) on
the same invented lognormal array, so a noisy neighbour slows both alike; the
ratio of the medians is printed with its target. Peak memory is measured in a
child process that makes the data and runs describe once (the child's own
ru_maxrss), against four times the data's size plus 300 MB.
"""

from __future__ import annotations

import argparse
import os
import sys
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402
from _common import lognormal_with_extremes, median, memory_limit_mb, run_child, verdict  # noqa: E402

import narrator  # noqa: E402

ENGINE_TARGET = 0.6  # describe at most 0.6 of the sort time, at n = 1e7
TARGET_N = 10_000_000

CHILD = (
    "import sys; sys.path.insert(0, {here!r}); from _common import lognormal_with_extremes; import narrator; "
    "narrator.describe(lognormal_with_extremes({n}))"
)


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
    parser.add_argument("--runs", type=int, default=5)
    parser.add_argument("--sizes", default="1e6,1e7")
    args = parser.parse_args()
    here = os.path.dirname(os.path.abspath(__file__))
    print(f"engine benchmark: {os.cpu_count()} cores, numpy {np.__version__}, {args.runs} runs each, medians")
    all_met = True
    for n in (int(float(size)) for size in args.sizes.split(",")):
        values = lognormal_with_extremes(n)
        sort_times, describe_times = time_pair(values, args.runs)
        ratio = median(describe_times) / median(sort_times)
        line = (f"n = {n:>10,}  np.sort {median(sort_times) * 1000:8.1f} ms"
                f"  describe {median(describe_times) * 1000:8.1f} ms  ratio {ratio:5.2f}")
        if n == TARGET_N:
            met = ratio <= ENGINE_TARGET
            all_met &= met
            line += f"  target <= {ENGINE_TARGET}: {verdict(met)}"
        print(line)
        _, peak = run_child([sys.executable, "-c", CHILD.format(here=here, n=n)])
        limit = memory_limit_mb(values.nbytes)
        met = peak <= limit
        all_met &= met
        print(f"{'':16}peak memory {peak:7.0f} MB (data {values.nbytes / 2**20:.0f} MB)"
              f"  target <= {limit:.0f} MB: {verdict(met)}")
    return 0 if all_met else 1


if __name__ == "__main__":
    sys.exit(main())
