"""A user's own Word file (.docx): its content controls found, filled and made, on the package's XML itself.

The one module that reads and writes the XML of a user's document (lxml and
zipfile; python-docx has no API for content controls). A content control is a
structured document tag (ECMA-376 Part 1, 17.5.2): ``w:sdt`` with its
properties ``w:sdtPr`` (``w:tag``, ``w:alias``, ``w:id``...) and its content
``w:sdtContent``, around whole paragraphs and tables (block level) or inside a
paragraph (inline, around runs).

=============================  ================================================
Name                           What it is
=============================  ================================================
:class:`WordPackage`           a .docx read into memory and checked
:class:`Control`               one content control: where, its tag, its state
:class:`Filling`               what a fill puts into one control
:class:`FillResult`            the new package bytes and the parts they touch
:class:`MarkResult`            the same for turning typed markers into controls
:func:`refusal`                why a control cannot take a filling, or None
:data:`FIGURE_WIDTH_EMU`       the widest a figure is placed (as the reports)
=============================  ================================================

Nothing outside a filled control changes. Each XML part is parsed with lxml
to understand it, and edited by splicing its original bytes: only the byte
range inside a filled control's ``w:sdtContent`` is replaced (and the
control's ``w:showingPlcHdr`` flag removed), so the rest of the part, its
declarations and its formatting are byte-identical. Every other part of the
package is copied as it was. A figure also adds its picture
(``word/media/narrator-<digest>.png``, named by its content, so an unchanged
figure is the same part), one relationship in the part's ``.rels`` (spliced
in the same way), and, only when the package has none, the PNG default in
``[Content_Types].xml``; a picture of ours that no place shows any more is
removed with its relationship.

Filled text takes the user's formatting: the paragraph properties of the
control's first paragraph and the run properties of its first run (Word's
"Placeholder Text" character style aside); a table keeps the table
properties, cell formatting and column widths of the table already in the
control; a figure's caption keeps the paragraph after the picture.
Bookmarks inside a control are kept (moved to its start).

Which text is "the user's": :attr:`Control.fingerprint` digests the visible
content (the words, tabs and breaks, each picture's bytes, tracked changes
and comment anchors), not its formatting, so a word processor saving the file
again does not count as an edit, but a changed word, a picture swapped or a
comment added does (:func:`narrator.wordtext.visible_words`, which also tells a report edited since
narrator wrote it).
"""

from __future__ import annotations

import copy
import datetime as dt
import hashlib
import io
import posixpath
import re
import zipfile
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

from lxml import etree

from narrator.errors import NarratorError
from narrator.figures.rendered import RenderedFigure
from narrator.phrasing.narrative import Table
from narrator.wordtext import visible_words
from narrator.xmltext import xml_safe

W = "http://schemas.openxmlformats.org/wordprocessingml/2006/main"
W14 = "http://schemas.microsoft.com/office/word/2010/wordml"
R = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
WP = "http://schemas.openxmlformats.org/drawingml/2006/wordprocessingDrawing"
A = "http://schemas.openxmlformats.org/drawingml/2006/main"
PIC = "http://schemas.openxmlformats.org/drawingml/2006/picture"
V = "urn:schemas-microsoft-com:vml"
PACKAGE_RELS = "http://schemas.openxmlformats.org/package/2006/relationships"
CONTENT_TYPES = "http://schemas.openxmlformats.org/package/2006/content-types"
STRICT_W = "http://purl.oclc.org/ooxml/wordprocessingml/main"
XML_SPACE = "{http://www.w3.org/XML/1998/namespace}space"
REL_OFFICE_DOCUMENT = R + "/officeDocument"
REL_HEADER = R + "/header"
REL_FOOTER = R + "/footer"
REL_IMAGE = R + "/image"

MAX_PACKAGE_BYTES = 1 << 30  # uncompressed; a larger .docx is refused before anything is unpacked
MAX_MEMBERS = 20_000
FIGURE_WIDTH_EMU = 5_472_000  # 15.2 cm, the widest figure of a report (narrator.writer.MAX_FIGURE_WIDTH)
EMU_PER_TWIP = 635
DEFAULT_TEXT_WIDTH_TWIPS = 9_026  # an A4 page with 2.5 cm margins, when the document states no page
IMAGE_NAME = re.compile(r"^word/media/narrator-[0-9a-f]{16}\.png$")
IMAGE_REL_ID = re.compile(r"^rIdNarrator[0-9a-f]{16}$")
PLACEHOLDER_STYLE = "PlaceholderText"  # the character style Word gives a control's placeholder text

_PARSER = etree.XMLParser(resolve_entities=False, no_network=True, load_dtd=False, huge_tree=False)


def _w(name: str) -> str:
    return f"{{{W}}}{name}"


# --------------------------------------------------------------------------- byte positions of elements

# One alternative per kind of markup; only the last (a start or end tag) has groups. Attribute values
# may hold ">" and are skipped as quoted strings.
_MARKUP = re.compile(
    rb"<!--.*?-->|<!\[CDATA\[.*?\]\]>|<\?.*?\?>|<!(?:[^>\"']|\"[^\"]*\"|'[^']*')*>"
    rb"|<(/?)([^\s/>!?]+)((?:[^>\"']|\"[^\"]*\"|'[^']*')*)>",
    re.S,
)


@dataclass(slots=True)
class _Span:
    """Byte positions of one element: ``start``..``open_end`` is its start tag, ``close_start``..``end`` its end tag."""

    start: int
    open_end: int
    close_start: int
    end: int
    name: bytes  # the qualified name as written, e.g. b"w:sdt"

    @property
    def prefix(self) -> bytes:
        head, colon, _ = self.name.rpartition(b":")
        return head + colon if colon else b""


def _spans(data: bytes) -> list[_Span]:
    """The spans of every element of well-formed XML ``data``, in document order."""
    spans: list[_Span] = []
    stack: list[int] = []
    for match in _MARKUP.finditer(data):
        name = match.group(2)
        if name is None:
            continue  # a comment, CDATA section, processing instruction or declaration
        if match.group(1):
            span = spans[stack.pop()]
            span.close_start, span.end = match.start(), match.end()
        else:
            spans.append(_Span(match.start(), match.end(), match.end(), match.end(), name))
            if not match.group(3).endswith(b"/"):
                stack.append(len(spans) - 1)
    if stack:
        raise ValueError("unclosed element")
    return spans


def _local(tag: object) -> str:
    return etree.QName(tag).localname if isinstance(tag, str) else ""


class _Part:
    """One XML part: its bytes, its lxml tree, and each element's byte span (aligned by document order)."""

    def __init__(self, name: str, data: bytes, package_name: str) -> None:
        self.name = name
        self.data = data
        where = f"{package_name}: {name}"
        if not data.startswith((b"<", b"\xef\xbb\xbf")) and not data.lstrip().startswith(b"<"):
            raise NarratorError(f"{where} is not XML; the file is damaged")
        if data.startswith((b"\xff\xfe", b"\xfe\xff")) or re.match(rb"\s*<\?xml[^>]*encoding=[\"'](?!utf-8)",
                                                                    data[:200], re.I):
            raise NarratorError(f"{where} is not in UTF-8; open the file in Word or LibreOffice and save it again")
        head = data[:4096]
        if b"<!DOCTYPE" in head or b"<!ENTITY" in head:
            raise NarratorError(f"{where} declares a document type, which a Word part never does; "
                                "the file is damaged or not a Word document")
        try:
            self.root = etree.fromstring(data, _PARSER)
        except etree.XMLSyntaxError as exc:
            line, column = exc.position
            raise NarratorError(f"{where} is not well-formed XML (line {line}, column {column}); the file is "
                                "damaged") from None
        self.elements = list(self.root.iter(etree.Element))
        try:
            spans = _spans(data)
        except (ValueError, IndexError):
            spans = []
        if len(spans) != len(self.elements) or any(
            span.name.rpartition(b":")[2].decode("utf-8", "replace") != _local(element.tag)
            for span, element in zip(spans, self.elements, strict=False)
        ):
            raise NarratorError(f"{where}: narrator cannot locate its elements; open the file in Word or "
                                "LibreOffice and save it again")
        self.span = dict(zip(self.elements, spans, strict=True))


