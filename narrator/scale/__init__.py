"""Findings for data larger than memory: one column read in passes, on one machine or a Dask cluster.

===============================  ===================================================
Name                             What it is
===============================  ===================================================
:func:`describe_source`          the in-memory engine's findings, from passes over
                                 chunks (:mod:`.assemble`)
:func:`open_source`              a Parquet file, folder or glob, or a CSV/TSV file,
                                 as a chunked :class:`ColumnSource` (:mod:`.sources`)
:func:`is_large_input`           a folder or glob: streamed by default
:class:`StreamRunner`            reads the passes on this machine (:mod:`.streaming`)
:class:`DaskRunner`              reads them on a Dask cluster (:mod:`.distributed`)
:func:`describe_large`           path + column -> (Sample, Findings): the door the
                                 command line and recipes use (:mod:`.entry`)
:func:`choose_engine`            the engine asked for, or the input's default
:data:`ENGINES`                  the engine names the command line and recipes accept
===============================  ===================================================

The mergeable summaries themselves are in :mod:`.summaries`, the exact order
statistics in sketch brackets in :mod:`.ranks`, and the histogram, bin
sensitivity and density from counts in :mod:`.pictures`.
"""

from __future__ import annotations

from narrator.scale.assemble import ScaleResult, describe_source
from narrator.scale.entry import ENGINES, choose_engine, describe_large
from narrator.scale.sources import ColumnSource, is_large_input, open_source
from narrator.scale.streaming import StreamRunner


def __getattr__(name: str):
    # Dask is imported only when a cluster is asked for: it adds seconds to start-up.
    if name == "DaskRunner":
        from narrator.scale.distributed import DaskRunner

        return DaskRunner
    raise AttributeError(name)


__all__ = ["ENGINES", "ColumnSource", "DaskRunner", "ScaleResult", "StreamRunner", "choose_engine",
           "describe_large", "describe_source", "is_large_input", "open_source"]
