"""Your own document, kept current: fill its marked places from the data, and write it back whole or not at all.

=============================  ================================================
Name                           What it is
=============================  ================================================
:func:`fill_document`          fill every marked place of a .docx; write it and its sidecar
:func:`mark_document`          turn typed ``[narrator:...]`` markers into places
:func:`single_collection`      one described column as the collection a fill reads
:func:`marker_tag`             a typed marker's tag text -> (canonical tag, None) or (None, why not)
:class:`FillOutcome`           what a fill did, place by place
:class:`MarkOutcome`           what marking did, marker by marker
:class:`PlaceNote`             one place (or control) and what happened to it
:data:`RECORD_KEY`             where the sidecar keeps the record of what was filled
=============================  ================================================

The sidecar of a filled document (``<document>.findings.json``) is a findings
set (:mod:`narrator.history.sidecar`), so the next fill can say what changed,
plus a record, under :data:`RECORD_KEY`, of every place filled: its part, its
control id, its tag, and the fingerprint of what was written
(:attr:`narrator.places.package.Control.fingerprint`). A place whose content
no longer matches its fingerprint was edited by hand since; it is kept, and
listed, unless the caller gives ``replace_edits``. A place still showing its
placeholder, empty, or holding only its own tag or marker is always filled.

A fill on unchanged data writes nothing: every place already holds the same
words, and the document and sidecar are left as they are, byte for byte.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import os
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

from narrator.errors import NarratorError
from narrator.findings import Findings
from narrator.groups.analysis import Collection, VariablePart
from narrator.history.sidecar import FindingsSet, loads_any
from narrator.phrasing.places import PlaceText, PlaceWords
from narrator.places.package import Control, Filling, WordPackage, refusal
from narrator.places.tags import Tag, TagProblem, is_marker_text, parse_tag
from narrator.reading.sample import Sample
from narrator.safe_io import (
    REPORT_HASH_KEY,
    atomic_write_bytes,
    clean_stale,
    commit_report_pair,
    output_lock,
    refuse_same_file,
    sidecar_path,
)

RECORD_KEY = "places"
RECORD_VERSION = 1


@dataclass(frozen=True, slots=True)
class PlaceNote:
    """One control and what happened to it: ``state`` is filled, unchanged, kept, refused, unknown or foreign."""

    part: str
    index: int
    tag: str  # the tag text as found (or the control's title when it has no tag)
    state: str
    reason: str = ""


@dataclass(frozen=True, slots=True)
class FillOutcome:
    document: Path  # the document written (or that would have been)
    sidecar: Path
    wrote_document: bool
    wrote_sidecar: bool
    notes: tuple[PlaceNote, ...]
    touched: tuple[str, ...] = ()  # package parts changed, added or removed

    @property
    def written(self) -> bool:
        return self.wrote_document or self.wrote_sidecar

    def count(self, state: str) -> int:
        return sum(1 for note in self.notes if note.state == state)

    @property
    def report(self) -> Path:  # the name a report outcome uses, so a recipe build lists both kinds alike
        return self.document

    def lines(self) -> list[str]:
        """What happened, for the terminal: one summary line, then one line per place not filled."""
        filled, same = self.count("filled"), self.count("unchanged")
        places = filled + same
        noun = "place" if places == 1 else "places"
        if self.wrote_document:
            head = (f"filled {places} {noun} in {self.document.name} ({filled} changed, {same} as before); "
                    f"wrote {self.document} and {self.sidecar}")
        elif self.wrote_sidecar:
            head = f"{self.document.name}: no place's words changed; wrote only {self.sidecar} (the new findings)"
        elif places:
            head = (f"{self.document.name}: {places} {noun}, each already holding the current words; "
                    "nothing written")
        else:
            head = f"{self.document.name}: no place filled; nothing written"
        lines = [head]
        for note in self.notes:
            where = f"{note.tag!r} ({note.part}, control {note.index + 1})"
            if note.state == "kept":
                lines.append(f"kept {where}: edited by hand since the last fill; add --replace-edits to fill it")
            elif note.state in ("refused", "unknown"):
                lines.append(f"left {where} alone: {note.reason}")
            elif note.state == "note":
                lines.append(note.reason)
        foreign = [note for note in self.notes if note.state == "foreign"]
        if foreign:
            names = ", ".join(repr(note.tag) if note.tag else "(no tag)" for note in foreign[:8])
            more = f" and {len(foreign) - 8} more" if len(foreign) > 8 else ""
            lines.append(f"left {len(foreign)} other content control{'s' if len(foreign) != 1 else ''} alone "
                         f"(not narrator's): {names}{more}")
        return lines


@dataclass(frozen=True, slots=True)
class MarkOutcome:
    document: Path
    written: bool
    made: tuple[tuple[str, str, str], ...] = ()  # (part, tag, level)
    refused: tuple[tuple[str, str, str], ...] = ()  # (part, marker, reason)

    def lines(self) -> list[str]:
        count = len(self.made)
        noun = "place" if count == 1 else "places"
        blocks = sum(1 for _, _, level in self.made if level == "block")
        if self.written:
            head = (f"made {count} {noun} in {self.document} ({blocks} around whole paragraphs, "
                    f"{count - blocks} inside lines)")
        else:
            head = f"{self.document.name}: no marker to turn into a place; nothing written"
        return [head] + [f"left {marker!r} ({part}) as text: {reason}" for part, marker, reason in self.refused]


def single_collection(sample: Sample, findings: Findings) -> Collection:
    """One described column (the reading options of ``draft``) as the collection :func:`fill_document` reads."""
    return Collection(variables=(VariablePart(sample, findings),))


# --------------------------------------------------------------------------- filling


@dataclass(slots=True)
class _Variables:
    """The collection's variables by the names a tag may use: column name, label, or the findings' name."""

    collection: Collection
    names: list[set[str]] = field(default_factory=list)

    def __post_init__(self) -> None:
        for part in self.collection.variables:
            source = part.sample.source or {}
            self.names.append({_name_key(str(name)) for name in (part.findings.variable.name, part.sample.name,
                                                                source.get("column")) if name is not None})

    def find(self, tag: Tag) -> int | str:
        """The variable's position, or the words saying why the tag names none."""
        count = len(self.collection.variables)
        if tag.variable is None:
            if count == 1:
                return 0
            shown = ", ".join(repr(part.findings.variable.name) for part in self.collection.variables)
            return f"the data hold {count} variables ({shown}); add @ and one of them to the tag"
        key = _name_key(tag.variable)
        for index, names in enumerate(self.names):
            if key in names:
                return index
        shown = ", ".join(repr(part.findings.variable.name) for part in self.collection.variables)
        return f"no variable is called {tag.variable!r}; the data hold {shown}"


