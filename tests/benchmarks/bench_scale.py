"""Benchmark: findings for data larger than memory (narrator.scale), streaming and on a Dask cluster.

Not collected by pytest; run by hand:

    .venv/bin/python tests/benchmarks/bench_scale.py               # 1e8 values in 100 files, about 800 MB
    .venv/bin/python tests/benchmarks/bench_scale.py --n 2e6 --memory-sizes 1e6,2e6 --agree-n 1e6   # a quick look

It writes invented data once into a temporary folder (kept for the next run; fixed seed, lognormal
with a few extremes, ``--parts`` Parquet files), then measures in child processes, each with its own
peak resident memory (``ru_maxrss`` from ``os.wait4``), the two sides of a comparison in turn:

1. reading the column once with pyarrow (every file to numpy) against the stream engine over all
   ``--n`` values: the ratio (target at most 6) and the passes the engine made (target at most 2);
2. the stream engine's peak memory at each of ``--memory-sizes`` (default 2e7 and 2e8 values, in
   files of 1e6 values): target at most 1 GB at each, and not growing with n;
3. at ``--agree-n`` values (small enough for memory): the in-memory engine against the stream engine
   on the same values in parts, and whether the findings agree (exact figures equal; merged sums
   within 1e-12; the medcouple and what depends on it within its stated bound);
4. the Dask engine on a ``distributed.LocalCluster`` of ``--workers`` processes over all ``--n``
   values, a child process each run (starting the cluster and its workers included, timed apart as
   well) in turn with a stream engine child, ``--runs`` pairs: the medians' ratio (target at most
   1.2 x), and whether its findings equal the stream engine's. ``--dask-only`` runs this part alone.

Prints one line per measurement with its target and ``met`` / ``NOT MET``; exits 1 if a target is missed.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))  # tests/, for helpers.agreement
from _common import EXTREMES, SEED, run_child  # noqa: E402

STREAM_MEMORY_TARGET_MB = 1024.0
READ_RATIO_TARGET = 6.0
PASSES_TARGET = 2
DASK_RATIO_TARGET = 1.2

STREAM_CHILD = """
import sys
from narrator.findings import dumps
from narrator.scale import describe_source, open_source
result = describe_source(open_source(sys.argv[1], "x"))
open(sys.argv[2], "w", encoding="utf-8").write(dumps(result.findings))
open(sys.argv[2] + ".passes", "w", encoding="utf-8").write(str(result.passes))
"""

READ_CHILD = """
import sys, glob
import pyarrow.parquet as pq
total = 0
for path in sorted(glob.glob(sys.argv[1] + "/*.parquet")):
    total += pq.read_table(path, columns=["x"]).column("x").to_numpy().size
print(total)
"""

MEMORY_CHILD = """
import sys
from narrator.reading.columns import read_column
from narrator.engine.describe import describe
from narrator.findings import dumps
open(sys.argv[2], "w", encoding="utf-8").write(dumps(describe(read_column(sys.argv[1], "x"))))
"""

DASK_CHILD = """
import sys
from distributed import Client, LocalCluster
from narrator.findings import dumps
from narrator.scale import describe_source, open_source
from narrator.scale.distributed import DaskRunner
import time
if __name__ == "__main__":
    workers = int(sys.argv[3])
    start = time.perf_counter()
    with LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        with Client(cluster) as client:
            started = time.perf_counter() - start
            source = open_source(sys.argv[1], "x")
            result = describe_source(source, runner=DaskRunner(source, client=client))
    open(sys.argv[2], "w", encoding="utf-8").write(dumps(result.findings))
    open(sys.argv[2] + ".start", "w", encoding="utf-8").write(f"{started:.3f}")
