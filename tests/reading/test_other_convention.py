"""Text cells that are numbers under the other decimal convention are counted, named and worded.

The cells are written by CLDR's number patterns through babel (de_DE writes a decimal comma, en_US a
decimal point; CLDR 46, as babel ships it), so the test does not depend on how narrator writes numbers.
A cell that neither convention reads ("pending") is never counted; a cell both read differently ("1,234")
stays with the ambiguous-grouping rule and is read under the declared convention.
"""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from babel.numbers import format_decimal, get_decimal_symbol
from claims.checker import Raw, check_claim
from helpers.agreement import differences

from narrator.engine.describe import describe
from narrator.phrasing import narrate
from narrator.reading.columns import read_column
from narrator.scale import describe_source, open_source

VALUES = [2.5, 3.75, 1.5, 4.25, 6.5, 7.5, 2.25, 8.5]


def _cells(locale: str) -> list[str]:
    return [format_decimal(value, format="0.0#", locale=locale) for value in VALUES]


def test_cldr_marks_are_the_ones_the_test_assumes():
    assert get_decimal_symbol("de_DE") == "," and get_decimal_symbol("en_US") == "."


def test_decimal_comma_cells_read_with_a_point_are_counted(tmp_path):
    cells = _cells("de_DE")  # "2,5", "3,75", ...
    path = tmp_path / "litres.csv"
    path.write_text("litres\n" + "\n".join([*cells, "4", "5", "pending", '"1,234"']) + "\n", encoding="utf-8")
    sample = read_column(path, "litres")
    assert sample.values.tolist() == [4.0, 5.0, 1234.0]
    assert sample.excluded("non_numeric").count == len(cells) + 1  # "pending" is text under both
    source = sample.source
    assert source["other_convention"] == len(cells)
    assert source["other_convention_rows"] == list(range(2, 2 + len(cells)))
    assert source["other_convention_texts"] == cells[:5]
    assert source["ambiguous_grouping"] == 1  # "1,234": read as 1234 under the declared point, flagged apart
    # Read again with the decimal comma, the same cells are the numbers CLDR wrote.
    again = read_column(path, "litres", decimal_comma=True)
    assert again.values[: len(cells)].tolist() == VALUES
    assert again.source["other_convention"] == 0


def test_decimal_point_cells_read_with_a_comma_are_counted(tmp_path):
    cells = _cells("en_US")
    path = tmp_path / "hours.csv"
    path.write_text("hours\n" + "\n".join([*cells, "4"]) + "\n", encoding="utf-8")
    sample = read_column(path, "hours", decimal_comma=True)
    assert sample.source["other_convention"] == len(cells)
    assert sample.source["decimal_comma"] is True
    flag = describe(sample).quality.get("other_convention")
    assert flag.count == len(cells) and flag.detail["decimal_comma"] == 1.0


def test_excel_text_cells_are_counted(tmp_path):
    openpyxl = pytest.importorskip("openpyxl")
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["amount"])
    for cell in [*_cells("de_DE")[:3], 4.0, 5.0, 6.0]:
        sheet.append([cell])
    path = tmp_path / "amounts.xlsx"
    book.save(path)
    sample = read_column(path, "amount")
    assert sample.values.tolist() == [4.0, 5.0, 6.0]
    assert sample.source["other_convention"] == 3
    assert sample.source["other_convention_rows"] == [2, 3, 4]


def test_stream_engine_counts_them_the_same(tmp_path):
    cells = (_cells("de_DE") + ["4", "n/a", "12", "3.5"]) * 40
    folder = tmp_path / "parts"
    folder.mkdir()
    for part in range(4):
        piece = cells[part * 120:(part + 1) * 120]
        pq.write_table(pa.table({"x": pa.array(piece, pa.string())}), folder / f"part-{part}.parquet")
    whole = tmp_path / "whole.parquet"
    pq.write_table(pa.table({"x": pa.array(cells, pa.string())}), whole)
    memory = describe(read_column(whole, "x"))
    streamed = describe_source(open_source(folder, "x", chunk_rows=7)).findings
    assert differences(memory, streamed) == []
    assert streamed.quality.get("other_convention").count == len(VALUES) * 40
    assert streamed.quality.get("other_convention").texts == memory.quality.get("other_convention").texts


@pytest.mark.parametrize("locale", ["en", "es", "fr"])
def test_memo_says_so_right_after_the_rows_left_out_and_the_claim_holds(tmp_path, locale):
    cells = _cells("de_DE")
    path = tmp_path / "litres.csv"
    path.write_text("litres\n" + "\n".join([*cells, "4", "5", "9", "11", "n/a"]) + "\n", encoding="utf-8")
    sample = read_column(path, "litres")
    findings = describe(sample)
    memo = narrate(findings, audience="memo", locale=locale)
    sentences = list(memo.sentences())
    kinds = [s.claims[0].kind if s.claims else None for s in sentences]
    at = next(k for k, s in enumerate(sentences) if s.claims and s.claims[0].numbers.get("code") == "other_convention")
    assert kinds[at - 1] in ("left_out",)
    text = sentences[at].text
    assert cells[0] in text  # the first text named, as the file wrote it
    mark = {"en": "decimal comma", "es": "coma decimal", "fr": "virgule décimale"}[locale]
    assert mark in text
    raw = Raw.of(sample.values, {})
    assert check_claim(sentences[at].claims[0], raw) == []


def test_no_numbers_message_names_the_setting(tmp_path):
    path = tmp_path / "semi.csv"
    path.write_text("x;y\n" + "\n".join(f"{cell};1" for cell in _cells("de_DE")) + "\n", encoding="utf-8")
    done = subprocess.run([sys.executable, "-m", "narrator", "facts", str(path), "--column", "x"],
                          capture_output=True, text=True)
    assert done.returncode != 0 and "Traceback" not in done.stderr
    assert "every one of them reads as a number written with a decimal comma" in done.stderr
    assert "--decimal-comma" in done.stderr
    assert np.isfinite(describe(read_column(path, "x", decimal_comma=True)).center.mean)
