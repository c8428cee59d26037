"""Reading one numeric column from a file into a :class:`~narrator.reading.sample.Sample`.

============================  ==================================================
Name                          What it does
============================  ==================================================
:func:`read_column`           one column of a CSV, TSV, Excel or Parquet file
                              -> Sample, with every left-out cell accounted for
:func:`parse_number`          one cell text -> float, or None when it is not a
                              number under the declared decimal convention
:func:`list_numeric_columns`  headers of the columns that mostly hold numbers
:func:`read_labels`           one column as text labels (a grouping column)
:func:`file_sha256`           hex SHA-256 of a file, for provenance
:data:`MISSING_TOKENS`        cell texts read as "missing" (case ignored)
:data:`SUPPORTED_FORMATS`     file extension -> format name
:data:`EXCLUSION_REASONS`     the reason codes of :class:`~narrator.reading.sample.Exclusion`
============================  ==================================================

Reading rules, in the order a cell meets them:

1. Blank cells, cells holding only spaces, and :data:`MISSING_TOKENS` (plus
   the caller's ``missing`` list) are ``"missing"``. Matching ignores case and
   surrounding spaces. "NaN"/"nan" are taken as missing because that is how
   numpy- and pandas-based exports write an empty cell; the *number* NaN never
   reaches the engine. A caller's token that is itself a number (say ``-99``)
   also marks typed cells holding that number as missing.
2. Text is parsed by :func:`parse_number`; what it refuses is
   ``"non_numeric"``. Typed cells (Excel numbers, Parquet integers, floats and
   decimals) are numbers as they are; Excel booleans, dates and times, and
   Excel error values other than ``#N/A`` are ``"non_numeric"``; an Excel
   formula with no saved result is ``"non_numeric"`` too (the workbook was
   never recalculated, so there is no value to read).
3. Infinities ("inf", "∞", ``1e400``, float infinities) are ``"non_finite"``.
4. Values below ``valid_min`` or above ``valid_max`` (bounds included as
   valid) are ``"impossible"``.

Each exclusion keeps the first 10 row numbers and the first 5 distinct cell
texts (control and invisible characters escaped, cut at 40 characters).

Row numbers are the ones a spreadsheet shows: the header is row 1, the first
data row is row 2. Excel rows are the worksheet's own row numbers; Parquet
has no rows on screen, so position + 2 is used the same way. Fully empty rows
at the very end of a text file or sheet are not data rows and are not counted.

Text files: the delimiter comes from the extension (``.csv`` comma,
``.tsv``/``.tab`` tab), except that a ``.csv`` whose header line has no comma
but a semicolon or a tab uses that instead (the header line alone decides), and
a header line with none of the three means a one-column file in which each
line is one cell, so an unquoted ``1,5`` survives. A byte-order mark (UTF-8 or
UTF-16) decides the encoding; otherwise the caller's ``encoding`` is used, or
UTF-8 is tried and, failing that, cp1252 then latin-1, recorded in
``source["encoding_guessed"]``. Files are opened read-only and never changed.
A text file with no quote character and with as many fields on every line as
on the header line is split by pyarrow's CSV reader (fast); any other by
pandas' C parser, which also words the errors. Both give the same cells
(tests/reading/test_file_kinds.py).
"""

from __future__ import annotations

import datetime as _dt
import decimal as _decimal
import difflib
import functools
import hashlib
import io
import math
import numbers
import os
import re
import unicodedata
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from narrator.errors import NarratorError
from narrator.reading.sample import Exclusion, Sample, clean_label, guess_decimals

__all__ = [
    "EXCLUSION_REASONS",
    "MISSING_TOKENS",
    "SUPPORTED_FORMATS",
    "file_sha256",
    "list_numeric_columns",
    "parse_number",
    "read_column",
    "read_labels",
]

# Compared after stripping spaces and ignoring case, so "na", "n/a", "NULL",
# "none" and "NAN" are covered too. "." "-" "--" and the dashes are what people
# type into a table cell to mean "nothing here".
MISSING_TOKENS: tuple[str, ...] = (
    "",
    "NA",
    "N/A",
    "NaN",
    "NULL",
    "None",
    "missing",
    ".",
    "-",
    "--",
    "\u2013",  # en dash
    "\u2014",  # em dash
    "#N/A",
)

SUPPORTED_FORMATS: dict[str, str] = {
    ".csv": "csv",
    ".tsv": "tsv",
    ".tab": "tsv",
    ".xlsx": "xlsx",
    ".xlsm": "xlsx",
    ".parquet": "parquet",
    ".pq": "parquet",
}

EXCLUSION_REASONS: tuple[str, ...] = ("missing", "non_numeric", "non_finite", "impossible")

ROWS_KEPT = 10  # row numbers kept per exclusion reason
EXAMPLES_KEPT = 5  # distinct cell texts kept per exclusion reason
EXAMPLES_SCANNED = 10_000  # cells of one reason looked at for those texts
EXAMPLE_LENGTH = 40  # characters of one example before it is cut
NUMERIC_PROBE_ROWS = 10_000  # list_numeric_columns looks at this many data rows
MAX_DECIMALS = 6  # as narrator.reading.sample.guess_decimals

# Per-cell status codes; the order of EXCLUSION_REASONS is the order of the
# exclusions in a Sample.
_OK, _MISSING, _NON_NUMERIC, _NON_FINITE, _IMPOSSIBLE = 0, 1, 2, 3, 4
_STATUS_OF_REASON = {"missing": _MISSING, "non_numeric": _NON_NUMERIC,
                     "non_finite": _NON_FINITE, "impossible": _IMPOSSIBLE}

# ---------------------------------------------------------------------------
# Parsing one cell
# ---------------------------------------------------------------------------

_DIGITS = re.compile(r"[0-9]+")
_EXPONENT = re.compile(r"[eE]([+-]?)([0-9]+)$")
# Space-like group separators: space, no-break space (U+00A0), narrow no-break
# space (U+202F, CLDR fr_FR), thin space (U+2009). Apostrophes: ASCII and the
# right single quotation mark U+2019 (CLDR de_CH, fr_CH).
_SPACE_MARKS = " \u00a0\u202f\u2009"
_APOSTROPHE_MARKS = "'\u2019"
_INFINITY_WORDS = frozenset({"inf", "infinity", "\u221e"})


def _currency_characters() -> str:
    # Every code point in the Unicode category "Sc" (currency symbol) of the
    # Basic Multilingual Plane: $, £, ¥, €, ₹, ₩, ...
    return "".join(chr(code) for code in range(0x10000) if unicodedata.category(chr(code)) == "Sc")


def _iso_currency_codes() -> frozenset[str]:
    # ISO 4217 codes as CLDR lists them, through babel.
    from babel.numbers import list_currencies

    return frozenset(list_currencies())


_LEADING_CODE = re.compile(r"([A-Z]{3})(?![A-Za-z])\s*")
_TRAILING_CODE = re.compile(r"(?<![A-Za-z])([A-Z]{3})$")


