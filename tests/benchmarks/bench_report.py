"""End to end: a memo report to .docx by ``narrator draft`` against the same job done by hand.

    .venv/bin/python tests/benchmarks/bench_report.py [--runs 3] [--sizes 1e5,1e6]

Both run as whole processes from the same CSV file (invented lognormal data
with a few extremes, fixed seed, two decimals), so start-up imports and
parsing count. They run in turn (narrator, by hand, narrator, by hand, ...);
each narrator run writes a fresh report (no earlier sidecar to compare with).
Printed: median wall times, the speed-up with its target at n = 1e6, and each
side's peak memory (the child's own ru_maxrss) against four times the data's
size plus 300 MB. The hand-made way is tests/benchmarks/baseline_by_hand.py.
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from _common import lognormal_with_extremes, median, memory_limit_mb, run_child, verdict, write_csv  # noqa: E402

SPEED_UP_TARGET = 5.0  # at least 5 times faster than by hand at n = 1e6 (the aim is 10)
SPEED_UP_AIM = 10.0
TARGET_N = 1_000_000


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--sizes", default="1e5,1e6")
    args = parser.parse_args()
    here = os.path.dirname(os.path.abspath(__file__))
    baseline = os.path.join(here, "baseline_by_hand.py")
    print(f"end-to-end benchmark: {os.cpu_count()} cores, {args.runs} runs each, medians")
    all_met = True
    with tempfile.TemporaryDirectory(prefix="narrator-bench-") as folder:
        for n in (int(float(size)) for size in args.sizes.split(",")):
            data = os.path.join(folder, f"invented_{n}.csv")
            values = lognormal_with_extremes(n)
            write_csv(data, values)
            report = os.path.join(folder, "narrator.docx")
            by_hand = os.path.join(folder, "by_hand.docx")
            narrator_command = [sys.executable, "-m", "narrator.cli", "draft", data, "--column", "x",
                                "--audience", "memo", "-o", report, "--quiet"]
            baseline_command = [sys.executable, baseline, data, "x", by_hand]
            ours, theirs = [], []
            for _ in range(args.runs):
                for path in (report, os.path.splitext(report)[0] + ".findings.json"):
                    if os.path.exists(path):
                        os.remove(path)
                ours.append(run_child(narrator_command))
                theirs.append(run_child(baseline_command))
            our_time = median([t for t, _ in ours])
            their_time = median([t for t, _ in theirs])
            speed_up = their_time / our_time
            line = (f"n = {n:>9,}  narrator draft {our_time:6.2f} s  by hand {their_time:6.2f} s"
                    f"  speed-up {speed_up:5.1f}x")
            if n == TARGET_N:
                met = speed_up >= SPEED_UP_TARGET
                all_met &= met
                line += f"  target >= {SPEED_UP_TARGET:.0f}x (aim {SPEED_UP_AIM:.0f}x): {verdict(met)}"
            print(line)
            limit = memory_limit_mb(values.nbytes)
            our_peak = max(m for _, m in ours)
            their_peak = max(m for _, m in theirs)
            met = our_peak <= limit
            all_met &= met
            print(f"{'':15}peak memory: narrator {our_peak:5.0f} MB, by hand {their_peak:5.0f} MB"
                  f" (file {os.path.getsize(data) / 2**20:.1f} MB, values {values.nbytes / 2**20:.0f} MB)"
                  f"  narrator target <= {limit:.0f} MB: {verdict(met)}")
    return 0 if all_met else 1


if __name__ == "__main__":
    sys.exit(main())
