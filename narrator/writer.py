"""Writer: lays a Narrative, its figures and tables out as a Word (.docx) report.

The only module in narrator that imports python-docx; nothing else sees a
docx object. Every word comes from the narrative or the :class:`ReportFrame`
(both filled from the phrase bank by the caller); the writer only decides
where things go and which style they take.

=============================  ================================================
Name                           What it is
=============================  ================================================
:func:`write_report`           the .docx and its findings sidecar, both atomic
:func:`build_document`         the .docx as bytes (no file touched)
:func:`plain_document`         a plain document of the user's kind (the example's own report)
:class:`ReportFrame`           words around the narrative: title lines,
                               numbering patterns, the reproducibility appendix
:func:`xml_safe`               text with characters XML 1.0 cannot hold removed
:func:`sidecar_path`           ``<report>.findings.json`` beside a report
:func:`default_template`       bytes of templates/styles/narrator-base.docx
:data:`STYLE_NAMES`            the styles a report uses
=============================  ================================================

Layout, in order: title block (title, then the frame's detail lines:
organisation, data description, date); each narrative section with its title
as a level-1 heading, its paragraphs, its tables (caption above, as is usual
for tables, e.g. APA 2020) and its figures (caption below), numbered through
the document with Word SEQ fields; then the reproducibility appendix as a
two-column table.

A user's own .docx can stand in for the style base (``template=``): its body is
cleared, its styles, page setup, headers and footers are kept, and any style a
report needs that it lacks is copied from the default base, so the report takes
the user's branding without breaking. Nothing else of the template travels:
its comments, custom XML data, glossary, macros, thumbnail, document variables,
mail-merge source and attached-template path are dropped, and every property
part is written fresh: core properties from the caller's values, extended
properties naming only the application, and custom properties holding only
the mark by which narrator knows its own reports. None is left from the
template, the library or the operating-system user.
"""

from __future__ import annotations

import copy
import datetime as dt
import hashlib
import io
import os
import zipfile
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import docx
from docx.enum.style import WD_STYLE_TYPE
from docx.enum.table import WD_TABLE_ALIGNMENT
from docx.enum.text import WD_ALIGN_PARAGRAPH
from docx.opc.constants import RELATIONSHIP_TYPE as RT
from docx.oxml import OxmlElement
from docx.oxml.ns import qn
from docx.shared import Cm, Emu, Pt

from narrator.errors import NarratorError
from narrator.figures.rendered import RenderedFigure
from narrator.phrasing.narrative import Narrative, Paragraph, Section, Table
from narrator.phrasing.numbers import language_tag, parse_locale
from narrator.resources import template_file
from narrator.safe_io import REPORT_MARK, REPORT_WORDS, check_output, commit_report_pair
from narrator.wordtext import visible_words
from narrator.xmltext import xml_safe

STYLE_NAMES = {
    "title": "Title",
    "details": "Report Details",
    "heading": "Heading 1",
    "heading_2": "Heading 2",
    "body": "Normal",
    "bullet": "List Bullet",
    "reference": "Reference",
    "caption": "Caption",
    "figure": "Figure",
    "table": "Narrator Table",
    "table_text": "Table Text",
    "table_heading": "Table Heading",
}
# Styles copied into a user's template when it lacks them, parents first.
_COPY_ORDER = (
    "Report Details", "Heading 1", "Heading 2", "List Bullet", "Reference", "Caption", "Figure",
    "Table Text", "Table Heading", "Narrator Table", "Title",
)

# Territories whose paper is US Letter (CLDR supplemental "paperSize" data,
# from memory); everywhere else gets A4. Margins are 2.5 cm either way.
_LETTER_TERRITORIES = frozenset(
    {"US", "CA", "MX", "PH", "CL", "CO", "VE", "GT", "PR", "BZ", "CR", "NI", "PA", "SV"}
)
_LETTER = (Cm(21.59), Cm(27.94))
_A4 = (Cm(21.0), Cm(29.7))
_MARGIN = Cm(2.5)
MAX_FIGURE_WIDTH = Cm(15.2)
# A memo's tighter spacing (ReportFrame.compact), in points, set on its paragraphs over the styles'
# own (in brackets: the base template's): space above a heading (18) and a subheading (12), below
# body text (7), above and below a table cell's text (1.5), above a figure (6) and below its caption (12).
# Our choice.
COMPACT_SPACING_PT: Mapping[str, float] = {
    "heading_before": 10, "heading_2_before": 7, "body_after": 4, "cell": 0.5, "figure_before": 3,
    "caption_after": 4,
}
VARIABLE_PART = "variable."  # the key of each variable's part of a report (narrator.phrasing.sets: variable.<n>)
COMPACT_BLOCK_FONT_PT = 8  # the memo's "How this report was made" (the table text's 8.5 pt, a little smaller)