@functools.cache
def _currency_marks() -> tuple[frozenset[str], re.Pattern[str], re.Pattern[str]]:
    """(ISO 4217 codes, leading-symbol pattern, trailing-symbol pattern), built on first use.

    Only cells that are not plain numbers need them, and the CLDR currency list costs a
    hundredth of a second to load: a column of plain numbers never pays for it.
    """
    currency_class = "[" + re.escape(_currency_characters()) + "]"
    # "US$", "CA$", "R$": up to three capitals glued to a currency symbol.
    leading = re.compile(r"([A-Z]{0,3}" + currency_class + r")\s*")
    trailing = re.compile(r"\s*(" + currency_class + r")$")
    return _iso_currency_codes(), leading, trailing


@dataclass(frozen=True, slots=True)
class _Number:
    """One cell read as a number, with what the text showed about it."""

    value: float
    decimals: int  # digits after the decimal mark, less the exponent, at least 0
    percent: bool  # a trailing % was seen
    currency: str | None  # the currency symbol or ISO 4217 code seen
    ambiguous: bool  # "1,234" / "1.234": the other decimal convention reads it differently


def _take_sign(text: str) -> tuple[str, str]:
    if text[:1] in ("+", "-"):
        return text[0], text[1:].lstrip()
    return "", text


def _take_currency(text: str) -> tuple[str | None, str, bool]:
    """Peel one currency marker off either end: (marker, rest, was_leading)."""
    iso_codes, leading_symbol, trailing_symbol = _currency_marks()
    code = _LEADING_CODE.match(text)
    if code and code.group(1) in iso_codes:
        return code.group(1), text[code.end():], True
    symbol = leading_symbol.match(text)
    if symbol:
        return symbol.group(1), text[symbol.end():], True
    symbol = trailing_symbol.search(text)
    if symbol:
        return symbol.group(1), text[: symbol.start()].rstrip(), False
    code = _TRAILING_CODE.search(text)
    if code and code.group(1) in iso_codes:
        return code.group(1), text[: code.start()].rstrip(), False
    return None, text, False


def _group_class(marks: set[str], group_mark: str) -> str | None:
    """The one family of group separators used, or None when they are mixed or not allowed."""
    for family in (group_mark, _SPACE_MARKS, _APOSTROPHE_MARKS):
        if marks <= set(family):
            return family
    return None


def _valid_grouping(groups: list[str]) -> bool:
    if any(not _DIGITS.fullmatch(group) for group in groups):
        return False
    # A leading group "0" (as in "0,123") is no thousands grouping; it is most
    # likely a decimal comma read under the wrong convention.
    if groups[0].startswith("0"):
        return False
    western = 1 <= len(groups[0]) <= 3 and all(len(group) == 3 for group in groups[1:])
    # Indian grouping (CLDR en_IN pattern #,##,##0.###): 12,34,567.
    indian = (
        len(groups) >= 3
        and 1 <= len(groups[0]) <= 2
        and all(len(group) == 2 for group in groups[1:-1])
        and len(groups[-1]) == 3
    )
    return western or indian


def _parse_body(body: str, decimal_comma: bool) -> tuple[str, int, bool] | None:
    """Digits with grouping, decimal mark and exponent -> (plain text for float(), decimals, ambiguous)."""
    decimal_mark, group_mark = (",", ".") if decimal_comma else (".", ",")
    exponent_match = _EXPONENT.search(body)
    if exponent_match:
        mantissa = body[: exponent_match.start()]
        exponent_sign, exponent_digits = exponent_match.groups()
    else:
        mantissa, exponent_sign, exponent_digits = body, "", "0"
    if mantissa.count(decimal_mark) > 1:
        return None
    integer_part, _, fraction = mantissa.partition(decimal_mark)
    if not integer_part and not fraction:
        return None
    if fraction and not _DIGITS.fullmatch(fraction):
        return None
    ambiguous = False
    if integer_part and not _DIGITS.fullmatch(integer_part):
        if exponent_match:
            return None  # grouping and an exponent together: not how anyone writes a number
        marks = {ch for ch in integer_part if not ch.isascii() or not ch.isdigit()}
        family = _group_class(marks, group_mark)
        if family is None:
            return None
        groups = re.split("[" + re.escape(family) + "]", integer_part)
        if not _valid_grouping(groups):
            return None
        # Only "1,234" (point) or "1.234" (comma) reads as another number under the other convention.
        ambiguous = family == group_mark and len(groups) == 2 and decimal_mark not in mantissa
        integer_part = "".join(groups)
    # Exponents with thousands of digits would overflow int(); they only change
    # the decimals count, which is capped anyway.
    exponent = int(exponent_digits) if len(exponent_digits) <= 6 else 10**6
    if exponent_sign == "-":
        exponent = -exponent
    decimals = max(0, len(fraction) - exponent)
    plain = f"{integer_part or '0'}.{fraction or '0'}e{exponent_sign}{exponent_digits}"
    return plain, decimals, ambiguous


def _parse_cell(text: str, decimal_comma: bool) -> _Number | None:
    """The full cell grammar (see :func:`parse_number`)."""
    rest = text.strip().replace("\u2212", "-")
    percent = False
    negative = False
    if rest.endswith("%"):
        percent, rest = True, rest[:-1].rstrip()
    if len(rest) >= 2 and rest[0] == "(" and rest[-1] == ")":
        negative, rest = True, rest[1:-1].strip()
        if rest.endswith("%") and not percent:
            percent, rest = True, rest[:-1].rstrip()
    sign, rest = _take_sign(rest)
    currency, rest, leading = _take_currency(rest)
    if currency is not None and leading and not sign:
        sign, rest = _take_sign(rest)  # "$-12", "USD -12"
    if not rest or (negative and sign) or (percent and currency is not None):
        return None
    if rest.casefold() in _INFINITY_WORDS:
        value, decimals, ambiguous = math.inf, 0, False
    else:
        parsed = _parse_body(rest, decimal_comma)
        if parsed is None:
            return None
        plain, decimals, ambiguous = parsed
        value = float(plain)
    if negative or sign == "-":
        value = -value
    return _Number(value + 0.0, decimals, percent, currency, ambiguous)


def parse_number(text: str, *, decimal_comma: bool = False) -> float | None:
    """Read one cell as people type numbers; None when it is not a number.

    Accepted: surrounding spaces; a leading ``+`` or ``-`` (also the Unicode
    minus U+2212); accounting negatives ``(123)``; one currency marker before or
    after the number (any Unicode currency symbol such as ``$ € £ ¥``, a symbol
    with up to three capitals such as ``US$``, or an ISO 4217 code known to
    CLDR such as ``USD 12`` or ``12 EUR``); a trailing ``%``, kept as written
    (``"12%"`` gives 12.0); scientific notation ``1.5e3``; ``inf``,
    ``infinity`` and ``∞`` (returned as infinities, so the caller can count
    them); and group separators in the integer part.

    The decimal convention is declared, never guessed. With the decimal point
    (``decimal_comma=False``) groups are separated by ``,``; with the decimal
    comma by ``.``; under both a space, a no-break space (U+00A0), a narrow
    no-break space (U+202F), a thin space or an apostrophe (``'`` or U+2019)
    also separate groups (CLDR number symbols for fr_FR, de_CH and others). A
    grouping must be valid: a first group of 1 to 3 digits not starting with 0,
    then groups of exactly 3 (or the Indian 12,34,567 of CLDR en_IN), one kind
    of separator only, none in the fraction, none with an exponent. So under
    the decimal point ``"1,234"`` is 1234 but ``"1,23"``, ``"1,2345"`` and
    ``"1.234,5"`` are not numbers; under the decimal comma ``"1.234"`` is 1234
    and ``"1.5"`` is not a number.

    Never raises for a str; returns None for missing tokens, NaN and anything
    else it cannot read without guessing.

    >>> parse_number("1,234.5"), parse_number("1.234,5", decimal_comma=True)
    (1234.5, 1234.5)
    >>> parse_number("(USD 1,200)"), parse_number("12 %"), parse_number("1,23")
    (-1200.0, 12.0, None)
    """
    parsed = _parse_cell(text, decimal_comma)
    return None if parsed is None else parsed.value


