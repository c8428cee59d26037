"""Tests for narrator.reading.columns: reading one column from real CSV, TSV, xlsx and Parquet files.

Outside references used here:
- babel.numbers.format_decimal, which formats numbers from the Unicode CLDR
  locale data (en_US 1,234.5; de_DE 1.234,5; fr_FR 1 234,5 with U+202F;
  nb_NO 1 234,5 with U+00A0; en_IN 12,34,567.5), is the reference for how people in those
  locales write numbers: what babel writes, parse_number must read back.
- FIPS 180-2, appendix B.1: SHA-256("abc") =
  ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad.
- openpyxl writes real OOXML cells (t="e" error cells, <f> formulas without a
  cached value); pyarrow writes real Parquet logical types (decimal128, int64
  with nulls, dictionary strings).
Invented data only: repair-shop turnaround hours, household water use in litres.
"""

from __future__ import annotations

import datetime
import decimal
import hashlib
import math
import os
import re
import zipfile

import numpy as np
import openpyxl
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from babel.numbers import format_decimal
from hypothesis import given, settings
from hypothesis import strategies as st

from narrator.errors import NarratorError
from narrator.reading.cells import (
    EXCLUSION_REASONS,
    MISSING_TOKENS,
    _parse_texts,
    _plain_column,
    cell_rules,
    classify_texts,
    parse_number,
)
from narrator.reading.columns import list_numeric_columns, read_column
from narrator.reading.files import SUPPORTED_FORMATS, file_sha256

# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------


def write_text(folder, name: str, text: str, encoding: str = "utf-8"):
    path = folder / name
    path.write_bytes(text.encode(encoding))
    return path


def write_xlsx(folder, name: str, sheets: dict[str, list[list[object]]]):
    workbook = openpyxl.Workbook()
    workbook.remove(workbook.active)
    for title, rows in sheets.items():
        sheet = workbook.create_sheet(title)
        for row in rows:
            sheet.append(row)
    path = folder / name
    workbook.save(path)
    return path


def reasons(sample) -> dict[str, int]:
    return {exclusion.reason: exclusion.count for exclusion in sample.exclusions}


# ---------------------------------------------------------------------------
# parse_number: the cell grammar
# ---------------------------------------------------------------------------

POINT_CASES = [
    ("12", 12.0),
    ("  12.5  ", 12.5),
    ("+7", 7.0),
    ("-7", -7.0),
    ("\u22127.5", -7.5),  # Unicode minus sign
    ("(123)", -123.0),  # accounting negative
    ("(1,234.50)", -1234.5),
    ("1,234", 1234.0),
    ("1,234,567", 1234567.0),
    ("1,234,567.25", 1234567.25),
    ("12,34,567.5", 1234567.5),  # Indian grouping, CLDR en_IN
    ("1 234.5", 1234.5),
    ("1\u00a0234.5", 1234.5),  # no-break space
    ("1\u202f234.5", 1234.5),  # narrow no-break space
    ("1'234.5", 1234.5),
    ("1\u2019234.5", 1234.5),  # right single quotation mark, CLDR de_CH
    ("1.5e3", 1500.0),
    ("1.5E-3", 0.0015),
    ("2e+2", 200.0),
    (".5", 0.5),
    ("5.", 5.0),
    ("007", 7.0),
    ("$12", 12.0),
    ("-$1,200.50", -1200.5),
    ("$-3", -3.0),
    ("($45)", -45.0),
    ("US$ 7", 7.0),
    ("\u20ac 12.5", 12.5),
    ("12.5 \u20ac", 12.5),
    ("\u00a33", 3.0),
    ("\u00a5100", 100.0),
    ("USD 12", 12.0),
    ("12 EUR", 12.0),
    ("12EUR", 12.0),
    ("12%", 12.0),
    ("12.5 %", 12.5),
    ("(12%)", -12.0),
    ("0", 0.0),
]

POINT_REFUSED = [
    "1,23",  # not a valid grouping: refuse rather than guess 1.23 or 123
    "1,2345",
    "12,3456,789",
    "1.234,5",  # mixed separators that do not fit the decimal point
    "1,234.5.6",
    "1 234,5",
    "1,234 567",  # two kinds of group separator
    "0,123",  # a leading 0 group is no grouping: a decimal comma read the wrong way
    ",5",
    "1,5",
    "1,234e3",  # grouping with an exponent
    "ABC 12",  # not an ISO 4217 code
    "$12 EUR",  # two currency markers
    "$12%",  # currency and percent
    "(-5)",  # two minus signs
    "--5",
    "5-",
    "1_000",  # Python's float() accepts it; people do not write it
    "0x10",
    "\u0661\u0662",  # Arabic-Indic digits: Python's float() accepts them, we do not guess
    "12 days",
    "abc",
    "e5",
    "1e",
    ".",
    "",
    "   ",
    "%",
    "$",
    "NA",
    "nan",
    "NaN",
]

