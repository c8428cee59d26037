"""Outlier rules against direct computations with numpy, scipy and statsmodels."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats
from statsmodels.stats.stattools import medcouple as statsmodels_medcouple

from narrator.engine.outliers import MEAN_AD_CONSTANT, detect_outliers, esd_critical_values
from narrator.engine.robust import medcouple
from narrator.errors import NarratorError
from narrator.findings import Outliers


def summaries(values: np.ndarray) -> dict[str, float]:
    """The caller's summaries, computed here with numpy (Hyndman-Fan type 7 quartiles)."""
    q1, median, q3 = np.quantile(values, [0.25, 0.5, 0.75])
    return {
        "q1": float(q1),
        "median": float(median),
        "q3": float(q3),
        "medcouple": medcouple(np.sort(values)) if values.size else None,
        "mad": float(stats.median_abs_deviation(values, scale=1.0)) if values.size else 0.0,
        "mean": float(np.mean(values)) if values.size else math.nan,
        "sd": float(np.std(values, ddof=1)) if values.size > 1 else math.nan,
    }


def run(values, rule, *, rows=None, skew_clear=False, **options) -> Outliers:
    values = np.asarray(values, dtype=float)
    rows = np.arange(2, values.size + 2) if rows is None else np.asarray(rows)
    return detect_outliers(values, rows, rule=rule, skew_clear=skew_clear, **summaries(values), **options)


def flagged_by_mask(values: np.ndarray, rows: np.ndarray, mask: np.ndarray) -> tuple[tuple, tuple]:
    order = np.argsort(values[mask], kind="stable")
    return tuple(values[mask][order].tolist()), tuple(rows[mask][order].tolist())


@pytest.fixture
def skewed_sample() -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(20260101)
    values = rng.lognormal(mean=1.0, sigma=0.9, size=1000)
    rows = rng.permutation(np.arange(2, 1002))  # rows in no particular order
    return values, rows


def test_tukey_fences_against_numpy_quantiles(skewed_sample):
    # Tukey (1977): fences Q1 - 1.5 IQR and Q3 + 1.5 IQR, far out beyond 3 IQR; quartiles by numpy.quantile.
    values, rows = skewed_sample
    found = run(values, "tukey", rows=rows)
    q1, q3 = np.quantile(values, [0.25, 0.75])
    iqr = q3 - q1
    assert found.lower_fence == pytest.approx(q1 - 1.5 * iqr, rel=1e-14)
    assert found.upper_fence == pytest.approx(q3 + 1.5 * iqr, rel=1e-14)
    assert found.far_lower_fence == pytest.approx(q1 - 3 * iqr, rel=1e-14)
    assert found.far_upper_fence == pytest.approx(q3 + 3 * iqr, rel=1e-14)
    outside = (values < q1 - 1.5 * iqr) | (values > q3 + 1.5 * iqr)
    far = (values < q1 - 3 * iqr) | (values > q3 + 3 * iqr)
    assert (found.values, found.rows) == flagged_by_mask(values, rows, outside)
    assert (found.far_out_values, found.far_out_rows) == flagged_by_mask(values, rows, far)
    assert found.count == int(outside.sum()) > 0
    assert found.count_high == int((values > q3 + 1.5 * iqr).sum())
    assert found.count_low == found.count - found.count_high
    assert list(found.values) == sorted(found.values)
    assert found.constants == {"coefficient": 1.5, "far_coefficient": 3.0}
    assert (found.rule, found.chosen_by, found.auto_reason, found.note) == ("tukey", "user", None, None)


def test_values_on_a_fence_are_not_flagged():
    # Tukey (1977) flags values beyond the fences. Q1 = 2, Q3 = 4 (numpy type 7), upper fence 7.
    values = np.array([1.0, 2.0, 2.0, 3.0, 3.0, 3.0, 4.0, 7.0, 7.5])
    q1, q3 = np.quantile(values, [0.25, 0.75])
    assert q3 + 1.5 * (q3 - q1) == 7.0
    found = run(values, "tukey")
    assert found.values == (7.5,)


