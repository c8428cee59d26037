"""A memo is one page per variable in LibreOffice, from 10 to 1,000,000 values, in English, Spanish and French.

Each memo is written by the real command from an invented CSV (fixed seeds) or by the demo and its
recipes, converted by LibreOffice headless (one run for a whole set of files) and counted by pdfinfo
(poppler). The SHA-256 of the input must come out of the PDF unbroken (pdftotext), so it does not break
across lines. A memo's figure is placed at the size it was drawn at, so its words are legible on paper:
page count is never bought by shrinking the picture.
"""

from __future__ import annotations

import hashlib
import io
import re
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import numpy as np
import pytest
from helpers.office import convert_all, pdf_text, require_office
from lxml import etree
from PIL import Image

from narrator.figures import charts


@pytest.fixture(scope="module")
def office(tmp_path_factory):
    return require_office(tmp_path_factory)


def _pages(pdf: Path) -> int:
    info = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True, check=True).stdout
    return int(re.search(r"^Pages:\s+(\d+)", info, re.MULTILINE).group(1))


def _write(path: Path, header: str, rows) -> Path:
    with path.open("w", encoding="utf-8") as handle:
        handle.write(header + "\n")
        handle.writelines(rows)
    return path


def _draft(csv: Path, out: Path, *options: str) -> Path:
    result = subprocess.run([sys.executable, "-m", "narrator", "draft", str(csv), "-o", str(out), "--audience", "memo",
                             "--quiet", *options], capture_output=True, text=True, timeout=600, check=False)
    assert result.returncode == 0, result.stderr
    return out


def _cases(folder: Path):
    rng = np.random.default_rng(20261202)
    # Invented: ten repair-shop turnaround hours.
    hours = _write(folder / "repairs.csv", "hours", (f"{v:.1f}\n" for v in rng.gamma(4.0, 6.0, 10)))
    yield _draft(hours, folder / "repairs.docx", "--column", "hours", "--unit", "hours")
    # Invented: 2,000 contact lengths in two clusters, with the channel that separates them.
    short, long = np.round(rng.normal(15, 4, 1200)), np.round(rng.normal(65, 10, 800))
    rows = [f"phone,{max(v, 1):.0f}\n" for v in short] + [f"visit,{max(v, 1):.0f}\n" for v in long]
    contacts = _write(folder / "contacts.csv", "channel,minutes", (rows[i] for i in rng.permutation(len(rows))))
    yield _draft(contacts, folder / "contacts.docx", "--column", "minutes", "--unit", "minutes", "--lower-bound", "0")
    # Invented: days to first payment at three offices, one 9 days longer.
    rows = [f"{office},{v:.0f}\n" for office, shift in (("Northgate", 0), ("Eastgate", 0), ("Southgate", 9))
            for v in rng.gamma(6.0, 3.0, 150) + shift]
    payments = _write(folder / "payments.csv", "office,days", rows)
    yield _draft(payments, folder / "payments.docx", "--column", "days", "--unit", "days", "--group-by", "office")
    # Invented: 1,000,000 household water bills, lognormal, a few very large.
    bills = np.round(rng.lognormal(4.0, 0.8, 1_000_000), 2)
    bills[:5] = [9000.0, 12000.0, 15000.0, 21000.0, 30000.0]
    money = _write(folder / "bills.csv", "amount", (f"{v:.2f}\n" for v in bills))
    yield _draft(money, folder / "bills.docx", "--column", "amount", "--currency", "USD", "--lower-bound", "0")


@pytest.fixture(scope="module")
def english_memos(office, tmp_path_factory) -> dict[str, tuple[Path, Path]]:
    folder = tmp_path_factory.mktemp("english")
    memos = list(_cases(folder))
    return {docx.stem: (docx, pdf) for docx, pdf in zip(memos, convert_all(office, memos, "pdf", folder), strict=True)}


def test_a_memo_is_one_page_per_variable_from_10_to_a_million_values(english_memos):
    for name, (docx, pdf) in english_memos.items():
        assert _pages(pdf) == 1, name
        csv = docx.with_suffix(".csv")
        digest = hashlib.sha256(csv.read_bytes()).hexdigest()
        text = pdf_text(pdf)
        assert digest in text, (name, "the SHA-256 breaks across lines")
        assert "How this report was made" in text and "findings.json" in text


