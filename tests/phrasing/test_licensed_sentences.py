"""Sentences said only when their data make them true: the licence mechanism, and the cases that broke it.

Every data set here is invented for the test (generated with a fixed seed, or typed in) in a scenario of
our own; each check recomputes the fact with numpy from the same values.
"""

from __future__ import annotations

import re
import tomllib

import numpy as np
import pytest
from babel import Locale

from narrator.engine.describe import describe
from narrator.errors import NarratorError
from narrator.phrasing import narrate
from narrator.phrasing.bank import Condition, Variant, available_languages, check_same_claims, load_bank
from narrator.phrasing.licences import CLAIM_KINDS, LICENCES, holds
from narrator.reading.columns import read_column


def assert_claims_hold(values, options) -> None:
    """The independent checker of tests/claims finds no false claim in any audience, in English or Spanish."""
    from claims.corpus import Case
    from claims.harness import check_case

    assert check_case(Case("invented", 0, np.asarray(values, dtype=float), dict(options))) == []


def memo(findings, locale="en_US") -> str:
    return narrate(findings, "memo", locale).section("summary").paragraphs[0].text


def every_text(findings, locale="en_US") -> str:
    return "\n".join(narrate(findings, audience, locale).plain_text() for audience in ("memo", "methods", "full"))


# ------------------------------------------------------------------------------------- the mechanism


def test_every_licence_named_in_a_bank_exists_and_every_claim_kind_is_known():
    for language in available_languages():
        bank = load_bank(language)
        for key, message in bank.messages.items():
            if isinstance(message, tuple):
                for variant in message:
                    assert all(condition.licence in LICENCES for condition in variant.when), key
                    assert variant.claim in CLAIM_KINDS, key


def test_every_language_has_the_english_variants_with_the_same_licences():
    english = load_bank("en")
    for language in available_languages():
        check_same_claims(load_bank(language), english)  # raises on any difference


def test_a_bank_that_drops_a_variant_or_changes_a_licence_is_refused():
    english, spanish = load_bank("en"), load_bank("es")
    key = "memo.lead.median"
    broken = dict(spanish.messages)
    broken[key] = spanish.messages[key][1:]
    with pytest.raises(NarratorError, match="must have the variants"):
        check_same_claims(type(spanish)(**{**{f: getattr(spanish, f) for f in spanish.__slots__}, "messages": broken}),
                          english)
    first = spanish.messages[key][0]
    swapped = (Variant((Condition("most_at_maximum"),), first.claim, first.forms), *spanish.messages[key][1:])
    broken[key] = swapped
    with pytest.raises(NarratorError, match="must have the variants"):
        check_same_claims(type(spanish)(**{**{f: getattr(spanish, f) for f in spanish.__slots__}, "messages": broken}),
                          english)


def test_the_loader_refuses_an_unknown_licence(tmp_path, monkeypatch):
    from narrator.phrasing import bank as bank_module

    text = (bank_module._templates() / "phrases" / "en.toml").read_text(encoding="utf-8")
    data = tomllib.loads(text)
    assert data["memo"]["lead"]["single"]["when"] == ["n_is_one"]
    broken = text.replace('when = ["n_is_one"]', 'when = ["n_is_one_or_so"]', 1)
    messages = {}
    with pytest.raises(NarratorError, match="unknown licence 'n_is_one_or_so'"):
        for table_name, table in tomllib.loads(broken).items():
            if table_name not in ("meta", "grammar", "nouns"):
                bank_module._flatten(table, table_name, messages, "en.toml")
        bank_module._check_licences(messages, "en.toml")


