"""Sentences a hostile reviewer found doubtful, each checked against an outside reference.

The values are generated with fixed seeds from distributions whose facts scipy.stats gives (the
reference implementation named beside each check); the decision each sentence depends on is
re-derived here with scipy or numpy, never with narrator's own code.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from narrator.engine.describe import describe
from narrator.phrasing import narrate

Z75 = stats.norm.ppf(0.75)  # scipy.stats.norm: the upper quartile of the standard normal, 0.6745


def memo(findings, locale="en_US") -> str:
    return narrate(findings, "memo", locale).section("summary").paragraphs[0].text


def every_text(findings, locale="en_US") -> str:
    return "\n".join(narrate(findings, audience, locale).plain_text() for audience in ("memo", "methods", "full"))


EXCESS_WORDS = {"en_US": "than usual in data of this shape", "es_ES": "de lo habitual en datos con esta forma",
                "fr_FR": "que d'habitude"}


def _quartile_normal(values):
    """scipy.stats.norm with the values' type 7 quartiles (numpy.quantile's default)."""
    q1, q3 = np.quantile(values, [0.25, 0.75])
    return stats.norm(loc=(q1 + q3) / 2, scale=(q3 - q1) / (2 * Z75)), q1, q3


# ------------------------------------------------------------------ 1. an expected count from a shape that fits


def test_zero_heavy_counts_give_no_expected_count_from_a_shape_that_cannot_follow_the_zeros():
    # 57 % of clients made no visit, the others a Poisson(2) number (scipy.stats.poisson's share at 0 is e^-2).
    rng = np.random.default_rng(29)
    values = np.where(rng.random(300) < 0.57, 0.0, rng.poisson(2, 300).astype(float))
    shape, q1, q3 = _quartile_normal(values)
    at_zero = np.mean(values == 0)
    # The reference: the normal matched to the quartiles (Q1 = 0, Q3 = 1) gives the whole numbers recorded at 0
    # (from -0.5 to 0.5) far less than their share: more than 5 points less, and a one-sided binomial test
    # (scipy.stats.binom) of the count at 0 against the shape's share gives p < 0.001.
    held = shape.cdf(0.5) - shape.cdf(-0.5)
    count = int(np.sum(values == 0))
    assert (q1, q3) == (0, 1) and at_zero - held > 0.05
    assert stats.binom.sf(count - 1, values.size, held) < 0.001
    findings = describe(values, name="visits", lower_bound=0)
    assert findings.unusual.fitted_shape is None and not findings.unusual.excess
    assert findings.unusual.expected_beyond_fences is None
    for locale, words in EXCESS_WORDS.items():
        assert words not in every_text(findings, locale), locale


def test_spike_at_an_end_beside_a_cluster_gives_no_expected_count():
    # 12 % zeros beside Poisson(15) counts: the quartiles sit in the counts, and the zeros lie beyond the lower
    # fence; the quartile-matched normal (scipy.stats.norm) gives the values at 0 almost none of their share.
    rng = np.random.default_rng(5)
    values = np.where(rng.random(300) < 0.12, 0.0, rng.poisson(15, 300).astype(float))
    shape, q1, q3 = _quartile_normal(values)
    assert q1 > 0 and shape.cdf(0.5) - shape.cdf(-0.5) < 0.01 < np.mean(values == 0) / 2
    findings = describe(values, name="visits")
    assert not findings.unusual.excess and findings.unusual.fitted_shape is None
    assert EXCESS_WORDS["en_US"] not in every_text(findings)


def test_an_excess_is_still_said_when_the_shape_fits_and_its_count_is_scipys():
    # A normal bulk with a few values from a wider normal (no value shared by many): the quartile-matched normal
    # follows the bulk, and more values lie beyond Tukey's fences than it predicts.
    rng = np.random.default_rng(3)
    values = np.round(np.concatenate([rng.normal(50, 10, 400), rng.normal(50, 45, 25)]), 1)
    findings = describe(values, name="score")
    unusual = findings.unusual
    assert unusual.fitted_shape == "normal" and unusual.excess
    shape, q1, q3 = _quartile_normal(values)
    lower, upper = q1 - 1.5 * (q3 - q1), q3 + 1.5 * (q3 - q1)  # Tukey 1977
    assert unusual.expected_beyond_fences == pytest.approx(values.size * (shape.cdf(lower) + shape.sf(upper)),
                                                           rel=1e-9)
    beyond = int(np.sum((values < lower) | (values > upper)))
    assert unusual.count_beyond_fences == beyond
    assert f"{beyond} against about {unusual.expected_beyond_fences:.0f}" in memo(findings)


# ------------------------------------------------------------------ 2. the rest's lead by the whole's shape rule


def test_the_lead_without_the_flagged_values_reads_the_tails_as_the_shape_label_does():
    # Rounded gamma(3) waits (scipy.stats.gamma(3) has skewness 2 / sqrt(3)): without the flagged values the
    # rest still has G1 0.64 and a long right tail (Hinkley's skewness at P5 and P95, Hinkley 1975, above 0.1),
    # though its quartiles tie into Bowley's 0.00. The shape label's rule calls such values right-skewed, so the
    # lead without the flagged values stays the median; before, the rest's check ignored the tails and said the
    # mean, against the label the report gives the same kind of values.
    values = np.round(np.random.default_rng(1).gamma(3.0, 5.0, 300))
    findings = describe(values, name="wait", unit="days")
    flagged = findings.outliers
    rest = values[(values >= flagged.lower_fence) & (values <= flagged.upper_fence)]
    assert rest.size == findings.without_outliers.n
    p5, q1, median, q3, p95 = np.quantile(rest, [0.05, 0.25, 0.5, 0.75, 0.95])  # type 7, numpy's default
    g1 = stats.skew(rest, bias=False)  # Joanes & Gill's G1
    assert g1 >= 0.5 and abs((q3 + q1 - 2 * median) / (q3 - q1)) < 0.1
    assert (p95 + p5 - 2 * median) / (p95 - p5) > 0.1
    assert stats.skewtest(rest).pvalue < 0.05  # D'Agostino's test: at least moderate evidence
    assert findings.center.lead == "median"
    assert findings.without_outliers.lead_without == "median" and not findings.without_outliers.lead_would_change
    assert "would be the mean" not in every_text(findings)


# ------------------------------------------------------------------ 3. a whole population: no test decides


def test_a_whole_population_moderately_skewed_is_clearly_skewed_everywhere_the_report_says_so():
    # 48 offices' complaints, every office (a whole population), from a gamma(3) shape: G1 = 0.57 is the
    # population's own skewness (scipy.stats.skew, Joanes & Gill's G1), moderate by Bulmer's (1979) cut points.
    # D'Agostino's test (scipy.stats.skewtest) gives p near 0.1, and that p had decided "not clearly skewed"
    # (Tukey's fences, the mean) while the methods said no test is needed for a whole population.
    rng = np.random.default_rng(20261212)
    rng.random(240), rng.poisson(3, 240)  # the draws tests/phrasing/test_phrasing.py's golden texts make first
    rng.choice(np.arange(1.0, 21.0), size=200, p=np.array([30, 35, 15, 10] + [10 / 16] * 16) / 100)
    values = rng.gamma(3.0, 20.0, 48).round(1)
    g1 = stats.skew(values, bias=False)
    assert 0.5 <= g1 < 1.0 and stats.skewtest(values).pvalue > 0.05
    findings = describe(values, name="complaints", population=True)
    assert findings.shape.label == "right-skewed" and findings.shape.strength == "moderate"
    text = narrate(findings, "full").plain_text()
    assert "moderately right-skewed" in text and "not clearly skewed" not in text
    assert findings.outliers.rule == "adjusted" and findings.center.lead == "median"
    assert "so no test is needed and a skew of moderate or strong size is a clear one" in text
    # The same values as a sample keep the test: weak evidence, hedged, and not clearly skewed.
    sample = describe(values, name="complaints")
    assert sample.outliers.rule == "tukey" and "may be moderately right-skewed" in narrate(sample, "full").plain_text()


# ------------------------------------------------------------------ 4. many values at a declared highest value


@pytest.mark.parametrize("share", [0.34, 0.55])
def test_many_full_scores_give_the_middle_value_of_the_others(share):
    # Test scores out of 100, a share of them full marks (the declared upper bound): the whole's upper quartile is
    # 100, and with more than half at 100 its middle value is 100 too. The middle of the others (numpy's median)
    # is what a reader asks for, as for many values at 0 (memo.above_min).
    rng = np.random.default_rng(11)
    values = np.clip(np.round(rng.normal(70, 15, 300)), 0, 99)
    values[rng.random(300) < share] = 100
    others = values[values < 100]
    findings = describe(values, name="score", lower_bound=0, upper_bound=100)
    assert findings.below_maximum.count == others.size
    assert findings.below_maximum.median == pytest.approx(float(np.median(others)), abs=1e-12)
    expected = {"en_US": f"Among the {others.size} values below 100, the middle one was {np.median(others):.0f}.",
                "es_ES": f"Entre los {others.size} valores por debajo de 100, el valor central fue "
                         f"{np.median(others):.0f}.",
                "fr_FR": f"Parmi les {others.size} valeurs en dessous de 100, la valeur du milieu était de "
                         f"{np.median(others):.0f}."}
    for locale, sentence in expected.items():
        assert sentence in memo(findings, locale), (locale, memo(findings, locale))
    # The share at the top is said first, then the others' middle value.
    text = memo(findings)
    assert text.index("were 100, the highest possible value") < text.index("below 100")
    # Not said when 100 is no declared ceiling: a highest wait is one more wait.
    assert "below 100" not in memo(describe(values, name="score"))


# ------------------------------------------------------------------ review: a bound the interval may reach


def test_alike_groups_bound_is_no_more_than_an_interval_end_it_may_equal():
    # Two offices' whole-day waits from one gamma(3, 5) shape. The Hodges-Lehmann interval (Hollander, Wolfe &
    # Chicken 2014, ch. 4: the order statistics of the m n differences at the Mann-Whitney rank, here by its normal
    # approximation with scipy.stats.norm) ends on whole days, -3 and 1, so its largest end in size is 3 itself:
    # "likely less than 3 either way" excluded a difference the interval holds.
    from helpers.grouped import grouped_set

    from narrator.phrasing.sets import SetOptions, narrate_set

    rng = np.random.default_rng(21)
    rng.choice([1, 2, 3, 4, 5], size=250, p=[.05, .1, .2, .35, .3])
    north, south = np.round(rng.gamma(3, 5, 120)), np.round(rng.gamma(3, 5, 130))
    differences = np.sort((south[:, None] - north[None, :]).ravel())
    m, n = north.size, south.size
    k = int(np.floor(m * n / 2 - stats.norm.ppf(0.975) * np.sqrt(m * n * (m + n + 1) / 12)))
    assert (differences[k - 1], differences[m * n - k]) == (-3, 1)
    findings_set = grouped_set({"North": north, "South": south}, name="days", unit="days", group_by="office",
                               threshold=10)
    difference = findings_set.variables[0].comparison.pairs[0].difference
    assert (difference.low, difference.high, difference.verdict) == (-3, 1, "alike")
    expected = {"en_US": "is likely no more than 3 days either way.",
                "es_ES": "probablemente no supera 3 días en uno u otro sentido.",
                "fr_FR": "est probablement d'au plus 3 jours, dans un sens comme dans l'autre."}
    for locale, words in expected.items():
        narrative = narrate_set(findings_set, SetOptions(audience="memo", locale=locale))
        text = narrative.plain_text().replace("\u2019", "'").replace("\u00a0", " ").replace("\u202f", " ")
        assert words in text, (locale, text[:600])
        assert "less than 3" not in text and "menor de 3" not in text and "inférieur à 3" not in text


# ------------------------------------------------------------------ review: fences that moved past tied values


def test_a_refresh_whose_fence_moved_past_tied_values_prints_the_fences_apart():
    # Whole-day waits from a gamma(2.5, 6) shape; the refresh adds two values and changes one. The skew-adjusted
    # lower fence (Hubert & Vandervieren 2008) moves from below 4 days to above it, past every wait of 4 days,
    # and the count outside the fences more than doubles; at memo rounding both fences printed "4 days".
    from narrator.history.changes import compare
    from narrator.phrasing.what_changed import changes_section

    old_values = np.round(np.random.default_rng(8).gamma(2.5, 6, 300))
    new_values = old_values.copy()
    new_values[5] += 1
    new_values = np.append(new_values, [12.0, 14.0])
    old = describe(old_values, name="wait", unit="days", lower_bound=0)
    new = describe(new_values, name="wait", unit="days", lower_bound=0)
    old_low, new_low = old.outliers.lower_fence, new.outliers.lower_fence
    assert old_low < 4 < new_low and int(np.sum(new_values == 4)) > 0  # numpy: the tied waits it moved past
    assert (old.outliers.count, new.outliers.count) == (int(np.sum((old_values < old_low)
                                                                   | (old_values > old.outliers.upper_fence))),
                                                        int(np.sum((new_values < new_low)
                                                                   | (new_values > new.outliers.upper_fence))))
    text = " ".join(p.text for p in changes_section(compare(old, new), old, new).paragraphs)
    assert f"they were {old_low:.1f} and " in text and f"are now {new_low:.1f} and " in text, text


# ------------------------------------------------------------------ review: lists of whole numbers


@pytest.mark.parametrize("locale", ["es_ES", "fr_FR"])
def test_a_list_of_whole_numbers_keeps_the_locales_list_commas(locale):
    # CLDR's list pattern through babel (babel.lists.format_list) is the reference: "4, 5 y 9", "4, 5 et 9". The
    # semicolon (CLDR's list number symbol) is for numbers that hold a decimal comma ("0,25; 0,50 y 0,75").
    from babel.lists import format_list

    from narrator.phrasing.numbers import NumberFormatter

    fmt = NumberFormatter(locale)
    assert fmt.number_list(["4", "5", "9"]) == format_list(["4", "5", "9"], locale=locale)
    assert ";" in fmt.number_list(["0,25", "0,50", "0,75"])
    text = memo(describe([4.0, 9.0, 5.0], name="v"), locale)
    assert format_list(["4", "5", "9"], locale=locale) in text, text


# ------------------------------------------------------------------ 5. amounts beyond the histogram's axis


def test_zero_heavy_amounts_caption_counts_the_paid_claims_beyond_the_axis():
    # Paid claims: 60 % paid nothing, the others lognormal amounts (scipy.stats.lognorm's long right tail). When the
    # histogram's axis stops short of the largest amounts, the caption says how many lie beyond it and how far they
    # reach, in every language; the count is numpy's.
    from narrator.engine.window import histogram_window
    from narrator.phrasing.context import make_context
    from narrator.phrasing.figure_text import histogram_text

    rng = np.random.default_rng(5)
    values = np.where(rng.random(500) < 0.6, 0.0, np.round(rng.lognormal(6.5, 1.2, 500), 2))
    findings = describe(values, name="paid", unit="EUR")
    window = histogram_window(findings)
    assert window is not None and window.hidden_high == int(np.sum(values > window.high)) > 0
    words = {"en_US": f"{window.hidden_high} values larger", "es_ES": f"no se dibujan {window.hidden_high} valores",
             "fr_FR": f"{window.hidden_high} valeurs plus grandes"}
    for locale, expected in words.items():
        caption = histogram_text(make_context(findings, locale, currency=None, unit=None, name=None)).caption
        assert expected in caption, (locale, caption)
