"""The number formatter against CLDR (through babel) and the rounding policy's sources.

CLDR facts checked here (Unicode CLDR, number symbols and patterns, as babel
ships them): de_DE writes 1.234,5; fr_FR groups with U+202F NARROW NO-BREAK
SPACE; en_IN groups by lakh (12,34,567); percent signs are spaced per locale.
"""

from decimal import Decimal

import pytest
from babel.numbers import parse_decimal

from narrator.errors import NarratorError
from narrator.phrasing.numbers import (
    NumberFormatter,
    cldr_unit_id,
    column_decimals,
    memo_decimals,
    methods_decimals,
    round_half_up,
)


# CLDR: de uses "," as decimal and "." as group separator.
def test_de_de_decimal_comma_and_dot_grouping():
    assert NumberFormatter("de_DE").fixed(1234.5, 1) == "1.234,5"


# CLDR: fr group symbol is U+202F NARROW NO-BREAK SPACE (since CLDR 34).
def test_fr_fr_groups_with_narrow_no_break_space():
    assert NumberFormatter("fr_FR").fixed(1234567.25, 2) == "1\u202f234\u202f567,25"


# CLDR: en_IN decimal pattern #,##,##0.### (lakh and crore grouping).
def test_en_in_lakh_grouping_kept_with_fixed_decimals():
    fmt = NumberFormatter("en_IN")
    assert fmt.fixed(1234567, 0) == "12,34,567"
    assert fmt.fixed(1234567.891, 2) == "12,34,567.89"


# CLDR percent patterns: en "#,##0%" (no space); fr and de "#,##0\u00a0%" (NO-BREAK SPACE,
# as babel 2.19 ships them; the fr percent sign is spaced with U+00A0, not U+202F).
@pytest.mark.parametrize(
    ("locale", "expected"),
    [("en_US", "12%"), ("de_DE", "12\u00a0%"), ("fr_FR", "12\u00a0%"), ("es_ES", "12\u00a0%")],
)
def test_percent_spacing_per_locale(locale, expected):
    assert NumberFormatter(locale).percent(0.12) == expected


def test_percent_decimals():
    assert NumberFormatter("en_US").percent(0.1234, 1) == "12.3%"
    assert NumberFormatter("de_DE").percent(0.1234, 1) == "12,3\u00a0%"


# ISO 4217 amounts in CLDR currency patterns.
def test_currency_by_iso_code():
    assert NumberFormatter("en_US", currency="USD").currency(1234.5, 2) == "$1,234.50"
    assert NumberFormatter("de_DE", currency="EUR").currency(1234.5, 0) == "1.235\u00a0€"


def test_dollar_word_becomes_the_territory_currency():
    fmt = NumberFormatter("en_US", unit="dollars")
    assert fmt.currency_code == "USD"
    assert fmt.quantity(12.5, 0) == "$13"


def test_unknown_currency_is_a_narrator_error():
    with pytest.raises(NarratorError, match="ISO 4217"):
        NumberFormatter("en_US", currency="XQZ")


# CLDR compact decimal, long form.
def test_compact_long_form():
    assert NumberFormatter("en_US").compact(1234567) == "1.2 million"
    assert NumberFormatter("es_ES").compact(1234567) == "1,2 millones"


# CLDR units by id; plural forms follow the visible decimals (CLDR plural operands: "1.0 days").
def test_quantity_with_cldr_units():
    assert NumberFormatter("en_US", unit="days").quantity(12.5, 1) == "12.5 days"
    assert NumberFormatter("en_US", unit="days").quantity(1, 0) == "1 day"
    assert NumberFormatter("en_US", unit="days").quantity(1, 1) == "1.0 days"
    assert NumberFormatter("es_ES", unit="litres").quantity(2, 0) == "2 litros"
    assert NumberFormatter("en_US", unit_id="duration-hour").quantity(3, 0) == "3 hours"


def test_quantity_with_unknown_unit_uses_the_users_text():
    assert NumberFormatter("en_US", unit="widgets").quantity(1234, 0) == "1,234 widgets"


def test_unit_words_map_to_cldr_ids():
    assert cldr_unit_id("Litres") == "volume-liter"
    assert cldr_unit_id("hours") == "duration-hour"
    assert cldr_unit_id("volume-gallon") == "volume-gallon"
    assert cldr_unit_id("widgets") is None


# English style (Chicago Manual of Style, from memory): spell out zero to nine in prose.
def test_count_spells_small_numbers_and_uses_plural_rules():
    fmt = NumberFormatter("en_US")
    assert fmt.count(1, "value") == "one value"
    assert fmt.count(3, "row") == "three rows"
    assert fmt.count(11, "value") == "11 values"
    assert fmt.count(1234, "value") == "1,234 values"


# Spanish: "un"/"una" agree with the noun's gender; CLDR plural category "many" (millions) takes "de".
def test_spanish_counts_agree_in_gender_and_use_many():
    fmt = NumberFormatter("es_ES")
    assert fmt.count(1, "value") == "un valor"
    assert fmt.count(1, "row") == "una fila"
    assert fmt.count(4, "row") == "cuatro filas"
    assert fmt.count(2_000_000, "value").endswith("de valores")


# CLDR list patterns.
def test_lists_follow_the_locale():
    assert NumberFormatter("en_US").list(["a", "b", "c"]) == "a, b, and c"
    assert NumberFormatter("es_ES").list(["a", "b", "c"]) == "a, b y c"


def test_round_half_up_on_the_decimal_representation():
    assert round_half_up(2.25, 1) == Decimal("2.3")
    assert round_half_up(-0.04, 1) == Decimal("0.0")  # never "-0.0"
    assert NumberFormatter("en_US").fixed(-0.04, 1) == "0.0"


def test_fixed_parses_back_with_babel():
    for locale in ("en_US", "de_DE", "fr_FR", "en_IN", "es_ES"):
        text = NumberFormatter(locale).fixed(1234567.891, 2)
        assert parse_decimal(text, locale=locale) == Decimal("1234567.89")


# Ehrenberg (1981): two effective digits of what varies; Cole (2015): one decimal beyond the data.
def test_rounding_policy():
    assert memo_decimals(370.0, reference=425.0, data_decimals=0) == 0
    assert memo_decimals(1.8, reference=579.0, data_decimals=2) == 1
    assert memo_decimals(0.034, reference=0.5, data_decimals=3) == 3
    assert memo_decimals(0.034, reference=0.5, data_decimals=0) == 1  # capped at the data's precision + 1
    assert methods_decimals(0) == 1
    assert methods_decimals(2) == 3
    assert column_decimals([0, 2, 1]) == 2


def test_unknown_locale_is_a_narrator_error():
    with pytest.raises(NarratorError, match="locale"):
        NumberFormatter("xx_NOWHERE")
