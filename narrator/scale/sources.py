"""Where the values come from when they do not fit in memory: a folder or glob of Parquet files, or a
large CSV/TSV file, read in chunks with the cell rules of :mod:`narrator.reading.cells`.

==========================  ====================================================
Name                        What it is
==========================  ====================================================
:class:`ColumnSource`       one column of many Parquet files or one big text
                            file; ``chunks()`` yields a Sample per chunk
:func:`open_source`         path, folder or glob -> ColumnSource (checked)
:func:`is_large_input`      whether a path names a folder or a glob (the
                            streaming engine is then the default)
:class:`ReadingSummary`     what reading left out, merged over chunks, and the
                            Sample-like account the quality flags need
:data:`DEFAULT_CHUNK_ROWS`  rows per chunk (2 MB of float64 values: each summary's whole-array
                            steps then stay in the processor's cache)
==========================  ====================================================

Rows are numbered as :func:`narrator.reading.columns.read_column` numbers them, counted
across the files in name order: the first data row of the first file is row 2
(as if a header row came first), and each later file continues the count.
Each chunk's cells go through the same classification (missing tokens, text
parsing, non-finite values, the valid range) as a whole file read in memory,
and a text file through the same reader (:mod:`narrator.reading.text_files`):
the same codec, delimiter, header, row checks and limits.
"""

from __future__ import annotations

import glob
import hashlib
import os
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from narrator.errors import NarratorError
from narrator.reading import parquet
from narrator.reading.cells import (
    EXAMPLES_KEPT,
    EXAMPLES_SCANNED,
    EXCLUSION_REASONS,
    ROWS_KEPT,
    CellRules,
    build_sample,
    cell_rules,
)
from narrator.reading.files import check_file, file_sha256, select_column, shown_name
from narrator.reading.sample import Exclusion, Sample
from narrator.reading.text_files import TextLayout, text_column_cells, text_layout

DEFAULT_CHUNK_ROWS = 1 << 18
_PARQUET_SUFFIXES = (".parquet", ".pq")
_TEXT_FORMATS = {".csv": "csv", ".tsv": "tsv", ".tab": "tsv"}


def is_large_input(path: str | os.PathLike[str]) -> bool:
    """True for a folder or a glob pattern (``*``, ``?``, ``[``): many files, read by streaming."""
    text = os.fspath(path)
    return Path(text).is_dir() or glob.has_magic(text)


def _parquet_paths(text: str) -> tuple[Path, ...]:
    target = Path(text)
    if target.is_dir():
        found = sorted(p for p in target.rglob("*") if p.is_file() and p.suffix.lower() in _PARQUET_SUFFIXES)
        where = f"folder {target.name}"
    elif glob.has_magic(text):
        found = sorted(Path(p) for p in glob.glob(text, recursive=True)
                       if Path(p).is_file() and Path(p).suffix.lower() in _PARQUET_SUFFIXES)
        where = f"pattern {Path(text).name}"
    else:
        found = [target] if target.is_file() else []
        where = target.name
    if not found:
        raise NarratorError(f"{where}: no Parquet files (.parquet, .pq) found")
    return tuple(found)