@dataclass(frozen=True, slots=True)
class ReportFrame:
    """The words around the narrative, already taken from the phrase bank and formatted.

    ``figure_number`` and ``table_number`` are patterns with one ``{number}``
    field ("Figure {number}."), put before each caption with a Word SEQ field
    for the number; when None, captions are written exactly as the narrative
    gives them. ``appendix_rows`` are (label, value) pairs.
    """

    details: tuple[str, ...] = ()
    figure_number: str | None = None
    table_number: str | None = None
    appendix_title: str | None = None
    appendix_intro: str | None = None
    appendix_header: tuple[str, str] | None = None
    appendix_rows: tuple[tuple[str, str], ...] = ()
    appendix_lines: tuple[str, ...] = ()  # a memo's compact block: written as lines in place of the table
    compact: bool = False  # a memo: tighter spacing, and a page for each variable's part (each holds on one)


def default_template() -> bytes:
    """The default style base, found with importlib.resources so an installed wheel has it too."""
    return template_file("styles", "narrator-base.docx").read_bytes()


def write_report(
    path: str | os.PathLike[str],
    narrative: Narrative,
    figures: Sequence[RenderedFigure],
    *,
    frame: ReportFrame,
    properties: Mapping[str, str],
    generated_at: dt.datetime,
    sidecar: Mapping[str, Any],
    template: str | os.PathLike[str] | None = None,
    protect: Sequence[str | os.PathLike[str] | None] = (),
    force: bool = False,
) -> Path:
    """Write the report to ``path`` and ``sidecar`` (JSON-ready data) beside it, as one pair; the sidecar's path.

    The pair is committed by :func:`narrator.safe_io.commit_report_pair`: the output rules
    are checked (``protect`` names the inputs, which are never written; ``force`` is the
    consent to replace a file that is not a narrator report), and a reader sees either the
    previous pair or this one. The template is protected too.
    """
    target = check_output(path, protect=(*protect, template), force=force)  # before the work, not only after
    data = build_document(
        narrative, figures, frame=frame, properties=properties, generated_at=generated_at, template=template
    )
    return commit_report_pair(target, data, sidecar, protect=(*protect, template), force=force)


def build_document(
    narrative: Narrative,
    figures: Sequence[RenderedFigure],
    *,
    frame: ReportFrame,
    properties: Mapping[str, str],
    generated_at: dt.datetime,
    template: str | os.PathLike[str] | None = None,
) -> bytes:
    """The report as .docx bytes. Same inputs and time, same bytes."""
    document = _open_base(template)
    _clear_body(document)
    if template is None:
        _page_for_locale(document, narrative.locale)
    _ensure_styles(document, template is not None)
    _set_language(document, narrative.locale)
    bullets_numbered = _style_has_numbering(document, STYLE_NAMES["bullet"])

    by_key = {figure.key: figure for figure in figures}
    counters = {"figure": 0, "table": 0, "part": 0}

    document.add_paragraph(xml_safe(narrative.title), style=STYLE_NAMES["title"])
    for line in frame.details:
        document.add_paragraph(xml_safe(line), style=STYLE_NAMES["details"])
    for section in narrative.sections:
        _add_section(document, section, by_key, frame, counters, bullets_numbered)
    if frame.appendix_lines:
        _add_compact_appendix(document, frame)
    elif frame.appendix_rows:
        _add_appendix(document, frame)

    _set_properties(document, properties, generated_at, narrative.locale)
    _keep_only_the_template_look(document)
    buffer = io.BytesIO()
    document.save(buffer)
    return _stable_zip(buffer.getvalue(), generated_at)


