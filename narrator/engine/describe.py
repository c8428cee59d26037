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
8. data-quality flags (:mod:`.quality`).

Speed: the one sort is the only O(n log n) step. On this project's machines
numpy's sort (vectorised, x86-simd-sort) beats ``np.partition`` at more than one
rank, so every other step reads the sorted array: quantiles, MAD and tie checks
by index or binary search, histogram counts by bisection, the with-and-without
values as a slice. tests/benchmarks/ measures it.
"""

from __future__ import annotations

import math
import os
import re
import sys
from dataclasses import replace
from importlib import metadata

import numpy as np

from narrator.engine import bins, density, intervals, outliers, robust
from narrator.engine.center import choose_lead, mean_pull
from narrator.engine.moments import (
    QUANTILE_METHOD,
    central_moments,
    excess_kurtosis,
    median_abs_deviation_sorted,
    median_sorted,
    quantiles_sorted,
    scaled,
    skewness_g1,
    skewness_test,
    trimmed_mean,
)
from narrator.engine.quality import MIN_FOR_SHAPE, assess_quality
from narrator.engine.shape import ShapeSignals, classify_shape, is_clearly_skewed, substantial_peaks
from narrator.engine.ties import order_counts_sorted
from narrator.errors import NarratorError
from narrator.findings import (
    OUTLIER_RULES,
    SCHEMA_VERSION,
    Center,
    Findings,
    Intervals,
    Shape,
    Spread,
    Variable,
    WithoutOutliers,
)
from narrator.reading.sample import Exclusion, Sample, clean_label, guess_decimals

DEFAULT_SEED = 20261201
MAD_NORMAL_SCALE = 1.482602218505602  # 1 / Phi^-1(3/4), as scipy.stats.median_abs_deviation(scale="normal")
PERCENTILES = (0.05, 0.10, 0.25, 0.50, 0.75, 0.90, 0.95)
LIBRARIES = ("numpy", "scipy", "pandas", "matplotlib", "python-docx", "babel")
BIN_RULES = ("freedman-diaconis", "scott", "sturges", "doane")
BANDWIDTH_RULES = ("silverman", "scott", "sheather-jones")


def library_versions() -> dict[str, str]:
    """Installed versions of narrator and the libraries a report names, as importlib.metadata gives them.

    Most come from the names of the ``<name>-<version>.dist-info`` folders on the import path,
    read in one listing per folder (importlib.metadata opens each package's metadata, tens of
    milliseconds for these seven); any other kind of installation is asked the usual way.
    """
    wanted = {_normalized(name): name for name in ("narrator", *LIBRARIES)}
    versions: dict[str, str] = {}
    for folder in sys.path:
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
    return {name: versions[name] for name in ("narrator", *LIBRARIES) if name in versions}


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
            )
            merged = True
        exclusions.append(exclusion)
    if not merged:
        exclusions.append(Exclusion("impossible", count, new_rows, new_examples))
    keep = ~outside
    ids = None if sample.ids is None else sample.ids[keep]
    return replace(sample, values=sample.values[keep], rows=sample.rows[keep], exclusions=tuple(exclusions),
                   ids=ids)


def _check_options(outlier_rule, level, bin_rule, bandwidth_rule, lower_bound, upper_bound) -> None:
    if outlier_rule is not None and outlier_rule not in OUTLIER_RULES:
        raise NarratorError(f"unknown outlier rule {outlier_rule!r}; choose one of {', '.join(OUTLIER_RULES)}")
    if not 0.5 <= level < 1:
        raise NarratorError(f"interval level must be at least 0.5 and below 1, not {level}")
    if bin_rule not in BIN_RULES:
        raise NarratorError(f"unknown bin rule {bin_rule!r}; choose one of {', '.join(BIN_RULES)}")
    if bandwidth_rule not in BANDWIDTH_RULES:
        raise NarratorError(
            f"unknown bandwidth rule {bandwidth_rule!r}; choose one of {', '.join(BANDWIDTH_RULES)}"
        )
    if lower_bound is not None and upper_bound is not None and lower_bound >= upper_bound:
        raise NarratorError(f"lower bound {lower_bound} must be below upper bound {upper_bound}")


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
    _check_options(outlier_rule, level, bin_rule, bandwidth_rule, lower_bound, upper_bound)
    # A bound the quantity cannot cross is also a limit of the valid range: a wait of -3 days is impossible.
    # (A valid minimum of 0 is a bound like any other: compare with None, not truthiness.)
    effective_min = valid_min if lower_bound is None else max(
        lower_bound, lower_bound if valid_min is None else valid_min)
    effective_max = valid_max if upper_bound is None else min(
        upper_bound, upper_bound if valid_max is None else valid_max)
    sample = _apply_valid_range(_as_sample(values_or_sample, name, unit), effective_min, effective_max)
    values = sample.values
    n = int(values.size)
    sorted_values = np.sort(values)
    integer_valued = bool(n) and _all_whole(sorted_values)
    # The precision the values carry: a file may write whole numbers as "41.0".
    decimals = 0 if integer_valued else guess_decimals(sorted_values)
    variable = Variable(
        name=sample.name,
        unit=sample.unit,
        valid_min=valid_min,
        valid_max=valid_max,
        lower_bound=lower_bound,
        upper_bound=upper_bound,
        population=population,
        decimals=decimals,
        integer_valued=integer_valued,
    )
    options = {
        "outlier_rule": outlier_rule or "auto",
        "quantile_method": QUANTILE_METHOD,
        "level": level,
        "trim_proportions": [0.1, 0.2],
        "bin_rule": bin_rule,
        "bandwidth_rule": bandwidth_rule,
        "seed": seed,
        "population": population,
        "valid_min": valid_min,
        "valid_max": valid_max,
        "lower_bound": lower_bound,
        "upper_bound": upper_bound,
    }
    provenance = {**sample.source, "libraries": library_versions()}

    if n == 0:
        quality, _ = assess_quality(sample, sorted_values, iqr=None, decimals=0)
        return Findings(
            schema_version=SCHEMA_VERSION,
            variable=variable,
            n=0,
            n_missing=sample.n_missing,
            center=None,
            spread=None,
            shape=classify_shape(_empty_signals()),
            outliers=None,
            without_outliers=None,
            intervals=Intervals(mean=None, median=None, reason="too_few"),
            histogram=None,
            density=None,
            quality=quality,
            options=options,
            provenance=provenance,
        )

    # Work in power-of-two scaled units so values near 1e308 cannot overflow; scale back at the end.
    unit_values, factor = scaled(
        sorted_values, largest=max(abs(float(sorted_values[0])), abs(float(sorted_values[-1])))
    )
    moments = central_moments(unit_values)
    quantile_values = quantiles_sorted(unit_values, PERCENTILES)
    p5, p10, q1, median, q3, p90, p95 = (float(v) for v in quantile_values)
    median = median_sorted(unit_values)
    iqr = q3 - q1
    mad = median_abs_deviation_sorted(unit_values, median)
    sd = moments.sd
    mean = moments.mean
    has_spread = bool(unit_values[-1] > unit_values[0])

    g1, g1_se = skewness_g1(moments)
    g2 = excess_kurtosis(moments)
    z, p = skewness_test(moments)
    bowley = robust.bowley_skewness(q1, median, q3)
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

    shape = classify_shape(
        ShapeSignals(
            n=n,
            skewness=g1,
            skewness_se=g1_se,
            skewness_test_z=z,
            skewness_test_p=p,
            bowley=bowley,
            medcouple=medcouple_value,
            medcouple_method=medcouple_method,
            excess_kurtosis=g2,
            density_peaks=substantial_peaks(density_estimate),
            bin_sensitivity=sensitivity,
            has_spread=has_spread,
        )
    )
    clearly_skewed = is_clearly_skewed(shape)

    flagged = outliers.detect_outliers(
        sample.values if factor == 1.0 else sample.values / factor,
        sample.rows,
        rule=outlier_rule,
        q1=q1,
        median=median,
        q3=q3,
        medcouple=medcouple_value if medcouple_value is not None else 0.0,
        skew_clear=clearly_skewed,
        mad=mad,
        mean=mean,
        sd=sd,
    )
    if factor != 1.0:
        flagged = _rescale_outliers(flagged, factor)
    if sample.ids is not None and flagged.rows:
        # Rows are in file order, so each flagged row is found by bisection.
        where = np.searchsorted(sample.rows, np.asarray(flagged.rows, dtype=np.int64))
        flagged = replace(flagged, ids=tuple(str(sample.ids[k]) for k in where))

    remaining = _remove_flagged(unit_values, flagged, factor)
    remaining_moments = central_moments(remaining) if remaining.size else None
    without = _without_outliers(remaining, remaining_moments, factor, mean, median, sd, iqr)
    lead, lead_reasons = choose_lead(
        clearly_skewed=clearly_skewed,
        several_peaks=shape.label in ("bimodal", "multimodal"),
        mean_shift=without.mean_change,
        sd_without=without.sd,
    )
    lead_without = _lead_without(remaining, remaining_moments, flagged.count > 0, seed)
    without = _replace_lead(without, lead_without, lead)
    without = _with_influence(without, sample, sorted_values, mean * factor, n)

    pull, material = mean_pull(mean, median, sd)
    center = Center(
        mean=mean * factor,
        median=median * factor,
        trimmed_mean_10=trimmed_mean(unit_values, 0.10) * factor,
        trimmed_mean_20=trimmed_mean(unit_values, 0.20) * factor,
        lead=lead,
        lead_reasons=lead_reasons,
        mean_minus_median=(mean - median) * factor,
        mean_median_gap_material=material,
        mean_pull=pull,
    )
    minimum = float(sorted_values[0])
    maximum = float(sorted_values[-1])
    positive = minimum > 0
    cv = None
    cv_reason = "not_positive"
    if positive and n > 1:
        cv, cv_reason = (sd / mean, "computed") if mean != 0 else (None, "zero_mean")
    spread = Spread(
        sd=sd * factor,
        variance=moments.variance * factor * factor if factor < 1e150 else math.inf,
        q1=q1 * factor,
        q3=q3 * factor,
        iqr=iqr * factor,
        quantile_method=QUANTILE_METHOD,
        mad=mad * factor,
        mad_scaled=mad * MAD_NORMAL_SCALE * factor,
        min=minimum,
        max=maximum,
        range=(unit_values[-1] - unit_values[0]) * factor,
        p5=p5 * factor,
        p10=p10 * factor,
        p90=p90 * factor,
        p95=p95 * factor,
        cv=cv,
        cv_reason=cv_reason,
    )

    interval_findings = _intervals(
        sorted_values, population=population, level=level, seed=seed, skewness=g1, clearly_skewed=clearly_skewed
    )
    quality, _ = assess_quality(sample, sorted_values, iqr=iqr * factor, decimals=decimals)
    histogram_focus = None
    if histogram_plan is not None and flagged is not None:
        layout = bins.focus_layout(histogram_plan, lowest=float(sorted_values[0]), highest=float(sorted_values[-1]),
                                   far_lower=flagged.far_lower_fence, far_upper=flagged.far_upper_fence)
        if layout is not None:
            histogram_focus = bins.focus_from_sorted(histogram_plan, layout, sorted_values)
    density_focus = density_focus_of(density_estimate, fine_density, histogram_focus)
    return Findings(
        schema_version=SCHEMA_VERSION,
        variable=variable,
        n=n,
        n_missing=sample.n_missing,
        center=center,
        spread=spread,
        shape=shape,
        outliers=flagged,
        without_outliers=without,
        intervals=interval_findings,
        histogram=histogram_plan,
        density=density_estimate,
        quality=quality,
        options=options,
        provenance=provenance,
        histogram_focus=histogram_focus,
        density_focus=density_focus,
        order_counts=order_counts_sorted(sorted_values, q1=q1 * factor, median=median * factor, q3=q3 * factor),
    )


def density_focus_of(estimate, fine, focus):
    """The density curve over the focused histogram's part of the axis (None without a focus)."""
    if focus is None or estimate is None or fine is None:
        return None
    low, high = focus.edges[0], focus.edges[-1]
    grid, values = density.curve_between(fine, low, high)
    return replace(estimate, grid=tuple(float(t) for t in grid), values=tuple(float(v) for v in values),
                   peaks=tuple(p for p in estimate.peaks if low <= p <= high))


