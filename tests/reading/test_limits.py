"""Reading stays bounded and says why: package checks before parsing, width and length limits, memory.

Files are built in the tests (openpyxl, zipfile, plain text); values are generated with fixed seeds.
The limits are Excel's own (Microsoft, "Excel specifications and limits": 16,384 columns, 32,767
characters in a cell), checked against the constants.
"""

from __future__ import annotations

import zipfile

import numpy as np
import pyarrow as pa
import pytest

from narrator.errors import NarratorError
from narrator.reading import excel, files, text_files
from narrator.reading.columns import read_column, read_labels
from narrator.scale.sources import open_source


def test_the_limits_are_excels():
    assert files.MAX_COLUMNS == 16_384 and files.MAX_CELL_CHARACTERS == 32_767


def _workbook(path, rows):
    import openpyxl

    book = openpyxl.Workbook()
    for row in rows:
        book.active.append(row)
    book.save(path)


def test_a_workbook_that_unpacks_too_far_is_refused_before_parsing(tmp_path, monkeypatch):
    path = tmp_path / "book.xlsx"
    _workbook(path, [["hours"], *([k] for k in range(200))])
    monkeypatch.setattr(excel, "MAX_UNPACKED_BYTES", 10_000)
    with pytest.raises(NarratorError, match=r"book\.xlsx: the workbook unpacks to .*; narrator reads workbooks"):
        read_column(path, "hours")


def test_a_part_compressed_like_a_bomb_is_refused(tmp_path):
    path = tmp_path / "book.xlsx"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as package:
        package.writestr("xl/worksheets/sheet1.xml", b"0" * (8 << 20))
    with pytest.raises(NarratorError, match=r"compressed more than 100 times.*zip bomb"):
        excel.check_package(path)


def test_a_real_sheet_passes_the_package_check(tmp_path):
    # Generated values (fixed seed): real sheets are compressed 5 to 20 times.
    path = tmp_path / "book.xlsx"
    rng = np.random.default_rng(3)
    _workbook(path, [["hours", "site"], *([float(v), "north"] for v in rng.lognormal(2, 1, 30_000))])
    excel.check_package(path)
    assert read_column(path, "hours").values.size == 30_000


def test_encrypted_and_old_workbooks_are_named_for_what_they_are(tmp_path):
    path = tmp_path / "book.xlsx"
    body = bytearray(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(4088))
    path.write_bytes(bytes(body))
    with pytest.raises(NarratorError, match=r"old Excel 97-2003 workbook"):
        read_column(path, "hours")
    body[600:632] = "EncryptedPackage".encode("utf-16-le")
    path.write_bytes(bytes(body))
    with pytest.raises(NarratorError, match=r"book\.xlsx: the workbook is encrypted"):
        read_column(path, "hours")


def test_only_the_chosen_columns_of_a_sheet_are_kept(tmp_path):
    path = tmp_path / "book.xlsx"
    _workbook(path, [["a", "b", "c"], [1, "x", 3], [2, "y", 4], [None, None, None]])
    workbook = excel.open_workbook(path)
    try:
        headers, indices, columns = excel.sheet_columns(workbook, workbook.sheetnames[0], lambda _h: [2], "book.xlsx")
    finally:
        workbook.close()
    assert headers == ["a", "b", "c"] and indices == [2] and columns == [[3, 4]]


def test_sheet_digits_follow_the_column_rule(tmp_path):
    import openpyxl

    path = tmp_path / "book.xlsx"
    book = openpyxl.Workbook()
    book.active.title = "2026"
    book.active.append(["hours"])
    book.active.append([5])
    second = book.create_sheet("other")
    second.append(["hours"])
    second.append([7])
    book.save(path)
    assert read_column(path, "hours", sheet="2026").values.tolist() == [5.0]  # a name that is a number wins
    assert read_column(path, "hours", sheet="2").values.tolist() == [7.0]  # digits no name has: a position


def test_both_engines_read_the_same_header(tmp_path):
    path = tmp_path / "data.csv"
    path.write_bytes("año;días\n2023;12\n2024;15\n".encode("latin-1"))
    assert read_column(path, "días").name == "días"
    assert open_source(path, "días").column_name == "días"
    path.write_bytes("x,días\n1,2\n".encode("utf-16-be"))
    assert read_column(path, "días").values.tolist() == [2.0]
    assert open_source(path, "días").column_name == "días"


def test_the_encoding_is_decided_from_the_start_and_a_later_byte_is_an_error_with_its_row(tmp_path, monkeypatch):
    monkeypatch.setattr(text_files, "DETECTION_BYTES", 64)
    path = tmp_path / "data.csv"
    path.write_bytes(b"days\n" + b"1\n" * 100 + b"2\xe9\n")
    with pytest.raises(NarratorError, match=r"data\.csv: row 102 cannot be read as utf-8 .* --encoding cp1252"):
        read_column(path, "days")
    assert read_column(path, "days", encoding="cp1252").n_rows == 101


def test_labels_are_read_with_the_same_rules(tmp_path):
    path = tmp_path / "data.csv"
    path.write_bytes(b"site,days\nnorth,1\nsouth\n,3\n\n\n")
    assert read_labels(path, "site") == ("site", ("north", "south", None))


def test_memory_errors_from_the_reader_are_memory(tmp_path):
    layout = text_files.TextLayout(tmp_path / "data.csv", "csv", "utf-8", False, ",", ("a",), False, False)
    assert isinstance(text_files._arrow_error(layout, pa.ArrowMemoryError("malloc of size 8 failed"), [0]),
                      MemoryError)
    assert isinstance(text_files._arrow_error(layout, OSError("Cannot allocate memory"), [0]), MemoryError)
