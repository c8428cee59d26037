"""One request: this column of this file, read this way, described with these options.

=============================  ================================================
Name                           What it is
=============================  ================================================
:class:`ReadingOptions`        how a file is read (shared by every variable of
                               the file): sheet, decimal comma, missing tokens,
                               encoding, engine, scheduler, chunk size
:class:`VariableRequest`       one column and how it is described: label, unit,
                               valid range, bounds, population, outlier rule
:class:`ColumnRequest`         a file, one variable, its reading options and an
                               optional identifier column
:func:`engine_for`             the engine that serves a request, its limits
                               checked with one set of messages
:func:`read_sample`            the request's column read whole (memory engine)
:func:`describe_request`       read and describe: (Sample, Findings) by the
                               engine :func:`engine_for` chooses
:func:`describe_options`       a variable's options as
                               :func:`narrator.engine.describe.describe` takes them
:func:`naming_the_input`       errors from any later step name the input too
=============================  ================================================

The command line (``facts``, ``tell``, ``draft``), the groups and
several-variables analysis (:mod:`narrator.groups.analysis`) and recipes all
build these objects and call these functions, so every way of asking reads
and describes a column the same way.

Rules stated once:

- **The column**: a header text (exact, then ignoring case and runs of
  spaces), or a position; digits that match no header are a 1-based position,
  so a header that is a number wins (:func:`narrator.reading.files.select_column`).
  The same rule serves ``--group-by``, ``--id-column`` and, for sheets, ``--sheet``.
- **The unit** belongs to the variable and is said once, in the request
  (``--unit``, a recipe's ``unit``): the reader records it in the Sample and
  nothing later changes it; ``describe`` refuses a different unit for a Sample
  that has one. ``--currency`` says which currency a money unit is in; it never
  changes the unit.
- **The engine**: ``memory`` reads the file whole (the default for one file);
  ``stream`` reads in chunks on this machine (the default for a folder or
  glob of Parquet files); ``dask`` computes the same summaries on a cluster.
  Choosing a sheet, an identifier column, grouping and several variables need
  every row at once, so they need the memory engine; asking for them with
  another engine is one error that names all of them.
"""

from __future__ import annotations

import contextlib
import os
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from narrator.errors import NarratorError
from narrator.findings import Findings
from narrator.reading.sample import Sample

__all__ = [
    "ColumnRequest",
    "ReadingOptions",
    "VariableRequest",
    "describe_options",
    "describe_request",
    "engine_for",
    "naming_the_input",
    "read_sample",
]


@dataclass(frozen=True, slots=True)
class ReadingOptions:
    """How a file is read; every variable of one file shares these."""

    sheet: str | int | None = None
    decimal_comma: bool = False
    missing: tuple[str | int | float, ...] = ()
    encoding: str | None = None
    engine: str | None = None  # "memory", "stream", "dask"; None: the input's default
    scheduler: str | None = None  # the Dask scheduler's address, for engine "dask"
    chunk_rows: int | None = None  # rows per chunk for the stream and dask engines


@dataclass(frozen=True, slots=True)
class VariableRequest:
    """One variable as a recipe or the command line declares it (see :func:`describe_options`)."""

    column: str | int
    label: str | None = None
    unit: str | None = None
    valid_min: float | None = None
    valid_max: float | None = None
    lower_bound: float | None = None
    upper_bound: float | None = None
    population: bool = False
    outlier_rule: str | None = None


@dataclass(frozen=True, slots=True)
class ColumnRequest:
    """This column of this file, read this way, described with these options."""

    path: str | os.PathLike[str]
    variable: VariableRequest
    reading: ReadingOptions = field(default_factory=ReadingOptions)
    id_column: str | int | None = None  # a column of record identifiers to show beside flagged values


def describe_options(variable: VariableRequest) -> dict[str, Any]:
    """The options :func:`narrator.engine.describe.describe` takes for ``variable``.

    Limits become floats, so the findings (and their JSON) are the same whether 0 or 0.0
    was given. The unit is not among them: the reader records it (see the module notes).

    >>> describe_options(VariableRequest("days", lower_bound=0))["lower_bound"]
    0.0
    """
    limits = {key: None if value is None else float(value) for key, value in (
        ("valid_min", variable.valid_min), ("valid_max", variable.valid_max),
        ("lower_bound", variable.lower_bound), ("upper_bound", variable.upper_bound))}
    return dict(name=variable.label, population=variable.population, outlier_rule=variable.outlier_rule, **limits)