def _rescale_outliers(flagged, factor: float):
    """Outliers found in power-of-two scaled units, expressed back in the data's units."""
    def back(value):
        return None if value is None else value * factor

    return replace(
        flagged,
        lower_fence=back(flagged.lower_fence),
        upper_fence=back(flagged.upper_fence),
        far_lower_fence=back(flagged.far_lower_fence),
        far_upper_fence=back(flagged.far_upper_fence),
        values=tuple(v * factor for v in flagged.values),
        far_out_values=tuple(v * factor for v in flagged.far_out_values),
        low_range=None if flagged.low_range is None else tuple(v * factor for v in flagged.low_range),
        high_range=None if flagged.high_range is None else tuple(v * factor for v in flagged.high_range),
    )


def _empty_signals() -> ShapeSignals:
    return ShapeSignals(
        n=0,
        skewness=None,
        skewness_se=None,
        skewness_test_z=None,
        skewness_test_p=None,
        bowley=None,
        medcouple=None,
        medcouple_method="exact",
        excess_kurtosis=None,
        density_peaks=None,
        bin_sensitivity=None,
        has_spread=False,
    )


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


def _without_outliers(remaining, moments, factor, mean, median, sd, iqr) -> WithoutOutliers:
    m = int(remaining.size)
    if m == 0:
        return WithoutOutliers(
            n=0, mean=None, median=None, sd=None, iqr=None, mean_change=None, mean_change_relative=None,
            median_change=None, median_change_relative=None, sd_change=None, iqr_change=None,
            lead_without=None, lead_would_change=False, most_influential_value=None,
            most_influential_row=None, most_influential_mean_shift=None,
        )
    q1_w, q3_w = quantiles_sorted(remaining, [0.25, 0.75])
    median_w = median_sorted(remaining)
    sd_w = moments.sd

    def relative(new: float, old: float) -> float | None:
        return (new - old) / abs(old) if old != 0 else None

    return WithoutOutliers(
        n=m,
        mean=moments.mean * factor,
        median=median_w * factor,
        sd=sd_w * factor if m > 1 else None,
        iqr=float(q3_w - q1_w) * factor,
        mean_change=(moments.mean - mean) * factor,
        mean_change_relative=relative(moments.mean, mean),
        median_change=(median_w - median) * factor,
        median_change_relative=relative(median_w, median),
        sd_change=(sd_w - sd) * factor if m > 1 and math.isfinite(sd) else None,
        iqr_change=(float(q3_w - q1_w) - iqr) * factor,
        lead_without=None,
        lead_would_change=False,
        most_influential_value=None,
        most_influential_row=None,
        most_influential_mean_shift=None,
    )