def test_adjusted_boxplot_fences_by_hand(skewed_sample):
    # Hubert & Vandervieren (2008): for MC >= 0, [Q1 - 1.5 e^(-4 MC) IQR, Q3 + 1.5 e^(3 MC) IQR];
    # medcouple from statsmodels (matrix version) as the outside reference.
    values, rows = skewed_sample
    found = run(values, "adjusted", rows=rows)
    q1, q3 = np.quantile(values, [0.25, 0.75])
    iqr = q3 - q1
    mc = float(statsmodels_medcouple(values, **_statsmodels_exact()))
    assert mc > 0
    assert found.constants["medcouple"] == pytest.approx(mc, abs=1e-12)
    lower = q1 - 1.5 * math.exp(-4 * mc) * iqr
    upper = q3 + 1.5 * math.exp(3 * mc) * iqr
    assert found.lower_fence == pytest.approx(lower, rel=1e-12)
    assert found.upper_fence == pytest.approx(upper, rel=1e-12)
    assert found.far_lower_fence == pytest.approx(q1 - 3 * math.exp(-4 * mc) * iqr, rel=1e-12)
    assert found.far_upper_fence == pytest.approx(q3 + 3 * math.exp(3 * mc) * iqr, rel=1e-12)
    assert (found.values, found.rows) == flagged_by_mask(values, rows, (values < lower) | (values > upper))


def test_adjusted_boxplot_for_negative_medcouple():
    # Hubert & Vandervieren (2008): for MC < 0, [Q1 - 1.5 e^(-3 MC) IQR, Q3 + 1.5 e^(4 MC) IQR].
    rng = np.random.default_rng(9)
    values = -rng.lognormal(sigma=0.8, size=400)
    found = run(values, "adjusted")
    q1, q3 = np.quantile(values, [0.25, 0.75])
    mc = found.constants["medcouple"]
    assert mc < 0
    assert found.lower_fence == pytest.approx(q1 - 1.5 * math.exp(-3 * mc) * (q3 - q1), rel=1e-12)
    assert found.upper_fence == pytest.approx(q3 + 1.5 * math.exp(4 * mc) * (q3 - q1), rel=1e-12)
    assert (found.constants["lower_exponent"], found.constants["upper_exponent"]) == (-3.0, 4.0)


def test_adjusted_flags_far_fewer_than_tukey_on_skewed_data():
    # Hubert & Vandervieren (2008), main finding: on skewed data Tukey's fences flag many regular
    # points in the long tail; the adjusted boxplot does not. Lognormal(0, 1), true outliers: none.
    rng = np.random.default_rng(314)
    values = rng.lognormal(sigma=1.0, size=2000)
    tukey = run(values, "tukey")
    adjusted = run(values, "adjusted")
    assert tukey.count > 0.05 * values.size  # roughly 7-8 % for this distribution
    assert adjusted.count < 0.4 * tukey.count
    assert adjusted.upper_fence > tukey.upper_fence


def test_adjusted_equals_tukey_when_the_medcouple_is_zero():
    # With MC = 0 every e^(k MC) is 1 and the adjusted rule is Tukey's (Hubert & Vandervieren 2008).
    rng = np.random.default_rng(4)
    values = rng.standard_t(3, size=300)
    options = summaries(values)
    options["medcouple"] = 0.0
    rows = np.arange(1, 301)
    adjusted = detect_outliers(values, rows, rule="adjusted", skew_clear=False, **options)
    tukey = detect_outliers(values, rows, rule="tukey", skew_clear=False, **options)
    for name in ("lower_fence", "upper_fence", "far_lower_fence", "far_upper_fence", "values", "rows"):
        assert getattr(adjusted, name) == getattr(tukey, name)
    assert adjusted.count > 0


