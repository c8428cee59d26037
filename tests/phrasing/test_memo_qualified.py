"""Memo sentences that need a qualification, or none at all, for what else the data show.

- money: when the largest amounts are themselves worth checking, the share of the total they hold
  depends on them being right, and the concentration sentence says so;
- groups whose values differ: pooled values that only look far out because groups were mixed are
  neither "standing out" nor "probably a typing error", and an excess of far values that no group has
  on its own (the mixing explains it) is not said;
- the methods text states the rule behind any "probably a typing error" sentence;
- after "56% were 0 ...; the others ran from 1 to 11", no "most values are fairly low, and the rest
  spread out over higher values".

The data are invented from fixed seeds. Shares and medians are checked with numpy (a reference
library): the share of the total held by the largest 1 % of values, each group's median.
"""

from __future__ import annotations

import numpy as np
import pytest
from helpers.grouped import grouped_set

from narrator.engine.describe import describe
from narrator.history.sidecar import FindingsSet
from narrator.phrasing import narrate
from narrator.phrasing.sets import SetOptions, narrate_set

IF_RIGHT = {"en_US": "If the largest amounts are right, much of the total sits in a few values",
            "es_ES": "Si los importes más altos son correctos, buena parte del total está en pocos valores",
            "fr_FR": "Si les montants les plus élevés sont exacts, une grande part du total se concentre"}


def _summary(findings, locale="en_US", **options) -> str:
    return narrate(findings, "memo", locale, **options).section("summary").paragraphs[0].text


def _bills() -> np.ndarray:
    values = np.round(np.random.default_rng(4).lognormal(4.0, 0.8, 5000), 2)
    values[:5] = [9000.0, 12000.0, 15000.0, 21000.0, 30000.0]
    return values


@pytest.mark.parametrize("locale", list(IF_RIGHT))
def test_concentration_depends_on_the_largest_amounts_being_right(locale):
    values = _bills()
    found = describe(values, name="amount", unit="USD", lower_bound=0)
    assert found.spread.max in found.unusual.values  # the largest amount stands out: worth checking
    largest = np.sort(values)[::-1][: found.concentration.top_percent_count]
    assert round(100 * largest.sum() / values.sum()) == 23  # numpy: the largest 1% hold 23% of the total
    text = _summary(found, locale, currency="USD")
    assert text.replace("\u202f", " ").startswith(IF_RIGHT[locale].replace("\u202f", " ")), text


def test_concentration_is_unqualified_when_the_largest_amounts_are_ordinary():
    values = np.round(np.random.default_rng(2).lognormal(4.0, 1.5, 2000), 2)  # gifts: a long, ordinary tail
    found = describe(values, name="gift", unit="USD", lower_bound=0)
    assert found.spread.max not in set(found.unusual.values) | {e.value for e in found.unusual.entry_errors}
    text = _summary(found, currency="USD")
    assert text.startswith("Much of the total sits in a few values") and "If the largest" not in text


def _mixed() -> tuple[dict[str, np.ndarray], FindingsSet]:
    rng = np.random.default_rng(11)
    groups = {"north": np.round(rng.lognormal(np.log(10), 0.3, 540)),
              "south": np.round(rng.lognormal(np.log(60), 0.3, 60))}
    return groups, grouped_set(groups, name="wait_days", unit="days", group_by="clinic")


def test_values_far_out_only_for_the_pooled_shape_are_not_called_errors_in_a_grouped_memo():
    groups, found_set = _mixed()
    overall = found_set.variables[0].findings
    assert overall.unusual.excess and not any(part.findings.unusual.excess for part in found_set.variables[0].groups)
    # Pooled, 100 days is ten times the median of 10: a "probable typing error"; but south's median is about 60
    # (numpy), and 100 is an ordinary wait there.
    assert 50 <= np.median(groups["south"]) <= 70 and 100.0 in groups["south"]
    assert "probably a typing error" in _summary(overall)  # the pooled memo, without its groups
    excess = "More values lie outside the outlier rule's limits than data of this shape usually have"
    assert excess in _summary(overall)  # pooled: yes; within each clinic: no (the groups' findings above)
    words = {"en_US": ("probably a typing error", excess),
             "es_ES": ("probablemente un error de tecleo", "Hay más valores alejados del resto"),
             "fr_FR": ("probablement une erreur de saisie", "Les valeurs éloignées des autres sont plus nombreuses")}
    for locale, (error, pooled_excess) in words.items():
        narrative = narrate_set(found_set, SetOptions(audience="memo", locale=locale))
        text = next(section for section in narrative.sections if section.key.endswith("summary")).paragraphs[0].text
        assert error not in text and pooled_excess not in text, (locale, text)
    # Each clinic is judged on its own shape: north's waits are lognormal with sigma 0.3, whose skewness is
    # (e^s2 + 2) sqrt(e^s2 - 1) = 0.95 (the lognormal's textbook formula), so they are right-skewed, and the
    # quartiles' tie into a symmetric picture (whole days, Bowley's 0.00) does not make them symmetric.
    north = next(part.findings for part in found_set.variables[0].groups if part.findings.n == 540)
    assert north.shape.label == "right-skewed" and north.shape.bowley == 0.0


@pytest.mark.parametrize(("locale", "words"), [
    ("en_US", "A value is called a probable typing error only when all of these hold: moving its decimal point "
              "1 to 3 places lands it between Q1 and Q3"),
    ("es_ES", "Un valor se considera un probable error de tecleo solo si se cumple todo lo siguiente"),
    ("fr_FR", "Une valeur n'est dite erreur de saisie probable que si toutes ces conditions sont remplies"),
])
def test_the_methods_state_the_rule_behind_a_probable_typing_error(locale, words):
    values = np.round(np.random.default_rng(1).normal(124, 8, 200))
    values[56] = 1240.0
    found = describe(values, name="pressure", unit="mmHg")
    assert found.unusual.entry_errors[0].strength == "probable"
    assert "is probably a typing error" in _summary(found)
    methods = narrate(found, "methods", locale).section("methods").paragraphs[0].text
    assert words in methods, methods
    clean = describe(np.round(np.random.default_rng(1).normal(124, 8, 200)), name="pressure", unit="mmHg")
    assert words[:30] not in narrate(clean, "methods", locale).section("methods").paragraphs[0].text


def test_no_shape_sentence_repeats_the_share_at_zero():
    rng = np.random.default_rng(3)
    values = np.where(rng.random(400) < 0.55, 0, rng.integers(1, 12, 400))
    found = describe(values, name="visits", unit="visits", lower_bound=0)
    share = np.mean(values == 0)  # numpy: 54% of the values are 0
    assert found.shape.label == "right-skewed" and 0.5 <= share < 0.6
    for locale, words in (("en_US", "the rest spread out over higher values"),
                          ("es_ES", "el resto se reparte entre valores más altos"),
                          ("fr_FR", "les autres s'étalent vers des valeurs plus élevées")):
        text = _summary(found, locale)
        assert f"{round(share * 100)}" in text and words not in text, text
