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