def _splice(data: bytes, edits: Sequence[tuple[int, int, bytes]]) -> bytes:
    """``data`` with each (start, end, replacement) applied; the ranges must not overlap."""
    ordered = sorted(edits, key=lambda edit: (edit[0], edit[1]))
    for (_, end, _), (start, _, _) in zip(ordered, ordered[1:], strict=False):
        if start < end:
            raise NarratorError("internal: overlapping edits of one part")
    pieces, position = [], 0
    for start, end, replacement in ordered:
        pieces += [data[position:start], replacement]
        position = end
    pieces.append(data[position:])
    return b"".join(pieces)


def _inner_bytes(element) -> bytes:
    """The serialized children of ``element`` (not its own tags), with the prefixes in scope in its tree."""
    text = etree.tostring(element, encoding="unicode")
    if text.endswith("/>") and len(element) == 0 and not element.text:
        return b""
    match = _MARKUP.search(text.encode("utf-8"))
    encoded = text.encode("utf-8")
    return encoded[match.end(): encoded.rfind(b"</")]


def _escape(text: str, *, attribute: bool = False) -> bytes:
    value = xml_safe(text).replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    if attribute:
        value = value.replace('"', "&quot;").replace("\n", "&#10;").replace("\t", "&#9;")
    return value.encode("utf-8")


# --------------------------------------------------------------------------- controls


@dataclass(frozen=True, slots=True)
class Control:
    """One content control of the document.

    ``part`` and ``index`` (its place among the part's controls, in document
    order) identify it within one version of the file; ``control_id`` is the
    ``w:id`` the word processor gave it. ``level`` is ``block`` (around whole
    paragraphs and tables), ``inline`` (inside a paragraph), ``cell`` or
    ``row`` (around table cells or rows). ``kind`` is the control's type
    (``richText`` when none is stated). ``inside`` is the index of the nearest
    control it sits in, if any.
    """

    part: str
    index: int
    tag: str | None
    alias: str | None
    control_id: int | None
    level: str
    kind: str
    text: str
    fingerprint: str
    showing_placeholder: bool = False
    locked: bool = False
    bound: bool = False
    deleted: bool = False
    section_break: bool = False
    inside: int | None = None

    @property
    def ref(self) -> tuple[str, int]:
        return (self.part, self.index)


@dataclass(frozen=True, slots=True)
class Filling:
    """What goes into one control: paragraphs of text, a table, a figure, or a phrase (one of them)."""

    paragraphs: tuple[str, ...] = ()
    table: Table | None = None
    figure: RenderedFigure | None = None
    phrase: str | None = None

    @property
    def kind(self) -> str:
        if self.table is not None:
            return "table"
        if self.figure is not None:
            return "figure"
        if self.paragraphs:
            return "paragraphs"
        return "phrase"


_TYPE_ELEMENTS = ("richText", "text", "picture", "comboBox", "dropDownList", "date", "docPartObj", "docPartList",
                  "group", "citation", "bibliography", "equation")
_FILLABLE_KINDS = ("richText", "text", "picture")


def refusal(control: Control, filling: Filling) -> str | None:
    """Why ``control`` cannot take ``filling`` (words for the user), or None when it can."""
    kind = filling.kind
    if control.level == "empty":
        return "it has no content part; delete it and insert the control again"
    if control.level in ("cell", "row"):
        return f"it holds a whole table {control.level}; put the control inside the cell instead"
    if control.kind not in _FILLABLE_KINDS:
        return f"it is a {control.kind} control; narrator fills rich text, plain text and picture controls"
    if control.bound:
        return "it is bound to data stored in the document, which the word processor would put back"
    if control.locked:
        return "its content is locked"
    if control.deleted:
        return "it is deleted in the tracked changes"
    if control.section_break:
        return "its content holds a section break, which a fill would remove"
    if control.kind == "picture" and kind != "figure":
        return "a picture control holds only a figure"
    if control.kind == "text" and kind in ("table", "figure"):
        return f"a plain-text control cannot hold a {kind}"
    if control.level == "inline" and kind == "table":
        return "a table needs a control around whole paragraphs, not one inside a line of text"
    return None


# Where a control sits: walking up from it, the first of these decides its level.
_INLINE_PARENTS = {_w("p")}
_SEE_THROUGH = {_w(name) for name in ("sdt", "sdtContent", "customXml", "smartTag", "hyperlink", "ins", "del",
                                      "moveTo", "moveFrom", "fldSimple", "dir", "bdo")}


def _level(sdt) -> str:
    parent = sdt.getparent()
    if parent is not None and parent.tag == _w("tr"):
        return "cell"
    if parent is not None and parent.tag == _w("tbl"):
        return "row"
    while parent is not None:
        if parent.tag in _INLINE_PARENTS:
            return "inline"
        if parent.tag not in _SEE_THROUGH:
            return "block"
        parent = parent.getparent()
    return "block"


# --------------------------------------------------------------------------- results


@dataclass(frozen=True, slots=True)
class FillResult:
    """The filled package (None when no part changed) and what it touched, by part name."""

    data: bytes | None
    changed: tuple[str, ...] = ()
    added: tuple[str, ...] = ()
    removed: tuple[str, ...] = ()
    filled: tuple[tuple[str, int], ...] = ()  # controls whose content changed


@dataclass(frozen=True, slots=True)
class MadePlace:
    part: str
    tag: str
    level: str  # "block" or "inline"


@dataclass(frozen=True, slots=True)
class RefusedMarker:
    part: str
    marker: str
    reason: str


@dataclass(frozen=True, slots=True)
class MarkResult:
    data: bytes | None
    made: tuple[MadePlace, ...] = ()
    refused: tuple[RefusedMarker, ...] = ()
    changed: tuple[str, ...] = ()


# --------------------------------------------------------------------------- the package


@dataclass(slots=True)
class _Relationship:
    rel_id: str
    rel_type: str
    target: str
    external: bool
    element: object


