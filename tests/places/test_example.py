"""The README's example: its fill command, run from a fresh examples folder, gives the before-and-after it shows.

The example is invented (the demo's housing program, narrator/demo.py); the
examples folder is written fresh by narrator.demo.write_examples, which
tests/test_demo.py checks against the files in examples/.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

from lxml import etree
from readme_commands import README, readme_command

from narrator.demo import QUARTERLY_REPORT, write_examples
from narrator.places.package import WordPackage

W = "{http://schemas.openxmlformats.org/wordprocessingml/2006/main}"


def readme_example(name: str) -> str:
    text = README.read_text(encoding="utf-8")
    match = re.search(r"<!-- example: " + re.escape(name) + r" -->\s*```text\n(.*?)\n```", text, flags=re.S)
    assert match is not None, name
    return match.group(1)


def paragraphs(document: Path) -> list[str]:
    root = etree.fromstring(zipfile.ZipFile(document).read("word/document.xml"))
    return ["".join(text.text or "" for text in p.iter(f"{W}t")) for p in root.iter(f"{W}p")]


def position(snippet: str, texts: list[str]) -> int:
    """Which paragraph holds ``snippet`` (the README quotes a paragraph from its second sentence on)."""
    found = [index for index, text in enumerate(texts) if snippet in text]
    assert len(found) == 1, snippet
    return found[0]


def run_fill(folder: Path) -> subprocess.CompletedProcess:
    tools = str(Path(sys.executable).parent)  # the narrator command of this environment
    env = {**os.environ, "PATH": tools + os.pathsep + os.environ.get("PATH", "")}
    return subprocess.run(["bash", "-c", readme_command("fill")], cwd=folder, env=env, capture_output=True,
                          text=True, timeout=600, check=False)


def test_the_readme_fill_command_gives_the_readme_before_and_after(tmp_path):
    folder = tmp_path / "examples"
    write_examples(folder)
    before = paragraphs(folder / QUARTERLY_REPORT)
    position(readme_example("before"), before)
    places = WordPackage.read(folder / QUARTERLY_REPORT).controls()
    assert len(places) == 10 and all(place.tag.startswith("narrator:") for place in places)

    result = run_fill(folder)
    assert result.returncode == 0, result.stderr
    assert "filled 10 places in quarterly-report-filled.docx (10 changed, 0 as before)" in result.stdout
    assert result.stdout.count("\n") == 1  # nothing left alone, nothing kept
    filled = folder / "quarterly-report-filled.docx"
    position(readme_example("after"), paragraphs(filled))
    assert paragraphs(folder / QUARTERLY_REPORT) == before  # -o: the example itself is unchanged

    shutil.copyfile(folder / "housing_waits_2026-11.csv", folder / "housing_waits.csv")
    result = run_fill(folder)
    assert result.returncode == 0, result.stderr
    paragraph, changes = readme_example("after refresh").split("\n\n")
    after = paragraphs(filled)
    assert position(changes, after) > position(paragraph, after)