COMMA_CASES = [
    ("12,5", 12.5),
    ("1.234", 1234.0),
    ("1.234.567,5", 1234567.5),
    ("1 234,5", 1234.5),
    ("1\u202f234,5", 1234.5),  # CLDR fr_FR
    ("1'234,5", 1234.5),  # CLDR fr_CH
    ("-1.234,5", -1234.5),
    ("1,5e3", 1500.0),
    (",5", 0.5),
    ("12,50 \u20ac", 12.5),
    ("(1.000,00)", -1000.0),
    ("12,5 %", 12.5),
    ("1234", 1234.0),
]

COMMA_REFUSED = ["1.5", "1.23", "1,234.5", "1.234.5", "1.5e3", "12,3,4", "0.123", "1,2,3"]


@pytest.mark.parametrize(("text", "expected"), POINT_CASES)
def test_parse_number_decimal_point(text, expected):
    assert parse_number(text) == expected


@pytest.mark.parametrize("text", POINT_REFUSED)
def test_parse_number_refuses_under_decimal_point(text):
    assert parse_number(text) is None


@pytest.mark.parametrize(("text", "expected"), COMMA_CASES)
def test_parse_number_decimal_comma(text, expected):
    assert parse_number(text, decimal_comma=True) == expected


@pytest.mark.parametrize("text", COMMA_REFUSED)
def test_parse_number_refuses_under_decimal_comma(text):
    assert parse_number(text, decimal_comma=True) is None


@pytest.mark.parametrize("text", ["inf", "-inf", "+Infinity", "\u221e", "1e400", "-1e400", "$inf"])
def test_parse_number_infinities_are_returned_for_counting(text):
    value = parse_number(text)
    assert value is not None and math.isinf(value)
    assert (value < 0) == text.startswith("-")


def test_parse_number_negative_zero_is_zero():
    value = parse_number("(0)")
    assert value == 0.0 and math.copysign(1.0, value) == 1.0


# CLDR locale formats through babel: (locale, decimal_comma). With and without
# group separators; babel's default decimal pattern keeps 3 fraction digits,
# so the value read back equals the float within that rounding.
BABEL_LOCALES = [
    ("en_US", False),
    ("de_DE", True),
    ("fr_FR", True),  # groups with U+202F
    ("nb_NO", True),  # groups with U+00A0
    ("en_IN", False),  # 12,34,567 grouping
]
# de_CH is left out: babel 2.19 writes 1e9 as "1000000'000" (apostrophe
# grouping applied once), which is no valid grouping; the apostrophe form
# 1'234.5 is covered by the explicit cases above.


@pytest.mark.parametrize(("locale", "decimal_comma"), BABEL_LOCALES)
@settings(max_examples=200, deadline=None)
@given(
    value=st.floats(min_value=-1e12, max_value=1e12, allow_nan=False, allow_infinity=False),
    grouped=st.booleans(),
)
def test_parse_number_reads_what_cldr_writes(locale, decimal_comma, value, grouped):
    text = format_decimal(value, locale=locale, group_separator=grouped)
    parsed = parse_number(text, decimal_comma=decimal_comma)
    assert parsed is not None, text
    assert abs(parsed - value) <= 0.0005 + 4 * math.ulp(value), text


@pytest.mark.parametrize(("locale", "decimal_comma"), [("en_US", True), ("de_DE", False)])
def test_cldr_formats_are_refused_under_the_wrong_convention(locale, decimal_comma):
    # babel/CLDR: en_US writes 1,234.567 and de_DE 1.234,567; read under the
    # other convention these must be refused, never silently misread.
    text = format_decimal(1234.567, locale=locale)
    assert parse_number(text, decimal_comma=decimal_comma) is None


@settings(max_examples=500, deadline=None)
@given(text=st.text(), decimal_comma=st.booleans())
def test_parse_number_never_raises(text, decimal_comma):
    result = parse_number(text, decimal_comma=decimal_comma)
    assert result is None or (isinstance(result, float) and not math.isnan(result))


@settings(max_examples=300, deadline=None)
@given(value=st.floats(allow_nan=False, allow_infinity=False))
def test_parse_number_round_trips_python_repr(value):
    # repr gives the shortest string that reads back as the same float (plain or exponent form).
    assert parse_number(repr(value)) == value + 0.0


NUMBERISH = st.text(alphabet="0123456789.,-+eE %$()' \u00a0\u202f\u2212aN", max_size=14)


@settings(max_examples=300, deadline=None)
@given(texts=st.lists(NUMBERISH, max_size=30), decimal_comma=st.booleans())
def test_vectorized_path_agrees_with_parse_number(texts, decimal_comma):
    # read_column sends plain cells through one pyarrow cast and the rest
    # through parse_number; both paths must give the same number for a cell.
    rules = cell_rules(decimal_comma)
    cells = classify_texts(pa.array(texts, pa.large_string()), rules)
    for position, text in enumerate(texts):
        expected = parse_number(text, decimal_comma=decimal_comma)
        if text.strip().lower() in rules.missing_keys:
            assert cells.status[position] == 1
        elif expected is None:
            assert cells.status[position] == 2
            assert np.isnan(cells.values[position])
        else:
            assert cells.status[position] == 0
            assert cells.values[position] == expected


