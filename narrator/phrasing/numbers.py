"""One door for numbers: every number a reader sees is formatted here (the project's rule: one door for numbers).

Locale knowledge comes from CLDR through babel; words (spelled-out small
numbers, nouns and their plural forms, the words a user types for a unit,
"to" in a range) come from the phrase bank of the locale's language, never
from this code. Where babel does not apply a CLDR rule, this module applies
it from a small table that names its source.

==================================  ============================================
Name                                What it does
==================================  ============================================
:class:`NumberFormatter`            formats numbers for one locale (and unit/currency)
:meth:`~NumberFormatter.fixed`      a number with a fixed count of decimals
:meth:`~NumberFormatter.percent`    a share (0.12) as a percent ("12 %")
:meth:`~NumberFormatter.currency`   an amount in an ISO 4217 currency
:meth:`~NumberFormatter.compact`    "1.2 million" (CLDR long compact form)
:meth:`~NumberFormatter.scientific` "5.12 × 10²⁸" (CLDR superscripting exponent)
:meth:`~NumberFormatter.digits`     a whole number without grouping (a seed)
:meth:`~NumberFormatter.quantity`   a number with its unit (CLDR unit or user text)
:meth:`~NumberFormatter.quantity_pair` low and high of a range, the unit written once
:meth:`~NumberFormatter.range`      "13–28", or "-5 to 28" when a sign would touch the dash
:meth:`~NumberFormatter.range_words` "13 to 28 days": two ends joined by the bank's words
:meth:`~NumberFormatter.count`      "three values", "11 rows" (plural rules, spelled out)
:meth:`~NumberFormatter.list`       "a, b, and c" (CLDR list pattern)
:meth:`~NumberFormatter.number_list` "0,25; 0,50 y 0,75" (the CLDR list symbol for numbers)
:meth:`~NumberFormatter.long_date`  "1er décembre 2026": CLDR's long date, the bank's first of the month
:meth:`~NumberFormatter.long_datetime` the same date with CLDR's long time, "16:05:03 UTC" (fr: "16 h 05 min 03 s TU")
:func:`parse_locale`                a CLDR locale, or one clear refusal
:func:`language_tag`                its BCP 47 tag ("es-419"), for document metadata
:func:`minimum_grouping_digits`     CLDR ``minimumGroupingDigits`` of a locale
:func:`plural_range`                CLDR plural category of a range ("1–2 days")
:func:`round_half_up`               the one rounding rule, on the decimal representation
:func:`largest_remainder`           percents of a whole, rounded so that they add up to 100
:func:`places_clear_of`             the fewest places that print no value on a limit it does not equal
:func:`memo_decimals`               rounding policy for memos (Ehrenberg 1981)
:func:`methods_decimals`            rounding policy for methods text (Cole 2015)
:func:`column_decimals`             one precision for a whole table column (APA 2020)
:func:`cldr_unit_id`                maps a user's unit word ("days", "litres") to a CLDR unit id
==================================  ============================================

Rounding is "round half up" on the shortest decimal representation of the
float (``repr``), so 2.25 shows as 2.3, as readers expect from a report; the
rounded decimal, not the float, is handed to babel, so babel never rounds a
second time.

CLDR rules applied here that babel 2.19 does not apply (Unicode CLDR, LDML
Part 3, Numbers):

- ``minimumGroupingDigits``: a number is grouped only when its integer part
  has at least the primary grouping size plus this many digits, so es_ES
  writes 3710 but 13.710 (the value is 2 for es, pl, pt_PT and others; see
  :data:`MINIMUM_GROUPING_DIGITS`).
- ``currencySpacing``: a no-break space goes between a currency symbol and a
  digit when the symbol's character next to the digit is not a symbol
  (general category S) or a separator (Z): "-USD 1,519.00" in es_MX, but
  "$1,519.00" in en_US.
- the ``list`` number symbol: a list of numbers in a decimal-comma locale
  separates its items with it (";"), so "0,25; 0,50 y 0,75" cannot be read
  as "0, 25, 0, 50...".
- the first day of the month: CLDR's date patterns have no ordinal day, so
  babel writes "1 décembre"; the bank's ``format.first_of_month`` writes the
  day 1 of a long date ("{day}er" in French, where the first of the month is
  "1er", an ordinal, and every other day a cardinal: Lexique des règles
  typographiques en usage à l'Imprimerie nationale, and the Office québécois
  de la langue française for fr_CA, from memory). English and Spanish give
  "{day}", the cardinal, unchanged.
- plural ranges (CLDR supplemental pluralRanges.xml): the plural form of a
  unit after a range, "0 to 1 days" in English.
- the plural operand ``e`` (LDML Part 3, "Plural Operand Meanings": the
  exponent of the power of ten of a compact form): babel 2.19 sets it to 0, so
  the CLDR rule "many: ... or e != 0..5" of es and fr never fires for a count
  written "1,5 millones". :func:`compact_plural_form` evaluates the locale's
  CLDR rules with it, so the noun after a compact count takes its "many" form
  ("1,5 millones de valores"; "1.5 million values" in English, which has no
  such rule).

Rules of our own (documented here and in DEVELOPERS.md):

- Huge numbers: from :data:`SCIENTIFIC_FROM` (10^15) on, every number is
  written in scientific form, "5.12 × 10²⁸", with :data:`SCIENTIFIC_DIGITS`
  significant digits, using the locale's decimal symbol and CLDR's
  ``superscriptingExponent`` symbol. A double carries 15 to 17 significant
  digits, so writing its 29 integer digits would show digits that mean
  nothing, and CLDR's long compact names stop at trillions (10^12), which
  gives "51237520 trillion".
- Ranges with a unit: the unit is written once, after the high end, in the
  plural form of the range: "29 to 43 inches", not "29 inches to 43 inches"
  (CLDR has no range-with-unit pattern; its range collapsing heuristic, LDML
  Part 3 "Collapsing Number Ranges", does the same). Currency symbols are
  kept on both ends ("$10 to $25"), as CLDR's heuristic keeps one-character
  symbols.
- A range is written with the dash of the bank (CLDR ``range`` pattern,
  "{0}–{1}") only when neither end carries a sign; otherwise with the bank's
  words ("-2,258 to 805"), so a dash never stands next to a minus sign.
"""

