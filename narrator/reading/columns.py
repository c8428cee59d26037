"""The column reader: one numeric column of a CSV, TSV, Excel or Parquet file into a Sample.

============================  ==================================================
Name                          What it does
============================  ==================================================
:func:`read_column`           one column -> Sample, with every left-out cell
                              accounted for
:func:`list_numeric_columns`  headers of the columns that mostly hold numbers
:func:`list_label_columns`    headers of the columns that hold text labels
:func:`label_columns`         those columns read as labels (a bounded number, some left out)
:func:`read_labels`           one column as text labels (a grouping column)
:data:`NUMERIC_PROBE_ROWS`    rows :func:`list_numeric_columns` looks at
============================  ==================================================

The cell rules are :mod:`narrator.reading.cells`, the choice of a column and
the limits :mod:`narrator.reading.files`, and each file kind has its module:
:mod:`narrator.reading.text_files`, :mod:`narrator.reading.excel`,
:mod:`narrator.reading.parquet`. Row numbers are the ones a spreadsheet shows:
the header is row 1, the first data row is row 2 (Parquet: position + 2).
Files are opened read-only and never changed; only the chosen column (and
the identifier column, when one is asked for) is kept in memory.
"""

from __future__ import annotations

import math
import os
from collections.abc import Iterable
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np
import pyarrow as pa

from narrator.errors import NarratorError
from narrator.reading import excel, parquet, text_files
from narrator.reading.cells import (
    CELL_MISSING,
    CELL_OK,
    MISSING_TOKENS,
    Cells,
    _arrow_texts,
    build_sample,
    cell_rules,
    classify_texts,
    token_text,
)
from narrator.reading.files import check_file, file_format, file_sha256, loose, select_column, shown_name
from narrator.reading.sample import Sample, clean_label

__all__ = ["NUMERIC_PROBE_ROWS", "label_columns", "list_label_columns", "list_numeric_columns", "read_column",
           "read_labels"]

NUMERIC_PROBE_ROWS = 10_000  # list_numeric_columns looks at this many data rows (fewer in a very wide file)
_PROBE_CELLS = 2_000_000  # ... and at most this many cells in all
ID_LENGTH = 40  # characters of an identifier a report shows


def _select_id_column(headers, id_column: str | int, value_index: int, where: str) -> int:
    index = select_column(headers, id_column, where)
    if index == value_index:
        raise NarratorError(f"{where}: the id column is the column being described; name another column")
    return index


def _id_text(cell: object) -> str:
    if cell is None or (isinstance(cell, float) and math.isnan(cell)):
        return ""  # a short row's absent cell, or a null
    return clean_label(excel.header_text(cell), limit=ID_LENGTH)


def _no_sheet_unless_excel(sheet, kind: str, name: str) -> None:
    if sheet is not None and kind != "xlsx":
        raise NarratorError(f"{name}: a sheet can only be chosen in an Excel workbook")


