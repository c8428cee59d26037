"""Unusual values and probable entry errors (narrator.engine.entry_errors), impossible values kept with their values.

References: the design rates are the standard normal's shares beyond Tukey's fences (Tukey 1977),
checked against scipy.stats.norm; the rest are generated data sets (fixed seeds) with planted
values whose answer is known: a reading typed with one digit too many, a decimal point typed one
place too far left, and clean samples that must give no entry error.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from narrator.engine import entry_errors
from narrator.engine.describe import describe
from narrator.findings import dumps, loads
from narrator.reading.columns import read_column


def test_design_rates_match_the_normal_distribution():
    z75 = stats.norm.ppf(0.75)
    inner, far = entry_errors.INNER_RATE, entry_errors.FAR_RATE
    assert inner == pytest.approx(2 * stats.norm.sf(z75 + 1.5 * 2 * z75), rel=1e-9)  # 0.70 %
    assert far == pytest.approx(2 * stats.norm.sf(z75 + 3.0 * 2 * z75), rel=1e-9)  # 2.3e-6
    assert inner == pytest.approx(0.00698, abs=1e-5)


def _readings(seed: int, size: int = 200) -> np.ndarray:
    return np.round(np.random.default_rng(seed).normal(124, 8, size))


def test_a_digit_too_many_is_a_probable_entry_error_with_its_row():
    values = _readings(1)
    values[56] = 1240.0  # row 57 (rows of an array count from 1)
    found = describe(values)
    unusual = found.unusual
    assert unusual.far_out_surprising and 1240.0 in unusual.values
    (error,) = unusual.entry_errors
    assert (error.value, error.row, error.strength) == (1240.0, 57, "probable")
    assert error.reasons == ("ten_times_median", "decimal_shift")
    assert error.suggested == 124.0 and error.shift_digits == 1
    assert unusual.entry_error_reason == "found"


def test_a_decimal_point_one_place_left_is_found_on_the_low_side():
    values = _readings(2)
    values[10] = 12.4
    (error,) = describe(values).unusual.entry_errors
    assert error.value == 12.4 and error.row == 11 and error.shift_digits == -1
    assert error.suggested == pytest.approx(124.0) and "tenth_of_median" in error.reasons


@pytest.mark.parametrize("seed", range(20))
def test_clean_readings_give_no_entry_error_and_no_excess(seed):
    unusual = describe(_readings(seed, 500)).unusual
    assert unusual.entry_errors == () and not unusual.excess


@pytest.mark.parametrize("seed", range(10))
def test_large_gifts_in_skewed_money_are_not_errors(seed):
    # Lognormal gifts: the large ones are what the fitted lognormal shape predicts.
    gifts = np.round(np.random.default_rng(seed).lognormal(4.0, 1.5, 2000), 2)
    unusual = describe(gifts, lower_bound=0).unusual
    assert unusual.fitted_shape == "lognormal"
    assert unusual.entry_errors == () and not unusual.excess


def test_a_gift_typed_with_two_extra_zeros_is_found_in_skewed_money():
    gifts = np.round(np.random.default_rng(3).lognormal(4.0, 1.0, 2000), 2)
    gifts[99] = 54.75 * 1000  # 54.75 typed as 54750
    (error,) = describe(gifts, lower_bound=0).unusual.entry_errors
    assert (error.value, error.row, error.strength) == (54750.0, 100, "probable")
    assert "decimal_shift" in error.reasons


def test_normal_fit_with_tukey_fences_gives_the_normal_rates():
    unusual = describe(_readings(8, 1000)).unusual
    assert unusual.fitted_shape == "normal" and unusual.fence_rule == "tukey"
    assert unusual.expected_beyond_fences == pytest.approx(1000 * entry_errors.INNER_RATE, rel=1e-9)
    assert unusual.expected_far_out == pytest.approx(1000 * entry_errors.FAR_RATE, rel=1e-9)


def test_more_values_beyond_the_fences_than_the_shape_predicts():
    rng = np.random.default_rng(4)
    values = np.concatenate([rng.normal(50, 5, 1000), rng.normal(75, 1, 40)])  # a batch far above the rest
    unusual = describe(values).unusual
    assert unusual.count_beyond_fences >= 40 > 2 * unusual.expected_beyond_fences
    assert unusual.excess and unusual.excess_p < entry_errors.EXCESS_P


def test_tukey_forced_on_skewed_data_names_no_value_as_standing_out():
    values = np.random.default_rng(6).lognormal(2, 1, 2000)
    unusual = describe(values, outlier_rule="tukey").unusual
    assert unusual.reason == "rule_ignores_skew" and unusual.values == () and unusual.count_far_out > 0


def test_modified_z_has_no_far_band():
    assert describe(_readings(3), outlier_rule="modified-z").unusual.reason == "no_far_band"


def test_esd_flags_are_what_stands_out():
    values = _readings(5)
    values[3] = 190.0
    unusual = describe(values, outlier_rule="esd").unusual
    assert unusual.fence_rule == "esd" and 190.0 in unusual.values


def test_too_few_values_run_nothing():
    unusual = describe([1.0, 2.0, 3.0]).unusual
    assert unusual.reason == "not_run" and unusual.entry_error_reason == "not_checked"


def test_unusual_survives_json():
    values = _readings(1)
    values[56] = 1240.0
    found = describe(values)
    assert loads(dumps(found)).unusual == found.unusual


def test_impossible_values_are_kept_with_their_values(tmp_path):
    path = tmp_path / "pressure.csv"
    cells = ["128", "-3", "131", "990", "122", "119", "125"]
    path.write_text("mmhg\n" + "\n".join(cells) + "\n", encoding="utf-8")
    found = describe(read_column(path, "mmhg", valid_min=0, valid_max=300), valid_min=0, valid_max=300)
    flag = found.quality.get("impossible")
    assert flag.count == 2 and flag.rows == (3, 5) and flag.values == (-3.0, 990.0)
    # A bound the quantity cannot cross, applied by the engine (not the reader), keeps them too.
    by_engine = describe(np.array([5.0, -2.0, 7.0, 9.0]), lower_bound=0)
    assert by_engine.quality.get("impossible").values == (-2.0,)
    assert by_engine.quality.get("impossible").rows == (2,)


@pytest.mark.parametrize(("name", "draw"), [
    ("normal", lambda rng: rng.normal(50, 10, 2000)),
    ("lognormal", lambda rng: rng.lognormal(3, 1, 2000)),
    ("gamma", lambda rng: rng.gamma(2, 10, 2000)),
])
def test_clean_samples_rarely_have_a_value_that_stands_out(name, draw):
    # By construction a clean sample shows a value that stands out about 5 % of the time (SURPRISE_P);
    # the quartile fit adds noise, so at most 6 of 60 generated samples (fixed seeds) may.
    standing = sum(bool(describe(draw(np.random.default_rng(seed))).unusual.values) for seed in range(60))
    assert standing <= 6, (name, standing)