# --------------------------------------------------------------------------- base document


def _open_base(template: str | os.PathLike[str] | None):
    if template is None:
        return docx.Document(io.BytesIO(default_template()))
    path = Path(template)
    if not path.is_file():
        raise NarratorError(f"template {path} does not exist or is not a file")
    try:
        return docx.Document(str(path))
    except Exception as exc:  # python-docx raises several kinds for a bad package
        raise NarratorError(
            f"template {path} is not a valid Word document (.docx): {type(exc).__name__}: {exc}"
        ) from None


def _clear_body(document) -> None:
    # Keep the final section properties (page size, margins, header and footer
    # references): they are part of a template's branding.
    body = document.element.body
    for child in list(body):
        if child.tag != qn("w:sectPr"):
            body.remove(child)


def _page_for_locale(document, locale: str) -> None:
    territory = parse_locale(locale).territory or ""
    width, height = _LETTER if territory in _LETTER_TERRITORIES else _A4
    for section in document.sections:
        section.page_width, section.page_height = width, height
        section.left_margin = section.right_margin = _MARGIN
        section.top_margin = section.bottom_margin = _MARGIN


def _ensure_styles(document, from_user_template: bool) -> None:
    """Copy from the default base every style the report uses that the document lacks."""
    if not from_user_template:
        return
    base = docx.Document(io.BytesIO(default_template()))
    styles_element = document.styles.element
    for name in _COPY_ORDER:
        if name in document.styles:
            continue
        element = copy.deepcopy(base.styles[name].element)
        # The base's numbering definitions do not travel with the style; a
        # numbering id in the user's file would point at something else.
        for numbering in element.iter(qn("w:numPr")):
            numbering.getparent().remove(numbering)
        styles_element.append(element)


def _style_has_numbering(document, name: str) -> bool:
    style = document.styles[name]
    while style is not None:
        ppr = style.element.pPr
        if ppr is not None and ppr.find(qn("w:numPr")) is not None:
            return True
        style = style.base_style
    return False


def _set_language(document, locale: str) -> None:
    """Mark the text's language (BCP 47 tag) so spelling and hyphenation follow the report's locale."""
    tag = xml_safe(language_tag(locale))
    normal = document.styles["Normal"].element
    rpr = normal.get_or_add_rPr()
    lang = rpr.find(qn("w:lang"))
    if lang is None:
        lang = OxmlElement("w:lang")
        rpr.append(lang)
    lang.set(qn("w:val"), tag)


# --------------------------------------------------------------------------- content


def _add_section(document, section: Section, by_key, frame: ReportFrame, counters, bullets_numbered) -> None:
    if section.title:
        if section.level not in (1, 2):
            raise NarratorError(f"section {section.key!r} has heading level {section.level}; the writer knows 1 and 2")
        style = STYLE_NAMES["heading"] if section.level == 1 else STYLE_NAMES["heading_2"]
        heading = document.add_paragraph(xml_safe(section.title), style=style)
        if frame.compact:
            before = "heading_before" if section.level == 1 else "heading_2_before"
            heading.paragraph_format.space_before = Pt(COMPACT_SPACING_PT[before])
            if section.key.startswith(VARIABLE_PART):
                # A memo's page per variable: each variable's part after the first starts a page.
                counters["part"] += 1
                heading.paragraph_format.page_break_before = counters["part"] > 1
    for paragraph in section.paragraphs:
        added = _add_paragraph(document, paragraph, bullets_numbered)
        if frame.compact:
            added.paragraph_format.space_after = Pt(COMPACT_SPACING_PT["body_after"])
    for table in section.tables:
        counters["table"] += 1
        _add_table(document, table, frame.table_number, counters["table"], compact=frame.compact)
    for key in section.figures:
        figure = by_key.get(key)
        if figure is None:
            raise NarratorError(
                f"section {section.key!r} shows figure {key!r}, but no such figure was rendered"
            )
        counters["figure"] += 1
        _add_figure(document, figure, frame.figure_number, counters["figure"], compact=frame.compact)