def test_modified_z_against_scipy_median_abs_deviation():
    # Iglewicz & Hoaglin (1993): M = 0.6745 (x - median) / MAD, flagged when |M| > 3.5;
    # MAD from scipy.stats.median_abs_deviation (unscaled).
    rng = np.random.default_rng(77)
    values = np.concatenate([rng.normal(50, 5, size=300), [10.0, 95.0, 99.0, 120.0]])
    rows = np.arange(2, values.size + 2)
    found = run(values, "modified-z", rows=rows)
    median = np.median(values)
    mad = stats.median_abs_deviation(values, scale=1.0)
    score = 0.6745 * (values - median) / mad
    assert (found.values, found.rows) == flagged_by_mask(values, rows, np.abs(score) > 3.5)
    assert found.count_low == int((score < -3.5).sum())
    assert found.lower_fence == pytest.approx(median - 3.5 * mad / 0.6745, rel=1e-12)
    assert found.upper_fence == pytest.approx(median + 3.5 * mad / 0.6745, rel=1e-12)
    assert found.far_lower_fence is None and found.far_out_values == ()
    assert found.constants == {"threshold": 3.5, "consistency_constant": 0.6745, "mad": pytest.approx(mad)}
    assert found.note is None


def test_modified_z_falls_back_to_the_mean_absolute_deviation_when_mad_is_zero():
    # Common practice when MAD = 0: M = (x - median) / (1.253314 MeanAD), MeanAD = mean |x - median|;
    # 1.253314 = sqrt(pi / 2).
    values = np.array([5.0] * 12 + [4.0, 6.0, 5.5, 30.0, -20.0])
    found = run(values, "modified-z")
    mean_ad = np.mean(np.abs(values - 5.0))
    assert math.sqrt(math.pi / 2) == pytest.approx(MEAN_AD_CONSTANT, abs=1e-6)
    score = (values - 5.0) / (1.253314 * mean_ad)
    assert found.note == "mad_zero_fallback"
    assert found.values == tuple(sorted(values[np.abs(score) > 3.5]))
    assert found.values == (-20.0, 30.0)
    assert found.constants["mean_absolute_deviation"] == pytest.approx(mean_ad)
    assert "consistency_constant" not in found.constants


def test_modified_z_with_no_spread_flags_nothing():
    found = run(np.full(10, 2.5), "modified-z")
    assert (found.count, found.note, found.lower_fence, found.upper_fence) == (0, "no_spread", None, None)


def test_zero_iqr_is_a_degenerate_rule_and_the_modified_z_score_replaces_it():
    # With IQR = 0 Tukey's fences equal the quartiles: every value different from them would be beyond a
    # fence, so the rule is degenerate; the modified z-score (MeanAD fallback, MAD = 0 here) is used instead.
    values = np.array([3.0] * 10 + [2.0, 4.0, 3.5])
    for rule in ("tukey", "adjusted"):
        found = run(values, rule)
        assert (found.rule, found.fallback_from, found.fallback_reason) == ("modified-z", rule, "iqr_zero")
        assert found.note == "mad_zero_fallback"
        mean_ad = np.mean(np.abs(values - 3.0))  # the fences by hand: median +/- 3.5 * 1.253314 * MeanAD
        assert found.upper_fence == pytest.approx(3.0 + 3.5 * MEAN_AD_CONSTANT * mean_ad)
        assert found.count == int(np.sum(np.abs(values - 3.0) > 3.5 * MEAN_AD_CONSTANT * mean_ad))


def test_medcouple_at_its_bound_makes_the_adjusted_rule_degenerate():
    # Generated zero-heavy counts: more than half are 0, so every value below the median ties with it and the
    # medcouple is 1 (statsmodels' medcouple agrees); the adjusted rule's upper fence would sit e^3 IQRs out.
    from statsmodels.stats.stattools import medcouple as reference_medcouple

    rng = np.random.default_rng(41)
    values = np.where(rng.random(240) < 0.62, 0.0, rng.poisson(3.0, 240) + 1.0)
    assert float(reference_medcouple(values)) == pytest.approx(1.0)
    options = summaries(values)
    assert options["medcouple"] == pytest.approx(1.0)
    found = detect_outliers(values, np.arange(2, 242), rule=None, skew_clear=True, **options)
    assert (found.rule, found.chosen_by, found.fallback_from, found.fallback_reason) == (
        "tukey", "auto", "adjusted", "medcouple_at_bound")
    q1, q3 = np.quantile(values, [0.25, 0.75])
    assert found.upper_fence == pytest.approx(q3 + 1.5 * (q3 - q1))
    assert found.count_high == int(np.sum(values > q3 + 1.5 * (q3 - q1)))


