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
                                 command line and recipes use (:mod:`.engine_choice`)
:func:`choose_engine`            the engine asked for, or the input's default
:data:`ENGINES`                  the engine names the command line and recipes accept
===============================  ===================================================

The mergeable summaries themselves are in :mod:`.summaries`, the exact order
statistics in the rank bins' brackets in :mod:`.ranks`, and the histogram, bin
sensitivity and density from counts in :mod:`.layouts`.
"""

from __future__ import annotations

import importlib

# Each name loads its module on first use (PEP 562), so choosing an engine for one file read in
# memory costs no import of the passes; Dask loads only when a cluster is asked for.
_HOMES = {
    "ScaleResult": "assemble", "describe_source": "assemble",
    "ENGINES": "engine_choice", "choose_engine": "engine_choice", "describe_large": "engine_choice",
    "ColumnSource": "sources", "is_large_input": "sources", "open_source": "sources",
    "StreamRunner": "streaming", "DaskRunner": "distributed",
}


def __getattr__(name: str):
    home = _HOMES.get(name)
    if home is None:
        raise AttributeError(f"module 'narrator.scale' has no attribute {name!r}")
    return getattr(importlib.import_module(f"narrator.scale.{home}"), name)


__all__ = ["ENGINES", "ColumnSource", "DaskRunner", "ScaleResult", "StreamRunner", "choose_engine",
           "describe_large", "describe_source", "is_large_input", "open_source"]
