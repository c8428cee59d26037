"""LibreOffice (headless) and poppler as independent readers of the Word files the tests make.

In CI (the CI environment variable set) a missing LibreOffice or poppler is a
failure, not a skip: .ci/run installs libreoffice-writer-nogui and poppler-utils.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

TOOLS = ("soffice", "pdftotext", "pdfimages")


def require_office(tmp_path_factory) -> str:
    """A fresh LibreOffice profile (as a file URI) for this session, or skip/fail when the tools are missing."""
    missing = [tool for tool in TOOLS if shutil.which(tool) is None]
    if missing:
        reason = f"{', '.join(missing)} not installed (Debian: libreoffice-writer-nogui, poppler-utils)"
        if os.environ.get("CI"):
            pytest.fail(f"CI must run the LibreOffice checks: {reason}")
        pytest.skip(reason)
    return tmp_path_factory.mktemp("lo-profile").as_uri()


def convert(profile: str, source: Path, to: str, folder: Path) -> Path:
    """``source`` converted by LibreOffice to the format ``to`` (pdf, docx...) in ``folder``."""
    result = subprocess.run(
        ["soffice", f"-env:UserInstallation={profile}", "--headless", "--norestore", "--convert-to", to,
         "--outdir", str(folder), str(source)],
        capture_output=True, text=True, timeout=240, check=False,
    )
    made = folder / (source.stem + "." + to.split(":")[0])
    assert result.returncode == 0, result.stderr
    assert made.is_file() and made.stat().st_size > 0, result.stdout + result.stderr
    return made


def convert_all(profile: str, sources: list[Path], to: str, folder: Path) -> list[Path]:
    """Each of ``sources`` converted by one LibreOffice run (one start-up for them all), in their order.

    The sources' names must differ (each lands in ``folder`` under its own name).
    """
    assert len({source.stem for source in sources}) == len(sources), "two sources of one name"
    result = subprocess.run(
        ["soffice", f"-env:UserInstallation={profile}", "--headless", "--norestore", "--convert-to", to,
         "--outdir", str(folder), *map(str, sources)],
        capture_output=True, text=True, timeout=240 + 30 * len(sources), check=False,
    )
    assert result.returncode == 0, result.stderr
    made = [folder / (source.stem + "." + to.split(":")[0]) for source in sources]
    for path in made:
        assert path.is_file() and path.stat().st_size > 0, (path.name, result.stdout + result.stderr)
    return made


def pdf_text(pdf: Path) -> str:
    text = subprocess.run(["pdftotext", str(pdf), "-"], capture_output=True, text=True, check=True).stdout
    return re.sub(r"\s+", " ", text)


def pdf_image_count(pdf: Path) -> int:
    listing = subprocess.run(["pdfimages", "-list", str(pdf)], capture_output=True, text=True, check=True).stdout
    return sum(1 for line in listing.splitlines()[2:] if line.split()[2] == "image")