# ---------------------------------------------------------------------------
# Many cells at once
# ---------------------------------------------------------------------------

_PLAIN_POINT = r"^[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)$"
_PLAIN_COMMA = r"^[+-]?(?:[0-9]+(?:,[0-9]*)?|,[0-9]+)$"


@dataclass(frozen=True, slots=True)
class _Cells:
    """Every cell of one column, classified; arrays are aligned with the rows."""

    values: np.ndarray  # float64; NaN where the cell holds no number
    status: np.ndarray  # int8 status code per cell
    decimals: np.ndarray  # int16 decimals written; -1 for typed cells (guessed from the value)
    display: Callable[[int], str]  # the cell as written, for examples
    percent_cells: int = 0
    currencies: frozenset[str] = frozenset()
    ambiguous: np.ndarray | None = None  # positions of cells like "1,234": the other convention differs


def _missing_keys(extra: Iterable[object]) -> tuple[set[str], np.ndarray]:
    """Lower-cased tokens that mean missing, and the numeric ones among the caller's."""
    keys = {token.strip().lower() for token in MISSING_TOKENS}
    codes = []
    for token in extra:
        text = _token_text(token)
        keys.add(text.strip().lower())
        number = parse_number(text)
        if number is not None and math.isfinite(number):
            codes.append(number)
    return keys, np.asarray(codes, dtype=float)


def _token_text(token: object) -> str:
    if isinstance(token, numbers.Real) and not isinstance(token, bool):
        return _format_number(int(token) if isinstance(token, numbers.Integral) else float(token))
    return str(token)


# pyarrow imports pandas (a fifth of a second of start-up) the first time it converts to or from
# numpy or Python objects (pa.array, Array.to_numpy, Python scalars as arguments). Text reading needs
# neither pandas nor those conversions: these three read and build the arrow buffers directly.


def _numpy_of(array: pa.Array) -> np.ndarray:
    """A null-free boolean, integer or float64 arrow array as a numpy array (int64 for integers)."""
    if array.null_count:
        raise ValueError("an array with nulls has no plain numpy form")
    if pa.types.is_boolean(array.type):
        return _numpy_of(pc.cast(array, pa.uint8())).astype(bool)
    if pa.types.is_integer(array.type) and array.type != pa.int64():
        array = pc.cast(array, pa.int64())
    dtype = np.dtype(np.float64) if pa.types.is_floating(array.type) else np.dtype(np.int64)
    if array.type not in (pa.float64(), pa.int64()):
        raise ValueError(f"no numpy form for {array.type}")
    return np.frombuffer(array.buffers()[1], dtype=dtype, count=len(array), offset=array.offset * dtype.itemsize)


def _arrow_mask(mask: np.ndarray) -> pa.Array:
    """A numpy boolean array as an arrow boolean array (through uint8, built from its buffer)."""
    as_bytes = np.ascontiguousarray(mask, dtype=np.uint8)
    return pc.cast(pa.Array.from_buffers(pa.uint8(), as_bytes.size, [None, pa.py_buffer(as_bytes)]), pa.bool_())


def _arrow_texts(texts: Sequence[str]) -> pa.Array:
    """Python strings as an arrow large_string array, built from its offsets and UTF-8 bytes."""
    encoded = [text.encode("utf-8") for text in texts]
    offsets = np.zeros(len(encoded) + 1, dtype=np.int64)
    np.cumsum([len(item) for item in encoded], out=offsets[1:])
    return pa.Array.from_buffers(pa.large_string(), len(encoded),
                                 [None, pa.py_buffer(offsets), pa.py_buffer(b"".join(encoded))])


def _parse_texts(texts: pa.Array, decimal_comma: bool, missing_keys: set[str]) -> _Cells:
    """Classify text cells; plain numbers go through one vectorized cast, the rest cell by cell."""
    texts = pc.cast(texts, pa.large_string()) if not pa.types.is_large_string(texts.type) else texts
    size = len(texts)
    values = np.full(size, np.nan)
    status = np.full(size, _NON_NUMERIC, dtype=np.int8)
    decimals = np.zeros(size, dtype=np.int16)
    stripped = pc.utf8_trim_whitespace(texts)
    pattern = _PLAIN_COMMA if decimal_comma else _PLAIN_POINT
    matched = pc.match_substring_regex(stripped, pattern)
    # null (an absent cell) counts as not plain: Kleene "and" with "is valid" turns null into false
    plain_cells = pc.and_kleene(matched, pc.is_valid(matched))
    token_set = _arrow_texts(sorted(missing_keys))
    if any(re.fullmatch(pattern[1:-1], key) for key in missing_keys):
        # A token that looks like a plain number ("-99"): every cell is checked against the tokens.
        missing_cells = pc.or_kleene(pc.is_in(pc.utf8_lower(stripped), value_set=token_set), pc.is_null(texts))
        missing = _numpy_of(missing_cells)
        plain_cells = pc.and_kleene(plain_cells, pc.invert(missing_cells))
        plain = _numpy_of(plain_cells)
    else:
        # No token looks like a plain number, so only the other cells can be missing: check those alone.
        plain = _numpy_of(plain_cells)
        missing = np.zeros(size, dtype=bool)
        other_at = np.flatnonzero(~plain)
        if other_at.size:
            other = pc.filter(stripped, pc.invert(plain_cells))
            missing[other_at] = _numpy_of(pc.or_kleene(pc.is_in(pc.utf8_lower(other), value_set=token_set),
                                                       pc.is_null(other)))
    status[missing] = _MISSING
    plain_at = np.flatnonzero(plain)
    if plain_at.size:
        plain_texts = pc.filter(stripped, plain_cells)
        if decimal_comma:
            plain_texts = pc.replace_substring(plain_texts, ",", ".")
        # Plain cells are ASCII, so their length in bytes is their length in characters.
        point = _numpy_of(pc.find_substring(plain_texts, "."))
        length = _numpy_of(pc.binary_length(plain_texts))
        written = np.minimum(np.where(point >= 0, length - point - 1, 0), MAX_DECIMALS)
        where = slice(None) if plain_at.size == size else plain_at  # a whole column of plain numbers is common
        values[where] = _numpy_of(pc.cast(plain_texts, pa.float64()))
        decimals[where] = written
        status[where] = _OK
    percent_cells = 0
    currencies: set[str] = set()
    ambiguous: list[int] = []
    rest = ~plain & ~missing
    rest_at = np.flatnonzero(rest)
    rest_texts = pc.filter(stripped, _arrow_mask(rest)).to_pylist() if rest_at.size else []
    for position, text in zip(rest_at.tolist(), rest_texts, strict=True):
        parsed = _parse_cell(text, decimal_comma)
        if parsed is None:
            continue
        values[position] = parsed.value
        decimals[position] = min(parsed.decimals, MAX_DECIMALS)
        status[position] = _OK
        percent_cells += parsed.percent
        if parsed.currency is not None:
            currencies.add(parsed.currency)
        if parsed.ambiguous:
            ambiguous.append(position)
    return _Cells(
        values=values,
        status=status,
        decimals=decimals,
        display=lambda position: _printable(texts[position].as_py()),
        percent_cells=percent_cells,
        currencies=frozenset(currencies),
        ambiguous=np.asarray(ambiguous, dtype=np.int64),
    )


