"""Outlier rules: which values sit unusually far from the rest, by a stated rule.

===========================  ===================================================
Name                         What it does
===========================  ===================================================
:func:`detect_outliers`      apply one rule (or choose one) and return
                             :class:`~narrator.findings.Outliers`
:func:`esd_critical_values`  Rosner's (1983) critical values lambda_1..lambda_r
``MIN_VALUES``               fewer values than this: no rule is run
``MODIFIED_Z_CONSTANT``      0.6745 (Iglewicz & Hoaglin 1993)
``MEAN_AD_CONSTANT``         sqrt(pi/2), for the modified z fallback
===========================  ===================================================

Rules (codes as in :data:`narrator.findings.OUTLIER_RULES`):

``tukey``
    Tukey (1977): outside [Q1 - 1.5 IQR, Q3 + 1.5 IQR]; "far out" beyond 3 IQR.
``adjusted``
    Hubert & Vandervieren (2008) skew-adjusted boxplot: the fences stretch by
    e^(-4 MC) / e^(3 MC) (MC >= 0) or e^(-3 MC) / e^(4 MC) (MC < 0), MC the
    medcouple; far out with 3 in place of 1.5. With MC = 0 it is Tukey's rule.
``modified-z``
    Iglewicz & Hoaglin (1993): M = 0.6745 (x - median) / MAD, flagged when
    |M| > 3.5. When MAD = 0 (more than half the values tie at the median) the
    common-practice fallback M = (x - median) / (1.253314 MeanAD) is used,
    MeanAD the mean absolute deviation from the median (1.253314 = sqrt(pi/2)
    makes it estimate the SD under normality). No far-out band is defined.
``esd``
    Rosner (1983) generalized extreme Studentized deviate test for up to r
    outliers at level alpha, for roughly normal data. It is a sequential test,
    not a pair of fences, so the fences are None; ``constants`` records the
    test statistic and critical value at the last significant step.

Values exactly on a fence are not flagged: the rules flag values *beyond*
their fences. When the IQR is 0 (roughly half the values or more share one
value) Tukey's and the adjusted rule flag every value that differs from the
quartiles, which is what the rules say; the note lets the text warn that the
fences collapsed.

Note codes (``Outliers.note``):

=========================  =====================================================
``not_run_too_few``        fewer than 4 values: nothing flagged, fences None
``iqr_zero``               tukey/adjusted with IQR = 0: the fences are the quartiles
``mad_zero_fallback``      modified-z with MAD = 0: the MeanAD fallback was used
``no_spread``              modified-z with MAD = MeanAD = 0: nothing flagged, fences None
``esd_stopped_no_spread``  ESD stopped before r steps: the remaining values were all equal
=========================  =====================================================
"""

from __future__ import annotations

import math

import numpy as np

from narrator.engine import rules
from narrator.engine.distributions import t_ppf
from narrator.engine.rules import MEAN_AD_CONSTANT, MIN_VALUES, MODIFIED_Z_CONSTANT, OutlierTest
from narrator.errors import NarratorError
from narrator.findings import LISTED_PER_SIDE, Outliers

__all__ = ["MEAN_AD_CONSTANT", "MIN_VALUES", "MODIFIED_Z_CONSTANT", "detect_outliers", "esd_critical_values"]


