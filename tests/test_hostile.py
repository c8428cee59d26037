"""Hostile text: data and recipes are only ever text, never code or format fields.

Checks: narrator's source calls no evaluator (eval, exec, compile, pickle,
yaml.load, marshal, shell=True, os.system, __import__); a phrase bank message
filled with a value holding braces gives the braces back literally; names
from the data are cleaned of characters XML 1.0 cannot hold (W3C 2008,
section 2.2); a recipe's Python-looking strings stay strings.
"""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest

import narrator
from narrator.phrasing.bank import load_bank
from narrator.reading.sample import LABEL_LENGTH, clean_label
from narrator.writer import xml_safe

PACKAGE = Path(narrator.__file__).parent
FORBIDDEN_CALLS = {"eval", "exec", "compile", "__import__", "breakpoint"}
FORBIDDEN_ATTRIBUTES = {("pickle", "load"), ("pickle", "loads"), ("yaml", "load"), ("marshal", "loads"),
                        ("os", "system"), ("os", "popen"), ("yaml", "unsafe_load")}


def python_files() -> list[Path]:
    files = sorted(PACKAGE.rglob("*.py"))
    assert len(files) > 10
    return files


@pytest.mark.parametrize("path", python_files(), ids=lambda path: str(path.relative_to(PACKAGE)))
def test_no_evaluator_is_called(path):
    tree = ast.parse(path.read_text(encoding="utf-8"))
    for node in ast.walk(tree):
        if isinstance(node, ast.Call):
            function = node.func
            if isinstance(function, ast.Name):
                assert function.id not in FORBIDDEN_CALLS, f"{path.name}:{node.lineno} calls {function.id}"
            if isinstance(function, ast.Attribute) and isinstance(function.value, ast.Name):
                pair = (function.value.id, function.attr)
                assert pair not in FORBIDDEN_ATTRIBUTES, f"{path.name}:{node.lineno} calls {'.'.join(pair)}"
            for keyword in node.keywords:
                if keyword.arg == "shell":
                    assert isinstance(keyword.value, ast.Constant) and keyword.value.value is False, (
                        f"{path.name}:{node.lineno} runs a shell")
        if isinstance(node, ast.Import | ast.ImportFrom):
            names = [alias.name for alias in node.names] + [getattr(node, "module", None) or ""]
            assert not {"pickle", "marshal", "jinja2", "mako", "yaml"} & {name.split(".")[0] for name in names}, (
                f"{path.name}:{node.lineno} imports an evaluating library")


def test_the_grep_sees_a_call_when_there_is_one(tmp_path):
    # The check above must be able to fail: the same walk over a file that calls eval finds it.
    tree = ast.parse("x = eval('1')\n")
    assert any(isinstance(node, ast.Call) and getattr(node.func, "id", "") == "eval" for node in ast.walk(tree))


@pytest.mark.parametrize("hostile", ["{name}", "{0}", "{__class__.__mro__}", "{n!r:>10}", "{{}}", "}{", "%s %(x)s"])
def test_bank_values_with_braces_are_not_fields(hostile):
    bank = load_bank("en")
    text = bank.format("report.data_file", column=hostile, file="data.csv")
    assert hostile in text
    assert "data.csv" in text


def test_clean_label_removes_what_word_cannot_hold_and_keeps_code_like_text():
    assert clean_label("a\x00b\x01c\x1bd\ufffe\uffff\ud800") == "abcd"
    assert clean_label("line one\nline\ttwo\r\n") == "line one line two  "
    assert clean_label("\u202eevil\u2066") == "evil"
    for text in ("{__import__('os').system('x')}", "=cmd|' /C calc'!A0", "$\\frac{x$", "{name}"):
        assert clean_label(text) == text
    long = clean_label("W" * 1000)
    assert len(long) == LABEL_LENGTH and long.endswith("\u2026")
    assert xml_safe(clean_label("x\x07y")) == "xy"
    assert re.fullmatch(r"[^\x00-\x08\x0b\x0c\x0e-\x1f]*", clean_label("".join(map(chr, range(0, 64)))))


def test_recipe_strings_that_look_like_code_stay_text(tmp_path):
    from narrator.recipe import load_recipe

    (tmp_path / "data.csv").write_text("days\n1\n2\n3\n", encoding="utf-8")
    code = "{__import__('os').system('touch pwned')}"
    (tmp_path / "recipe.toml").write_text(
        '[data]\npath = "data.csv"\n[report]\ntitle = "${HOME} {0.__class__}"\n[outputs]\nmemo = "m.docx"\n'
        f'[[variables]]\ncolumn = "days"\nlabel = "{code}"\n', encoding="utf-8")
    recipe = load_recipe(tmp_path / "recipe.toml")
    assert recipe.report.title == "${HOME} {0.__class__}"
    assert recipe.variables[0].label == code
    assert not (tmp_path / "pwned").exists()


def test_names_in_messages_are_escaped_and_cut():
    from narrator.errors import NarratorError
    from narrator.reading.files import select_column

    headers = ["\x1b]0;title\x07days", "W" * 200_000]
    with pytest.raises(NarratorError) as caught:
        select_column(headers, "nope\x1b[2J", "data.csv")
    message = str(caught.value)
    assert "\x1b" not in message and "\\u001b]0;title\\u0007days" in message and "nope\\u001b[2J" in message
    assert len(message) < 400  # a huge header is cut, not echoed whole
