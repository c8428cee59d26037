"""The BCa bootstrap interval for the mean: narrator's against scipy.stats.bootstrap(method="BCa"), in turn.

    .venv/bin/python tests/benchmarks/bench_bootstrap.py [--runs 5] [--sizes 1e3,1e4]

The data are invented grant awards (lognormal, with three very large awards), the kind whose Student's t
interval reaches below the smallest value, so narrator falls back on the bootstrap. Both compute the
interval with the default seed and 9,999 resamples and the same batches of resamples; scipy's is the
reference the tests hold narrator's to (and what narrator called before), so the two intervals are
printed side by side and must agree to 1e-12. Each is timed in CPU time, alternately, and the medians
and their ratio printed (no target: the reference is the yardstick). narrator's own steps are the same
draws, with the jackknife for the acceleration in O(n) (scipy's is O(n^2)) and no import of scipy.stats
(timed apart, in a fresh interpreter, since it is paid once per process).
"""

from __future__ import annotations

import argparse
import inspect
import os
import subprocess
import sys
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402
from _common import SEED, median  # noqa: E402

from narrator.engine.intervals import _BOOTSTRAP_BATCH_CELLS, DEFAULT_RESAMPLES, DEFAULT_SEED, mean_interval  # noqa: E402


def awards(n: int) -> np.ndarray:
    """Invented grant awards in dollars: lognormal, rounded to cents, with three very large ones."""
    values = np.round(np.random.default_rng(SEED).lognormal(4, 0.8, n), 2)
    values[:3] = [250000.0, 90000.0, 41000.0]
    return values


def scipy_interval(values: np.ndarray) -> tuple[float, float]:
    from scipy import stats

    keyword = "rng" if "rng" in inspect.signature(stats.bootstrap).parameters else "random_state"
    batch = max(1, min(DEFAULT_RESAMPLES, _BOOTSTRAP_BATCH_CELLS // values.size))
    result = stats.bootstrap((values,), np.mean, n_resamples=DEFAULT_RESAMPLES, batch=batch, vectorized=True,
                             method="BCa", **{keyword: np.random.default_rng(DEFAULT_SEED)})
    return float(result.confidence_interval.low), float(result.confidence_interval.high)


def narrator_interval(values: np.ndarray) -> tuple[float, float]:
    interval = mean_interval(values, method="bca-bootstrap")
    return interval.low, interval.high


def import_cost(runs: int) -> float:
    """Median CPU seconds of importing scipy.stats after numpy and scipy.special, in a fresh interpreter."""
    code = ("import time, numpy, scipy.special; t = time.process_time(); import scipy.stats; "
            "print(time.process_time() - t)")
    return median([float(subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                                        check=True).stdout) for _ in range(runs)])


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=5)
    parser.add_argument("--sizes", default="1e3,1e4")
    args = parser.parse_args()
    agree = True
    for n in (int(float(size)) for size in args.sizes.split(",")):
        values = awards(n)
        theirs, ours = [], []
        for _ in range(args.runs):
            start = time.process_time()
            reference = scipy_interval(values)
            theirs.append(time.process_time() - start)
            start = time.process_time()
            found = narrator_interval(values)
            ours.append(time.process_time() - start)
        same = all(abs(a - b) <= 1e-12 * abs(b) for a, b in zip(found, reference, strict=True))
        agree &= same
        print(f"n = {n}: narrator {median(ours) * 1e3:.0f} ms, scipy.stats.bootstrap {median(theirs) * 1e3:.0f} ms "
              f"(CPU, medians of {args.runs}): ratio {median(ours) / median(theirs):.2f}; "
              f"intervals {found[0]:.6g} to {found[1]:.6g} and {reference[0]:.6g} to {reference[1]:.6g}: "
              f"{'agree' if same else 'DIFFER'}")
    print(f"importing scipy.stats (no longer needed for the bootstrap): {import_cost(args.runs) * 1e3:.0f} ms CPU")
    return 0 if agree else 1


if __name__ == "__main__":
    sys.exit(main())
