"""Rules a careful editor applies in every language, checked where a reader meets them.

- A number standing in running text comes through the formatter, never typed into a bank.
- Small counts are words ("three times", "trois fois", "tres veces") by the bank's number words.
- A range with a unit writes the unit once, signed change intervals too ("from +5 to +9 days").
- The middle value that ties carries its unit ("was 19 days: ... exactly 19 days").
- French writes the first of the month as an ordinal, "1er décembre" (Lexique des règles typographiques
  en usage à l'Imprimerie nationale; Office québécois de la langue française; from memory); every other
  date is CLDR's long form as babel writes it (babel 2.19, CLDR, the reference here).
- The settings table names the locale without brackets inside brackets.

Data are invented for these tests (fixed seeds), in our own scenarios: days to a first housing-assistance
payment, repair-shop turnaround hours.
"""

import datetime as dt
import re

import numpy as np
import pytest
from babel.dates import format_date, format_datetime

from narrator.engine.describe import describe
from narrator.history.changes import compare
from narrator.phrasing import narrate
from narrator.phrasing.bank import available_languages, load_bank, message_texts
from narrator.phrasing.context import make_context
from narrator.phrasing.frame import setting_value
from narrator.phrasing.numbers import NumberFormatter
from narrator.phrasing.what_changed import changes_section
from narrator.reading.sample import Sample

LOCALES = ("en_US", "en_GB", "es_ES", "es_MX", "fr_FR", "fr_CA")

# Digits a bank may type: citation years and volumes (references, "(Tukey 1977)"), names with digits in
# them (G1, Q3, SHA-256, UTF-8, Windows-1252, L2, STAN-CS-79-773), ordinals in a statistic's or an edition's
# name ("5th–95th percentile", "4e éd."), a method's name ("type 7"), and cell texts quoted as a file writes
# them (quality.ambiguous_grouping). Any other digit is a number of ours and must be a field.
LITERAL_KEYS = ("references.", "quality.ambiguous_grouping", "words.quantile_method.", "tables.statistics.p5_p95",
                "facts.p5_p95")
NAMED_DIGITS = re.compile(r"[A-Za-z][\w-]*?-?\d+|\d+(?:st|nd|rd|th|e|\.ª)\b|\b(?:1[6-9]|20)\d\d\b")


@pytest.mark.parametrize("language", available_languages())
def test_no_number_of_ours_is_typed_in_running_text(language):
    bank = load_bank(language)
    stray = []
    for key, message in bank.messages.items():
        if key.startswith(LITERAL_KEYS):
            continue
        for text in message_texts(message):
            bare = NAMED_DIGITS.sub("", re.sub(r"\{\w+\}", "", text))
            if re.search(r"\d", bare):
                stray.append((key, text))
    assert not stray, stray[:5]  # e.g. "el RIC es 0": write it as a field, or in words ("cero")


def test_the_typed_number_check_catches_a_typed_zero():
    # The check above, on the sentence it was written for (it must be able to fail).
    bare = NAMED_DIGITS.sub("", "el RIC es 0, así que sus vallas caerían sobre los cuartiles")
    assert re.search(r"\d", bare)
    assert not re.search(r"\d", NAMED_DIGITS.sub("", "Asimetría G1 = {g1}; SHA-256 (Tukey 1977), 5th–95th"))


@pytest.mark.parametrize(("locale", "once", "three", "eleven"), [
    ("en_US", "once", "three times", "11 times"),
    ("es_ES", "una vez", "tres veces", "11 veces"),
    ("fr_FR", "une fois", "trois fois", "11 fois"),
])
def test_how_many_times_a_value_appears_is_worded_like_any_small_count(locale, once, three, eleven):
    ctx = make_context(describe([1.0, 2.0, 3.0, 4.0, 5.0]), locale, currency=None, unit=None, name=None)
    assert (ctx.times(1), ctx.times(3), ctx.times(11)) == (once, three, eleven)


def _waits(seed: int, n: int, scale: float) -> np.ndarray:
    # Invented: days to a first housing-assistance payment, whole days, right-skewed.
    return np.round(np.random.default_rng(seed).lognormal(np.log(scale), 0.5, n))


@pytest.mark.parametrize(("locale", "pattern"), [
    ("en_US", r"runs from \+\d+ to \+\d+ days\)"),
    ("es_ES", r"va de \+\d+ a \+\d+ días\)"),
    ("fr_FR", r"va de \+\d+ à \+\d+\u00a0jours\)"),
])
def test_a_change_interval_writes_its_unit_once(locale, pattern):
    old = describe(Sample.from_values(_waits(3, 300, 20.0), name="days", unit="days"))
    new = describe(Sample.from_values(_waits(4, 320, 26.0), name="days", unit="days"))
    changes = compare(old, new)
    assert changes.item(f"center.{changes.lead}").low > 0  # the invented data rose clearly
    section = changes_section(changes, old, new, locale=locale)
    text = " ".join(s.text for p in section.paragraphs for s in p.sentences)
    assert re.search(pattern, text.replace("\u202f", "\u00a0")), text
    assert not re.search(r"\+\d+\S?\s?(days|días|jours) (to|a|à) \+", text)  # never "+5 days to +9 days"