def _add_paragraph(document, paragraph: Paragraph, bullets_numbered: bool):
    text = xml_safe(paragraph.text)
    if paragraph.style == "bullet":
        if not bullets_numbered:
            text = "\u2022\t" + text  # the template's bullet style has no numbering of its own
        return document.add_paragraph(text, style=STYLE_NAMES["bullet"])
    elif paragraph.style == "reference":
        return document.add_paragraph(text, style=STYLE_NAMES["reference"])
    elif paragraph.style == "body":
        return document.add_paragraph(text, style=STYLE_NAMES["body"])
    else:
        raise NarratorError(f"paragraph style {paragraph.style!r} is not one the writer knows")


def _caption(document, pattern: str | None, number: int, sequence: str, caption: str, *, keep_next: bool):
    """A caption paragraph: the numbering pattern with a SEQ field for the number, then the caption."""
    paragraph = document.add_paragraph(style=STYLE_NAMES["caption"])
    paragraph.paragraph_format.keep_with_next = keep_next
    if pattern:
        before, _, after = pattern.partition("{number}")
        if before:
            paragraph.add_run(xml_safe(before))
        _add_seq_field(paragraph, sequence, number)
        paragraph.add_run(xml_safe(after + " ") if after else " ")
    paragraph.add_run(xml_safe(caption))
    return paragraph


def _add_seq_field(paragraph, sequence: str, number: int) -> None:
    # A simple field (ECMA-376 part 1, 17.16.5.58 SEQ) keeps Word's own caption
    # numbering and lists of figures working; the cached result is the number.
    field = OxmlElement("w:fldSimple")
    field.set(qn("w:instr"), f" SEQ {sequence} \\* ARABIC ")
    run = OxmlElement("w:r")
    text = OxmlElement("w:t")
    text.text = str(number)
    run.append(text)
    field.append(run)
    paragraph._p.append(field)


def _add_table(document, table: Table, pattern: str | None, number: int, *, compact: bool = False) -> None:
    columns = len(table.header)
    if columns == 0:
        raise NarratorError(f"table {table.key!r} has no header")
    for index, row in enumerate(table.rows, start=1):
        if len(row) != columns:
            raise NarratorError(
                f"table {table.key!r}: row {index} has {len(row)} cells, the header has {columns}"
            )
    caption = _caption(document, pattern, number, "Table", table.caption, keep_next=True)
    caption.paragraph_format.space_after = Cm(0.1)
    grid = document.add_table(rows=1 + len(table.rows), cols=columns)
    grid.style = document.styles[STYLE_NAMES["table"]]
    grid.alignment = WD_TABLE_ALIGNMENT.LEFT
    grid.autofit = False
    align = tuple(table.align) + ("left",) * (columns - len(table.align))
    header_row = grid.rows[0]
    _repeat_as_header(header_row)
    heading_style, text_style = _style_id(document, "table_heading"), _style_id(document, "table_text")
    for col, text in enumerate(table.header):
        _fill_cell(header_row.cells[col], text, heading_style, align[col])
    for row_index, row in enumerate(table.rows, start=1):
        cells = grid.rows[row_index].cells
        for col, text in enumerate(row):
            _fill_cell(cells[col], text, text_style, align[col])
        _keep_row_together(grid.rows[row_index])
    _set_widths(grid, _column_widths(table, _text_width(document)))
    _keep_table_on_one_page(grid)
    if compact:
        # A memo's rows close together; the figure that follows brings its own space above.
        for row in grid.rows:
            for cell in row.cells:
                cell.paragraphs[0].paragraph_format.space_before = Pt(COMPACT_SPACING_PT["cell"])
                cell.paragraphs[0].paragraph_format.space_after = Pt(COMPACT_SPACING_PT["cell"])
        return
    # A little air after the table, where the next paragraph begins.
    document.add_paragraph(style=STYLE_NAMES["body"]).paragraph_format.space_after = Cm(0.1)


def _style_id(document, key: str) -> str | None:
    """The id python-docx's ``paragraph.style = name`` sets for the style of ``STYLE_NAMES[key]`` (None for
    the default style), looked up once for a table's cells: the lookup by name searches every style."""
    return document.part.get_style_id(STYLE_NAMES[key], WD_STYLE_TYPE.PARAGRAPH)


