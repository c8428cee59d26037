"""Narrative: what the phrase builder hands the writer and the plain-text printer.

Sections hold paragraphs of sentences; every sentence records the findings
keys it states (dotted paths such as ``center.median``) and the claims it
makes (:class:`Claim`: a kind from :data:`narrator.phrasing.licences.CLAIM_KINDS`
and the numbers it asserts), so a checker can re-derive each claim from the
raw values and a regenerated report can say which statements changed. Tables
and figure texts are already worded and formatted: the writer only lays them
out.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any


@dataclass(frozen=True, slots=True)
class Claim:
    """What one sentence asserts, in a form a checker can test against the raw values.

    ``kind`` names the assertion (see :data:`narrator.phrasing.licences.CLAIM_KINDS` for what each
    kind means); ``numbers`` holds the figures it asserts, unrounded, and the strings a reader sees
    where the claim depends on rounding (``*_shown``); ``about`` says whose values the claim is
    about: ``""`` for the variable of the narrative, ``"group:<label>"`` for one group,
    ``"change"`` for two builds; ``when`` the licences its variant was said under, so a checker can
    test each of those too.
    """

    kind: str
    numbers: dict[str, Any] = field(default_factory=dict)
    about: str = ""
    when: tuple[str, ...] = ()  # the licences the sentence was said under ("not x" for one that must not hold)


@dataclass(frozen=True, slots=True)
class Sentence:
    text: str
    keys: tuple[str, ...] = ()  # findings keys this sentence states
    claims: tuple[Claim, ...] = ()  # what the sentence asserts


@dataclass(frozen=True, slots=True)
class Paragraph:
    sentences: tuple[Sentence, ...]
    style: str = "body"  # "body", "bullet", "reference"

    @property
    def text(self) -> str:
        return " ".join(s.text for s in self.sentences)


@dataclass(frozen=True, slots=True)
class Table:
    key: str  # "statistics", "outliers", "with_without", ...
    caption: str
    header: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]  # cells already formatted for the locale
    keys: tuple[str, ...] = ()  # findings keys the table shows
    align: tuple[str, ...] = ()  # per column: "left" or "right"


    def plain_text(self) -> str:
        """The table as aligned text columns under its caption."""
        lines = [self.header, *self.rows]
        widths = [max(len(line[i]) for line in lines) for i in range(len(self.header))]

        def render(cells: tuple[str, ...]) -> str:
            padded = []
            for i, cell in enumerate(cells):
                right = i < len(self.align) and self.align[i] == "right"
                padded.append(cell.rjust(widths[i]) if right else cell.ljust(widths[i]))
            return "  ".join(padded).rstrip()

        rule = "  ".join("-" * width for width in widths)
        return "\n".join([self.caption, "", render(self.header), rule, *(render(row) for row in self.rows)])


@dataclass(frozen=True, slots=True)
class FigureText:
    key: str  # "histogram", "dotplot", "with_without", "bin_sensitivity"
    caption: str
    alt_text: str
    labels: dict[str, str] = field(default_factory=dict)  # axis labels and legend words
    claims: tuple[Claim, ...] = ()  # what the caption and alt text assert


@dataclass(frozen=True, slots=True)
class Section:
    key: str  # plan key, e.g. "summary", "methods", "cautions"
    title: str
    paragraphs: tuple[Paragraph, ...] = ()
    tables: tuple[Table, ...] = ()
    figures: tuple[str, ...] = ()  # FigureText keys shown in this section, in order
    level: int = 1  # heading level: 1 for a top section, 2 for one inside a variable's part of a report


@dataclass(frozen=True, slots=True)
class Narrative:
    audience: str
    locale: str
    language: str
    title: str
    sections: tuple[Section, ...]
    figures: tuple[FigureText, ...] = ()

    def __post_init__(self) -> None:
        # Finished text gets the language's punctuation spacing here, once, whoever built it.
        from narrator.phrasing.typography import typeset_narrative_fields

        typeset_narrative_fields(self)

    def section(self, key: str) -> Section | None:
        return next((s for s in self.sections if s.key == key), None)

    def sentences(self):
        for section in self.sections:
            for paragraph in section.paragraphs:
                yield from paragraph.sentences

    def claims(self):
        """Every claim of the narrative, sentence by sentence, then the figures'."""
        for sentence in self.sentences():
            yield from sentence.claims
        for figure in self.figures:
            yield from figure.claims

    def plain_text(self) -> str:
        """The narrative as plain text, for pasting into an email."""
        blocks = []
        for section in self.sections:
            parts = [f"{section.title}\n{'=' * len(section.title)}"] if section.title else []
            for paragraph in section.paragraphs:
                parts.append(("- " if paragraph.style == "bullet" else "") + paragraph.text)
            parts.extend(table.plain_text() for table in section.tables)
            if parts:
                blocks.append("\n\n".join(parts))
        return "\n\n\n".join(b.rstrip() for b in blocks).rstrip() + "\n"
