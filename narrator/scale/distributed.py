"""The same passes on a Dask cluster: each partition of the Parquet data fills its own summaries on a
worker, and the summaries are merged pairwise, in partition order, on the workers too.

====================  ==============================================================
Name                  What it does
====================  ==============================================================
:class:`DaskRunner`   runs a :class:`~.streaming.Pass` over ``dask.dataframe.read_parquet``
                      partitions with a ``distributed`` client (a scheduler address,
                      or a client the caller made)
====================  ==============================================================

Only Parquet input is read this way (a CSV file has no independent parts to hand out). Each
partition is cut into chunks of the source's ``chunk_rows`` and parsed with the same cell rules as
the streaming reader, and its rows are numbered from the partition's offset (the lengths of the
partitions before it, counted once by the cluster), so row numbers, the reservoir sample and every
exact figure are the same as in a streaming run. Merged sums can differ from the streaming run's in
the last bits only (another grouping of the same additions).

No scheduler of our own: the cluster is Dask's ``distributed`` scheduler (Dask Development Team 2016).
"""

from __future__ import annotations

import numpy as np

from narrator.errors import NarratorError
from narrator.scale.sources import ColumnSource
from narrator.scale.streaming import Pass


def _arrow_column(frame):
    """The partition's one column as a pyarrow Array (pyarrow-backed frames hand theirs over as is)."""
    import pyarrow as pa

    series = frame.iloc[:, 0]
    array = pa.array(series.array) if hasattr(series.array, "__arrow_array__") else pa.array(series,
                                                                                          from_pandas=True)
    return array.combine_chunks() if isinstance(array, pa.ChunkedArray) else array


def _fill(frame, offset: int, empty: Pass, source: ColumnSource) -> Pass:
    """One partition's summaries: the partition read in chunks, as the streaming reader reads a file."""
    from narrator.reading.parquet import parquet_cells

    plan = empty.empty_copy()  # a worker may hand the same deserialized plan to several partitions
    array = _arrow_column(frame)
    for start in range(0, len(array), source.chunk_rows):
        part = array.slice(start, source.chunk_rows)
        plan.feed(source.sample_of(parquet_cells(part, source.options), offset + start))
    return plan


def _merge(left: Pass, right: Pass) -> Pass:
    return left.merge(right)


def _length(frame) -> int:
    return len(frame)


class DaskRunner:
    """Runs each pass on a Dask cluster.

    ``address`` is a scheduler address such as ``tcp://scheduler.example:8786``; or pass a ``client`` already
    connected (a ``distributed.LocalCluster``'s, in tests). The Parquet files are opened with
    ``dask.dataframe.read_parquet`` (only the described column), with pyarrow-backed dtypes so the
    cells reach the reader exactly as the streaming reader sees them.
    """

    name = "dask"

    def __init__(self, source: ColumnSource, *, address: str | None = None, client=None) -> None:
        if source.kind != "parquet":
            raise NarratorError("the dask engine reads Parquet files (a file, folder or glob); "
                                "for a CSV file use the stream engine")
        try:
            import dask.dataframe as dd
            from distributed import Client
        except ImportError:
            raise NarratorError("the dask engine needs the packages dask[dataframe] and distributed") from None
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
        frame = dd.read_parquet([str(p) for p in source.paths], columns=[source.column_name],
                                dtype_backend="pyarrow", index=False)
        self.partitions = frame.to_delayed()
        self._offsets: list[int] | None = None

    def offsets(self) -> list[int]:
        """Row offset of each partition: the lengths before it (counted on the cluster, once)."""
        if self._offsets is None:
            from dask import delayed

            lengths = self.client.compute([delayed(_length)(part) for part in self.partitions], sync=True)
            self._offsets = [int(v) for v in np.concatenate([[0], np.cumsum(lengths)[:-1]])]
        return self._offsets

    def run(self, plan: Pass) -> Pass:
        from dask import delayed

        self.passes += 1
        empty = delayed(plan)  # sent to the cluster once, copied per partition
        level = [delayed(_fill)(part, offset, empty, self.source)
                 for part, offset in zip(self.partitions, self.offsets(), strict=True)]
        if not level:
            return plan
        while len(level) > 1:  # pairwise merges in partition order: a tree of depth log2(partitions)
            level = [delayed(_merge)(level[k], level[k + 1]) if k + 1 < len(level) else level[k]
                     for k in range(0, len(level), 2)]
        return self.client.compute(level[0], sync=True)

    def close(self) -> None:
        if self._own_client:
            self.client.close()
