"""Shared pieces of the benchmarks: the invented data, child processes with their peak memory, medians.

Not collected by pytest (pyproject's norecursedirs); run the scripts beside this file by hand.
"""

from __future__ import annotations

import os
import statistics
import subprocess
import time

import numpy as np

SEED = 20261201
# A few extreme values, far out in the long tail and one near zero, as a real column of waits or amounts has.
EXTREMES = (2500.0, 4800.0, 9100.0, 15000.0, 0.02)
MEGABYTE = 1024 * 1024
FIXED_MEMORY_MB = 300.0
MEMORY_PER_DATA_SIZE = 4.0


def lognormal_with_extremes(n: int, seed: int = SEED) -> np.ndarray:
    """Invented data: n lognormal values (log-mean 3, log-SD 0.8, so a median near 20) and five extremes."""
    generator = np.random.default_rng(seed)
    values = generator.lognormal(3.0, 0.8, n)
    values[generator.choice(n, len(EXTREMES), replace=False)] = EXTREMES
    return values


def write_csv(path: str, values: np.ndarray, column: str = "x") -> None:
    """One column, two decimals, as an export from a spreadsheet would write it."""
    with open(path, "w", encoding="utf-8") as handle:
        handle.write(column + "\n")
        np.savetxt(handle, values, fmt="%.2f")


def run_child(command: list[str]) -> tuple[float, float]:
    """(wall seconds, peak resident memory in MB) of one child process, which must succeed.

    The peak comes from the child's own rusage (os.wait4), so earlier children do not count.
    """
    elapsed, _, peak = run_child_timed(command)
    return elapsed, peak


def run_child_timed(command: list[str]) -> tuple[float, float, float]:
    """(wall seconds, CPU seconds, peak resident memory in MB) of one child process, which must succeed.

    The CPU time is the child's user and system time with that of the processes it waited for
    (narrator's drawing helper), from the same rusage as the peak.
    """
    start = time.perf_counter()
    child = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(child.pid, 0)
    elapsed = time.perf_counter() - start
    error = child.stderr.read().decode(errors="replace") if child.stderr else ""
    child.returncode = os.waitstatus_to_exitcode(status)
    if child.returncode != 0:
        raise RuntimeError(f"{' '.join(command)} failed ({child.returncode}):\n{error}")
    return elapsed, usage.ru_utime + usage.ru_stime, usage.ru_maxrss / 1024.0  # Linux reports kilobytes


def median(values: list[float]) -> float:
    return statistics.median(values)


def memory_limit_mb(data_bytes: float) -> float:
    """The memory target: four times the data's size plus a fixed 300 MB."""
    return MEMORY_PER_DATA_SIZE * data_bytes / MEGABYTE + FIXED_MEMORY_MB


def verdict(met: bool) -> str:
    return "met" if met else "NOT MET"
