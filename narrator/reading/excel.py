"""Excel workbooks (.xlsx, .xlsm): checked as packages before parsing, then read one column at a time.

=============================  ================================================
Name                           What it is
=============================  ================================================
:func:`check_package`          refuse an encrypted, old-format, damaged or
                               bomb-like file before any XML is parsed
:func:`open_workbook`          the checked workbook, opened read-only
:func:`choose_sheet`           the sheet a caller names (or the first)
:func:`sheet_columns`          the header and only the chosen columns of a sheet
:func:`excel_cells`            typed Excel cells -> :class:`~narrator.reading.cells.Cells`
:func:`unsaved_formulas`       blank-looking cells that are formulas never calculated
:func:`header_text`            a typed header cell as text
:data:`MAX_UNPACKED_BYTES`     the most a workbook may unpack to
:data:`MAX_PACKING_RATIO`      the most one large part may be compressed
=============================  ================================================

A workbook is a zip package of XML parts (ECMA-376 Part 2, Open Packaging
Conventions). Before openpyxl parses anything, the package's directory is read:
a file in the OLE2 compound format is an encrypted workbook (ECMA-376 Part 1
keeps encrypted packages in that format, with an ``EncryptedPackage`` stream)
or an old .xls; a package whose parts unpack to more than
:data:`MAX_UNPACKED_BYTES`, or a part over 1 MiB compressed more than
:data:`MAX_PACKING_RATIO` times (real sheets are compressed 5 to 20 times),
is refused as a possible zip bomb.

Rows are read to the sheet's real end: the size a sheet stores in its
``<dimension>`` element can be stale (a workbook saved by a tool that did not
update it), so it is reset before reading. Only the header row and the chosen
columns are kept. Rows are the worksheet's own row numbers; fully empty rows at
the very end are not data rows.
"""

from __future__ import annotations

import datetime as _dt
import zipfile
from collections.abc import Callable, Sequence
from pathlib import Path

import numpy as np

from narrator.errors import NarratorError
from narrator.reading.cells import (
    CELL_MISSING,
    CELL_NON_NUMERIC,
    CELL_OK,
    CellRules,
    Cells,
    _arrow_texts,
    classify_texts,
    format_number,
    printable,
)
from narrator.reading.files import MAX_COLUMNS, loose, shown_name

__all__ = [
    "MAX_PACKING_RATIO",
    "MAX_UNPACKED_BYTES",
    "check_package",
    "choose_sheet",
    "excel_cells",
    "header_text",
    "open_workbook",
    "sheet_columns",
    "unsaved_formulas",
]

MAX_UNPACKED_BYTES = 1 << 30  # 1 GiB of XML: far beyond the sheets this tool is for
MAX_PACKING_RATIO = 100
_RATIO_FROM_BYTES = 1 << 20
_OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
_ENCRYPTED_STREAM = "EncryptedPackage".encode("utf-16-le")


def _size(count: int) -> str:
    for unit, scale in (("GB", 1e9), ("MB", 1e6), ("kB", 1e3)):
        if count >= scale:
            return f"{count / scale:.1f} {unit}"
    return f"{count} bytes"


def check_package(path: Path) -> None:
    """NarratorError for a workbook that must not be parsed: encrypted, old format, not a package, a zip bomb."""
    name = shown_name(path.name)
    try:
        with open(path, "rb") as handle:
            start = handle.read(1 << 20)
    except OSError as exc:
        raise NarratorError(f"{name}: cannot be read ({exc.strerror or exc})") from None
    if start.startswith(_OLE_MAGIC):
        if _ENCRYPTED_STREAM in start:
            raise NarratorError(f"{name}: the workbook is encrypted (protected by a password); save a copy without "
                                "the password and read that")
        raise NarratorError(f"{name}: this is an old Excel 97-2003 workbook (.xls) with an .xlsx name; save it as "
                            ".xlsx")
    try:
        with zipfile.ZipFile(path) as package:
            members = package.infolist()
    except (zipfile.BadZipFile, zipfile.LargeZipFile, OSError, ValueError, EOFError):
        raise NarratorError(f"{name}: not a readable .xlsx workbook (it is not a zip package)") from None
    total = 0
    for member in members:
        total += member.file_size
        if member.file_size > _RATIO_FROM_BYTES and member.file_size > MAX_PACKING_RATIO * max(member.compress_size, 1):
            raise NarratorError(
                f"{name}: part {shown_name(member.filename)} unpacks from {_size(member.compress_size)} to "
                f"{_size(member.file_size)} ({member.file_size // max(member.compress_size, 1):,} times); narrator "
                f"refuses parts compressed more than {MAX_PACKING_RATIO} times, which real sheets never are "
                "(a possible zip bomb)")
    if total > MAX_UNPACKED_BYTES:
        raise NarratorError(f"{name}: the workbook unpacks to {_size(total)}; narrator reads workbooks that unpack "
                            f"to at most {_size(MAX_UNPACKED_BYTES)}; save the column as CSV and read that")


