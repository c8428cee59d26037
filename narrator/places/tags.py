"""The tag a marked place carries, and the plain-text marker that becomes one. Pure; no files.

=============================  ================================================
Name                           What it is
=============================  ================================================
:data:`PREFIX`                 ``narrator:``, the start of every tag of ours
:class:`Tag`                   a parsed tag: target, and the variable it names
:class:`TagProblem`            a tag of ours that cannot be filled, and why
:func:`parse_tag`              a control's tag text -> Tag, TagProblem or None
:func:`find_markers`           the ``[narrator:...]`` markers in a text
:func:`is_marker_text`         whether a text is exactly one marker (or tag)
=============================  ================================================

Syntax (ours)::

    tag     =  "narrator:" target [ "@" variable ]
    marker  =  "[" tag "]"

``target`` is one of :data:`narrator.phrasing.places.TARGETS` (``median``,
``key-figures``...); ``variable`` is a column name or label of the recipe,
needed only when the recipe describes more than one variable. Letter case and
spaces around the parts do not matter: ``narrator: Median @ days`` is
``narrator:median@days``. A tag that does not start with ``narrator:`` belongs
to someone else and is left alone.
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass

from narrator.phrasing.places import TARGETS

PREFIX = "narrator:"
_PREFIX_PATTERN = re.compile(r"^\s*narrator\s*:", re.IGNORECASE)
# "[narrator:...]" with no bracket inside; spaces allowed around the parts.
_MARKER = re.compile(r"\[\s*(narrator\s*:[^\[\]\r\n]*?)\s*\]", re.IGNORECASE)
MAX_TAG_LENGTH = 200  # longer tag texts are cut in messages


@dataclass(frozen=True, slots=True)
class Tag:
    """A tag of ours: what goes in the place (``target``) and for which variable (None: the only one)."""

    target: str
    variable: str | None = None

    @property
    def text(self) -> str:
        """The tag in its canonical spelling.

        >>> Tag("median", "days").text
        'narrator:median@days'
        """
        return PREFIX + self.target + (f"@{self.variable}" if self.variable is not None else "")


@dataclass(frozen=True, slots=True)
class TagProblem:
    """A tag that starts with ``narrator:`` but names no target we fill; ``reason`` says why, for the user."""

    text: str
    reason: str


def parse_tag(text: str | None) -> Tag | TagProblem | None:
    """Read a control's tag: a :class:`Tag`, a :class:`TagProblem` for a faulty tag of ours, or None.

    >>> parse_tag("narrator:median")
    Tag(target='median', variable=None)
    >>> parse_tag("Narrator: Key-Figures @ first payment")
    Tag(target='key-figures', variable='first payment')
    >>> parse_tag("narrator:mediam").reason
    "unknown target 'mediam'; did you mean 'median'?"
    >>> parse_tag("ReportDate") is None
    True
    """
    if text is None:
        return None
    match = _PREFIX_PATTERN.match(text)
    if match is None:
        return None
    rest = text[match.end():]
    target_text, at, variable_text = rest.partition("@")
    target = target_text.strip().lower()
    variable = " ".join(variable_text.split()) if at else None
    shown = text if len(text) <= MAX_TAG_LENGTH else text[: MAX_TAG_LENGTH - 1] + "\u2026"
    if not target:
        return TagProblem(shown, f"no target after '{PREFIX}'; targets are {', '.join(TARGETS)}")
    if target not in TARGETS:
        close = difflib.get_close_matches(target, TARGETS, n=1, cutoff=0.6)
        hint = f"; did you mean '{close[0]}'?" if close else f"; targets are {', '.join(TARGETS)}"
        return TagProblem(shown, f"unknown target '{_cut(target)}'{hint}")
    if at and not variable:
        return TagProblem(shown, "nothing after '@'; name a variable of the recipe, or leave out the '@'")
    return Tag(target, variable)


def _cut(text: str, limit: int = 40) -> str:
    return text if len(text) <= limit else text[: limit - 1] + "\u2026"


@dataclass(frozen=True, slots=True)
class Marker:
    """One marker found in a text: where it is (``start``, ``end``) and the tag text inside the brackets."""

    start: int
    end: int
    tag_text: str


def find_markers(text: str) -> list[Marker]:
    """Every ``[narrator:...]`` marker in ``text``, in order.

    >>> [m.tag_text for m in find_markers("n = [narrator:n], median [ narrator:median ].")]
    ['narrator:n', 'narrator:median']
    """
    return [Marker(match.start(), match.end(), match.group(1)) for match in _MARKER.finditer(text)]


def is_marker_text(text: str, tag: Tag) -> bool:
    """Whether ``text`` is nothing but ``tag`` itself, bare or as a marker: a place not yet filled.

    >>> is_marker_text(" [narrator: Median] ", Tag("median"))
    True
    >>> is_marker_text("21 days", Tag("median"))
    False
    """
    stripped = text.strip()
    markers = find_markers(stripped)
    if len(markers) == 1 and markers[0].start == 0 and markers[0].end == len(stripped):
        stripped = markers[0].tag_text
    return parse_tag(stripped) == tag