def test_a_quartile_tied_with_the_median_makes_the_adjusted_rule_give_way():
    # Ratings 1 to 5 (generated, seed 3): median = Q3 = 4 (numpy's type 7 quantiles) and statsmodels'
    # medcouple is -0.33, driven by the ties at 4: the adjusted upper fence would be 4 + 1.5 e^(-4/3) = 4.4 and
    # every 5 a far-out outlier. By construction our rule hands the data to Tukey's fences (MC = 0).
    from statsmodels.stats.stattools import medcouple as reference_medcouple

    values = np.random.default_rng(3).choice([1, 2, 3, 4, 5], 120, p=[.05, .1, .2, .4, .25]).astype(float)
    q1, median, q3 = np.quantile(values, [0.25, 0.5, 0.75])
    assert (q1, median, q3) == (3.0, 4.0, 4.0)
    assert float(reference_medcouple(values)) == pytest.approx(-1 / 3, abs=0.01)
    found = detect_outliers(values, np.arange(2, 122), rule=None, skew_clear=True, **summaries(values))
    assert (found.rule, found.chosen_by, found.fallback_from, found.fallback_reason) == (
        "tukey", "auto", "adjusted", "quartile_at_median")
    assert (found.lower_fence, found.upper_fence) == (1.5, 5.5)
    assert found.count_high == 0 and found.count_low == int(np.sum(values < 1.5))
    # A named adjusted rule is replaced the same way (as for the other degenerate cases).
    named = detect_outliers(values, np.arange(2, 122), rule="adjusted", skew_clear=True, **summaries(values))
    assert (named.rule, named.fallback_reason) == ("tukey", "quartile_at_median")


def test_too_few_values_run_no_rule():
    for rule in ("tukey", "adjusted", "modified-z", "esd"):
        found = run([1.0, 2.0, 50.0], rule)
        assert (found.count, found.note, found.lower_fence, found.upper_fence) == (
            0,
            "not_run_too_few",
            None,
            None,
        )
        assert found.values == () and found.rows == ()


def test_automatic_choice_and_its_reason(skewed_sample):
    values, rows = skewed_sample
    options = summaries(values)
    skewed = detect_outliers(values, rows, rule=None, skew_clear=True, **options)
    plain = detect_outliers(values, rows, rule=None, skew_clear=False, **options)
    assert (skewed.rule, skewed.chosen_by, skewed.auto_reason) == ("adjusted", "auto", "skewed")
    assert (plain.rule, plain.chosen_by, plain.auto_reason) == ("tukey", "auto", "not_skewed")
    chosen = detect_outliers(values, rows, rule="tukey", skew_clear=True, **options)
    assert (chosen.rule, chosen.chosen_by, chosen.auto_reason) == ("tukey", "user", None)
    assert chosen.values == plain.values


def test_constants_are_plain_floats(skewed_sample):
    # The findings JSON stores constants as numbers; numpy scalars must not leak.
    values, rows = skewed_sample
    for rule in ("tukey", "adjusted", "modified-z", "esd"):
        found = run(values, rule, rows=rows)
        assert all(type(value) is float for value in found.constants.values()), rule
        assert all(type(value) is float for value in found.values)
        assert all(type(row) is int for row in found.rows)


def naive_generalized_esd(values: np.ndarray, r: int, alpha: float) -> tuple[list[float], float | None]:
    """Rosner (1983) step by step, recomputing the mean and SD from scratch each time.

    Returns the flagged values, ascending, and the test statistic R_i of the last significant step.
    """
    remaining = values.copy()
    removed, statistics = [], []
    for _ in range(r):
        deviations = np.abs(remaining - remaining.mean())
        index = int(np.argmax(deviations))
        statistics.append(deviations[index] / remaining.std(ddof=1))
        removed.append(remaining[index])
        remaining = np.delete(remaining, index)
    critical = esd_critical_values(values.size, r, alpha)
    exceed = [i for i in range(r) if statistics[i] > critical[i]]
    count = exceed[-1] + 1 if exceed else 0
    return sorted(removed[:count]), (float(statistics[count - 1]) if count else None)


