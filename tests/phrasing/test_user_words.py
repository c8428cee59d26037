"""The user's own words are printed as the user wrote them: column names, labels and group values.

A column named ``wait_days`` is an identifier, not a word: "Wait_days (days) by clinic" names no
column of the file. Titles, captions, alt texts, table cells and sentences keep the user's words
as given; only a sentence or caption that opens with an ordinary lower-case word ("north", "eastgate
office") starts with a capital, as an editor starts every sentence, while an identifier ("wait_days")
stays as written even there. The grouped data are invented, from a fixed seed.
"""

from __future__ import annotations

import re

import numpy as np
import pytest
from helpers.grouped import grouped_set

from narrator.engine.describe import describe
from narrator.history.sidecar import FindingsSet
from narrator.phrasing import narrate
from narrator.phrasing.context import opens_with_user_words
from narrator.phrasing.sets import SetOptions, narrate_set

GROUPS = ("north", "south", "eastgate office")
IDENTIFIERS = ("Wait_days", "Clinic ")  # never capitalised, anywhere
WORDS = ("North", "South", "Eastgate")  # capitalised only where they open a sentence or caption


def _set() -> FindingsSet:
    rng = np.random.default_rng(5)
    centers = dict(zip(GROUPS, (20, 21, 30), strict=True))
    groups = {label: np.round(rng.lognormal(np.log(mu), 0.35, 60)) for label, mu in centers.items()}
    return grouped_set(groups, name="wait_days", unit="days", group_by="clinic")


def _only_at_starts(text: str) -> bool:
    """Every capitalised group value in ``text`` opens a sentence."""
    for found in re.finditer("|".join(WORDS), text):
        before = text[: found.start()].rstrip()
        if before and before[-1] not in ".!?":
            return False
    return True


def _every_text(narrative) -> list[str]:
    texts = [narrative.title]
    for section in narrative.sections:
        texts.append(section.title)
        texts.extend(paragraph.text for paragraph in section.paragraphs)
        for table in section.tables:
            texts.append(table.caption)
            texts.extend(cell for row in (table.header, *table.rows) for cell in row)
    for figure in narrative.figures:
        texts.extend([figure.caption, figure.alt_text, *figure.labels.values()])
    return texts


@pytest.mark.parametrize("locale", ["en_US", "es_ES", "fr_FR"])
@pytest.mark.parametrize("audience", ["memo", "full"])
def test_column_names_and_group_values_are_printed_as_written(locale, audience):
    narrative = narrate_set(_set(), SetOptions(audience=audience, locale=locale))
    texts = _every_text(narrative)
    wrong = [text for text in texts if any(word in text for word in IDENTIFIERS)]
    assert not wrong, wrong
    # Inside a sentence a group value is as written; at a sentence's start an ordinary word takes a capital.
    inside = [text for text in texts if re.search(r"[^.!?:;]\s+(" + "|".join(WORDS) + r")\b", " " + text)]
    assert not [text for text in inside if not _only_at_starts(text)], inside
    paragraphs = [p.text for section in narrative.sections for p in section.paragraphs]  # cells stay as written
    sentences = [s for text in paragraphs for s in re.split(r"(?<=[.!?])\s+", text) if s]
    assert any(s.startswith(("North", "South", "Eastgate")) for s in sentences) or audience == "memo"
    assert not [s for s in sentences if s.startswith(GROUPS)], "a sentence opens in lower case"
    captions = [table.caption for section in narrative.sections for table in section.tables]
    captions += [figure.caption for figure in narrative.figures]
    assert any(caption.startswith("wait_days") for caption in captions), captions  # "wait_days (days) by clinic"
    assert narrative.title.startswith("wait_days")


@pytest.mark.parametrize("locale", ["en_US", "es_ES", "fr_FR"])
def test_a_single_column_report_keeps_its_name_in_captions(locale):
    values = np.round(np.random.default_rng(2).lognormal(3.0, 0.5, 200))
    values[10] = 900.0
    narrative = narrate(describe(values, name="award_usd", unit="USD"), "full", locale)
    texts = _every_text(narrative)
    assert not [text for text in texts if "Award_usd" in text]
    captions = [table.caption for section in narrative.sections for table in section.tables]
    assert any(caption.startswith("award_usd") for caption in captions), captions  # "award_usd (USD) with and..."


def test_which_fields_hold_the_users_words():
    assert opens_with_user_words("{name} by {group}")
    assert opens_with_user_words("{groups} are about the same.")
    assert not opens_with_user_words("{count} stand out")
    assert not opens_with_user_words("Histogram of {name}")