def test_the_first_variant_whose_licences_hold_is_said_and_none_when_none_does():
    # Invented visits per client: 70 % none. The lead is the share at 0, not "half were lower".
    rng = np.random.default_rng(5)
    values = np.where(rng.random(200) < 0.7, 0.0, rng.poisson(2, 200) + 1.0)
    sentence = next(s for s in narrate(describe(values), "memo").sentences() if "center.median" in s.keys)
    claim = sentence.claims[0]
    assert claim.kind == "share_at_minimum" and claim.when == ("most_at_minimum",)
    assert claim.numbers["share_at_min"] == pytest.approx(float(np.mean(values == 0)))
    from narrator.phrasing.context import make_context

    ctx = make_context(describe([3.0, 3.0, 3.0]), "en_US", currency=None, unit=None, name=None)
    assert not holds("has_spread", ctx) and ctx.say("memo.range") is None  # no licence holds: nothing is said


def test_whole_sentence_forms_follow_the_cldr_plural_category_and_gender():
    # CLDR (babel): English has "one" and "other"; Spanish adds "many" for a million. The sentence, not the noun
    # alone, changes with the count, and Spanish picks the feminine form for "fila".
    assert set(Locale.parse("es").plural_form.tags) >= {"one", "many"}
    spanish = load_bank("es")
    variant = spanish.variants("memo.left_out.missing")[1]
    assert variant.form("one", "feminine").startswith("{count} marcada como")
    assert variant.form("other", "feminine").startswith("{count} marcadas como")
    assert variant.form("many", "feminine") == variant.form("other", "feminine")  # falls back to "other"
    # "many" (CLDR: millions, with the compact exponent e): "de 1 millón de valores", never "de los 1 millón".
    lead = spanish.variants("memo.lead.median")[-1]
    assert lead.form("many", None).startswith("El valor central de {n_values}")
    assert lead.form("other", None).startswith("El valor central de los {n_values}")
    english = load_bank("en")
    without = english.variants("memo.without.median_lead")[0]
    assert without.form("one", None).startswith("Without it,") and without.form("other", None).startswith(
        "Without them,")


# ------------------------------------------------------------------------------------- the cases


def test_item1_zero_heavy_counts_lead_with_the_share_at_zero_and_never_half_lower():
    # Invented: home visits per client, two thirds made none; 0 is declared as the lower bound.
    rng = np.random.default_rng(11)
    values = np.where(rng.random(300) < 0.65, 0.0, rng.poisson(4, 300) + 1.0)
    findings = describe(values, name="visits per client", lower_bound=0)
    share = np.mean(values == 0)
    for locale in ("en_US", "es_ES"):
        text = every_text(findings, locale)
        assert "half were lower" not in text and "la mitad quedó por debajo" not in text
        assert "may be a floor" not in text and "puede haber un suelo" not in text
    lead = memo(findings)
    assert lead.startswith(f"Of the 300 values, {share:.0%} were 0, the lowest possible value; the others ran from "
                           f"{values[values > 0].min():.0f} to {values.max():.0f}.")
    quality = narrate(findings, "full").section("data_quality")
    assert any("sit exactly at the lowest possible value, 0." in p.text for p in quality.paragraphs)
    assert_claims_hold(values, {"lower_bound": 0})


def test_item1_ties_at_the_median_are_said_with_their_shares():
    # Invented calls per household, 1 to 20: a third made exactly 2, the median.
    rng = np.random.default_rng(2)
    values = rng.choice(np.arange(1.0, 21.0), size=240, p=np.array([30, 35, 15, 10] + [10 / 16] * 16) / 100)
    findings = describe(values, name="calls")
    assert findings.center.lead == "median" and np.median(values) == 2
    sentence = next(s for s in narrate(findings, "memo").sentences() if "center.median" in s.keys)
    assert "half were lower" not in sentence.text
    shares = [np.mean(values < 2), np.mean(values == 2), np.mean(values > 2)]
    # Every value below 2 is 1, the lowest: the lead names it ("34% were 1"), not only "were lower".
    assert values.min() == 1 and np.all(values[values < 2] == 1)
    assert sentence.text == (f"The middle value of the 240 values was 2: {shares[0]:.0%} were 1, {shares[1]:.0%} "
                             f"were exactly 2 and {shares[2]:.0%} were higher.")
    text = memo(findings)
    q1, q3 = np.quantile(values, [0.25, 0.75])
    inside = np.mean((values >= q1) & (values <= q3))
    assert inside > 0.6 and "Half of all values were between" not in text
    # These calls form two clusters (the long flat tail from 5 to 20 sits apart from the pile at 1 to 4): the
    # memo gives each cluster's place and size, and no pooled share between the quartiles.
    assert findings.clusters is not None and findings.clusters.count == 2
    assert "were between" not in text and text.startswith("The values form two clusters")
    assert_claims_hold(values, {})


