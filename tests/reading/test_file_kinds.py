"""The text-file reader (narrator.reading.text_files) gives the cells pandas' C parser gives.

pandas' C parser is the reference library here: every awkward layout below is
read by narrator's reader (pyarrow's CSV reader, block by block, one column
kept at a time) and by pandas on the whole decoded text, with narrator's
documented rules applied on top of pandas' cells (absent cells of short rows
are empty, fully blank rows at the very end are not data rows, a short row
written with another delimiter is refused). Headers, cells and the row count
must agree, or both must refuse the file.
"""

from __future__ import annotations

import csv
import io
import random

import pytest

from narrator.errors import NarratorError
from narrator.reading import text_files
from narrator.reading.columns import read_column

AWKWARD = {
    "plain": b"x\n1.5\n2\n3.25\n",
    "no final newline": b"x\n1\n2",
    "crlf": b"x\r\n1\r\n2\r\n",
    "cr only": b"x\r1\r2\r",
    "mixed endings": b"x\n1\r\n2\r3\n",
    "blank lines inside, one column": b"x\n1\n\n2\n\n\n3\n",
    "blank lines at the end": b"x\n1\n2\n\n\n",
    "spaces-only lines": b"x\n1\n   \n2\n \t \n",
    "two columns": b"id,x\na,1\nb,2\n",
    "two columns, empty cells": b"id,x\n,1\nb,\n,\n",
    "trailing delimiter": b"id,x,\na,1,\nb,2,\n",
    "blank line in two columns": b"id,x\na,1\n\nb,2\n",
    "short line": b"id,x,y\na,1\nb,2,3\n",
    "semicolons": b"id;x\na;1,5\nb;2,25\n",
    "tabs": b"id\tx\na\t1\nb\t2\n",
    "header only": b"x\n",
    "blank header cell": b",x\n1,2\n3,4\n",
    "unicode": "wait (días)\n1\u00a0234\n\u221212\n\u20ac 5\n".encode(),
    "utf-8 byte-order mark": b"\xef\xbb\xbfx\n1\n2\n",
    "utf-16": "x\n1\n2\n".encode("utf-16"),
    "cp1252": "x\n\u20ac12\n3\n".encode("cp1252"),
    "control characters": b"x\n1\x0b2\n\x0c3\n4\x1c\n\x1e5\n",
    "end-of-file character": b"x\n1\n\x1a\n2\n",
    "next-line character": "x\n1\u0085\n2\n".encode(),
    "quoted": b'id,x\n"a,b",1\n"c""d",2\n',
    "quoted line break": b'id,x\n"a\nb",1\nc,2\n',
    "malformed quote": b'x\n12"5\n"7"8\n',
    "only blank data rows": b"x\n\n\n",
    "blank rows then data": b"id,x\n,\n,\na,1\n",
}


def reference(content: bytes, file_format: str = "csv"):
    """(headers, columns) by pandas' C parser with narrator's documented rules; or "error"."""
    import pandas as pd

    codec, _ = text_files.detect_encoding(content[: text_files.DETECTION_BYTES], None, "data.csv")
    text = content.decode(codec).removeprefix("\ufeff")
    header_line = text.replace("\r\n", "\n").replace("\r", "\n").split("\n", 1)[0]
    delimiter = text_files.choose_delimiter(header_line, file_format)
    try:
        frame = pd.read_csv(io.StringIO(text), sep=delimiter, header=None, dtype=str, keep_default_na=False,
                            na_values=[], skip_blank_lines=False, engine="c")
    except pd.errors.ParserError:
        return "error"
    rows = frame.fillna("").to_numpy().tolist()
    headers, data = rows[0], rows[1:]
    width = len(headers)
    if '"' not in text:
        lines = text.replace("\r\n", "\n").replace("\r", "\n").split("\n")[1:]
        for line in lines:
            fields = line.split(delimiter)
            others = [mark for mark in (",", ";", "\t") if mark != delimiter]
            if width > 1 and len(fields) < width and line and any(len(line.split(mark)) == width for mark in others):
                return "error"
    while data and all(not cell.strip() for cell in data[-1]):
        data.pop()
    return headers, [[row[k] for row in data] for k in range(width)]