# The demo's recipes as a Spanish or French office would write them (invented data, as the demo's).
_HOUSING = """[data]
path = "housing_waits.csv"
missing = ["N/A"]
group_by = "office"
privacy_threshold = 10

[report]
title = "{title}"
organisation = "{organisation}"
locale = "{locale}"
generated = 2026-12-01T09:00:00Z

[outputs]
memo = "reports/{memo}.docx"

[[variables]]
column = "days_to_first_payment"
label = "{days}"
unit = "days"
valid_min = 0
valid_max = 730
lower_bound = 0

[[variables]]
column = "first_payment"
label = "{payment}"
unit = "USD"
valid_min = 0
lower_bound = 0
"""
_HOUSING_WORDS = {
    "es": {"title": "Días hasta el primer pago de alquiler, programa de vivienda inventado",
           "organisation": "Programa de ayuda a la vivienda inventado (datos de demostración)", "locale": "es_ES",
           "memo": "vivienda-resumen", "days": "días hasta el primer pago", "payment": "primer pago"},
    "fr": {"title": "Délai avant le premier paiement de loyer, programme de logement inventé",
           "organisation": "Programme d'aide au logement inventé (données de démonstration)", "locale": "fr_FR",
           "memo": "logement-resume", "days": "délai avant le premier paiement", "payment": "premier paiement"},
}
_WATER_FR = """[data]
path = "water_use.csv"
decimal_comma = true
missing = ["-"]

[report]
title = "Consommation journalière d'eau par foyer (données inventées)"
organisation = "Compagnie des eaux inventée (données de démonstration)"
locale = "fr_FR"
generated = 2026-12-01T09:00:00Z

[outputs]
memo = "reports/eau-resume.docx"

[[variables]]
column = "litros_dia"
label = "consommation journalière"
unit = "litres"
valid_min = 0
lower_bound = 0
"""


def _narrator(*arguments: str) -> None:
    result = subprocess.run([sys.executable, "-m", "narrator", *arguments, "--quiet"], capture_output=True, text=True,
                            timeout=900, check=False)
    assert result.returncode == 0, result.stderr


@pytest.fixture(scope="module")
def demo_memos(office, tmp_path_factory) -> dict[str, tuple[Path, Path]]:
    """The demo's memos (English two variables by office, Spanish one variable), with Spanish and French ones.

    Spanish and French: the housing memo of two variables by office, built on October's data and then on
    November's as the demo does (so each variable has its "what changed"); the water memo of one variable
    (French; the demo's is Spanish); a memo of one variable by office from the command line; and (French)
    the housing memo of two variables without groups.
    """
    folder = tmp_path_factory.mktemp("demo") / "demo"
    _narrator("demo", "-o", str(folder))
    recipes = [folder / "water-fr.toml", folder / "two-fr.toml"]
    recipes[0].write_text(_WATER_FR, encoding="utf-8")
    ungrouped = _HOUSING.replace('group_by = "office"\n', "").replace("privacy_threshold = 10\n", "")
    recipes[1].write_text(ungrouped.format(**{**_HOUSING_WORDS["fr"], "memo": "deux-variables"}), encoding="utf-8")
    housing = []
    for language, words in _HOUSING_WORDS.items():
        housing.append(folder / f"housing-{language}.toml")
        housing[-1].write_text(_HOUSING.format(**words), encoding="utf-8")
    shutil.copyfile(folder / "housing_waits_2026-10.csv", folder / "housing_waits.csv")
    for recipe in housing:
        _narrator("redraft", str(recipe))
    shutil.copyfile(folder / "housing_waits_2026-11.csv", folder / "housing_waits.csv")
    for recipe in (*housing, *recipes):
        _narrator("redraft", str(recipe))
    for locale in ("es_ES", "fr_FR"):
        _narrator("draft", str(folder / "housing_waits.csv"), "--column", "days_to_first_payment", "--unit", "days",
                  "--missing", "N/A", "--group-by", "office", "--audience", "memo", "--locale", locale,
                  "-o", str(folder / "reports" / f"por-oficina-{locale}.docx"))
    memos = sorted((folder / "reports").glob("*.docx"))
    memos = [memo for memo in memos if "full" not in memo.stem and "completo" not in memo.stem
             and "methods" not in memo.stem]
    pdfs = convert_all(office, memos, "pdf", folder)
    return {docx.stem: (docx, pdf) for docx, pdf in zip(memos, pdfs, strict=True)}


