"""Cases a statistician's review of the reports found: each sentence, table row or number here was
false or unlicensed for its data before the fix.

Every data set is invented for the test (fixed seeds or typed in), in scenarios of our own; each check
recomputes the fact it relies on with numpy or scipy (reference implementations) from the same values.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from narrator.engine.describe import describe
from narrator.phrasing import narrate
from narrator.phrasing.licences import TINY_N


def assert_claims_hold(values, options) -> None:
    """The independent checker of tests/claims finds no false claim in any audience, in English or Spanish."""
    from claims.corpus import Case
    from claims.harness import check_case

    assert check_case(Case("invented", 0, np.asarray(values, dtype=float), dict(options))) == []


def _table(narrative, key: str):
    return next(table for section in narrative.sections for table in section.tables if table.key == key)


def test_methods_name_no_shape_rule_when_the_shape_was_not_judged():
    # Invented: five households' water use in litres; too few values to judge a shape.
    values = np.array([212.0, 188.0, 240.0, 199.0, 205.0])
    findings = describe(values, name="water use")
    assert findings.shape.label == "undetermined"
    for locale, words in (("en_US", ("Skewness is", "Joanes", "Bulmer")), ("es_ES", ("La asimetría es", "Joanes"))):
        text = narrate(findings, "methods", locale).plain_text()
        for word in words:
            assert word not in text, (locale, word)
    # With 8 values or more the rule is stated, and cited.
    judged = describe(np.random.default_rng(2).gamma(3, 60, 40).round(), name="water use")
    assert "Skewness is the adjusted Fisher-Pearson coefficient G1" in narrate(judged, "methods").plain_text()
    assert_claims_hold(values, {})


@pytest.mark.parametrize("values", [[49.0, 51.0], [49.0, 51.0, 50.0], [3.0, 9.0, 4.0, 12.0, 7.0]])
def test_the_key_figures_call_q1_to_q3_the_middle_half_only_when_half_the_values_lie_there(values):
    # Invented repair hours. Two values have no value between Q1 and Q3 (type 7: 49.5 and 50.5).
    x = np.asarray(values)
    q1, q3 = np.percentile(x, [25, 75])  # numpy's linear method, Hyndman & Fan type 7
    share = np.mean((x >= q1) & (x <= q3))
    findings = describe(x, name="repair hours")
    labels = [row[0] for row in _table(narrate(findings, "memo"), "key_figures").rows]
    assert "Middle half of values" not in labels, share
    if len(x) < TINY_N:
        # Fewer than five values are listed one by one in the memo; their quartiles describe nothing.
        assert not any("quartile" in label for label in labels)
    else:
        assert "Lower and upper quartiles" in labels


def test_the_key_figures_give_no_quartile_row_for_one_value_and_the_middle_half_for_many():
    one = [row[0] for row in _table(narrate(describe([49.0], name="litres"), "memo"), "key_figures").rows]
    assert not any("quartile" in label or "Middle half" in label for label in one)
    x = np.random.default_rng(5).normal(40, 6, 300).round(1)
    q1, q3 = np.percentile(x, [25, 75])
    assert abs(np.mean((x >= q1) & (x <= q3)) - 0.5) < 0.05
    many = [row[0] for row in _table(narrate(describe(x, name="litres"), "memo"), "key_figures").rows]
    assert "Middle half of values" in many


def test_a_bin_grid_of_whole_numbers_counts_each_width_once():
    # Invented visits per client: 60 % made none; the rule's width rounds to 1, so half of it is 1 too.
    rng = np.random.default_rng(7)
    values = np.where(rng.random(300) < 0.62, 0, rng.poisson(3, 300) + 1).astype(float)
    findings = describe(values, name="visits", lower_bound=0)
    grid = findings.shape.bin_sensitivity
    assert len(set(grid.widths)) == len(grid.widths) == len(grid.peak_counts)
    text = narrate(findings, "full").section("shape").paragraphs[0].text
    histograms = len(grid.widths) * len(grid.offsets)
    assert f"Across {histograms} histograms (bin widths 1 and 2," in text
    assert_claims_hold(values, {"lower_bound": 0})


def test_a_t_interval_reaching_past_the_values_gives_way_to_the_bootstrap():
    # Invented grant awards in dollars: lognormal, with three very large awards.
    rng = np.random.default_rng(7)
    values = np.round(rng.lognormal(4, 0.8, 250), 2)
    values[:3] = [250000.0, 90000.0, 41000.0]
    t_low, _ = stats.t.interval(0.95, values.size - 1, loc=values.mean(), scale=stats.sem(values))
    assert t_low < values.min()  # scipy's t interval reaches below the smallest award
    findings = describe(values, name="award", lower_bound=0)
    interval = findings.intervals.mean
    assert interval.method == "bca-bootstrap" and findings.intervals.mean_method_reason == "t_past_range_bootstrap"
    assert values.min() <= interval.low < values.mean() < interval.high <= values.max()
    methods = narrate(findings, "methods").section("methods").paragraphs[0].text
    assert "because Student's t interval reached beyond the smallest or largest value" in methods
    assert "porque el intervalo t de Student" in narrate(findings, "methods", "es_ES").plain_text()
    # Symmetric data keep the t interval.
    plain = describe(rng.normal(50, 5, 200), name="minutes")
    assert plain.intervals.mean.method == "t" and plain.intervals.mean_method_reason == "default_t"
    assert_claims_hold(values, {"lower_bound": 0})


def test_a_pile_at_the_lower_bound_is_not_called_rounding():
    # Invented days to a first visit: a third on the day itself (0), the rest recorded to a tenth of a day.
    rng = np.random.default_rng(7)
    values = np.round(np.where(rng.random(400) < 0.33, 0, rng.exponential(10, 400)), 1)
    rest = values[values > 0]
    whole = np.isclose(rest, np.round(rest))
    assert stats.binomtest(int(whole.sum()), rest.size, 0.1, alternative="greater").pvalue > 0.001
    findings = describe(values, name="days", lower_bound=0)
    assert not findings.quality.has("heaping") and findings.quality.has("floor")
    assert "rounded when recorded" not in narrate(findings, "full").plain_text()
    # Values heaped at multiples of 5 are still flagged, with a pile at the bottom or not.
    heaped = np.round(rng.gamma(4, 8, 400) / 5) * 5
    assert describe(heaped, name="hours").quality.has("heaping")
    assert describe(np.concatenate([np.zeros(60), heaped + 5]), name="hours").quality.has("heaping")
    assert_claims_hold(values, {"lower_bound": 0})


def test_two_separated_clusters_are_called_probably_bimodal_not_limited_evidence():
    # Invented call-handling minutes: 150 phone calls near 20 minutes and 120 walk-ins near 60.
    rng = np.random.default_rng(7)
    values = np.concatenate([rng.normal(20, 3, 150), rng.normal(60, 5, 120)]).round(1)
    g1, g2 = stats.skew(values, bias=False), stats.kurtosis(values, bias=False)
    n = values.size
    bc = (g1**2 + 1) / (g2 + 3 * (n - 1) ** 2 / ((n - 2) * (n - 3)))  # Pfister et al. (2013)
    assert bc > 5 / 9
    findings = describe(values, name="minutes")
    assert findings.shape.label == "bimodal" and findings.shape.bin_sensitivity.sensitive
    text = narrate(findings, "full").plain_text()
    assert "The distribution is probably bimodal (two peaks)." in text
    assert "the evidence is limited" not in text
    assert_claims_hold(values, {})


def test_the_middle_half_place_of_a_users_document_holds_a_range_only_when_half_the_values_lie_there():
    # The place sits in the user's own sentence ("half of these families waited [middle-half]").
    from narrator.history.sidecar import VariableFindings
    from narrator.phrasing.places import PlaceWords

    def place(values, locale="en_US"):
        findings = describe(np.asarray(values, dtype=float), name="wait", unit="days")
        return PlaceWords(VariableFindings(findings), locale=locale).text("middle-half")

    # Invented: two waits, no value between Q1 and Q3 (49.5 and 50.5 by numpy's linear method).
    two = place([49, 51])
    assert two.kind == "note" and "too few values" in two.phrase
    assert place([49, 51], "es_ES").phrase.startswith("no se da")
    # Invented visits: 62 % at 0, so 0 to Q3 holds far more than half.
    rng = np.random.default_rng(7)
    visits = np.where(rng.random(300) < 0.62, 0, rng.poisson(3, 300) + 1)
    q1, q3 = np.percentile(visits, [25, 75])
    assert np.mean((visits >= q1) & (visits <= q3)) > 0.6
    assert place(visits).kind == "note" and "tie at a quartile" in place(visits).phrase
    # Invented waits spread out: the range, with the unit once.
    waits = rng.gamma(4, 5, 300).round()
    shown = place(waits)
    assert shown.kind == "phrase" and shown.phrase.endswith("days") and " to " in shown.phrase


def _docx_text(path) -> str:
    import docx

    document = docx.Document(str(path))
    parts = [paragraph.text for paragraph in document.paragraphs]
    for table in document.tables:
        for row in table.rows:
            parts.append(" | ".join(cell.text for cell in row.cells))
    return "\n".join(parts)


@pytest.mark.parametrize("locale", ["en_US", "es_ES"])
def test_a_report_with_a_group_too_small_to_show_never_says_no_rows_were_left_out(tmp_path, locale):
    # Invented days to first payment at five offices, one with 8 applications (below the threshold of 10).
    import pandas as pd

    from narrator.cli import main

    rng = np.random.default_rng(3)
    offices = np.repeat(["north", "south", "east", "west", "harbour"], [80, 80, 80, 80, 8])
    days = np.round(rng.gamma(5, 4, offices.size), 1)
    data = tmp_path / "offices.csv"
    pd.DataFrame({"office": offices, "days": days}).to_csv(data, index=False)
    out = tmp_path / "offices.docx"
    assert main(["draft", str(data), "--column", "days", "--group-by", "office", "--audience", "full",
                 "--locale", locale, "-o", str(out), "--quiet"]) == 0
    text = _docx_text(out)
    shown = 320
    if locale == "en_US":
        for false in ("no rows were left out", "No rows were left out", "Left out for other reasons | 0\n",
                      "Rows left out | 0\n", "Rows read | "):
            assert false not in text + "\n", false
        assert f"n = {shown}, in the groups shown" in text
        assert f"Rows read, in the groups shown | {shown}" in text
        assert "Fewest values a group needs to be shown | 10" in text
    else:
        assert "no se dejó fuera ninguna fila" not in text.lower()
        assert f"n = {shown}, en los grupos que se muestran" in text
    # The small group's size is never given: not its rows (8), nor the file's (328), nor its name.
    assert "harbour" not in text and "328" not in text
    assert not any(line.strip().endswith("| 8") for line in text.splitlines())


def test_the_facts_table_words_the_reason_for_leading_with_the_mean():
    # Invented: eight repair hours, symmetric; the engine's reason code is "not_skewed".
    from narrator.phrasing.facts import facts_table

    findings = describe(np.array([4.0, 5.0, 5.5, 6.0, 6.0, 6.5, 7.0, 8.0]), name="hours")
    assert findings.center.lead == "mean" and findings.center.lead_reasons == ("not_skewed",)
    for locale in ("en_US", "es_ES"):
        text = str(facts_table(findings, locale))
        assert "not_skewed" not in text, locale


def test_a_constant_column_is_not_said_to_have_other_values_to_flag():
    # Invented: forty inspections all scored 7; Tukey's fences fall back on an IQR of 0.
    findings = describe(np.full(40, 7.0), name="score")
    assert findings.outliers.fallback_reason == "iqr_zero"
    for locale, false in (("en_US", "every other value"), ("es_ES", "cualquier otro valor"),
                          ("fr_FR", "toutes les autres valeurs")):
        assert false not in narrate(findings, "full", locale).plain_text(), locale
    assert_claims_hold(np.full(40, 7.0), {})
