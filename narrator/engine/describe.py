"""describe(): one numeric column in, complete Findings out. A pure function.

The steps, in order, each in its own module:

1. exclude values outside a declared valid range (impossible values);
2. sort once; moments two-pass (:mod:`.moments`); type 7 quantiles;
3. histogram plan and bin sensitivity (:mod:`.bins`); kernel density (:mod:`.density`);
4. medcouple (exact up to ``robust.MEDCOUPLE_EXACT_MAX_N`` values, else on a
   recorded fixed-seed subsample) and Bowley skewness (:mod:`.robust`); the
   shape judgement (:mod:`.shape`);
5. outliers by the chosen or automatic rule (:mod:`.outliers`);
6. with and without the flagged values; the lead measure (:mod:`.center`);
7. intervals (:mod:`.intervals`), unless the rows are the whole population;
8. data-quality flags (:mod:`.quality`);
9. what a memo leads with: clusters, unusual values and entry errors, concentration of the
   total (:mod:`.decision`, called from :func:`.rules.decide` for every engine).

Speed: the one sort is the only O(n log n) step. On this project's machines
numpy's sort (vectorised, x86-simd-sort) beats ``np.partition`` at more than one
rank, so every other step reads the sorted array: quantiles, MAD and tie checks
by index or binary search, histogram counts by bisection, the with-and-without
values as a slice. tests/benchmarks/ measures it.
"""

from __future__ import annotations

import functools
import math
import os
import re
import sys
from dataclasses import replace
from importlib import metadata

import numpy as np

from narrator.engine import bins, density, outliers, robust, rules
from narrator.engine.moments import (
    central_moments,
    median_abs_deviation_sorted,
    median_sorted,
    quantiles_sorted,
    scaled,
    trimmed_mean,
)
from narrator.engine.quality import assess_quality
from narrator.engine.rules import (
    BANDWIDTH_RULES,
    BIN_RULES,
    DEFAULT_SEED,
    MAD_NORMAL_SCALE,
    PERCENTILES,
    Extremes,
    Gathered,
    Options,
    density_focus_of,
)
from narrator.engine.shape import MIN_FOR_SHAPE, is_clearly_skewed
from narrator.engine.ties import order_counts_sorted
from narrator.errors import NarratorError
from narrator.findings import Findings
from narrator.reading.sample import Exclusion, Sample, clean_label, guess_decimals

__all__ = ["BANDWIDTH_RULES", "BIN_RULES", "DEFAULT_SEED", "LIBRARIES", "MAD_NORMAL_SCALE", "PERCENTILES",
           "density_focus_of", "describe", "library_versions"]

LIBRARIES = ("numpy", "scipy", "pandas", "matplotlib", "python-docx", "babel")


def library_versions() -> dict[str, str]:
    """Installed versions of narrator and the libraries a report names, as importlib.metadata gives them.

    Most come from the names of the ``<name>-<version>.dist-info`` folders on the import path,
    read in one listing per folder (importlib.metadata opens each package's metadata, tens of
    milliseconds for these seven); any other kind of installation is asked the usual way. The
    answer is kept for the import path as it stands (a process describing many columns asks once).
    """
    return dict(_versions_on(tuple(sys.path)))


@functools.lru_cache(maxsize=4)
def _versions_on(path: tuple[str, ...]) -> tuple[tuple[str, str], ...]:
    wanted = {_normalized(name): name for name in ("narrator", *LIBRARIES)}
    versions: dict[str, str] = {}
    for folder in path:
        try:
            entries = os.listdir(folder or ".")
        except OSError:
            continue
        for entry in entries:
            if not entry.endswith(".dist-info"):
                continue
            project, _, version = entry[: -len(".dist-info")].partition("-")
            name = wanted.get(_normalized(project))
            if name is not None and version and name not in versions:
                versions[name] = version
        if len(versions) == len(wanted):
            break
    for name in wanted.values():
        if name not in versions:
            try:
                versions[name] = metadata.version(name)
            except metadata.PackageNotFoundError:
                continue
    return tuple((name, versions[name]) for name in ("narrator", *LIBRARIES) if name in versions)