def _lead_without(remaining, moments, any_flagged: bool, seed: int) -> str | None:
    """The lead measure the same rule would choose on the values without the flagged ones.

    ``remaining`` are those values, sorted, and ``moments`` their moments; the medcouple is
    exact or on a subsample by the same rule as for all the values.
    """
    if not any_flagged:
        return None
    if remaining.size < MIN_FOR_SHAPE or remaining[-1] == remaining[0]:
        return "mean" if remaining.size else None
    medcouple_value, medcouple_method = robust.medcouple_of_sample(remaining, seed)
    g1, g1_se = skewness_g1(moments)
    z, p = skewness_test(moments)
    q1, median, q3 = quantiles_sorted(remaining, [0.25, 0.5, 0.75])
    signals = ShapeSignals(
        n=int(remaining.size),
        skewness=g1,
        skewness_se=g1_se,
        skewness_test_z=z,
        skewness_test_p=p,
        bowley=robust.bowley_skewness(float(q1), float(median), float(q3)),
        medcouple=medcouple_value,
        medcouple_method=medcouple_method,
        excess_kurtosis=excess_kurtosis(moments),
        density_peaks=None,
        bin_sensitivity=None,
        has_spread=True,
    )
    shape: Shape = classify_shape(signals)
    lead, _ = choose_lead(
        clearly_skewed=is_clearly_skewed(shape), several_peaks=False, mean_shift=None, sd_without=None
    )
    return lead