def detect_outliers(
    values: np.ndarray,
    rows: np.ndarray,
    *,
    rule: str | None,
    q1: float,
    median: float,
    q3: float,
    medcouple: float | None,
    skew_clear: bool,
    mad: float,
    mean: float,
    sd: float,
    esd_alpha: float = 0.05,
    esd_max_fraction: float = 0.1,
    esd_max_outliers: int | None = None,
    coefficient: float = 1.5,
    far_coefficient: float = 3.0,
    modified_z_threshold: float = 3.5,
    factor: float = 1.0,
) -> Outliers:
    """Flag outliers by one rule and report the rule, its constants and what it found.

    ``values`` are in file order and ``rows[i]`` is the source row of
    ``values[i]``; the flagged values come back ascending with their rows.
    ``q1``, ``median``, ``q3``, ``mad`` (the raw, unscaled median absolute
    deviation), ``mean`` and ``sd`` describe the same values; the caller has
    computed them once. ``medcouple`` is needed by the adjusted rule only.

    ``rule=None`` chooses automatically: ``adjusted`` when the data are clearly
    skewed (``skew_clear``), else ``tukey``; ``chosen_by`` is then ``"auto"``
    with ``auto_reason`` ``"skewed"`` or ``"not_skewed"``.

    For ``esd`` the upper bound r on the number of outliers is
    ``esd_max_outliers`` if given, else ``max(1, floor(esd_max_fraction * n))``,
    and never more than n - 2 (the last step needs one degree of freedom).

    ``factor`` (a power of two; 1 unless the values are huge or tiny) says the summaries describe
    values / factor: the rule runs in those units and the finding is in the values' own units.
    The decisions (rule choice, constants, fences) are :mod:`narrator.engine.rules`'; this applies
    them to the values.

    References: Tukey (1977); Hubert & Vandervieren (2008); Iglewicz & Hoaglin
    (1993); Rosner (1983). See the module docstring for each rule.
    """
    values = np.asarray(values, dtype=np.float64)
    rows = np.asarray(rows)
    _check_inputs(values, rows, q1=q1, median=median, q3=q3, mad=mad, mean=mean, sd=sd)
    choice = rules.rule_choice(rule, skew_clear)
    _check_constants(coefficient, far_coefficient, modified_z_threshold, esd_alpha, esd_max_fraction)
    units = values if factor == 1.0 else values / factor
    n = values.size
    if choice.rule == "esd":
        bound = _esd_bound(n, esd_max_outliers, esd_max_fraction)
        constants = {"alpha": float(esd_alpha), "max_outliers": float(bound)}
        if n < MIN_VALUES:
            test = OutlierTest(choice, constants, (None, None, None, None), "not_run_too_few", None)
            return _result(values, rows, *test.sides(units), test, factor)
        return _generalized_esd(values, units, rows, choice, constants, mean=mean, sd=sd, factor=factor)
    test = rules.outlier_test(
        choice, n, q1=q1, median=median, q3=q3, mad=mad, medcouple=medcouple,
        mean_absolute_deviation=lambda: float(np.mean(np.abs(units - median))), coefficient=coefficient,
        far_coefficient=far_coefficient, modified_z_threshold=modified_z_threshold)
    return _result(values, rows, *test.sides(units), test, factor)


def flag_sorted(test: OutlierTest, values: np.ndarray, rows: np.ndarray, sorted_values: np.ndarray,
                factor: float = 1.0) -> Outliers:
    """What :func:`detect_outliers` finds for a fence or score rule (``test`` from
    :func:`narrator.engine.rules.outlier_test`), read from the values sorted ascending.

    Every such rule flags a lowest and a highest run of the sorted values (the test is monotone in
    the value), so the counts come from binary searches that apply the test itself to single sorted
    values, and only the listed values are looked for among the values in file order (``values``,
    with their ``rows``), ties in file order as there.
    """
    n = sorted_values.size

    def flagged_side(position: int, side: int) -> bool:
        unit = np.array([sorted_values[position]]) / factor if factor != 1.0 else sorted_values[position : position + 1]
        return bool(test.sides(unit)[side][0])

    count_low = _run_where(n, lambda k: flagged_side(k, 0))
    count_high = _run_where(n - count_low, lambda k: flagged_side(n - 1 - k, 1))
    listed_low, listed_high = min(count_low, LISTED_PER_SIDE), min(count_high, LISTED_PER_SIDE)
    low_index = high_index = np.zeros(0, dtype=np.intp)
    if listed_low:
        low_index = _ascending(values, values <= sorted_values[listed_low - 1])[:listed_low]
    if listed_high:
        high_index = _ascending(values, values >= sorted_values[n - listed_high])[-listed_high:]
    return rules.outliers_found(
        test, factor, low_values=values[low_index], low_rows=rows[low_index], high_values=values[high_index],
        high_rows=rows[high_index], count_low=count_low, count_high=count_high,
        low_range=(sorted_values[0], sorted_values[count_low - 1]) if count_low else None,
        high_range=(sorted_values[n - count_high], sorted_values[-1]) if count_high else None)