def _fill_cell(cell, text: str, style_id: str | None, align: str) -> None:
    """One cell's text, in the paragraph style of id ``style_id`` (from :func:`_style_id`)."""
    paragraph = cell.paragraphs[0]
    paragraph._p.style = style_id  # what the ``style`` setter does once it has the id
    paragraph.add_run(xml_safe(text))
    if align == "right":
        paragraph.alignment = WD_ALIGN_PARAGRAPH.RIGHT
    elif align not in ("left", ""):
        raise NarratorError(f"table column alignment {align!r} must be 'left' or 'right'")


def _repeat_as_header(row) -> None:
    trpr = row._tr.get_or_add_trPr()
    header = OxmlElement("w:tblHeader")
    trpr.append(header)


def _keep_table_on_one_page(grid) -> None:
    # Word and LibreOffice keep a table together when every row but the last
    # keeps with the next; a table longer than a page still breaks, and its
    # header row repeats.
    rows = list(grid.rows)
    if len(rows) > 30:
        return
    for row in rows[:-1]:
        for cell in row.cells:
            for paragraph in cell.paragraphs:
                paragraph.paragraph_format.keep_with_next = True


def _keep_row_together(row) -> None:
    trpr = row._tr.get_or_add_trPr()
    trpr.append(OxmlElement("w:cantSplit"))


def _add_figure(document, figure: RenderedFigure, pattern: str | None, number: int, *, compact: bool = False) -> None:
    if not figure.alt_text.strip():
        raise NarratorError(f"figure {figure.key!r} has no alt text; every picture needs one")
    paragraph = document.add_paragraph(style=STYLE_NAMES["figure"])
    paragraph.alignment = WD_ALIGN_PARAGRAPH.CENTER
    paragraph.paragraph_format.keep_with_next = True
    if compact:
        paragraph.paragraph_format.space_before = Pt(COMPACT_SPACING_PT["figure_before"])
    # At the size it was drawn at (the PNG's own dpi), so its fonts are the sizes on paper; never
    # wider than the text (a page-wide figure is then narrowed a hair, to MAX_FIGURE_WIDTH).
    shape = paragraph.add_run().add_picture(io.BytesIO(figure.png))
    widest = min(int(MAX_FIGURE_WIDTH), int(_text_width(document)))
    if int(shape.width) > widest:
        shape.height = Emu(round(int(shape.height) * widest / int(shape.width)))
        shape.width = Emu(widest)
    properties = shape._inline.docPr
    properties.set("descr", xml_safe(figure.alt_text))
    properties.set("title", xml_safe(figure.caption))
    properties.set("name", xml_safe(figure.key))
    caption = _caption(document, pattern, number, "Figure", figure.caption, keep_next=False)
    if compact:
        caption.paragraph_format.space_after = Pt(COMPACT_SPACING_PT["caption_after"])


def _text_width(document) -> Emu:
    section = document.sections[-1]
    return Emu(int(section.page_width) - int(section.left_margin) - int(section.right_margin))


def _column_widths(table: Table, text_width: Emu) -> tuple[Emu, ...]:
    """Column widths from the longest cell of each column, so short tables stay compact.

    About 0.2 cm per character at the 8.5 pt table font, plus cell padding. When the total
    exceeds the text width, every column first keeps room for its longest unbroken word (a
    number, "Median"), so no word or number is split across lines; the room left is shared in
    proportion to what each column wanted beyond that, and the long text wraps at its spaces.
    Only when the words alone are wider than the page do all columns shrink in proportion.
    """
    columns = list(zip(table.header, *table.rows, strict=True))
    longest = [max([len(text) for text in column] or [1]) for column in columns]
    unbroken = [max([len(word) for text in column for word in text.split()] or [1]) for column in columns]
    wanted = [max(1.6, 0.2 * chars + 0.5) for chars in longest]
    least = [min(want, max(1.0, 0.21 * chars + 0.5)) for want, chars in zip(wanted, unbroken, strict=True)]
    available = int(text_width) / int(Cm(1))
    if sum(wanted) <= available:
        return tuple(Cm(width) for width in wanted)
    if sum(least) >= available:
        scale = available / sum(least)
        return tuple(Cm(width * scale) for width in least)
    spare = (available - sum(least)) / (sum(wanted) - sum(least))
    return tuple(Cm(low + (want - low) * spare) for low, want in zip(least, wanted, strict=True))