# Cells pyarrow's own number parser reads, and near misses (generated, fixed by hypothesis' database off).
CASTABLE = st.one_of(
    st.from_regex(r"\A[+-]?[0-9]{0,6}(\.[0-9]{0,6})?([eE][+-]?[0-9]{1,3})?\Z"),
    st.sampled_from(["", "nan", "NaN", "-nan", "+nan", "nan(1)", "inf", "-Infinity", "INF", "1e400", "-0", "."]),
)


@settings(max_examples=300, deadline=None)
@given(texts=st.lists(CASTABLE, min_size=1, max_size=30), decimal_comma=st.booleans(),
       extra=st.sampled_from([(), ("-99",), ("inf",), ("nan",)]))
def test_one_cast_gives_what_the_full_rules_give(texts, decimal_comma, extra):
    # A column pyarrow reads whole is converted in one cast; values, statuses and written
    # decimals must be those of the cell-by-cell rules (narrator's own grammar).
    if decimal_comma:
        texts = [text.replace(".", ",") for text in texts]
    rules = cell_rules(decimal_comma, extra)
    array = pa.array(texts, pa.large_string())
    fast = _plain_column(array, rules)
    full = _parse_texts(array, decimal_comma, rules.missing_keys)
    if fast is None:
        return
    assert fast.status.tolist() == full.status.tolist()
    assert np.array_equal(fast.values, full.values, equal_nan=True)
    kept = full.status == 0
    assert fast.decimals[kept].tolist() == full.decimals[kept].tolist()


def test_one_cast_is_taken_on_plain_columns():
    rules = cell_rules()
    assert _plain_column(pa.array(["1", "2.50", "", "3e2"], pa.large_string()), rules) is not None
    assert _plain_column(pa.array(["1", " 2"], pa.large_string()), rules) is None  # spaces: the full rules


# ---------------------------------------------------------------------------
# CSV: values, rows, exclusions
# ---------------------------------------------------------------------------


def test_csv_values_rows_and_exclusions(tmp_path):
    # Invented: repair-shop turnaround hours, with the usual mess.
    text = (
        "ticket,hours\n"
        "A1,4.5\n"  # row 2
        "A2,\n"  # row 3 blank
        "A3,NA\n"  # row 4 missing token
        "A4,twelve\n"  # row 5
        'A5,"1,5"\n'  # row 6 decimal comma under the decimal point: refused
        "A6,-3\n"  # row 7 below valid_min
        "A7,inf\n"  # row 8
        "A8,212\n"  # row 9 above valid_max
        "A9,n/a\n"  # row 10
        "A10,8\n"  # row 11
    )
    path = write_text(tmp_path, "turnaround.csv", text)
    sample = read_column(path, "hours", valid_min=0, valid_max=200, unit="hour")
    assert sample.values.tolist() == [4.5, 8.0]
    assert sample.rows.tolist() == [2, 11]
    assert sample.n_rows == 10
    assert sample.unit == "hour" and sample.name == "hours"
    assert sample.values.dtype == np.float64 and sample.rows.dtype == np.int64
    assert reasons(sample) == {"missing": 3, "non_numeric": 2, "non_finite": 1, "impossible": 2}
    assert [e.reason for e in sample.exclusions] == list(EXCLUSION_REASONS)
    missing = sample.excluded("missing")
    assert missing.rows == (3, 4, 10)
    assert missing.examples == ("", "NA", "n/a")
    non_numeric = sample.excluded("non_numeric")
    assert non_numeric.rows == (5, 6)
    assert non_numeric.examples == ("twelve", "1,5")
    assert sample.excluded("non_finite").rows == (8,)
    impossible = sample.excluded("impossible")
    assert impossible.rows == (7, 9)
    assert impossible.examples == ("-3", "212")
    assert sample.n_missing == 3
    assert sample.valid_min == 0.0 and sample.valid_max == 200.0
    assert sample.decimals == 1