@dataclass(frozen=True, slots=True)
class ColumnSource:
    """One column read chunk by chunk. ``kind`` is ``"parquet"`` (one or more files) or ``"csv"``/``"tsv"``."""

    kind: str
    paths: tuple[Path, ...]
    label: str  # what the report calls the input: a folder, pattern or file name (never the full path)
    column_name: str
    column_index: int  # 0-based among the data columns
    options: CellRules  # the cell rules (narrator.reading.cells)
    unit: str | None = None
    chunk_rows: int = DEFAULT_CHUNK_ROWS
    encoding: str | None = None
    delimiter: str | None = None
    facts: dict = field(default_factory=dict)
    layout: TextLayout | None = None  # a text file's codec, delimiter and header (narrator.reading.text_files)

    def chunks(self) -> Iterator[Sample]:
        """One Sample per chunk, rows numbered across the whole input."""
        if self.kind == "parquet":
            offset = 0
            for path in self.paths:
                for chunk in self.parquet_file_chunks(path, offset):
                    yield chunk
                    offset += chunk.n_rows
        else:
            yield from self._text_chunks()

    def parquet_file_chunks(self, path: Path, offset: int, row_groups: list[int] | None = None) -> Iterator[Sample]:
        """The chunks of one Parquet file (of its ``row_groups`` only, when given), rows from ``offset`` + 2."""
        opened = parquet.open_parquet(path)
        self._check_column(opened, path)
        name = opened.schema_arrow.names[parquet.data_columns(opened)[0][self.column_index]]
        try:
            for batch in opened.iter_batches(batch_size=self.chunk_rows, columns=[name], row_groups=row_groups):
                yield self.sample_of(parquet.parquet_cells(batch.column(0), self.options), offset)
                offset += batch.num_rows
        except Exception as exc:  # pyarrow raises several kinds for a damaged file
            if isinstance(exc, NarratorError | MemoryError):
                raise
            raise NarratorError(f"{shown_name(path.name)}: column '{shown_name(name)}' cannot be read "
                                f"({shown_name(' '.join(str(exc).split()), 120)})") from None

    def parquet_rows(self, path: Path) -> int:
        return int(parquet.open_parquet(path).metadata.num_rows)

    def parquet_parts(self) -> list[tuple[Path, int, int]]:
        """(file, row group, first row's offset) of every row group of every file, in order, from the
        files' metadata (no data read)."""
        parts = []
        offset = 0
        for path in self.paths:
            metadata = parquet.open_parquet(path).metadata
            for group in range(metadata.num_row_groups):
                parts.append((path, group, offset))
                offset += int(metadata.row_group(group).num_rows)
        return parts

    def _check_column(self, opened, path: Path) -> None:
        _positions, headers = parquet.data_columns(opened)
        index = select_column(headers, self.column_name, shown_name(path.name))
        if index != self.column_index:
            raise NarratorError(f"{shown_name(path.name)}: column '{shown_name(self.column_name)}' is column "
                                f"{index + 1} here but column {self.column_index + 1} in the first file; the files "
                                "must share a layout")

    def sample_of(self, cells, offset: int) -> Sample:
        """A chunk's cells as a Sample; row numbers start at ``offset`` + 2."""
        rows = np.arange(offset + 2, offset + 2 + cells.values.size, dtype=np.int64)
        source = {"column_position": self.column_index + 1}
        return build_sample(cells, rows, self.column_name, self.unit, self.options, source)

    def _text_chunks(self) -> Iterator[Sample]:
        offset = 0
        for cells in text_column_cells(self.layout, self.column_index, self.options, chunk_rows=self.chunk_rows):
            yield self.sample_of(cells, offset)
            offset += len(cells)

    def input_sha256(self) -> str:
        """SHA-256 of the input: of the file itself, or of the list of (name, SHA-256) of every file."""
        if len(self.paths) == 1 and self.kind != "parquet":
            return file_sha256(self.paths[0])
        digest = hashlib.sha256()
        for path in self.paths:
            digest.update(f"{path.name}\t{file_sha256(path)}\n".encode())
        return digest.hexdigest()

    def provenance(self) -> dict:
        """The Sample.source entries of the whole input (no folder path)."""
        return {
            "file": self.label,
            "format": "parquet" if self.kind == "parquet" else self.kind,
            "files": len(self.paths),
            "column_position": self.column_index + 1,
            "row_numbering": "position + 2 counted across the files in name order" if self.kind == "parquet"
            else "spreadsheet rows, header is row 1",
            "sha256": self.input_sha256(),
            "sheet": None,
            "encoding": self.encoding,
            "encoding_guessed": self.layout.encoding_guessed if self.layout is not None else False,
            "delimiter": self.layout.shown_delimiter if self.layout is not None else None,
            **self.facts,
        }


