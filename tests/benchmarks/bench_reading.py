"""Reading a column: narrator's read_column against pyarrow.csv, and the peak memory of draft at 1e7 values.

    .venv/bin/python tests/benchmarks/bench_reading.py --runs 5            # 1e6 rows, and draft at 1e7
    .venv/bin/python tests/benchmarks/bench_reading.py --runs 3 --skip-draft

Two measures, side by side in one run (invented data, fixed seed, see _common.py):

1. ``read_column`` on a plain 1e6-row CSV (one column, two decimals) against
   ``pyarrow.csv.read_csv`` reading the same column as float64 and handing it
   to numpy (the floor: a typed read with no cell rules), each timed in this
   process, in turn (A B A B ...); target: at most 2 x the floor. The same on
   a three-column file (id, value, site) reading the middle column.
2. Peak resident memory of ``narrator draft --audience memo`` on 1e7 values
   (a child process, ``ru_maxrss``) against the target of 4 x the float64 array
   plus 300 MB, beside the peak of a child that only reads the column with
   pyarrow as float64.

Exit status 1 when a target is missed.
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _common import MEGABYTE, lognormal_with_extremes, median, memory_limit_mb, run_child, write_csv  # noqa: E402

READ_TARGET = 2.0


def _floor(path: str, column: str) -> np.ndarray:
    import pyarrow as pa
    import pyarrow.csv as pa_csv

    table = pa_csv.read_csv(path, convert_options=pa_csv.ConvertOptions(include_columns=[column],
                                                                        column_types={column: pa.float64()}))
    return table.column(0).to_numpy()


def _timed(function, *args) -> float:
    start = time.perf_counter()
    function(*args)
    return time.perf_counter() - start


def reading(folder: Path, runs: int) -> bool:
    from narrator.reading.columns import read_column

    values = lognormal_with_extremes(1_000_000)
    one = folder / "one.csv"
    write_csv(str(one), values)
    three = folder / "three.csv"
    with open(three, "w", encoding="utf-8") as handle:
        handle.write("id,x,site\n")
        handle.writelines(f"R{k},{value:.2f},S{k % 7}\n" for k, value in enumerate(values))
    met = True
    for label, path in (("1e6 rows, one column", one), ("1e6 rows, middle of three", three)):
        read_column(path, "x")  # warm the file cache and the imports
        _floor(str(path), "x")
        ours, floor = [], []
        for _ in range(runs):
            ours.append(_timed(read_column, path, "x"))
            floor.append(_timed(_floor, str(path), "x"))
        ratio = median(ours) / median(floor)
        ok = ratio <= READ_TARGET
        met &= ok
        print(f"read_column, {label}: {median(ours) * 1000:.0f} ms; pyarrow.csv to numpy {median(floor) * 1000:.0f} "
              f"ms; ratio {ratio:.2f} (target <= {READ_TARGET}: {'met' if ok else 'NOT MET'})")
        sample = read_column(path, "x")
        assert np.array_equal(sample.values, _floor(str(path), "x")), "the values differ from pyarrow's"
    return met


def draft_memory(folder: Path) -> bool:
    n = 10_000_000
    path = folder / "big.csv"
    write_csv(str(path), lognormal_with_extremes(n))
    output = folder / "big.docx"
    _, ours = run_child([sys.executable, "-m", "narrator", "draft", str(path), "--column", "x", "--audience", "memo",
                         "-o", str(output), "--quiet"])
    _, floor = run_child([sys.executable, "-c", f"import sys; sys.path.insert(0, {str(Path(__file__).parent)!r}); "
                          f"from bench_reading import _floor; _floor({str(path)!r}, 'x')"])
    limit = memory_limit_mb(n * 8)
    ok = ours <= limit
    print(f"draft --audience memo, 1e7 values: peak {ours:.0f} MB; a typed pyarrow read alone {floor:.0f} MB; "
          f"the float64 array {n * 8 / MEGABYTE:.0f} MB (target <= {limit:.0f} MB: {'met' if ok else 'NOT MET'})")
    return ok


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=5)
    parser.add_argument("--skip-draft", action="store_true", help="leave out the 1e7-value draft")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as scratch:
        folder = Path(scratch)
        met = reading(folder, args.runs)
        if not args.skip_draft:
            met &= draft_memory(folder)
    print(f"machine: {os.cpu_count()} cores")
    return 0 if met else 1


if __name__ == "__main__":
    raise SystemExit(main())