def test_signed_pairs_keep_the_sign_and_write_the_unit_once():
    waits = describe(Sample.from_values(_waits(1, 400, 20.0), name="days", unit="days"))  # memo: whole days
    ctx = make_context(waits, "en_US", currency=None, unit="days", name=None)
    assert ctx.signed_pair(5.0, 9.0) == ("+5", "+9 days")
    assert ctx.signed_pair(-3.0, 11.0) == ("-3", "+11 days")
    dollars = make_context(waits, "en_US", currency="USD", unit=None, name=None)
    assert dollars.signed_pair(5.0, 9.0) == ("+$5", "+$9")  # a currency symbol stays on both ends
    # An end that is not zero never prints as 0 beside words that say the interval includes zero.
    assert ctx.signed_pair(-0.3, 4.2) == ("-0.3", "+4.2 days")
    assert ctx.signed_pair(0.0, 4.0) == ("0", "+4 days")
    assert dollars.signed_pair(-0.3, 4.2) == ("-$0.30", "+$4.20")


@pytest.mark.parametrize(("locale", "lead"), [
    ("en_US", "was 19 days: "), ("es_ES", "fue 19 días: "), ("es_MX", "fue 19 días: "),
    ("fr_FR", "était de 19\u00a0jours\u00a0: "), ("fr_CA", "était de 19\u00a0jours\u00a0: "),
])
def test_a_middle_value_that_ties_carries_its_unit(locale, lead):
    # Invented: whole days, right-skewed, 17 of them at the middle value (19 days).
    findings = describe(Sample.from_values(_waits(1, 400, 20.0), name="days", unit="days"))
    assert findings.center.lead == "median" and findings.center.median == 19 and findings.order_counts.at_median > 1
    first = narrate(findings, "memo", locale).sections[0].paragraphs[0].sentences[0].text
    assert lead in first.replace("\u202f", "\u00a0"), first
    assert re.search(r"(exactly|exactamente|exactement égales à) 19.(days|días|jours)", first), first


@pytest.mark.parametrize("locale", ("fr_FR", "fr_CA"))
def test_french_writes_the_first_of_the_month_as_an_ordinal(locale):
    fmt = NumberFormatter(locale)
    first = dt.date(2026, 12, 1)
    assert fmt.long_date(first) == "1er décembre 2026"
    moment = dt.datetime(2026, 12, 1, 16, 5, 3, tzinfo=dt.UTC)
    reference = format_datetime(moment, format="long", tzinfo=dt.UTC, locale=locale)
    assert reference.startswith("1 décembre")  # babel (CLDR) has no ordinal day
    assert fmt.long_datetime(moment).startswith("1er décembre 2026, 16")  # the time: tests/phrasing/test_clock.py


@pytest.mark.parametrize("locale", LOCALES)
def test_every_other_date_is_cldr_long_form(locale):
    # babel (CLDR long date and date-time patterns) is the reference for every day but the French first.
    fmt = NumberFormatter(locale)
    for day in (2, 10, 21, 31):
        date = dt.date(2026, 12, day)
        assert fmt.long_date(date) == format_date(date, format="long", locale=locale)
        moment = dt.datetime(2026, 12, day, 9, 30, 0, tzinfo=dt.UTC)
        if locale == "fr_FR":  # the French time of day in CLDR's duration units (tests/phrasing/test_clock.py)
            assert fmt.long_datetime(moment).startswith(format_date(date, format="long", locale=locale) + ", 09")
        else:
            assert fmt.long_datetime(moment) == format_datetime(moment, format="long", tzinfo=dt.UTC, locale=locale)
    if not locale.startswith("fr"):
        assert fmt.long_date(dt.date(2026, 12, 1)) == format_date(dt.date(2026, 12, 1), format="long", locale=locale)


@pytest.mark.parametrize(("locale", "shown", "expected"), [
    ("en_US", "en_US", "English (United States), code en_US"),
    ("es_ES", "es_ES", "español (España), código es_ES"),
    ("es_MX", "es_MX", "español (México), código es_MX"),
    ("fr_FR", "fr_FR", "français (France), code fr_FR"),
    ("fr_CA", "fr_CA", "français (Canada), code fr_CA"),
    ("fr_FR", "fr", "français, code fr"),
])
def test_the_locale_setting_reads_without_brackets_in_brackets(locale, shown, expected):
    fmt = NumberFormatter(locale)
    value = setting_value(fmt, load_bank(fmt.locale.language), "locale", shown)
    assert value == expected
    assert not re.search(r"\)\s*\(", value)


@pytest.mark.parametrize(("locale", "words"), [
    ("en_US", "at three bin widths and four starting points"),
    ("es_ES", "con tres anchos de clase y cuatro puntos de inicio"),
    ("fr_FR", "pour trois largeurs de classe et quatre points de départ"),
])
def test_the_bin_grid_caption_words_its_small_counts(locale, words):
    # Invented: repair-shop turnaround hours.
    hours = np.random.default_rng(8).gamma(4.0, 6.0, 400).round(1)
    findings = describe(Sample.from_values(hours, name="hours", unit="hours"))
    captions = [figure.caption for figure in narrate(findings, "full", locale).figures]
    assert any(words in caption for caption in captions), captions


@pytest.mark.parametrize(("locale", "expected"), [
    ("fr_FR", ("52", "179\u00a0€")),  # CLDR fr currency pattern "#,##0.00 ¤": the symbol after, once
    ("es_ES", ("52", "179\u00a0€")),
    ("es_MX", ("EUR\u00a052", "EUR\u00a0179")),  # "¤#,##0.00": a symbol before each number
    ("en_US", ("€52", "€179")),
])
def test_a_currency_written_after_the_number_is_written_once_in_a_range(locale, expected):
    assert NumberFormatter(locale, currency="EUR").quantity_pair(52, 179, 0) == expected