def _name_key(name: str) -> str:
    return " ".join(name.split()).casefold()


def _tag_of(control: Control) -> tuple[str, Tag | TagProblem | None]:
    """The control's tag, parsed; a control without a tag whose title is a tag of ours counts by its title."""
    parsed = parse_tag(control.tag)
    if parsed is None and not control.tag and control.alias:
        by_title = parse_tag(control.alias)
        if isinstance(by_title, Tag):
            return control.alias, by_title
    return control.tag or "", parsed


def _filling(text: PlaceText, figure) -> Filling:
    if text.kind == "paragraphs":
        return Filling(paragraphs=tuple(paragraph.text for paragraph in text.paragraphs))
    if text.kind == "table":
        return Filling(table=text.table)
    if text.kind == "figure":
        return Filling(figure=figure)
    return Filling(phrase=text.phrase or "")


def _record_match(record: Sequence[dict], control: Control, tag: Tag, ordinal: int) -> dict | None:
    for entry in record:
        if entry.get("part") == control.part and control.control_id is not None \
                and entry.get("id") == control.control_id and entry.get("tag") == tag.text:
            return entry
    for entry in record:
        if entry.get("part") == control.part and entry.get("tag") == tag.text and entry.get("ordinal") == ordinal:
            return entry
    return None


