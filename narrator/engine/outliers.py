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

Degenerate rules and their fallback (:func:`degenerate_reason`, :func:`fallback_rule`; our own
rule, recorded in ``Outliers.fallback_from`` and ``Outliers.fallback_reason``):

* the skew-adjusted rule with a medcouple at its bound, |MC| = 1 (``medcouple_at_bound``). That
  happens when the values on one side of the median all tie with it (half or more of a count
  are 0): the medcouple then measures the ties, not the tail, and the fence on the long side
  moves e^3 = 20 IQRs out, so the rule can flag almost nothing. Tukey's fences are used instead
  (the adjusted rule with MC = 0), or the modified z-score when the IQR is 0 too;
* Tukey's or the adjusted rule with IQR = 0 (``iqr_zero``): the fences sit on the quartiles and
  every value that differs from them would be "unusual". The modified z-score (with its MeanAD
  fallback when the MAD is 0 too) is used instead.

A rule the user named is replaced the same way, and the findings say so: a report must not call a
quarter of the values unusual because the fences collapsed.
"""

from __future__ import annotations

import math

import numpy as np

from narrator.engine.distributions import t_ppf
from narrator.errors import NarratorError
from narrator.findings import LISTED_PER_SIDE, OUTLIER_RULES, Outliers

MIN_VALUES = 4  # below this, no rule is run

# Iglewicz & Hoaglin (1993): 0.6745, the standard normal 0.75 quantile as they round it, makes
# MAD / 0.6745 estimate the SD under normality.
MODIFIED_Z_CONSTANT = 0.6745
# Common-practice fallback when MAD = 0: sqrt(pi / 2), the ratio SD / mean absolute deviation under normality.
MEAN_AD_CONSTANT = 1.253314
MEDCOUPLE_BOUND = 1.0 - 1e-12  # |MC| at or above this is at its bound (the medcouple lies in [-1, 1])


def degenerate_reason(rule: str, *, n: int, q1: float, q3: float, medcouple: float | None) -> str | None:
    """Why ``rule`` cannot work on these data ("iqr_zero", "medcouple_at_bound"), or None when it can.

    >>> degenerate_reason("adjusted", n=50, q1=0.0, q3=2.0, medcouple=1.0)
    'medcouple_at_bound'
    >>> degenerate_reason("tukey", n=50, q1=3.0, q3=3.0, medcouple=0.0)
    'iqr_zero'
    """
    if n < MIN_VALUES or rule not in ("tukey", "adjusted"):
        return None
    if not q3 > q1:
        return "iqr_zero"
    if rule == "adjusted" and medcouple is not None and abs(medcouple) >= MEDCOUPLE_BOUND:
        return "medcouple_at_bound"
    return None


def fallback_rule(reason: str) -> str:
    """The rule that replaces a degenerate one (see the module docstring)."""
    return "tukey" if reason == "medcouple_at_bound" else "modified-z"


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

    References: Tukey (1977); Hubert & Vandervieren (2008); Iglewicz & Hoaglin
    (1993); Rosner (1983). See the module docstring for each rule.
    """
    values = np.asarray(values, dtype=np.float64)
    rows = np.asarray(rows)
    _check_inputs(values, rows, q1=q1, median=median, q3=q3, mad=mad, mean=mean, sd=sd)
    if rule is None:
        chosen_rule = "adjusted" if skew_clear else "tukey"
        chosen_by, auto_reason = "auto", ("skewed" if skew_clear else "not_skewed")
    elif rule in OUTLIER_RULES:
        chosen_rule, chosen_by, auto_reason = rule, "user", None
    else:
        raise NarratorError(f"unknown outlier rule {rule!r}; choose one of {', '.join(OUTLIER_RULES)}")
    _check_constants(coefficient, far_coefficient, modified_z_threshold, esd_alpha, esd_max_fraction)

    n = values.size
    fallback_from = fallback_reason = None
    reason = degenerate_reason(chosen_rule, n=n, q1=q1, q3=q3, medcouple=medcouple)
    if reason is not None:
        fallback_from, fallback_reason, chosen_rule = chosen_rule, reason, fallback_rule(reason)
    choice = {"rule": chosen_rule, "chosen_by": chosen_by, "auto_reason": auto_reason,
              "fallback_from": fallback_from, "fallback_reason": fallback_reason}
    if chosen_rule in ("tukey", "adjusted"):
        constants = {"coefficient": float(coefficient), "far_coefficient": float(far_coefficient)}
        if chosen_rule == "adjusted" and n >= MIN_VALUES:
            if medcouple is None or not -1.0 <= medcouple <= 1.0:
                raise NarratorError(
                    f"the adjusted boxplot rule needs a medcouple in [-1, 1]; got {medcouple!r}"
                )
            constants.update(_adjusted_exponents(float(medcouple)))
    elif chosen_rule == "modified-z":
        constants = {"threshold": float(modified_z_threshold), "consistency_constant": MODIFIED_Z_CONSTANT}
    else:
        constants = {
            "alpha": float(esd_alpha),
            "max_outliers": float(_esd_bound(n, esd_max_outliers, esd_max_fraction)),
        }

    if n < MIN_VALUES:
        return _result(
            values,
            rows,
            np.zeros(n, bool),
            np.zeros(n, bool),
            np.zeros(n, bool),
            choice,
            constants,
            fences=(None, None, None, None),
            note="not_run_too_few",
        )

    if chosen_rule in ("tukey", "adjusted"):
        return _fence_rule(values, rows, choice, constants, q1=q1, q3=q3)
    if chosen_rule == "modified-z":
        return _modified_z(values, rows, choice, constants, median=median, mad=mad)
    return _generalized_esd(values, rows, choice, constants, mean=mean, sd=sd)


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