def test_item2_methods_name_the_rule_that_made_each_number():
    # Invented repair turnaround hours: a tight bulk and two far-off values; bins capped, the figure focused.
    rng = np.random.default_rng(9)
    values = np.concatenate([rng.normal(10, 0.4, 400).round(2), [900.0, 1500.0]])
    findings = describe(values, name="turnaround", outlier_rule="tukey")
    assert findings.histogram.note == "bin_cap" and findings.histogram_focus is not None
    methods = narrate(findings, "methods").section("methods").paragraphs[0].text
    plan = findings.histogram
    assert f"Freedman-Diaconis (1981) gives {plan.raw_width:.2f}" in methods  # the rule's own width
    assert "widened so the whole range fits in at most 200 bins" in methods
    assert "Histogram bins follow Freedman-Diaconis (1981), rounded" not in methods
    assert "The figure shows the bulk of the values" in methods and "two values beyond" in methods
    assert_claims_hold(values, {"outlier_rule": "tukey"})
    # Invented meter readings: a tight bulk and one reading a million times larger; Silverman's rule gives a
    # bandwidth below range / 16,384 (0.9 x 0.0013 x 2001^(-1/5), about 0.0003), so the floor raises it.
    rng = np.random.default_rng(3)
    readings = np.concatenate([rng.normal(5, 0.001, 2000), [1e6]])
    floored = describe(readings, name="reading")
    assert floored.density.bandwidth_note == "bandwidth_floor"
    assert floored.density.bandwidth == pytest.approx((readings.max() - readings.min()) / 16384)
    text = narrate(floored, "methods").section("methods").paragraphs[0].text
    assert "Silverman's rule of thumb (Silverman 1986) gives a narrower one, raised to the range divided by 16,384" \
        in text


def test_item2_a_bin_grid_with_one_full_bin_says_it_cannot_tell():
    # Invented: 96 % of a week's incident counts are 0.
    rng = np.random.default_rng(6)
    values = np.where(rng.random(500) < 0.96, 0.0, rng.integers(1, 60, 500)).astype(float)
    findings = describe(values, name="incidents")
    assert findings.shape.bin_sensitivity.undecided
    text = narrate(findings, "full").section("shape").paragraphs[0].text
    assert "cannot tell how many peaks there are" in text and "stays at" not in text
    assert_claims_hold(values, {})


def test_item3_the_average_is_never_said_to_be_pulled_when_it_prints_as_the_median():
    # Invented: wait days where mean and median round to the same memo number.
    rng = np.random.default_rng(14)
    for seed in range(30):
        values = np.round(rng.gamma(6.0, 2.0, 60) + seed, 0)
        findings = describe(values, name="wait", lower_bound=0)
        for sentence in narrate(findings, "memo").sentences():
            if "pull" in sentence.text:
                claim = sentence.claims[0]
                assert claim.numbers["mean_shown"] != claim.numbers["median_shown"]
    # One high unusual value: "the value outside the outlier rule's limits pulls", never "the few ... values".
    values = np.array([31, 33, 34, 35, 35, 36, 37, 38, 39, 40, 41, 42, 400.0])
    text = every_text(describe(values, name="litres", outlier_rule="tukey"))
    assert "The few" not in text and "The value outside the outlier rule's limits pulls the average up" in text
    assert_claims_hold(values, {"outlier_rule": "tukey"})