def test_esd_matches_a_step_by_step_computation():
    # Reference: Rosner (1983) procedure written out directly (mean and SD recomputed at every step).
    rng = np.random.default_rng(1983)
    for trial in range(40):
        n = int(rng.integers(12, 300))
        values = rng.normal(10.0, 2.0, size=n)
        planted = int(rng.integers(0, 5))
        values[:planted] += rng.choice([-1, 1], size=planted) * rng.uniform(6, 20, size=planted)
        r = max(1, n // 10)
        found = run(values, "esd", esd_max_outliers=r)
        expected_values, expected_statistic = naive_generalized_esd(values, r, 0.05)
        assert list(found.values) == pytest.approx(expected_values), trial
        if expected_statistic is None:
            assert "statistic_at_count" not in found.constants
        else:
            assert found.constants["statistic_at_count"] == pytest.approx(expected_statistic, rel=1e-10)
        assert found.constants["max_outliers"] == float(r)


def test_esd_stays_exact_after_removing_a_value_that_dominated_the_sum_of_squares():
    # A value 1e9 SDs out makes downdated sums lose every digit; the result must not change.
    rng = np.random.default_rng(5)
    values = np.concatenate([rng.normal(0.0, 1.0, size=500), [1e9, -3e8, 40.0]])
    rng.shuffle(values)
    found = run(values, "esd", esd_max_outliers=20)
    expected_values, expected_statistic = naive_generalized_esd(values, 20, 0.05)
    assert list(found.values) == pytest.approx(expected_values)
    assert found.constants["statistic_at_count"] == pytest.approx(expected_statistic, rel=1e-10)
    assert {1e9, -3e8, 40.0} <= set(found.values)


def test_esd_bound_defaults_to_a_tenth_and_never_exceeds_n_minus_2():
    rng = np.random.default_rng(8)
    values = rng.normal(size=57)
    assert run(values, "esd").constants["max_outliers"] == 5.0  # floor(0.1 * 57)
    assert run(values[:4], "esd", esd_max_outliers=10).constants["max_outliers"] == 2.0
    assert run(values[:9], "esd").constants["max_outliers"] == 1.0  # at least one


def test_esd_stops_when_the_remaining_values_have_no_spread():
    values = np.array([1.0] * 20 + [9.0])
    found = run(values, "esd", esd_max_outliers=5)
    assert found.values == (9.0,)
    assert found.note == "esd_stopped_no_spread"
    assert found.constants["steps_run"] == 1.0


@pytest.mark.parametrize(
    ("change", "message"),
    [
        ({"rule": "boxplot"}, "unknown outlier rule"),
        ({"rows": np.arange(3)}, "one value per row"),
        ({"coefficient": 4.0}, "coefficient"),
        ({"esd_alpha": 1.5}, "significance level"),
        ({"esd_max_outliers": 0}, "upper bound"),
    ],
)
def test_bad_requests_raise_narrator_error(change, message):
    values = np.arange(10.0)
    arguments = {"rule": "tukey", "rows": np.arange(10), "skew_clear": False, **summaries(values)}
    arguments.update(change)
    if "esd_max_outliers" in change:
        arguments["rule"] = "esd"
    with pytest.raises(NarratorError, match=message):
        detect_outliers(values, arguments.pop("rows"), **arguments)


def test_adjusted_rule_needs_a_medcouple():
    values = np.arange(10.0)
    options = summaries(values)
    options["medcouple"] = None
    with pytest.raises(NarratorError, match="medcouple"):
        detect_outliers(values, np.arange(10), rule="adjusted", skew_clear=True, **options)


def _statsmodels_exact() -> dict[str, bool]:
    import inspect

    parameters = inspect.signature(statsmodels_medcouple).parameters
    return {"use_fast": False} if "use_fast" in parameters else {}
