"""Data-quality observations worth reporting about one column.

===========================  ==================================================
Flag code                    When it is raised
===========================  ==================================================
``no_values``                no usable value at all
``missing``                  blank cells or missing tokens were left out
``non_numeric``              cells that are not numbers were left out
``impossible``               values outside the declared valid range were left out
``non_finite``               infinities or overflowing numbers were left out
``ambiguous_grouping``       cells such as "1,234" that the other decimal convention
                             reads differently were read under the declared one
``percent_signs``            cells carried a "%"; the numbers were kept as written
``currency_marks``           cells carried a currency symbol or code, set aside
``encoding_guessed``         the text file was not UTF-8; a fallback codec was used
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
published standard; each is a module constant so the methods text can state it.
"""

from __future__ import annotations

import numpy as np

from narrator.engine.distributions import binomial_sf
from narrator.findings import Quality, QualityFlag
from narrator.reading.sample import Sample

MIN_FOR_SHAPE = 8  # below this no shape claim (D'Agostino's test needs n >= 8)
MIN_FOR_CONFIDENT = 20  # below this the text hedges
FEW_DISTINCT = 10
TIE_SHARE = 0.20
PILE_UP_SHARE = 0.05
PILE_UP_MIN_COUNT = 3
HEAPING_RATIO = 2.0  # observed share at round values at least this many times the chance share
HEAPING_P = 0.001  # and a one-sided binomial test below this
SUSPECT_CODES = (-9.0, -99.0, -999.0, -9999.0, -99999.0, 99.0, 999.0, 9999.0, 99999.0, 999999.0, -1.0, -8.0)
CODE_DISTANCE_IQR = 3.0  # a code must sit beyond the far-out fences of the other values
CODE_NEIGHBOURHOOD = 0.5  # neighbours of a suspected code: within this share of the IQR
SPIKE_RATIO = 3.0  # a code holds at least this many times its neighbours' typical count
MIN_CODE_COUNT = 2  # one value is never a spike: a code for "missing" is typed again and again
ROWS_SHOWN = 10


def _exclusion_flags(sample: Sample) -> list[QualityFlag]:
    flags = []
    total = max(sample.n_rows, 1)
    for exclusion in sample.exclusions:
        if exclusion.count:
            flags.append(
                QualityFlag(
                    code=exclusion.reason,
                    count=exclusion.count,
                    share=exclusion.count / total,
                    rows=tuple(int(r) for r in exclusion.rows[:ROWS_SHOWN]),
                    texts=tuple(exclusion.examples),
                    detail={"texts_complete": float(exclusion.examples_complete)} if exclusion.examples else {},
                )
            )
    return flags


def _reading_flags(sample: Sample) -> list[QualityFlag]:
    """What the reader saw in the cells and settled by rule, so a reader of the report can check it.

    A cell that two conventions read differently is never guessed silently:
    it is read under the declared convention and counted here.
    """
    source = sample.source or {}
    total = max(sample.n_rows, 1)
    flags = []
    ambiguous = int(source.get("ambiguous_grouping") or 0)
    if ambiguous:
        flags.append(QualityFlag(
            code="ambiguous_grouping", count=ambiguous, share=ambiguous / total,
            rows=tuple(int(r) for r in source.get("ambiguous_grouping_rows", ())[:ROWS_SHOWN]),
            detail={"decimal_comma": float(bool(source.get("decimal_comma")))},
        ))
    percent = int(source.get("percent_cells") or 0)
    if percent:
        flags.append(QualityFlag(code="percent_signs", count=percent, share=percent / total))
    currencies = source.get("currency_symbols") or ()
    if currencies:
        flags.append(QualityFlag(code="currency_marks", count=len(currencies),
                                 detail={"distinct_marks": float(len(currencies))}))
    if source.get("encoding_guessed"):
        flags.append(QualityFlag(code="encoding_guessed", count=1))
    return flags


def _linear_quantiles(value_at, count: int, probabilities) -> np.ndarray:
    """numpy.quantile(..., method="linear") of a sorted array of ``count`` values seen through ``value_at``.

    The same index arithmetic and interpolation steps as numpy's own (``_get_indexes`` and ``_lerp``),
    so the result is the same number to the last bit, without building the array.
    """
    quantiles = np.asanyarray(probabilities, dtype=float)
    virtual = (count - 1) * quantiles
    previous = np.floor(virtual)
    following = previous + 1
    above = virtual >= count - 1
    previous[above] = -1
    following[above] = -1
    previous = previous.astype(np.intp)
    following = following.astype(np.intp)
    positions = np.arange(count)
    lower = value_at(positions[previous])
    upper = value_at(positions[following])
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
    if count < MIN_CODE_COUNT:
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
    """Values that look like missing-value codes: a value people type for "missing" (-99, 999, -1...),
    repeated, far from the rest, and a spike (far more common than the values next to it).
    A lone 99 among real values in the 80s and 90s is none of these."""
    flags = []
    n = sorted_values.size
    for code in SUSPECT_CODES:
        left = int(np.searchsorted(sorted_values, code, side="left"))
        right = int(np.searchsorted(sorted_values, code, side="right"))
        count = right - left
        if count < MIN_CODE_COUNT:
            continue
        if n - count < 4:
            continue

        def others_at(index: np.ndarray, left: int = left, count: int = count) -> np.ndarray:
            # The sorted values without the code's run: positions at or past the run shift by its length.
            return sorted_values[np.where(index < left, index, index + count)]

        q1, q3 = _linear_quantiles(others_at, n - count, [0.25, 0.75])
        spread = q3 - q1
        if spread <= 0:
            others = np.concatenate([sorted_values[:left], sorted_values[right:]])
            spread = float(np.std(others)) or 1.0
        far = code < q1 - CODE_DISTANCE_IQR * spread or code > q3 + CODE_DISTANCE_IQR * spread
        if far and _is_spike(sorted_values, left, right, CODE_NEIGHBOURHOOD * spread):
            where = np.flatnonzero(values == code)[:ROWS_SHOWN]
            flags.append(
                QualityFlag(
                    code="missing_code",
                    count=count,
                    share=count / sorted_values.size,
                    rows=tuple(int(r) for r in rows[where]),
                    values=(code,),
                )
            )
    return flags


