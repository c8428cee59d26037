"""A memo about one variable is one page in LibreOffice, from 10 to 1,000,000 values.

Each memo is written by the real command from an invented CSV (fixed seeds), converted once by
LibreOffice headless and counted by pdfinfo (poppler). The SHA-256 of the input must come out of
the PDF unbroken (pdftotext), so it does not break across lines.
"""

from __future__ import annotations

import hashlib
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from helpers.office import convert, pdf_text, require_office


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


def test_a_memo_is_one_page_per_variable_from_10_to_a_million_values(office, tmp_path):
    for docx in _cases(tmp_path):
        pdf = convert(office, docx, "pdf", tmp_path)
        assert _pages(pdf) == 1, docx.name
        csv = docx.with_suffix(".csv")
        digest = hashlib.sha256(csv.read_bytes()).hexdigest()
        text = pdf_text(pdf)
        assert digest in text, (docx.name, "the SHA-256 breaks across lines")
        assert "How this report was made" in text and "findings.json" in text


def test_the_demos_grouped_memo_of_two_variables_after_a_refresh_is_two_pages(office, tmp_path):
    # The demo's housing memo: two variables by office, each with what changed since October's build.
    result = subprocess.run([sys.executable, "-m", "narrator", "demo", "-o", str(tmp_path / "demo")],
                            capture_output=True, text=True, timeout=900, check=False)
    assert result.returncode == 0, result.stderr
    pdf = convert(office, tmp_path / "demo" / "reports" / "housing-memo.docx", "pdf", tmp_path)
    text = pdf_text(pdf)
    assert text.count("What changed since the previous data") == 2
    assert _pages(pdf) == 2