def read_column(
    path: str | os.PathLike[str],
    column: str | int,
    *,
    sheet: str | int | None = None,
    unit: str | None = None,
    decimal_comma: bool = False,
    missing: Iterable[object] = (),
    valid_min: float | None = None,
    valid_max: float | None = None,
    encoding: str | None = None,
    id_column: str | int | None = None,
) -> Sample:
    """Read one numeric column of a CSV, TSV, Excel (.xlsx) or Parquet file into a Sample.

    ``column`` is a header text or a position (the column rule of
    :mod:`narrator.reading.files`: a header that is a number wins). ``sheet``
    (Excel only) is a sheet name or 1-based position; the first sheet by default.
    ``decimal_comma`` declares the decimal convention of text cells (see
    :func:`~narrator.reading.cells.parse_number`); ``missing`` adds cell texts
    (or numeric codes such as -99) that mean missing; ``valid_min``/``valid_max``
    bound the values that are possible (values outside are excluded as
    impossible, never called outliers); ``encoding`` names the codec of a text
    file (see :mod:`narrator.reading.text_files` for what is detected without it).
    ``id_column`` (a header text or position) names a column of record
    identifiers to carry in ``Sample.ids``, aligned with the values, so the
    outlier table can say which record a flagged value belongs to; without it
    no identifier is read at all (privacy by default).

    Every cell ends up either in ``Sample.values`` (float64, finite, in file
    order, with its spreadsheet row number in ``Sample.rows``) or counted in
    one :class:`~narrator.reading.sample.Exclusion` (``"missing"``, ``"non_numeric"``,
    ``"non_finite"``, ``"impossible"``) with its first row numbers and
    examples. A file with a header and no data rows gives a Sample with no
    values; the engine reports that. ``Sample.source`` records the file name
    (never its folder), SHA-256, format, sheet, column, reading options and
    what the cells showed (percent signs, currency markers, ambiguous
    groupings such as "1,234").

    Every failure raises :class:`~narrator.errors.NarratorError` naming the
    file, and the row, sheet or column where known.
    """
    target = Path(path)
    name = shown_name(target.name)
    kind = file_format(target)
    rules = cell_rules(decimal_comma, missing, valid_min, valid_max, name)
    check_file(target)
    _no_sheet_unless_excel(sheet, kind, name)
    if encoding is not None and kind not in ("csv", "tsv"):
        raise NarratorError(f"{name}: an encoding can only be given for a text file (CSV, TSV)")
    ids = None
    id_header = None
    if kind in ("csv", "tsv"):
        layout = text_files.text_layout(target, kind, encoding)
        headers = list(layout.headers)
        index = select_column(headers, column, name)
        # The file's digest is taken on a second thread while the column is read (hashlib lets
        # the other thread run), so a core left free by the cell rules is used.
        with ThreadPoolExecutor(1) as pool:
            digest = pool.submit(file_sha256, target)
            if id_column is None:
                cells = next(text_files.text_column_cells(layout, index, rules))
            else:
                id_index = _select_id_column(headers, id_column, index, name)
                parts, id_parts = [], []
                for texts, id_texts in text_files.text_columns(layout, [index, id_index],
                                                               decimal_comma=rules.decimal_comma):
                    parts.append(classify_texts(texts, rules).kept_examples(rules))
                    id_parts.extend(_id_text(cell) for cell in id_texts.to_pylist())
                cells = Cells.concatenate(parts, rules)
                ids, id_header = np.array(id_parts, dtype=object), headers[id_index]
            sha256 = digest.result()
        facts = {"sha256": sha256, "sheet": None, "encoding": layout.encoding,
                 "encoding_guessed": layout.encoding_guessed, "delimiter": layout.shown_delimiter}
    elif kind == "xlsx":
        headers, index, cells, facts, ids, id_header = _read_excel(target, column, sheet, rules, id_column)
    else:
        headers, index, cells, facts, ids, id_header = _read_parquet(target, column, rules, id_column)
    rows = np.arange(2, len(cells) + 2, dtype=np.int64)
    source = {
        "file": target.name,
        "format": kind,
        "column_position": index + 1,
        "row_numbering": "spreadsheet rows, header is row 1",
        **facts,
    }
    if ids is not None:
        source["id_column"] = clean_label(id_header)
    return build_sample(cells, rows, headers[index], unit, rules, source, ids)


def _read_excel(path: Path, column, sheet, rules, id_column):
    name = shown_name(path.name)
    workbook = excel.open_workbook(path, data_only=True)
    chosen: dict[str, object] = {}
    try:
        sheet_name = excel.choose_sheet(workbook, sheet, name)
        where = f"{name}, sheet '{shown_name(sheet_name)}'"

        def choose(headers: list[str]) -> list[int]:
            index = select_column(headers, column, where)
            chosen["index"] = index
            if id_column is None:
                return [index]
            return [index, _select_id_column(headers, id_column, index, where)]

        dropped: list[int] = []
        headers, indices, columns = excel.sheet_columns(workbook, sheet_name, choose, name, dropped=dropped)
    finally:
        workbook.close()
    index = indices[0]
    raw = columns[0]
    blank = {position for position, cell in enumerate(raw) if cell is None}
    # Rows at the end that look empty may hold formulas never calculated (a workbook written by a program
    # that does not compute): they are rows of the sheet, read as cells without a number, never dropped.
    trailing = set(range(len(raw), len(raw) + (dropped[0] if dropped else 0)))
    if trailing:
        found_after = excel.unsaved_formulas(path, sheet_name, index, trailing)
        if found_after:
            extra = max(found_after) + 1 - len(raw)
            raw = [*raw, *([None] * extra)]
            for part in range(1, len(columns)):
                columns[part] = [*columns[part], *([None] * extra)]
            blank |= set(range(len(raw) - extra, len(raw)))
    formulas = excel.unsaved_formulas(path, sheet_name, index, blank) if blank else {}
    cells = excel.excel_cells(raw, rules, formulas)
    facts = {"sha256": file_sha256(path), "sheet": sheet_name, "encoding": None, "encoding_guessed": False,
             "delimiter": None}
    ids = id_header = None
    if id_column is not None:
        ids = np.array([_id_text(cell) for cell in columns[1]], dtype=object)
        id_header = headers[indices[1]]
    return headers, index, cells, facts, ids, id_header


