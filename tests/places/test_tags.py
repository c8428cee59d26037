"""The tag and marker syntax of marked places, and the README's table of targets (which must list every target)."""

import re
from pathlib import Path

import pytest

from narrator.phrasing import places
from narrator.places.tags import Tag, TagProblem, find_markers, is_marker_text, parse_tag

README = Path(__file__).resolve().parents[2] / "README.md"


@pytest.mark.parametrize(("text", "expected"), [
    ("narrator:median", Tag("median")),
    ("NARRATOR:MEDIAN", Tag("median")),
    ("  narrator : middle-half  ", Tag("middle-half")),
    ("narrator:key-figures@days to first payment", Tag("key-figures", "days to first payment")),
    ("narrator:n @  first   payment ", Tag("n", "first payment")),
])
def test_tags_of_ours_are_read_whatever_the_spacing_and_case(text, expected):
    assert parse_tag(text) == expected


@pytest.mark.parametrize("text", [None, "", "ReportDate", "narratorx:median", "median", "my narrator:median"])
def test_tags_of_others_are_not_ours(text):
    assert parse_tag(text) is None


@pytest.mark.parametrize(("text", "words"), [
    ("narrator:mediam", "did you mean 'median'"),
    ("narrator:", "no target"),
    ("narrator:median@", "nothing after '@'"),
    ("narrator:keyfigures", "did you mean 'key-figures'"),
    ("narrator:everything", "targets are summary"),
])
def test_faulty_tags_of_ours_say_why(text, words):
    problem = parse_tag(text)
    assert isinstance(problem, TagProblem)
    assert words in problem.reason


def test_a_very_long_tag_is_cut_in_messages():
    problem = parse_tag("narrator:" + "x" * 5000)
    assert isinstance(problem, TagProblem) and len(problem.text) <= 200 and len(problem.reason) < 300


def test_canonical_text_round_trips():
    for target in places.TARGETS:
        for variable in (None, "days to first payment"):
            tag = Tag(target, variable)
            assert parse_tag(tag.text) == tag


def test_markers_are_found_in_running_text():
    text = "Of [narrator:n] values, the median was [ narrator:median@days ] ([not a marker], [narrator:x)."
    assert [marker.tag_text for marker in find_markers(text)] == ["narrator:n", "narrator:median@days"]
    first = find_markers(text)[0]
    assert text[first.start:first.end] == "[narrator:n]"


def test_a_place_still_holding_its_own_tag_or_marker_counts_as_unfilled():
    assert is_marker_text("[narrator:median]", Tag("median"))
    assert is_marker_text("narrator:median", Tag("median"))
    assert not is_marker_text("[narrator:mean]", Tag("median"))
    assert not is_marker_text("425 miles", Tag("median"))


def test_every_target_has_a_builder_and_a_kind():
    assert tuple(places._BUILDERS) == places.TARGETS
    assert set(places.TARGET_KINDS.values()) == {"paragraphs", "table", "figure", "phrase"}


def test_the_readme_tables_every_target_and_only_those():
    text = README.read_text(encoding="utf-8")
    section = text[text.index("## Your own document"):]
    section = section[: section.index("\n## ", 3)]
    listed = re.findall(r"^\| `narrator:([a-z-]+)", section, flags=re.M)
    assert listed == list(places.TARGETS)