# Pages: one per variable. Input: the file whose SHA-256 the memo gives.
DEMO_MEMOS = {
    "housing-memo": (2, "housing_waits.csv"),  # English, two variables by office, after a refresh
    "agua-resumen": (1, "water_use.csv"),  # Spanish, one variable
    "eau-resume": (1, "water_use.csv"),  # French, one variable
    "vivienda-resumen": (2, "housing_waits.csv"),  # Spanish, two variables by office, after a refresh
    "logement-resume": (2, "housing_waits.csv"),  # French, two variables by office, after a refresh
    "por-oficina-es_ES": (1, "housing_waits.csv"),  # Spanish, one variable by office
    "por-oficina-fr_FR": (1, "housing_waits.csv"),  # French, one variable by office
    "deux-variables": (2, "housing_waits.csv"),  # French, two variables, no groups
}


def test_the_demos_memos_are_one_page_per_variable_in_english_spanish_and_french(demo_memos):
    assert set(demo_memos) == set(DEMO_MEMOS)
    folder = next(iter(demo_memos.values()))[0].parent.parent
    for name, (docx, pdf) in demo_memos.items():
        pages, data = DEMO_MEMOS[name]
        assert _pages(pdf) == pages, name
        text = pdf_text(pdf)
        assert hashlib.sha256((folder / data).read_bytes()).hexdigest() in text, (name, "the SHA-256 breaks")
        assert f"{docx.stem}.findings.json" in text, name  # the compact block names the sidecar
    english = pdf_text(demo_memos["housing-memo"][1])
    assert english.count("What changed since the previous data") == 2


def test_each_variable_of_a_memo_has_its_own_page(demo_memos):
    # The first variable's part is short enough to leave room for the second's heading: a page break, not
    # the lack of room, puts the second variable on page 2.
    pdf = demo_memos["deux-variables"][1]
    first, second = (subprocess.run(["pdftotext", "-f", str(page), "-l", str(page), str(pdf), "-"],
                                    capture_output=True, text=True, check=True).stdout for page in (1, 2))
    assert "premier paiement (usd)" not in first.casefold()
    assert second.lstrip().casefold().startswith("premier paiement (usd)")  # the label as the recipe writes it


_NS = {"wp": "http://schemas.openxmlformats.org/drawingml/2006/wordprocessingDrawing",
       "a": "http://schemas.openxmlformats.org/drawingml/2006/main",
       "r": "http://schemas.openxmlformats.org/officeDocument/2006/relationships",
       "rel": "http://schemas.openxmlformats.org/package/2006/relationships"}
EMU_PER_INCH = 914_400  # ECMA-376 Part 1, 20.1.2.1: 914,400 EMUs to the inch
PRINTED_FLOOR_PT = 7.5  # our floor for words on a printed figure (common practice: about 7 to 9 pt at print size)


def _placed_figures(docx: Path):
    """(placed width in inches, drawn width in inches, drawn height in inches) of each picture of a .docx."""
    with zipfile.ZipFile(docx) as package:
        body = etree.fromstring(package.read("word/document.xml"))
        rels = etree.fromstring(package.read("word/_rels/document.xml.rels"))
        targets = {rel.get("Id"): rel.get("Target") for rel in rels.iterfind("rel:Relationship", _NS)}
        for inline in body.iterfind(".//wp:inline", _NS):
            placed = int(inline.find("wp:extent", _NS).get("cx")) / EMU_PER_INCH
            embed = inline.find(".//a:blip", _NS).get(f"{{{_NS['r']}}}embed")
            image = Image.open(io.BytesIO(package.read("word/" + targets[embed])))
            dpi = image.info["dpi"][0]
            yield placed, image.width / dpi, image.height / dpi


def test_a_memos_figure_is_placed_at_its_drawn_size_and_legible_on_paper(english_memos, demo_memos):
    # The smallest words of a memo figure are charts.SMALL_FONT_SIZE at its drawn size (tests/figures/
    # test_charts.py checks every word); on paper they are that size times placed width over drawn width.
    # bills.docx (a million values) is drawn by the helper process: the memo's size reaches it too.
    for name, (docx, _pdf) in {**english_memos, **demo_memos}.items():
        figures = list(_placed_figures(docx))
        assert figures, name
        for placed, drawn_width, drawn_height in figures:
            assert charts.SMALL_FONT_SIZE * placed / drawn_width >= PRINTED_FLOOR_PT, (name, placed, drawn_width)
            assert drawn_width == pytest.approx(charts.MEMO_SIZE.width_in, abs=0.01), name
            assert drawn_height < charts.PAGE_SIZE.height_in, name