def _read_parquet(path: Path, column, rules, id_column):
    name = shown_name(path.name)
    opened = parquet.open_parquet(path)
    positions, headers = parquet.data_columns(opened)
    index = select_column(headers, column, name)
    array = parquet.parquet_column(opened, positions[index], path)
    facts = {"sha256": file_sha256(path), "sheet": None, "encoding": None, "encoding_guessed": False,
             "delimiter": None, "row_numbering": "position + 2, as if a header row came first"}
    ids = id_header = None
    if id_column is not None:
        id_index = _select_id_column(headers, id_column, index, name)
        ids = np.array([_id_text(cell) for cell in parquet.parquet_column(opened, positions[id_index], path)
                        .to_pylist()], dtype=object)
        id_header = headers[id_index]
    return headers, index, parquet.parquet_cells(array, rules), facts, ids, id_header


def _probe_columns(path: str | os.PathLike[str], sheet: str | int | None, decimal_comma: bool,
                   encoding: str | None) -> list[tuple[str, Cells]]:
    """(header, cells of the first data rows) for every column, in file order (see :func:`list_numeric_columns`)."""
    target = Path(path)
    name = shown_name(target.name)
    kind = file_format(target)
    check_file(target)
    rules = cell_rules(decimal_comma, (), None, None, name)
    _no_sheet_unless_excel(sheet, kind, name)
    columns: list[tuple[str, Cells]] = []
    if kind in ("csv", "tsv"):
        layout = text_files.text_layout(target, kind, encoding)
        width = len(layout.headers)
        probe = max(1, min(NUMERIC_PROBE_ROWS, _PROBE_CELLS // width))
        blocks = list(text_files.text_columns(layout, range(width), decimal_comma=decimal_comma, max_rows=probe))
        for k, header in enumerate(layout.headers):
            texts = pa.concat_arrays([block[k] for block in blocks]) if blocks else _arrow_texts([])
            columns.append((header, classify_texts(texts, rules)))
    elif kind == "xlsx":
        workbook = excel.open_workbook(target, data_only=True)
        try:
            sheet_name = excel.choose_sheet(workbook, sheet, name)
            headers, _indices, raw_columns = excel.sheet_columns(
                workbook, sheet_name, lambda found: list(range(len(found))), name, limit=NUMERIC_PROBE_ROWS)
        finally:
            workbook.close()
        for header, raw in zip(headers, raw_columns, strict=True):
            columns.append((header, excel.excel_cells(raw, rules, {})))
    else:
        opened = parquet.open_parquet(target)
        schema = opened.schema_arrow
        head = next(opened.iter_batches(batch_size=NUMERIC_PROBE_ROWS), None)
        positions, names = parquet.data_columns(opened)
        for position, header in zip(positions, names, strict=True):
            array = head.column(position) if head is not None else pa.array([], schema.field(position).type)
            columns.append((header, parquet.parquet_cells(array, rules)))
    return columns


def _mostly_numbers(cells: Cells) -> bool:
    present = cells.status != CELL_MISSING
    numbers_found = (cells.status == CELL_OK) & np.isfinite(cells.values)
    return bool(numbers_found.any() and numbers_found.sum() * 2 > present.sum())


def list_numeric_columns(
    path: str | os.PathLike[str], *, sheet: str | int | None = None, decimal_comma: bool = False,
    encoding: str | None = None,
) -> list[str]:
    """Headers, in file order, of the columns where more than half of the non-missing cells are numbers.

    Only the first :data:`NUMERIC_PROBE_ROWS` data rows are looked at (and at most two
    million cells in all, so a very wide file gets fewer rows), so the answer is quick on
    large files. Typed numeric cells (Excel numbers, Parquet integer, float and decimal
    columns) count as numbers; text is read with
    :func:`~narrator.reading.cells.parse_number` under the declared ``decimal_comma``.
    A column with no header is listed as "" and can be chosen by position.
    """
    return [header for header, cells in _probe_columns(path, sheet, decimal_comma, encoding)
            if _mostly_numbers(cells)]


def list_label_columns(
    path: str | os.PathLike[str], *, sheet: str | int | None = None, decimal_comma: bool = False,
    encoding: str | None = None,
) -> list[str]:
    """Headers, in file order, of the columns that hold text labels: some cell is filled and at most
    half of the filled cells are numbers (the complement of :func:`list_numeric_columns` among
    columns that are not empty), on the same first data rows.
    """
    return [header for header, cells in _probe_columns(path, sheet, decimal_comma, encoding)
            if bool((cells.status != CELL_MISSING).any()) and not _mostly_numbers(cells)]


def read_labels(
    path: str | os.PathLike[str],
    column: str | int,
    *,
    sheet: str | int | None = None,
    missing: Iterable[object] = (),
    encoding: str | None = None,
) -> tuple[str, tuple[str | None, ...]]:
    """One column read as text labels, such as a grouping column: (header, one label per data row).

    Labels are in file order, so label ``k`` belongs to spreadsheet row
    ``k + 2`` (the row numbering of :func:`read_column`). Surrounding spaces
    are removed and the text is made safe to show (:func:`narrator.reading.sample.clean_label`);
    blank cells and :data:`~narrator.reading.cells.MISSING_TOKENS` (plus ``missing``)
    give ``None``. Typed cells are written as text: Excel and Parquet numbers
    as :func:`read_column` writes them in messages (``5``, not ``5.0``), dates
    in ISO 8601. Files are read with the same rules as :func:`read_column`
    (delimiter, encoding, sheet choice, column choice).
    """
    target = Path(path)
    name = shown_name(target.name)
    kind = file_format(target)
    check_file(target)
    _no_sheet_unless_excel(sheet, kind, name)
    if isinstance(missing, str):
        missing = (missing,)
    absent = {loose(token) for token in MISSING_TOKENS} | {loose(token_text(token)) for token in missing}
    if kind in ("csv", "tsv"):
        layout = text_files.text_layout(target, kind, encoding)
        headers = list(layout.headers)
        index = select_column(headers, column, name)
        raw: list[object] = [cell for (texts,) in text_files.text_columns(layout, [index])
                             for cell in texts.to_pylist()]
    elif kind == "xlsx":
        workbook = excel.open_workbook(target, data_only=True)
        try:
            sheet_name = excel.choose_sheet(workbook, sheet, name)
            where = f"{name}, sheet '{shown_name(sheet_name)}'"
            headers, indices, (raw,) = excel.sheet_columns(
                workbook, sheet_name, lambda found: [select_column(found, column, where)], name)
        finally:
            workbook.close()
        index = indices[0]
    else:
        opened = parquet.open_parquet(target)
        positions, headers = parquet.data_columns(opened)
        index = select_column(headers, column, name)
        raw = parquet.parquet_column(opened, positions[index], target).to_pylist()
    labels: list[str | None] = []
    for cell in raw:
        text = None if cell is None or (isinstance(cell, float) and math.isnan(cell)) else excel.header_text(cell)
        text = None if text is None else " ".join(clean_label(text).split())
        labels.append(None if text is None or loose(text) in absent else text)
    return headers[index], tuple(labels)


def label_columns(path: str | os.PathLike[str], *, sheet=None, decimal_comma: bool = False, missing=(),
                  encoding: str | None = None, leave_out=(), limit: int) -> list[tuple[str, tuple[str | None, ...]]]:
    """The file's text columns other than ``leave_out``, at most ``limit`` of them, each read as
    (header, one label per data row) by :func:`read_labels`, in the file's column order."""
    found: list[tuple[str, tuple[str | None, ...]]] = []
    for header in list_label_columns(path, sheet=sheet, decimal_comma=decimal_comma, encoding=encoding):
        if len(found) >= limit:
            break
        if header in leave_out or not header:
            continue
        found.append(read_labels(path, header, sheet=sheet, missing=missing, encoding=encoding))
    return found