class WordPackage:
    """A .docx in memory: every member's bytes, the main document part, its headers and footers.

    Build with :meth:`from_bytes` or :meth:`read`; both raise
    :class:`~narrator.errors.NarratorError` with one clear line for a file
    that is not a readable Word document. Nothing here writes a file.
    """

    def __init__(self, name: str, infos: list[zipfile.ZipInfo], members: dict[str, bytes]) -> None:
        self.name = name
        self.infos = infos
        self.members = members
        self._lower = {member.lower(): member for member in members}
        self._parts: dict[str, _Part] = {}
        content_types = self._member("[Content_Types].xml")
        if content_types is None:
            raise self._damaged("it has no [Content_Types].xml")
        self.content_types = self.part(content_types)
        package_rels = self._member("_rels/.rels")
        if package_rels is None:
            raise self._damaged("it has no _rels/.rels")
        main = [rel for rel in self._relationships("", package_rels) if rel.rel_type == REL_OFFICE_DOCUMENT
                and not rel.external]
        if not main:
            strict = [rel for rel in self._relationships("", package_rels) if rel.rel_type.endswith("/officeDocument")]
            if strict:
                raise NarratorError(f"{name} is saved as Strict Open XML; save it as an ordinary Word document "
                                    "(.docx) and try again")
            raise self._damaged("it names no main document part")
        self.main = self._resolve("", main[0].target)
        if self.main is None:
            raise self._damaged(f"its main part {main[0].target} is missing")
        root = self.part(self.main).root
        if etree.QName(root).namespace == STRICT_W:
            raise NarratorError(f"{name} is saved as Strict Open XML; save it as an ordinary Word document (.docx)")
        if root.tag != _w("document"):
            raise NarratorError(f"{name} is not a Word text document (its main part is {_local(root.tag)!r})")
        stories = [self.main]
        for rel in self.relationships(self.main):
            if rel.rel_type in (REL_HEADER, REL_FOOTER) and not rel.external:
                target = self._resolve(self.main, rel.target)
                if target is not None and target not in stories:
                    stories.append(target)
        self.stories = tuple(stories)

    # ---- reading

    @classmethod
    def read(cls, path) -> WordPackage:
        from pathlib import Path

        path = Path(path)
        try:
            data = path.read_bytes()
        except FileNotFoundError:
            raise NarratorError(f"{path}: no such file") from None
        except IsADirectoryError:
            raise NarratorError(f"{path} is a folder, not a Word document") from None
        except OSError as exc:
            raise NarratorError(f"{path}: cannot be read ({exc.strerror or exc})") from None
        return cls.from_bytes(data, path.name)

    @classmethod
    def from_bytes(cls, data: bytes, name: str) -> WordPackage:
        if data[:8] == b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1":
            raise NarratorError(f"{name} is password-protected or in the old Word format (.doc); save it as an "
                                "unprotected .docx")
        try:
            archive = zipfile.ZipFile(io.BytesIO(data))
            infos = archive.infolist()
        except (zipfile.BadZipFile, zipfile.LargeZipFile, ValueError, EOFError):
            raise NarratorError(f"{name} is not a Word document (.docx): it is not a zip package, or it is "
                                "damaged") from None
        names = [info.filename for info in infos]
        if len(names) > MAX_MEMBERS:
            raise NarratorError(f"{name} holds {len(names)} parts, more than narrator reads ({MAX_MEMBERS})")
        if len(set(names)) != len(names) or len({n.lower() for n in names}) != len(names):
            raise NarratorError(f"{name} is damaged: two of its parts have the same name")
        if sum(info.file_size for info in infos) > MAX_PACKAGE_BYTES:
            raise NarratorError(f"{name} unpacks to more than {MAX_PACKAGE_BYTES >> 20} MiB; narrator does not "
                                "open it")
        members = {}
        for info in infos:
            try:
                members[info.filename] = archive.read(info)
            except RuntimeError:
                raise NarratorError(f"{name} is encrypted; save it without a password") from None
            except (zipfile.BadZipFile, NotImplementedError, OSError, EOFError, ValueError) as exc:
                raise NarratorError(f"{name} is damaged: its part {info.filename} cannot be unpacked "
                                    f"({type(exc).__name__})") from None
        return cls(name, infos, members)

    def _damaged(self, why: str) -> NarratorError:
        return NarratorError(f"{self.name} is not a Word document narrator can read: {why}")

    def _member(self, name: str) -> str | None:
        return name if name in self.members else self._lower.get(name.lower())

    def part(self, name: str) -> _Part:
        if name not in self._parts:
            self._parts[name] = _Part(name, self.members[name], self.name)
        return self._parts[name]

    def _resolve(self, source: str, target: str) -> str | None:
        """The member a relationship target of part ``source`` names (relative to its folder), or None."""
        if target.startswith("/"):
            joined = target.lstrip("/")
        else:
            joined = posixpath.normpath(posixpath.join(posixpath.dirname(source), target))
        if joined.startswith("../"):
            return None
        return self._member(joined)

    @staticmethod
    def rels_name(part: str) -> str:
        folder, base = posixpath.split(part)
        return posixpath.join(folder, "_rels", f"{base}.rels")

    def _relationships(self, source: str, rels_member: str) -> list[_Relationship]:
        root = self.part(rels_member).root
        found = []
        for element in root:
            if not isinstance(element.tag, str) or _local(element.tag) != "Relationship":
                continue
            found.append(_Relationship(element.get("Id") or "", element.get("Type") or "",
                                       element.get("Target") or "", element.get("TargetMode") == "External",
                                       element))
        return found

    def relationships(self, part: str) -> list[_Relationship]:
        member = self._member(self.rels_name(part))
        return [] if member is None else self._relationships(part, member)

    def _image_digest(self, part: str) -> Callable[[str], str]:
        by_id = {rel.rel_id: rel for rel in self.relationships(part)}

        def digest(rel_id: str) -> str:
            rel = by_id.get(rel_id)
            target = None if rel is None or rel.external else self._resolve(part, rel.target)
            if target is None:
                return "missing"
            return hashlib.sha256(self.members[target]).hexdigest()[:16]

        return digest

    # ---- controls

    def controls(self) -> list[Control]:
        """Every content control of the main document, its headers and its footers, in document order."""
        found = []
        for part_name in self.stories:
            part = self.part(part_name)
            sdts = list(part.root.iter(_w("sdt")))
            positions = {sdt: index for index, sdt in enumerate(sdts)}
            digest = self._image_digest(part_name)
            for index, sdt in enumerate(sdts):
                found.append(self._control(part_name, index, sdt, positions, digest))
        return found

    @staticmethod
    def _control(part: str, index: int, sdt, positions, digest) -> Control:
        properties = sdt.find(_w("sdtPr"))
        content = sdt.find(_w("sdtContent"))

        def value(name: str) -> str | None:
            element = properties.find(_w(name)) if properties is not None else None
            return element.get(_w("val")) if element is not None else None

        kind = "richText"
        if properties is not None:
            for child in properties:
                local = _local(child.tag)
                if local in _TYPE_ELEMENTS or (etree.QName(child).namespace == W14 and local == "checkbox"):
                    kind = local
                    break
        identifier = value("id")
        try:
            control_id = int(identifier) if identifier is not None else None
        except ValueError:
            control_id = None
        if content is not None:
            text, fingerprint = visible_words(content, digest)
        else:
            text, fingerprint = "", hashlib.sha256(b"").hexdigest()
        ancestor = sdt.getparent()
        inside = None
        deleted = False
        while ancestor is not None:
            if ancestor.tag in (_w("del"), _w("moveFrom")):
                deleted = True
            if inside is None and ancestor.tag == _w("sdt"):
                inside = positions.get(ancestor)
            ancestor = ancestor.getparent()
        return Control(
            part=part,
            index=index,
            tag=value("tag"),
            alias=value("alias"),
            control_id=control_id,
            level=_level(sdt) if content is not None else "empty",
            kind=kind,
            text=text,
            fingerprint=fingerprint,
            showing_placeholder=properties is not None and properties.find(_w("showingPlcHdr")) is not None,
            locked=value("lock") in ("contentLocked", "sdtContentLocked"),
            bound=properties is not None and (properties.find(_w("dataBinding")) is not None
                                              or properties.find(f"{{{W14}}}dataBinding") is not None),
            deleted=deleted,
            section_break=content is not None and content.find(f".//{_w('pPr')}/{_w('sectPr')}") is not None,
            inside=inside,
        )

    # ---- filling

    def fill(self, fillings: Mapping[tuple[str, int], Filling], *, moment) -> FillResult:
        """The package with each control ``(part, index)`` of ``fillings`` holding its new content.

        Controls the caller could not fill (see :func:`refusal`) must not be
        passed. ``moment`` (an aware datetime) stamps the package members that
        change; unchanged members keep their own stamps. When no part
        changes, the result's ``data`` is None.
        """
        editor = _PackageEditor(self)
        editor.next_drawing_id = self._first_free_drawing_id(fillings)
        for part_name in self.stories:
            mine = {index: filling for (part, index), filling in fillings.items() if part == part_name}
            if mine:
                editor.fill_part(part_name, mine)
        return editor.result(moment)

    def _first_free_drawing_id(self, fillings: Mapping[tuple[str, int], Filling]) -> int:
        """One more than the highest picture id outside the controls being filled (ids are document-wide).

        The pictures inside those controls are replaced, so their ids are given
        out again, in the same order, and a fill on unchanged data repeats itself.
        """
        highest = 0
        for story in self.stories:
            root = self.part(story).root
            sdts = list(root.iter(_w("sdt")))
            filled = {sdts[index] for part, index in fillings if part == story}
            for drawing in root.iter(f"{{{WP}}}docPr"):
                if any(ancestor in filled for ancestor in drawing.iterancestors(_w("sdt"))):
                    continue
                value = drawing.get("id", "0")
                highest = max(highest, int(value) if value.isdigit() else 0)
        return highest + 1

    # ---- markers

    def mark(self, convert: Callable[[str], tuple[str | None, str | None]], *, moment) -> MarkResult:
        """Turn every typed marker into a content control.

        ``convert(marker_text)`` gives ``(tag, None)`` for a marker to make a
        place of (the canonical tag text) or ``(None, reason)`` to leave it.
        A marker that is the whole text of its paragraph becomes a block
        control around that paragraph (so it can take a table or a figure);
        one inside a line becomes an inline control around the marker's text.
        """
        editor = _PackageEditor(self)
        made: list[MadePlace] = []
        refused: list[RefusedMarker] = []
        used_ids = {int(value) for story in self.stories for element in self.part(story).root.iter(_w("id"))
                    if element.getparent().tag == _w("sdtPr")
                    and (value := element.get(_w("val")) or "").lstrip("-").isdigit()}
        for part_name in self.stories:
            part_made, part_refused = editor.mark_part(part_name, convert, used_ids)
            made += part_made
            refused += part_refused
        result = editor.result(moment)
        return MarkResult(result.data, tuple(made), tuple(refused), result.changed)

    def typed_markers(self) -> int:
        """How many ``[narrator:...]`` markers the document's text holds (inside controls or not)."""
        from narrator.places.tags import find_markers

        return sum(len(find_markers("".join(text.text or "" for text in paragraph.iter(_w("t")))))
                   for story in self.stories for paragraph in self.part(story).root.iter(_w("p")))

    # ---- the document's styles and page

    def style_ids(self) -> dict[str, str]:
        """styleId -> type ("paragraph", "character", "table", "numbering") of the document's styles."""
        styles = next((self._resolve(self.main, rel.target) for rel in self.relationships(self.main)
                       if rel.rel_type == R + "/styles" and not rel.external), None)
        if styles is None:
            return {}
        return {element.get(_w("styleId")): element.get(_w("type")) or "paragraph"
                for element in self.part(styles).root.iter(_w("style")) if element.get(_w("styleId"))}

    def text_width_twips(self) -> int:
        """The width between the margins of the document's last section, in twentieths of a point."""
        body = self.part(self.main).root.find(_w("body"))
        section = body.find(_w("sectPr")) if body is not None else None
        if section is None:
            return DEFAULT_TEXT_WIDTH_TWIPS
        size, margins = section.find(_w("pgSz")), section.find(_w("pgMar"))
        try:
            width = int(size.get(_w("w")))
            left = int(margins.get(_w("left"), 0)) if margins is not None else 0
            right = int(margins.get(_w("right"), 0)) if margins is not None else 0
        except (AttributeError, TypeError, ValueError):
            return DEFAULT_TEXT_WIDTH_TWIPS
        return width - left - right if width - left - right > 1440 else DEFAULT_TEXT_WIDTH_TWIPS