def _adjusted_exponents(mc: float) -> dict[str, float]:
    # Hubert & Vandervieren (2008), eq. (5): the longer tail's fence moves out, the shorter one's in.
    lower_exponent, upper_exponent = (-4.0, 3.0) if mc >= 0 else (-3.0, 4.0)
    return {
        "medcouple": mc,
        "lower_exponent": lower_exponent,
        "upper_exponent": upper_exponent,
        "lower_multiplier": math.exp(lower_exponent * mc),
        "upper_multiplier": math.exp(upper_exponent * mc),
    }


def _fence_rule(values, rows, choice, constants, *, q1, q3) -> Outliers:
    iqr = q3 - q1
    lower_scale = constants.get("lower_multiplier", 1.0) * iqr
    upper_scale = constants.get("upper_multiplier", 1.0) * iqr
    fences = (
        q1 - constants["coefficient"] * lower_scale,
        q3 + constants["coefficient"] * upper_scale,
        q1 - constants["far_coefficient"] * lower_scale,
        q3 + constants["far_coefficient"] * upper_scale,
    )
    low = values < fences[0]
    high = values > fences[1]
    far = (values < fences[2]) | (values > fences[3])
    note = "iqr_zero" if iqr == 0 else None
    return _result(values, rows, low, high, far, choice, constants, fences=fences, note=note)


def _modified_z(values, rows, choice, constants, *, median, mad) -> Outliers:
    threshold = constants["threshold"]
    note = None
    if mad > 0:
        scale = mad / constants["consistency_constant"]
        constants["mad"] = float(mad)
    else:
        # More than half the values equal the median. Common practice: the mean absolute deviation
        # from the median, scaled by sqrt(pi / 2), stands in for MAD / 0.6745.
        mean_ad = float(np.mean(np.abs(values - median)))
        constants.pop("consistency_constant")
        constants["mean_ad_constant"] = MEAN_AD_CONSTANT
        constants["mean_absolute_deviation"] = mean_ad
        if mean_ad == 0:
            empty = np.zeros(values.size, bool)
            return _result(
                values,
                rows,
                empty,
                empty,
                empty,
                choice,
                constants,
                fences=(None, None, None, None),
                note="no_spread",
            )
        scale = MEAN_AD_CONSTANT * mean_ad
        note = "mad_zero_fallback"
    score = (values - median) / scale
    low = score < -threshold
    high = score > threshold
    fences = (median - threshold * scale, median + threshold * scale, None, None)
    empty = np.zeros(values.size, bool)
    return _result(values, rows, low, high, empty, choice, constants, fences=fences, note=note)


def _generalized_esd(values, rows, choice, constants, *, mean, sd) -> Outliers:
    """Rosner (1983): remove the most extreme value r times, then keep the largest significant step."""
    n = values.size
    bound = int(constants["max_outliers"])
    order = np.argsort(values, kind="stable")
    ordered = values[order]
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
    return _result(
        values,
        rows,
        low,
        high,
        np.zeros(n, bool),
        choice,
        constants,
        fences=(None, None, None, None),
        note=note,
    )


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


def _result(values, rows, low, high, far, choice, constants, *, fences, note) -> Outliers:
    low_index = _ascending(values, low)
    high_index = _ascending(values, high)
    listed = np.concatenate([low_index[:LISTED_PER_SIDE], high_index[max(0, high_index.size - LISTED_PER_SIDE):]])
    listed_far = listed[far[listed]]
    return Outliers(
        rule=choice["rule"],
        chosen_by=choice["chosen_by"],
        auto_reason=choice["auto_reason"],
        constants=constants,
        lower_fence=_float_or_none(fences[0]),
        upper_fence=_float_or_none(fences[1]),
        far_lower_fence=_float_or_none(fences[2]),
        far_upper_fence=_float_or_none(fences[3]),
        count=int(low_index.size + high_index.size),
        count_low=int(low_index.size),
        count_high=int(high_index.size),
        values=tuple(float(v) for v in values[listed]),
        rows=tuple(int(r) for r in rows[listed]),
        far_out_values=tuple(float(v) for v in values[listed_far]),
        far_out_rows=tuple(int(r) for r in rows[listed_far]),
        note=note,
        listed_low=int(min(low_index.size, LISTED_PER_SIDE)),
        low_range=_span(values, low_index),
        high_range=_span(values, high_index),
        fallback_from=choice.get("fallback_from"),
        fallback_reason=choice.get("fallback_reason"),
    )


def _span(values: np.ndarray, ascending_index: np.ndarray) -> tuple[float, float] | None:
    if ascending_index.size == 0:
        return None
    return float(values[ascending_index[0]]), float(values[ascending_index[-1]])


def _ascending(values: np.ndarray, mask: np.ndarray) -> np.ndarray:
    """Indices of the masked values, ascending by value, ties in file order."""
    index = np.nonzero(mask)[0]
    return index[np.argsort(values[index], kind="stable")]


def _float_or_none(value: float | None) -> float | None:
    return None if value is None else float(value)