def _set_widths(grid, widths: Sequence[Emu]) -> None:
    # Word reads the cell widths, LibreOffice the grid columns: set both.
    for column, width in zip(grid.columns, widths, strict=True):
        column.width = width
    for row in grid.rows:
        for cell, width in zip(row.cells, widths, strict=True):
            cell.width = width


def _add_compact_appendix(document, frame: ReportFrame) -> None:
    """A memo's "How this report was made": a heading and a few short lines in the table text's style, at
    :data:`COMPACT_BLOCK_FONT_PT` (so a short file name and its SHA-256 share a line)."""
    if frame.appendix_title:
        heading = document.add_paragraph(xml_safe(frame.appendix_title), style=STYLE_NAMES["heading_2"])
        heading.paragraph_format.keep_with_next = True
        if frame.compact:
            heading.paragraph_format.space_before = Pt(COMPACT_SPACING_PT["heading_2_before"])
    for index, line in enumerate(frame.appendix_lines):
        paragraph = document.add_paragraph(style=STYLE_NAMES["table_text"])
        paragraph.add_run(xml_safe(line)).font.size = Pt(COMPACT_BLOCK_FONT_PT)
        paragraph.paragraph_format.space_after = Cm(0)
        paragraph.paragraph_format.keep_together = True
        if index < len(frame.appendix_lines) - 1:
            paragraph.paragraph_format.keep_with_next = True


def _add_appendix(document, frame: ReportFrame) -> None:
    if frame.appendix_title:
        document.add_paragraph(xml_safe(frame.appendix_title), style=STYLE_NAMES["heading"])
    if frame.appendix_intro:
        document.add_paragraph(xml_safe(frame.appendix_intro), style=STYLE_NAMES["body"])
    header = frame.appendix_header
    grid = document.add_table(rows=len(frame.appendix_rows) + (1 if header else 0), cols=2)
    grid.style = document.styles[STYLE_NAMES["table"]]
    widths = (Cm(5.0), Emu(int(_text_width(document)) - int(Cm(5.0))))
    rows = list(grid.rows)
    heading_style, text_style = _style_id(document, "table_heading"), _style_id(document, "table_text")
    if header:
        _repeat_as_header(rows[0])
        for col, text in enumerate(header):
            _fill_cell(rows[0].cells[col], text, heading_style, "left")
        rows = rows[1:]
    for row, (label, value) in zip(rows, frame.appendix_rows, strict=True):
        _fill_cell(row.cells[0], label, text_style, "left")
        _fill_cell(row.cells[1], value, text_style, "left")
        _keep_row_together(row)
    _set_widths(grid, widths)
    if not header:
        # No header row: the style's header formatting must not fall on the first entry.
        look = grid._tbl.tblPr.find(qn("w:tblLook"))
        if look is not None:
            look.set(qn("w:firstRow"), "0")
            look.set(qn("w:val"), "0400")


# --------------------------------------------------------------------------- package


def _set_properties(document, properties: Mapping[str, str], generated_at: dt.datetime, locale: str) -> None:
    """Every core property from the caller; nothing from the template, the library or the OS user."""
    known = {"title", "subject", "author", "keywords", "category", "comments"}
    unknown = set(properties) - known
    if unknown:
        raise NarratorError(f"unknown document properties: {', '.join(sorted(unknown))}")
    if generated_at.tzinfo is None:
        raise NarratorError("the generation time must carry a time zone (for example UTC)")
    moment = generated_at.astimezone(dt.UTC).replace(microsecond=0)
    core = document.core_properties
    author = _property_text(properties.get("author", ""))
    core.title = _property_text(properties.get("title", ""))
    core.subject = _property_text(properties.get("subject", ""))
    core.author = author
    core.last_modified_by = author
    core.keywords = _property_text(properties.get("keywords", ""))
    core.category = _property_text(properties.get("category", ""))
    core.comments = _property_text(properties.get("comments", ""))
    core.content_status = ""
    core.identifier = ""
    core.version = ""
    core.language = xml_safe(language_tag(locale))
    core.revision = 1
    core.created = moment
    core.modified = moment
    element = core._element
    if element.lastPrinted is not None:
        element._remove_lastPrinted()