def _normalized(project: str) -> str:
    """A project name as packaging normalizes it (PEP 503): lower case, runs of -_. as one -."""
    return re.sub(r"[-_.]+", "-", project).lower()


def _as_sample(values_or_sample, name: str | None, unit: str | None) -> Sample:
    # A label or unit may come from a recipe or the command line: it is shown in
    # the document and on figures, so it is cleaned like a column name.
    name = None if name is None else clean_label(name) or None
    unit = None if unit is None else clean_label(unit) or None
    if isinstance(values_or_sample, Sample):
        sample = values_or_sample
        if unit is not None and sample.unit is not None and sample.unit != unit:
            # The unit is said once (narrator.request): a later stage never silently overrides it.
            raise NarratorError(f"the unit was given twice: '{sample.unit}' when the values were read and "
                                f"'{unit}' when they were described; give it once")
        if unit is not None and sample.unit != unit:
            sample = replace(sample, unit=unit)
        if name is not None and sample.name != name:
            sample = replace(sample, name=name)
        return sample
    try:
        return Sample.from_values(values_or_sample, name=name or "value", unit=unit)
    except (TypeError, ValueError) as exc:
        raise NarratorError(f"the values could not be read as numbers: {exc}") from None


def _apply_valid_range(sample: Sample, valid_min: float | None, valid_max: float | None) -> Sample:
    if valid_min is None and valid_max is None:
        return sample
    if valid_min is not None and valid_max is not None and valid_min > valid_max:
        raise NarratorError(f"the valid range is empty: minimum {valid_min} is above maximum {valid_max}")
    outside = np.zeros(sample.values.size, dtype=bool)
    if valid_min is not None:
        outside |= sample.values < valid_min
    if valid_max is not None:
        outside |= sample.values > valid_max
    if not outside.any():
        return sample
    count = int(outside.sum())
    new_rows = tuple(int(r) for r in sample.rows[outside][:10])
    new_values = tuple(float(v) for v in sample.values[outside][:10])
    new_examples = tuple(f"{float(v):g}" for v in sample.values[outside][:5])
    exclusions = []
    merged = False
    for exclusion in sample.exclusions:
        if exclusion.reason == "impossible":
            exclusion = Exclusion(
                "impossible",
                exclusion.count + count,
                (exclusion.rows + new_rows)[:10],
                (exclusion.examples + new_examples)[:5],
                (exclusion.values + new_values)[:10],
            )
            merged = True
        exclusions.append(exclusion)
    if not merged:
        exclusions.append(Exclusion("impossible", count, new_rows, new_examples, new_values))
    keep = ~outside
    ids = None if sample.ids is None else sample.ids[keep]
    return replace(sample, values=sample.values[keep], rows=sample.rows[keep], exclusions=tuple(exclusions),
                   ids=ids)


