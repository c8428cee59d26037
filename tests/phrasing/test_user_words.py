"""The user's own words are printed as the user wrote them: column names, labels and group values.

A column named ``wait_days`` is an identifier, not a word: "Wait_days (days) by clinic" names no
column of the file. Titles, captions, alt texts, table cells and sentences keep the user's words
as given, even where a caption or sentence opens with one (issue 16: group values are shown as the
user wrote them). The grouped data are invented, from a fixed seed.
"""

from __future__ import annotations

import numpy as np
import pytest

from narrator.engine.describe import describe
from narrator.engine.group_difference import compare_groups
from narrator.history.sidecar import FindingsSet, GroupFindings, VariableFindings
from narrator.phrasing import narrate
from narrator.phrasing.context import opens_with_user_words
from narrator.phrasing.sets import SetOptions, narrate_set

GROUPS = ("north", "south", "eastgate office")
CAPITALISED = ("Wait_days", "North", "South", "Eastgate", "Clinic ")


def _set() -> FindingsSet:
    rng = np.random.default_rng(5)
    centers = dict(zip(GROUPS, (20, 21, 30), strict=True))
    groups = {label: np.round(rng.lognormal(np.log(mu), 0.35, 60)) for label, mu in centers.items()}
    overall = describe(np.concatenate(list(groups.values())), name="wait_days", unit="days")
    parts = tuple(GroupFindings(label, describe(values, name="wait_days", unit="days"))
                  for label, values in groups.items())
    comparison = compare_groups([(part.label, groups[part.label], part.findings) for part in parts],
                                lead=overall.center.lead)
    item = VariableFindings(findings=overall, groups=parts, suppressed_groups=0, comparison=comparison)
    return FindingsSet(variables=(item,), group_by="clinic", privacy_threshold=10)


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
    wrong = [text for text in texts if any(word in text for word in CAPITALISED)]
    assert not wrong, wrong
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