def engine_for(request: ColumnRequest, *, group_by: str | None = None, variables: int = 1) -> str:
    """The engine that serves ``request`` (and, for a report, its grouping and number of variables).

    A stream or dask engine asked for together with something only the memory engine
    does is one :class:`~narrator.errors.NarratorError` naming every such thing.
    """
    from narrator.scale.engine_choice import choose_engine

    engine = choose_engine(request.reading.engine, request.path)
    if engine == "memory":
        return engine
    needs_memory = [what for what, asked in (
        ("choosing a sheet", request.reading.sheet is not None),
        ("an id column", request.id_column is not None),
        ("grouping", group_by is not None),
        ("several variables", variables > 1),
    ) if asked]
    if needs_memory:
        listed = ", ".join(needs_memory[:-1]) + (" and " if len(needs_memory) > 1 else "") + needs_memory[-1]
        raise NarratorError(f"{listed} need{'s' if len(needs_memory) == 1 else ''} the memory engine, which reads "
                            f"the whole file; the {engine} engine reads one column in chunks")
    if request.reading.scheduler is not None and engine != "dask":
        raise NarratorError(f"a scheduler address is for the dask engine, not the {engine} engine")
    return engine


def read_sample(request: ColumnRequest) -> Sample:
    """The request's column read whole into a Sample (the memory engine's reading)."""
    from narrator.reading.columns import read_column

    reading = request.reading
    return read_column(
        request.path, request.variable.column, sheet=reading.sheet, unit=request.variable.unit,
        decimal_comma=reading.decimal_comma, missing=reading.missing, valid_min=request.variable.valid_min,
        valid_max=request.variable.valid_max, encoding=reading.encoding, id_column=request.id_column,
    )


def describe_request(request: ColumnRequest, *, client=None) -> tuple[Sample, Findings]:
    """Read and describe the request's column: (the Sample figures are drawn from, the Findings).

    The memory engine describes every value; the stream and dask engines give the same
    findings from passes (:func:`narrator.scale.engine_choice.describe_large`) and a Sample of a
    fixed-seed reservoir with the extreme and flagged values. ``client`` is a Dask client
    to use instead of connecting to the request's scheduler.
    """
    engine = engine_for(request)
    options = describe_options(request.variable)
    with naming_the_input(request):
        if engine == "memory":
            from narrator.engine.describe import describe

            sample = read_sample(request)
            return sample, _separation_checked(describe(sample, **options), sample, request)
        from narrator.scale.engine_choice import describe_large

        reading = request.reading
        return describe_large(
            request.path, request.variable.column, engine=engine, scheduler=reading.scheduler, client=client,
            chunk_rows=reading.chunk_rows, unit=request.variable.unit, decimal_comma=reading.decimal_comma,
            missing=reading.missing, encoding=reading.encoding, **options,
        )


def _separation_checked(found: Findings, sample: Sample, request: ColumnRequest) -> Findings:
    """Where the values form clusters: the findings with the file's text columns checked against them
    (:mod:`narrator.engine.separation`)."""
    if found.clusters is None or found.clusters.count < 2:
        return found
    from narrator.engine.separation import DEFAULT_PRIVACY_THRESHOLD, MAX_COLUMNS_CHECKED, check_separation
    from narrator.reading.columns import label_columns

    reading = request.reading
    column = sample.source.get("column")
    columns = label_columns(request.path, sheet=reading.sheet, decimal_comma=reading.decimal_comma,
                            missing=reading.missing, encoding=reading.encoding,
                            leave_out=(column,) if column else (), limit=MAX_COLUMNS_CHECKED)
    return check_separation(found, sample, columns, DEFAULT_PRIVACY_THRESHOLD)


@contextlib.contextmanager
def naming_the_input(request: ColumnRequest) -> Iterator[None]:
    """Within the block, an error whose message does not name the input gets it: "data.csv, column 'x': ..."."""
    from narrator.reading.files import shown_name

    text = os.fspath(request.path)
    name = shown_name(Path(text).name or text)
    try:
        yield
    except NarratorError as exc:
        message = str(exc)
        if name in message:
            raise
        raise NarratorError(f"{name}, column '{shown_name(request.variable.column)}': {message}") from None