def describe(
    values_or_sample,
    *,
    name: str | None = None,
    unit: str | None = None,
    valid_min: float | None = None,
    valid_max: float | None = None,
    lower_bound: float | None = None,
    upper_bound: float | None = None,
    population: bool = False,
    outlier_rule: str | None = None,
    level: float = 0.95,
    bin_rule: str = "freedman-diaconis",
    bandwidth_rule: str = "silverman",
    seed: int = DEFAULT_SEED,
) -> Findings:
    """Compute every finding about one numeric variable.

    ``values_or_sample`` is a :class:`~narrator.reading.sample.Sample` (from
    :func:`narrator.reading.columns.read_column`) or anything numpy turns into a 1-D float
    array. Non-finite values are left out and counted. ``lower_bound`` and
    ``upper_bound`` are bounds the quantity cannot cross (0 for a wait); the
    density is reflected there. ``valid_min``/``valid_max`` declare the valid
    range: values outside are impossible and are excluded, never called outliers.
    ``population=True`` says the rows are the whole population: no intervals.

    >>> f = describe([2, 4, 4, 4, 5, 5, 7, 9])
    >>> f.center.mean, f.center.median, bool(f.spread.sd == np.std([2, 4, 4, 4, 5, 5, 7, 9], ddof=1))
    (5.0, 4.5, True)
    """
    options = Options(valid_min=valid_min, valid_max=valid_max, lower_bound=lower_bound, upper_bound=upper_bound,
                      population=population, outlier_rule=outlier_rule, level=level, bin_rule=bin_rule,
                      bandwidth_rule=bandwidth_rule, seed=seed).check()
    sample = _apply_valid_range(_as_sample(values_or_sample, name, unit), *options.effective_range)
    values = sample.values
    n = int(values.size)
    sorted_values = np.sort(values)
    integer_valued = bool(n) and _all_whole(sorted_values)
    # The precision the values carry: a file may write whole numbers as "41.0".
    decimals = 0 if integer_valued else guess_decimals(sorted_values)
    variable = options.variable(sample.name, sample.unit, decimals=decimals, integer_valued=integer_valued)
    provenance = {**sample.source, "libraries": library_versions()}
    if n == 0:
        quality, _ = assess_quality(sample, sorted_values, iqr=None, decimals=0)
        return rules.empty_findings(options, variable, quality, provenance)

    # Work in power-of-two scaled units so values near 1e308 cannot overflow; scale back at the end.
    unit_values, factor = scaled(
        sorted_values, largest=max(abs(float(sorted_values[0])), abs(float(sorted_values[-1])))
    )
    moments = central_moments(unit_values)
    quantile_values = tuple(float(v) for v in quantiles_sorted(unit_values, PERCENTILES))
    _, _, q1, _, q3, _, _ = quantile_values
    median = median_sorted(unit_values)
    iqr = q3 - q1
    mad = median_abs_deviation_sorted(unit_values, median)
    sd = moments.sd
    mean = moments.mean
    has_spread = bool(unit_values[-1] > unit_values[0])
    medcouple_value, medcouple_method = robust.medcouple_of_sample(unit_values, seed) if n >= 3 else (None, "exact")

    histogram_plan = None
    sensitivity = None
    density_estimate = fine_density = None
    if has_spread:
        histogram_plan = bins.histogram_plan(
            sorted_values, rule=bin_rule, integer_valued=integer_valued, sd=sd * factor, iqr=iqr * factor,
            presorted=True,
        )
        if n >= MIN_FOR_SHAPE:
            sensitivity = bins.bin_sensitivity(
                sorted_values, histogram_plan.width, integer_valued=integer_valued, presorted=True
            )
        density_estimate, fine_density = density.estimate_density(
            sorted_values,
            rule=bandwidth_rule,
            lower_bound=lower_bound,
            upper_bound=upper_bound,
            sd=sd * factor,
            iqr=iqr * factor,
            presorted=True,
            keep_fine=True,
        )
    shape = rules.shape_of(n, moments, q1, median, q3, medcouple_value, medcouple_method, density_estimate,
                           sensitivity, has_spread, tails=(quantile_values[0], quantile_values[-1]),
                           population=options.population)

    medcouple_or_zero = medcouple_value if medcouple_value is not None else 0.0
    if outlier_rule == "esd":
        flagged = outliers.detect_outliers(
            sample.values, sample.rows, rule=outlier_rule, q1=q1, median=median, q3=q3, medcouple=medcouple_or_zero,
            skew_clear=is_clearly_skewed(shape), mad=mad, mean=mean, sd=sd, factor=factor)
    else:
        test = rules.outlier_test(
            rules.rule_choice(outlier_rule, is_clearly_skewed(shape)), n, q1=q1, median=median, q3=q3, mad=mad,
            medcouple=medcouple_or_zero,
            mean_absolute_deviation=lambda: float(np.mean(np.abs(unit_values - median))))
        flagged = outliers.flag_sorted(test, sample.values, sample.rows, sorted_values, factor)
    if sample.ids is not None and flagged.rows:
        # Rows are in file order, so each flagged row is found by bisection.
        where = np.searchsorted(sample.rows, np.asarray(flagged.rows, dtype=np.int64))
        flagged = replace(flagged, ids=tuple(str(sample.ids[k]) for k in where))

    remaining = _remove_flagged(unit_values, flagged, factor)
    rest = sorted_values[flagged.count_low : n - flagged.count_high]
    quality, _ = assess_quality(sample, sorted_values, iqr=iqr * factor, decimals=decimals)
    histogram_focus = None
    layout = rules.focus_layout_for(histogram_plan, flagged.far_lower_fence, flagged.far_upper_fence,
                                    float(sorted_values[0]), float(sorted_values[-1]))
    if layout is not None:
        histogram_focus = bins.focus_from_sorted(histogram_plan, layout, sorted_values)
    gathered = Gathered(
        n=n, factor=factor, low=float(sorted_values[0]), high=float(sorted_values[-1]), moments=moments,
        value_at=sorted_values.__getitem__, median=median, quantiles=quantile_values, mad=mad,
        trimmed=(trimmed_mean(unit_values, 0.10), trimmed_mean(unit_values, 0.20)), shape=shape, outliers=flagged,
        rest_moments=central_moments(remaining) if remaining.size and flagged.count else None,
        rest_at=rest.__getitem__, rest_medcouple=lambda: robust.medcouple_of_sample(remaining, seed),
        farthest=_farthest(sample, sorted_values, mean * factor, n), every_value=lambda: sorted_values,
        histogram=histogram_plan, density=density_estimate,
        density_focus=density_focus_of(density_estimate, fine_density, histogram_focus),
        histogram_focus=histogram_focus, quality=quality,
        order_counts=order_counts_sorted(sorted_values, q1=q1 * factor, median=median * factor, q3=q3 * factor))
    return rules.decide(gathered, options, variable, provenance)