PROPERTY_LENGTH = 255  # python-docx refuses longer core properties (a long column name reaches the title)


def _property_text(value: object) -> str:
    text = xml_safe(value)
    return text if len(text) <= PROPERTY_LENGTH else text[: PROPERTY_LENGTH - 1] + "\u2026"


# What a report keeps from its base document: the parts that make its look. Everything else a
# user's template may carry (comments and their authors, custom XML data, glossary entries,
# macros, a thumbnail, extended and custom properties, mail-merge sources, document variables,
# the path of an attached template) is dropped, so none of it travels into a report.
_KEPT_PART_TYPES = frozenset({
    RT.STYLES, RT.NUMBERING, RT.THEME, RT.FONT_TABLE, RT.SETTINGS, RT.WEB_SETTINGS, RT.HEADER, RT.FOOTER,
    RT.FOOTNOTES, RT.ENDNOTES, RT.IMAGE, RT.HYPERLINK,
    "http://schemas.microsoft.com/office/2007/relationships/stylesWithEffects",
})
_KEPT_PACKAGE_TYPES = frozenset({RT.OFFICE_DOCUMENT, RT.CORE_PROPERTIES})
_SETTINGS_DROPPED = ("w:attachedTemplate", "w:docVars", "w:mailMerge", "w:rsids", "w:documentProtection",
                     "w:writeProtection", "w:removePersonalInformation")
_NOTE_SEPARATORS = frozenset({"separator", "continuationSeparator", "continuationNotice"})
# Extended and custom properties, written fresh for every report (ECMA-376 Part 1, 22.2 and 22.3;
# FMTID_UserDefinedProperties is the format id of user-defined custom properties).
_EXTENDED_PROPERTIES = (
    b'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
    b'<Properties xmlns="http://schemas.openxmlformats.org/officeDocument/2006/extended-properties" '
    b'xmlns:vt="http://schemas.openxmlformats.org/officeDocument/2006/docPropsVTypes">'
    b"<Application>narrator</Application></Properties>"
)
def _custom_properties(words: str) -> bytes:
    """The custom properties of a report: the mark, and the fingerprint of the words it was written with
    (:data:`narrator.safe_io.REPORT_WORDS`, compared before a later build replaces it)."""
    return (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
        '<Properties xmlns="http://schemas.openxmlformats.org/officeDocument/2006/custom-properties" '
        'xmlns:vt="http://schemas.openxmlformats.org/officeDocument/2006/docPropsVTypes">'
        '<property fmtid="{D5CDD505-2E9C-101B-9397-08002B2CF9AE}" pid="2" name="' + REPORT_MARK + '">'
        "<vt:lpwstr>1</vt:lpwstr></property>"
        '<property fmtid="{D5CDD505-2E9C-101B-9397-08002B2CF9AE}" pid="3" name="' + REPORT_WORDS + '">'
        f"<vt:lpwstr>{words}</vt:lpwstr></property></Properties>"
    ).encode("utf-8")


def _body_words(document) -> str:
    """The fingerprint of the document's body as it will be saved (:func:`narrator.wordtext.visible_words`)."""
    related = document.part.related_parts

    def digest(rel_id: str) -> str:
        part = related.get(rel_id)
        return "missing" if part is None else hashlib.sha256(part.blob).hexdigest()[:16]

    return visible_words(list(document.element.body), digest)[1]


def _keep_only_the_template_look(document, mark: bool = True) -> None:
    """Drop every part and setting of the base that is not styles, page set-up, headers or footers.

    Then the package gets fresh extended properties and, with ``mark``, custom properties
    holding only the mark by which narrator knows its own reports
    (:data:`narrator.safe_io.REPORT_MARK`).
    """
    from docx.opc.constants import CONTENT_TYPE as CT
    from docx.opc.packuri import PackURI
    from docx.opc.part import Part

    part = document.part
    for rel_id, rel in list(part.rels.items()):
        if rel.reltype not in _KEPT_PART_TYPES:
            del part.rels[rel_id]
    for related in list(part.rels.values()):
        if related.is_external:
            continue
        if related.reltype == RT.SETTINGS:
            _clean_settings(related.target_part)
        elif related.reltype in (RT.FOOTNOTES, RT.ENDNOTES):
            _keep_only_separators(related.target_part)
    package = part.package
    for rel_id, rel in list(package.rels.items()):
        if rel.reltype not in _KEPT_PACKAGE_TYPES:
            del package.rels[rel_id]
    package.relate_to(Part(PackURI("/docProps/app.xml"), CT.OFC_EXTENDED_PROPERTIES, _EXTENDED_PROPERTIES, package),
                      RT.EXTENDED_PROPERTIES)
    if mark:
        package.relate_to(Part(PackURI("/docProps/custom.xml"), CT.OFC_CUSTOM_PROPERTIES,
                               _custom_properties(_body_words(document)), package), RT.CUSTOM_PROPERTIES)


