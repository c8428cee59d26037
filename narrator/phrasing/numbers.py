"""One door for numbers: every number a reader sees is formatted here (DESIGN.md, principle 6).

Locale knowledge comes from CLDR through babel; words (spelled-out small
numbers, nouns and their plural forms) come from the phrase bank of the
locale's language, never from this code.

==============================  ================================================
Name                            What it does
==============================  ================================================
:class:`NumberFormatter`        formats numbers for one locale (and unit/currency)
:meth:`~NumberFormatter.fixed`  a number with a fixed count of decimals
:meth:`~NumberFormatter.percent` a share (0.12) as a percent ("12 %")
:meth:`~NumberFormatter.currency` an amount in an ISO 4217 currency
:meth:`~NumberFormatter.compact` "1.2 million" (CLDR long compact form)
:meth:`~NumberFormatter.quantity` a number with its unit (CLDR unit or user text)
:meth:`~NumberFormatter.count`  "three values", "11 rows" (plural rules, spelled out)
:meth:`~NumberFormatter.list`   "a, b, and c" (CLDR list pattern)
:func:`round_half_up`           the one rounding rule, on the decimal representation
:func:`memo_decimals`           rounding policy for memos (Ehrenberg 1981)
:func:`methods_decimals`        rounding policy for methods text (Cole 2015)
:func:`column_decimals`         one precision for a whole table column (APA 2020)
:func:`cldr_unit_id`            maps a user's unit word ("days", "litres") to a CLDR unit id
==============================  ================================================

Rounding is "round half up" on the shortest decimal representation of the
float (``repr``), so 2.25 shows as 2.3, as readers expect from a report; the
rounded decimal, not the float, is handed to babel, so babel never rounds a
second time.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from decimal import ROUND_HALF_UP, Decimal

from babel import Locale, UnknownLocaleError
from babel.lists import format_list
from babel.numbers import (
    UnknownCurrencyError,
    format_compact_decimal,
    format_currency,
    format_decimal,
    format_percent,
    get_territory_currencies,
    validate_currency,
)
from babel.units import UnknownUnitError, format_unit

from narrator.errors import NarratorError

# User unit words -> CLDR unit ids (CLDR units, "unit" element ids as babel
# names them). Keys are compared in lower case. English and Spanish words.
_UNIT_WORDS: dict[str, str] = {
    **dict.fromkeys(("day", "days", "día", "días", "dia", "dias"), "duration-day"),
    **dict.fromkeys(("hour", "hours", "hr", "hrs", "h", "hora", "horas"), "duration-hour"),
    **dict.fromkeys(("minute", "minutes", "min", "mins", "minuto", "minutos"), "duration-minute"),
    **dict.fromkeys(("second", "seconds", "sec", "secs", "s", "segundo", "segundos"), "duration-second"),
    **dict.fromkeys(("week", "weeks", "semana", "semanas"), "duration-week"),
    **dict.fromkeys(("month", "months", "mes", "meses"), "duration-month"),
    **dict.fromkeys(("year", "years", "año", "años"), "duration-year"),
    **dict.fromkeys(
        ("liter", "liters", "litre", "litres", "l", "litro", "litros"), "volume-liter"
    ),
    **dict.fromkeys(("gallon", "gallons", "gal", "galón", "galones"), "volume-gallon"),
    **dict.fromkeys(("kilogram", "kilograms", "kg", "kilo", "kilos", "kilogramo", "kilogramos"), "mass-kilogram"),
    **dict.fromkeys(("gram", "grams", "g", "gramo", "gramos"), "mass-gram"),
    **dict.fromkeys(("pound", "pounds", "lb", "lbs"), "mass-pound"),
    **dict.fromkeys(("mile", "miles", "mi", "milla", "millas"), "length-mile"),
    **dict.fromkeys(("kilometer", "kilometers", "kilometre", "kilometres", "km", "kilómetro", "kilómetros"),
                    "length-kilometer"),
    **dict.fromkeys(("meter", "meters", "metre", "metres", "m", "metro", "metros"), "length-meter"),
    **dict.fromkeys(("foot", "feet", "ft", "pie", "pies"), "length-foot"),
    **dict.fromkeys(("inch", "inches", "in", "pulgada", "pulgadas"), "length-inch"),
}

# Unit words that mean money. None: the currency of the locale's territory.
_CURRENCY_WORDS: dict[str, str | None] = {
    **dict.fromkeys(("dollar", "dollars", "$", "dólar", "dólares"), None),
    **dict.fromkeys(("euro", "euros", "€", "eur"), "EUR"),
    **dict.fromkeys(("usd", "us dollars", "us$"), "USD"),
}


def parse_locale(locale: str) -> Locale:
    """A babel Locale from "en_US" or "en-US"; NarratorError when CLDR does not know it."""
    if not isinstance(locale, str) or not locale.strip():
        raise NarratorError(f"locale must be a name such as 'en_US', not {locale!r}")
    try:
        return Locale.parse(locale.strip().replace("-", "_"))
    except (UnknownLocaleError, ValueError) as exc:
        raise NarratorError(f"unknown locale {locale!r} (CLDR has no data for it): {exc}") from None


def cldr_unit_id(unit: str | None) -> str | None:
    """The CLDR unit id for a user's unit word ("days" -> "duration-day"), or None if none fits.

    A string that already is a CLDR id babel knows ("volume-liter") is returned as is.
    """
    if not unit:
        return None
    word = unit.strip().lower()
    if word in _UNIT_WORDS:
        return _UNIT_WORDS[word]
    if "-" in word:
        try:
            format_unit(1, word, locale="en")
        except UnknownUnitError:
            return None
        return word
    return None


def round_half_up(value: float, decimals: int) -> Decimal:
    """The value rounded half up to ``decimals`` places, as an exact Decimal (never "-0")."""
    if not math.isfinite(value):
        raise NarratorError(f"cannot format the non-finite number {value!r}")
    quantum = Decimal(1).scaleb(-decimals) if decimals > 0 else Decimal(1)
    rounded = Decimal(repr(float(value))).quantize(quantum, rounding=ROUND_HALF_UP)
    return abs(rounded) if rounded == 0 else rounded


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


class NumberFormatter:
    """Formats numbers for one CLDR locale, optionally with a currency or a unit.

    ``currency`` is an ISO 4217 code ("USD"). ``unit`` is the user's unit text
    ("days", "litres", "widgets"); a CLDR unit id is looked up for it unless
    ``unit_id`` gives one. Money words ("dollars") turn into a currency: the
    locale territory's own for "dollar" words, else the one named.

    >>> NumberFormatter("de_DE").fixed(1234.5, 1)
    '1.234,5'
    """

    __slots__ = ("locale", "locale_id", "currency_code", "unit", "unit_id", "_bank", "_patterns")

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
        self._patterns: dict[tuple[str, int], str] = {}
        self.unit = unit.strip() if unit and unit.strip() else None
        if currency is None and self.unit and self.unit.lower() in _CURRENCY_WORDS:
            currency = _CURRENCY_WORDS[self.unit.lower()] or self._territory_currency()
            self.unit = None
        if currency is not None:
            try:
                validate_currency(currency.upper())
            except UnknownCurrencyError:
                raise NarratorError(f"unknown currency code {currency!r} (expected an ISO 4217 code)") from None
            currency = currency.upper()
        self.currency_code = currency
        if unit_id is not None:
            try:
                format_unit(1, unit_id, locale=self.locale)
            except UnknownUnitError:
                raise NarratorError(f"unknown CLDR unit id {unit_id!r}") from None
        self.unit_id = unit_id if unit_id is not None else cldr_unit_id(self.unit)

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

    def _pattern(self, kind: str, decimals: int) -> str:
        """The locale's own CLDR pattern (keeps en_IN lakh grouping) with exactly ``decimals`` places."""
        key = (kind, decimals)
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
            number = integer_part + ("." + "0" * decimals if decimals > 0 else "")
            self._patterns[key] = positive[:start] + number + positive[end:]
        return self._patterns[key]

    def fixed(self, value: float, decimals: int) -> str:
        """``value`` with exactly ``decimals`` decimals, in the locale's symbols and grouping.

        >>> NumberFormatter("en_IN").fixed(1234567, 0)
        '12,34,567'
        """
        decimals = max(0, int(decimals))
        return format_decimal(round_half_up(value, decimals), self._pattern("decimal", decimals), self.locale)

    def percent(self, share: float, decimals: int = 0) -> str:
        """A share (0.12) as a percent in the locale's style ("12%", "12 %").

        >>> NumberFormatter("en_US").percent(0.125, 1)
        '12.5%'
        """
        decimals = max(0, int(decimals))
        rounded = round_half_up(share * 100, decimals) / 100
        return format_percent(rounded, self._pattern("percent", decimals), self.locale)

    def currency(self, value: float, decimals: int | None = None) -> str:
        """An amount in the formatter's ISO 4217 currency; ``decimals`` defaults to the currency's own."""
        if self.currency_code is None:
            raise NarratorError("no currency was given (use an ISO 4217 code such as 'USD')")
        if decimals is None:
            return format_currency(value, self.currency_code, locale=self.locale)
        decimals = max(0, int(decimals))
        return format_currency(
            round_half_up(value, decimals),
            self.currency_code,
            self._pattern("currency", decimals),
            self.locale,
            currency_digits=False,
        )

    def compact(self, value: float, decimals: int = 1) -> str:
        """The CLDR long compact form: 1234567 -> "1.2 million" (en), "1,2 millones" (es)."""
        if not math.isfinite(value):
            raise NarratorError(f"cannot format the non-finite number {value!r}")
        return format_compact_decimal(value, format_type="long", locale=self.locale, fraction_digits=decimals)

    def quantity(self, value: float, decimals: int) -> str:
        """A number with its unit: currency if one is set, a CLDR unit if one fits, else the user's text.

        >>> NumberFormatter("en_US", unit="days").quantity(12.5, 1)
        '12.5 days'
        """
        decimals = max(0, int(decimals))
        if self.currency_code is not None:
            return self.currency(value, decimals)
        if self.unit_id is not None:
            # The rounded Decimal carries its visible decimals, so CLDR plural
            # rules see "1.0" (other: "1.0 days") and not the float 1 ("1 day").
            rounded = round_half_up(value, decimals)
            return format_unit(rounded, self.unit_id, format=self._pattern("decimal", decimals), locale=self.locale)
        number = self.fixed(value, decimals)
        if self.unit is None:
            return number
        return self.bank.format("format.quantity_with_text_unit", number=number, unit=self.unit)

    def count(self, n: int, noun_key: str, *, spell_out: bool = True) -> str:
        """``n`` with its noun in the right plural form: "one value", "three rows", "11 values".

        Small whole numbers are spelled out up to the bank's ``grammar.spell_out_max``
        (English style guides: one to nine); the words and the noun forms
        (by CLDR plural category) come from the phrase bank.
        """
        n = int(n)
        noun = self.bank.noun(noun_key)
        word = noun.forms.get(self.locale.plural_form(n), noun.forms["other"])
        return self.bank.format("format.count", number=self.count_number(n, noun_key, spell_out=spell_out), noun=word)

    def count_number(self, n: int, noun_key: str, *, spell_out: bool = True) -> str:
        """The number part of :meth:`count`: spelled out when small (agreeing with the noun's
        gender), "3.5 million" from a million up, else the whole number."""
        n = int(n)
        bank = self.bank
        if spell_out and 0 <= n <= bank.spell_out_max:
            return bank.number_word(n, bank.noun(noun_key).gender)
        if abs(n) >= 1_000_000:
            return self.compact(n)
        return self.fixed(n, 0)

    def list(self, items: Sequence[str], style: str = "standard") -> str:
        """Items joined by the locale's CLDR list pattern: "a, b, and c" (en_US), "a, b y c" (es)."""
        items = [str(item) for item in items]
        if not items:
            return ""
        return format_list(items, style=style, locale=self.locale)
