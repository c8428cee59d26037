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

No scheduler of our own: the cluster is Dask's ``distributed`` scheduler (Dask Development Team 2016).
"""

from __future__ import annotations

from pathlib import Path

from narrator.errors import NarratorError
from narrator.scale.sources import ColumnSource
from narrator.scale.streaming import Pass


def _fill(path: Path, group: int, offset: int, empty: Pass, source: ColumnSource) -> Pass:
    """One row group's summaries, read in chunks as the streaming reader reads a file."""
    plan = empty.empty_copy()  # a worker may hand the same deserialized plan to several row groups
    for chunk in source.parquet_file_chunks(path, offset, row_groups=[group]):
        plan.feed(chunk)
    return plan


def _merge(left: Pass, right: Pass) -> Pass:
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