# --------------------------------------------------------------------------- editing


_P_PROPERTY_ORDER = (
    "pStyle", "keepNext", "keepLines", "pageBreakBefore", "framePr", "widowControl", "numPr",
    "suppressLineNumbers", "pBdr", "shd", "tabs", "suppressAutoHyphens", "kinsoku", "wordWrap", "overflowPunct",
    "topLinePunct", "autoSpaceDE", "autoSpaceDN", "bidi", "adjustRightInd", "snapToGrid", "spacing", "ind",
    "contextualSpacing", "mirrorIndents", "suppressOverlap", "jc", "textDirection", "textAlignment",
    "textboxTightWrap", "outlineLvl", "divId", "cnfStyle", "rPr", "sectPr", "pPrChange",
)
_R_PROPERTY_ORDER = (
    "rStyle", "rFonts", "b", "bCs", "i", "iCs", "caps", "smallCaps", "strike", "dstrike", "outline", "shadow",
    "emboss", "imprint", "noProof", "snapToGrid", "vanish", "webHidden", "color", "spacing", "w", "kern",
    "position", "sz", "szCs", "highlight", "u", "effect", "bdr", "shd", "fitText", "vertAlign", "rtl", "cs", "em",
    "lang", "eastAsianLayout", "specVanish", "oMath", "rPrChange",
)
_KEPT_MARKS = {_w(name) for name in ("bookmarkStart", "bookmarkEnd", "permStart", "permEnd")}


def _set_property(properties, name: str, order: Sequence[str], **values: str):
    """Set child ``w:name`` of a properties element at its schema position (OOXML fixes the order)."""
    for old in properties.findall(_w(name)):
        properties.remove(old)
    element = etree.Element(_w(name))
    for key, value in values.items():
        element.set(_w(key), value)
    rank = order.index(name)
    for position, child in enumerate(properties):
        local = _local(child.tag)
        if etree.QName(child).namespace == W and local in order and order.index(local) > rank:
            properties.insert(position, element)
            return element
    properties.append(element)
    return element


def _clean_paragraph_properties(ppr):
    """A copy of paragraph properties fit to repeat: no section break, no tracked change."""
    if ppr is None:
        return None
    ppr = copy.deepcopy(ppr)
    for name in ("sectPr", "pPrChange"):
        for child in ppr.findall(_w(name)):
            ppr.remove(child)
    mark = ppr.find(_w("rPr"))
    if mark is not None:
        for name in ("ins", "del", "moveFrom", "moveTo", "rPrChange"):
            for child in mark.findall(_w(name)):
                mark.remove(child)
    return ppr


def _clean_run_properties(rpr):
    """A copy of run properties fit to repeat: no placeholder style, no tracked change."""
    if rpr is None:
        return None
    rpr = copy.deepcopy(rpr)
    style = rpr.find(_w("rStyle"))
    if style is not None and style.get(_w("val")) == PLACEHOLDER_STYLE:
        rpr.remove(style)
    for child in rpr.findall(_w("rPrChange")):
        rpr.remove(child)
    return rpr


def _first_run_properties(element):
    for run in element.iter(_w("r")):
        return run.find(_w("rPr"))
    return None


def _add_text(run, text: str) -> None:
    lines = xml_safe(text).split("\n")
    for number, line in enumerate(lines):
        if number:
            etree.SubElement(run, _w("br"))
        for piece_number, piece in enumerate(line.split("\t")):
            if piece_number:
                etree.SubElement(run, _w("tab"))
            if piece:
                element = etree.SubElement(run, _w("t"))
                element.set(XML_SPACE, "preserve")
                element.text = piece


def _run(rpr, text: str | None = None):
    run = etree.Element(_w("r"))
    if rpr is not None and len(rpr):
        run.append(copy.deepcopy(rpr))
    if text is not None:
        _add_text(run, text)
    return run


def _paragraph(ppr, rpr, text: str | None):
    paragraph = etree.Element(_w("p"))
    if ppr is not None and (len(ppr) or ppr.attrib):
        paragraph.append(copy.deepcopy(ppr))
    if text:
        paragraph.append(_run(rpr, text))
    return paragraph