def test_csv_source_record_names_file_only_and_hashes_bytes(tmp_path):
    path = write_text(tmp_path, "water.csv", "litres\n120\n95\n")
    before = (path.read_bytes(), os.stat(path).st_mtime_ns)
    sample = read_column(path, "litres")
    source = sample.source
    assert source["file"] == "water.csv"
    assert str(tmp_path) not in repr(source)  # privacy: no folder names
    assert source["sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    assert source["format"] == "csv" and source["sheet"] is None
    assert source["column"] == "litres" and source["column_position"] == 1
    assert source["decimal_comma"] is False
    assert source["missing_tokens"] == list(MISSING_TOKENS)
    assert source["encoding"] == "utf-8" and source["encoding_guessed"] is False
    assert source["percent_signs"] is False and source["currency_symbols"] == []
    assert (path.read_bytes(), os.stat(path).st_mtime_ns) == before  # read-only


def test_csv_percent_and_currency_are_recorded(tmp_path):
    path = write_text(tmp_path, "shares.csv", "share,cost\n12%,$10\n7.5%,EUR 20\n3,\u20ac5\n")
    shares = read_column(path, "share")
    assert shares.values.tolist() == [12.0, 7.5, 3.0]
    assert shares.source["percent_signs"] is True and shares.source["percent_cells"] == 2
    cost = read_column(path, "cost")
    assert cost.values.tolist() == [10.0, 20.0, 5.0]
    assert cost.source["currency_symbols"] == ["$", "EUR", "\u20ac"]


def test_csv_ambiguous_grouping_is_recorded_not_guessed(tmp_path):
    path = write_text(tmp_path, "litres.csv", 'litres\n"1,234"\n"1,250"\n"2,5"\n17\n')
    sample = read_column(path, "litres")
    assert sample.values.tolist() == [1234.0, 1250.0, 17.0]
    assert sample.excluded("non_numeric").examples == ("2,5",)
    assert sample.source["ambiguous_grouping"] == 2
    assert sample.source["ambiguous_grouping_rows"] == [2, 3]


def test_decimals_are_counted_from_the_cell_text(tmp_path):
    # 2.50 is written with two decimals even though the float is 2.5.
    path = write_text(tmp_path, "hours.csv", "hours\n2.50\n3\n1.5e-3\n")
    assert read_column(path, "hours").decimals == 4
    path = write_text(tmp_path, "hours2.csv", "hours\n2.50\n3\n")
    assert read_column(path, "hours").decimals == 2
    path = write_text(tmp_path, "hours3.csv", "hours\n3\n4\n")
    assert read_column(path, "hours").decimals == 0


def test_user_missing_codes_match_text_and_numbers(tmp_path):
    path = write_text(tmp_path, "water.csv", "litres\n120\n-99\n-99.0\nn.a.\nN.A.\n80\n")
    sample = read_column(path, "litres", missing=["-99", "n.a."])
    assert sample.values.tolist() == [120.0, 80.0]
    assert sample.excluded("missing").count == 4
    assert sample.excluded("missing").rows == (3, 4, 5, 6)
    assert sample.source["missing_tokens"][-2:] == ["-99", "n.a."]
    numeric = read_column(path, "litres", missing=[-99])
    assert numeric.excluded("missing").count == 2
    assert numeric.excluded("non_numeric").count == 2


def test_header_only_gives_an_empty_sample(tmp_path):
    path = write_text(tmp_path, "empty_data.csv", "hours,ticket\n")
    sample = read_column(path, "hours")
    assert sample.values.size == 0 and sample.n_rows == 0 and sample.exclusions == ()


def test_blank_lines_inside_count_trailing_ones_do_not(tmp_path):
    path = write_text(tmp_path, "one.csv", "hours\n1\n\n2\n\n\n")
    sample = read_column(path, "hours")
    assert sample.n_rows == 3
    assert sample.rows.tolist() == [2, 4]
    assert sample.excluded("missing").rows == (3,)


def test_short_rows_are_missing_cells(tmp_path):
    path = write_text(tmp_path, "short.csv", "ticket,hours\nA1,3\nA2\nA3,4\n")
    sample = read_column(path, "hours")
    assert sample.values.tolist() == [3.0, 4.0]
    assert sample.excluded("missing").rows == (3,)


def test_million_rows_with_a_few_bad_cells(tmp_path):
    # Performance shape only (no timing assertion): the common case takes the
    # vectorized path; the bad cells are still found with their rows.
    rng = np.random.default_rng(20240517)  # fixed seed
    values = np.round(rng.gamma(2.0, 3.0, size=1_000_000), 2)
    lines = [f"{v:.2f}" for v in values]
    bad = {17: "n/a", 123_456: "12 hours", 500_000: "", 999_998: "1,5"}
    for position, text in bad.items():
        lines[position] = text
    lines[42] = "1,234.50"  # grouped: slow path, still a number
    path = write_text(tmp_path, "big.csv", "hours\n" + "\n".join(lines) + "\n")
    sample = read_column(path, "hours")
    assert sample.n_rows == 1_000_000
    assert sample.values.size == 1_000_000 - 4
    assert reasons(sample) == {"missing": 2, "non_numeric": 2}
    assert sample.excluded("missing").rows == (19, 500_002)
    assert sample.excluded("non_numeric").rows == (123_458, 1_000_000)
    assert sample.values[sample.rows == 44].tolist() == [1234.5]
    assert sample.decimals == 2


# ---------------------------------------------------------------------------
# CSV: delimiters and encodings
# ---------------------------------------------------------------------------


def test_semicolon_delimiter_with_decimal_comma(tmp_path):
    path = write_text(tmp_path, "wasser.csv", "haushalt;liter\nH1;120,5\nH2;1.234,5\nH3;99\n")
    sample = read_column(path, "liter", decimal_comma=True)
    assert sample.values.tolist() == [120.5, 1234.5, 99.0]
    assert sample.source["delimiter"] == ";" and sample.source["decimal_comma"] is True


def test_tab_in_a_csv_header_is_used(tmp_path):
    path = write_text(tmp_path, "tabbed.csv", "ticket\thours\nA1\t3.5\n")
    assert read_column(path, "hours").values.tolist() == [3.5]


def test_tsv_file(tmp_path):
    path = write_text(tmp_path, "hours.tsv", "ticket\thours\nA1\t1,234.5\nA2\t2\n")
    sample = read_column(path, 2)
    assert sample.values.tolist() == [1234.5, 2.0]
    assert sample.source["format"] == "tsv" and sample.source["delimiter"] == "\t"


def test_one_column_file_keeps_unquoted_decimal_commas(tmp_path):
    path = write_text(tmp_path, "liter.csv", "liter\n1,5\n2,25\n")
    sample = read_column(path, "liter", decimal_comma=True)
    assert sample.values.tolist() == [1.5, 2.25]
    assert sample.source["delimiter"] is None


def test_utf8_byte_order_mark(tmp_path):
    path = tmp_path / "bom.csv"
    path.write_bytes(b"\xef\xbb\xbfhours,ticket\n3,A1\n")
    sample = read_column(path, "hours")  # exact match: the mark is not part of the header
    assert sample.values.tolist() == [3.0]
    assert sample.source["encoding"] == "utf-8-sig"


def test_utf16_with_byte_order_mark(tmp_path):
    path = tmp_path / "unicode_text.tsv"
    path.write_bytes("stunden\tk\u00fcrzel\n3,5\tA\n".encode("utf-16"))
    sample = read_column(path, "stunden", decimal_comma=True)
    assert sample.values.tolist() == [3.5]


def test_latin1_file_falls_back_and_says_so(tmp_path):
    path = write_text(tmp_path, "temp.csv", "Temp\u00e9rature,poste\n21,A\n", encoding="latin-1")
    sample = read_column(path, "Temp\u00e9rature")
    assert sample.values.tolist() == [21.0]
    assert sample.source["encoding"] == "cp1252" and sample.source["encoding_guessed"] is True
    declared = read_column(path, "Temp\u00e9rature", encoding="latin-1")
    assert declared.source["encoding"] == "latin-1" and declared.source["encoding_guessed"] is False


def test_declared_encoding_that_does_not_fit_names_the_line(tmp_path):
    path = tmp_path / "bad.csv"
    path.write_bytes(b"hours\n1\n\xff\n")
    with pytest.raises(NarratorError, match=r"bad\.csv: line 3 cannot be read as ascii"):
        read_column(path, "hours", encoding="ascii")


def test_ragged_rows_name_file_and_line(tmp_path):
    path = write_text(tmp_path, "ragged.csv", "ticket,hours\nA1,3\nA2,1,5\n")
    with pytest.raises(NarratorError, match=r"ragged\.csv: row 3 has 3 fields but the header has 2"):
        read_column(path, "hours")


# ---------------------------------------------------------------------------
# Column selection
# ---------------------------------------------------------------------------


@pytest.fixture
def three_columns(tmp_path):
    return write_text(tmp_path, "shop.csv", "Ticket, Turnaround  Hours,cost\nA1,3,10\nA2,4,12\n")


def test_column_loose_match_and_position(three_columns):
    assert read_column(three_columns, "turnaround hours").values.tolist() == [3.0, 4.0]
    assert read_column(three_columns, " Turnaround  Hours").source["column"] == " Turnaround  Hours"
    assert read_column(three_columns, 3).values.tolist() == [10.0, 12.0]


def test_unknown_column_lists_columns_and_suggests(three_columns):
    with pytest.raises(NarratorError) as caught:
        read_column(three_columns, "cots")
    message = str(caught.value)
    assert message.startswith(
        "shop.csv: no column named 'cots'; columns are: Ticket,  Turnaround  Hours, cost"
    )
    assert "did you mean 'cost'?" in message
    assert str(three_columns.parent) not in message


@pytest.mark.parametrize("position", [0, 4, -1])
def test_column_position_out_of_range(three_columns, position):
    expected = rf"shop\.csv: there is no column {position}; the file has 3 columns"
    with pytest.raises(NarratorError, match=expected):
        read_column(three_columns, position)


def test_duplicate_headers(tmp_path):
    path = write_text(tmp_path, "dup.csv", "hours,hours,cost\n1,2,3\n")
    with pytest.raises(NarratorError, match=r"dup\.csv: 2 columns are named 'hours' \(columns 1, 2\)"):
        read_column(path, "hours")
    assert read_column(path, "cost").values.tolist() == [3.0]  # unambiguous selection is fine
    assert read_column(path, 2).values.tolist() == [2.0]
    loose = write_text(tmp_path, "loose.csv", "Hours,HOURS\n1,2\n")
    with pytest.raises(NarratorError, match="several columns match 'hours'"):
        read_column(loose, "hours")


def test_bad_column_argument(three_columns):
    with pytest.raises(NarratorError, match="choose a column"):
        read_column(three_columns, True)


# ---------------------------------------------------------------------------
# File errors
# ---------------------------------------------------------------------------


def test_file_not_found_names_file_not_folder(tmp_path):
    with pytest.raises(NarratorError) as caught:
        read_column(tmp_path / "nowhere.csv", "hours")
    assert str(caught.value) == "nowhere.csv: file not found"


def test_unknown_extension_lists_supported(tmp_path):
    path = write_text(tmp_path, "hours.json", "[]")
    with pytest.raises(NarratorError) as caught:
        read_column(path, "hours")
    message = str(caught.value)
    assert message.startswith("hours.json: cannot read files of type '.json'")
    assert all(extension in message for extension in SUPPORTED_FORMATS)
    with pytest.raises(NarratorError, match=r"save it as \.xlsx"):
        read_column(write_text(tmp_path, "old.xls", "x"), "hours")


@pytest.mark.parametrize("name", ["empty.csv", "empty.xlsx", "empty.parquet"])
def test_empty_file(tmp_path, name):
    path = tmp_path / name
    path.write_bytes(b"")
    with pytest.raises(NarratorError, match=re.escape(f"{name}: the file is empty")):
        read_column(path, "hours")


def test_whitespace_only_csv_is_empty(tmp_path):
    with pytest.raises(NarratorError, match="the file is empty"):
        read_column(write_text(tmp_path, "blank.csv", "\n\n  \n"), "hours")


def test_folder_is_not_a_file(tmp_path):
    folder = tmp_path / "data.csv"
    folder.mkdir()
    with pytest.raises(NarratorError, match=r"data\.csv: is a folder"):
        read_column(folder, "hours")


def test_damaged_workbook_and_parquet(tmp_path):
    with pytest.raises(NarratorError, match=r"broken\.xlsx: not a readable \.xlsx workbook"):
        read_column(write_text(tmp_path, "broken.xlsx", "not a zip"), "hours")
    with pytest.raises(NarratorError, match=r"broken\.parquet: not a readable Parquet file"):
        read_column(write_text(tmp_path, "broken.parquet", "not parquet"), "hours")


def test_sheet_only_for_excel(three_columns):
    with pytest.raises(NarratorError, match="only be chosen in an Excel workbook"):
        read_column(three_columns, "cost", sheet="Sheet1")


def test_bad_bounds(three_columns):
    with pytest.raises(NarratorError, match="valid_min .* is larger than valid_max"):
        read_column(three_columns, "cost", valid_min=5, valid_max=1)
    with pytest.raises(NarratorError, match="valid_max must be a finite number"):
        read_column(three_columns, "cost", valid_max=float("nan"))


def test_errors_are_value_errors(tmp_path):
    with pytest.raises(ValueError):
        read_column(tmp_path / "x.csv", "hours")


# ---------------------------------------------------------------------------
# Excel
# ---------------------------------------------------------------------------


def test_excel_sheet_choice(tmp_path):
    path = write_xlsx(
        tmp_path,
        "shop.xlsx",
        {"Notes": [["hours"], [99]], "Turnaround": [["ticket", "hours"], ["A1", 3.5], ["A2", 4]]},
    )
    assert read_column(path, "hours").values.tolist() == [99.0]  # first sheet by default
    sample = read_column(path, "hours", sheet="Turnaround")
    assert sample.values.tolist() == [3.5, 4.0]
    assert sample.source["sheet"] == "Turnaround" and sample.source["format"] == "xlsx"
    assert sample.source["sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    assert read_column(path, "hours", sheet=2).values.tolist() == [3.5, 4.0]
    assert read_column(path, "hours", sheet="turnaround").source["sheet"] == "Turnaround"
    expected = r"shop\.xlsx: no sheet named 'Jobs'; sheets are: 'Notes', 'Turnaround'"
    with pytest.raises(NarratorError, match=expected):
        read_column(path, "hours", sheet="Jobs")
    with pytest.raises(NarratorError, match=r"shop\.xlsx, sheet 'Turnaround': no column named 'hrs'"):
        read_column(path, "hrs", sheet="Turnaround")


def test_excel_cell_types(tmp_path):
    rows = [
        ["hours"],
        [3.5],  # row 2 number
        ["4,5"],  # row 3 text, not a number under the decimal point
        ["1,200"],  # row 4 text, grouped
        [True],  # row 5 boolean
        [datetime.date(2024, 3, 1)],  # row 6 date
        ["#N/A"],  # row 7 error cell: missing
        ["#DIV/0!"],  # row 8 error cell: non-numeric
        [None],  # row 9 blank
        ["=A2*2"],  # row 10 formula never calculated
        [7],  # row 11 integer
    ]
    path = write_xlsx(tmp_path, "types.xlsx", {"Jobs": rows})
    sheet_xml = zipfile.ZipFile(path).read("xl/worksheets/sheet1.xml").decode()
    assert '<c r="A8" t="e"><v>#DIV/0!</v>' in sheet_xml  # a real error cell, not text
    assert "<f>A2*2</f>" in sheet_xml
    sample = read_column(path, "hours")
    assert sample.values.tolist() == [3.5, 1200.0, 7.0]
    assert sample.rows.tolist() == [2, 4, 11]
    assert sample.n_rows == 10
    assert reasons(sample) == {"missing": 2, "non_numeric": 5}
    assert sample.excluded("missing").rows == (7, 9)
    non_numeric = sample.excluded("non_numeric")
    assert non_numeric.rows == (3, 5, 6, 8, 10)
    assert non_numeric.examples == (
        "4,5",
        "True",
        "2024-03-01T00:00:00",
        "#DIV/0!",
        "=A2*2 (formula without a saved result)",
    )
    assert sample.decimals == 1


def test_excel_rows_are_worksheet_rows_and_trailing_blanks_dropped(tmp_path):
    workbook = openpyxl.Workbook()
    sheet = workbook.active
    sheet["A1"] = "litres"
    sheet["A2"] = 10
    sheet["A5"] = 12  # rows 3 and 4 left empty
    sheet["B9"] = None
    path = tmp_path / "gaps.xlsx"
    workbook.save(path)
    sample = read_column(path, 1)
    assert sample.rows.tolist() == [2, 5]
    assert sample.n_rows == 4
    assert sample.excluded("missing").rows == (3, 4)


def test_excel_header_only_and_empty_sheet(tmp_path):
    path = write_xlsx(tmp_path, "few.xlsx", {"Header": [["hours"]], "Nothing": []})
    assert read_column(path, "hours").values.size == 0
    with pytest.raises(NarratorError, match=r"few\.xlsx: sheet 'Nothing' is empty"):
        read_column(path, "hours", sheet="Nothing")


# ---------------------------------------------------------------------------
# Parquet
# ---------------------------------------------------------------------------


def test_parquet_types(tmp_path):
    table = pa.table(
        {
            "count": pa.array([3, None, 5, -2], pa.int64()),
            "litres": pa.array([1.5, float("nan"), float("inf"), None], pa.float64()),
            "cost": pa.array(
                [decimal.Decimal("10.25"), decimal.Decimal("3.50"), None, decimal.Decimal("1.00")],
                pa.decimal128(10, 2),
            ),
            "typed_text": pa.array(["1,234", "n/a", "4,5", None]),
            "category": pa.array(["1", "2", "2", "x"]).dictionary_encode(),
            "flag": pa.array([True, False, None, True]),
            "when": pa.array([datetime.date(2024, 1, d) for d in (1, 2, 3, 4)]),
        }
    )
    path = tmp_path / "jobs.parquet"
    pq.write_table(table, path)
    count = read_column(path, "count", valid_min=0)
    assert count.values.tolist() == [3.0, 5.0]
    assert count.rows.tolist() == [2, 4]  # position + 2, as if a header row came first
    assert reasons(count) == {"missing": 1, "impossible": 1}
    assert count.excluded("impossible").examples == ("-2",)
    assert count.source["format"] == "parquet" and count.source["file"] == "jobs.parquet"
    litres = read_column(path, "litres")
    assert litres.values.tolist() == [1.5]
    assert reasons(litres) == {"missing": 2, "non_finite": 1}
    cost = read_column(path, "cost")
    assert cost.values.tolist() == [10.25, 3.5, 1.0]
    assert cost.decimals == 2  # the decimal type's scale
    text = read_column(path, "typed_text")
    assert text.values.tolist() == [1234.0]
    assert reasons(text) == {"missing": 2, "non_numeric": 1}
    assert text.excluded("non_numeric").examples == ("4,5",)
    category = read_column(path, "category")
    assert category.values.tolist() == [1.0, 2.0, 2.0]
    flag = read_column(path, "flag")
    assert reasons(flag) == {"missing": 1, "non_numeric": 3}
    when = read_column(path, "when")
    assert when.excluded("non_numeric").examples[0] == "2024-01-01"


def test_parquet_hides_pandas_index_and_lists_columns(tmp_path):
    import pandas as pd

    frame = pd.DataFrame({"hours": [1.0, 2.0]}, index=pd.Index([10, 20], name=None))
    path = tmp_path / "indexed.parquet"
    frame.to_parquet(path)
    assert "__index_level_0__" in pq.read_schema(path).names
    with pytest.raises(NarratorError, match=r"indexed\.parquet: no column named 'x'; columns are: hours$"):
        read_column(path, "x")
    assert read_column(path, 1).values.tolist() == [1.0, 2.0]


# ---------------------------------------------------------------------------
# list_numeric_columns and file_sha256
# ---------------------------------------------------------------------------


def test_list_numeric_columns_csv(tmp_path):
    path = write_text(
        tmp_path,
        "mixed.csv",
        "ticket,hours,cost,notes,mostly_text\nA1,3,$10,ok,1\nA2,NA,$12,late,x\nA3,4,n/a,ok,y\n",
    )
    assert list_numeric_columns(path) == ["hours", "cost"]


def test_list_numeric_columns_decimal_comma(tmp_path):
    path = write_text(tmp_path, "komma.csv", "a;b\n1,5;x\n2,5;3\n")
    assert list_numeric_columns(path) == []
    assert list_numeric_columns(path, decimal_comma=True) == ["a"]


def test_list_numeric_columns_excel_and_parquet(tmp_path):
    rows = [
        ["name", "hours", "when"],
        ["a", 1, datetime.date(2024, 1, 1)],
        ["b", "2", datetime.date(2024, 1, 2)],
    ]
    path = write_xlsx(tmp_path, "cols.xlsx", {"S": rows})
    assert list_numeric_columns(path) == ["hours"]
    table = pa.table(
        {"name": ["a", "b"], "litres": [1.5, 2.5], "text_numbers": ["1", "2"], "flag": [True, False]}
    )
    parquet_path = tmp_path / "cols.parquet"
    pq.write_table(table, parquet_path)
    assert list_numeric_columns(parquet_path) == ["litres", "text_numbers"]


def test_file_sha256_known_answer(tmp_path):
    path = tmp_path / "abc.csv"
    path.write_bytes(b"abc")
    # FIPS 180-2, appendix B.1
    assert file_sha256(path) == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    with pytest.raises(NarratorError, match="missing.csv: file not found"):
        file_sha256(tmp_path / "missing.csv")


# ---------------------------------------------------------------------------
# Odds and ends
# ---------------------------------------------------------------------------


def test_examples_are_printable_and_cut(tmp_path):
    long_text = "x" * 100
    path = write_text(tmp_path, "odd.csv", f"hours\n\u200b12\n{long_text}\n5\n")
    non_numeric = read_column(path, "hours").excluded("non_numeric")
    assert non_numeric.examples == ("\\u200b12", "x" * 39 + "\u2026")


def test_utf16_without_a_mark_is_detected_and_said_to_be_guessed(tmp_path):
    path = tmp_path / "utf16_no_bom.csv"
    for codec in ("utf-16-le", "utf-16-be"):
        path.write_bytes("hours,d\u00eda\n3,1\n4,2\n".encode(codec))
        sample = read_column(path, "d\u00eda")
        assert sample.values.tolist() == [1.0, 2.0]
        assert sample.source["encoding"] == codec and sample.source["encoding_guessed"] is True
    assert read_column(path, "hours", encoding="utf-16-be").source["encoding_guessed"] is False


def test_nul_bytes_that_are_not_utf16_are_refused(tmp_path):
    path = tmp_path / "binary.csv"
    path.write_bytes(b"hours\n3\x00\x00\x01\n")
    with pytest.raises(NarratorError, match=r"binary\.csv: holds NUL bytes.*--encoding"):
        read_column(path, "hours")


def test_numpy_numbers_are_accepted_as_arguments(three_columns):
    sample = read_column(three_columns, np.int64(3), valid_max=np.float64(11.0))
    assert sample.values.tolist() == [10.0]
    assert sample.excluded("impossible").rows == (3,)


def test_excel_numeric_missing_code(tmp_path):
    path = write_xlsx(tmp_path, "codes.xlsx", {"Water": [["litres"], [120], [-99], ["-99"], [80.5]]})
    sample = read_column(path, "litres", missing=[-99])
    assert sample.values.tolist() == [120.0, 80.5]
    assert sample.excluded("missing").rows == (3, 4)


def test_list_numeric_columns_looks_at_the_first_rows_only(tmp_path):
    # Documented behaviour: the first NUMERIC_PROBE_ROWS data rows decide.
    from narrator.reading.columns import NUMERIC_PROBE_ROWS

    lines = ["hours"] + ["3"] * NUMERIC_PROBE_ROWS + ["late"] * (2 * NUMERIC_PROBE_ROWS)
    path = write_text(tmp_path, "probe.csv", "\n".join(lines) + "\n")
    assert list_numeric_columns(path) == ["hours"]
    assert read_column(path, "hours").excluded("non_numeric").count == 2 * NUMERIC_PROBE_ROWS