def _run_where(length: int, holds) -> int:
    """How many of the positions 0, 1, ... a test ``holds`` for before it first fails (it holds on a prefix)."""
    low, high = 0, length
    while low < high:
        middle = (low + high) // 2
        if holds(middle):
            low = middle + 1
        else:
            high = middle
    return low


def esd_critical_values(n: int, max_outliers: int, alpha: float = 0.05) -> np.ndarray:
    """Rosner's (1983) critical values lambda_1..lambda_r for n observations.

    lambda_i = (n - i) t_{p, n-i-1} / sqrt((n - i - 1 + t^2) (n - i + 1)),
    p = 1 - alpha / (2 (n - i + 1)), t the Student t quantile.
    """
    if max_outliers < 1 or max_outliers > n - 2:
        raise NarratorError(
            f"the generalized ESD test needs 1 <= r <= n - 2; got r = {max_outliers}, n = {n}"
        )
    steps = np.arange(1, max_outliers + 1, dtype=np.float64)
    remaining = n - steps  # n - i
    probability = 1.0 - alpha / (2.0 * (remaining + 1.0))
    t = t_ppf(probability, remaining - 1.0)
    return remaining * t / np.sqrt((remaining - 1.0 + t * t) * (remaining + 1.0))


def _check_inputs(values, rows, *, q1, median, q3, mad, mean, sd) -> None:
    if values.ndim != 1 or rows.ndim != 1 or values.size != rows.size:
        raise NarratorError(
            "outlier detection needs one value per row number (two 1-d arrays of equal length)"
        )
    if not np.all(np.isfinite(values)):
        raise NarratorError("outlier detection needs finite values (no NaN or infinity)")
    if values.size == 0:
        return
    for name, number in (
        ("q1", q1),
        ("median", median),
        ("q3", q3),
        ("mad", mad),
        ("mean", mean),
        ("sd", sd),
    ):
        if not math.isfinite(number) and not (name == "sd" and values.size < 2):
            raise NarratorError(f"outlier detection needs a finite {name}; got {number!r}")
    if not q1 <= median <= q3:
        raise NarratorError(f"outlier detection needs q1 <= median <= q3; got {q1!r}, {median!r}, {q3!r}")
    if mad < 0:
        raise NarratorError(f"the median absolute deviation cannot be negative; got {mad!r}")


def _check_constants(coefficient, far_coefficient, threshold, alpha, max_fraction) -> None:
    if not 0 < coefficient <= far_coefficient:
        raise NarratorError(
            f"fence coefficients must satisfy 0 < coefficient <= far coefficient; "
            f"got {coefficient!r} and {far_coefficient!r}"
        )
    if not threshold > 0:
        raise NarratorError(f"the modified z threshold must be positive; got {threshold!r}")
    if not 0 < alpha < 1:
        raise NarratorError(f"the ESD significance level must lie between 0 and 1; got {alpha!r}")
    if not 0 < max_fraction < 1:
        raise NarratorError(
            f"the ESD share of suspected outliers must lie between 0 and 1; got {max_fraction!r}"
        )


def _esd_bound(n: int, max_outliers: int | None, max_fraction: float) -> int:
    if max_outliers is not None:
        if (
            isinstance(max_outliers, bool)
            or not isinstance(max_outliers, int | np.integer)
            or max_outliers < 1
        ):
            raise NarratorError(
                f"the ESD upper bound on outliers must be a whole number >= 1; got {max_outliers!r}"
            )
        bound = int(max_outliers)
    else:
        bound = max(1, math.floor(max_fraction * n))
    return max(0, min(bound, n - 2))


