"""The memo leads with the finding that matters, sizes it, never ranks alike groups, fits one page.

Data here are invented corpora whose truth is known by construction (fixed seeds): grouped data
sets (alike pairs, one clearly different group, three groups with two alike, small groups near
the privacy threshold) and two-component mixtures with known locations and weights. The
references are the construction itself, scipy's Mann-Whitney test (through the engine's own
reference tests) and LibreOffice's page count.
"""

from __future__ import annotations

import numpy as np
import pytest
from helpers.grouped import grouped_set

from narrator.engine.describe import describe
from narrator.history.sidecar import FindingsSet
from narrator.phrasing import narrate
from narrator.phrasing.sets import SetOptions, narrate_set

THRESHOLD = 10
RANKING_WORDS = ("higher", "lower", "more", "less", "longer", "shorter", "más", "menos")


def _set(groups: dict[str, np.ndarray], *, threshold: int = THRESHOLD, **options) -> FindingsSet:
    return grouped_set(groups, name="days", unit="days", group_by="office", threshold=threshold, **options)


def _summary(findings_set: FindingsSet, locale: str = "en_US") -> list[str]:
    narrative = narrate_set(findings_set, SetOptions(audience="memo", locale=locale))
    section = next(section for section in narrative.sections if section.key.endswith("summary"))
    return [sentence.text for paragraph in section.paragraphs for sentence in paragraph.sentences]


def _gamma(rng, n, shift=0.0):
    return np.round(rng.gamma(6.0, 3.0, n) + shift)  # whole days; SD about 7.3


@pytest.mark.parametrize("seed", range(6))
def test_alike_groups_are_never_ranked(seed):
    # Invented: two offices with the same distribution of days, 150 each; the pair is alike or cannot be told.
    rng = np.random.default_rng(1000 + seed)
    findings_set = _set({"Northgate": _gamma(rng, 150), "Eastgate": _gamma(rng, 150)})
    verdict = findings_set.variables[0].comparison.pairs[0].difference.verdict
    assert verdict in ("alike", "unclear")
    for locale in ("en_US", "es_ES"):
        first = _summary(findings_set, locale)[0]
        assert "Northgate" in first and "Eastgate" in first
        if verdict == "alike":
            assert "about the same" in first or "tienen valores parecidos" in first
            claim = first.split(":")[0].replace("tienen valores parecidos", "")
            assert not any(word in claim.split() for word in RANKING_WORDS)
        else:  # "cannot tell": sized both ways, never "A higher than B"
            assert "cannot tell" in first or "no permiten saber" in first


@pytest.mark.parametrize("seed", range(6))
def test_the_clearly_different_group_is_named_first_and_sized(seed):
    # Invented: three offices; Southgate takes 9 days longer than the two others (known by construction).
    rng = np.random.default_rng(2000 + seed)
    findings_set = _set({"Northgate": _gamma(rng, 120), "Eastgate": _gamma(rng, 120),
                         "Southgate": _gamma(rng, 120, shift=9.0)})
    comparison = findings_set.variables[0].comparison
    assert comparison.stand_apart == ("Southgate",)
    sentences = _summary(findings_set)
    assert "Southgate" in " ".join(sentences[:2])
    first = sentences[0]
    assert first.startswith("Southgate stands apart from Northgate and Eastgate: its values are typically about ")
    assert "days higher than theirs taken together (likely between " in first  # sized against the pooled others
    # The stated size is the engine's shift at the memo's rounding, its range the interval's.
    rest = comparison.versus_rest[0].difference
    assert f"about {rest.shift:.0f} days higher" in first
    assert f"between {rest.low:.0f} and {rest.high:.0f} days higher" in first
    # The two others: about the same (when they go together) or "cannot tell", never ranked by name.
    if comparison.together:
        _assert_sized_alike(comparison, sentences)
    spanish = _summary(findings_set, "es_ES")[0]
    assert spanish.startswith("Southgate se distingue de Northgate y Eastgate: sus valores suelen ser alrededor de ")