def open_workbook(path: Path, data_only: bool = True):
    """The workbook at ``path``, checked by :func:`check_package`, opened read-only by openpyxl."""
    import openpyxl

    check_package(path)
    try:
        return openpyxl.load_workbook(path, read_only=True, data_only=data_only)
    except MemoryError:
        raise
    except Exception as exc:  # openpyxl raises zipfile, KeyError and XML errors for damaged files
        reason = " ".join(str(exc).split()) or "a part is damaged or missing"
        raise NarratorError(f"{shown_name(path.name)}: not a readable .xlsx workbook ({shown_name(reason, 120)})"
                            ) from None


def choose_sheet(workbook, sheet: str | int | None, file_name: str) -> str:
    """The name of the sheet ``sheet`` names; the first by default.

    A name (exact, then ignoring case and runs of spaces) wins; a whole number, or digits
    that match no sheet name, are a 1-based position (the column rule, for sheets).
    """
    names = list(workbook.sheetnames)
    listed = ", ".join(f"'{shown_name(name)}'" for name in names[:20])
    if sheet is None:
        chosen = names[0]
    elif isinstance(sheet, int) and not isinstance(sheet, bool):
        if not 1 <= sheet <= len(names):
            raise NarratorError(f"{file_name}: there is no sheet {sheet}; sheets are: {listed}")
        chosen = names[sheet - 1]
    else:
        exact = [name for name in names if name == str(sheet)]
        near = [name for name in names if loose(name) == loose(str(sheet))]
        if exact:
            chosen = exact[0]
        elif len(near) == 1:
            chosen = near[0]
        elif str(sheet).isascii() and str(sheet).isdigit():  # as for columns: digits no name matches are a position
            return choose_sheet(workbook, int(sheet), file_name)
        else:
            raise NarratorError(f"{file_name}: no sheet named '{shown_name(sheet)}'; sheets are: {listed}")
    if not hasattr(workbook[chosen], "iter_rows"):
        raise NarratorError(f"{file_name}: sheet '{shown_name(chosen)}' is a chart, not a table of cells")
    return chosen


def _blank(cell: object) -> bool:
    return cell is None or (isinstance(cell, str) and not cell.strip())


def sheet_columns(workbook, sheet_name: str, choose: Callable[[list[str]], Sequence[int]], file_name: str,
                  limit: int | None = None, dropped: list[int] | None = None
                  ) -> tuple[list[str], list[int], list[list[object]]]:
    """(headers, chosen indices, the chosen columns' data cells) of one sheet, read to its real end.

    ``choose`` gets the header texts and returns the 0-based indices to keep; ``limit``
    stops after that many data rows. Trailing fully empty rows are dropped; ``dropped``, when
    given, receives how many (rows that look empty may hold formulas never calculated).
    """
    worksheet = workbook[sheet_name]
    stored_width = getattr(worksheet, "max_column", None) or 0
    if hasattr(worksheet, "reset_dimensions"):
        worksheet.reset_dimensions()  # the stored size may be stale: read to the real end
    rows = worksheet.iter_rows(values_only=True)
    first = next(rows, None)
    if first is None:
        raise NarratorError(f"{file_name}: sheet '{shown_name(sheet_name)}' is empty")
    # The header row is as wide as the stored size says (a merged title cell holds one cell), or wider.
    first = tuple(first) + (None,) * max(0, min(stored_width, MAX_COLUMNS) - len(first))
    headers = [header_text(cell) for cell in first]
    try:
        indices = list(choose(headers))
    except NarratorError:
        # A blank first row may start an empty sheet: say that, rather than that no column matched.
        if any(not _blank(cell) for cell in first) or any(not all(_blank(cell) for cell in row) for row in rows):
            raise
        raise NarratorError(f"{file_name}: sheet '{shown_name(sheet_name)}' is empty") from None
    columns: list[list[object]] = [[] for _ in indices]
    last_filled = -1
    count = 0
    for row in rows:
        if limit is not None and count >= limit:
            break
        for column, index in zip(columns, indices, strict=True):
            column.append(row[index] if index < len(row) else None)
        if not all(_blank(cell) for cell in row):
            last_filled = count
        count += 1
    if last_filled + 1 < count:
        columns = [column[: last_filled + 1] for column in columns]
    if dropped is not None:
        dropped.append(count - (last_filled + 1))
    if last_filled < 0 and all(_blank(cell) for cell in first):
        raise NarratorError(f"{file_name}: sheet '{shown_name(sheet_name)}' is empty")
    return headers, indices, columns