from __future__ import annotations

import datetime as dt
import functools
import math
import re
import unicodedata
from collections.abc import Callable, Iterable, Sequence
from decimal import ROUND_HALF_UP, Decimal, localcontext
from fractions import Fraction

from babel import Locale, UnknownLocaleError, localedata
from babel.core import get_global, get_locale_identifier
from babel.core import parse_locale as babel_parse_locale
from babel.lists import format_list
from babel.numbers import (
    NumberPattern,
    UnknownCurrencyError,
    format_compact_decimal,
    format_currency,
    format_decimal,
    format_percent,
    get_currency_precision,
    get_currency_symbol,
    get_territory_currencies,
    parse_pattern,
    validate_currency,
)
from babel.units import UnknownUnitError, format_unit

from narrator.errors import NarratorError

# CLDR <minimumGroupingDigits> (common/main/<locale>.xml, element numbers/minimumGroupingDigits;
# LDML Part 3, "Number Patterns"). babel 2.19 does not ship this element. The table lists the
# locales whose value differs from their CLDR parent's (root is 1), as CLDR 48 sets them and
# ICU 78.2 applies them (read when this table was made, for every locale babel knows); a locale
# takes the value of the nearest entry on its CLDR parent chain (es_MX -> es_419 -> es).
MINIMUM_GROUPING_DIGITS: dict[str, int] = {
    "be": 2, "bg": 2, "ee": 3, "es": 2, "es_419": 1, "et": 2, "hu": 2, "hy": 2, "ia": 2, "ie": 2,
    "it": 2, "ka": 2, "lv": 2, "pl": 2, "pt_AO": 1, "pt_PT": 2, "ru_UA": 2, "sl": 2, "sq": 2,
}

# CLDR supplemental pluralRanges.xml: the plural category of a range from its ends' categories,
# for the languages that have a bank (en, es) or will have one (fr). Elsewhere, and for a pair
# the table does not list, the end's category is used (a rule of ours).
_PLURAL_RANGES: dict[str, dict[tuple[str, str], str]] = {
    "en": {("one", "other"): "other", ("other", "one"): "other", ("other", "other"): "other"},
    "es": {("one", "other"): "other", ("other", "one"): "other", ("other", "other"): "other"},
    "fr": {("one", "one"): "one", ("one", "other"): "other", ("other", "other"): "other"},
}

SCIENTIFIC_FROM = Decimal(10) ** 15  # a rule of ours, see the module docstring
SCIENTIFIC_DIGITS = 3  # significant digits of a number written in scientific form