def open_source(
    path: str | os.PathLike[str],
    column: str | int,
    *,
    unit: str | None = None,
    decimal_comma: bool = False,
    missing: Iterable[object] = (),
    valid_min: float | None = None,
    valid_max: float | None = None,
    encoding: str | None = None,
    chunk_rows: int = DEFAULT_CHUNK_ROWS,
) -> ColumnSource:
    """A :class:`ColumnSource` for a Parquet file, folder or glob, or one CSV/TSV file.

    The reading options mean what they mean for :func:`narrator.reading.columns.read_column`, and a
    text file's codec, delimiter and header are decided as they are there
    (:func:`narrator.reading.text_files.text_layout`), from the start of the file.
    """
    text = os.fspath(path)
    if isinstance(chunk_rows, bool) or not isinstance(chunk_rows, int) or chunk_rows < 1:
        raise NarratorError(f"chunk size must be a whole number of rows >= 1, not {chunk_rows!r}")
    suffix = Path(text).suffix.lower()
    label = Path(text).name or text
    if suffix in _TEXT_FORMATS and not glob.has_magic(text):
        target = Path(text)
        name = shown_name(target.name)
        options = cell_rules(decimal_comma, missing, valid_min, valid_max, name)
        check_file(target)
        layout = text_layout(target, _TEXT_FORMATS[suffix], encoding)
        index = select_column(list(layout.headers), column, name)
        return ColumnSource(kind=layout.file_format, paths=(target,), label=label, column_name=layout.headers[index],
                            column_index=index, options=options, unit=unit, chunk_rows=chunk_rows,
                            encoding=layout.encoding, delimiter=layout.delimiter, layout=layout)
    if encoding is not None:
        raise NarratorError(f"{shown_name(label)}: an encoding can only be given for a text file (CSV, TSV)")
    paths = _parquet_paths(text)
    options = cell_rules(decimal_comma, missing, valid_min, valid_max, shown_name(label))
    _positions, headers = parquet.data_columns(parquet.open_parquet(paths[0]))
    index = select_column(headers, column, shown_name(paths[0].name))
    return ColumnSource(kind="parquet", paths=paths, label=label, column_name=headers[index], column_index=index,
                        options=options, unit=unit, chunk_rows=chunk_rows)