def _assert_sized_alike(comparison, sentences) -> str:
    """ "Northgate and Eastgate are about the same: the typical difference between them is likely no more than 2 days
    either way." The bound is the largest interval limit in size, rounded up (never printed below itself)."""
    import math
    import re

    (alike,) = [s for s in sentences if s.startswith("Northgate and Eastgate are about the same: ")]
    found = re.search(r"likely no more than (\d+) days? either way\.$", alike)
    assert found, alike
    (pair,) = [p for p in comparison.pairs if {p.first, p.second} == {"Northgate", "Eastgate"}]
    assert int(found.group(1)) == math.ceil(max(abs(pair.difference.low), abs(pair.difference.high)))
    return alike


def test_three_groups_with_two_alike_say_which_go_together():
    # Invented: two large alike offices and a third 9 days longer; sizes large enough to rule out a medium
    # difference between the alike two.
    rng = np.random.default_rng(3001)
    findings_set = _set({"Northgate": _gamma(rng, 600), "Eastgate": _gamma(rng, 600),
                         "Southgate": _gamma(rng, 300, shift=9.0)})
    comparison = findings_set.variables[0].comparison
    assert comparison.together == (("Northgate", "Eastgate"),)
    sentences = _summary(findings_set)
    assert sentences[0].startswith("Southgate stands apart")
    assert sentences[1] == _assert_sized_alike(comparison, sentences)
    assert not any("Northgate" in s and ("higher" in s or "lower" in s) and "Southgate" not in s for s in sentences)


def test_small_groups_near_the_privacy_threshold_are_not_named():
    # Invented: a group of 9 (below the threshold of 10) is suppressed; groups of 10 and 11 are compared.
    rng = np.random.default_rng(4001)
    findings_set = _set({"Northgate": _gamma(rng, 11), "Eastgate": _gamma(rng, 10, shift=25.0),
                         "Westgate": _gamma(rng, 9, shift=60.0)})
    narrative = narrate_set(findings_set, SetOptions(audience="memo"))
    text = " ".join(sentence.text for sentence in narrative.sentences())
    assert "Westgate" not in text
    assert "fewer than 10 values are not shown" in text or "One group" in text or "group" in text
    first = _summary(findings_set)[0]
    assert "Eastgate" in first and "Northgate" in first  # the clear difference, sized
    assert "days higher" in first


def test_the_stated_likely_range_covers_the_true_shift_at_about_its_level():
    # Fixed-seed simulation (truth by construction): two groups of 40 whole-day values, the second 5 days longer.
    # The 95 % Hodges-Lehmann interval covers the true shift at least at its level (Hollander, Wolfe & Chicken
    # 2014, ch. 4: exact for continuous data, conservative with ties); 300 runs give a standard error of 1.3
    # points, so 0.92 is a three-SE floor. The engine's own coverage test (tests/engine/test_group_difference.py)
    # checks the interval; this checks the numbers the memo states are that interval.
    rng = np.random.default_rng(5001)
    covered = runs = 0
    for _ in range(300):
        first, second = _gamma(rng, 40), _gamma(rng, 40, shift=5.0)
        findings_set = _set({"A-office": first, "B-office": second})
        pair = findings_set.variables[0].comparison.pairs[0]
        claims = [claim for sentence in narrate_set(findings_set, SetOptions(audience="memo")).sentences()
                  for claim in sentence.claims if claim.kind == "group_shift"]
        assert claims and claims[0].numbers["low"] == pair.difference.low
        runs += 1
        covered += claims[0].numbers["low"] <= 5.0 <= claims[0].numbers["high"]
    assert covered / runs >= 0.92