def _edit_xml(part, edit) -> None:
    """Apply ``edit`` to the XML of ``part``, whether python-docx keeps it parsed or as bytes."""
    from docx.oxml import parse_xml
    from lxml import etree

    element = getattr(part, "_element", None)
    if element is not None:
        edit(element)
        return
    element = parse_xml(part.blob)
    edit(element)
    part._blob = etree.tostring(element, xml_declaration=True, encoding="UTF-8", standalone=True)


def _clean_settings(part) -> None:
    def edit(settings) -> None:
        for tag in _SETTINGS_DROPPED:
            for element in settings.findall(qn(tag)):
                settings.remove(element)

    _edit_xml(part, edit)
    for rel_id in list(part.rels):  # the attached template, a mail-merge source: paths of files
        del part.rels[rel_id]


def _keep_only_separators(part) -> None:
    def edit(notes) -> None:
        for note in list(notes):
            if note.get(qn("w:type")) not in _NOTE_SEPARATORS:
                notes.remove(note)

    _edit_xml(part, edit)


def _stable_zip(data: bytes, moment: dt.datetime) -> bytes:
    """Rewrite the package with every member stamped with ``moment``, so equal reports are equal bytes."""
    stamp = moment.astimezone(dt.UTC)
    date_time = (max(stamp.year, 1980), stamp.month, stamp.day, stamp.hour, stamp.minute, stamp.second)
    source = zipfile.ZipFile(io.BytesIO(data))
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        for info in source.infolist():
            member = zipfile.ZipInfo(info.filename, date_time=date_time)
            member.compress_type = zipfile.ZIP_DEFLATED
            member.external_attr = 0o644 << 16
            archive.writestr(member, source.read(info.filename))
    return buffer.getvalue()


# --------------------------------------------------------------------------- a document of the user's kind


PLAIN_STYLES = {"title": "title", "heading": "heading", "body": "body", "bullet": "bullet"}


def plain_document(
    blocks: Sequence[tuple[str, str]],
    *,
    header: str,
    properties: Mapping[str, str],
    generated_at: dt.datetime,
    locale: str,
) -> bytes:
    """A plain document of the kind a user writes (no narrative): ``(style, text)`` paragraphs and a header line.

    ``style`` is one of :data:`PLAIN_STYLES` (title, heading, body, bullet),
    laid out in the default style base; the base's footer carries the page
    number. The example of a user's own report (narrator.demo) is made this
    way; same inputs and time, same bytes.
    """
    document = docx.Document(io.BytesIO(default_template()))
    _clear_body(document)
    _page_for_locale(document, locale)
    _set_language(document, locale)
    bullets_numbered = _style_has_numbering(document, STYLE_NAMES["bullet"])
    for style, text in blocks:
        if style not in PLAIN_STYLES:
            raise NarratorError(f"paragraph style {style!r} is not one of {', '.join(PLAIN_STYLES)}")
        shown = xml_safe(text)
        if style == "bullet" and not bullets_numbered:
            shown = "\u2022\t" + shown
        document.add_paragraph(shown, style=STYLE_NAMES[PLAIN_STYLES[style]])
    section = document.sections[0]
    section.header.is_linked_to_previous = False
    section.header.paragraphs[0].text = xml_safe(header)
    _set_properties(document, properties, generated_at, locale)
    _keep_only_the_template_look(document, mark=False)  # the user's kind: no report mark
    buffer = io.BytesIO()
    document.save(buffer)
    return _stable_zip(buffer.getvalue(), generated_at)