def _farthest(sample: Sample, sorted_values: np.ndarray, mean: float, n: int) -> tuple[float, int] | None:
    """(value, row) of the value farthest from the mean, by :func:`narrator.engine.rules.farthest_plan`."""
    if n < 2:
        return None
    values = sample.values
    low_index, high_index = int(np.argmin(values)), int(np.argmax(values))
    next_up = int(np.searchsorted(sorted_values, sorted_values[0], side="right"))
    next_down = int(np.searchsorted(sorted_values, sorted_values[-1], side="left")) - 1
    extremes = Extremes(
        low=float(values[low_index]), low_row=int(sample.rows[low_index]), high=float(values[high_index]),
        high_row=int(sample.rows[high_index]),
        next_up=float(sorted_values[next_up]) if next_up < n else math.inf,
        next_down=float(sorted_values[next_down]) if next_down >= 0 else -math.inf)
    found = rules.farthest_plan(extremes, mean, n)
    if found is None:
        index = int(np.argmax(np.abs(values - mean)))
        found = (float(values[index]), int(sample.rows[index]))
    return found


def _all_whole(sorted_values: np.ndarray) -> bool:
    """Whether every value is a whole number (x == floor(x), the same test as x mod 1 == 0 for finite x).

    A spread-out probe of about a thousand values settles most non-integer columns without a full pass.
    """
    probe = sorted_values[:: max(1, sorted_values.size // 1024)]
    if not bool(np.all(np.floor(probe) == probe)):
        return False
    return bool(np.all(np.floor(sorted_values) == sorted_values))


def _remove_flagged(unit_values: np.ndarray, flagged, factor: float) -> np.ndarray:
    """Sorted values with the flagged ones taken out: a slice of the sorted values.

    Every rule flags a lowest and a highest run of the sorted values (a fence, a score
    threshold, or the ESD's removal from the ends), so the flagged counts alone say where
    the rest begins and ends; the listed extremes are checked against the slice's ends.
    """
    if not flagged.count:
        return unit_values
    n = unit_values.size
    low_count, high_count = flagged.count_low, flagged.count_high
    low_listed = np.asarray(flagged.low_values, dtype=float) / factor
    high_listed = np.asarray(flagged.high_values, dtype=float) / factor
    ends = np.concatenate([unit_values[: low_listed.size], unit_values[n - high_listed.size :]])
    if low_count + high_count > n or not np.allclose(ends, np.concatenate([low_listed, high_listed]),
                                                     rtol=1e-12, atol=0.0):
        raise NarratorError("internal: the flagged values are not the ends of the sorted values")
    return unit_values[low_count : n - high_count]