@dataclass(slots=True)
class _Slots:
    """The formatting a control's current content offers each role of the new content."""

    body_ppr: object = None
    body_rpr: object = None
    caption_ppr: object = None
    caption_rpr: object = None
    table: object = None  # the control's current table, whose formatting a new table takes


def _slots(content, style_ids: Mapping[str, str], role: str) -> _Slots:
    """Read the current content's formatting for each role of the new content (see the module docstring)."""
    paragraphs = [child for child in content if child.tag == _w("p")]
    slots = _Slots()
    if paragraphs:
        slots.body_ppr = _clean_paragraph_properties(paragraphs[0].find(_w("pPr")))
        slots.body_rpr = _clean_run_properties(_first_run_properties(paragraphs[0]))
    else:  # inline content: runs, no paragraphs
        slots.body_rpr = _clean_run_properties(_first_run_properties(content))
    children = list(content)
    caption = None
    if role == "figure":
        picture = next((p for p in paragraphs if p.find(f".//{_w('drawing')}") is not None), None)
        if picture is not None:
            slots.body_ppr = _clean_paragraph_properties(picture.find(_w("pPr")))
            slots.body_rpr = _clean_run_properties(_first_run_properties(picture))
            after = children[children.index(picture) + 1:]
            caption = next((child for child in after if child.tag == _w("p")), None)
    elif role == "table":
        table = content.find(_w("tbl"))
        if table is not None:
            slots.table = table
            before = children[: children.index(table)]
            caption = next((child for child in reversed(before) if child.tag == _w("p")), None)
    if caption is not None:
        slots.caption_ppr = _clean_paragraph_properties(caption.find(_w("pPr")))
        slots.caption_rpr = _clean_run_properties(_first_run_properties(caption))
    elif style_ids.get("Caption") == "paragraph":
        slots.caption_ppr = etree.Element(_w("pPr"))
        _set_property(slots.caption_ppr, "pStyle", _P_PROPERTY_ORDER, val="Caption")
    else:
        slots.caption_ppr, slots.caption_rpr = copy.deepcopy(slots.body_ppr), copy.deepcopy(slots.body_rpr)
    return slots