def _read_previous(sidecar: Path, replace_edits: bool) -> tuple[FindingsSet | None, list[dict], str | None]:
    """The previous build's findings and fill record, from the sidecar; a note when it had to be ignored."""
    if not sidecar.is_file():
        return None, [], None
    try:
        text = sidecar.read_text(encoding="utf-8")
        previous = loads_any(text)
        data = json.loads(text)
        record = data.get(RECORD_KEY, {}) if isinstance(data, dict) else {}
        entries = record.get("controls", []) if isinstance(record, dict) else []
        if not isinstance(entries, list) or not all(isinstance(entry, dict) for entry in entries):
            raise NarratorError(f"'{RECORD_KEY}' is not a list of filled places")
    except (OSError, UnicodeDecodeError, json.JSONDecodeError, NarratorError, TypeError, ValueError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
        if not replace_edits:
            raise NarratorError(
                f"{sidecar.name}: the record of the last fill cannot be read ({reason}); without it narrator cannot "
                "tell which places were edited by hand. Move the file away, or add --replace-edits to fill every "
                "place") from None
        return None, [], f"{sidecar.name} could not be read ({reason}); filled without it"
    return previous, entries, None


def fill_document(
    document: str | os.PathLike[str],
    collection: Collection,
    *,
    output: str | os.PathLike[str] | None = None,
    locale: str = "en_US",
    currency: str | None = None,
    replace_edits: bool = False,
    generated_at: dt.datetime | None = None,
    protect: Sequence[str | os.PathLike[str] | None] = (),
) -> FillOutcome:
    """Fill every marked place of ``document`` from ``collection``; write it to ``output`` (default: in place).

    The words come from :class:`narrator.phrasing.places.PlaceWords` in
    ``locale``; the previous build (the sidecar of the document written) sets
    what changed and which places were edited by hand. ``protect`` names files
    never to be written (the data, the recipe). Raises
    :class:`~narrator.errors.NarratorError` with one line when the document
    cannot be read, holds no content control, or holds none of narrator's.
    """
    from narrator.history.changes import baseline_for
    from narrator.report import generation_time

    source = Path(document)
    target = Path(output) if output is not None else source
    _check_paths(source, target, protect)
    sidecar = sidecar_path(target)
    package = WordPackage.read(source)
    controls = package.controls()
    if not controls:
        markers = package.typed_markers()
        hint = (f"; it holds {markers} typed marker{'s' if markers != 1 else ''}: run narrator mark "
                f"{source.name} first") if markers else \
            "; put one around each place to fill, tagged narrator:<target> (see the README), or type markers " \
            "such as [narrator:median] and run narrator mark"
        raise NarratorError(f"{source.name} has no content controls{hint}")
    with output_lock(target):
        clean_stale(target)
        in_place = target == source or (target.exists() and os.path.samefile(target, source))
        previous, record, ignored_note = _read_previous(sidecar, replace_edits or not in_place)
        # Hand edits are looked for in the document being filled in place; a copy written elsewhere is made
        # anew from the source each time, so the record only tells it what changed.
        edits_record = record if in_place else []
        earlier = {item.findings.variable.name: item for item in previous.variables} if previous is not None else {}
        baselines = []
        for part in collection.variables:
            match = earlier.get(part.findings.variable.name)
            baselines.append(None if match is None else baseline_for(part.findings, match.findings, match.baseline))
        findings_set = collection.findings_set(baselines)
        variables = _Variables(collection)
        words = [PlaceWords(item, locale=locale, currency=currency, group_by=findings_set.group_by)
                 for item in findings_set.variables]
        figures: dict[int, object] = {}

        def figure_for(index: int, text: PlaceText):
            if index not in figures:
                from narrator.figures.charts import DRAWERS

                part = collection.variables[index]
                figures[index] = DRAWERS[text.figure.key](part.findings, part.sample, text.figure, locale=locale)
            return figures[index]

        notes: dict[tuple[str, int], PlaceNote] = {}
        fillings: dict[tuple[str, int], Filling] = {}
        placed: dict[tuple[str, int], tuple[Tag, PlaceText]] = {}
        ordinals: dict[tuple[str, str], int] = {}
        for control in controls:
            shown, parsed = _tag_of(control)
            if _inside_filled(control, controls, fillings):
                continue  # inside a place being filled: replaced with it
            if parsed is None:
                notes[control.ref] = PlaceNote(control.part, control.index, shown, "foreign")
                continue
            if isinstance(parsed, TagProblem):
                notes[control.ref] = PlaceNote(control.part, control.index, shown, "unknown", parsed.reason)
                continue
            ordinal = ordinals.get((control.part, parsed.text), 0)
            ordinals[(control.part, parsed.text)] = ordinal + 1
            found = variables.find(parsed)
            if isinstance(found, str):
                notes[control.ref] = PlaceNote(control.part, control.index, shown, "unknown", found)
                continue
            text = words[found].text(parsed.target)
            filling = _filling(text, figure_for(found, text) if text.kind == "figure" else None)
            why = refusal(control, filling)
            if why is not None:
                notes[control.ref] = PlaceNote(control.part, control.index, shown, "refused", why)
                continue
            fresh = control.showing_placeholder or not control.text.strip() or is_marker_text(control.text, parsed)
            entry = None if fresh else _record_match(edits_record, control, parsed, ordinal)
            if entry is not None and entry.get("fingerprint") != control.fingerprint and not replace_edits:
                notes[control.ref] = PlaceNote(control.part, control.index, shown, "kept")
                continue
            fillings[control.ref] = filling
            placed[control.ref] = (parsed, text)
            notes[control.ref] = PlaceNote(control.part, control.index, shown, "unchanged")
        if not fillings and not any(note.state in ("kept", "refused") for note in notes.values()):
            unknown = [note for note in notes.values() if note.state == "unknown"]
            detail = f"; {unknown[0].tag!r}: {unknown[0].reason}" if unknown else \
                "; a place of narrator's has a tag such as narrator:median (see the README)"
            raise NarratorError(f"{source.name} has {len(controls)} content control{'s' if len(controls) != 1 else ''} "
                                f"but no place narrator can fill{detail}")

        moment = generation_time(generated_at)
        result = package.fill(fillings, moment=moment)
        written_bytes = result.data if result.data is not None else package_bytes(source)
        new_package = WordPackage.from_bytes(written_bytes, target.name) if result.data is not None else package
        entries, changed = _new_record(controls, new_package.controls(), placed, record, notes)
        for ref in changed:
            notes[ref] = PlaceNote(ref[0], ref[1], notes[ref].tag, "filled")
        payload = findings_set.to_dict()
        payload[RECORD_KEY] = {
            "version": RECORD_VERSION,
            "document": target.name,
            "document_sha256": hashlib.sha256(written_bytes).hexdigest(),
            "controls": entries,
        }
        expected = {**payload, REPORT_HASH_KEY: hashlib.sha256(written_bytes).hexdigest()}
        sidecar_text = json.dumps(expected, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
        document_changed = written_bytes != (package_bytes(target) if target.is_file() else None)
        sidecar_changed = not sidecar.is_file() or sidecar.read_text(encoding="utf-8") != sidecar_text
        if document_changed or sidecar_changed:
            # The document and its record as one pair, under the output's lock (narrator.safe_io); the
            # output rules of a fill are its own (_check_paths): the document is the user's, not a report.
            commit_report_pair(target, written_bytes if document_changed else None, payload, checked=True)
        ordered = tuple(notes[control.ref] for control in controls if control.ref in notes)
        if ignored_note:
            ordered += (PlaceNote("", 0, sidecar.name, "note", ignored_note),)
        return FillOutcome(target, sidecar, document_changed, document_changed or sidecar_changed, ordered,
                           result.changed + result.added + result.removed)


def package_bytes(path: Path) -> bytes:
    try:
        return path.read_bytes()
    except OSError as exc:
        raise NarratorError(f"{path}: cannot be read ({exc.strerror or exc})") from None


def _new_record(old_controls: Sequence[Control], new_controls: Sequence[Control], placed, record,
                notes) -> tuple[list[dict], list[tuple[str, int]]]:
    """The fill record of the document as written, and the places whose words changed since the last build.

    The record holds one entry per place filled, and the kept places' old
    entries. Filling removes only what was inside the filled places, so the
    controls left, in document order, are the old controls not inside a filled one.
    A place changed when its new fingerprint differs from the last build's
    (or, without a record of it, from what the place held before).
    """
    survivors = [control for control in old_controls if not _inside_filled(control, old_controls, placed)]
    if len(survivors) != len(new_controls):
        raise NarratorError("internal: the filled document's controls do not match the original's")
    entries: list[dict] = []
    changed: list[tuple[str, int]] = []
    ordinals: dict[tuple[str, str], int] = {}
    for old, new in zip(survivors, new_controls, strict=True):
        parsed = _tag_of(new)[1]
        if not isinstance(parsed, Tag):
            continue
        ordinal = ordinals.get((new.part, parsed.text), 0)
        ordinals[(new.part, parsed.text)] = ordinal + 1
        if old.ref in placed:
            tag, text = placed[old.ref]
            before = _record_match(record, new, parsed, ordinal)
            if new.fingerprint != (before.get("fingerprint") if before is not None else old.fingerprint):
                changed.append(old.ref)
            entries.append({"part": new.part, "id": new.control_id, "tag": tag.text, "ordinal": ordinal,
                            "target": tag.target, "variable": tag.variable, "fingerprint": new.fingerprint,
                            "keys": list(text.keys)})
        elif notes.get(old.ref) is not None and notes[old.ref].state == "kept":
            match = _record_match(record, old, parsed, ordinal)
            if match is not None:
                entries.append({**match, "part": new.part, "id": new.control_id, "ordinal": ordinal})
    return entries, changed


def _inside_filled(control: Control, controls: Sequence[Control], fillings) -> bool:
    by_ref = {item.ref: item for item in controls}
    parent = control.inside
    while parent is not None:
        if (control.part, parent) in fillings:
            return True
        parent = by_ref[(control.part, parent)].inside
    return False


def _check_paths(source: Path, target: Path, protect: Sequence[str | os.PathLike[str] | None]) -> None:
    for path, what in ((source, "document"), (target, "output")):
        if path.suffix.lower() != ".docx":
            raise NarratorError(f"{path}: the {what} must be a Word document ending in .docx")
    if not source.is_file():
        raise NarratorError(f"{source}: no such document" if not source.exists() else f"{source} is not a file")
    if target == source and source.is_symlink():
        raise NarratorError(f"{source} is a symbolic link; fill the file it points to, or give -o for a new file")
    refuse_same_file(target, *protect)
    refuse_same_file(sidecar_path(target), *protect, source)
    if target != source and target.exists():
        if target.is_dir():
            raise NarratorError(f"cannot write {target}: it is a folder")
        if os.path.samefile(target, source):
            return
        try:
            ours = bool(WordPackage.read(target).controls())
        except NarratorError:
            ours = False
        if not ours:
            raise NarratorError(f"{target} exists and is not a document with marked places; choose another name")


# --------------------------------------------------------------------------- marking


def marker_tag(marker_text: str) -> tuple[str | None, str | None]:
    """What a typed marker becomes: ``(canonical tag, None)``, or ``(None, the reason)`` when it is faulty.

    >>> marker_tag("narrator: Median")
    ('narrator:median', None)
    >>> marker_tag("narrator:mediam")[1]
    "unknown target 'mediam'; did you mean 'median'?"
    """
    parsed = parse_tag(marker_text)
    if isinstance(parsed, Tag):
        return parsed.text, None
    if isinstance(parsed, TagProblem):
        return None, parsed.reason
    return None, "not a tag of narrator's"


def mark_document(
    document: str | os.PathLike[str],
    *,
    output: str | os.PathLike[str] | None = None,
    generated_at: dt.datetime | None = None,
) -> MarkOutcome:
    """Turn the typed markers of ``document`` into content controls; write it to ``output`` (default: in place).

    Only markers whose tag names a target become places; a faulty one is
    left as text and listed with the reason. Nothing else in the document
    changes (see :meth:`narrator.places.package.WordPackage.mark`).
    """
    from narrator.report import generation_time

    source = Path(document)
    target = Path(output) if output is not None else source
    _check_paths(source, target, ())
    package = WordPackage.read(source)
    result = package.mark(marker_tag, moment=generation_time(generated_at))
    made = tuple((place.part, place.tag, place.level) for place in result.made)
    refused = tuple((item.part, item.marker, item.reason) for item in result.refused)
    if result.data is None and not refused and not made:
        markers = package.typed_markers()
        if not markers:
            raise NarratorError(f"{source.name} holds no marker such as [narrator:median] to make a place of")
    if result.data is not None:
        atomic_write_bytes(target, result.data)
    return MarkOutcome(target, result.data is not None, made, refused)