def _printable(value: object) -> str:
    """A cell as a short, safe string: control and invisible characters escaped, long text cut."""
    if value is None:
        return ""
    if isinstance(value, float | int) and not isinstance(value, bool):
        text = _format_number(value)
    elif isinstance(value, _dt.datetime | _dt.date | _dt.time):
        text = value.isoformat()
    else:
        text = str(value)
    shown = "".join(ch if ch.isprintable() else f"\\u{ord(ch):04x}" for ch in text)
    return shown if len(shown) <= EXAMPLE_LENGTH else shown[: EXAMPLE_LENGTH - 1] + "\u2026"


def _format_number(value: float | int) -> str:
    if isinstance(value, int):
        return str(value)
    if math.isfinite(value) and value == int(value) and abs(value) < 1e16:
        return str(int(value))
    return repr(float(value))


# ---------------------------------------------------------------------------
# From classified cells to a Sample
# ---------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class _Options:
    decimal_comma: bool
    missing_keys: set[str]
    missing_codes: np.ndarray
    missing_tokens: list[str]
    valid_min: float | None
    valid_max: float | None


def _exclusion(reason: str, status: np.ndarray, rows: np.ndarray, display: Callable[[int], str],
               values: np.ndarray) -> Exclusion:
    positions = np.flatnonzero(status == _STATUS_OF_REASON[reason])
    examples: list[str] = []
    for position in positions[:EXAMPLES_SCANNED].tolist():  # enough to find a few distinct texts
        shown = display(position)
        if shown not in examples:
            examples.append(shown)
            if len(examples) == EXAMPLES_KEPT:
                break
    return Exclusion(
        reason=reason,
        count=int(positions.size),
        rows=tuple(int(row) for row in rows[positions[:ROWS_KEPT]]),
        examples=tuple(examples),
        examples_complete=len(examples) < EXAMPLES_KEPT and positions.size <= EXAMPLES_SCANNED,
        values=tuple(float(v) for v in values[positions[:ROWS_KEPT]]) if reason == "impossible" else (),
    )


def _build_sample(cells: _Cells, rows: np.ndarray, name: str, unit: str | None, options: _Options,
                  source: dict, ids: np.ndarray | None = None) -> Sample:
    values = cells.values + 0.0  # a copy, and -0.0 becomes 0.0
    status = cells.status.copy()
    if options.missing_codes.size:
        status[(status == _OK) & np.isin(values, options.missing_codes)] = _MISSING
    status[(status == _OK) & ~np.isfinite(values)] = _NON_FINITE
    ok = status == _OK
    if options.valid_min is not None:
        status[ok & (values < options.valid_min)] = _IMPOSSIBLE
    if options.valid_max is not None:
        status[ok & (values > options.valid_max)] = _IMPOSSIBLE
    keep = status == _OK
    every_cell_kept = bool(keep.all())  # the common case: plain slices instead of copies through a mask
    exclusions = tuple(
        _exclusion(reason, status, rows, cells.display, values)
        for reason in EXCLUSION_REASONS
        if np.any(status == _STATUS_OF_REASON[reason])
    )
    kept_decimals = cells.decimals if every_cell_kept else cells.decimals[keep]
    written = int(kept_decimals.max()) if kept_decimals.size and kept_decimals.max() >= 0 else 0
    typed = keep & (cells.decimals < 0)
    guessed = guess_decimals(values[typed]) if typed.any() else 0
    ambiguous = cells.ambiguous if cells.ambiguous is not None else np.zeros(0, dtype=np.int64)
    ambiguous = ambiguous[keep[ambiguous]] if ambiguous.size else ambiguous
    source = {
        **source,
        # Cleaned but not cut: the appendix shows it, and it must still name the column.
        "column": clean_label(name, limit=max(len(name), 1)),
        "decimal_comma": options.decimal_comma,
        "missing_tokens": options.missing_tokens,
        "valid_min": options.valid_min,
        "valid_max": options.valid_max,
        "percent_signs": cells.percent_cells > 0,
        "percent_cells": cells.percent_cells,
        "currency_symbols": sorted(cells.currencies),
        "ambiguous_grouping": int(ambiguous.size),
        "ambiguous_grouping_rows": [int(row) for row in rows[ambiguous[:ROWS_KEPT]]],
    }
    return Sample(
        values=np.ascontiguousarray(values if every_cell_kept else values[keep], dtype=np.float64),
        rows=np.array(rows, dtype=np.int64) if every_cell_kept else np.ascontiguousarray(rows[keep], dtype=np.int64),
        name=clean_label(name) or f"column {source['column_position']}",
        unit=None if unit is None else clean_label(unit),
        n_rows=int(values.size),
        exclusions=exclusions,
        decimals=min(MAX_DECIMALS, max(written, guessed)),
        source=source,
        valid_min=options.valid_min,
        valid_max=options.valid_max,
        ids=None if ids is None else ids[keep],
    )


# ---------------------------------------------------------------------------
# Files
# ---------------------------------------------------------------------------


def _file_format(path: Path) -> str:
    file_format = SUPPORTED_FORMATS.get(path.suffix.lower())
    if file_format is None:
        known = ", ".join(SUPPORTED_FORMATS)
        hint = " (save it as .xlsx)" if path.suffix.lower() in (".xls", ".ods") else ""
        raise NarratorError(f"{path.name}: cannot read files of type '{path.suffix or '(none)'}'{hint}; "
                            f"supported: {known}")
    return file_format


def _check_file(path: Path) -> None:
    if not path.exists():
        raise NarratorError(f"{path.name}: file not found")
    if path.is_dir():
        raise NarratorError(f"{path.name}: is a folder, not a file")
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise NarratorError(f"{path.name}: cannot be read ({exc.strerror or exc})") from None
    if size == 0:
        raise NarratorError(f"{path.name}: the file is empty")


def _read_bytes(path: Path) -> bytes:
    try:
        with open(path, "rb") as handle:
            return handle.read()
    except OSError as exc:
        raise NarratorError(f"{path.name}: cannot be read ({exc.strerror or exc})") from None