"""


def _write_data(folder: Path, n: int, parts: int) -> Path:
    """n lognormal values (log-mean 3, log-SD 0.8) with five extremes, in ``parts`` files; written once."""
    done = folder / "_complete"
    if done.exists():
        return folder
    folder.mkdir(parents=True, exist_ok=True)
    sizes = np.full(parts, n // parts)
    sizes[: n % parts] += 1
    streams = np.random.SeedSequence(SEED).spawn(parts)
    for k, (size, stream) in enumerate(zip(sizes, streams, strict=True)):
        generator = np.random.default_rng(stream)
        values = generator.lognormal(3.0, 0.8, int(size))
        if k == parts // 2:
            values[generator.choice(int(size), len(EXTREMES), replace=False)] = EXTREMES
        pq.write_table(pa.table({"x": values}), folder / f"part-{k:05d}.parquet")
    done.write_text("ok\n", encoding="utf-8")
    return folder


def _whole_file(folder: Path) -> Path:
    """The parts joined into one Parquet file, for the in-memory engine."""
    target = folder.parent / f"{folder.name}-whole.parquet"
    if not target.exists():
        tables = [pq.read_table(path) for path in sorted(folder.glob("part-*.parquet"))]
        pq.write_table(pa.concat_tables(tables), target)
    return target


def _run(code: str, *args: str) -> tuple[float, float]:
    return run_child([sys.executable, "-c", code, *args])


def _load(path: Path):
    from narrator.findings import loads

    return loads(path.read_text(encoding="utf-8"))


def _agreement(reference, candidate) -> tuple[bool, str]:
    """Exact agreement, or agreement except where the recorded approximation reaches (within its bound)."""
    from helpers.agreement import differences

    found = differences(reference, candidate)
    if not found:
        return True, "equal"
    accuracy = candidate.accuracy
    allowed = tuple(a.figure for a in accuracy.approximate) + tuple(d for a in accuracy.approximate for d in a.depends)
    outside = [line for line in found if not line.split(":")[0].startswith(allowed)]
    if outside:
        return False, f"{len(outside)} differences outside the approximations, first: {outside[0]}"
    bound = accuracy.approximate[0].bound
    gap = abs(reference.shape.medcouple - candidate.shape.medcouple)
    within = gap <= 4 * math.sqrt(2) * bound
    return within, (f"equal except the medcouple and what depends on it ({len(found)} entries); "
                    f"medcouple gap {gap:.4f} vs 4 sqrt(2) x SE {4 * math.sqrt(2) * bound:.4f}")


def _verdict(ok: bool) -> str:
    return "met" if ok else "NOT MET"


def _load_average() -> str:
    return "load average " + " ".join(f"{v:.1f}" for v in os.getloadavg())


def _dask_beside_stream(big: Path, n: int, runs: int, workers: int, output: Path) -> int:
    """A stream engine child and a Dask child in turn, ``runs`` pairs; 0 when the target is met."""
    from helpers.agreement import differences

    streams, clusters, starts = [], [], []
    for _ in range(runs):
        before = _load_average()
        streams.append(_run(STREAM_CHILD, str(big), str(output / "stream-beside.json"))[0])
        try:
            clusters.append(_run(DASK_CHILD, str(big), str(output / "dask.json"), str(workers)))
        except (RuntimeError, subprocess.SubprocessError) as exc:
            print(f"dask: failed: {exc}")
            return 1
        starts.append(float((output / "dask.json.start").read_text()))
        print(f"  stream {streams[-1]:.1f} s, dask {clusters[-1][0]:.1f} s (cluster start-up {starts[-1]:.1f} s); "
              f"{before}, after {_load_average()}", flush=True)
    stream_seconds = float(np.median(streams))
    dask_seconds = float(np.median([t for t, _ in clusters]))
    found = differences(_load(output / "stream-beside.json"), _load(output / "dask.json"))
    dask_ratio = dask_seconds / stream_seconds
    ok = not found and dask_ratio <= DASK_RATIO_TARGET
    print(f"dask n={n:,}, {workers} workers: {dask_seconds:.1f} s (of which starting the cluster "
          f"{float(np.median(starts)):.1f} s), {dask_ratio:.2f} x the stream engine's {stream_seconds:.1f} s in turn "
          f"(target <= {DASK_RATIO_TARGET}); client process peak {max(m for _, m in clusters):,.0f} MB; findings "
          f"equal the stream run's: {'yes' if not found else found[:3]}; {_verdict(ok)}")
    return 0 if ok else 1


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--n", type=float, default=1e8)
    parser.add_argument("--parts", type=int, default=100)
    parser.add_argument("--runs", type=int, default=1, help="runs of the read and the stream engine, in turn")
    parser.add_argument("--memory-sizes", default="2e7,2e8")
    parser.add_argument("--agree-n", type=float, default=1e7)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--folder", type=Path, default=Path(tempfile.gettempdir()) / "narrator-bench-scale")
    parser.add_argument("--skip-dask", action="store_true")
    parser.add_argument("--dask-only", action="store_true", help="only the Dask engine beside the stream engine")
    args = parser.parse_args(argv)
    n, agree_n = int(args.n), int(args.agree_n)
    failed = False
    output = Path(tempfile.mkdtemp(prefix="narrator-bench-"))

    big = _write_data(args.folder / f"lognormal-{n}-{SEED}", n, args.parts)
    print(f"data: {n:,} values in {args.parts} Parquet files ({n * 8 / 2**20:,.0f} MB of float64); "
          f"folder {args.folder}")
    if args.dask_only:
        return _dask_beside_stream(big, n, args.runs, args.workers, output)
    reads, streams = [], []
    for _ in range(args.runs):
        reads.append(_run(READ_CHILD, str(big))[0])
        streams.append(_run(STREAM_CHILD, str(big), str(output / "stream.json")))
    read_seconds = float(np.median(reads))
    stream_seconds = float(np.median([t for t, _ in streams]))
    passes = int((output / "stream.json.passes").read_text())
    ratio = stream_seconds / read_seconds
    ok = ratio <= READ_RATIO_TARGET and passes <= PASSES_TARGET
    failed |= not ok
    print(f"stream n={n:,}: {stream_seconds:.1f} s in {passes} passes; reading the column once with pyarrow "
          f"{read_seconds:.1f} s; ratio {ratio:.1f} (targets <= {READ_RATIO_TARGET:.0f} x, <= {PASSES_TARGET} "
          f"passes) {_verdict(ok)}; peak {max(m for _, m in streams):,.0f} MB")

    peaks = []
    for size in (int(float(v)) for v in args.memory_sizes.split(",")):
        folder = _write_data(args.folder / f"lognormal-{size}-{SEED}", size, max(1, size // 1_000_000))
        seconds, peak = _run(STREAM_CHILD, str(folder), str(output / f"stream-{size}.json"))
        peaks.append(peak)
        ok = peak <= STREAM_MEMORY_TARGET_MB
        failed |= not ok
        print(f"stream n={size:,}: {seconds:.1f} s, peak {peak:,.0f} MB (target <= {STREAM_MEMORY_TARGET_MB:,.0f} MB) "
              f"{_verdict(ok)}")
    if len(peaks) > 1:
        growth = peaks[-1] / peaks[0]
        ok = growth <= 1.25
        failed |= not ok
        print(f"peak memory from the smallest to the largest size: x{growth:.2f} (target: not growing, <= x1.25) "
              f"{_verdict(ok)}")

    small = _write_data(args.folder / f"lognormal-{agree_n}-{SEED}", agree_n, max(4, args.parts // 10))
    small_whole = _whole_file(small)
    memory_seconds, memory_peak = _run(MEMORY_CHILD, str(small_whole), str(output / "memory-small.json"))
    small_seconds, small_peak = _run(STREAM_CHILD, str(small), str(output / "stream-small.json"))
    agree, detail = _agreement(_load(output / "memory-small.json"), _load(output / "stream-small.json"))
    failed |= not agree
    print(f"n={agree_n:,}: in memory {memory_seconds:.1f} s, peak {memory_peak:,.0f} MB; "
          f"stream {small_seconds:.1f} s, peak {small_peak:,.0f} MB "
          f"(time ratio {small_seconds / memory_seconds:.2f}); findings agree: {detail} {_verdict(agree)}")

    if not args.skip_dask:
        failed |= _dask_beside_stream(big, n, args.runs, args.workers, output) != 0
    print(json.dumps({"output": str(output)}))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
