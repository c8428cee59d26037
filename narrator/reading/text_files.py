"""Text files (CSV, TSV): the encoding, the delimiter and the header, then one column read in blocks.

=============================  ================================================
Name                           What it is
=============================  ================================================
:class:`TextLayout`            how a text file is written: codec, delimiter,
                               header cells, quoting
:func:`text_layout`            the layout of a file, decided from its start
:func:`detect_encoding`        the codec of a file from its first bytes
:func:`choose_delimiter`       the delimiter from the header line
:func:`text_columns`           chosen columns as blocks of text cells
:func:`text_column_cells`      one column as classified :class:`~narrator.reading.cells.Cells`,
                               in chunks of a given number of rows or whole
:data:`ONE_COLUMN`             the delimiter of a file with a single column
=============================  ================================================

Both engines read a text file through this module, so they decide the same
codec, delimiter and header, keep the same rows and refuse the same files.

Encoding. A byte-order mark decides (UTF-8, UTF-16); otherwise the caller's
``encoding`` is used; otherwise the first :data:`DETECTION_BYTES` bytes decide:
UTF-16 without a mark when every other byte of the text is NUL, else UTF-8
when they decode as UTF-8, else cp1252, else latin-1 (the last three recorded
as guessed). A byte later in the file that the chosen codec cannot read is an
error naming its row, which suggests ``--encoding``; narrator never guesses
twice within one file.

Delimiter. ``.tsv`` and ``.tab`` files use tabs. A ``.csv`` uses a comma when
its header line holds one; otherwise a tab or a semicolon, whichever the header
line holds more of; a header line with none of the three means a one-column
file in which each line is one cell, so an unquoted ``1,5`` survives.

Rows. Cells follow RFC 4180 quoting (a double quote opens a quoted cell,
``""`` inside one is a quote, line breaks inside one are kept). Every data row
is checked: a row with more fields than the header is refused with its row
number; a row with fewer fields whose text splits into exactly the header's
number of fields at another of comma, semicolon and tab is refused as written
with another delimiter (under a declared decimal comma a comma is not taken
for a delimiter this way); any other short row has its absent cells missing.
A quote opened and never closed, which would swallow the rest of the file into
one cell, is refused with its row. Fully blank rows at the very end of the
file are not data rows.

Bounds. Only the chosen columns are kept, block by block (pyarrow's CSV
reader, :data:`BLOCK_BYTES` at a time, which is also the longest row read; a
file of up to :data:`WHOLE_READ_BYTES` is parsed whole on every core, a larger
one streamed so that memory holds one block's text at a time);
the header line is at most :data:`MAX_HEADER_BYTES`, the header at most
:data:`~narrator.reading.files.MAX_COLUMNS` wide, and a kept cell at most
:data:`~narrator.reading.files.MAX_CELL_CHARACTERS` long. Rows are numbered as
a spreadsheet numbers them: the header is row 1.
"""

from __future__ import annotations

import bisect
import codecs
import csv
import io
import mmap
import re
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from narrator.errors import NarratorError
from narrator.reading.cells import CellRules, Cells, _arrow_integers, _arrow_texts, _numpy_of, classify_texts
from narrator.reading.files import MAX_CELL_CHARACTERS, MAX_COLUMNS, shown_name

__all__ = [
    "BLOCK_BYTES",
    "DETECTION_BYTES",
    "MAX_HEADER_BYTES",
    "ONE_COLUMN",
    "WHOLE_READ_BYTES",
    "TextLayout",
    "choose_delimiter",
    "detect_encoding",
    "text_column_cells",
    "text_columns",
    "text_layout",
]

DETECTION_BYTES = 1 << 20  # the start of a file that decides its codec
MAX_HEADER_BYTES = 8 << 20  # the longest header line read
BLOCK_BYTES = 4 << 20  # bytes parsed at a time; also the longest row
WHOLE_READ_BYTES = 16 << 20  # files up to this size are parsed whole, on every core (see _arrow_batches)
# A delimiter no one types: with it each line of a one-column file is one cell.
ONE_COLUMN = "\x1f"
_DELIMITER_NAMES = {",": "commas", ";": "semicolons", "\t": "tabs", ONE_COLUMN: "no delimiter"}
_QUOTE = 0x22