def narrator_reads(path):
    try:
        layout = text_files.text_layout(path, "csv")
        blocks = list(text_files.text_columns(layout, range(len(layout.headers))))
    except NarratorError:
        return "error"
    columns = [[cell for block in blocks for cell in block[k].to_pylist()] for k in range(len(layout.headers))]
    return list(layout.headers), columns


@pytest.fixture(params=["whole", "streamed"])
def read_path(request, monkeypatch):
    """Both ways of reading a file on several threads: parsed whole (files up to
    WHOLE_READ_BYTES) and streamed block by block (larger files; here every file)."""
    if request.param == "streamed":
        monkeypatch.setattr(text_files, "WHOLE_READ_BYTES", -1)
    return request.param


@pytest.mark.parametrize("label", sorted(AWKWARD))
def test_reader_gives_the_same_cells_as_pandas(tmp_path, label, read_path):
    path = tmp_path / "data.csv"
    path.write_bytes(AWKWARD[label])
    assert narrator_reads(path) == reference(AWKWARD[label])


def test_reader_matches_pandas_on_random_texts(tmp_path, read_path):
    # Short random texts over the characters that matter to line and field splitting; fixed seed.
    generator = random.Random(20261201)
    alphabet = ["1", "2", ".", ",", ";", "\t", " ", "\r", "\n", "\n", "-", "a", "\x0b", "\x1c", "\u0085", "\u00a0"]
    read = 0
    for case in range(300):
        text = "x" + generator.choice(["", ",y", ";y", "\ty"]) + "\n"
        text += "".join(generator.choice(alphabet) for _ in range(generator.randint(0, 24)))
        path = tmp_path / f"case{case}.csv"
        path.write_bytes(text.encode())
        expected = reference(text.encode())
        assert narrator_reads(path) == expected, repr(text)
        read += expected != "error"
    assert read > 150  # most cases are read, so the comparison covers cells, not only refusals


def test_blocks_and_short_rows_across_block_edges(tmp_path, monkeypatch, read_path):
    # Small blocks: short rows, blank rows and a quoted line break fall on block edges (generated data).
    monkeypatch.setattr(text_files, "BLOCK_BYTES", 64)
    lines = ["id,x,y"]
    for k in range(400):
        lines.append({0: f"a{k}", 1: "", 2: f"b{k},{k}", 3: f'"q\n{k}",{k},1'}.get(k % 7, f"r{k},{k},{k % 3}"))
    content = ("\n".join(lines) + "\n\n\n").encode()
    path = tmp_path / "data.csv"
    path.write_bytes(content)
    assert narrator_reads(path) == reference(content)


def test_a_row_with_another_delimiter_is_refused_with_its_row(tmp_path):
    path = tmp_path / "data.csv"
    path.write_bytes(b"site,days\nA,1\nB;2\nC,3\n")
    with pytest.raises(NarratorError, match=r"data\.csv: row 3 separates its fields with semicolons but the header "
                                            r"with commas"):
        read_column(path, "days")


def test_a_decimal_comma_short_row_is_not_taken_for_another_delimiter(tmp_path):
    path = tmp_path / "data.csv"
    path.write_bytes(b"days;site\n1,5;A\n2,5\n")
    sample = read_column(path, "days", decimal_comma=True)
    assert sample.values.tolist() == [1.5, 2.5]


def test_an_unclosed_quote_is_refused(tmp_path):
    path = tmp_path / "data.csv"
    path.write_bytes(b'days,site\n1,A\n2,"B\n3,C\n4,D\n')
    with pytest.raises(NarratorError, match=r"data\.csv: row 3 opens a quote that is never closed"):
        read_column(path, "days")


def test_quoted_cells_match_the_csv_module(tmp_path):
    # Python's csv module (RFC 4180 quoting) as a second reference for quoted cells.
    content = 'id,x\n"a ""1""",1\n"b,2",2\n"c\r\n3",3\n'
    path = tmp_path / "data.csv"
    path.write_bytes(content.encode())
    rows = list(csv.reader(io.StringIO(content, newline="")))
    headers, columns = narrator_reads(path)
    assert headers == rows[0]
    assert columns == [[row[k] for row in rows[1:]] for k in range(2)]
