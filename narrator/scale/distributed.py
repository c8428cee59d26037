"""The same passes on a Dask cluster: each row group of the Parquet files fills its own summaries on a
worker, and the summaries are merged pairwise, in file and row-group order, on the workers too.

====================  ==============================================================
Name                  What it does
====================  ==============================================================
:class:`DaskRunner`   runs a :class:`~.streaming.Pass` over the row groups of the
                      Parquet files with a ``distributed`` client (a scheduler
                      address, or a client the caller made)
====================  ==============================================================

Only Parquet input is read this way (a CSV file has no independent parts to hand out). Each row group
is read on a worker by the streaming reader itself (:meth:`~.sources.ColumnSource.parquet_file_chunks`:
chunks of the source's ``chunk_rows``, the same cell rules), and its rows are numbered from its offset
(the row counts before it, from the files' metadata), so row numbers, the reservoir sample and every
exact figure are the same as in a streaming run. Merged sums can differ from the streaming run's in
the last bits only (another grouping of the same additions). The workers must see the files at the
same paths.

Workers started by ``distributed``'s nanny run with ``MALLOC_TRIM_THRESHOLD_=65536`` (its setting
``distributed.nanny.pre-spawn-environ``), which in glibc also turns off the growing threshold above which
a block is mapped afresh from the system: every chunk-sized numpy array of a summary (8 MB at the default
chunk) was then mapped, page-faulted in and handed back, and a row group took 1.5 to 2 times the CPU it
takes in one process (tests/benchmarks/README.md, "Dask against the stream engine"). While a task fills
or merges summaries on such a worker, :func:`_heap_kept` raises both thresholds (to 32 MiB and 64 MiB, the
most glibc's growing thresholds reach) and puts the worker's own back after;
a worker without that setting, or without glibc, is left as it is.

No scheduler of our own: the cluster is Dask's ``distributed`` scheduler (Dask Development Team 2016).
"""

from __future__ import annotations

import ctypes
import os
import sys
import threading
from contextlib import contextmanager
from pathlib import Path

from narrator.errors import NarratorError
from narrator.scale.sources import ColumnSource
from narrator.scale.streaming import Pass

_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3  # glibc's mallopt parameters (malloc.h)
_GLIBC_MMAP_DEFAULT = 128 * 1024
_KEPT_MMAP, _KEPT_TRIM = 32 << 20, 64 << 20
_heap_lock = threading.Lock()
_heap_users = [0]


def _glibc_mallopt():
    """glibc's ``mallopt``, or None (another C library, another system)."""
    if not sys.platform.startswith("linux"):
        return None
    try:
        libc = ctypes.CDLL(None)
        libc.gnu_get_libc_version  # noqa: B018 (only glibc has it)
        return libc.mallopt
    except (OSError, AttributeError):
        return None


@contextmanager
def _heap_kept():
    """Freed chunk-sized blocks stay in this process's heap while the block runs, when a fixed trim
    threshold in the environment (as ``distributed``'s nanny sets) has turned glibc's growing one off."""
    fixed = os.environ.get("MALLOC_TRIM_THRESHOLD_")
    mallopt = _glibc_mallopt() if fixed is not None else None
    if mallopt is None:
        yield
        return
    with _heap_lock:  # a worker may run several tasks on its threads: the last one out restores
        if _heap_users[0] == 0:
            mallopt(_M_MMAP_THRESHOLD, _KEPT_MMAP)
            mallopt(_M_TRIM_THRESHOLD, _KEPT_TRIM)
        _heap_users[0] += 1
    try:
        yield
    finally:
        with _heap_lock:
            _heap_users[0] -= 1
            if _heap_users[0] == 0:
                mallopt(_M_TRIM_THRESHOLD, _whole(fixed, _KEPT_TRIM))
                mallopt(_M_MMAP_THRESHOLD, _whole(os.environ.get("MALLOC_MMAP_THRESHOLD_"), _GLIBC_MMAP_DEFAULT))


def _whole(text: str | None, default: int) -> int:
    try:
        return int(text) if text is not None else default
    except ValueError:
        return default


def _fill(path: Path, group: int, offset: int, empty: Pass, source: ColumnSource) -> Pass:
    """One row group's summaries, read in chunks as the streaming reader reads a file."""
    with _heap_kept():
        plan = empty.empty_copy()  # a worker may hand the same deserialized plan to several row groups
        for chunk in source.parquet_file_chunks(path, offset, row_groups=[group]):
            plan.feed(chunk)
        return plan


def _merge(left: Pass, right: Pass) -> Pass:
    with _heap_kept():
        return left.merge(right)


class DaskRunner:
    """Runs each pass on a Dask cluster.

    ``address`` is a scheduler address such as ``tcp://scheduler.example:8786``; or pass a ``client`` already
    connected (a ``distributed.LocalCluster``'s, in tests). Each task reads one row group of one file
    (only the described column) with the streaming reader, so the cells are the ones it sees.
    """

    name = "dask"

    def __init__(self, source: ColumnSource, *, address: str | None = None, client=None) -> None:
        if source.kind != "parquet":
            raise NarratorError("the dask engine reads Parquet files (a file, folder or glob); "
                                "for a CSV file use the stream engine")
        try:
            import dask  # noqa: F401
            from distributed import Client
        except ImportError:
            raise NarratorError("the dask engine needs the packages dask and distributed") from None
        if client is None:
            if not address:
                raise NarratorError("the dask engine needs a scheduler address (--scheduler tcp://host:8786)")
            try:
                client = Client(address, timeout="20s")
            except (OSError, TimeoutError) as exc:
                raise NarratorError(f"cannot reach the Dask scheduler at {address} ({exc})") from None
            self._own_client = True
        else:
            self._own_client = False
        self.client = client
        self.source = source
        self.passes = 0
        self.parts = source.parquet_parts()

    def run(self, plan: Pass) -> Pass:
        from dask import delayed

        self.passes += 1
        empty = delayed(plan)  # sent to the cluster once, copied per row group
        level = [delayed(_fill)(path, group, offset, empty, self.source) for path, group, offset in self.parts]
        if not level:
            return plan
        while len(level) > 1:  # pairwise merges in order: a tree of depth log2(row groups)
            level = [delayed(_merge)(level[k], level[k + 1]) if k + 1 < len(level) else level[k]
                     for k in range(0, len(level), 2)]
        return self.client.compute(level[0], sync=True)

    def close(self) -> None:
        if self._own_client:
            self.client.close()