@dataclass(frozen=True, slots=True)
class TextLayout:
    """How one text file is written, decided from its start (see the module notes)."""

    path: Path
    file_format: str  # "csv" or "tsv"
    encoding: str  # the codec name, as Python knows it
    encoding_guessed: bool  # the codec was a fallback guess (cp1252, latin-1, UTF-16 without a mark)
    delimiter: str  # ONE_COLUMN for a file with one column
    headers: tuple[str, ...]
    quoted: bool  # the file holds a quote character somewhere
    odd_quotes: bool  # ... an odd number of them: a quote may be left open

    @property
    def name(self) -> str:
        return shown_name(self.path.name)

    @property
    def shown_delimiter(self) -> str | None:
        """The delimiter as the provenance records it; None for a one-column file."""
        return None if self.delimiter == ONE_COLUMN else self.delimiter


def detect_encoding(head: bytes, encoding: str | None, file_name: str) -> tuple[str, bool]:
    """(codec, guessed) for a file starting with ``head`` (see the module notes).

    >>> detect_encoding(b"\\xef\\xbb\\xbfdays", None, "a.csv"), detect_encoding("d\u00edas".encode("cp1252"), None, "")
    (('utf-8-sig', False), ('cp1252', True))
    >>> detect_encoding("days".encode("utf-16-le"), None, "a.csv")
    ('utf-16-le', True)
    """
    if head.startswith(codecs.BOM_UTF8):
        return "utf-8-sig", False
    if head.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return "utf-16", False
    if encoding:
        try:
            known = codecs.lookup(encoding).name
        except LookupError:
            raise NarratorError(f"{file_name}: unknown text encoding '{shown_name(encoding, 30)}'") from None
        return ("utf-8" if known == "utf-8" else encoding.strip()), False
    if b"\x00" in head:
        sample = np.frombuffer(head[: len(head) // 2 * 2], dtype=np.uint8)
        even, odd = sample[0::2], sample[1::2]
        if odd.size and np.all(odd == 0) and np.all(even != 0):
            return "utf-16-le", True
        if even.size and np.all(even == 0) and np.all(odd != 0):
            return "utf-16-be", True
        raise NarratorError(f"{file_name}: holds NUL bytes, so it is not text narrator can read; if it is text "
                            f"in another encoding, give it with --encoding (for example --encoding utf-16)")
    for codec in ("utf-8", "cp1252"):
        try:
            codecs.getincrementaldecoder(codec)().decode(head, final=False)
        except UnicodeDecodeError:
            continue
        return codec, codec != "utf-8"
    return "latin-1", True


def choose_delimiter(header_line: str, file_format: str) -> str:
    """The delimiter of a text file from its header line (see the module notes).

    >>> [choose_delimiter(line, "csv") for line in ("a,b", "a;b", "a\\tb;c", "days")] == [",", ";", "\\t", ONE_COLUMN]
    True
    """
    if file_format == "tsv":
        return "\t"
    if "," in header_line:
        return ","
    tabs, semicolons = header_line.count("\t"), header_line.count(";")
    if tabs or semicolons:
        return "\t" if tabs >= semicolons else ";"
    return ONE_COLUMN


def _read_head(path: Path, size: int) -> bytes:
    try:
        with open(path, "rb") as handle:
            return handle.read(size)
    except OSError as exc:
        raise NarratorError(f"{shown_name(path.name)}: cannot be read ({exc.strerror or exc})") from None


def _decode_head(head: bytes, codec: str, complete: bool) -> str:
    decoder = codecs.getincrementaldecoder(codec)(errors="strict")
    try:
        return decoder.decode(head, final=complete)
    except UnicodeDecodeError as exc:
        line = head[: exc.start].count(b"\n") + 1
        raise NarratorError(f"line {line} cannot be read as {codec} (byte 0x{head[exc.start]:02x}); give the "
                            f"file's encoding with --encoding, for example --encoding cp1252") from None


def _quote_count_is_odd(path: Path) -> tuple[bool, bool]:
    """(the file holds a quote character, it holds an odd number of them), counted block by block."""
    try:
        with open(path, "rb") as handle, mmap.mmap(handle.fileno(), 0, access=mmap.ACCESS_READ) as mapped:
            if mapped.find(b'"') < 0:
                return False, False
            odd = False
            for start in range(0, len(mapped), BLOCK_BYTES):
                block = np.frombuffer(mapped[start : start + BLOCK_BYTES], dtype=np.uint8)
                odd ^= bool(np.count_nonzero(block == _QUOTE) % 2)
            return True, odd
    except (OSError, ValueError) as exc:
        raise NarratorError(f"{shown_name(path.name)}: cannot be read ({getattr(exc, 'strerror', None) or exc})"
                            ) from None


def text_layout(path: Path, file_format: str, encoding: str | None = None) -> TextLayout:
    """The layout of the text file at ``path``: codec, delimiter and header (see the module notes)."""
    name = shown_name(path.name)
    head = _read_head(path, DETECTION_BYTES)
    codec, guessed = detect_encoding(head, encoding, name)
    size = path.stat().st_size
    while True:
        try:
            text = _decode_head(head, codec, complete=len(head) >= size)
        except NarratorError as exc:
            raise NarratorError(f"{name}: {exc}") from None
        text = text.removeprefix("\ufeff")
        line_end = min((at for at in (text.find("\n"), text.find("\r")) if at >= 0), default=-1)
        if line_end >= 0 or len(head) >= size:
            break
        if len(head) >= MAX_HEADER_BYTES:
            raise NarratorError(f"{name}: the header line is longer than {MAX_HEADER_BYTES >> 20} MiB; "
                                "narrator reads header lines up to that length")
        head = _read_head(path, min(size, len(head) * 4, MAX_HEADER_BYTES))
    if not text.strip():
        raise NarratorError(f"{name}: the file is empty")
    header_line = text if line_end < 0 else text[:line_end]
    delimiter = choose_delimiter(header_line, file_format)
    if header_line.count(delimiter) >= MAX_COLUMNS:
        raise NarratorError(f"{name}: the header has {header_line.count(delimiter) + 1:,} columns; narrator reads "
                            f"files of up to {MAX_COLUMNS:,} columns (Excel's limit)")
    csv.field_size_limit(max(csv.field_size_limit(), MAX_HEADER_BYTES))  # the limits here are narrator's own
    try:
        headers = next(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, quotechar='"',
                                  strict=False))
    except (csv.Error, StopIteration) as exc:
        raise NarratorError(f"{name}: the header line cannot be read ({exc})") from None
    for position, header in enumerate(headers, 1):
        if len(header) > MAX_CELL_CHARACTERS:
            raise NarratorError(f"{name}: the header of column {position} is {len(header):,} characters long; "
                                f"narrator reads cells of up to {MAX_CELL_CHARACTERS:,} characters (Excel's limit)")
    quoted, odd = _quote_count_is_odd(path)
    return TextLayout(path=path, file_format=file_format, encoding=codec, encoding_guessed=guessed,
                      delimiter=delimiter, headers=tuple(headers), quoted=quoted, odd_quotes=odd)


# ---------------------------------------------------------------------------
# Rows, block by block
# ---------------------------------------------------------------------------


class _RowChecks:
    """pyarrow's handler for rows whose field count differs from the header's; it records, pyarrow skips.

    A short row is kept (its fields split here, as the parser would have split them) so it can
    go back into its place; a long row, or a short one written with another delimiter, is a
    problem reported by :meth:`raise_first`.
    """

    def __init__(self, layout: TextLayout, decimal_comma: bool, threaded: bool = False) -> None:
        self.layout = layout
        self.others = [mark for mark in (",", ";", "\t") if mark != layout.delimiter
                       and not (mark == "," and decimal_comma)]
        self.short: list[tuple[int, list[str]]] = []  # (data position, fields), in file order
        self.problem: str | None = None
        # Read on several threads, pyarrow does not know a row's number: the first odd row then
        # sends the reading back to one thread (see text_columns).
        self.threaded = threaded
        self.odd_row_seen = False

    def __call__(self, row) -> str:
        if self.threaded:
            self.odd_row_seen = True
            return "skip"
        if self.problem is not None:
            return "skip"
        number = row.number
        if number is None:  # pyarrow always knows it when reading serially; refuse rather than misplace
            self.problem = f"{self.layout.name}: a row has {row.actual_columns} fields but the header has " \
                           f"{row.expected_columns}"
            return "skip"
        if row.actual_columns > row.expected_columns:
            self.problem = (f"{self.layout.name}: row {number} has {row.actual_columns} fields but the header has "
                            f"{row.expected_columns} (a value with an unquoted "
                            f"'{_shown_mark(self.layout.delimiter)}' inside, such as a decimal comma?)")
            return "skip"
        fields = self._split(row.text, self.layout.delimiter)
        for mark in self.others:
            if len(self._split(row.text, mark)) == row.expected_columns:
                self.problem = (f"{self.layout.name}: row {number} separates its fields with "
                                f"{_DELIMITER_NAMES[mark]} but the header with "
                                f"{_DELIMITER_NAMES[self.layout.delimiter]}; save the file with one delimiter")
                return "skip"
        self.short.append((number - 2, fields))
        return "skip"

    @staticmethod
    def _split(text: str, delimiter: str) -> list[str]:
        try:
            return next(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, quotechar='"', strict=False),
                        [""])
        except csv.Error:
            return [text]

    def raise_first(self) -> None:
        if self.problem is not None:
            raise NarratorError(self.problem)