def header_text(cell: object) -> str:
    """A typed cell as text: numbers without a spurious ".0", dates in ISO 8601, blank as ""."""
    if cell is None:
        return ""
    if isinstance(cell, float | int) and not isinstance(cell, bool):
        return format_number(cell)
    if isinstance(cell, _dt.datetime | _dt.date | _dt.time):
        return cell.isoformat()
    return str(cell)


def excel_cells(raw: Sequence[object], rules: CellRules, formulas: dict[int, str]) -> Cells:
    """Typed Excel cells: numbers as they are, text parsed, other types non-numeric.

    ``formulas`` maps positions of blank-looking cells to the text of a formula
    that has no saved result; those count as non-numeric, not missing.
    """
    size = len(raw)
    values = np.full(size, np.nan)
    status = np.full(size, CELL_NON_NUMERIC, dtype=np.int8)
    decimals = np.full(size, -1, dtype=np.int8)
    text_at, texts = [], []
    for position, cell in enumerate(raw):
        if cell is None:
            if position not in formulas:
                status[position] = CELL_MISSING
        elif isinstance(cell, bool):
            continue  # TRUE/FALSE are not measurements
        elif isinstance(cell, int | float):
            values[position] = float(cell)
            status[position] = CELL_OK
        elif isinstance(cell, str):
            text_at.append(position)
            texts.append(cell)
        # datetimes, dates, times and durations stay non-numeric
    percent_cells, currencies, ambiguous = 0, frozenset(), np.zeros(0, dtype=np.int64)
    other_convention = None
    if texts:
        parsed = classify_texts(_arrow_texts(texts), rules)
        where = np.asarray(text_at, dtype=np.int64)
        values[where] = parsed.values
        status[where] = parsed.status
        decimals[where] = parsed.decimals
        percent_cells, currencies = parsed.percent_cells, parsed.currencies
        ambiguous = where[parsed.ambiguous] if parsed.ambiguous is not None else ambiguous
        if parsed.other_convention is not None:
            other_convention = where[parsed.other_convention]

    def display(position: int) -> str:
        if position in formulas:
            return printable(f"{formulas[position]} (formula without a saved result)")
        return printable(raw[position])

    return Cells(values, status, decimals, display, percent_cells, currencies, ambiguous,
                 other_convention=other_convention)


def unsaved_formulas(path: Path, sheet_name: str, index: int, blank_rows: set[int]) -> dict[int, str]:
    """Positions (data-row based) of blank-looking cells that are formulas never calculated."""
    workbook = open_workbook(path, data_only=False)
    try:
        worksheet = workbook[sheet_name]
        if hasattr(worksheet, "reset_dimensions"):
            worksheet.reset_dimensions()
        found = {}
        for position, row in enumerate(worksheet.iter_rows(min_row=2, max_col=index + 1, values_only=True)):
            if position in blank_rows and index < len(row):
                cell = row[index]
                text = getattr(cell, "text", cell)  # ArrayFormula keeps its text in .text
                if isinstance(text, str) and text.startswith("="):
                    found[position] = text
        return found
    finally:
        workbook.close()

