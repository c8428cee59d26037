"""The cell rules: how one cell becomes a number, how a column of cells is classified, and the Sample made of it.

============================  ==================================================
Name                          What it is
============================  ==================================================
:func:`parse_number`          one cell text -> float, or None when it is not a
                              number under the declared decimal convention
:class:`CellRules`            the rules a column is read with (decimal
                              convention, missing tokens and codes, valid range)
:func:`cell_rules`            those rules, checked, from a caller's options
:func:`classify_texts`        text cells (an arrow array) -> :class:`Cells`
:class:`Cells`                every cell of one column, classified; chunks of a
                              column join with :meth:`Cells.concatenate`
:func:`build_sample`          classified cells -> :class:`~narrator.reading.sample.Sample`
:func:`printable`             a cell as a short, safe text for examples and messages
:func:`format_number`         a typed number written as a cell would show it
:data:`MISSING_TOKENS`        cell texts read as "missing" (case ignored)
:data:`EXCLUSION_REASONS`     the reason codes of :class:`~narrator.reading.sample.Exclusion`
:data:`CELL_OK` ...           the status code of one classified cell
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
3. Infinities ("inf", "\u221e", ``1e400``, float infinities) are ``"non_finite"``.
4. Values below ``valid_min`` or above ``valid_max`` (bounds included as
   valid) are ``"impossible"``.

Each exclusion keeps the first 10 row numbers and the first 5 distinct cell
texts (control and invisible characters escaped, cut at 40 characters).

A column of plain numbers (what pyarrow's own number parser reads, which is a
subset of :func:`parse_number`'s grammar) is converted in one vectorized cast;
every other cell goes through :func:`parse_number`'s rules, so both routes
give the same values, decimals and statuses (tests/reading/test_columns.py).
"""

from __future__ import annotations

import datetime as _dt
import decimal as _decimal
import functools
import math
import numbers
import re
import unicodedata
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from narrator.errors import NarratorError
from narrator.reading.sample import Exclusion, Sample, clean_label, guess_decimals