def _shown_mark(delimiter: str) -> str:
    return {"\t": "tab", ONE_COLUMN: "unit separator"}.get(delimiter, delimiter)


def _arrow_batches(layout: TextLayout, indices: Sequence[int], checks: _RowChecks) -> Iterator[pa.RecordBatch]:
    """pyarrow's record batches of the columns at ``indices``, as text, in file order.

    Read on several threads (``checks.threaded``), a file of up to :data:`WHOLE_READ_BYTES` is
    parsed whole by pyarrow's table reader, which spreads the blocks over the cores (its
    streaming reader parses on one thread); a larger file, or any file read on one thread,
    streams block by block, so memory holds one block's text at a time. Both take the same
    options, so they keep the same rows and cells. Opening the file may raise pyarrow's errors
    at once; later errors come from the iteration.
    """
    import pyarrow.csv as pa_csv

    names = [f"f{k}" for k in range(len(layout.headers))]
    kept = [names[k] for k in indices]
    codec = "utf8" if layout.encoding in ("utf-8", "utf-8-sig") else layout.encoding
    read_options = pa_csv.ReadOptions(column_names=names, skip_rows=1, use_threads=checks.threaded,
                                      block_size=BLOCK_BYTES, encoding=codec)
    parse_options = pa_csv.ParseOptions(delimiter=layout.delimiter, quote_char='"', double_quote=True,
                                        escape_char=False, newlines_in_values=layout.quoted,
                                        ignore_empty_lines=False, invalid_row_handler=checks)
    convert_options = pa_csv.ConvertOptions(include_columns=kept, column_types=dict.fromkeys(kept, pa.string()),
                                            strings_can_be_null=False, quoted_strings_can_be_null=False)
    if checks.threaded and layout.path.stat().st_size <= WHOLE_READ_BYTES:
        def whole() -> Iterator[pa.RecordBatch]:
            table = pa_csv.read_csv(str(layout.path), read_options=read_options, parse_options=parse_options,
                                    convert_options=convert_options)
            yield from table.combine_chunks().to_batches()
        return whole()
    try:
        reader = pa_csv.open_csv(str(layout.path), read_options=read_options, parse_options=parse_options,
                                 convert_options=convert_options)
    except (pa.ArrowException, OSError) as exc:
        raise _arrow_error(layout, exc, indices) from None

    def streamed() -> Iterator[pa.RecordBatch]:
        while True:
            try:
                batch = reader.read_next_batch()
            except StopIteration:
                return
            yield batch
    return streamed()