def file_sha256(path: str | os.PathLike[str]) -> str:
    """Hex SHA-256 digest of a file's bytes (FIPS 180-4), read in 1 MiB blocks.

    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "empty.csv").write_bytes(b"")
    >>> file_sha256(folder / "empty.csv")[:16]
    'e3b0c44298fc1c14'
    """
    target = Path(path)
    if not target.is_file():
        raise NarratorError(f"{target.name}: file not found")
    digest = hashlib.sha256()
    try:
        with open(target, "rb") as handle:
            for block in iter(lambda: handle.read(1 << 20), b""):
                digest.update(block)
    except OSError as exc:
        raise NarratorError(f"{target.name}: cannot be read ({exc.strerror or exc})") from None
    return digest.hexdigest()


def _loose(name: str) -> str:
    return " ".join(name.split()).casefold()


def _describe_columns(headers: Sequence[str], limit: int = 20) -> str:
    shown = [header if header.strip() else f"(blank, column {k})"
             for k, header in enumerate(headers[:limit], 1)]
    more = f" and {len(headers) - limit} more" if len(headers) > limit else ""
    return ", ".join(shown) + more


def _select_column(headers: Sequence[str], column: str | int, file_name: str) -> int:
    """0-based index of the column: exact name, then ignoring case and spaces; or a 1-based position."""
    if isinstance(column, bool) or not isinstance(column, numbers.Integral | str):
        raise NarratorError(f"{file_name}: choose a column by its header text or its position (1, 2, ...), "
                            f"not {column!r}")
    if isinstance(column, numbers.Integral):
        column = int(column)
        if 1 <= column <= len(headers):
            return column - 1
        raise NarratorError(f"{file_name}: there is no column {column}; the file has {len(headers)} "
                            f"column{'s' if len(headers) != 1 else ''}: {_describe_columns(headers)}")
    exact = [k for k, header in enumerate(headers) if header == column]
    if len(exact) == 1:
        return exact[0]
    if len(exact) > 1:
        places = ", ".join(str(k + 1) for k in exact)
        raise NarratorError(f"{file_name}: {len(exact)} columns are named '{column}' (columns {places}); "
                            f"choose one by position")
    loose = [k for k, header in enumerate(headers) if _loose(header) == _loose(column)]
    if len(loose) == 1:
        return loose[0]
    if len(loose) > 1:
        found = ", ".join(f"'{headers[k]}' (column {k + 1})" for k in loose)
        raise NarratorError(f"{file_name}: several columns match '{column}' when case and spaces are "
                            f"ignored: {found}; choose one by exact name or position")
    close = difflib.get_close_matches(column, list(headers), n=1, cutoff=0.6)
    hint = f"; did you mean '{close[0]}'?" if close else ""
    raise NarratorError(f"{file_name}: no column named '{column}'; columns are: "
                        f"{_describe_columns(headers)}{hint}")


def _decode(raw: bytes, encoding: str | None, file_name: str) -> tuple[str, str, bool]:
    """Text, the codec used, and whether the codec was a fallback guess."""
    if raw.startswith(b"\xef\xbb\xbf"):
        chosen, candidates = "utf-8-sig", ["utf-8-sig"]
    elif raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        chosen, candidates = "utf-16", ["utf-16"]
    elif encoding:
        chosen, candidates = encoding, [encoding]
    else:
        chosen, candidates = "utf-8", ["utf-8", "cp1252", "latin-1"]
    for codec in candidates:
        try:
            text = raw.decode(codec)
        except LookupError:
            raise NarratorError(f"{file_name}: unknown text encoding '{codec}'") from None
        except UnicodeDecodeError as exc:
            if len(candidates) == 1:
                line = raw[: exc.start].count(b"\n") + 1
                raise NarratorError(f"{file_name}: line {line} cannot be read as {codec} "
                                    f"(byte 0x{raw[exc.start]:02x}); give the file's encoding") from None
            continue
        if "\x00" in text[:4096]:
            raise NarratorError(f"{file_name}: the file holds NUL characters; it may be UTF-16 without a "
                                f"byte-order mark (give encoding='utf-16-le') or not a text file")
        return text.removeprefix("\ufeff"), codec, codec != chosen
    raise AssertionError("latin-1 decodes every byte string")  # pragma: no cover


# A delimiter no one types: with it each line of a one-column file is one cell.
_ONE_COLUMN = "\x1f"


def _delimiter(header_line: str, file_format: str) -> str:
    if file_format == "tsv":
        return "\t"
    if "," in header_line:
        return ","
    tabs, semicolons = header_line.count("\t"), header_line.count(";")
    if tabs or semicolons:
        return "\t" if tabs >= semicolons else ";"
    return _ONE_COLUMN


_RAGGED = re.compile(r"Expected (\d+) fields in line (\d+), saw (\d+)")


@dataclass(frozen=True, slots=True)
class _TextTable:
    """The data rows of a text file (header row and trailing blank rows removed), one text array per column.

    Cells are strings; null where a short row had no cell (the pandas path only).
    """

    columns: tuple[pa.Array, ...]

    def column(self, index: int) -> pa.Array:
        return self.columns[index]

    def cells(self, index: int) -> list[object]:
        return self.columns[index].to_pylist()


def _read_text_table(path: Path, file_format: str, encoding: str | None, max_rows: int | None = None):
    """(header list, :class:`_TextTable` of the data rows, source facts); ``max_rows`` data rows at most.

    Two readers give the same cells: pyarrow's CSV reader, fast, used when the
    file holds no quote character and every line has as many fields as the
    header (the only layouts on which it is known to split lines and fields as
    pandas does); pandas' C parser for everything else, which also words the
    errors (a line with more fields than the header) and pads short lines.
    tests/reading/test_file_kinds.py compares the two on awkward layouts.
    """
    raw = _read_bytes(path)
    text, codec, guessed = _decode(raw, encoding, path.name)
    if not text.strip():
        raise NarratorError(f"{path.name}: the file is empty")
    header_line = re.split(r"\r\n|\r|\n", text, maxsplit=1)[0]
    delimiter = _delimiter(header_line, file_format)
    table = _arrow_text_table(raw, text, codec, header_line.count(delimiter) + 1, delimiter, max_rows)
    if table is None:
        table = _pandas_text_table(text, delimiter, max_rows, path, file_format)
    headers = [cell or "" for cell in (column[0].as_py() if len(column) else None for column in table)]
    data = [column[1:] for column in table]
    filled = _last_filled_row(data) + 1
    source = {
        "sha256": hashlib.sha256(raw).hexdigest(),
        "encoding": codec,
        "encoding_guessed": guessed,
        "delimiter": None if delimiter == _ONE_COLUMN else delimiter,
    }
    return headers, _TextTable(tuple(column[:filled] for column in data)), source