def test_item4_a_whole_population_gets_no_estimating_words():
    # Invented: the 48 branch offices of a utility, all of them.
    rng = np.random.default_rng(4)
    findings = describe(rng.gamma(3.0, 20.0, 48).round(1), name="complaints per office", population=True)
    for locale, words in (("en_US", ("probably", "not certain", "p =", "p <", "(SE", "95%", "hard to be sure")),
                          ("es_ES", ("probable", "no es seguro", "p =", "p <", "(EE", "95 %", "difícil estar"))):
        text = every_text(findings, locale)
        for word in words:
            assert word not in text, (locale, word)
    assert "D'Agostino, R. B." not in every_text(findings)  # no test named, none cited
    assert_claims_hold(rng.gamma(3.0, 20.0, 48).round(1), {"population": True})


def test_item5_missing_cells_are_said_to_be_what_they_held(tmp_path):
    # Invented intake records: three other columns filled, the wait blank in two rows, "-99" in three.
    rows = ["client,office,wait"] + [f"c{k},north,{10 + k}" for k in range(20)]
    rows += ["c90,north,", "c91,south,", "c92,south,-99", "c93,east,-99", "c94,east,-99"]
    path = tmp_path / "invented_intake.csv"
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    findings = describe(read_column(path, "wait", missing=["-99"]), name="wait")
    text = memo(findings)
    assert "We left out five rows where wait was blank or marked as missing (“-99”), 20% of the 25 rows read" in text
    assert "empty row" not in every_text(findings)
    spanish = memo(findings, "es_ES")
    assert "cinco filas sin dato de wait (en blanco o con la marca «-99»)" in spanish
    quality = narrate(findings, "full").section("data_quality").paragraphs[0].text
    assert "had no value (blank, or marked “-99”)" in quality


@pytest.mark.parametrize("values", [[50.0], [49.0, 51.0], [40.0, 50.0, 61.0]])
def test_item6_one_two_or_three_values(values):
    findings = describe(values, name="wait")
    text = every_text(findings)
    assert "Half of all values were between" not in text
    assert "do not move the mean much" not in text and "no outlier rule was run" in text.lower()
    if len(values) == 1:
        assert "There was only one value: 50." in text and "All the values are the same" not in text
    else:
        # Fewer than five values: the values themselves, and no judgement of shape or center (with two,
        # the middle value is the average by definition).
        listed = " and ".join(f"{value:.0f}" for value in values) if len(values) == 2 else \
            ", ".join(f"{value:.0f}" for value in values[:-1]) + f", and {values[-1]:.0f}"
        assert f"were {listed}." in text
        assert "close to the average" not in memo(findings) and "better guide" not in memo(findings)
    assert_claims_hold(values, {})


def test_item10_counts_and_verbs_agree():
    # Invented: one value outside the valid range, one cell of text, one flagged value.
    values = [12.0, 13.0, 14.0, 13.5, 12.5, 13.2, 12.8, 13.1, 12.9, 40.0, -5.0]
    findings = describe(values, name="hours", valid_min=0, outlier_rule="tukey")
    text = every_text(findings)
    for wrong in ("One value lay outside the range and were", "one value outside the declared valid range and were",
                  "one row that were", "It flags one value: 0 below the lower fence and 1 above the upper fence. "
                  "Without them"):
        assert wrong not in text
    assert "Without it (n = 9)" in text
    assert re.search(r"One value lay outside the declared valid range and was left out", text)
    assert_claims_hold(values, {"valid_min": 0, "outlier_rule": "tukey"})


def test_every_licence_is_used_by_the_banks_and_has_a_meaning():
    used = {condition.licence for message in load_bank("en").messages.values() if isinstance(message, tuple)
            for variant in message for condition in variant.when}
    assert set(LICENCES) == used, sorted(set(LICENCES) ^ used)
    assert all(licence.meaning and licence.subject in ("variable", "groups", "change", "difference") for licence in
               LICENCES.values())
