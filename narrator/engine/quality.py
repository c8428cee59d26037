"""Data-quality observations worth reporting about one column.

===========================  ==================================================
Flag code                    When it is raised
===========================  ==================================================
``no_values``                no usable value at all
``missing``                  blank cells or missing tokens were left out
``non_numeric``              cells that are not numbers were left out
``impossible``               values outside the declared valid range were left out
                             (the flag keeps their first rows and, in the same order, their values)
``non_finite``               infinities or overflowing numbers were left out
``ambiguous_grouping``       cells such as "1,234" that the other decimal convention
                             reads differently were read under the declared one
``other_convention``         cells left out as text are numbers under the other decimal
                             convention ("3,4" with a decimal point declared): the
                             declared one may be wrong
``percent_signs``            cells carried a "%"; the numbers were kept as written
``currency_marks``           cells carried a currency symbol or code, set aside
``encoding_guessed``         the text file was not UTF-8; a fallback codec was used
``groups_suppressed``        the rows of groups below the privacy threshold were left out (a count of groups)
``missing_code``             values such as -99 or 9999 sit far from the rest (kept, flagged)
``heaping``                  far more values at round numbers than chance gives
``few_distinct``             ten or fewer distinct values
``many_ties``                one value holds at least 20 % of the data
``ceiling`` / ``floor``      a pile-up exactly at the largest / smallest value
``constant``                 every value is the same
``too_few_for_shape``        fewer than 8 values: no shape statement, no formal test
``small_sample``             fewer than 20 values: statements must hedge
===========================  ==================================================

Thresholds here are our own documented choices (common practice), not from a
published standard; each is a constant of :mod:`narrator.engine.rules`, which
decides every flag from counts, so the methods text can state it. This module
gathers those counts from the sorted values of a column in memory.
"""

from __future__ import annotations

import numpy as np

from narrator.engine import rules
from narrator.engine.rules import (
    CODE_DISTANCE_IQR,
    FEW_DISTINCT,
    HEAPING_P,
    HEAPING_RATIO,
    MIN_FOR_CONFIDENT,
    PILE_UP_MIN_COUNT,
    PILE_UP_SHARE,
    ROWS_SHOWN,
    SUSPECT_CODES,
    TIE_SHARE,
)
from narrator.engine.shape import MIN_FOR_SHAPE
from narrator.findings import Quality, QualityFlag
from narrator.reading.sample import Sample

CODE_NEIGHBOURHOOD = 0.5  # neighbours of a suspected code: within this share of the IQR
SPIKE_RATIO = 3.0  # a code holds at least this many times its neighbours' typical count

__all__ = [
    "CODE_DISTANCE_IQR", "CODE_NEIGHBOURHOOD", "FEW_DISTINCT", "HEAPING_P", "HEAPING_RATIO", "MIN_FOR_CONFIDENT",
    "MIN_FOR_SHAPE", "PILE_UP_MIN_COUNT", "PILE_UP_SHARE", "ROWS_SHOWN", "SPIKE_RATIO", "SUSPECT_CODES", "TIE_SHARE",
    "assess_quality", "linear_quantiles",
]


def linear_quantiles(value_at, count: int, probabilities) -> np.ndarray:
    """numpy.quantile(..., method="linear") of a sorted array of ``count`` values seen through ``value_at``
    (which takes an array of 0-based positions).

    The same index arithmetic and interpolation steps as numpy's own (``_get_indexes`` and ``_lerp``),
    so the result is the same number to the last bit, without building the array.

    >>> linear_quantiles(np.array([1.0, 2.0, 4.0, 8.0]).__getitem__, 4, [0.25, 0.75]).tolist()
    [1.75, 5.0]
    """
    quantiles = np.asanyarray(probabilities, dtype=float)
    virtual = (count - 1) * quantiles
    previous = np.floor(virtual)
    following = previous + 1
    above = virtual >= count - 1
    # numpy reads position -1, the last value, at and past the top (with no array of positions here)
    previous[above] = count - 1
    following[above] = count - 1
    previous = previous.astype(np.intp)
    following = following.astype(np.intp)
    lower = value_at(previous)
    upper = value_at(following)
    gamma = virtual - previous
    difference = upper - lower
    result = lower + difference * gamma
    np.subtract(upper, difference * (1 - gamma), out=result, where=gamma >= 0.5)
    return result


def _is_spike(sorted_values: np.ndarray, left: int, right: int, half_width: float) -> bool:
    """Is the run sorted_values[left:right] a spike: far more often than its neighbours' values?

    A code typed for "missing" piles up on one value; a real value that
    happens to equal a code (99.0 among a million measurements) is about as
    common as the values beside it.
    """
    count = right - left
    if count < rules.MIN_CODE_COUNT:
        return False
    code = sorted_values[left]
    start = int(np.searchsorted(sorted_values, code - half_width, side="left"))
    stop = int(np.searchsorted(sorted_values, code + half_width, side="right"))
    neighbours = np.concatenate([sorted_values[start:left], sorted_values[right:stop]])
    if neighbours.size == 0:
        return True
    distinct = 1 + int(np.count_nonzero(np.diff(neighbours)))
    return count >= SPIKE_RATIO * max(1.0, neighbours.size / distinct)


