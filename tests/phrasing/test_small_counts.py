"""A small sample is given its counts, never a loose "half".

Of seven values with one at the median, three lower and three higher are not "half were lower and half
were higher": the memo says "three were lower, one was exactly 6 and three were higher". Below 20
values the memo's "half" needs exactly half; larger samples keep the two-point reading
(narrator.phrasing.licences.HALF_SLACK). Every count is checked against numpy (a reference library:
counts of ``values < median`` and numpy.quantile's type 7 quartiles, Hyndman & Fan 1996).
"""

from __future__ import annotations

import numpy as np
import pytest

from narrator.engine.describe import describe
from narrator.phrasing import narrate

HALF_WORDS = {"en_US": ("half were lower", "Half of all values"),
              "es_ES": ("la mitad quedó por debajo", "La mitad de los valores"),
              "fr_FR": ("la moitié des valeurs étaient en dessous", "La moitié des valeurs")}


def summary(values, locale="en_US", **options) -> str:
    found = describe(np.asarray(values, dtype=float), **options)
    return narrate(found, "memo", locale).sections[0].paragraphs[0].text


def _counts(values):
    x = np.asarray(values, dtype=float)
    median = float(np.median(x))  # numpy as the reference for the middle value
    return int((x < median).sum()), int((x == median).sum()), int((x > median).sum())


SEVEN = [3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 60.0]  # 3 below 6, 1 at it, 3 above
TIES = [3.0, 5.0, 9.0, 9.0, 9.0, 14.0, 20.0]  # 2 below 9, 3 at it, 2 above


@pytest.mark.parametrize(("values", "locale", "words"), [
    (SEVEN, "en_US", "three were lower, one was exactly 6, and three were higher"),
    (SEVEN, "es_ES", "tres quedaron por debajo, uno fue exactamente 6 y tres quedaron por encima"),
    (SEVEN, "fr_FR", "trois étaient en dessous, une était exactement égale à 6 et trois étaient au-dessus"),
    (TIES, "en_US", "two were lower, three were exactly 9, and two were higher"),
    (TIES, "es_ES", "dos quedaron por debajo, tres fueron exactamente 9 y dos quedaron por encima"),
    (TIES, "fr_FR", "deux étaient en dessous, trois étaient exactement égales à 9 et deux étaient au-dessus"),
])
def test_a_small_sample_is_given_its_counts_around_the_middle_value(values, locale, words):
    assert _counts(SEVEN) == (3, 1, 3) and _counts(TIES) == (2, 3, 2)
    text = summary(values, locale)
    assert words in text, text
    assert HALF_WORDS[locale][0] not in text


@pytest.mark.parametrize(("locale", "words"), [
    ("en_US", "Of the 11 values, five were between 5.5 and 10.5."),
    ("es_ES", "De 11 valores, cinco estuvieron entre 5,5 y 10,5."),
    ("fr_FR", "Sur les 11 valeurs, cinq se situaient entre 5,5 et 10,5."),
])
def test_a_small_sample_is_given_the_count_between_its_quartiles(locale, words):
    values = [3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0, 10.0, 11.0, 12.0, 60.0]
    q1, q3 = np.quantile(values, [0.25, 0.75])  # numpy's default is type 7
    assert (q1, q3) == (5.5, 10.5)
    assert int(((np.array(values) >= q1) & (np.array(values) <= q3)).sum()) == 5  # five of 11 are not half
    text = summary(values, locale)
    assert words in text.replace("\u202f", " ").replace("\xa0", " "), text
    assert HALF_WORDS[locale][1] not in text


def test_exact_halves_are_still_half():
    values = [3.0, 4.0, 5.0, 6.0, 8.0, 9.0, 10.0, 60.0]  # 4 below the median 7, 4 above
    assert _counts(values) == (4, 0, 4)
    assert "half were lower and half were higher" in summary(values)


@pytest.mark.parametrize("n", range(5, 20))
def test_below_twenty_values_half_means_exactly_half(n):
    rng = np.random.default_rng(n)
    for draw in range(6):
        values = np.round(rng.lognormal(2.5, 0.6 + 0.1 * draw, n))  # whole days: ties at the median happen
        below, _, above = _counts(values)
        q1, q3 = np.quantile(values, [0.25, 0.75])
        inside = int(((values >= q1) & (values <= q3)).sum())
        for locale, (median_half, range_half) in HALF_WORDS.items():
            text = summary(values, locale)
            if median_half in text:
                assert 2 * below == n and 2 * above == n, (values, text)
            if range_half in text:
                assert 2 * inside == n, (values, text)


def test_most_values_are_fairly_low_only_when_the_median_is_in_the_lower_half_of_the_range():
    import dataclasses

    values = np.round(np.random.default_rng(3).lognormal(3.0, 0.7, 400))
    found = describe(values, lower_bound=0)
    assert found.shape.label == "right-skewed"
    middle = (values.min() + values.max()) / 2
    assert np.median(values) < middle  # numpy: most values lie in the lower half of the range
    words = {"en_US": "Most values", "es_ES": "La mayoría", "fr_FR": "La plupart"}
    for locale, word in words.items():
        assert word in narrate(found, "memo", locale).plain_text(), locale
    # The same skew judgement with the median moved above the middle of the range: "most are low" is not
    # licensed, and no shape sentence says it.
    moved = dataclasses.replace(found, center=dataclasses.replace(found.center, median=float(middle) + 1))
    for locale, word in words.items():
        text = narrate(moved, "memo", locale).plain_text()
        assert not any(words_ in text for words_ in (word, "fairly low", "assez basses", "bastante bajos")), text


def test_round_numbers_are_given_their_share_not_most():
    import dataclasses

    rng = np.random.default_rng(8)
    values = np.round(rng.normal(40, 12, 400))
    rounded = rng.random(400) < 0.5
    values[rounded] = np.round(values[rounded] / 10) * 10
    found = describe(values, name="minutes", unit="minutes")
    heaping = found.quality.get("heaping")
    share = np.mean(values % 10 == 0)  # numpy: 55.5% of the values are multiples of 10, far from "most"
    assert heaping is not None and heaping.share == pytest.approx(share) and 0.5 < share < 0.6
    # The shape sentence that names the round numbers (said for values whose peaks the rounding explains).
    peaked = dataclasses.replace(found, shape=dataclasses.replace(found.shape, label="bimodal"))
    for locale, words in (("en_US", "Of all values, 56% were recorded as round numbers (multiples of 10)"),
                          ("es_ES", "El 56 % de los valores se registraron como números redondos (múltiplos de 10)"),
                          ("fr_FR", "Sur l'ensemble des valeurs, 56 % ont été notées en nombres ronds")):
        text = narrate(peaked, "memo", locale).section("summary").paragraphs[0].text
        assert words in text.replace("\u202f", " ").replace("\xa0", " "), (locale, text)
        assert "Most values were recorded" not in text and "La mayoría" not in text and "La plupart" not in text
