"""The door to the engines for data larger than memory (:mod:`narrator.request` uses it).

=========================  ======================================================
Name                       What it does
=========================  ======================================================
:func:`choose_engine`      the engine asked for, or the default for the input
                           (a folder or glob streams; one file is read in memory)
:func:`describe_large`     path + column + options -> (Sample for figures,
                           Findings), by the stream or the dask engine
=========================  ======================================================
"""

from __future__ import annotations

import os
from collections.abc import Iterable

from narrator.errors import NarratorError
from narrator.findings import Findings
from narrator.reading.sample import Sample

ENGINES = ("memory", "stream", "dask")


def choose_engine(engine: str | None, path: str | os.PathLike[str]) -> str:
    """``engine`` checked, or ``"stream"`` for a folder or glob and ``"memory"`` otherwise."""
    from narrator.scale.sources import is_large_input

    large = is_large_input(path)
    if engine is None:
        return "stream" if large else "memory"
    if engine not in ENGINES:
        raise NarratorError(f"unknown engine {engine!r}; choose one of {', '.join(ENGINES)}")
    if engine == "memory" and large:
        raise NarratorError(f"{os.path.basename(os.fspath(path)) or path}: a folder or pattern of files is read by "
                            "the stream or dask engine, not in memory")
    return engine


def describe_large(
    path: str | os.PathLike[str],
    column: str | int,
    *,
    engine: str = "stream",
    scheduler: str | None = None,
    client=None,
    chunk_rows: int | None = None,
    unit: str | None = None,
    decimal_comma: bool = False,
    missing: Iterable[object] = (),
    valid_min: float | None = None,
    valid_max: float | None = None,
    encoding: str | None = None,
    **describe_options,
) -> tuple[Sample, Findings]:
    """Describe one column of a Parquet file, folder or glob (or a CSV/TSV file, streaming only).

    ``engine`` is ``"stream"`` (this machine, in chunks) or ``"dask"`` (a Dask cluster at
    ``scheduler``, or the given ``client``). The column is chosen by the column rule of
    :func:`narrator.reading.files.select_column`. ``describe_options`` are those of
    :func:`narrator.engine.describe.describe` (name, bounds, rules...).
    Returns the Sample the figures are drawn from (a fixed-seed reservoir with the extreme and
    flagged values) and the findings.
    """
    from narrator.scale.assemble import describe_source
    from narrator.scale.sources import DEFAULT_CHUNK_ROWS, open_source

    if engine not in ("stream", "dask"):
        raise NarratorError(f"describe_large runs the stream or dask engine, not {engine!r}")
    reading = dict(unit=unit, decimal_comma=decimal_comma, missing=tuple(missing), valid_min=valid_min,
                   valid_max=valid_max, encoding=encoding, chunk_rows=chunk_rows or DEFAULT_CHUNK_ROWS)
    source = open_source(path, column, **reading)
    runner = None
    if engine == "dask":
        from narrator.scale.distributed import DaskRunner

        runner = DaskRunner(source, address=scheduler, client=client)
    try:
        result = describe_source(source, runner=runner, valid_min=valid_min, valid_max=valid_max,
                                 **describe_options)
    finally:
        if runner is not None:
            runner.close()
    return result.sample, result.findings
