"""Parquet files: the data columns of a file, one column read whole or in batches, and its typed cells.

=============================  ================================================
Name                           What it is
=============================  ================================================
:func:`open_parquet`           a Parquet file opened for reading (checked)
:func:`data_columns`           (schema positions, names) of the data columns;
                               the index pandas may store is not data
:func:`parquet_column`         one column as one arrow array
:func:`parquet_cells`          arrow values -> :class:`~narrator.reading.cells.Cells` by type
=============================  ================================================

Parquet has no rows on screen, so a value's row number is its position + 2,
as if a header row came first (the numbering of the other file kinds).
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from narrator.errors import NarratorError
from narrator.reading.cells import (
    CELL_MISSING,
    CELL_NON_NUMERIC,
    CELL_OK,
    MAX_DECIMALS,
    CellRules,
    Cells,
    classify_texts,
    printable,
)
from narrator.reading.files import shown_name

__all__ = ["data_columns", "open_parquet", "parquet_cells", "parquet_column"]

_PANDAS_INDEX = re.compile(r"__index_level_\d+__")


def open_parquet(path: Path):
    """A :class:`pyarrow.parquet.ParquetFile`; NarratorError naming the file when it is not one."""
    import pyarrow.parquet as pq

    try:
        return pq.ParquetFile(path)
    except MemoryError:
        raise  # said to be memory by the command line, not blamed on the file
    except (pa.ArrowException, OSError) as exc:
        raise NarratorError(f"{shown_name(path.name)}: not a readable Parquet file "
                            f"({shown_name(' '.join(str(exc).split()), 120)})") from None


def data_columns(parquet) -> tuple[list[int], list[str]]:
    """(schema positions, names) of the data columns (the index pandas may store is not data)."""
    names = parquet.schema_arrow.names
    positions = [k for k, name in enumerate(names) if not _PANDAS_INDEX.fullmatch(name)]
    return positions, [names[k] for k in positions]


def parquet_column(parquet, position: int, path: Path) -> pa.Array:
    """The column at schema ``position`` as one arrow array."""
    names = parquet.schema_arrow.names
    name = names[position]
    try:
        # Duplicate names cannot be read one by one: read the table and take the position.
        unique = names.count(name) == 1
        chunked = parquet.read(columns=[name]).column(0) if unique else parquet.read().column(position)
    except MemoryError:
        raise
    except (pa.ArrowException, OSError) as exc:
        raise NarratorError(f"{shown_name(path.name)}: column '{shown_name(name)}' cannot be read "
                            f"({shown_name(' '.join(str(exc).split()), 120)})") from None
    return chunked.combine_chunks() if chunked.num_chunks != 1 else chunked.chunk(0)


def parquet_cells(array: pa.Array, rules: CellRules) -> Cells:
    """Parquet values by type: numbers direct, text parsed, nulls and NaN missing, others non-numeric."""
    kind = array.type
    if pa.types.is_dictionary(kind):
        array = array.dictionary_decode()
        kind = array.type
    if pa.types.is_string(kind) or pa.types.is_large_string(kind) or pa.types.is_string_view(kind):
        return classify_texts(array, rules)
    size = len(array)
    nulls = array.is_null().to_numpy(zero_copy_only=False)
    status = np.full(size, CELL_NON_NUMERIC, dtype=np.int8)
    values = np.full(size, np.nan)
    decimals = np.full(size, -1, dtype=np.int8)
    if pa.types.is_integer(kind) or pa.types.is_floating(kind) or pa.types.is_decimal(kind):
        values = pc.cast(array, pa.float64(), safe=False).to_numpy(zero_copy_only=False).astype(np.float64)
        status[:] = CELL_OK
        status[np.isnan(values)] = CELL_MISSING  # nulls, and the NaN that pandas writes for an empty cell
        if pa.types.is_integer(kind):
            decimals[:] = 0
        elif pa.types.is_decimal(kind):
            decimals[:] = min(max(kind.scale, 0), MAX_DECIMALS)
    status[nulls] = CELL_MISSING

    def display(position: int) -> str:
        return printable(array[position].as_py())

    return Cells(values, status, decimals, display)