def _arrow_text_table(raw: bytes, text: str, codec: str, width: int, delimiter: str,
                      max_rows: int | None) -> list[pa.Array] | None:
    """Every row of the file (header first) as text columns by pyarrow's reader; None when pandas must read it."""
    if '"' in text:  # quoting rules of the two parsers differ on malformed quotes: leave quotes to pandas
        return None
    if codec == "utf-8":
        data = raw
    elif codec == "utf-8-sig":
        data = raw[3:]
    else:
        data = text.encode("utf-8")
    import pyarrow.csv as pa_csv

    names = [f"f{k}" for k in range(width)]
    try:
        table = pa_csv.read_csv(
            pa.BufferReader(data),
            read_options=pa_csv.ReadOptions(column_names=names, use_threads=False, block_size=1 << 22),
            parse_options=pa_csv.ParseOptions(delimiter=delimiter, quote_char=False, escape_char=False,
                                              newlines_in_values=False, ignore_empty_lines=False),
            convert_options=pa_csv.ConvertOptions(column_types=dict.fromkeys(names, pa.string()),
                                                  strings_can_be_null=False, quoted_strings_can_be_null=False),
        )
    except (pa.ArrowInvalid, pa.ArrowException):
        return None  # a short or long line, or anything else: pandas reads it and words any error
    if max_rows is not None:
        table = table.slice(0, max_rows + 1)
    return [column.combine_chunks() if column.num_chunks != 1 else column.chunk(0) for column in table.columns]


def _pandas_text_table(text: str, delimiter: str, max_rows: int | None, path: Path,
                       file_format: str) -> list[pa.Array]:
    """Every row of the file (header first) as text columns by pandas' C parser; nulls pad short lines."""
    import pandas as pd

    try:
        frame = pd.read_csv(
            io.StringIO(text),
            sep=delimiter,
            header=None,
            dtype=str,
            keep_default_na=False,
            na_values=[],
            skip_blank_lines=False,
            nrows=None if max_rows is None else max_rows + 1,
            engine="c",
        )
    except pd.errors.ParserError as exc:
        ragged = _RAGGED.search(str(exc))
        if ragged:
            expected, line, seen = ragged.groups()
            raise NarratorError(
                f"{path.name}: line {line} has {seen} fields but the header has {expected} "
                f"(a value with an unquoted '{_shown_delimiter(delimiter)}' inside, such as a decimal comma?)"
            ) from None
        raise NarratorError(f"{path.name}: cannot be read as {file_format.upper()} ({exc})") from None
    except (pd.errors.EmptyDataError, ValueError, MemoryError) as exc:
        raise NarratorError(f"{path.name}: cannot be read as {file_format.upper()} ({exc})") from None
    return [pa.array(frame.iloc[:, k], type=pa.large_string(), from_pandas=True) for k in range(frame.shape[1])]


def _shown_delimiter(delimiter: str) -> str:
    return {"\t": "tab", _ONE_COLUMN: "unit separator"}.get(delimiter, delimiter)


def _last_filled_row(columns: Sequence[pa.Array]) -> int:
    """Index (0-based) of the last row with any non-blank cell; -1 if none. Scans from the end."""
    size = len(columns[0]) if columns else 0
    for position in range(size - 1, -1, -1):
        if any(isinstance(cell, str) and cell.strip() for cell in (column[position].as_py() for column in columns)):
            return position
    return -1


def _text_column_cells(series, options: _Options) -> _Cells:
    return _parse_texts(pa.array(series, type=pa.large_string(), from_pandas=True),
                        options.decimal_comma, options.missing_keys)


# ----- Excel -----------------------------------------------------------------


def _open_workbook(path: Path, data_only: bool):
    import openpyxl

    try:
        return openpyxl.load_workbook(path, read_only=True, data_only=data_only)
    except Exception as exc:  # openpyxl raises zipfile, KeyError and XML errors for damaged files
        raise NarratorError(f"{path.name}: not a readable .xlsx workbook ({type(exc).__name__}: {exc})"
                            ) from None


def _choose_sheet(workbook, sheet: str | int | None, file_name: str) -> str:
    names = list(workbook.sheetnames)
    listed = ", ".join(f"'{name}'" for name in names)
    if sheet is None:
        chosen = names[0]
    elif isinstance(sheet, numbers.Integral) and not isinstance(sheet, bool):
        if not 1 <= sheet <= len(names):
            raise NarratorError(f"{file_name}: there is no sheet {sheet}; sheets are: {listed}")
        chosen = names[int(sheet) - 1]
    else:
        exact = [name for name in names if name == str(sheet)]
        loose = [name for name in names if _loose(name) == _loose(str(sheet))]
        if exact:
            chosen = exact[0]
        elif len(loose) == 1:
            chosen = loose[0]
        else:
            raise NarratorError(f"{file_name}: no sheet named '{sheet}'; sheets are: {listed}")
    if not hasattr(workbook[chosen], "iter_rows"):
        raise NarratorError(f"{file_name}: sheet '{chosen}' is a chart, not a table of cells")
    return chosen


def _excel_rows(workbook, sheet_name: str, limit: int | None = None) -> list[tuple]:
    rows = []
    for row in workbook[sheet_name].iter_rows(values_only=True):
        rows.append(row)
        if limit is not None and len(rows) > limit:
            break
    while rows and all(cell is None or (isinstance(cell, str) and not cell.strip()) for cell in rows[-1]):
        rows.pop()
    return rows


def _header_text(cell: object) -> str:
    if cell is None:
        return ""
    if isinstance(cell, float | int) and not isinstance(cell, bool):
        return _format_number(cell)
    if isinstance(cell, _dt.datetime | _dt.date | _dt.time):
        return cell.isoformat()
    return str(cell)


def _excel_cells(raw: list[object], options: _Options, formulas: dict[int, str]) -> _Cells:
    """Typed Excel cells: numbers as they are, text parsed, other types non-numeric.

    ``formulas`` maps positions of blank-looking cells to the text of a formula
    that has no saved result; those count as non-numeric, not missing.
    """
    size = len(raw)
    values = np.full(size, np.nan)
    status = np.full(size, _NON_NUMERIC, dtype=np.int8)
    decimals = np.full(size, -1, dtype=np.int16)
    text_at, texts = [], []
    for position, cell in enumerate(raw):
        if cell is None:
            if position not in formulas:
                status[position] = _MISSING
        elif isinstance(cell, bool):
            continue  # TRUE/FALSE are not measurements
        elif isinstance(cell, int | float):
            values[position] = float(cell)
            status[position] = _OK
        elif isinstance(cell, str):
            text_at.append(position)
            texts.append(cell)
        # datetimes, dates, times and durations stay non-numeric
    percent_cells, currencies, ambiguous = 0, frozenset(), np.zeros(0, dtype=np.int64)
    if texts:
        parsed = _parse_texts(pa.array(texts, pa.large_string()), options.decimal_comma, options.missing_keys)
        where = np.asarray(text_at, dtype=np.int64)
        values[where] = parsed.values
        status[where] = parsed.status
        decimals[where] = parsed.decimals
        percent_cells, currencies = parsed.percent_cells, parsed.currencies
        ambiguous = where[parsed.ambiguous]

    def display(position: int) -> str:
        if position in formulas:
            return _printable(f"{formulas[position]} (formula without a saved result)")
        return _printable(raw[position])

    return _Cells(values, status, decimals, display, percent_cells, currencies, ambiguous)


def _unsaved_formulas(path: Path, sheet_name: str, index: int, blank_rows: set[int]) -> dict[int, str]:
    """Positions (data-row based) of blank-looking cells that are formulas never calculated."""
    workbook = _open_workbook(path, data_only=False)
    try:
        found = {}
        for position, row in enumerate(workbook[sheet_name].iter_rows(min_row=2, values_only=True)):
            if position in blank_rows and index < len(row):
                cell = row[index]
                text = getattr(cell, "text", cell)  # ArrayFormula keeps its text in .text
                if isinstance(text, str) and text.startswith("="):
                    found[position] = text
        return found
    finally:
        workbook.close()