__all__ = [
    "CELL_IMPOSSIBLE",
    "CELL_MISSING",
    "CELL_NON_FINITE",
    "CELL_NON_NUMERIC",
    "CELL_OK",
    "EXAMPLES_KEPT",
    "EXAMPLES_SCANNED",
    "EXCLUSION_REASONS",
    "MISSING_TOKENS",
    "ROWS_KEPT",
    "CellRules",
    "Cells",
    "build_sample",
    "cell_rules",
    "classify_texts",
    "format_number",
    "parse_number",
    "printable",
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

EXCLUSION_REASONS: tuple[str, ...] = ("missing", "non_numeric", "non_finite", "impossible")

ROWS_KEPT = 10  # row numbers kept per exclusion reason
EXAMPLES_KEPT = 5  # distinct cell texts kept per exclusion reason
EXAMPLE_LENGTH = 40  # characters of one example before it is cut
EXAMPLES_SCANNED = 10_000  # excluded cells looked at per reason to find a few distinct texts
MAX_DECIMALS = 6  # as narrator.reading.sample.guess_decimals

# Status of one classified cell; the order of EXCLUSION_REASONS is the order of the
# exclusions in a Sample.
CELL_OK, CELL_MISSING, CELL_NON_NUMERIC, CELL_NON_FINITE, CELL_IMPOSSIBLE = 0, 1, 2, 3, 4
_STATUS_OF_REASON = {"missing": CELL_MISSING, "non_numeric": CELL_NON_NUMERIC,
                     "non_finite": CELL_NON_FINITE, "impossible": CELL_IMPOSSIBLE}

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
class Cells:
    """Every cell of one column, classified; arrays are aligned with the rows.

    ``display(position)`` gives the cell as written (made printable) for the
    examples of an exclusion; it is asked only about cells that are not
    ``CELL_OK``.
    """

    values: np.ndarray  # float64; NaN where the cell holds no number
    status: np.ndarray  # int8 status code per cell
    decimals: np.ndarray  # int8 decimals written (at most 6); -1 for typed cells (guessed from the value)
    display: Callable[[int], str]  # the cell as written, for examples
    percent_cells: int = 0
    currencies: frozenset[str] = frozenset()
    ambiguous: np.ndarray | None = None  # positions of cells like "1,234": the other convention differs
    shown: dict[int, str] | None = None  # the texts kept by kept_examples, by position
    # Positions of text cells that hold a number only under the other decimal convention ("3,4" read with
    # a decimal point): left out as text, and counted so the report can say the setting may be wrong.
    other_convention: np.ndarray | None = None

    def __len__(self) -> int:
        return int(self.values.size)

    def kept_examples(self, rules: CellRules) -> Cells:
        """The same cells, with the texts an exclusion may show copied out, so their source can go.

        An exclusion shows texts from its first :data:`EXAMPLES_SCANNED` cells, judged as
        :func:`build_sample` will judge them under ``rules``; those texts are kept, nothing else.
        """
        shown = self._shown(rules, 0)
        return Cells(self.values, self.status, self.decimals, shown.__getitem__, self.percent_cells, self.currencies,
                     self.ambiguous, shown, self.other_convention)

    def _shown(self, rules: CellRules, offset: int) -> dict[int, str]:
        final = _final_status(self.values, self.status, rules)
        shown: dict[int, str] = {}
        for status in _STATUS_OF_REASON.values():
            for position in np.flatnonzero(final == status)[:EXAMPLES_SCANNED].tolist():
                shown[offset + position] = self.display(position)
        return shown

    @classmethod
    def concatenate(cls, parts: Sequence[Cells], rules: CellRules) -> Cells:
        """Chunks of one column, in order, as one :class:`Cells` that holds none of their sources."""
        if len(parts) == 1:
            return parts[0]
        if not parts:
            return cls(np.zeros(0), np.zeros(0, dtype=np.int8), np.zeros(0, dtype=np.int8), lambda _: "",
                       ambiguous=np.zeros(0, dtype=np.int64))
        shown: dict[int, str] = {}
        ambiguous, other = [], []
        offset = 0
        for part in parts:
            if part.shown is not None:
                shown.update((offset + position, text) for position, text in part.shown.items())
            else:
                shown.update(part._shown(rules, offset))
            if part.ambiguous is not None and part.ambiguous.size:
                ambiguous.append(part.ambiguous + offset)
            if part.other_convention is not None and part.other_convention.size:
                other.append(part.other_convention + offset)
            offset += len(part)
        return cls(
            values=np.concatenate([part.values for part in parts]),
            status=np.concatenate([part.status for part in parts]),
            decimals=np.concatenate([part.decimals for part in parts]),
            display=shown.__getitem__,
            percent_cells=sum(part.percent_cells for part in parts),
            currencies=frozenset().union(*(part.currencies for part in parts)),
            ambiguous=np.concatenate(ambiguous) if ambiguous else np.zeros(0, dtype=np.int64),
            other_convention=np.concatenate(other) if other else None,
        )


@dataclass(frozen=True, slots=True)
class CellRules:
    """The rules one column is read with: decimal convention, missing tokens and codes, valid range."""

    decimal_comma: bool
    missing_keys: frozenset[str]  # lower-cased tokens that mean missing
    missing_codes: np.ndarray  # the caller's tokens that are numbers (-99): typed cells equal to them are missing
    missing_tokens: list[str]  # every token, as written, for the record
    valid_min: float | None
    valid_max: float | None


def cell_rules(decimal_comma: bool = False, missing: Iterable[object] = (), valid_min: float | None = None,
               valid_max: float | None = None, file_name: str = "") -> CellRules:
    """The :class:`CellRules` for a caller's options, checked; errors name ``file_name``."""
    if isinstance(missing, str):
        missing = (missing,)
    extra = list(missing)
    where = f"{file_name}: " if file_name else ""
    for label, bound in (("valid_min", valid_min), ("valid_max", valid_max)):
        is_number = isinstance(bound, numbers.Real | _decimal.Decimal) and not isinstance(bound, bool)
        if bound is not None and (not is_number or not math.isfinite(float(bound))):
            raise NarratorError(f"{where}{label} must be a finite number, not {bound!r}")
    low = None if valid_min is None else float(valid_min)
    high = None if valid_max is None else float(valid_max)
    if low is not None and high is not None and low > high:
        raise NarratorError(f"{where}valid_min ({low:g}) is larger than valid_max ({high:g})")
    keys, codes = _missing_keys(extra)
    tokens = list(MISSING_TOKENS) + [token_text(token) for token in extra]
    return CellRules(bool(decimal_comma), frozenset(keys), codes, tokens, low, high)


def _missing_keys(extra: Iterable[object]) -> tuple[set[str], np.ndarray]:
    """Lower-cased tokens that mean missing, and the numeric ones among the caller's."""
    keys = {token.strip().lower() for token in MISSING_TOKENS}
    codes = []
    for token in extra:
        text = token_text(token)
        keys.add(text.strip().lower())
        number = parse_number(text)
        if number is not None and math.isfinite(number):
            codes.append(number)
    return keys, np.asarray(codes, dtype=float)


def token_text(token: object) -> str:
    """A missing token as text: numbers written as a cell shows them (``-99``, not ``-99.0``)."""
    if isinstance(token, numbers.Real) and not isinstance(token, bool):
        return format_number(int(token) if isinstance(token, numbers.Integral) else float(token))
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
    if pa.types.is_integer(array.type) and array.type not in (pa.int64(), pa.int32()):
        array = pc.cast(array, pa.int64())
    dtype = {pa.float64(): np.dtype(np.float64), pa.int64(): np.dtype(np.int64),
             pa.int32(): np.dtype(np.int32)}.get(array.type)
    if dtype is None:
        raise ValueError(f"no numpy form for {array.type}")
    return np.frombuffer(array.buffers()[1], dtype=dtype, count=len(array), offset=array.offset * dtype.itemsize)


def _arrow_mask(mask: np.ndarray) -> pa.Array:
    """A numpy boolean array as an arrow boolean array (through uint8, built from its buffer)."""
    as_bytes = np.ascontiguousarray(mask, dtype=np.uint8)
    return pc.cast(pa.Array.from_buffers(pa.uint8(), as_bytes.size, [None, pa.py_buffer(as_bytes)]), pa.bool_())


def _arrow_integers(values: np.ndarray) -> pa.Array:
    """A numpy integer array as an arrow int64 array, built from its buffer."""
    as_int64 = np.ascontiguousarray(values, dtype=np.int64)
    return pa.Array.from_buffers(pa.int64(), as_int64.size, [None, pa.py_buffer(as_int64)])


def _arrow_texts(texts: Sequence[str]) -> pa.Array:
    """Python strings as an arrow large_string array, built from its offsets and UTF-8 bytes."""
    encoded = [text.encode("utf-8") for text in texts]
    offsets = np.zeros(len(encoded) + 1, dtype=np.int64)
    np.cumsum([len(item) for item in encoded], out=offsets[1:])
    return pa.Array.from_buffers(pa.large_string(), len(encoded),
                                 [None, pa.py_buffer(offsets), pa.py_buffer(b"".join(encoded))])



def classify_texts(texts: pa.Array, rules: CellRules) -> Cells:
    """Classify text cells (an arrow string array; null is an absent cell, read as missing).

    A column that pyarrow's number parser reads whole (after blank cells are set aside) is
    converted in one cast; any other goes through the full grammar of :func:`parse_number`,
    plain cells still in one vectorized cast and the rest cell by cell.
    """
    if not (pa.types.is_string(texts.type) or pa.types.is_large_string(texts.type)):
        texts = pc.cast(texts, pa.large_string())
    fast = _plain_column(texts, rules)
    if fast is not None:
        return fast
    if not pa.types.is_large_string(texts.type):
        texts = pc.cast(texts, pa.large_string())
    return _parse_texts(texts, rules.decimal_comma, rules.missing_keys)


def _risky_token(key: str) -> bool:
    # A caller's token that pyarrow would read as an infinity ("inf"): the cell must be missing,
    # not non-finite, so the cast cannot decide it. (NaN words are checked one by one anyway.)
    try:
        return math.isinf(float(key))
    except ValueError:
        return False


def _plain_column(texts: pa.Array, rules: CellRules) -> Cells | None:
    """Cells by one cast when pyarrow reads every non-blank cell as a number; None otherwise.

    pyarrow's parser accepts digits with a sign, a decimal point and an exponent, and
    "nan"/"inf" words; all of these :func:`parse_number` reads the same way, except the
    NaN words, which are given to the full rules one by one.
    """
    if texts.null_count or any(_risky_token(key) for key in rules.missing_keys):
        return None
    size = len(texts)
    lengths = _numpy_of(pc.binary_length(texts))
    blank = lengths == 0
    any_blank = bool(blank.any())
    filled = texts if not any_blank else pc.filter(texts, _arrow_mask(~blank))
    if rules.decimal_comma:
        if _numpy_of(pc.find_substring(filled, ".")).max(initial=-1) >= 0:
            return None  # "1.234" means 1234 under a decimal comma: the full rules decide
        filled = pc.replace_substring(filled, ",", ".")
    try:
        numbers_read = _numpy_of(pc.cast(filled, pa.float64()))
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        return None
    status = np.zeros(size, dtype=np.int8)  # CELL_OK
    if any_blank:
        values = np.full(size, np.nan)
        values[~blank] = numbers_read
        status[blank] = CELL_MISSING
    else:
        values = numbers_read  # read-only, on pyarrow's buffer: build_sample copies it once
    # Decimals written: the characters after the point (plain cells are ASCII, so bytes are characters).
    written = (lengths[~blank] if any_blank else lengths).copy()
    point = _numpy_of(pc.find_substring(filled, "."))
    written -= point
    written -= 1
    written[point < 0] = 0
    exponent_at = _positions_holding(filled, b"eE")
    if exponent_at.size:
        exponent_cells = pc.take(filled, _arrow_integers(exponent_at)).to_pylist()
        for position, text in zip(exponent_at.tolist(), exponent_cells, strict=True):
            parsed = _parse_cell(text, False)
            written[position] = parsed.decimals if parsed is not None else 0
    np.minimum(written, MAX_DECIMALS, out=written)
    if any_blank:
        decimals = np.zeros(size, dtype=np.int8)
        decimals[~blank] = written
    else:
        decimals = written.astype(np.int8)
    odd = np.flatnonzero(np.isnan(numbers_read))
    if odd.size:
        where = np.flatnonzero(~blank)[odd] if any_blank else odd
        for position in where.tolist():
            # The NaN words: "nan" is a missing token; "-nan" and "nan(1)" are not numbers.
            text = texts[position].as_py()
            if text.strip().lower() in rules.missing_keys:
                status[position] = CELL_MISSING
            else:
                parsed = _parse_cell(text, rules.decimal_comma)
                status[position] = CELL_NON_NUMERIC if parsed is None else CELL_OK
            decimals[position] = 0
    return Cells(values=values, status=status, decimals=decimals,
                 display=lambda position: printable(texts[position].as_py()),
                 ambiguous=np.zeros(0, dtype=np.int64))


def _positions_holding(texts: pa.Array, letters: bytes) -> np.ndarray:
    """Positions of the cells holding any of ``letters`` (single bytes); a scan of the text bytes finds none quickly."""
    data = texts.buffers()[2]
    raw = np.frombuffer(data, dtype=np.uint8) if data is not None else np.zeros(0, dtype=np.uint8)
    if not any(np.any(raw == letter) for letter in letters):
        return np.zeros(0, dtype=np.int64)
    found = None
    for letter in letters:
        hits = _numpy_of(pc.find_substring(texts, chr(letter))) >= 0
        found = hits if found is None else found | hits
    return np.flatnonzero(found)


def _parse_texts(texts: pa.Array, decimal_comma: bool, missing_keys: frozenset[str]) -> Cells:
    """Classify text cells; plain numbers go through one vectorized cast, the rest cell by cell."""
    size = len(texts)
    values = np.full(size, np.nan)
    status = np.full(size, CELL_NON_NUMERIC, dtype=np.int8)
    decimals = np.zeros(size, dtype=np.int8)
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
    status[missing] = CELL_MISSING
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
        status[where] = CELL_OK
    percent_cells = 0
    currencies: set[str] = set()
    ambiguous: list[int] = []
    other_convention: list[int] = []
    rest = ~plain & ~missing
    rest_at = np.flatnonzero(rest)
    rest_texts = pc.filter(stripped, _arrow_mask(rest)).to_pylist() if rest_at.size else []
    for position, text in zip(rest_at.tolist(), rest_texts, strict=True):
        parsed = _parse_cell(text, decimal_comma)
        if parsed is None:
            if _parse_cell(text, not decimal_comma) is not None:
                other_convention.append(position)
            continue
        values[position] = parsed.value
        decimals[position] = min(parsed.decimals, MAX_DECIMALS)
        status[position] = CELL_OK
        percent_cells += parsed.percent
        if parsed.currency is not None:
            currencies.add(parsed.currency)
        if parsed.ambiguous:
            ambiguous.append(position)
    return Cells(
        values=values,
        status=status,
        decimals=decimals,
        display=lambda position: printable(texts[position].as_py()),
        percent_cells=percent_cells,
        currencies=frozenset(currencies),
        ambiguous=np.asarray(ambiguous, dtype=np.int64),
        other_convention=np.asarray(other_convention, dtype=np.int64),
    )


def printable(value: object) -> str:
    """A cell as a short, safe string: control and invisible characters escaped, long text cut.

    >>> print(printable("12" + chr(27) + "[31m"), printable(2.0), len(printable("x" * 50)))
    12\\u001b[31m 2 40
    """
    if value is None:
        return ""
    if isinstance(value, float | int) and not isinstance(value, bool):
        text = format_number(value)
    elif isinstance(value, _dt.datetime | _dt.date | _dt.time):
        text = value.isoformat()
    else:
        text = str(value)[: EXAMPLE_LENGTH + 1]  # cut before escaping: a cell may be long
    shown = "".join(ch if ch.isprintable() else f"\\u{ord(ch):04x}" for ch in text)
    return shown if len(shown) <= EXAMPLE_LENGTH else shown[: EXAMPLE_LENGTH - 1] + "\u2026"


def format_number(value: float | int) -> str:
    """A typed number as a cell shows it: whole floats without ".0", others by ``repr``."""
    if isinstance(value, int):
        return str(value)
    if math.isfinite(value) and value == int(value) and abs(value) < 1e16:
        return str(int(value))
    return repr(float(value))


# ---------------------------------------------------------------------------
# From classified cells to a Sample
# ---------------------------------------------------------------------------


def _exclusion(reason: str, status: np.ndarray, rows: np.ndarray, display: Callable[[int], str],
               values: np.ndarray) -> Exclusion:
    positions = np.flatnonzero(status == _STATUS_OF_REASON[reason])
    examples = _distinct_texts(display, positions)
    return Exclusion(
        reason=reason,
        count=int(positions.size),
        rows=tuple(int(row) for row in rows[positions[:ROWS_KEPT]]),
        examples=tuple(examples),
        examples_complete=len(examples) < EXAMPLES_KEPT and positions.size <= EXAMPLES_SCANNED,
        values=tuple(float(v) for v in values[positions[:ROWS_KEPT]]) if reason == "impossible" else (),
    )


def _distinct_texts(display: Callable[[int], str], positions: np.ndarray) -> list[str]:
    """The first distinct texts of the cells at ``positions``, from the first :data:`EXAMPLES_SCANNED` of them
    (enough to find a few). A chunk's kept texts are those of its first excluded cells, so a cell whose text
    was not kept is passed over."""
    texts: list[str] = []
    for position in positions[:EXAMPLES_SCANNED].tolist():
        try:
            shown = display(position)
        except KeyError:
            continue
        if shown not in texts:
            texts.append(shown)
            if len(texts) == EXAMPLES_KEPT:
                break
    return texts


def _final_status(values: np.ndarray, status: np.ndarray, rules: CellRules) -> np.ndarray:
    """Each cell's status once the numbers are judged: missing codes, non-finite values, the valid range."""
    final = status.copy()
    if rules.missing_codes.size:
        final[(final == CELL_OK) & np.isin(values, rules.missing_codes)] = CELL_MISSING
    final[(final == CELL_OK) & ~np.isfinite(values)] = CELL_NON_FINITE
    ok = final == CELL_OK
    if rules.valid_min is not None:
        final[ok & (values < rules.valid_min)] = CELL_IMPOSSIBLE
    if rules.valid_max is not None:
        final[ok & (values > rules.valid_max)] = CELL_IMPOSSIBLE
    return final


def build_sample(cells: Cells, rows: np.ndarray, name: str, unit: str | None, rules: CellRules,
                 source: dict, ids: np.ndarray | None = None) -> Sample:
    """The Sample of classified cells: the values kept, every other cell counted by reason.

    ``rows`` are the cells' spreadsheet row numbers; ``source`` the facts of the file
    (the reading rules and what the cells showed are added here).
    """
    values = cells.values if cells.values.flags.writeable else cells.values.copy()
    values += 0.0  # -0.0 becomes 0.0; the cells are taken over, not copied
    status = _final_status(values, cells.status, rules)
    keep = status == CELL_OK
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
    other = cells.other_convention if cells.other_convention is not None else np.zeros(0, dtype=np.int64)
    source = {
        **source,
        # Cleaned but not cut: the appendix shows it, and it must still name the column.
        "column": clean_label(name, limit=max(len(name), 1)),
        "decimal_comma": rules.decimal_comma,
        "missing_tokens": rules.missing_tokens,
        "valid_min": rules.valid_min,
        "valid_max": rules.valid_max,
        "percent_signs": cells.percent_cells > 0,
        "percent_cells": cells.percent_cells,
        "currency_symbols": sorted(cells.currencies),
        "ambiguous_grouping": int(ambiguous.size),
        "ambiguous_grouping_rows": [int(row) for row in rows[ambiguous[:ROWS_KEPT]]],
        "other_convention": int(other.size),
        "other_convention_rows": [int(row) for row in rows[other[:ROWS_KEPT]]],
        "other_convention_texts": _distinct_texts(cells.display, other),
    }
    rows = np.asarray(rows, dtype=np.int64)
    return Sample(
        values=np.ascontiguousarray(values if every_cell_kept else values[keep], dtype=np.float64),
        rows=rows if every_cell_kept else np.ascontiguousarray(rows[keep]),
        name=clean_label(name) or f"column {source['column_position']}",
        unit=None if unit is None else clean_label(unit),
        n_rows=int(values.size),
        exclusions=exclusions,
        decimals=min(MAX_DECIMALS, max(written, guessed)),
        source=source,
        valid_min=rules.valid_min,
        valid_max=rules.valid_max,
        ids=None if ids is None else ids[keep],
    )