class _PackageEditor:
    """Collects the edits of one fill or mark, then writes the new package."""

    def __init__(self, package: WordPackage) -> None:
        self.package = package
        self.replaced: dict[str, bytes] = {}
        self.added: dict[str, bytes] = {}
        self.removed: set[str] = set()
        self.filled: list[tuple[str, int]] = []
        self._style_ids: dict[str, str] | None = None
        self.next_drawing_id = 1

    @property
    def style_ids(self) -> dict[str, str]:
        if self._style_ids is None:
            self._style_ids = self.package.style_ids()
        return self._style_ids

    # ---- fill

    def fill_part(self, part_name: str, fillings: Mapping[int, Filling]) -> None:
        package = self.package
        part = package.part(part_name)
        # A fresh tree to change: the package's own parse stays as read.
        root = etree.fromstring(part.data, _PARSER)
        elements = list(root.iter(etree.Element))
        span_of = dict(zip(elements, (part.span[element] for element in part.elements), strict=True))
        sdts = list(root.iter(_w("sdt")))
        chosen = {index: sdts[index] for index in fillings}
        images = _Images(self, part_name)
        edits: list[tuple[int, int, bytes]] = []
        for index in sorted(fillings):
            sdt = chosen[index]
            if any(ancestor in chosen.values() for ancestor in sdt.iterancestors(_w("sdt"))):
                raise NarratorError("internal: a control inside another control being filled")
            content = sdt.find(_w("sdtContent"))
            properties = sdt.find(_w("sdtPr"))
            new_children = self._content(content, _level(sdt), fillings[index], images, sdt)
            for child in list(content):
                content.remove(child)
            content.text = None
            content.extend(new_children)
            inner = _inner_bytes(content)
            span = span_of[content]
            if span.open_end == span.end:  # <w:sdtContent/>: write it out with its content
                before = b""
                edits.append((span.start, span.end, b"<" + span.name + b">" + inner + b"</" + span.name + b">"))
            else:
                before = part.data[span.open_end:span.close_start]
                edits.append((span.open_end, span.close_start, inner))
            flag = properties.find(_w("showingPlcHdr")) if properties is not None else None
            if flag is not None:
                flag_span = span_of[flag]
                edits.append((flag_span.start, flag_span.end, b""))
            if inner != before or flag is not None:
                self.filled.append((part_name, index))
        new = _splice(part.data, edits)
        try:
            etree.fromstring(new, _PARSER)
        except etree.XMLSyntaxError as exc:
            raise NarratorError(f"internal: the filled {part_name} is not well-formed ({exc})") from None
        if new != part.data:
            self.replaced[part_name] = new
        images.finish(new)

    def _content(self, content, level: str, filling: Filling, images: _Images, sdt) -> list:
        kept = [copy.deepcopy(mark) for mark in content.iter() if mark.tag in _KEPT_MARKS]
        for mark in kept:
            mark.tail = None
        kind = filling.kind
        slots = _slots(content, self.style_ids, kind)
        if level == "inline":
            return kept + self._inline(filling, slots, images, sdt)
        blocks: list = []
        if kind == "phrase":
            blocks.append(_paragraph(slots.body_ppr, slots.body_rpr, filling.phrase or ""))
        elif kind == "paragraphs":
            blocks.extend(_paragraph(slots.body_ppr, slots.body_rpr, text) for text in filling.paragraphs)
        elif kind == "figure":
            picture = etree.Element(_w("p"))
            if slots.body_ppr is not None and len(slots.body_ppr):
                picture.append(copy.deepcopy(slots.body_ppr))
            picture.append(self._picture_run(filling.figure, slots.body_rpr, images, sdt))
            blocks.append(picture)
            properties = sdt.find(_w("sdtPr"))
            if properties is None or properties.find(_w("picture")) is None:  # a picture control holds no text
                blocks.append(_paragraph(slots.caption_ppr, slots.caption_rpr, filling.figure.caption))
        else:
            blocks.append(_paragraph(slots.caption_ppr, slots.caption_rpr, filling.table.caption))
            blocks.append(_table(filling.table, slots, self.style_ids, self._width_twips(sdt)))
            following = sdt.getnext()
            while following is not None and not isinstance(following.tag, str):
                following = following.getnext()
            if following is None or following.tag != _w("p"):
                # A table may not end a cell or stand last before the section: a paragraph follows it.
                blocks.append(_paragraph(slots.caption_ppr, None, None))
        return kept + blocks

    def _inline(self, filling: Filling, slots: _Slots, images: _Images, sdt) -> list:
        rpr = slots.body_rpr
        if filling.kind == "figure":
            return [self._picture_run(filling.figure, rpr, images, sdt)]
        if filling.kind == "paragraphs":
            return [_run(rpr, "\n".join(filling.paragraphs))]
        return [_run(rpr, filling.phrase or "")]

    def _width_twips(self, sdt) -> int:
        cell = next(sdt.iterancestors(_w("tc")), None)
        if cell is not None:
            width = cell.find(f"{_w('tcPr')}/{_w('tcW')}")
            if width is not None and width.get(_w("type"), "dxa") == "dxa":
                try:
                    return max(720, int(width.get(_w("w"))) - 216)  # the cell less its usual padding
                except (TypeError, ValueError):
                    pass
        return self.package.text_width_twips()

    def _picture_run(self, figure: RenderedFigure, rpr, images: _Images, sdt):
        rel_id, file_name = images.add(figure.png)
        width = min(FIGURE_WIDTH_EMU, self._width_twips(sdt) * EMU_PER_TWIP)
        height = round(width * figure.height_px / figure.width_px)
        number = str(self.next_drawing_id)
        self.next_drawing_id += 1
        run = _run(rpr)
        scope = set(run.nsmap.values())
        needed = {prefix: space for prefix, space in (("wp", WP), ("a", A), ("pic", PIC), ("r", R))
                  if space not in scope}
        drawing = etree.SubElement(run, _w("drawing"), nsmap=needed or None)
        inline = etree.SubElement(drawing, f"{{{WP}}}inline", distT="0", distB="0", distL="0", distR="0")
        etree.SubElement(inline, f"{{{WP}}}extent", cx=str(width), cy=str(height))
        etree.SubElement(inline, f"{{{WP}}}effectExtent", l="0", t="0", r="0", b="0")
        etree.SubElement(inline, f"{{{WP}}}docPr", id=number, name=xml_safe(figure.key),
                         descr=xml_safe(figure.alt_text), title=xml_safe(figure.caption))
        frame = etree.SubElement(inline, f"{{{WP}}}cNvGraphicFramePr")
        etree.SubElement(frame, f"{{{A}}}graphicFrameLocks", noChangeAspect="1")
        graphic = etree.SubElement(inline, f"{{{A}}}graphic")
        data = etree.SubElement(graphic, f"{{{A}}}graphicData", uri=PIC)
        picture = etree.SubElement(data, f"{{{PIC}}}pic")
        names = etree.SubElement(picture, f"{{{PIC}}}nvPicPr")
        etree.SubElement(names, f"{{{PIC}}}cNvPr", id="0", name=file_name, descr=xml_safe(figure.alt_text))
        etree.SubElement(names, f"{{{PIC}}}cNvPicPr")
        fill = etree.SubElement(picture, f"{{{PIC}}}blipFill")
        blip = etree.SubElement(fill, f"{{{A}}}blip")
        blip.set(f"{{{R}}}embed", rel_id)
        stretch = etree.SubElement(fill, f"{{{A}}}stretch")
        etree.SubElement(stretch, f"{{{A}}}fillRect")
        shape = etree.SubElement(picture, f"{{{PIC}}}spPr")
        transform = etree.SubElement(shape, f"{{{A}}}xfrm")
        etree.SubElement(transform, f"{{{A}}}off", x="0", y="0")
        etree.SubElement(transform, f"{{{A}}}ext", cx=str(width), cy=str(height))
        geometry = etree.SubElement(shape, f"{{{A}}}prstGeom", prst="rect")
        etree.SubElement(geometry, f"{{{A}}}avLst")
        return run

    # ---- mark

    def mark_part(self, part_name: str, convert, used_ids: set[int]) -> tuple[list[MadePlace], list[RefusedMarker]]:
        from narrator.places.tags import find_markers

        part = self.package.part(part_name)
        made: list[MadePlace] = []
        refused: list[RefusedMarker] = []
        edits: list[tuple[int, int, bytes]] = []
        for paragraph in part.root.iter(_w("p")):
            full = "".join(text.text or "" for text in paragraph.iter(_w("t")))
            markers = find_markers(full)
            if not markers:
                continue
            if next(paragraph.iterancestors(_w("del")), None) is not None:
                continue  # deleted text in the tracked changes: not a place
            free = []
            for marker in markers:
                enclosing = _enclosing_control(paragraph, full, marker)
                if enclosing is None:
                    free.append(marker)
                    continue
                tag, _ = convert(marker.tag_text)
                tag_element = enclosing.find(f"{_w('sdtPr')}/{_w('tag')}")
                own = tag_element.get(_w("val")) if tag_element is not None else None
                if tag is None or own is None or convert(own)[0] != tag:  # inside its own place: already marked
                    refused.append(RefusedMarker(part_name, full[marker.start:marker.end],
                                                 "it is inside another content control"))
            markers = free
            if not markers:
                continue
            decided = [(marker, *convert(marker.tag_text)) for marker in markers]
            for marker, tag, reason in decided:
                if tag is None:
                    refused.append(RefusedMarker(part_name, full[marker.start:marker.end], reason or "not a place"))
            wanted = [(marker, tag) for marker, tag, _ in decided if tag is not None]
            if not wanted:
                continue
            if len(markers) == 1 and full.strip() == full[markers[0].start:markers[0].end] \
                    and _can_wrap(paragraph):
                tag = wanted[0][1]
                span = part.span[paragraph]
                number = _new_id(tag, len(made), used_ids)
                opening, closing = _sdt_tags(span.prefix, tag, number)
                edits += [(span.start, span.start, opening), (span.end, span.end, closing)]
                made.append(MadePlace(part_name, tag, "block"))
                continue
            inline_edits, inline_made, inline_refused = _inline_markers(part, paragraph, full, wanted, used_ids,
                                                                        len(made))
            edits += inline_edits
            made += [MadePlace(part_name, tag, "inline") for tag in inline_made]
            refused += [RefusedMarker(part_name, text, reason) for text, reason in inline_refused]
        if edits:
            new = _splice(part.data, edits)
            try:
                etree.fromstring(new, _PARSER)
            except etree.XMLSyntaxError as exc:
                raise NarratorError(f"internal: the marked {part_name} is not well-formed ({exc})") from None
            self.replaced[part_name] = new
        return made, refused

    # ---- the new package

    def result(self, moment) -> FillResult:
        changed = tuple(name for name in self.replaced if self.replaced[name] != self.package.members[name])
        added = tuple(name for name in self.added if name not in self.package.members)
        removed = tuple(sorted(name for name in self.removed if name in self.package.members))
        if not changed and not added and not removed:
            return FillResult(None, filled=tuple(self.filled))
        stamp = moment.astimezone(dt.UTC)
        date_time = (max(stamp.year, 1980), stamp.month, stamp.day, stamp.hour, stamp.minute, stamp.second)
        buffer = io.BytesIO()
        with zipfile.ZipFile(buffer, "w") as archive:
            for info in self.package.infos:
                name = info.filename
                if name in removed:
                    continue
                if name in changed:
                    member = zipfile.ZipInfo(name, date_time=date_time)
                    member.compress_type = zipfile.ZIP_DEFLATED
                    member.external_attr = info.external_attr or 0o644 << 16
                    member.create_system = 3
                    archive.writestr(member, self.replaced[name])
                    continue
                member = zipfile.ZipInfo(name, date_time=info.date_time)
                member.compress_type = info.compress_type if info.compress_type in (
                    zipfile.ZIP_STORED, zipfile.ZIP_DEFLATED) else zipfile.ZIP_DEFLATED
                member.external_attr = info.external_attr
                member.create_system = info.create_system
                archive.writestr(member, self.package.members[name])
            for name in added:
                member = zipfile.ZipInfo(name, date_time=date_time)
                member.compress_type = zipfile.ZIP_DEFLATED
                member.external_attr = 0o644 << 16
                member.create_system = 3
                archive.writestr(member, self.added[name])
        return FillResult(buffer.getvalue(), changed, added, removed, tuple(self.filled))