class ReadingSummary:
    """What reading and the declared bounds left out, merged over chunks in any grouping: rows read,
    each exclusion's count, first rows and first distinct examples, and the reading facts."""

    __slots__ = ("n_rows", "exclusions", "bound_exclusion", "percent_cells", "currencies", "ambiguous",
                 "ambiguous_rows", "other_convention")

    def __init__(self) -> None:
        self.n_rows = 0
        # reason -> [count, (row, value) pairs, (row, order, text) examples]; a value is None unless the
        # reason is "impossible" (the values left out are kept beside their rows)
        self.exclusions: dict[str, list] = {}
        self.bound_exclusion: list = [0, [], []]
        self.percent_cells = 0
        self.currencies: set[str] = set()
        self.ambiguous = 0
        self.ambiguous_rows: list[int] = []
        # cells that are numbers only under the other decimal convention: [count, (row, None) pairs, examples]
        self.other_convention: list = [0, [], []]

    def add_chunk(self, chunk: Sample, bound_rows: np.ndarray, bound_values: np.ndarray) -> None:
        self.n_rows += chunk.n_rows
        for exclusion in chunk.exclusions:
            rows = list(exclusion.rows)
            values = list(exclusion.values) if exclusion.values else [None] * len(rows)
            # Examples keep file order: the chunk's first row, then their order within the chunk.
            first = rows[0] if rows else 0
            examples = [(first, k, text) for k, text in enumerate(exclusion.examples)]
            self._add(self.exclusions.setdefault(exclusion.reason, [0, [], []]), exclusion.count,
                      list(zip(rows, values, strict=True)), examples)
        if bound_rows.size:
            pairs = [(int(r), float(v)) for r, v in zip(bound_rows[:ROWS_KEPT], bound_values[:ROWS_KEPT], strict=True)]
            examples = [(int(r), 0, f"{float(v):g}") for r, v in zip(bound_rows[:5], bound_values[:5], strict=True)]
            self._add(self.bound_exclusion, int(bound_rows.size), pairs, examples, distinct=False)
        source = chunk.source
        self.percent_cells += int(source.get("percent_cells") or 0)
        self.currencies.update(source.get("currency_symbols") or ())
        self.ambiguous += int(source.get("ambiguous_grouping") or 0)
        self.ambiguous_rows = sorted(self.ambiguous_rows + list(source.get("ambiguous_grouping_rows") or ()))[
            :ROWS_KEPT]
        other = int(source.get("other_convention") or 0)
        if other:
            rows = [int(row) for row in source.get("other_convention_rows") or ()]
            first = rows[0] if rows else 0
            self._add(self.other_convention, other, [(row, None) for row in rows],
                      [(first, k, text) for k, text in enumerate(source.get("other_convention_texts") or ())])

    @staticmethod
    def _add(entry: list, count: int, pairs: list, examples: list, distinct: bool = True) -> None:
        entry[0] += count
        entry[1] = sorted(entry[1] + list(pairs), key=lambda pair: pair[0])[:ROWS_KEPT]
        merged = sorted(entry[2] + list(examples))
        kept: list = []
        for row, order, text in merged:
            if not distinct or all(text != seen for _, _, seen in kept):
                kept.append((row, order, text))
        entry[2] = kept[:EXAMPLES_KEPT]

    def merge(self, other: ReadingSummary) -> ReadingSummary:
        self.n_rows += other.n_rows
        for reason, (count, pairs, examples) in other.exclusions.items():
            self._add(self.exclusions.setdefault(reason, [0, [], []]), count, pairs, examples)
        count, pairs, examples = other.bound_exclusion
        if count:
            self._add(self.bound_exclusion, count, pairs, examples, distinct=False)
        self.percent_cells += other.percent_cells
        self.currencies |= other.currencies
        self.ambiguous += other.ambiguous
        self.ambiguous_rows = sorted(self.ambiguous_rows + other.ambiguous_rows)[:ROWS_KEPT]
        if other.other_convention[0]:
            self._add(self.other_convention, *other.other_convention)
        return self

    def exclusion_list(self) -> tuple[Exclusion, ...]:
        """Exclusions in the reader's order, the declared bounds' exclusions joined to "impossible"
        the way the in-memory engine joins them (reading's rows and examples first)."""
        found = []
        for reason in EXCLUSION_REASONS:
            entry = self.exclusions.get(reason)
            if entry is None and not (reason == "impossible" and self.bound_exclusion[0]):
                continue
            count, pairs, examples = entry if entry is not None else (0, [], [])
            texts = tuple(text for _, _, text in examples)
            if reason == "impossible" and self.bound_exclusion[0]:
                extra_count, extra_pairs, extra_examples = self.bound_exclusion
                pairs = (list(pairs) + list(extra_pairs))[:10]
                exclusion = Exclusion("impossible", count + extra_count, tuple(row for row, _ in pairs),
                                      (texts + tuple(text for _, _, text in extra_examples))[:5],
                                      tuple(float(value) for _, value in pairs))
            else:
                values = tuple(float(value) for _, value in pairs) if reason == "impossible" else ()
                # Every distinct text is known when each chunk saw all of its cells and fewer than the kept number
                # turned up (as narrator.reading.cells).
                complete = len(texts) < EXAMPLES_KEPT and count <= EXAMPLES_SCANNED
                exclusion = Exclusion(reason, count, tuple(row for row, _ in pairs), texts, values,
                                      examples_complete=complete)
            found.append(exclusion)
        return tuple(found)

    def source_facts(self) -> dict:
        return {
            "percent_signs": self.percent_cells > 0,
            "percent_cells": self.percent_cells,
            "currency_symbols": sorted(self.currencies),
            "ambiguous_grouping": self.ambiguous,
            "ambiguous_grouping_rows": list(self.ambiguous_rows),
            "other_convention": self.other_convention[0],
            "other_convention_rows": [row for row, _ in self.other_convention[1]],
            "other_convention_texts": [text for _, _, text in self.other_convention[2]],
        }

    def __getstate__(self):
        return (self.n_rows, self.exclusions, self.bound_exclusion, self.percent_cells, self.currencies,
                self.ambiguous, self.ambiguous_rows, self.other_convention)

    def __setstate__(self, state) -> None:
        (self.n_rows, self.exclusions, self.bound_exclusion, self.percent_cells, self.currencies,
         self.ambiguous, self.ambiguous_rows, self.other_convention) = state
