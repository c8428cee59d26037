"""An editor's review of the memo: each case here was false, unsized or unhelpful for its data before the fix.

Every data set is invented for the test (fixed seeds or typed in), in scenarios of our own; each check
recomputes the fact it relies on with numpy (a reference implementation) from the same values.
"""

from __future__ import annotations

import numpy as np
import pytest

from narrator.engine.decision import NOT_IN_PASSES
from narrator.engine.describe import describe
from narrator.phrasing import narrate


def _memo(findings, locale="en_US", **options) -> list[str]:
    narrative = narrate(findings, "memo", locale, **options)
    section = next(section for section in narrative.sections if section.key.endswith("summary"))
    return [sentence.text for paragraph in section.paragraphs for sentence in paragraph.sentences]


def _claims():
    # Invented: 200 insurance claims of a small fund, 70% of them nothing paid, the rest lognormal amounts.
    rng = np.random.default_rng(41)
    paid = rng.lognormal(7.0, 0.8, 200).round(2)
    return np.where(rng.random(200) < 0.7, 0.0, paid)


MIDDLE_ABOVE = {
    "en_US": "Among the {count} values above €0, the middle one was €{median}.",
    "es_ES": "Entre los {count} valores por encima de 0\u00a0€, el valor central fue {median}\u00a0€.",
    "fr_FR": "Parmi les {count} valeurs au-dessus de 0\u00a0€, la valeur du milieu était de {median}\u00a0€.",
}


@pytest.mark.parametrize("locale", sorted(MIDDLE_ABOVE))
def test_zero_heavy_money_says_the_middle_amount_above_zero(locale):
    values = _claims()
    positive = values[values > 0]
    findings = describe(values, name="claim")
    assert findings.above_minimum.count == positive.size
    assert findings.above_minimum.median == pytest.approx(float(np.median(positive)), abs=1e-9)
    sentences = _memo(findings, locale, currency="EUR")
    median = f"{np.median(positive):,.0f}"  # whole euros at memo rounding
    if locale != "en_US":  # es groups only from five digits (CLDR minimumGroupingDigits 2)
        median = median.replace(",", "\u202f" if locale == "fr_FR" else "" if len(median) < 6 else ".")
    expected = MIDDLE_ABOVE[locale].format(count=positive.size, median=median)
    assert sentences[1] == expected, sentences


def test_the_middle_above_the_lowest_is_said_only_when_a_quarter_sits_there():
    # Invented: visits per client; 20% made none (below the quarter), then 30% (above it).
    rng = np.random.default_rng(5)
    for share, said in ((0.2, False), (0.3, True)):
        visits = np.where(rng.random(400) < share, 0.0, rng.poisson(4, 400) + 1.0)
        text = " ".join(_memo(describe(visits, name="visits")))
        assert ("values above 0, the middle one was" in text) is said, text


def test_an_engine_without_every_value_says_nothing_of_it():
    findings = describe(_claims(), name="claim")
    from dataclasses import replace

    # As narrator.scale records it when its fixed-seed sample does not hold every value (tests/scale checks it).
    streamed = replace(findings, above_minimum=None, not_computed={**findings.not_computed,
                                                                   "above_minimum": NOT_IN_PASSES})
    assert not any("above €0" in sentence for sentence in _memo(streamed, currency="EUR"))


@pytest.mark.parametrize("locale", ["en_US", "es_ES", "fr_FR"])
def test_a_far_value_many_values_share_is_no_stray_entry_to_check(locale):
    # Invented: minutes to answer a call, about 30; 6% of the calls were logged at exactly 75 (a cap of the
    # phone system), far above the rest. A value one call in twenty shares is no slip of typing.
    rng = np.random.default_rng(8)
    values = np.concatenate([rng.normal(30, 4, 188).round(), np.full(12, 75.0)])
    findings = describe(values, name="minutes", unit="minutes")
    assert (values == 75).sum() / values.size >= 0.05  # numpy: the share the rule reads
    assert 75.0 not in findings.unusual.values and findings.unusual.shared == ((75.0, 12),)
    assert not any(error.value == 75.0 for error in findings.unusual.entry_errors)
    text = " ".join(_memo(findings, locale))
    assert "(row " not in text and "(fila " not in text and "(ligne " not in text, text
    said = {"en_US": "Far above the rest, 12 values (6% of all) were exactly 75 minutes.",
            "es_ES": "Muy por encima del resto, 12 valores (el 6\u00a0% del conjunto) fueron exactamente 75 minutos.",
            "fr_FR": "Bien au-dessus des autres, 12 valeurs (soit 6\u00a0% de l'ensemble) valaient exactement "
                     "75 minutes."}
    assert said[locale] in text, text


@pytest.mark.parametrize("language", ["en", "es", "fr"])
def test_figures_name_the_rule_s_values_as_the_text_does(language):
    # One term for the values beyond the outlier rule's fences: the key figures' row and the memo's sentences
    # say "outside the outlier rule's limits"; a legend that says "flagged value" sends a reader looking for a
    # second set of values.
    import tomllib
    from pathlib import Path

    bank = tomllib.loads((Path(__file__).parents[2] / "templates" / "phrases" / f"{language}.toml").read_text("utf-8"))

    def entry(key):
        node = bank
        for part in key.split("."):
            node = node[part]
        return node

    term = entry("tables.key_figures.unusual")  # "Outside the outlier rule's limits"
    assert entry("figures.groups.flagged") == entry("figures.dotplot.flagged") == term
    core = term.split(" ", 1)[1]  # "the outlier rule's limits", "los límites de ...", "limites de ..."
    texts = [entry(key) for key in ("figures.dotplot.flagged_sentence", "figures.dotplot.none_flagged",
                                    "figures.with_without.caption", "figures.with_without.without",
                                    "tables.with_without.caption", "tables.with_without.without")]
    texts += [variant[form] for variant in entry("memo.why_median.outliers") for form in ("one", "other")]
    for text in texts:
        assert core in text, text


@pytest.mark.parametrize("locale", ["en_US", "es_ES", "fr_FR"])
def test_far_values_above_many_zeros_are_not_sent_to_be_checked(locale):
    # With 70% of the claims at 0 the lower quartile is 0 and the upper one small, so the rule's far-out limit
    # (Tukey's Q3 + 3 IQR, recomputed here with numpy) lies among the ordinary paid claims: a quarter of them
    # are beyond it. They are counted, never listed as stray entries to check.
    values = _claims()
    q1, q3 = np.percentile(values, [25, 75])
    beyond = int((values > q3 + 3 * (q3 - q1)).sum())
    assert q1 == 0 and beyond >= 0.2 * (values > 0).sum()
    findings = describe(values, name="claim")
    text = " ".join(_memo(findings, locale, currency="EUR"))
    for check in ("check them", "contrastarlos", "vérifier dans"):
        assert check not in text, text
    said = {"en_US": f"and {beyond} values lie far outside them; that alone does not make them suspect.",
            "es_ES": f"y {beyond} valores quedan muy fuera de ellos; eso solo no los vuelve sospechosos.",
            "fr_FR": f"et {beyond} valeurs en sortent nettement\u202f; cela seul ne les rend pas suspectes."}
    assert said[locale] in text, text
    from claims.corpus import Case
    from claims.harness import check_case

    assert check_case(Case("invented", 0, values, {})) == []