def _table(table: Table, slots: _Slots, style_ids: Mapping[str, str], width_twips: int):
    """A w:tbl for ``table``: the current table's formatting when the control has one, else a plain grid."""
    columns = len(table.header)
    if columns == 0:
        raise NarratorError(f"table {table.key!r} has no header")
    align = tuple(table.align) + ("left",) * (columns - len(table.align))
    current = slots.table
    head_ppr = body_ppr = head_rpr = body_rpr = None
    widths: list[int] | None = None
    if current is not None:
        table_properties = _clean_table_properties(current.find(_w("tblPr")))
        rows = current.findall(_w("tr"))
        first_left = next((index for index, side in enumerate(align) if side != "right"), 0)
        head_ppr, head_rpr = _cell_formatting(rows[0] if rows else None, first_left)
        body_ppr, body_rpr = _cell_formatting(rows[1] if len(rows) > 1 else None, first_left)
        if body_ppr is None and body_rpr is None:
            body_ppr, body_rpr = head_ppr, head_rpr
        grid = [col.get(_w("w")) for col in current.findall(f"{_w('tblGrid')}/{_w('gridCol')}")]
        if len(grid) == columns and all(value and value.isdigit() for value in grid):
            widths = [int(value) for value in grid]
    else:
        table_properties = etree.Element(_w("tblPr"))
        if style_ids.get("TableGrid") == "table":
            etree.SubElement(table_properties, _w("tblStyle")).set(_w("val"), "TableGrid")
        size = etree.SubElement(table_properties, _w("tblW"))
        size.set(_w("w"), "0")
        size.set(_w("type"), "auto")
        if style_ids.get("TableGrid") != "table":
            borders = etree.SubElement(table_properties, _w("tblBorders"))
            for side in ("top", "left", "bottom", "right", "insideH", "insideV"):
                line = etree.SubElement(borders, _w(side))
                for key, value in (("val", "single"), ("sz", "4"), ("space", "0"), ("color", "auto")):
                    line.set(_w(key), value)
        look = etree.SubElement(table_properties, _w("tblLook"))
        for key, value in (("val", "04A0"), ("firstRow", "1"), ("lastRow", "0"), ("firstColumn", "1"),
                           ("lastColumn", "0"), ("noHBand", "0"), ("noVBand", "1")):
            look.set(_w(key), value)
        body_ppr = etree.Element(_w("pPr"))
        style = slots.body_ppr.find(_w("pStyle")) if slots.body_ppr is not None else None
        if style is not None:
            body_ppr.append(copy.deepcopy(style))
        _set_property(body_ppr, "spacing", _P_PROPERTY_ORDER, before="0", after="0")
        head_ppr = copy.deepcopy(body_ppr)
        _set_property(head_ppr, "keepNext", _P_PROPERTY_ORDER)
        body_rpr = copy.deepcopy(slots.body_rpr) if slots.body_rpr is not None else etree.Element(_w("rPr"))
        head_rpr = copy.deepcopy(body_rpr)
        _set_property(head_rpr, "b", _R_PROPERTY_ORDER)
    if widths is None:
        widths = _column_widths(table, width_twips)
    element = etree.Element(_w("tbl"))
    element.append(table_properties)
    grid = etree.SubElement(element, _w("tblGrid"))
    for width in widths:
        etree.SubElement(grid, _w("gridCol")).set(_w("w"), str(width))
    for row_number, cells in enumerate((table.header, *table.rows)):
        row = etree.SubElement(element, _w("tr"))
        if row_number == 0:
            etree.SubElement(etree.SubElement(row, _w("trPr")), _w("tblHeader"))
        ppr, rpr = (head_ppr, head_rpr) if row_number == 0 else (body_ppr, body_rpr)
        for column, text in enumerate(cells):
            cell = etree.SubElement(row, _w("tc"))
            cell_size = etree.SubElement(etree.SubElement(cell, _w("tcPr")), _w("tcW"))
            cell_size.set(_w("w"), str(widths[column]))
            cell_size.set(_w("type"), "dxa")
            cell_ppr = copy.deepcopy(ppr) if ppr is not None else etree.Element(_w("pPr"))
            if align[column] == "right":
                _set_property(cell_ppr, "jc", _P_PROPERTY_ORDER, val="right")
            cell.append(_paragraph(cell_ppr, rpr, text))
    return element


def _clean_table_properties(properties):
    if properties is None:
        return etree.Element(_w("tblPr"))
    properties = copy.deepcopy(properties)
    for child in properties.findall(_w("tblPrChange")):
        properties.remove(child)
    return properties


def _cell_formatting(row, column: int):
    if row is None:
        return None, None
    cells = row.findall(_w("tc"))
    if not cells:
        return None, None
    paragraph = cells[min(column, len(cells) - 1)].find(_w("p"))
    if paragraph is None:
        return None, None
    return (_clean_paragraph_properties(paragraph.find(_w("pPr"))),
            _clean_run_properties(_first_run_properties(paragraph)))


def _column_widths(table: Table, width_twips: int) -> list[int]:
    """Column widths in twips from the longest text of each column, shrunk to the text width when wider."""
    longest = [max([len(text) for text in column] or [1]) for column in zip(table.header, *table.rows, strict=True)]
    wanted = [max(900, 115 * chars + 280) for chars in longest]  # about 0.2 cm a character at 10 pt, plus padding
    scale = min(1.0, width_twips / sum(wanted))
    return [int(width * scale) for width in wanted]


class _Images:
    """The pictures one part's fills use: new media parts and relationships, and ours no longer shown."""

    def __init__(self, editor: _PackageEditor, part_name: str) -> None:
        self.editor = editor
        self.part_name = part_name
        self.package = editor.package
        self.rels_name = self.package._member(WordPackage.rels_name(part_name)) or WordPackage.rels_name(part_name)
        self.existing = {rel.rel_id: rel for rel in self.package.relationships(part_name)}
        self.new: dict[str, str] = {}  # rel id -> target

    def add(self, png: bytes) -> tuple[str, str]:
        digest = hashlib.sha256(png).hexdigest()[:16]
        rel_id = f"rIdNarrator{digest}"
        file_name = f"narrator-{digest}.png"
        member = f"word/media/{file_name}"
        target = posixpath.relpath(member, posixpath.dirname(self.part_name) or ".")
        if self.package._member(member) is None:
            self.editor.added[member] = png
        if rel_id not in self.existing:
            self.new[rel_id] = target
        return rel_id, file_name

    def finish(self, new_part: bytes) -> None:
        """Write the relationships: add the new ones, drop ours that the part no longer shows."""
        stale = [rel for rel_id, rel in self.existing.items()
                 if IMAGE_REL_ID.match(rel_id) and rel.rel_type == REL_IMAGE and rel_id.encode() not in new_part]
        if not self.new and not stale:
            return
        package = self.package
        if package._member(self.rels_name) is None:
            data = (b'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
                    b'<Relationships xmlns="' + PACKAGE_RELS.encode() + b'"></Relationships>')
            self.editor.added[self.rels_name] = data
            self._ensure_default("rels", "application/vnd.openxmlformats-package.relationships+xml")
            rels = _Part(self.rels_name, data, package.name)
        else:
            rels = package.part(self.rels_name)
            data = self.editor.replaced.get(self.rels_name, rels.data)
        root_span = rels.span[rels.root]
        prefix = root_span.prefix
        addition = b"".join(
            b"<" + prefix + b'Relationship Id="' + _escape(rel_id, attribute=True) + b'" Type="'
            + REL_IMAGE.encode() + b'" Target="' + _escape(target, attribute=True) + b'"/>'
            for rel_id, target in sorted(self.new.items())
        )
        edits = [(rels.span[rel.element].start, rels.span[rel.element].end, b"") for rel in stale
                 if rel.element in rels.span]
        if addition:
            if root_span.open_end == root_span.end:  # <Relationships .../>
                opening = data[root_span.start:root_span.end - 2].rstrip() + b">"
                edits.append((root_span.start, root_span.end, opening + addition + b"</" + root_span.name + b">"))
            else:
                edits.append((root_span.close_start, root_span.close_start, addition))
        new = _splice(data, edits)
        if self.rels_name in self.editor.added:
            self.editor.added[self.rels_name] = new
        else:
            self.editor.replaced[self.rels_name] = new
        if self.new:
            self._ensure_default("png", "image/png")
        still_shown = self._targets_shown(except_part=self.part_name, new_rels=new)
        for rel in stale:
            target = package._resolve(self.part_name, rel.target)
            if target is not None and IMAGE_NAME.match(target) and target not in still_shown:
                self.editor.removed.add(target)

    def _targets_shown(self, *, except_part: str, new_rels: bytes) -> set[str]:
        package = self.package
        shown = set()
        for story in package.stories:
            if story == except_part:
                root = etree.fromstring(new_rels, _PARSER)
                targets = [element.get("Target") or "" for element in root if _local(element.tag) == "Relationship"]
            else:
                targets = [rel.target for rel in package.relationships(story) if not rel.external]
            shown.update(filter(None, (package._resolve(story, target) for target in targets)))
        return shown

    def _ensure_default(self, extension: str, content_type: str) -> None:
        package = self.package
        name = package._member("[Content_Types].xml")
        types = package.content_types
        data = self.editor.replaced.get(name, types.data)
        current = etree.fromstring(data, _PARSER)
        if any(_local(element.tag) == "Default" and (element.get("Extension") or "").lower() == extension
               for element in current):
            return
        span = _Part(name, data, package.name).span
        root_span = span[next(iter(span))]
        element = (b"<" + root_span.prefix + b'Default Extension="' + extension.encode() + b'" ContentType="'
                   + content_type.encode() + b'"/>')
        if root_span.open_end == root_span.end:
            raise NarratorError(f"{package.name}: its [Content_Types].xml lists no part; the file is damaged")
        self.editor.replaced[name] = _splice(data, [(root_span.open_end, root_span.open_end, element)])