def _heaping(values: np.ndarray, decimals: int, iqr: float) -> list[QualityFlag]:
    """Excess of values at round numbers: multiples of 5 and 10 for whole numbers
    (when the spread is wide enough for that to mean anything), whole numbers
    for data recorded with decimals."""
    n = values.size
    if n < 30:
        return []
    checks: list[tuple[float, float]] = []  # (base, chance share)
    if decimals == 0:
        if iqr >= 10:
            checks = [(10.0, 0.1), (5.0, 0.2)]
    elif decimals <= 3:
        checks = [(1.0, 10.0**-decimals)]
    distance = np.empty_like(values)
    tolerance = np.empty_like(values)
    for base, chance in checks:
        ratio = values if base == 1.0 else values / base
        # |ratio - round(ratio)| < 1e-9 max(1, |ratio|), in two reused buffers (no temporaries at large n).
        np.round(ratio, out=distance)
        np.subtract(ratio, distance, out=distance)
        np.abs(distance, out=distance)
        np.abs(ratio, out=tolerance)
        np.maximum(tolerance, 1.0, out=tolerance)
        tolerance *= 1e-9
        hits = int(np.count_nonzero(distance < tolerance))
        observed = hits / n
        if observed >= HEAPING_RATIO * chance:
            # One-sided binomial test, P(B >= hits): scipy.stats.binomtest(..., alternative="greater").
            p = min(1.0, binomial_sf(hits - 1, n, chance))
            if p < HEAPING_P:
                return [
                    QualityFlag(
                        code="heaping",
                        count=hits,
                        share=observed,
                        values=(base,),
                        detail={"base": base, "expected_share": chance, "p_value": p},
                    )
                ]
    return []


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


def _ties(sorted_values: np.ndarray) -> tuple[list[QualityFlag], int]:
    """Tie flags from the sorted values by binary search; the distinct count is exact up to FEW_DISTINCT + 1
    (more distinct values than that report FEW_DISTINCT + 1: no flag needs the exact number then)."""
    n = sorted_values.size
    distinct = _distinct_up_to(sorted_values, FEW_DISTINCT)
    flags = []
    if distinct == 1:
        flags.append(QualityFlag(code="constant", count=n, share=1.0, values=(float(sorted_values[0]),)))
        return flags, distinct
    if distinct <= FEW_DISTINCT and n > 2 * FEW_DISTINCT:
        flags.append(QualityFlag(code="few_distinct", count=distinct, detail={"distinct": float(distinct)}))
    if n >= MIN_FOR_CONFIDENT:
        # The shortest run that reaches the tie share (the same float comparison as the flag's).
        shortest = max(1, int(TIE_SHARE * n) - 1)
        while shortest / n < TIE_SHARE:
            shortest += 1
        top = _longest_run(sorted_values, shortest)
        if top is not None:
            length, value = top
            flags.append(QualityFlag(code="many_ties", count=length, share=float(length / n), values=(value,)))
    if distinct > 3 and n >= MIN_FOR_CONFIDENT:
        first_run = _run_length(sorted_values, sorted_values[0])
        last_run = _run_length(sorted_values, sorted_values[-1])
        for code, run, value in (
            ("floor", first_run, sorted_values[0]),
            ("ceiling", last_run, sorted_values[-1]),
        ):
            if run >= PILE_UP_MIN_COUNT and run / n >= PILE_UP_SHARE:
                flags.append(QualityFlag(code=code, count=int(run), share=float(run / n), values=(float(value),)))
    return flags, distinct


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
    flags = _exclusion_flags(sample) + _reading_flags(sample)
    n = int(sorted_values.size)
    distinct = 0
    if n == 0:
        flags.append(QualityFlag(code="no_values", count=0))
    else:
        flags.extend(_missing_codes(sorted_values, sample.values, sample.rows))
        if iqr is not None:
            flags.extend(_heaping(sample.values, decimals, iqr))
        tie_flags, distinct = _ties(sorted_values)
        flags.extend(tie_flags)
    if n < MIN_FOR_SHAPE:
        flags.append(QualityFlag(code="too_few_for_shape", count=n))
    elif n < MIN_FOR_CONFIDENT:
        flags.append(QualityFlag(code="small_sample", count=n))
    n_missing = sample.n_missing
    impossible = sample.excluded("impossible")
    non_numeric = sample.excluded("non_numeric")
    quality = Quality(
        n_rows=sample.n_rows,
        n_missing=n_missing,
        missing_share=n_missing / sample.n_rows if sample.n_rows else 0.0,
        n_non_numeric=non_numeric.count if non_numeric else 0,
        n_impossible=impossible.count if impossible else 0,
        n_used=n,
        flags=tuple(flags),
    )
    return quality, distinct