def _replace_lead(without: WithoutOutliers, lead_without: str | None, lead: str) -> WithoutOutliers:
    if lead_without is None:
        return replace(without, lead_without=lead, lead_would_change=False)
    return replace(without, lead_without=lead_without, lead_would_change=lead_without != lead)


def _with_influence(
    without: WithoutOutliers, sample: Sample, sorted_values: np.ndarray, mean: float, n: int
) -> WithoutOutliers:
    """The single value whose removal moves the mean most: the one farthest from the mean.

    Removing x_i changes the mean by (mean - x_i) / (n - 1).
    """
    if n < 2:
        return without
    index = _farthest_from(sample.values, sorted_values, mean)
    value = float(sample.values[index])
    shift = (mean - value) / (n - 1)
    return replace(
        without,
        most_influential_value=value,
        most_influential_row=int(sample.rows[index]),
        most_influential_mean_shift=shift,
    )


def _farthest_from(values: np.ndarray, sorted_values: np.ndarray, mean: float) -> int:
    """The first index of the largest |x - mean|, the same index as np.argmax(np.abs(values - mean)).

    The distance never grows from either extreme towards the mean, so the farthest value is the
    smallest or the largest one. Only if the next distinct value inwards rounds to the same
    distance (possible when the mean is huge beside the spread) is every distance computed.
    """
    low_index, high_index = int(np.argmin(values)), int(np.argmax(values))
    low_distance = abs(float(values[low_index]) - mean)
    high_distance = abs(float(values[high_index]) - mean)
    largest = max(low_distance, high_distance)
    n = sorted_values.size
    next_up = int(np.searchsorted(sorted_values, sorted_values[0], side="right"))
    next_down = int(np.searchsorted(sorted_values, sorted_values[-1], side="left")) - 1
    inner = [float(sorted_values[k]) for k in (next_up, next_down) if 0 <= k < n]
    if any(abs(v - mean) == largest for v in inner):
        return int(np.argmax(np.abs(values - mean)))
    candidates = [index for index, distance in ((low_index, low_distance), (high_index, high_distance))
                  if distance == largest]
    return min(candidates)


def _intervals(sorted_values, *, population, level, seed, skewness, clearly_skewed) -> Intervals:
    n = sorted_values.size
    if population:
        return Intervals(mean=None, median=None, reason="population")
    if n < 2 or sorted_values[-1] == sorted_values[0]:
        return Intervals(mean=None, median=None, reason="too_few")
    method, method_reason = intervals.choose_mean_method(n, skewness, clearly_skewed)
    # In power-of-two scaled units, so squares of tiny values (1e-223) cannot underflow to a zero width.
    unit_values, factor = scaled(sorted_values)
    try:
        mean_interval = intervals.mean_interval(unit_values, level=level, method=method, seed=seed)
    except NarratorError:
        if method == "t":
            raise
        # The bootstrap cannot work on degenerate resamples (nearly all values equal): use the t interval.
        method_reason = "bootstrap_failed_t"
        mean_interval = intervals.mean_interval(unit_values, level=level, method="t", seed=seed)
    if factor != 1.0:
        mean_interval = replace(mean_interval, low=mean_interval.low * factor, high=mean_interval.high * factor)
    median_interval = intervals.median_interval(sorted_values, level=level)
    return Intervals(
        mean=mean_interval, median=median_interval, reason="computed", mean_method_reason=method_reason
    )