@pytest.mark.parametrize(("weight", "low", "high"), [(0.6, 15.0, 65.0), (0.3, 100.0, 160.0), (0.75, 40.0, 90.0)])
def test_two_component_mixtures_are_said_where_they_lie_and_how_big(weight, low, high):
    # Invented mixtures with known locations and weights: normal(low, 4) with weight w and normal(high, 8).
    # Tolerances: the share within 0.05 of w (binomial SE at n = 2000 is at most 0.011, so three SEs are 0.034,
    # and the components are more than 4 SDs apart, so under 1 % of values fall across the valley); the
    # cluster's median within 1.5 of the component's center (the median's SE is about 1.25 sd / sqrt(n w),
    # at most 0.5 here, and cutting at the valley moves it by less than 1).
    rng = np.random.default_rng(int(weight * 100 + low))
    n = 2000
    k = int(round(weight * n))
    values = np.round(np.concatenate([rng.normal(low, 4, k), rng.normal(high, 8, n - k)]))
    findings = describe(values, name="minutes", unit="minutes")
    clusters = findings.clusters
    assert clusters.count == 2
    first, second = clusters.parts
    assert abs(first.share - weight) <= 0.05 and abs(second.share - (1 - weight)) <= 0.05
    assert abs(first.median - low) <= 1.5 and abs(second.median - high) <= 1.5
    summary = narrate(findings, "memo").section("summary").paragraphs[0].sentences
    lead = summary[0].text
    tenths = int(np.floor(first.share * 10 + 0.5))
    assert lead.startswith(f"The values form two clusters: about {tenths} in 10 values are low, around "
                           f"{first.median:.0f} minutes")
    assert f"the other {10 - tenths} in 10 are high, around {second.median:.0f} minutes" in lead
    assert abs(tenths / 10 - weight) <= 0.1
    texts = [sentence.text for sentence in summary]
    assert len(set(texts)) == len(texts)  # no sentence repeats another
    assert not any(text.startswith("The middle value") for text in texts)
    # No pooled middle half: its quartiles would straddle the valley between the clusters, or sit at its edge.
    for locale, words in (("en_US", ("Half of all values", "were between")),
                          ("es_ES", ("La mitad de los valores", "estuvieron entre")),
                          ("fr_FR", ("La moitié des valeurs", "se situaient entre"))):
        text = narrate(findings, "memo", locale).section("summary").paragraphs[0].text
        assert not any(word in text for word in words), (locale, text)


def test_a_probable_typing_error_is_named_with_its_value_and_row():
    # Invented blood-pressure-like readings near 124 with one 1,240 (a shifted decimal point) in row 57.
    from narrator.reading.sample import Sample

    rng = np.random.default_rng(6001)
    values = np.round(rng.normal(124, 8, 300))
    values[55] = 1240.0
    sample = Sample(values=values, rows=np.arange(2, values.size + 2), name="pressure")
    findings = describe(sample, unit="mmHg")
    text = narrate(findings, "memo").section("summary").paragraphs[0].text
    assert "1,240 mmHg" in text and "row 57" in text and "typing error" in text


def test_money_memo_says_the_total_and_where_it_went():
    # Invented grant amounts: lognormal with three very large grants.
    rng = np.random.default_rng(7001)
    values = np.round(rng.lognormal(7.5, 1.0, 400), 2)
    values[:3] = [150000.0, 220000.0, 260000.0]
    findings = describe(values, name="amount", lower_bound=0)
    first = narrate(findings, "memo", currency="USD").section("summary").paragraphs[0].sentences[0].text
    top = np.sort(values)[::-1]
    # The three very large grants stand out and are worth checking: the shares depend on them being right.
    assert first.startswith("If the largest amounts are right, much of the total sits in a few values: the 400 "
                            "values add up to $")
    assert f"the largest four values hold {100 * top[:4].sum() / top.sum():.0f}% of the total" in first


@pytest.mark.parametrize(("locale", "words"), [("en_US", "the typical difference between them is at most "),
                                                ("es_ES", "la diferencia típica entre ellos es como mucho de "),
                                                ("fr_FR", "l'écart typique entre eux est d'au plus ")])