_OUT_OF_MEMORY = ("malloc of size", "cannot allocate memory", "out of memory", "bad_alloc")


def _arrow_error(layout: TextLayout, exc: Exception, indices: Sequence[int]) -> Exception:
    """The error to raise for pyarrow's ``exc``: memory said to be memory, every other problem naming the file."""
    text = " ".join(str(exc).split())
    if isinstance(exc, pa.ArrowMemoryError) or any(words in text.lower() for words in _OUT_OF_MEMORY):
        return MemoryError(text)
    if "straddl" in text:
        return NarratorError(f"{layout.name}: a row is longer than {BLOCK_BYTES >> 20} MiB; narrator reads rows up "
                             f"to that length (and cells of up to {MAX_CELL_CHARACTERS:,} characters)")
    if "UTF8" in text or "UTF-8" in text or "decode" in text.lower():
        return _undecodable(layout, indices)
    if isinstance(exc, OSError) and not isinstance(exc, pa.ArrowException):
        return NarratorError(f"{layout.name}: cannot be read ({exc.strerror or exc})")
    return NarratorError(f"{layout.name}: cannot be read as {layout.file_format.upper()} "
                         f"({shown_name(text, 160)})")


def _undecodable(layout: TextLayout, indices: Sequence[int]) -> NarratorError:
    """The error for a byte the codec cannot read, naming the first row where it is (found by a binary re-read)."""
    import pyarrow.csv as pa_csv

    names = [f"f{k}" for k in range(len(layout.headers))]
    kept = [names[k] for k in indices]
    row = None
    if layout.encoding in ("utf-8", "utf-8-sig"):
        try:
            reader = pa_csv.open_csv(
                str(layout.path),
                read_options=pa_csv.ReadOptions(column_names=names, skip_rows=1, use_threads=False,
                                                block_size=BLOCK_BYTES),
                parse_options=pa_csv.ParseOptions(delimiter=layout.delimiter, quote_char='"',
                                                  newlines_in_values=layout.quoted, ignore_empty_lines=False,
                                                  invalid_row_handler=lambda _row: "skip"),
                convert_options=pa_csv.ConvertOptions(include_columns=kept,
                                                      column_types=dict.fromkeys(kept, pa.binary())),
            )
            seen = 0
            for batch in reader:
                for column in batch.columns:
                    for position, cell in enumerate(column.to_pylist()):
                        try:
                            cell.decode("utf-8")
                        except UnicodeDecodeError:
                            row = seen + position + 2 if row is None else min(row, seen + position + 2)
                if row is not None:
                    break
                seen += batch.num_rows
        except (pa.ArrowException, OSError):
            row = None
    where = f"row {row}" if row is not None else "a row"
    advice = "--encoding cp1252" if layout.encoding != "cp1252" else "--encoding latin-1"
    return NarratorError(f"{layout.name}: {where} cannot be read as {layout.encoding} although the start of the "
                         f"file can; give the file's encoding with --encoding, for example {advice}")


