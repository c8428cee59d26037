"""End to end: ``narrator draft`` against a floor script and against the same job done by hand.

    .venv/bin/python tests/benchmarks/bench_report.py [--runs 5]

Every command runs as a whole process from the same CSV file (invented lognormal data with a few
extremes, fixed seed, two decimals), so start-up imports and parsing count; the two sides of each
comparison run in turn (A, B, A, B, ...) and each narrator run writes a fresh report. Printed: the
median wall times, their ratio and the target:

* ``draft --audience full`` at 1e3 and 1e5 values: at most 2 x tests/benchmarks/floor_report.py
  (Python, numpy, matplotlib's Agg canvas and python-docx: one histogram of the same size saved in
  a one-picture document);
* ``draft --audience memo`` at 1e3, 1e5 and 1e6 values: at least 2x, 3x and 10x faster than
  tests/benchmarks/baseline_by_hand.py; ``--audience full`` at 1e5: at least 3x faster;
* in one process, the bin-sensitivity figure (twelve histograms) at most 2 x one histogram of the
  same 1e5 values;
* each narrator run's peak memory (the child's own ru_maxrss) against four times the data's size
  plus 300 MB.

Before timing, narrator's bytecode is written to its ``__pycache__`` folders (as pip does when it
installs a package, and as the libraries on the other sides have theirs): with
``PYTHONDONTWRITEBYTECODE`` set, an editable install would otherwise compile narrator's modules in
every run (about 0.3 s of CPU a process here), which no installed copy does.
"""

from __future__ import annotations

import argparse
import compileall
import importlib.util
import os
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from _common import lognormal_with_extremes, median, memory_limit_mb, run_child, run_child_timed, verdict, write_csv  # noqa: E402

FLOOR_TARGET = 2.0
SPEED_UPS = {("memo", 1_000): 2.0, ("memo", 100_000): 3.0, ("memo", 1_000_000): 10.0, ("full", 100_000): 3.0}
FULL_SIZES = (1_000, 100_000)
FIGURE_TARGET = 2.0
FIGURE_N = 100_000

FIGURE_CHILD = """
import sys, time, statistics
sys.path.insert(0, {here!r})
from _common import lognormal_with_extremes
import narrator
from narrator.figures import charts
from narrator.phrasing.planner import narrate
from narrator.reading.sample import Sample
sample = Sample.from_values(lognormal_with_extremes({n}), name="x")
findings = narrator.describe(sample)
texts = {{t.key: t for t in narrate(findings, "full", "en_US").figures}}
one, twelve = [], []
charts.histogram(findings, sample, texts["histogram"], locale="en_US")
for _ in range({runs}):
    start = time.perf_counter(); charts.histogram(findings, sample, texts["histogram"], locale="en_US")
    one.append(time.perf_counter() - start)
    start = time.perf_counter()
    charts.bin_sensitivity_panel(findings, sample, texts["bin_sensitivity"], locale="en_US")
    twelve.append(time.perf_counter() - start)
print(statistics.median(one), statistics.median(twelve))
"""


def _compile_narrator() -> None:
    """narrator's bytecode, written once, as an installed copy has it (see the module's description)."""
    spec = importlib.util.find_spec("narrator")  # found, not imported
    if spec is not None and spec.origin:
        compileall.compile_dir(os.path.dirname(spec.origin), quiet=1)


def _fresh(report: str) -> None:
    for path in (report, os.path.splitext(report)[0] + ".findings.json"):
        if os.path.exists(path):
            os.remove(path)


def _in_turn(first: list[str], second: list[str], runs: int, report: str):
    """(first's results, second's results), each a list of (wall seconds, CPU seconds, peak MB), run A B A B ...

    The CPU seconds count narrator's drawing helper too; on a shared machine the wall time of two
    processes depends on the load more than one process's does, so both are printed.
    """
    ours, theirs = [], []
    run_child(first)  # warm the file cache and the byte-code of both sides
    run_child(second)
    for _ in range(runs):
        _fresh(report)
        ours.append(run_child_timed(first))
        theirs.append(run_child_timed(second))
    return ours, theirs


