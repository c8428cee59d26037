"""Narrative: what the phrase builder hands the writer and the plain-text printer.

Sections hold paragraphs of sentences; every sentence records the findings
keys it states (dotted paths such as ``center.median``), so a test can check
text against numbers and a regenerated report can say which statements
changed. Tables and figure texts are already worded and formatted: the writer
only lays them out.
"""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True, slots=True)
class Sentence:
    text: str
    keys: tuple[str, ...] = ()  # findings keys this sentence states


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
