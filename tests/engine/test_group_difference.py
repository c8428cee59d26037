"""The group difference (narrator.engine.group_difference) against outside references.

References:

- scipy.stats.mannwhitneyu(method="exact") for the null distribution of the Mann-Whitney count;
- a published worked example: SAS/STAT User's Guide, the NPAR1WAY procedure's example
  "Hodges-Lehmann Estimation" (reaction times under two stimulants, 13 and 6 values): location
  shift 0.35, 98 % Moses limits 0.00 and 0.82;
- brute force (every difference formed and sorted with numpy) for the order statistics;
- a simulation with fixed seeds (generated data) for the interval's coverage under a shift.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from narrator.engine import group_difference as gd
from narrator.engine.describe import describe

# SAS/STAT User's Guide, PROC NPAR1WAY, "Exact Wilcoxon Two-Sample Test" / "Hodges-Lehmann Estimation"
REACT_FIRST = [1.94, 1.94, 2.92, 2.92, 2.92, 2.92, 3.27, 3.27, 3.27, 3.27, 3.70, 3.70, 3.74]
REACT_SECOND = [3.27, 3.27, 3.27, 3.70, 3.70, 3.74]


def test_published_hodges_lehmann_example():
    shift, low, high, k, coverage, method = gd.shift_interval(REACT_FIRST, REACT_SECOND, 0.98)
    assert shift == pytest.approx(0.35, abs=5e-3)  # published: 0.3500
    assert (low, high) == (pytest.approx(0.00, abs=5e-3), pytest.approx(0.82, abs=5e-3))  # published: 0.0000, 0.8200
    assert method == "exact" and coverage >= 0.98


@pytest.mark.parametrize(("m", "n"), [(3, 4), (5, 7), (8, 8), (10, 12)])
def test_null_distribution_matches_scipy_exact(m, n):
    cdf = gd.mann_whitney_cdf(m, n)
    rng = np.random.default_rng(m * 100 + n)
    for _ in range(25):
        x = rng.normal(size=m)
        y = rng.normal(size=n) + rng.normal()
        u = int((x[:, None] > y[None, :]).sum())  # scipy's U1 counts pairs with x above y
        reference = stats.mannwhitneyu(x, y, alternative="less", method="exact").pvalue  # P(U1 <= u)
        assert cdf[u] == pytest.approx(reference, rel=1e-9, abs=1e-12)


def test_interval_rank_is_the_largest_allowed():
    for m, n, level in [(6, 13, 0.98), (10, 10, 0.95), (4, 9, 0.95), (20, 25, 0.99)]:
        k, coverage, method = gd.interval_rank(m, n, level)
        cdf = gd.mann_whitney_cdf(m, n)
        tail = (1 - level) / 2
        assert cdf[k - 1] <= tail < cdf[k]  # P(U <= k-1) within the tail, P(U <= k) not
        assert coverage == pytest.approx(1 - 2 * cdf[k - 1])
        assert method == "exact"


def test_normal_rank_close_to_exact(monkeypatch):
    exact = gd.interval_rank(40, 50, 0.95)
    gd.interval_rank.cache_clear()
    monkeypatch.setattr(gd, "EXACT_WORK", 0)
    normal = gd.interval_rank(40, 50, 0.95)
    gd.interval_rank.cache_clear()
    assert normal[2] == "normal" and abs(normal[0] - exact[0]) <= 1
    assert normal[1] == pytest.approx(exact[1], abs=2e-3)


def test_too_small_for_the_level_gives_no_interval():
    assert gd.interval_rank(2, 2, 0.95) is None  # C(4, 2) = 6 arrangements: no 95 % interval
    shift, low, high, *_ = gd.shift_interval([1.0, 2.0], [3.0, 5.0], 0.95)
    assert shift == 2.5 and low is None and high is None


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(-20, 20), min_size=1, max_size=30), st.lists(st.integers(-20, 20), min_size=1,
                                                                         max_size=30))
def test_order_statistics_match_brute_force(first, second):
    x, y = np.array(first, float), np.array(second, float)
    every = np.sort((y[None, :] - x[:, None]).ravel())
    ranks = sorted({1, every.size, (every.size + 1) // 2, max(1, every.size // 3)})
    assert gd.pairwise_difference_ranks(x, y, ranks) == tuple(every[r - 1] for r in ranks)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_selection_path_matches_brute_force(monkeypatch, seed):
    # Force the matrix selection (no direct partition) and a small gather, so many steps run.
    monkeypatch.setattr(gd, "DIRECT_PAIRS", 0)
    monkeypatch.setattr(gd, "_GATHER", 50)
    rng = np.random.default_rng(seed)
    x = np.round(rng.lognormal(2, 1, 300), 1)  # ties among the differences
    y = np.round(rng.lognormal(2.3, 1, 250), 1)
    every = np.sort((y[None, :] - x[:, None]).ravel())
    ranks = [1, 2, 1000, every.size // 2, every.size // 2 + 1, every.size - 7, every.size]
    assert gd.pairwise_difference_ranks(x, y, ranks) == tuple(every[r - 1] for r in ranks)


def test_swapping_sides_negates_the_shift():
    rng = np.random.default_rng(7)
    x, y = rng.normal(10, 2, 40), rng.normal(12, 2, 35)
    forward = gd.shift_interval(x, y, 0.95)
    backward = gd.shift_interval(y, x, 0.95)
    assert forward[0] == pytest.approx(-backward[0])
    assert (forward[1], forward[2]) == (pytest.approx(-backward[2]), pytest.approx(-backward[1]))


def _coverage(draw, shift: float, m: int, n: int, seed: int, runs: int) -> float:
    rng = np.random.default_rng(seed)
    covered = 0
    for _ in range(runs):
        x = draw(rng, m)
        y = draw(rng, n) + shift
        _, low, high, *_ = gd.shift_interval(x, y, 0.95)
        covered += low <= shift <= high
    return covered / runs


# Generated data, fixed seeds: the interval covers the true shift at about its nominal 95 %.
# 2000 runs give a binomial standard error of about 0.005, so the window [0.935, 0.965] is 3 SE.
@pytest.mark.parametrize(("name", "draw", "shift"), [
    ("normal", lambda rng, size: rng.normal(20, 5, size), 4.0),
    ("lognormal", lambda rng, size: rng.lognormal(2.5, 0.8, size), 6.0),
])
def test_coverage_continuous(name, draw, shift):
    coverage = _coverage(draw, shift, 25, 30, seed=20261201, runs=2000)
    assert 0.935 <= coverage <= 0.965, (name, coverage)


def test_coverage_with_ties_is_at_least_nominal():
    # Whole days (Poisson counts) and many ties: the interval is conservative (module docstring).
    coverage = _coverage(lambda rng, size: rng.poisson(6, size).astype(float), 3.0, 20, 20, seed=11, runs=2000)
    assert coverage >= 0.935


def _groups(specs, seed=5):
    rng = np.random.default_rng(seed)
    groups = []
    for label, center, size in specs:
        values = np.round(rng.normal(center, 4.0, size), 1)
        groups.append((label, values, describe(values)))
    return groups


def test_one_group_stands_apart_and_the_others_go_together():
    groups = _groups([("north", 12.0, 150), ("river", 21.0, 150), ("south", 12.2, 150)])
    result = gd.compare_groups(groups, lead="median")
    assert result.reason == "computed" and result.adjustment == "bonferroni"
    assert result.level == pytest.approx(1 - 0.05 / 3)
    verdicts = {(p.first, p.second): p.difference.verdict for p in result.pairs}
    assert verdicts == {("north", "river"): "different", ("north", "south"): "alike",
                        ("river", "south"): "different"}
    assert result.stand_apart == ("river",)
    assert result.together == (("north", "south"),)
    (rest,) = result.versus_rest
    assert rest.group == "river" and rest.others == ("north", "south")
    assert rest.difference.direction == "higher"
    assert 7.0 < rest.difference.low < rest.difference.shift < rest.difference.high < 11.0


def test_alike_groups_keep_reading_order_whichever_is_higher():
    # The same two alike groups with their values exchanged: the same set, in the same order.
    first = _groups([("east", 15.0, 200), ("west", 15.1, 200)], seed=9)
    swapped = [(first[0][0], first[1][1], first[1][2]), (first[1][0], first[0][1], first[0][2])]
    for groups in (first, swapped):
        result = gd.compare_groups(groups + _groups([("hill", 30.0, 200)], seed=10), lead="median")
        assert result.together == (("east", "west"),)
        assert result.stand_apart == ("hill",)


def test_small_groups_are_unclear_not_alike():
    groups = _groups([("a", 10.0, 10), ("b", 10.0, 10)], seed=3)
    (pair,) = gd.compare_groups(groups, lead="median").pairs
    assert pair.difference.verdict == "unclear"  # 10 values each cannot rule out a medium difference


def test_population_has_no_interval():
    groups = _groups([("a", 10.0, 60), ("b", 16.0, 60)])
    (pair,) = gd.compare_groups(groups, lead="median", population=True).pairs
    assert pair.difference.low is None and pair.difference.interval_reason == "population"
    assert pair.difference.verdict == "different" and pair.difference.direction == "higher"


def test_too_many_groups_are_not_compared():
    groups = _groups([(f"g{k:02d}", 10.0, 12) for k in range(gd.MAX_GROUPS + 1)])
    assert gd.compare_groups(groups, lead="median").reason == "too_many_groups"


def test_selection_with_the_larger_side_first(monkeypatch):
    monkeypatch.setattr(gd, "DIRECT_PAIRS", 0)
    monkeypatch.setattr(gd, "_GATHER", 40)
    rng = np.random.default_rng(4)
    x, y = np.round(rng.normal(0, 3, 400), 2), np.round(rng.normal(1, 3, 90), 2)
    every = np.sort((y[None, :] - x[:, None]).ravel())
    ranks = [1, 17, every.size // 2, every.size]
    assert gd.pairwise_difference_ranks(x, y, ranks) == tuple(every[r - 1] for r in ranks)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(-1e6, 1e6, allow_nan=False, allow_subnormal=False), min_size=1, max_size=25),
       st.lists(st.floats(-1e6, 1e6, allow_nan=False, allow_subnormal=False), min_size=1, max_size=25),
       st.integers(1, 10**6))
def test_bisection_path_matches_brute_force_on_any_floats(first, second, salt):
    x, y = np.array(first, float), np.array(second, float)
    every = np.sort((y[None, :] - x[:, None]).ravel())
    ranks = sorted({1, every.size, 1 + salt % every.size, (every.size + 1) // 2})
    old = (gd.DIRECT_PAIRS, gd._GATHER)
    gd.DIRECT_PAIRS, gd._GATHER = 0, 1
    try:
        found = gd.pairwise_difference_ranks(x, y, ranks)
    finally:
        gd.DIRECT_PAIRS, gd._GATHER = old
    assert found == tuple(every[r - 1] for r in ranks)