def _medians(results) -> tuple[float, float]:
    """(median wall seconds, median CPU seconds)."""
    return median([wall for wall, _, _ in results]), median([cpu for _, cpu, _ in results])


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=5)
    args = parser.parse_args()
    here = os.path.dirname(os.path.abspath(__file__))
    baseline = os.path.join(here, "baseline_by_hand.py")
    floor = os.path.join(here, "floor_report.py")
    _compile_narrator()
    print(f"end-to-end benchmark: {os.cpu_count()} cores, {args.runs} runs each, medians, "
          f"load average {os.getloadavg()[0]:.1f} at the start")
    all_met = True
    with tempfile.TemporaryDirectory(prefix="narrator-bench-") as folder:
        sizes = sorted({n for _, n in SPEED_UPS} | set(FULL_SIZES))
        data = {}
        for n in sizes:
            data[n] = os.path.join(folder, f"invented_{n}.csv")
            write_csv(data[n], lognormal_with_extremes(n))
        report = os.path.join(folder, "narrator.docx")

        def draft(n: int, audience: str) -> list[str]:
            return [sys.executable, "-m", "narrator.cli", "draft", data[n], "--column", "x", "--audience", audience,
                    "-o", report, "--quiet"]

        for n in FULL_SIZES:
            ours, theirs = _in_turn(draft(n, "full"), [sys.executable, floor, data[n],
                                                       os.path.join(folder, "floor.docx")], args.runs, report)
            (our_time, our_cpu), (their_time, their_cpu) = _medians(ours), _medians(theirs)
            ratio = our_time / their_time
            met = ratio <= FLOOR_TARGET
            all_met &= met
            print(f"n = {n:>9,}  draft full {our_time:6.2f} s  floor {their_time:6.2f} s  ratio {ratio:5.2f}  "
                  f"target <= {FLOOR_TARGET}: {verdict(met)}  (CPU {our_cpu:.2f} s / {their_cpu:.2f} s)")
        for (audience, n), target in sorted(SPEED_UPS.items(), key=lambda item: (item[0][1], item[0][0])):
            ours, theirs = _in_turn(draft(n, audience), [sys.executable, baseline, data[n], "x",
                                                         os.path.join(folder, "by_hand.docx")], args.runs, report)
            (our_time, our_cpu), (their_time, their_cpu) = _medians(ours), _medians(theirs)
            speed_up = their_time / our_time
            met = speed_up >= target
            all_met &= met
            print(f"n = {n:>9,}  draft {audience:4s} {our_time:6.2f} s  by hand {their_time:6.2f} s"
                  f"  speed-up {speed_up:5.1f}x  target >= {target:.0f}x: {verdict(met)}"
                  f"  (CPU {our_cpu:.2f} s / {their_cpu:.2f} s)")
            limit = memory_limit_mb(8.0 * n)
            peak = max(m for _, _, m in ours)
            met = peak <= limit
            all_met &= met
            print(f"{'':15}peak memory: narrator {peak:5.0f} MB, by hand {max(m for _, _, m in theirs):5.0f} MB"
                  f"  narrator target <= {limit:.0f} MB: {verdict(met)}")
    import subprocess

    out = subprocess.run([sys.executable, "-c", FIGURE_CHILD.format(here=here, n=FIGURE_N, runs=args.runs)],
                         capture_output=True, text=True, check=True).stdout.split()
    one, twelve = float(out[0]), float(out[1])
    ratio = twelve / one
    met = ratio <= FIGURE_TARGET
    all_met &= met
    print(f"n = {FIGURE_N:>9,}  one histogram {one * 1000:6.0f} ms  bin-sensitivity figure {twelve * 1000:6.0f} ms"
          f"  ratio {ratio:5.2f}  target <= {FIGURE_TARGET}: {verdict(met)}")
    print(f"load average {os.getloadavg()[0]:.1f} at the end")
    return 0 if all_met else 1


if __name__ == "__main__":
    sys.exit(main())