@pytest.mark.parametrize("seed", [3001, 3002, 3003])
def test_alike_groups_of_a_whole_population_are_sized_by_their_largest_typical_difference(locale, words, seed):
    # Invented: the three offices above as a whole population: no likely range, so "about the same" is sized by
    # the largest Hodges-Lehmann shift between the alike two, rounded up; never a bare "about the same".
    import math
    import re

    rng = np.random.default_rng(seed)
    findings_set = _set({"Northgate": _gamma(rng, 600), "Eastgate": _gamma(rng, 600),
                         "Southgate": _gamma(rng, 300, shift=9.0)}, population=True)
    comparison = findings_set.variables[0].comparison
    assert comparison.together == (("Northgate", "Eastgate"),)
    (pair,) = [p for p in comparison.pairs if {p.first, p.second} == {"Northgate", "Eastgate"}]
    sentences = [s.replace("\u202f", " ").replace("\u00a0", " ").replace("\u2019", "'")
                 for s in _summary(findings_set, locale)]
    (alike,) = [s for s in sentences if s.startswith("Northgate ") and ("Eastgate " in s)]
    if pair.difference.shift == 0:  # this seed: the median of the 360,000 differences is exactly 0 days
        assert alike.endswith(("is zero.", "es nula.", "est nul.")), alike
    else:
        found = re.search(re.escape(words) + r"(\d+) ", alike)
        assert found and int(found.group(1)) == math.ceil(abs(pair.difference.shift)), alike


def test_a_pair_said_to_be_about_the_same_is_said_once():
    # Invented: four offices as a whole population, two alike; the alike pair's own sentence ("their values
    # typically differ by about 1 day") and the groups-that-go-together sentence must not both be said.
    rng = np.random.default_rng(6)
    groups = {"A": rng.gamma(4, 30 / 4, 60).round(1), "B": rng.gamma(4, 30.5 / 4, 55).round(1),
              "C": rng.gamma(4, 29.8 / 4, 50).round(1), "D": rng.gamma(4, 45 / 4, 45).round(1)}
    sentences = _summary(_set(groups, population=True))
    alike = [s for s in sentences if "about the same" in s]
    pairs = [frozenset(word for word in s.split(":")[0].split() if word in groups) for s in alike]
    assert len(pairs) == len(set(pairs)), alike


def test_a_clear_change_since_the_previous_build_leads_the_memo(tmp_path):
    # Invented: waits whose middle value rose from 16 to 20 days (30% longer), then a refresh of the same shape
    # (the middle value stays within its uncertainty): the first leads the summary, the second is not in it.
    before = describe(np.random.default_rng(8).gamma(3, 6, 120).round(0), name="days", unit="days")
    after = describe((np.random.default_rng(9).gamma(3, 6, 140) * 1.3).round(0), name="days", unit="days")
    summary = narrate(after, "memo", "en_US", baseline=before).sections[0].paragraphs[0].text
    assert summary.startswith("Since the previous data, the middle value (median) rose from 16 to 20 days (+4 days; "
                              "likely between +0.5 and +7.5 days)."), summary
    same = describe(np.random.default_rng(10).gamma(3, 6, 130).round(0), name="days", unit="days")
    assert "Since the previous data" not in narrate(same, "memo", "en_US", baseline=before).plain_text()
    # The report wiring: a rebuild on refreshed data leads its summary with the change.
    import docx
    import pandas as pd

    from narrator.cli import main

    data, out = tmp_path / "waits.csv", tmp_path / "memo.docx"
    pd.DataFrame({"days": np.random.default_rng(8).gamma(3, 6, 120).round(0)}).to_csv(data, index=False)
    assert main(["draft", str(data), "--column", "days", "--unit", "days", "--audience", "memo", "-o", str(out),
                 "--quiet"]) == 0
    pd.DataFrame({"days": (np.random.default_rng(9).gamma(3, 6, 140) * 1.3).round(0)}).to_csv(data, index=False)
    assert main(["draft", str(data), "--column", "days", "--unit", "days", "--audience", "memo", "-o", str(out),
                 "--quiet", "--force"]) == 0
    texts = [p.text for p in docx.Document(str(out)).paragraphs if p.text.strip()]
    first = texts[texts.index("Summary") + 1]
    assert first.startswith("Since the previous data, the middle value (median) rose from 16 to 20 days"), first
