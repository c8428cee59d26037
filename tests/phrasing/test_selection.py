"""Content selection (narrator.phrasing.selection) on a generated corpus: the top message is the one a
statistician would lead with.

The corpus is generated (fixed seeds; invented scenarios): grouped data sets (one office clearly
slower, two clearly different sites, alike offices), clustered contact lengths, skewed gift
amounts in dollars, visits per client with most at zero, blood-pressure readings with one typed
digit too many, a refresh whose center moved, and plain symmetric waits. Every family has several
seeds; each message's numbers are checked against the findings at the keys it names.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from narrator.engine.describe import describe
from narrator.groups.analysis import VariableRequest, analyse_file
from narrator.phrasing.selection import MESSAGE_CODES, SCORES, is_money, select_messages

SEEDS = range(5)


def _grouped(folder: Path, centers: dict[str, float], seed: int, size: int = 160) -> tuple:
    rng = np.random.default_rng(seed)
    rows = [(days, office) for office, center in centers.items()
            for days in np.round(rng.gamma(8.0, center / 8.0, size))]
    path = folder / f"grouped-{seed}.csv"
    pd.DataFrame(rows, columns=["days", "office"]).to_csv(path, index=False)
    part = analyse_file(path, [VariableRequest("days", lower_bound=0)], group_by="office").variables[0]
    return part.findings, part.comparison


def _resolve(path: str, findings, comparison, baseline):
    roots = {"comparison": comparison, "baseline": baseline}
    head, _, rest = path.partition(".")
    node = roots.get(head, findings)
    parts = rest.split(".") if head in roots else path.split(".")
    for part in parts:
        node = node[int(part)] if part.isdigit() else getattr(node, part)
    return node


def _check_keys(messages, findings, comparison=None, baseline=None):
    for message in messages:
        assert message.code in MESSAGE_CODES
        for key in message.keys:
            _resolve(key, findings, comparison, baseline)  # every key names a real finding


@pytest.mark.parametrize("seed", SEEDS)
def test_one_office_apart_leads(tmp_path, seed):
    findings, comparison = _grouped(tmp_path, {"Harbour": 12.0, "Midtown": 21.0, "Riverside": 12.0}, seed)
    messages = select_messages(findings, comparison=comparison)
    top = messages[0]
    assert top.code == "group_difference" and top.numbers["group"] == "Midtown"
    assert top.numbers["others"] == ("Harbour", "Riverside") and top.numbers["together"]
    # Gamma waits with means 21 and 12 days: the typical difference is near 9 days (8.5 by simulation).
    assert top.numbers["low"] <= top.numbers["shift"] <= top.numbers["high"] and top.numbers["direction"] == "higher"
    assert 6.0 <= top.numbers["shift"] <= 12.0 and top.numbers["high"] - top.numbers["low"] <= 4.0
    assert top.numbers["shift"] == comparison.versus_rest[0].difference.shift
    _check_keys(messages, findings, comparison)


@pytest.mark.parametrize("seed", SEEDS)
def test_two_different_sites_lead(tmp_path, seed):
    findings, comparison = _grouped(tmp_path, {"East": 10.0, "West": 16.0}, seed)
    top = select_messages(findings, comparison=comparison)[0]
    assert top.code == "group_difference" and (top.numbers["first"], top.numbers["second"]) == ("East", "West")
    assert top.numbers["low"] <= top.numbers["shift"] <= top.numbers["high"]
    assert 4.0 <= top.numbers["shift"] <= 8.0 and top.numbers["direction"] == "higher"


@pytest.mark.parametrize("seed", SEEDS)
def test_alike_offices_lead_with_their_sameness_in_reading_order(tmp_path, seed):
    findings, comparison = _grouped(tmp_path, {"Oak": 14.0, "Elm": 14.0, "Ash": 14.0}, seed, size=300)
    messages = select_messages(findings, comparison=comparison)
    assert messages[0].code == "groups_alike"
    assert messages[0].numbers["groups"] == ("Ash", "Elm", "Oak")  # reading order, never by value
    assert "group_difference" not in [message.code for message in messages]


def _clustered(seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    short = rng.random(600) < 0.6
    return np.where(short, rng.normal(15, 4, 600), rng.normal(65, 8, 600)).round(1)


@pytest.mark.parametrize("seed", SEEDS)
def test_clusters_lead_and_the_single_middle_drops(seed):
    findings = describe(_clustered(seed), lower_bound=0)
    messages = select_messages(findings)
    assert messages[0].code == "clusters" and messages[0].numbers["count"] == 2
    center = next(message for message in messages if message.code == "center_range")
    assert center.score < 50
    _check_keys(messages, findings)


def _gifts(seed: int) -> np.ndarray:
    return np.round(np.random.default_rng(seed).lognormal(4.0, 1.5, 2000), 2)


@pytest.mark.parametrize("seed", SEEDS)
def test_money_leads_with_where_the_money_went(seed):
    findings = describe(_gifts(seed), lower_bound=0, unit="USD")
    assert is_money(findings)
    messages = select_messages(findings)
    assert messages[0].code == "concentration"
    assert messages[0].numbers["total"] == findings.concentration.total
    _check_keys(messages, findings)
    # The same values, not money: nothing is said about a total.
    plain = select_messages(describe(_gifts(seed), lower_bound=0, unit="minutes"))
    assert not {"concentration", "money_total"} & {message.code for message in plain}


@pytest.mark.parametrize("seed", SEEDS)
def test_most_at_zero_leads_with_the_share(seed):
    rng = np.random.default_rng(seed)
    visits = np.where(rng.random(500) < 0.6, 0, rng.poisson(4, 500) + 1).astype(float)
    findings = describe(visits, lower_bound=0)
    top = select_messages(findings)[0]
    assert top.code == "share_at_one_value" and top.numbers["value"] == 0.0 and top.numbers["edge"] == "lowest"
    assert top.numbers["share"] == pytest.approx(np.mean(visits == 0))


@pytest.mark.parametrize("seed", SEEDS)
def test_a_typing_error_follows_the_center_it_does_not_move(seed):
    readings = np.round(np.random.default_rng(seed).normal(124, 8, 300))
    readings[56] = 1240.0
    findings = describe(readings)
    messages = select_messages(findings)
    codes = [message.code for message in messages]
    assert codes[0] == "center_range" and findings.center.lead == "median"
    error = messages[codes.index("entry_error")]
    assert error.numbers["errors"] == ((1240.0, 57, 124.0),)
    _check_keys(messages, findings)


@pytest.mark.parametrize("seed", SEEDS)
def test_a_moved_center_leads_a_refresh(seed):
    rng = np.random.default_rng(seed)
    before = describe(np.round(rng.normal(30, 5, 400), 1))
    after = describe(np.round(rng.normal(34, 5, 400), 1))
    messages = select_messages(after, baseline=before)
    assert messages[0].code == "change_in_center"
    assert messages[0].numbers["old"] == getattr(before.center, after.center.lead)
    _check_keys(messages, after, baseline=before)


@pytest.mark.parametrize("seed", SEEDS)
def test_plain_waits_lead_with_center_and_range(seed):
    waits = np.round(np.random.default_rng(seed).normal(40, 6, 250), 1)
    findings = describe(waits)
    top = select_messages(findings)[0]
    assert top.code == "center_range" and top.numbers["center"] == getattr(findings.center, findings.center.lead)


def test_same_data_same_order(tmp_path):
    first = select_messages(describe(_clustered(1)))
    again = select_messages(describe(_clustered(1)))
    assert first == again


def test_scores_table_is_one_fixed_order():
    assert len(MESSAGE_CODES) == len(set(MESSAGE_CODES))
    assert [score for _, score in SCORES] == sorted((score for _, score in SCORES), reverse=True)
