"""What a reader of a Word file sees, and a fingerprint of it that formatting does not change.

=============================  ================================================
Name                           What it is
=============================  ================================================
:func:`visible_words`          (visible text, fingerprint) of some WordprocessingML
:func:`body_fingerprint`       the fingerprint of a .docx file's main body
=============================  ================================================

The fingerprint digests the visible content (the words, tabs and breaks, each
picture's bytes, tracked changes and comment anchors), not its formatting, so a
word processor saving the file again does not count as an edit, but a changed
word, a picture swapped or a comment added does. One definition serves a
place's "edited since the last fill" (:mod:`narrator.places.package`) and a
report's "edited since narrator wrote it" (:mod:`narrator.writer` records it,
:func:`narrator.safe_io.check_output` compares it). Element names are those of
ECMA-376 Part 1 (WordprocessingML, DrawingML, VML).
"""

from __future__ import annotations

import hashlib
import posixpath
import re
import zipfile
from collections.abc import Callable

from lxml import etree

W = "http://schemas.openxmlformats.org/wordprocessingml/2006/main"
R = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
A = "http://schemas.openxmlformats.org/drawingml/2006/main"
V = "urn:schemas-microsoft-com:vml"
_PACKAGE_RELS = "http://schemas.openxmlformats.org/package/2006/relationships"
_MAX_PART_BYTES = 256 << 20  # a main body larger than this is not one of narrator's reports
_PARSER = etree.XMLParser(resolve_entities=False, no_network=True, load_dtd=False, huge_tree=False)


def _local(tag: object) -> str:
    return etree.QName(tag).localname if isinstance(tag, str) else ""


def _w(name: str) -> str:
    return f"{{{W}}}{name}"


def visible_words(content, image_digest: Callable[[str], str]) -> tuple[str, str]:
    """(visible text, fingerprint) of the elements in ``content`` (a control's content, a body's children).

    See the module notes for what counts; ``image_digest`` maps a relationship id to its picture's digest.
    """
    text: list[str] = []
    tokens: list[str] = []

    def walk(element) -> None:
        tag = element.tag
        if not isinstance(tag, str):
            return
        local, space = _local(tag), etree.QName(tag).namespace
        if space == W:
            if local == "t":
                text.append(element.text or "")
                tokens.append(element.text or "")
            elif local in ("tab", "ptab"):
                text.append("\t")
                tokens.append("\t")
            elif local in ("br", "cr"):
                text.append("\n")
                tokens.append("\n")
            elif local == "noBreakHyphen":
                text.append("-")
                tokens.append("-")
            elif local == "sym":
                tokens.append(f"[symbol {element.get(_w('font'))} {element.get(_w('char'))}]")
            elif local in ("ins", "del", "moveFrom", "moveTo", "rPrChange", "pPrChange"):
                tokens.append(f"[tracked {local}]")
            elif local in ("commentRangeStart", "commentReference"):
                tokens.append("[comment]")
            elif local in ("delText", "delInstrText", "instrText"):
                return  # deleted text (its w:del is counted above) and field codes are not what a reader sees
        elif space == A and local == "blip":
            tokens.append(f"[picture {image_digest(element.get(f'{{{R}}}embed') or '')}]")
        elif space == V and local == "imagedata":
            tokens.append(f"[picture {image_digest(element.get(f'{{{R}}}id') or '')}]")
        for child in element:
            walk(child)
        if space == W and local == "p":
            text.append("\n")
            tokens.append("\n")
        elif space == W and local == "tc":
            text.append(" | ")
            tokens.append("\x1f")
        elif space == W and local == "tr":
            text.append("\n")
            tokens.append("\x1e")

    for child in content:
        walk(child)
    fingerprint = hashlib.sha256("".join(tokens).encode("utf-8")).hexdigest()
    return re.sub(r"[ \t]*\n+", "\n", "".join(text)).strip(), fingerprint


def body_fingerprint(path) -> str | None:
    """The fingerprint of the main body (``word/document.xml``) of the .docx at ``path``, or None when it
    cannot be read (not a Word file, damaged, too large)."""
    try:
        with zipfile.ZipFile(path) as package:
            names = set(package.namelist())
            member = package.getinfo("word/document.xml")
            if member.file_size > _MAX_PART_BYTES:
                return None
            root = etree.fromstring(package.read(member), _PARSER)
            targets: dict[str, str] = {}
            if "word/_rels/document.xml.rels" in names:
                rels = etree.fromstring(package.read("word/_rels/document.xml.rels"), _PARSER)
                for element in rels.iter(f"{{{_PACKAGE_RELS}}}Relationship"):
                    if element.get("TargetMode") != "External":
                        target = posixpath.normpath(posixpath.join("word", element.get("Target") or ""))
                        targets[element.get("Id") or ""] = target.lstrip("/")

            def digest(rel_id: str) -> str:
                target = targets.get(rel_id)
                if target is None or target not in names:
                    return "missing"
                return hashlib.sha256(package.read(target)).hexdigest()[:16]

            body = root.find(_w("body"))
            return visible_words([] if body is None else list(body), digest)[1]
    except (OSError, KeyError, ValueError, zipfile.BadZipFile, zipfile.LargeZipFile, EOFError, etree.XMLSyntaxError,
            NotImplementedError, RuntimeError):
        return None