# --------------------------------------------------------------------------- markers into controls


def _enclosing_control(paragraph, full: str, marker):
    """The content control a marker's text sits in (in the paragraph or around it), or None."""
    position = 0
    for element in paragraph.iter(_w("t")):
        length = len(element.text or "")
        if position + length > marker.start:
            return next(element.iterancestors(_w("sdt")), None)
        position += length
    return None


def _sdt_tags(prefix: bytes, tag: str, number: int) -> tuple[bytes, bytes]:
    value = _escape(tag, attribute=True)
    opening = (b"<" + prefix + b"sdt><" + prefix + b"sdtPr><" + prefix + b"alias " + prefix + b'val="' + value
               + b'"/><' + prefix + b"tag " + prefix + b'val="' + value + b'"/><' + prefix + b"id " + prefix
               + b'val="' + str(number).encode() + b'"/></' + prefix + b"sdtPr><" + prefix + b"sdtContent>")
    closing = b"</" + prefix + b"sdtContent></" + prefix + b"sdt>"
    return opening, closing


def _new_id(tag: str, ordinal: int, used: set[int]) -> int:
    """A control id from the tag and its place in the order (so marking is repeatable), not yet used."""
    number = int.from_bytes(hashlib.sha256(f"{tag}\0{ordinal}".encode()).digest()[:4], "big") & 0x7FFFFFFF
    while number in used or number == 0:
        number = (number + 1) & 0x7FFFFFFF
    used.add(number)
    return number


def _can_wrap(paragraph) -> bool:
    """Whether a block control may go around the whole paragraph (no section break, picture or field in it)."""
    if paragraph.find(f"{_w('pPr')}/{_w('sectPr')}") is not None:
        return False
    return all(paragraph.find(f".//{_w(name)}") is None for name in ("drawing", "pict", "fldChar", "fldSimple",
                                                                    "object"))


_PLAIN_RUN_CHILDREN = {_w("rPr"), _w("t"), _w("lastRenderedPageBreak")}
_PASSABLE = {_w("proofErr"), _w("bookmarkStart"), _w("bookmarkEnd")}


def _inline_markers(part: _Part, paragraph, full: str, wanted, used_ids: set[int], ordinal: int):
    """Edits that put an inline control around each wanted marker of ``paragraph``.

    A marker's runs must be direct children of the paragraph holding only
    text; between them only proofing marks (dropped) and bookmarks (kept) may
    stand. Markers that share runs are rewritten together, so "n = [narrator:n],
    median [narrator:median]" typed in one run becomes two controls. Returns
    (edits, tags made in order, [(marker text, reason)] refused).
    """
    texts: list[tuple[object, int, int]] = []  # every w:t of the paragraph: (element, start, end) in ``full``
    position = 0
    for element in paragraph.iter(_w("t")):
        length = len(element.text or "")
        texts.append((element, position, position + length))
        position += length
    children = list(paragraph)
    accepted: list[tuple[object, str, int, int]] = []  # (marker, tag, first child, last child)
    refused: list[tuple[str, str]] = []
    for marker, tag in wanted:
        runs = []
        for element, start, end in texts:
            if start < marker.end and end > marker.start and element.getparent() not in runs:
                runs.append(element.getparent())
        shown = full[marker.start:marker.end]
        if any(run.tag != _w("r") or run.getparent() is not paragraph for run in runs):
            refused.append((shown, "it is inside a link, field or tracked change; type it again as plain text"))
            continue
        if any(child.tag not in _PLAIN_RUN_CHILDREN for run in runs for child in run):
            refused.append((shown, "its text is split by a tab, break or field; type it again as plain text"))
            continue
        first, last = children.index(runs[0]), children.index(runs[-1])
        if any(child.tag not in _PASSABLE for child in children[first:last + 1] if child not in runs):
            refused.append((shown, "a comment or other mark starts inside it; type it again as plain text"))
            continue
        accepted.append((marker, tag, first, last))
    groups: list[list[tuple[object, str, int, int]]] = []
    for item in accepted:  # markers in document order; a group is a run of markers sharing runs
        if groups and item[2] <= groups[-1][-1][3]:
            groups[-1].append(item)
        else:
            groups.append([item])
    prefix = part.span[paragraph].prefix
    run_start = {}
    for element, start, _ in texts:
        run_start.setdefault(element.getparent(), start)
    edits, made = [], []
    for group in groups:
        first, last = group[0][2], max(item[3] for item in group)
        opened: dict[int, bytes] = {}
        out: list[bytes] = []
        for child in children[first:last + 1]:
            if child.tag == _w("proofErr"):
                continue
            if child.tag != _w("r"):  # a bookmark: kept where it was
                span = part.span[child]
                out.append(part.data[span.start:span.end])
                continue
            rpr = b""
            properties = child.find(_w("rPr"))
            if properties is not None:
                span = part.span[properties]
                rpr = part.data[span.start:span.end]
            text = "".join(element.text or "" for element in child.iter(_w("t")))
            begin = run_start.get(child, 0)
            cuts = sorted({0, len(text)} | {point - begin for marker, *_ in group
                                              for point in (marker.start, marker.end)
                                              if 0 < point - begin < len(text)})
            for low, high in zip(cuts, cuts[1:], strict=False):
                at = begin + low
                inside = next((marker for marker, *_ in group if marker.start <= at < marker.end), None)
                if inside is None:
                    out.append(_run_bytes(prefix, rpr, text[low:high]))
                    continue
                if id(inside) not in opened:
                    tag = next(tag for marker, tag, *_ in group if marker is inside)
                    opening, closing = _sdt_tags(prefix, tag, _new_id(tag, ordinal + len(made), used_ids))
                    opened[id(inside)] = closing
                    made.append(tag)
                    out.append(opening + _run_bytes(prefix, rpr, full[inside.start:inside.end]))
                if begin + high >= inside.end:
                    out.append(opened[id(inside)])
        edits.append((part.span[children[first]].start, part.span[children[last]].end, b"".join(out)))
    return edits, made, refused


def _run_bytes(prefix: bytes, rpr: bytes, text: str) -> bytes:
    return (b"<" + prefix + b"r>" + rpr + b"<" + prefix + b't xml:space="preserve">' + _escape(text) + b"</"
            + prefix + b"t></" + prefix + b"r>")