# CLDR root currencySpacing (beforeCurrency and afterCurrency): currencyMatch [[:^S:]&[:^Z:]],
# surroundingMatch [:digit:], insertBetween U+00A0 (LDML Part 3, "Currency Boundary Spacing").
_CURRENCY_SPACE = "\u00a0"
_SUPERSCRIPT = str.maketrans("0123456789-", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻")
_MINUS_SIGNS = "-\u2212\u2012\u2013"  # hyphen-minus, minus sign, and the dashes a locale may use as minus
_NO_BREAK = "\u00a0"


def _refuse(locale: str, why: str) -> NarratorError:
    return NarratorError(f"locale {locale!r} {why}")


def _suggestions(language: str) -> str:
    """The language's likely CLDR locale and how many CLDR has: "en_US (CLDR has 110 locales for 'en')"."""
    likely = get_global("likely_subtags").get(language, "")
    parts = likely.split("_")
    first = f"{parts[0]}_{parts[-1]}" if len(parts) >= 2 else ""
    count = sum(1 for name in localedata.locale_identifiers() if name.split("_")[0] == language)
    if not count:
        return ""
    shown = f"{first} " if first and localedata.exists(first) else ""
    return f"{shown}(CLDR has {count} locales for {language!r})"


def parse_locale(locale: str) -> Locale:
    """The CLDR locale named by ``locale`` ("en_US" or "en-US"), or a NarratorError saying why not.

    A name CLDR would silently replace is refused rather than guessed: the
    POSIX "C" locale, an operating-system name with an encoding
    ("en_US.UTF-8"), and a territory CLDR has no data for ("en_ZZ", which
    babel would turn into en_US).

    >>> str(parse_locale("es-MX"))
    'es_MX'
    """
    if not isinstance(locale, str) or not locale.strip():
        raise NarratorError(f"locale must be a CLDR locale name such as 'en_US', not {locale!r}")
    name = locale.strip()
    if name.upper() in ("C", "POSIX") or name.upper().startswith(("C.", "POSIX")):
        raise _refuse(name, "is the POSIX locale of programs, not a CLDR locale for readers; "
                            "give one such as en_US, en_GB or es_ES")
    if "." in name or "@" in name:
        base = re.split(r"[.@]", name, maxsplit=1)[0]
        raise _refuse(name, f"is an operating-system locale name; give the CLDR locale without "
                            f"its encoding, e.g. {base.replace('-', '_')!r}")
    identifier = name.replace("-", "_")
    try:
        language, territory, script, variant, *_ = babel_parse_locale(identifier)
    except ValueError:
        raise _refuse(name, "is not a locale name (expected e.g. 'en_US')") from None
    if variant and variant.upper() == "POSIX":
        raise _refuse(name, "is the POSIX variant, meant for programs; give one such as en_US")
    try:
        parsed = Locale.parse(identifier)
    except (UnknownLocaleError, ValueError):
        known = _suggestions(language.lower()) if language else ""
        hint = f"; give a CLDR locale such as {known}" if known else "; give one such as en_US or es_ES"
        raise NarratorError(f"unknown locale {name!r}: CLDR has no data for it{hint}") from None
    asked = (language.lower(), (territory or "").upper(), (script or "").title())
    got = (parsed.language, parsed.territory or "", parsed.script or "")
    if asked[0] != got[0] or (asked[1] and asked[1] != got[1]) or (asked[2] and asked[2] != got[2]) \
            or not localedata.exists(str(parsed)):
        known = _suggestions(parsed.language)
        raise _refuse(name, f"has no CLDR data of its own (babel would use {str(parsed)!r} instead); "
                            f"give a CLDR locale such as {known}")
    return parsed


def language_tag(locale: str) -> str:
    """The BCP 47 language tag of a CLDR locale ("zh_Hant_TW" -> "zh-Hant-TW"), for document metadata.

    >>> language_tag("es_419")
    'es-419'
    """
    parsed = parse_locale(locale)
    return get_locale_identifier((parsed.language, parsed.territory, parsed.script, parsed.variant), sep="-")


@functools.lru_cache(maxsize=64)
def _parent(identifier: str) -> str | None:
    """The CLDR parent locale (parentLocales from babel's supplemental data, else truncation)."""
    exceptions = get_global("parent_exceptions")
    if identifier in exceptions:
        return exceptions[identifier]
    if "_" in identifier:
        return identifier.rsplit("_", 1)[0]
    return None  # root


def minimum_grouping_digits(locale: Locale | str) -> int:
    """CLDR ``minimumGroupingDigits`` of a locale, from :data:`MINIMUM_GROUPING_DIGITS` on its parent chain.

    >>> minimum_grouping_digits("es_ES"), minimum_grouping_digits("es_MX"), minimum_grouping_digits("en_US")
    (2, 1, 1)
    """
    identifier = str(locale)
    while identifier and identifier != "root":
        if identifier in MINIMUM_GROUPING_DIGITS:
            return MINIMUM_GROUPING_DIGITS[identifier]
        identifier = _parent(identifier)
    return 1


def _operand(node, operands: dict[str, Decimal]) -> Decimal:
    kind, args = node
    if kind == "value":
        return Decimal(args[0])
    if kind == "mod":
        left, right = (_operand(arg, operands) for arg in args)
        return left % right
    return operands[kind]  # n, i, v, w, f, t, c, e


def _holds(node, operands: dict[str, Decimal]) -> bool:
    """One node of babel's parsed CLDR plural rule (PluralRule.abstract), evaluated with our operands."""
    kind, args = node
    if kind == "or":
        return _holds(args[0], operands) or _holds(args[1], operands)
    if kind == "and":
        return _holds(args[0], operands) and _holds(args[1], operands)
    if kind == "not":
        return not _holds(args[0], operands)
    if kind == "relation":
        method, expression, (_, ranges) = args
        value = _operand(expression, operands)
        for low, high in ranges:
            low_value, high_value = _operand(low, operands), _operand(high, operands)
            if method == "within" and low_value <= value <= high_value:
                return True
            if method == "in" and value == value.to_integral_value() and low_value <= value <= high_value:
                return True
        return False
    raise NarratorError(f"unknown CLDR plural rule node {kind!r}")


def compact_plural_form(locale: Locale | str, shown: Decimal, exponent: int) -> str:
    """The CLDR plural category of a number written in compact form: ``shown`` (the number as written,
    e.g. Decimal("1.5")) times 10^``exponent``, with the operand ``e`` = ``exponent`` (LDML Part 3,
    "Plural Operand Meanings", example 1.2c6: n = i = 1200000, e = 6), which babel does not set.

    >>> compact_plural_form("es", Decimal("1.5"), 6), compact_plural_form("en", Decimal("1.5"), 6)
    ('many', 'other')
    """
    rules = (locale if isinstance(locale, Locale) else Locale.parse(locale)).plural_form
    value = abs(shown.scaleb(exponent))
    fraction = format(value, "f").partition(".")[2]
    operands = {
        "n": value, "i": Decimal(int(value)), "v": Decimal(len(fraction)), "w": Decimal(len(fraction.rstrip("0"))),
        "f": Decimal(int(fraction or 0)), "t": Decimal(int(fraction.rstrip("0") or 0)),
        "c": Decimal(exponent), "e": Decimal(exponent),
    }
    for tag, node in rules.abstract:
        if _holds(node, operands):
            return tag
    return "other"


def plural_range(language: str, start: str, end: str) -> str:
    """The CLDR plural category of a range whose ends have categories ``start`` and ``end``.

    >>> plural_range("en", "other", "one")
    'other'
    """
    return _PLURAL_RANGES.get(language, {}).get((start, end), end)


@functools.lru_cache(maxsize=8)
def _unit_words(language: str) -> tuple[dict[str, str], dict[str, str | None]]:
    """The bank's unit words (``[units]``: word -> CLDR unit id) and money words (``[units.money]``)."""
    from narrator.phrasing.bank import load_bank

    bank = load_bank(language)
    units: dict[str, str] = {}
    money: dict[str, str | None] = {}
    for key, value in bank.messages.items():
        if not key.startswith("units.") or not isinstance(value, list):
            continue
        name = key[len("units."):]
        if name.startswith("money."):
            code = name[len("money."):]
            for word in value:
                money[word.strip().lower()] = None if code == "territory" else code.upper()
        else:
            for word in value:
                units[word.strip().lower()] = name
    return units, money


def _word_tables(language: str | None) -> list[tuple[dict[str, str], dict[str, str | None]]]:
    """The unit-word tables to search: the locale's language first, then every other bank."""
    from narrator.phrasing.bank import available_languages

    languages = list(available_languages())
    if language in languages:
        languages.remove(language)
        languages.insert(0, language)
    return [_unit_words(name) for name in languages]


def cldr_unit_id(unit: str | None, language: str | None = None) -> str | None:
    """The CLDR unit id for a user's unit word ("days" -> "duration-day"), or None if none fits.

    The words come from the phrase banks' ``[units]`` tables (``language``'s
    bank first, then the others, since a column may be named in another
    language than the report's). A string that already is a CLDR id babel
    knows ("volume-liter") is returned as is.

    >>> cldr_unit_id("Litres")
    'volume-liter'
    """
    if not unit:
        return None
    word = unit.strip().lower()
    for units, _money in _word_tables(language):
        if word in units:
            return units[word]
    if "-" in word:
        try:
            format_unit(1, word, locale="en")
        except UnknownUnitError:
            return None
        return word
    return None


def _money_word(unit: str, language: str | None) -> tuple[bool, str | None]:
    """(is it a money word, its ISO code or None for "the territory's currency")."""
    word = unit.strip().lower()
    for _units, money in _word_tables(language):
        if word in money:
            return True, money[word]
    return False, None


def round_half_up(value: float, decimals: int) -> Decimal:
    """The value rounded half up to ``decimals`` places, as an exact Decimal (never "-0").

    Works for every finite double, up to about 1.8e308 (the arithmetic runs
    with as many digits as the number has).

    >>> round_half_up(2.25, 1)
    Decimal('2.3')
    """
    if not math.isfinite(value):
        raise NarratorError(f"cannot format the non-finite number {value!r}")
    exact = Decimal(repr(float(value)))
    quantum = Decimal(1).scaleb(-decimals) if decimals > 0 else Decimal(1)
    with localcontext() as context:
        context.prec = max(28, exact.adjusted() + max(decimals, 0) + 4)
        rounded = exact.quantize(quantum, rounding=ROUND_HALF_UP)
    return abs(rounded) if rounded == 0 else rounded


def largest_remainder(parts: Sequence[float], places: int) -> list[Decimal]:
    """The percents of ``parts`` (non-negative numbers that partition a whole, their sum) rounded to ``places``
    decimals so that they add up to exactly 100: each part takes its quota rounded down, and the units still
    missing go one each to the largest remainders, the earlier part first on a tie (the largest-remainder, or
    Hamilton, method: common practice for published tables of shares, so that "49%, 3% and 47%" never add up
    to 99). Exact arithmetic (fractions), so a share of 7 in 100 is 7, never 6.

    >>> [str(p) for p in largest_remainder([99, 6, 95], 0)]
    ['50', '3', '47']
    >>> [str(p) for p in largest_remainder([1, 1, 1], 1)]
    ['33.4', '33.3', '33.3']
    """
    exact = [Fraction(part) for part in parts]
    total = sum(exact)
    if total <= 0 or any(part < 0 for part in exact):
        raise NarratorError("shares need non-negative parts with a positive total")
    scale = 100 * 10**places
    quotas = [part * scale / total for part in exact]
    units = [math.floor(quota) for quota in quotas]
    missing = scale - sum(units)
    for index in sorted(range(len(quotas)), key=lambda k: (-(quotas[k] - units[k]), k))[:missing]:
        units[index] += 1
    return [Decimal(unit).scaleb(-places) for unit in units]


def places_clear_of(limits: Sequence[float], values: Sequence[float],
                    rounded: Callable[[int], Sequence[Decimal]], start: int, stop: int) -> int:
    """The fewest places from ``start`` (at most ``stop``) at which no value is printed, as ``rounded(places)``
    gives it, on a limit it does not equal (a rule of ours, one for every printed value: a data value rounded
    onto a declared bound would say it reached the bound, a share printed as 0% or 100% would say none or all).

    >>> places_clear_of([0, 100], [0.4, 99.6], lambda p: [round_half_up(0.4, p), round_half_up(99.6, p)], 0, 3)
    1
    """
    places = start
    while places < stop and any(value != limit and shown == limit
                                for value, shown in zip(values, rounded(places), strict=True) for limit in limits):
        places += 1
    return places


def _magnitude(value: float) -> int:
    """floor(log10 |value|): 2 for 425, 0 for 1.8, -2 for 0.034."""
    return math.floor(math.log10(abs(value)))


def memo_decimals(scale: float | None, *, reference: float | None = None, data_decimals: int = 0) -> int:
    """Decimals for the numbers of a memo: about two effective digits (Ehrenberg 1981).

    Effective digits are the ones that vary between the numbers a reader
    compares, so the decimals come from ``scale`` (the spread of the numbers
    compared, e.g. the IQR): enough for two digits of it. ``reference`` (the
    center) also gets at least two significant digits. Never more than one
    decimal beyond the data's own precision, never fewer than zero (whole
    numbers are not rounded to tens; very large numbers use :meth:`compact`).

    >>> memo_decimals(370.0, reference=425.0)
    0
    >>> memo_decimals(1.8, reference=579.0, data_decimals=2)
    1
    """
    wanted = 0
    for number in (scale, reference):
        if number is not None and math.isfinite(number) and number != 0:
            wanted = max(wanted, 1 - _magnitude(number))
    return max(0, min(wanted, data_decimals + 1))


def methods_decimals(data_decimals: int) -> int:
    """Decimals for summary statistics in methods text and tables: one more than the data (Cole 2015).

    >>> methods_decimals(0)
    1
    """
    return max(0, int(data_decimals)) + 1


def column_decimals(decimals_per_cell: Iterable[int]) -> int:
    """One precision for a table column (APA Publication Manual, 7th ed., 2020): the largest asked for.

    >>> column_decimals([0, 1, 2])
    2
    """
    return max(decimals_per_cell, default=0)


def _integer_digits(number: Decimal) -> int:
    """How many digits the integer part of ``number`` has (1 for 0.5)."""
    whole = abs(number).to_integral_value(rounding="ROUND_DOWN")
    return 1 if whole == 0 else whole.adjusted() + 1


def _is_sign_start(text: str) -> bool:
    stripped = text.lstrip("\u200e\u200f\u061c")  # bidi marks some locales put before a sign
    return bool(stripped) and stripped[0] in _MINUS_SIGNS + "+"


# The texts formatters have written, one table per (locale, currency): babel's formatting is most of the
# time a narrative takes, and several narratives of one data set (the audiences) write the same numbers.
# Keys: (kind, decimals, the rounded value's text) and ("fixed", decimals, the value). A table that
# reaches _TEXTS_KEPT entries starts again empty.
_TEXTS: dict[tuple[str, str | None], dict[tuple[str, int, str | float], str]] = {}
_TEXTS_KEPT = 50_000


def _shared_texts(locale_id: str, currency: str | None) -> dict[tuple[str, int, str | float], str]:
    table = _TEXTS.setdefault((locale_id, currency), {})
    if len(table) >= _TEXTS_KEPT:
        table.clear()
    return table


class NumberFormatter:
    """Formats numbers for one CLDR locale, optionally with a currency or a unit.

    ``currency`` is an ISO 4217 code ("USD"). ``unit`` is the user's unit text
    ("days", "litres", "widgets"); a CLDR unit id is looked up for it unless
    ``unit_id`` gives one. Money words ("dollars") turn into a currency: the
    locale territory's own for "dollar" words, else the one named.

    >>> NumberFormatter("de_DE").fixed(1234.5, 1)
    '1.234,5'
    >>> NumberFormatter("es_ES").fixed(3710, 0), NumberFormatter("es_ES").fixed(13710, 0)
    ('3710', '13.710')
    """

    __slots__ = ("locale", "locale_id", "currency_code", "unit", "unit_id", "_bank", "_patterns", "_texts",
                 "_min_grouping", "_symbols")

    def __init__(
        self,
        locale: str,
        *,
        currency: str | None = None,
        unit: str | None = None,
        unit_id: str | None = None,
    ) -> None:
        self.locale = parse_locale(locale)
        self.locale_id = str(self.locale)
        self._bank = None
        self._patterns: dict[tuple[str, int, bool], NumberPattern] = {}
        self._min_grouping = minimum_grouping_digits(self.locale)
        self._symbols = self.locale.number_symbols["latn"]
        self.unit = unit.strip() if unit and unit.strip() else None
        if currency is None and self.unit:
            is_money, code = _money_word(self.unit, self.locale.language)
            if is_money:
                currency = code or self._territory_currency()
                self.unit = None
        if currency is not None:
            try:
                validate_currency(currency.upper())
            except UnknownCurrencyError:
                raise NarratorError(f"unknown currency code {currency!r} (expected an ISO 4217 code)") from None
            currency = currency.upper()
        self.currency_code = currency
        self._texts = _shared_texts(self.locale_id, currency)
        if unit_id is not None:
            try:
                format_unit(1, unit_id, locale=self.locale)
            except UnknownUnitError:
                raise NarratorError(f"unknown CLDR unit id {unit_id!r}") from None
        self.unit_id = unit_id if unit_id is not None else cldr_unit_id(self.unit, self.locale.language)

    def _territory_currency(self) -> str:
        territory = self.locale.territory
        found = get_territory_currencies(territory) if territory else []
        return found[0] if found else "USD"

    @property
    def bank(self):
        """The phrase bank of this locale's language (words for counts and user units)."""
        if self._bank is None:
            from narrator.phrasing.bank import load_bank

            self._bank = load_bank(self.locale.language)
        return self._bank

    @property
    def decimal_symbol(self) -> str:
        """The locale's CLDR decimal symbol ("." or ",")."""
        return self._symbols["decimal"]

    # ------------------------------------------------------------ patterns

    def _pattern(self, kind: str, decimals: int, grouped: bool = True) -> NumberPattern:
        """The locale's own CLDR pattern (keeps en_IN lakh grouping) with exactly ``decimals`` places.

        ``grouped=False`` drops the grouping separators, for numbers too short
        to be grouped under the locale's ``minimumGroupingDigits``.
        """
        key = (kind, decimals, grouped)
        if key not in self._patterns:
            if kind == "decimal":
                base = self.locale.decimal_formats[None].pattern
            elif kind == "percent":
                base = self.locale.percent_formats[None].pattern
            else:
                base = self.locale.currency_formats["standard"].pattern
            positive = base.split(";")[0]
            # The number part runs from the first '#' or '0' to the last '0' or '#'.
            digits = [i for i, ch in enumerate(positive) if ch in "#0.,"]
            start, end = digits[0], digits[-1] + 1
            integer_part = positive[start:end].split(".")[0]
            if not grouped:
                integer_part = integer_part.replace(",", "").lstrip("#") or "0"
            number = integer_part + ("." + "0" * decimals if decimals > 0 else "")
            # Parsed once: babel would parse the pattern text again on every call.
            self._patterns[key] = parse_pattern(positive[:start] + number + positive[end:])
        return self._patterns[key]

    def _grouped(self, kind: str, decimals: int, integer_digits: int) -> bool:
        """CLDR minimumGroupingDigits: group only from primary grouping size + minimumGroupingDigits digits."""
        primary = self._pattern(kind, decimals).grouping[0]
        return integer_digits >= primary + self._min_grouping

    def _digits_text(self, rounded: Decimal, kind: str, decimals: int) -> str:
        """``rounded`` through babel with the locale's pattern for ``kind``, grouped by CLDR's rules."""
        key = (kind, decimals, str(rounded))
        text = self._texts.get(key)
        if text is None:
            text = self._texts[key] = self._babel_text(rounded, kind, decimals)
        return text

    def _babel_text(self, rounded: Decimal, kind: str, decimals: int) -> str:
        shown = rounded * 100 if kind == "percent" else rounded
        pattern = self._pattern(kind, decimals, self._grouped(kind, decimals, _integer_digits(shown)))
        with localcontext() as context:
            context.prec = max(28, _integer_digits(shown) + decimals + 4)
            if kind == "percent":
                return format_percent(rounded, pattern, self.locale)
            if kind == "currency":
                text = format_currency(rounded, self.currency_code, pattern, self.locale, currency_digits=False)
                return self._currency_spacing(text)
            return format_decimal(rounded, pattern, self.locale)

    @staticmethod
    def _currency_spacing(text: str) -> str:
        """CLDR currencySpacing: a no-break space between a digit and a letter-ending currency symbol."""
        out = []
        for index, char in enumerate(text):
            if index > 0:
                before, after = text[index - 1], char
                if (before.isdigit() and _spaced_symbol_char(after)) or (_spaced_symbol_char(before)
                                                                          and after.isdigit()):
                    out.append(_CURRENCY_SPACE)
            out.append(char)
        return "".join(out)

    # ------------------------------------------------------------- numbers

    def fixed(self, value: float, decimals: int) -> str:
        """``value`` with exactly ``decimals`` decimals, in the locale's symbols and grouping.

        From 10^15 on the number is written in scientific form (:meth:`scientific`).

        >>> NumberFormatter("en_IN").fixed(1234567, 0)
        '12,34,567'
        """
        decimals = max(0, int(decimals))
        key = ("fixed", decimals, float(value))
        text = self._texts.get(key)
        if text is None:
            rounded = round_half_up(value, decimals)
            if abs(rounded) >= SCIENTIFIC_FROM:
                return self.scientific(value)
            text = self._texts[key] = self._digits_text(rounded, "decimal", decimals)
        return text

    def digits(self, n: int) -> str:
        """A whole number written without grouping, for identifiers such as a seed ("20261201")."""
        return format_decimal(int(n), "0", self.locale)

    def scientific(self, value: float, significant: int = SCIENTIFIC_DIGITS) -> str:
        """``value`` as "m × 10ⁿ" with ``significant`` significant digits (CLDR superscriptingExponent).

        >>> NumberFormatter("es_ES").scientific(5.12375e28)
        '5,12\\xa0×\\xa010²⁸'
        """
        if not math.isfinite(value):
            raise NarratorError(f"cannot format the non-finite number {value!r}")
        if value == 0:
            return self.fixed(0, significant - 1)
        exact = Decimal(repr(float(value)))
        exponent = exact.adjusted()
        with localcontext() as context:
            context.prec = max(28, abs(exponent) + significant + 4)
            mantissa = exact.scaleb(-exponent).quantize(Decimal(1).scaleb(-(significant - 1)), ROUND_HALF_UP)
            if abs(mantissa) >= 10:
                exponent += 1
                mantissa = (mantissa / 10).quantize(Decimal(1).scaleb(-(significant - 1)), ROUND_HALF_UP)
        mantissa_text = format_decimal(mantissa, self._pattern("decimal", significant - 1, False), self.locale)
        times = self._symbols.get("superscriptingExponent", "×")
        return f"{mantissa_text}{_NO_BREAK}{times}{_NO_BREAK}10{str(exponent).translate(_SUPERSCRIPT)}"

    def percent(self, share: float, decimals: int = 0) -> str:
        """A share (0.12) as a percent in the locale's style ("12%", "12 %").

        >>> NumberFormatter("en_US").percent(0.125, 1)
        '12.5%'
        """
        decimals = max(0, int(decimals))
        hundred = round_half_up(share * 100, decimals)
        if abs(hundred) >= SCIENTIFIC_FROM:
            return self._wrap("percent", self.scientific(abs(share) * 100), negative=share < 0)
        return self.percent_points(hundred, decimals)

    def percent_points(self, hundred: Decimal, decimals: int) -> str:
        """A percent already rounded to ``decimals`` places (``Decimal("12.5")`` is "12.5%"), as
        :func:`largest_remainder` gives it.

        >>> NumberFormatter("en_US").percent_points(Decimal("49"), 0)
        '49%'
        """
        return self._digits_text(hundred / 100, "percent", max(0, int(decimals)))

    def currency(self, value: float, decimals: int | None = None) -> str:
        """An amount in the formatter's ISO 4217 currency; ``decimals`` defaults to the currency's own.

        >>> NumberFormatter("es_MX", currency="USD").currency(-1519, 0)
        '-USD\\xa01,519'
        """
        if self.currency_code is None:
            raise NarratorError("no currency was given (use an ISO 4217 code such as 'USD')")
        if decimals is None:
            decimals = get_currency_precision(self.currency_code)
        decimals = max(0, int(decimals))
        rounded = round_half_up(value, decimals)
        if abs(rounded) >= SCIENTIFIC_FROM:
            return self._wrap("currency", self.scientific(abs(value)), negative=value < 0)
        return self._digits_text(rounded, "currency", decimals)

    def _without_trailing_symbol(self, text: str) -> str:
        """A currency amount without the symbol the locale's pattern puts after the number ("52 €" -> "52");
        unchanged when the symbol comes first ("$52")."""
        pattern = self.locale.currency_formats["standard"].pattern.split(";")[0]
        if not pattern.rstrip().endswith("\u00a4"):
            return text
        symbol = get_currency_symbol(self.currency_code, locale=self.locale)
        if not text.endswith(symbol):
            return text
        return text[: len(text) - len(symbol)].rstrip(" \u00a0\u202f")

    def _wrap(self, kind: str, number_text: str, *, negative: bool) -> str:
        """A pre-formatted number inside the locale's percent or currency pattern (prefix, suffix, sign)."""
        frame = self._digits_text(Decimal(-1 if negative else 1) / (100 if kind == "percent" else 1), kind, 0)
        return frame.replace("1", number_text, 1)

    def compact(self, value: float, decimals: int = 1) -> str:
        """The CLDR long compact form: 1234567 -> "1.2 million" (en), "1,2 millones" (es).

        From 10^15 on, where CLDR's compact names end, the scientific form.
        """
        if not math.isfinite(value):
            raise NarratorError(f"cannot format the non-finite number {value!r}")
        if abs(round_half_up(value, 0)) >= SCIENTIFIC_FROM:
            return self.scientific(value)
        return format_compact_decimal(value, format_type="long", locale=self.locale, fraction_digits=decimals)

    # ---------------------------------------------------------- quantities

    def _unit_pattern(self, category: str) -> str:
        """The CLDR long unit pattern of this formatter's unit for a plural category ("{0} days")."""
        patterns = self.locale._data["unit_patterns"][self.unit_id]["long"]
        return patterns.get(category) or patterns["other"]

    def _category(self, number: Decimal) -> str:
        # The rounded Decimal carries its visible decimals, so CLDR plural rules see "1.0"
        # (other: "1.0 days") and not the float 1 ("1 day").
        return self.locale.plural_form(number)

    def quantity(self, value: float, decimals: int) -> str:
        """A number with its unit: currency if one is set, a CLDR unit if one fits, else the user's text.

        >>> NumberFormatter("en_US", unit="days").quantity(12.5, 1)
        '12.5 days'
        """
        decimals = max(0, int(decimals))
        if self.currency_code is not None:
            return self.currency(value, decimals)
        number = self.fixed(value, decimals)
        if self.unit_id is not None:
            return self._unit_pattern(self._category(round_half_up(value, decimals))).replace("{0}", number)
        return self.with_unit(number)

    def with_unit(self, number: str, category: str = "other") -> str:
        """A number already formatted (e.g. "1.2 million") followed by the unit, if there is one."""
        if self.currency_code is not None:
            raise NarratorError("a currency amount is formatted with currency(), not with_unit()")
        if self.unit_id is not None:
            return self._unit_pattern(category).replace("{0}", number)
        if self.unit is None:
            return number
        if self.unit == "%":
            return self._percent_unit(number)
        return self.bank.format("format.quantity_with_text_unit", number=number, unit=self.unit)

    def _percent_unit(self, number: str) -> str:
        """A number with the unit "%" placed as the locale's CLDR percent pattern places its sign: "81%" in
        en_US and es_MX ("#,##0%"), "81 %" with a no-break space in es_ES and fr_FR ("#,##0\xa0%").

        >>> NumberFormatter("en_US", unit="%").quantity(81, 0), NumberFormatter("fr_FR", unit="%").quantity(81, 0)
        ('81%', '81\xa0%')
        """
        pattern = self.locale.percent_formats[None].pattern.split(";")[0]
        digits = [k for k, char in enumerate(pattern) if char in "#0,."]
        if not digits or "%" not in pattern:
            return self.bank.format("format.quantity_with_text_unit", number=number, unit=self.unit)
        sign = pattern.index("%")
        if sign < digits[0]:
            return pattern[:digits[0]].replace("'", "") + number
        return number + pattern[digits[-1] + 1:].replace("'", "")

    def quantity_pair(self, low: float, high: float, decimals: int, *, compact: bool = False) -> tuple[str, str]:
        """The two ends of a range with the unit written once ("29", "43 inches"; a rule of ours).

        The unit goes with the end farther from the range's separator (the high
        end when the unit follows the number, as in every CLDR pattern of en and
        es), in the plural form of the range (CLDR plural ranges). A currency
        symbol the locale writes before the number stays on both ends ("$10 to
        $25", "EUR 52 a EUR 179" in es_MX); one it writes after the number is a
        unit like the others and goes once, at the end ("52 à 179 €", fr_FR and
        es_ES: the CLDR currency pattern "#,##0.00 ¤"). ``compact`` writes the
        numbers as "1.2 million".

        >>> NumberFormatter("en_US", unit="inches").quantity_pair(29, 43, 0)
        ('29', '43 inches')
        >>> NumberFormatter("fr_FR", currency="EUR").quantity_pair(52, 179, 0)
        ('52', '179\xa0€')
        """
        decimals = max(0, int(decimals))
        if self.currency_code is not None:
            low_text, high_text = self.currency(low, decimals), self.currency(high, decimals)
            return self._without_trailing_symbol(low_text), high_text
        if compact:
            low_text, high_text = self.compact(low), self.compact(high)
            category = "other"
        else:
            low_text, high_text = self.fixed(low, decimals), self.fixed(high, decimals)
            category = plural_range(self.locale.language, self._category(round_half_up(low, decimals)),
                                    self._category(round_half_up(high, decimals)))
        if self.unit_id is not None:
            pattern = self._unit_pattern(category)
            if pattern.rstrip().endswith("{0}") and not pattern.lstrip().startswith("{0}"):
                return pattern.replace("{0}", low_text), high_text  # unit before the number
            return low_text, pattern.replace("{0}", high_text)
        return low_text, self.with_unit(high_text)

    def range(self, low: str, high: str) -> str:
        """Two formatted ends joined by the bank's dash ("13–28"), or by its words when an end has a sign.

        >>> NumberFormatter("en_US").range("-2,258", "805")
        '-2,258 to 805'
        """
        key = "numbers.range_words" if _is_sign_start(low) or _is_sign_start(high) else "numbers.range_dash"
        return self.bank.format(key, low=low, high=high)

    def range_words(self, low: str, high: str) -> str:
        """Two formatted ends joined by the bank's words for a range: "13 to 28 days", "13 a 28 días"."""
        return self.bank.format("numbers.range_words", low=low, high=high)

    def quantity_range(self, low: float, high: float, decimals: int, *, compact: bool = False) -> str:
        """A range in words with its unit written once: "29 to 43 inches", "$10 to $25"."""
        return self.range_words(*self.quantity_pair(low, high, decimals, compact=compact))

    # -------------------------------------------------------------- counts

    def count(self, n: int, noun_key: str, *, spell_out: bool = True) -> str:
        """``n`` with its noun in the right plural form: "one value", "three rows", "11 values".

        Small whole numbers are spelled out up to the bank's ``grammar.spell_out_max``
        (English style guides: one to nine); the words and the noun forms
        (by CLDR plural category) come from the phrase bank.
        """
        n = int(n)
        noun = self.bank.noun(noun_key)
        word = noun.forms.get(self.count_category(n), noun.forms["other"])
        return self.bank.format("format.count", number=self.count_number(n, noun_key, spell_out=spell_out), noun=word)

    def count_category(self, n: int) -> str:
        """The CLDR plural category of a count as :meth:`count_number` writes it: a count of a million
        or more is written in compact form ("1,5 millones"), whose category takes the exponent into
        account (:func:`compact_plural_form`).

        >>> NumberFormatter("es_ES").count_category(1_500_000), NumberFormatter("es_ES").count_category(21)
        ('many', 'other')
        >>> NumberFormatter("fr_FR").count(1_500_000, "value")
        '1,5 million de valeurs'
        """
        n = int(n)
        if abs(n) < 1_000_000 or abs(Decimal(n)) >= SCIENTIFIC_FROM:
            return self.locale.plural_form(n)
        exponent = 3 * ((len(str(abs(n))) - 1) // 3)
        shown = round_half_up(n / 10**exponent, 1)
        return compact_plural_form(self.locale, shown, exponent)

    def count_number(self, n: int, noun_key: str, *, spell_out: bool = True, alone: bool = False) -> str:
        """The number part of :meth:`count`: spelled out when small (agreeing with the noun's
        gender), "3.5 million" from a million up, else the whole number. ``alone``: the number stands
        without its noun ("one below the lower fence"), which takes the bank's ``number_words.alone``
        where the language has one (Spanish "uno", not "un")."""
        n = int(n)
        bank = self.bank
        if spell_out and 0 <= n <= bank.spell_out_max:
            gender = bank.noun(noun_key).gender
            if alone and gender == "default" and "alone" in bank.number_words:
                gender = "alone"
            return bank.number_word(n, gender)
        if abs(n) >= 1_000_000:
            return self.compact(n)
        return self.fixed(n, 0)

    # --------------------------------------------------------------- dates

    def _long_date_pattern(self, day: dt.date) -> str:
        """CLDR's long date pattern, its day field replaced by the bank's first of the month on day 1."""
        from babel.dates import get_date_format

        pattern = get_date_format("long", locale=self.locale).pattern
        if day.day != 1:
            return pattern
        one = self.fixed(1, 0)
        first = self.bank.format("format.first_of_month", day=one)
        if first == one:
            return pattern
        literal = "'" + first.replace("'", "''") + "'"
        out, quoted, k = [], False, 0
        while k < len(pattern):  # LDML date patterns: text in single quotes is literal, "''" is a quote
            char = pattern[k]
            if char == "'":
                quoted = not quoted
                out.append(char)
                k += 1
                continue
            end = k
            while end < len(pattern) and pattern[end] == char:
                end += 1
            run = pattern[k:end]
            out.append(literal if run == "d" and not quoted else run)
            k = end
        return "".join(out)

    def long_date(self, day: dt.date) -> str:
        """A date in the locale's CLDR long form, the first of the month by the bank's rule.

        >>> NumberFormatter("fr_FR").long_date(dt.date(2026, 12, 1))
        '1er décembre 2026'
        >>> fr, en = NumberFormatter("fr_FR"), NumberFormatter("en_US")
        >>> fr.long_date(dt.date(2026, 12, 2)), en.long_date(dt.date(2026, 12, 1))
        ('2 décembre 2026', 'December 1, 2026')
        """
        from babel.dates import format_date

        return format_date(day, self._long_date_pattern(day), locale=self.locale)

    def long_datetime(self, moment: dt.datetime) -> str:
        """A moment in UTC in the locale's CLDR long date-time form (as babel's "long"), with :meth:`long_date`.

        The time of day is CLDR's long time, or, where the bank's ``format.clock`` is ``units``
        (French), the hours, minutes and seconds with CLDR's short duration units joined by its
        ``unit-narrow`` list pattern, then CLDR's zone name: "16 h 05 min 03 s TU". A locale whose CLDR
        long time already has that form (fr_CA) keeps CLDR's own.

        >>> NumberFormatter("fr_FR").long_datetime(dt.datetime(2026, 12, 1, 16, 5, 3, tzinfo=dt.UTC))
        '1er décembre 2026, 16\u202fh 05\xa0min 03\u202fs TU'
        >>> NumberFormatter("en_US").long_datetime(dt.datetime(2026, 12, 1, 16, 5, 3, tzinfo=dt.UTC))
        'December 1, 2026, 4:05:03\u202fPM UTC'
        """
        from babel.dates import format_time, get_datetime_format

        moment = moment if moment.tzinfo is not None else moment.replace(tzinfo=dt.UTC)
        utc = moment.astimezone(dt.UTC)
        from babel.dates import get_time_format

        if self.bank.format("format.clock") == "units" and ":" in get_time_format("long", locale=self.locale).pattern:
            from babel.units import format_unit

            # Two digits each, as CLDR's own unit-form time (fr_CA: HH 'h' mm 'min' ss 's').
            parts = [format_unit(amount, unit, length="short", locale=self.locale) for amount, unit in (
                (f"{utc.hour:02d}", "duration-hour"), (f"{utc.minute:02d}", "duration-minute"),
                (f"{utc.second:02d}", "duration-second"))]
            zone = format_time(utc, format="z", tzinfo=dt.UTC, locale=self.locale)
            time_text = f"{format_list(parts, style='unit-narrow', locale=self.locale)} {zone}"
        else:
            time_text = format_time(utc, format="long", tzinfo=dt.UTC, locale=self.locale)
        glue = get_datetime_format("long", locale=self.locale).replace("'", "")
        return glue.replace("{0}", time_text).replace("{1}", self.long_date(utc.date()))

    # --------------------------------------------------------------- lists

    def list(self, items: Sequence[str], style: str = "standard") -> str:
        """Items joined by the locale's CLDR list pattern: "a, b, and c" (en_US), "a, b y c" (es)."""
        items = [str(item) for item in items]
        if not items:
            return ""
        return format_list(items, style=style, locale=self.locale)

    def number_list(self, items: Sequence[str], style: str = "standard") -> str:
        """Numbers joined by the list pattern; in a decimal-comma locale, when a number holds the decimal
        comma, the pattern's commas become the CLDR ``list`` number symbol (";"), so "0,25; 0,50 y 0,75"
        reads as three numbers; whole numbers keep the list's own commas ("4, 5 y 9").

        >>> NumberFormatter("es_ES").number_list(["0,25", "0,50", "0,75"])
        '0,25; 0,50 y 0,75'
        >>> NumberFormatter("es_ES").number_list(["4", "5", "9"])
        '4, 5 y 9'
        """
        items = [str(item) for item in items]
        if not items:
            return ""
        patterns = dict(self.locale.list_patterns[style])
        if self.decimal_symbol == "," and any(self.decimal_symbol in item for item in items):
            separator = self._symbols.get("list", ";")
            patterns = {key: pattern.replace("},", "}" + separator) for key, pattern in patterns.items()}
        return _join_list(items, patterns)


def _spaced_symbol_char(char: str) -> bool:
    """CLDR currencyMatch [[:^S:]&[:^Z:]] for a character of a currency symbol that is not a digit."""
    if char.isdigit() or char in "-+\u2212.,\u00a0\u202f '’()" or char.isspace():
        return False
    category = unicodedata.category(char)
    return not category.startswith(("S", "Z", "N", "P", "C"))


def _join_list(items: Sequence[str], patterns) -> str:
    """Join items by CLDR list patterns (keys "2", "start", "middle", "end"), as babel.lists does."""
    if len(items) == 1:
        return items[0]
    if len(items) == 2:
        return patterns["2"].format(*items)
    result = patterns["start"].format(items[0], items[1])
    for item in items[2:-1]:
        result = patterns["middle"].format(result, item)
    return patterns["end"].format(result, items[-1])