def _generalized_esd(values, units, rows, choice, constants, *, mean, sd, factor) -> Outliers:
    """Rosner (1983): remove the most extreme value r times, then keep the largest significant step."""
    n = values.size
    bound = int(constants["max_outliers"])
    order = np.argsort(units, kind="stable")
    ordered = units[order]
    statistics, removed_positions, removed_low = _esd_steps(ordered, bound, mean=mean, sd=sd)
    steps_run = len(statistics)
    critical = esd_critical_values(n, bound, constants["alpha"])
    exceed = np.nonzero(np.asarray(statistics) > critical[:steps_run])[0]
    count = int(exceed[-1]) + 1 if exceed.size else 0
    constants["steps_run"] = float(steps_run)
    constants["first_critical_value"] = float(critical[0])
    if count:
        constants["statistic_at_count"] = float(statistics[count - 1])
        constants["critical_value_at_count"] = float(critical[count - 1])
    low = np.zeros(n, bool)
    high = np.zeros(n, bool)
    for position, is_low in zip(removed_positions[:count], removed_low[:count], strict=True):
        (low if is_low else high)[order[position]] = True
    note = "esd_stopped_no_spread" if steps_run < bound else None
    test = OutlierTest(choice, constants, (None, None, None, None), note, None)
    return _result(values, rows, low, high, test, factor)


# Downdating the sum of squares after removing a far value loses digits (the removed value
# dominated it). Recompute from the remaining values, two-pass, whenever it has shrunk this much.
_RECOMPUTE_SHRINK = 1e-3


def _esd_steps(
    ordered: np.ndarray, bound: int, *, mean: float, sd: float
) -> tuple[list[float], list[int], list[bool]]:
    """R_1..R_k of the generalized ESD on sorted values, with the removed positions.

    The first step uses the caller's mean and sample SD of all values. The most extreme
    remaining value is always the smallest or the largest, so with sorted values each
    step is O(1) (mean and sum of squares downdated), plus an occasional exact two-pass
    recomputation that keeps the result as accurate as recomputing every step.
    Stops early when the remaining values have no spread.
    """
    low, high = 0, ordered.size  # remaining values are ordered[low:high]
    squares = sd * sd * (ordered.size - 1)
    if not math.isfinite(squares):
        mean, squares = _two_pass(ordered)
    reference_squares = squares
    statistics: list[float] = []
    positions: list[int] = []
    from_low: list[bool] = []
    for _ in range(bound):
        count = high - low
        sd = math.sqrt(squares / (count - 1)) if squares > 0 else 0.0
        if sd == 0.0:
            break
        below = mean - ordered[low]
        above = ordered[high - 1] - mean
        take_low = below > above  # on an exact tie the high value goes first (a fixed, stated choice)
        position = low if take_low else high - 1
        statistics.append(float(max(below, above) / sd))
        positions.append(position)
        from_low.append(bool(take_low))
        if take_low:
            low += 1
        else:
            high -= 1
        removed = ordered[position]
        remaining = count - 1
        delta = removed - mean
        mean -= delta / remaining
        squares -= delta * (removed - mean)
        if squares < reference_squares * _RECOMPUTE_SHRINK or squares < 0:
            mean, squares = _two_pass(ordered[low:high])
            reference_squares = squares
    return statistics, positions, from_low


def _two_pass(values: np.ndarray) -> tuple[float, float]:
    mean = float(np.mean(values))
    return mean, float(np.sum((values - mean) ** 2))


def _result(values, rows, low, high, test: OutlierTest, factor: float) -> Outliers:
    low_index = _ascending(values, low)
    high_index = _ascending(values, high)
    return rules.outliers_found(
        test, factor, low_values=values[low_index[:LISTED_PER_SIDE]], low_rows=rows[low_index[:LISTED_PER_SIDE]],
        high_values=values[high_index[max(0, high_index.size - LISTED_PER_SIDE):]],
        high_rows=rows[high_index[max(0, high_index.size - LISTED_PER_SIDE):]],
        count_low=low_index.size, count_high=high_index.size, low_range=_span(values, low_index),
        high_range=_span(values, high_index))


def _span(values: np.ndarray, ascending_index: np.ndarray) -> tuple[float, float] | None:
    if ascending_index.size == 0:
        return None
    return float(values[ascending_index[0]]), float(values[ascending_index[-1]])


def _ascending(values: np.ndarray, mask: np.ndarray) -> np.ndarray:
    """Indices of the masked values, ascending by value, ties in file order."""
    index = np.nonzero(mask)[0]
    return index[np.argsort(values[index], kind="stable")]