def _excel_column(path: Path, column: str | int, sheet: str | int | None):
    """(sheet name, all rows, headers, column index, the column's raw cells) of a workbook."""
    workbook = _open_workbook(path, data_only=True)
    try:
        sheet_name = _choose_sheet(workbook, sheet, path.name)
        rows = _excel_rows(workbook, sheet_name)
    finally:
        workbook.close()
    if not rows:
        raise NarratorError(f"{path.name}: sheet '{sheet_name}' is empty")
    headers = [_header_text(cell) for cell in rows[0]]
    index = _select_column(headers, column, f"{path.name}, sheet '{sheet_name}'")
    raw = [row[index] if index < len(row) else None for row in rows[1:]]
    return sheet_name, rows, headers, index, raw


def _read_excel(path: Path, column: str | int, sheet: str | int | None, options: _Options,
                id_column: str | int | None = None):
    sheet_name, rows, headers, index, raw = _excel_column(path, column, sheet)
    blank = {position for position, cell in enumerate(raw) if cell is None}
    formulas = _unsaved_formulas(path, sheet_name, index, blank) if blank else {}
    cells = _excel_cells(raw, options, formulas)
    source = {"sha256": file_sha256(path), "sheet": sheet_name, "encoding": None, "encoding_guessed": False,
              "delimiter": None}
    ids = None
    if id_column is not None:
        id_index = _select_id_column(headers, id_column, index, f"{path.name}, sheet '{sheet_name}'")
        ids = _id_texts(row[id_index] if id_index < len(row) else None for row in rows[1:])
    return headers, index, cells, source, ids


# ----- Parquet ---------------------------------------------------------------

_PANDAS_INDEX = re.compile(r"__index_level_\d+__")


def _parquet_file(path: Path):
    import pyarrow.parquet as pq

    try:
        return pq.ParquetFile(path)
    except (pa.ArrowException, OSError) as exc:
        raise NarratorError(f"{path.name}: not a readable Parquet file ({exc})") from None


def _parquet_positions(parquet) -> list[int]:
    """Schema positions of the data columns (the index pandas may store is not data)."""
    return [k for k, name in enumerate(parquet.schema_arrow.names) if not _PANDAS_INDEX.fullmatch(name)]


def _parquet_column(parquet, position: int, path: Path) -> pa.Array:
    names = parquet.schema_arrow.names
    name = names[position]
    try:
        # Duplicate names cannot be read one by one: read the table and take the position.
        unique = names.count(name) == 1
        chunked = parquet.read(columns=[name]).column(0) if unique else parquet.read().column(position)
    except (pa.ArrowException, OSError) as exc:
        raise NarratorError(f"{path.name}: column '{name}' cannot be read ({exc})") from None
    return chunked.combine_chunks() if chunked.num_chunks != 1 else chunked.chunk(0)


def _parquet_cells(array: pa.Array, options: _Options) -> _Cells:
    """Parquet values by type: numbers direct, text parsed, nulls and NaN missing, others non-numeric."""
    kind = array.type
    if pa.types.is_dictionary(kind):
        array = array.dictionary_decode()
        kind = array.type
    if pa.types.is_string(kind) or pa.types.is_large_string(kind) or pa.types.is_string_view(kind):
        return _parse_texts(array, options.decimal_comma, options.missing_keys)
    size = len(array)
    nulls = array.is_null().to_numpy(zero_copy_only=False)
    status = np.full(size, _NON_NUMERIC, dtype=np.int8)
    values = np.full(size, np.nan)
    decimals = np.full(size, -1, dtype=np.int16)
    if pa.types.is_integer(kind) or pa.types.is_floating(kind) or pa.types.is_decimal(kind):
        values = pc.cast(array, pa.float64(), safe=False).to_numpy(zero_copy_only=False).astype(np.float64)
        status[:] = _OK
        status[np.isnan(values)] = _MISSING  # nulls, and the NaN that pandas writes for an empty cell
        if pa.types.is_integer(kind):
            decimals[:] = 0
        elif pa.types.is_decimal(kind):
            decimals[:] = min(max(kind.scale, 0), MAX_DECIMALS)
    status[nulls] = _MISSING

    def display(position: int) -> str:
        return _printable(array[position].as_py())

    return _Cells(values, status, decimals, display)


def _read_parquet(path: Path, column: str | int, options: _Options, id_column: str | int | None = None):
    parquet = _parquet_file(path)
    positions = _parquet_positions(parquet)
    headers = [parquet.schema_arrow.names[k] for k in positions]
    index = _select_column(headers, column, path.name)
    array = _parquet_column(parquet, positions[index], path)
    source = {"sha256": file_sha256(path), "sheet": None, "encoding": None, "encoding_guessed": False,
              "delimiter": None, "row_numbering": "position + 2, as if a header row came first"}
    ids = None
    if id_column is not None:
        id_index = _select_id_column(headers, id_column, index, path.name)
        ids = _id_texts(_parquet_column(parquet, positions[id_index], path).to_pylist())
    return headers, index, _parquet_cells(array, options), source, ids


def _select_id_column(headers: Sequence[str], id_column: str | int, value_index: int, where: str) -> int:
    """The id column's index: a header text, or digits meaning a 1-based position when no header has them."""
    if isinstance(id_column, str) and id_column.isdigit() and id_column not in headers:
        id_column = int(id_column)
    index = _select_column(headers, id_column, where)
    if index == value_index:
        raise NarratorError(f"{where}: the id column is the column being described; name another column")
    return index


def _id_texts(cells: Iterable[object]) -> np.ndarray:
    """Identifier cells as short, safe strings (numbers without a spurious ".0"); blank stays blank."""
    def shown(cell: object) -> str:
        if cell is None or (isinstance(cell, float) and math.isnan(cell)):
            return ""  # a short row's absent cell, or a null
        return clean_label(_header_text(cell), limit=EXAMPLE_LENGTH)

    return np.array([shown(cell) for cell in cells], dtype=object)


# ---------------------------------------------------------------------------
# Public entry points
# ---------------------------------------------------------------------------