def _last_filled(arrays: Sequence[pa.Array]) -> int:
    """Index of the last row whose kept cells are not all blank (spaces only); -1 when every row is blank.

    Looked for from the end: the last non-empty cell is nearly always filled, so one or two
    cells are checked; a long blank tail is checked whole, vectorized.
    """
    size = len(arrays[0])
    candidates = np.zeros(size, dtype=bool)
    for array in arrays:
        candidates |= _numpy_of(pc.binary_length(array)) > 0
    at = np.flatnonzero(candidates)
    for position in at[::-1][:16].tolist():
        if any(str(array[position].as_py()).strip() for array in arrays):
            return position
    if at.size <= 16:
        return -1
    filled = np.zeros(size, dtype=bool)
    for array in arrays:
        filled |= _numpy_of(pc.binary_length(pc.utf8_trim_whitespace(array))) > 0
    found = np.flatnonzero(filled)
    return int(found[-1]) if found.size else -1


_LINE_BREAK = re.compile(r"\r\n|\r|\n")


def _trailing_blank_lines(layout: TextLayout, most: int) -> int:
    """How many of the file's last lines (at most ``most``) are fully blank, every field empty; read from the end."""
    size = layout.path.stat().st_size
    tail = 1 << 16
    with open(layout.path, "rb") as handle:
        while True:
            start = max(0, size - tail)
            start -= start % 4  # whole code units of UTF-16 stay whole
            handle.seek(start)
            text = handle.read(size - start).decode(layout.encoding, errors="replace").removeprefix("\ufeff")
            lines = _LINE_BREAK.split(text)
            if lines and lines[-1] == "":
                lines.pop()  # the final line break ends the last line; it does not start another
            if start > 0:
                lines = lines[1:]  # the first line may be cut
            count = 0
            for line in reversed(lines):
                if count >= most or not all(field.strip() in ("", '""') for field in line.split(layout.delimiter)):
                    return count
                count += 1
            if start == 0:
                return count
            tail *= 4


