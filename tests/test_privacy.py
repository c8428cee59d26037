"""Privacy: record identifiers reach a report only when ``--id-column`` asks for them.

Data are invented (household water use in litres, fixed seed) with client
codes that appear nowhere else, so a search of the .docx XML and the sidecar
for any code is a search for a leak.
"""

from __future__ import annotations

import os
import subprocess
import sys
import zipfile
from pathlib import Path

import numpy as np
import pytest

from narrator.engine.describe import describe
from narrator.reading.columns import read_column

SEED = 11


@pytest.fixture(scope="module")
def water(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("water")
    rng = np.random.default_rng(SEED)
    litres = rng.normal(420, 40, 50).round()
    litres[[4, 31]] = [1900, 2100]  # two households far above the rest
    codes = [f"HX{7000 + k}Q" for k in range(litres.size)]
    lines = [f"{code},{value:.0f}" for code, value in zip(codes, litres, strict=True)]
    (folder / "water.csv").write_text("client,litres\n" + "\n".join(lines) + "\n", encoding="utf-8")
    return folder


def draft(folder: Path, output: str, *more: str) -> tuple[bytes, str]:
    result = subprocess.run(
        [sys.executable, "-m", "narrator", "draft", "water.csv", "--column", "litres", "-o", output, *more],
        cwd=folder, capture_output=True, text=True, env=dict(os.environ), timeout=300,
    )
    assert result.returncode == 0, result.stderr
    report = folder / output
    with zipfile.ZipFile(report) as archive:
        xml = b"".join(archive.read(name) for name in archive.namelist())
    return xml, report.with_suffix(".findings.json").read_text(encoding="utf-8")


def test_without_the_option_no_identifier_appears_anywhere(water):
    xml, sidecar = draft(water, "plain.docx")
    assert b"HX7" not in xml
    assert "HX7" not in sidecar
    assert b"Identifier" not in xml


def test_with_the_option_the_outlier_table_names_the_flagged_records_only(water):
    xml, sidecar = draft(water, "named.docx", "--id-column", "client")
    assert b"HX7004Q" in xml and b"HX7031Q" in xml
    assert b"Identifier" in xml
    flagged = {"HX7004Q", "HX7031Q"}
    # Only flagged records are named: no other code is in the document.
    others = [f"HX{7000 + k}Q" for k in range(50) if f"HX{7000 + k}Q" not in flagged]
    assert not [code for code in others if code.encode() in xml]
    assert "HX7004Q" in sidecar


def test_reader_carries_ids_only_when_asked(water):
    assert read_column(water / "water.csv", "litres").ids is None
    sample = read_column(water / "water.csv", "litres", id_column="client")
    assert sample.ids.shape == sample.values.shape
    assert sample.ids[4] == "HX7004Q"
    found = describe(sample)
    assert set(found.outliers.ids) == {"HX7004Q", "HX7031Q"}
    assert describe(read_column(water / "water.csv", "litres")).outliers.ids == ()


def test_ids_stay_aligned_after_exclusions(tmp_path):
    (tmp_path / "gaps.csv").write_text("id,v\nA,1\nB,\nC,x\nD,2\nE,3\nF,4\nG,5\nH,6\nI,7\nJ,500\n",
                                       encoding="utf-8")
    sample = read_column(tmp_path / "gaps.csv", "v", id_column="id")
    assert list(sample.ids) == ["A", "D", "E", "F", "G", "H", "I", "J"]
    found = describe(sample, valid_max=100)  # 500 is impossible: excluded, and its id with it
    assert found.n == 7 and found.outliers.ids == ()