def _options(decimal_comma: bool, missing: Iterable[object], valid_min: float | None,
             valid_max: float | None, file_name: str) -> _Options:
    if isinstance(missing, str):
        missing = (missing,)
    extra = list(missing)
    for label, bound in (("valid_min", valid_min), ("valid_max", valid_max)):
        is_number = isinstance(bound, numbers.Real | _decimal.Decimal) and not isinstance(bound, bool)
        if bound is not None and (not is_number or not math.isfinite(float(bound))):
            raise NarratorError(f"{file_name}: {label} must be a finite number, not {bound!r}")
    low = None if valid_min is None else float(valid_min)
    high = None if valid_max is None else float(valid_max)
    if low is not None and high is not None and low > high:
        raise NarratorError(f"{file_name}: valid_min ({low:g}) is larger than valid_max ({high:g})")
    keys, codes = _missing_keys(extra)
    tokens = list(MISSING_TOKENS) + [_token_text(token) for token in extra]
    return _Options(bool(decimal_comma), keys, codes, tokens, low, high)


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

    ``column`` is a header text (exact first, then ignoring case and runs of
    spaces) or a 1-based position. ``sheet`` (Excel only) is a sheet name or
    1-based position; the first sheet by default. ``decimal_comma`` declares
    the decimal convention of text cells (see :func:`parse_number`);
    ``missing`` adds cell texts (or numeric codes such as -99) that mean
    missing; ``valid_min``/``valid_max`` bound the values that are possible
    (values outside are excluded as impossible, never called outliers);
    ``encoding`` names the codec of a text file when it is not UTF-8.
    ``id_column`` (a header text or 1-based position) names a column of record
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
    file, and the line, sheet or column where known.
    """
    target = Path(path)
    file_format = _file_format(target)
    options = _options(decimal_comma, missing, valid_min, valid_max, target.name)
    _check_file(target)
    if sheet is not None and file_format != "xlsx":
        raise NarratorError(f"{target.name}: a sheet can only be chosen in an Excel workbook")
    if file_format in ("csv", "tsv"):
        headers, data, facts = _read_text_table(target, file_format, encoding)
        index = _select_column(headers, column, target.name)
        cells = _parse_texts(data.column(index), options.decimal_comma, options.missing_keys)
        facts["sheet"] = None
        ids = None
        if id_column is not None:
            id_index = _select_id_column(headers, id_column, index, target.name)
            ids = _id_texts(data.cells(id_index))
    elif file_format == "xlsx":
        headers, index, cells, facts, ids = _read_excel(target, column, sheet, options, id_column)
    else:
        headers, index, cells, facts, ids = _read_parquet(target, column, options, id_column)
    rows = np.arange(2, cells.values.size + 2, dtype=np.int64)
    source = {
        "file": target.name,
        "format": file_format,
        "column_position": index + 1,
        "row_numbering": "spreadsheet rows, header is row 1",
        **facts,
    }
    if ids is not None:
        source["id_column"] = clean_label(headers[_select_id_column(headers, id_column, index, target.name)])
    return _build_sample(cells, rows, headers[index], unit, options, source, ids)


def _probe_columns(path: str | os.PathLike[str], sheet: str | int | None,
                   decimal_comma: bool) -> list[tuple[str, _Cells]]:
    """(header, cells of the first :data:`NUMERIC_PROBE_ROWS` data rows) for every column, in file order."""
    target = Path(path)
    file_format = _file_format(target)
    _check_file(target)
    options = _options(decimal_comma, (), None, None, target.name)
    if sheet is not None and file_format != "xlsx":
        raise NarratorError(f"{target.name}: a sheet can only be chosen in an Excel workbook")
    columns: list[tuple[str, _Cells]] = []
    if file_format in ("csv", "tsv"):
        headers, data, _facts = _read_text_table(target, file_format, None, max_rows=NUMERIC_PROBE_ROWS)
        columns = [(header, _parse_texts(data.column(k), options.decimal_comma, options.missing_keys))
                   for k, header in enumerate(headers)]
    elif file_format == "xlsx":
        workbook = _open_workbook(target, data_only=True)
        try:
            sheet_name = _choose_sheet(workbook, sheet, target.name)
            rows = _excel_rows(workbook, sheet_name, limit=NUMERIC_PROBE_ROWS)
        finally:
            workbook.close()
        if rows:
            width = max(len(row) for row in rows)
            headers = [_header_text(rows[0][k]) if k < len(rows[0]) else "" for k in range(width)]
            for k, header in enumerate(headers):
                raw = [row[k] if k < len(row) else None for row in rows[1:]]
                columns.append((header, _excel_cells(raw, options, {})))
    else:
        parquet = _parquet_file(target)
        schema = parquet.schema_arrow
        head = next(parquet.iter_batches(batch_size=NUMERIC_PROBE_ROWS), None)
        for position in _parquet_positions(parquet):
            array = head.column(position) if head is not None else pa.array([], schema.field(position).type)
            columns.append((schema.names[position], _parquet_cells(array, options)))
    return columns


def _mostly_numbers(cells: _Cells) -> bool:
    present = cells.status != _MISSING
    numbers = (cells.status == _OK) & np.isfinite(cells.values)
    return bool(numbers.any() and numbers.sum() * 2 > present.sum())


def list_numeric_columns(
    path: str | os.PathLike[str], *, sheet: str | int | None = None, decimal_comma: bool = False
) -> list[str]:
    """Headers, in file order, of the columns where more than half of the non-missing cells are numbers.

    Only the first :data:`NUMERIC_PROBE_ROWS` data rows are looked at, so the
    answer is quick on large files. Typed numeric cells (Excel numbers, Parquet
    integer, float and decimal columns) count as numbers; text is read with
    :func:`parse_number` under the declared ``decimal_comma``. A column with
    no header is listed as "" and can be chosen by position.
    """
    return [header for header, cells in _probe_columns(path, sheet, decimal_comma) if _mostly_numbers(cells)]


def list_label_columns(
    path: str | os.PathLike[str], *, sheet: str | int | None = None, decimal_comma: bool = False
) -> list[str]:
    """Headers, in file order, of the columns that hold text labels: some cell is filled and at most
    half of the filled cells are numbers (the complement of :func:`list_numeric_columns` among
    columns that are not empty), on the same first :data:`NUMERIC_PROBE_ROWS` data rows.
    """
    return [header for header, cells in _probe_columns(path, sheet, decimal_comma)
            if bool((cells.status != _MISSING).any()) and not _mostly_numbers(cells)]


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
    blank cells and :data:`MISSING_TOKENS` (plus ``missing``)
    give ``None``. Typed cells are written as text: Excel and Parquet numbers
    as :func:`read_column` writes them in messages (``5``, not ``5.0``), dates
    in ISO 8601. Files are read with the same rules as :func:`read_column`
    (delimiter, encoding, sheet choice, column choice).
    """
    target = Path(path)
    file_format = _file_format(target)
    _check_file(target)
    if sheet is not None and file_format != "xlsx":
        raise NarratorError(f"{target.name}: a sheet can only be chosen in an Excel workbook")
    if isinstance(missing, str):
        missing = (missing,)
    absent = {_loose(token) for token in MISSING_TOKENS} | {_loose(_token_text(token)) for token in missing}
    if file_format in ("csv", "tsv"):
        headers, data, _facts = _read_text_table(target, file_format, encoding)
        index = _select_column(headers, column, target.name)
        raw: list[object] = data.cells(index)
    elif file_format == "xlsx":
        _sheet_name, _rows, headers, index, raw = _excel_column(target, column, sheet)
    else:
        parquet = _parquet_file(target)
        positions = _parquet_positions(parquet)
        headers = [parquet.schema_arrow.names[k] for k in positions]
        index = _select_column(headers, column, target.name)
        raw = _parquet_column(parquet, positions[index], target).to_pylist()
    labels: list[str | None] = []
    for cell in raw:
        text = None if cell is None or (isinstance(cell, float) and math.isnan(cell)) else _header_text(cell)
        text = None if text is None else " ".join(clean_label(text).split())
        labels.append(None if text is None or _loose(text) in absent else text)
    return headers[index], tuple(labels)