def text_columns(layout: TextLayout, indices: Sequence[int], *, decimal_comma: bool = False,
                 max_rows: int | None = None) -> Iterator[list[pa.Array]]:
    """The columns at ``indices`` (0-based), block by block: one list of text arrays per block.

    Cells are strings; the absent cells of a short row are empty. Every row is checked as
    the module notes say, and fully blank rows at the very end are left out. ``max_rows``
    stops after that many data rows.
    """
    indices = list(indices)
    last = len(layout.headers) - 1
    read = indices if not layout.odd_quotes or last in indices else [*indices, last]
    # Several threads first; the first row with another number of fields than the header sends
    # the reading back to one thread, from the start, dropping the rows already handed over.
    checks = _RowChecks(layout, decimal_comma, threaded=True)
    batches = _arrow_batches(layout, read, checks)
    position = 0  # data position of the next row pyarrow's rows are placed from
    handed = 0  # rows already placed when the reading went back to one thread: dropped on the way
    held: list[list[pa.Array]] = []  # blank rows held back: blank rows at the very end are not data rows
    held_rows = 0
    emitted = 0
    last_cells: list[str] = []
    while True:
        try:
            batch = next(batches)
        except StopIteration:
            if checks.threaded and checks.odd_row_seen:
                batch = None
            else:
                break
        except (pa.ArrowException, OSError) as exc:
            checks.raise_first()
            raise _arrow_error(layout, exc, read) from None
        if checks.threaded and checks.odd_row_seen:
            handed, position = position, 0
            checks = _RowChecks(layout, decimal_comma)
            batches = _arrow_batches(layout, read, checks)
            continue
        checks.raise_first()
        start = position
        arrays, position = _place_short_rows([batch.column(k) for k in range(batch.num_columns)], position, checks,
                                             read)
        if position <= handed:
            continue
        if start < handed:
            arrays = [array.slice(handed - start) for array in arrays]
            start = handed
        if not len(arrays[0]):
            continue
        _check_cell_length(layout, arrays, read, start)
        last_cells = [array[len(array) - 1].as_py() for array in arrays]
        cut = _last_filled(arrays) + 1
        if cut == 0:
            held.append(arrays)
            held_rows += len(arrays[0])
            continue
        out = [_joined([*(part[k] for part in held), array.slice(0, cut)]) for k, array in enumerate(arrays)]
        held = [[array.slice(cut) for array in arrays]] if cut < len(arrays[0]) else []
        held_rows = len(arrays[0]) - cut
        out = out[: len(indices)]
        if max_rows is not None and emitted + len(out[0]) >= max_rows:
            yield [array.slice(0, max_rows - emitted) for array in out]
            return
        emitted += len(out[0])
        yield out
    checks.raise_first()
    start = position
    empty = pc.cast(_arrow_texts([]), pa.string())
    arrays, position = _place_short_rows([empty for _ in read], position, checks, read, final=True)
    if len(arrays[0]):
        _check_cell_length(layout, arrays, read, start)
        last_cells = [array[len(array) - 1].as_py() for array in arrays]
        held.append(arrays)
        held_rows += len(arrays[0])
    if layout.odd_quotes and any("\n" in cell or "\r" in cell for cell in last_cells):
        raise NarratorError(f"{layout.name}: row {position + 1} opens a quote that is never closed, so the rest of "
                            "the file would be read as one cell; close the quote or remove it")
    if held_rows:
        keep = held_rows - _trailing_blank_lines(layout, held_rows)
        if keep:
            out = [_joined([part[k] for part in held]).slice(0, keep) for k in range(len(indices))]
            if max_rows is not None:
                out = [array.slice(0, max(0, max_rows - emitted)) for array in out]
            yield out