def _missing_codes(sorted_values: np.ndarray, values: np.ndarray, rows: np.ndarray) -> list[QualityFlag]:
    """Values that look like missing-value codes (decided by :func:`narrator.engine.rules.code_flag`):
    their counts, the other values' quartiles and whether each is a spike, by binary search."""
    flags = []
    n = sorted_values.size
    for code in SUSPECT_CODES:
        left = int(np.searchsorted(sorted_values, code, side="left"))
        right = int(np.searchsorted(sorted_values, code, side="right"))
        count = right - left
        if not rules.code_worth_checking(code, count, n):
            continue

        def others_at(index: np.ndarray, left: int = left, count: int = count) -> np.ndarray:
            # The sorted values without the code's run: positions at or past the run shift by its length.
            return sorted_values[np.where(index < left, index, index + count)]

        def others_sd(left: int = left, right: int = right) -> float:
            return float(np.std(np.concatenate([sorted_values[:left], sorted_values[right:]])))

        def is_spike(spread: float, left: int = left, right: int = right) -> bool:
            return _is_spike(sorted_values, left, right, CODE_NEIGHBOURHOOD * spread)

        def code_rows(code: float = code) -> np.ndarray:
            return rows[np.flatnonzero(values == code)[:ROWS_SHOWN]]

        q1, q3 = linear_quantiles(others_at, n - count, [0.25, 0.75])
        flag = rules.code_flag(code, count, n, q1=float(q1), q3=float(q3), others_sd=others_sd, is_spike=is_spike,
                               rows=code_rows)
        if flag is not None:
            flags.append(flag)
    return flags


def _round_hits(values: np.ndarray):
    """hits(base): how many values sit on a multiple of base, |x / base - round(x / base)| < 1e-9 max(1, |x / base|)."""
    def hits(base: float) -> int:
        ratio = values if base == 1.0 else values / base
        # In two buffers (no temporaries at large n).
        distance = np.round(ratio)
        np.subtract(ratio, distance, out=distance)
        np.abs(distance, out=distance)
        tolerance = np.abs(ratio)
        np.maximum(tolerance, 1.0, out=tolerance)
        tolerance *= 1e-9
        return int(np.count_nonzero(distance < tolerance))

    return hits


def _run_length(sorted_values: np.ndarray, value: float) -> int:
    return int(np.searchsorted(sorted_values, value, side="right") - np.searchsorted(sorted_values, value, side="left"))


def _distinct_up_to(sorted_values: np.ndarray, limit: int) -> int:
    """The number of distinct values, counted by jumping from run to run; stops past ``limit``."""
    position, distinct, n = 0, 0, sorted_values.size
    while position < n and distinct <= limit:
        position = int(np.searchsorted(sorted_values, sorted_values[position], side="right"))
        distinct += 1
    return distinct


def _longest_run(sorted_values: np.ndarray, at_least: int) -> tuple[int, float] | None:
    """(length, value) of the first longest run of equal values, if it has at least ``at_least`` values.

    A run that long covers one of the positions 0, at_least, 2 at_least, ..., so only the values there
    are candidates: O((n / at_least) log n) instead of a pass over the sorted data.
    """
    best = None
    for value in np.unique(sorted_values[::at_least]):
        length = _run_length(sorted_values, value)
        if length >= at_least and (best is None or length > best[0]):
            best = (length, float(value))
    return best


def assess_quality(
    sample: Sample, sorted_values: np.ndarray, *, iqr: float | None, decimals: int
) -> tuple[Quality, int]:
    """All data-quality flags for a sample; returns (Quality, number of distinct values, exact up to
    ``FEW_DISTINCT`` + 1; larger counts read as ``FEW_DISTINCT`` + 1).

    ``sorted_values`` are the sample's values sorted ascending; every tie and code check is a
    binary search in them, so no check costs a full pass over the data.

    ``decimals`` is the precision the values actually carry (41.0 written in a
    file counts as a whole number), so a column of whole numbers exported with
    ".0" is not mistaken for heaping at whole numbers.
    """
    n = int(sorted_values.size)
    flags: list[QualityFlag] = []
    distinct = 0
    if n:
        flags.extend(_missing_codes(sorted_values, sample.values, sample.rows))
        low, high = float(sorted_values[0]), float(sorted_values[-1])
        ends = (low, _run_length(sorted_values, low), high, _run_length(sorted_values, high))
        if iqr is not None:
            flags.extend(rules.heaping_flags(n, decimals, iqr, _round_hits(sorted_values), ends))
        distinct = _distinct_up_to(sorted_values, FEW_DISTINCT)
        longest = None
        if n >= MIN_FOR_CONFIDENT and distinct > 1:
            longest = _longest_run(sorted_values, rules.tie_run_length(n))
        flags.extend(rules.tie_flags(n, distinct, longest, ends))
    return rules.quality_of(sample, n, flags), distinct