def _joined(arrays: Sequence[pa.Array]) -> pa.Array:
    return arrays[0] if len(arrays) == 1 else pa.concat_arrays(list(arrays))


def _place_short_rows(arrays: list[pa.Array], position: int, checks: _RowChecks, read: Sequence[int],
                      final: bool = False) -> tuple[list[pa.Array], int]:
    """The block's rows with the short rows pyarrow skipped put back in their places.

    The handler has seen every row of a block before the block is handed over, so the
    short rows that belong inside it are those whose positions fall before its end once
    they are counted in.
    """
    parsed = len(arrays[0])
    if not checks.short:
        return arrays, position + parsed
    positions = [item[0] for item in checks.short]
    inside = len(positions) if final else 0
    while not final:
        count = bisect.bisect_left(positions, position + parsed + inside)
        if count == inside:
            break
        inside = count
    if not inside:
        return arrays, position + parsed
    placed, checks.short = checks.short[:inside], checks.short[inside:]
    total = parsed + inside
    is_short = np.zeros(total, dtype=bool)
    is_short[np.asarray([item[0] for item in placed], dtype=np.int64) - position] = True
    order = np.empty(total, dtype=np.int64)
    order[~is_short] = np.arange(parsed, dtype=np.int64)
    order[is_short] = parsed + np.arange(inside, dtype=np.int64)
    taken = _arrow_integers(order)
    for k, index in enumerate(read):
        extra = pc.cast(_arrow_texts([fields[index] if index < len(fields) else "" for _, fields in placed]),
                        arrays[k].type)
        arrays[k] = pc.take(pa.concat_arrays([arrays[k], extra]), taken)
    return arrays, position + total


def _check_cell_length(layout: TextLayout, arrays: Sequence[pa.Array], read: Sequence[int], start: int) -> None:
    for array, index in zip(arrays, read, strict=True):
        if pc.max(pc.binary_length(array)).as_py() <= MAX_CELL_CHARACTERS:
            continue  # no cell has more bytes than the limit has characters
        characters = _numpy_of(pc.utf8_length(array))
        over = np.flatnonzero(characters > MAX_CELL_CHARACTERS)
        if over.size:
            row = start + int(over[0]) + 2
            raise NarratorError(f"{layout.name}: row {row}, column '{shown_name(layout.headers[index])}' holds "
                                f"{int(characters[over[0]]):,} characters; narrator reads cells of up to "
                                f"{MAX_CELL_CHARACTERS:,} characters (Excel's limit)")


def text_column_cells(layout: TextLayout, index: int, rules: CellRules, *, chunk_rows: int | None = None,
                      max_rows: int | None = None) -> Iterator[Cells]:
    """The column at ``index`` classified by ``rules``: chunks of ``chunk_rows`` rows, or the whole column once.

    Whole: each block's text is let go once its cells are classified (the texts an
    exclusion may show are kept), so memory holds the column's numbers and status codes,
    not its text. In chunks: text is held only until a chunk is complete.
    """
    blocks = text_columns(layout, [index], decimal_comma=rules.decimal_comma, max_rows=max_rows)
    if chunk_rows is None:
        parts: list[Cells] = []
        for (texts,) in blocks:
            if parts:  # the block before lets its text go, keeping only the texts an exclusion shows
                parts[-1] = parts[-1].kept_examples(rules)
            parts.append(classify_texts(texts, rules))
        whole = parts[0] if len(parts) == 1 else Cells.concatenate(parts, rules)
        del parts
        pa.default_memory_pool().release_unused()  # the blocks' text goes back to the system, not only to the pool
        yield whole
        return
    pending: list[pa.Array] = []
    pending_rows = 0
    for (texts,) in blocks:
        pending.append(texts)
        pending_rows += len(texts)
        while pending_rows >= chunk_rows:
            joined = _joined([pc.cast(part, pa.large_string()) for part in pending])
            yield classify_texts(joined.slice(0, chunk_rows), rules)
            rest = joined.slice(chunk_rows)
            pending, pending_rows = ([rest], len(rest)) if len(rest) else ([], 0)
    if pending_rows:
        yield classify_texts(_joined([pc.cast(part, pa.large_string()) for part in pending]), rules)
