"""describe_source(): the findings of :func:`narrator.engine.describe.describe`, for data read in passes.

The steps of the in-memory engine, each from summaries that merge over chunks:

====  ======================================================================  =====
Pass  What it gathers                                                         Why
====  ======================================================================  =====
1     rows read and left out; n, extremes; KLL sketch; reservoir sample;      plan
      tail values; suspect-code counts; round-number counts; distinct values
2     moments (Chan et al. 1979 merge); exact order statistics in sketch      centre,
      brackets: P5..P95, quartiles, median, the median interval's ranks,      spread
      the trimmed means' cut points, code-free quartiles, tie candidates
3     histogram and bin-sensitivity counts; density binning; the MAD's        shape
      bracket; trimmed-mean middles; tie-candidate counts
4     the values the outlier rule flags, with rows; moments of the rest;      outliers,
      the rest's quartiles and median (brackets from the sketch)              with/without
====  ======================================================================  =====

A bracket the sketch missed (its bound holds with 99 % confidence) is widened and read again in an
extra pass, so exact figures are always exact. The medcouple is exact when the reservoir holds every
value (n up to ``reservoir_size``); above that it is the medcouple of the fixed-seed reservoir, and
:class:`~narrator.findings.Accuracy` records it, with its standard error, and what depends on it.

The generalized ESD rule and the Sheather-Jones bandwidth need every value at once and are refused
here with a message that says so.

=========================  =================================================
Name                       What it is
=========================  =================================================
:func:`describe_source`    ColumnSource (+ runner) -> :class:`ScaleResult`
:class:`ScaleResult`       findings, a Sample for the figures, passes made
``SKETCH_K``               the KLL sketch's k (rank error about 0.04 %)
``RESERVOIR_SIZE``         the reservoir's size (the engine's medcouple subsample size)
=========================  =================================================
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from narrator.engine import bins as engine_bins
from narrator.engine import intervals, robust
from narrator.engine import quality as engine_quality
from narrator.engine.center import choose_lead, mean_pull
from narrator.engine.describe import (
    BANDWIDTH_RULES,
    BIN_RULES,
    DEFAULT_SEED,
    MAD_NORMAL_SCALE,
    PERCENTILES,
    density_focus_of,
    library_versions,
)
from narrator.engine.distributions import binomial_cdf, binomial_sf, t_ppf
from narrator.engine.moments import QUANTILE_METHOD, excess_kurtosis, scaled, skewness_g1, skewness_test
from narrator.engine.outliers import (
    MEAN_AD_CONSTANT,
    MIN_VALUES,
    MODIFIED_Z_CONSTANT,
    degenerate_reason,
    fallback_rule,
)
from narrator.engine.quality import MIN_FOR_SHAPE
from narrator.engine.shape import ShapeSignals, classify_shape, is_clearly_skewed, substantial_peaks
from narrator.engine.ties import order_counts_from
from narrator.errors import NarratorError
from narrator.findings import (
    OUTLIER_RULES,
    SCHEMA_VERSION,
    Accuracy,
    ApproximateFigure,
    Center,
    Findings,
    Interval,
    Intervals,
    Outliers,
    Quality,
    QualityFlag,
    Spread,
    Variable,
    WithoutOutliers,
)
from narrator.reading.sample import Sample, clean_label
from narrator.scale import layouts
from narrator.scale.ranks import (
    BRACKET_MARGIN,
    OrderStatistics,
    median_of,
    median_ranks,
    plan_brackets,
    resolve,
    type7_quantiles,
    type7_ranks,
)
from narrator.scale.sources import ColumnSource
from narrator.scale.streaming import Pass, StreamRunner
from narrator.scale.summaries import (
    CodeCounts,
    DistanceCounts,
    DistinctValues,
    EdgeCounts,
    ExcludingMoments,
    ExtremeSummary,
    FarthestValue,
    FlaggedValues,
    MeanDistance,
    PartitionCounts,
    PrecisionSummary,
    QuantileSketch,
    RangeMean,
    ReservoirSample,
    RoundCounts,
    ScaledMoments,
    TailCandidates,
)

SKETCH_K = 8192  # normalized rank error about 0.04 % (99 % confidence), about 100 KB
RESERVOIR_SIZE = robust.MEDCOUPLE_SUBSAMPLE_SIZE
TAIL_COUNT = 200  # smallest and largest values kept for the figures
# Merged sums (moments, means, binned counts) agree with one-pass sums to about this relative error:
# a few units of 2^-52 per merge level, with a wide allowance (our own stated bound, checked in tests).
MERGED_RELATIVE_ERROR = 1e-12
# Standard error of the medcouple at the normal is about sqrt(1.25 / m) for m values (the asymptotic
# variance from Brys, Hubert & Struyf 2004; the 1.25 is from memory, as in narrator.engine.robust).
MEDCOUPLE_VARIANCE_FACTOR = 1.25

EXACT_FIGURES = (
    "n", "n_missing", "spread.min", "spread.max", "spread.range", "center.median", "spread.q1", "spread.q3",
    "spread.iqr", "spread.p5", "spread.p10", "spread.p90", "spread.p95", "spread.mad", "spread.mad_scaled",
    "intervals.median", "histogram", "shape.bin_sensitivity", "shape.bowley", "quality",
)
MERGED_FIGURES = (
    "center.mean", "spread.sd", "spread.variance", "shape.skewness", "shape.excess_kurtosis",
    "center.trimmed_mean_10", "center.trimmed_mean_20", "intervals.mean", "density", "without_outliers.mean",
    "without_outliers.sd",
)


@dataclass(frozen=True, slots=True)
class ScaleResult:
    """What :func:`describe_source` hands back: the findings, a Sample to draw the figures from (the
    reservoir, the extreme values and the flagged ones, in row order, with the reading's account of
    what was left out), and how many reads of the data it took."""

    findings: Findings
    sample: Sample
    passes: int


def _check_options(outlier_rule, level, bin_rule, bandwidth_rule, lower_bound, upper_bound) -> None:
    if outlier_rule is not None and outlier_rule not in OUTLIER_RULES:
        raise NarratorError(f"unknown outlier rule {outlier_rule!r}; choose one of {', '.join(OUTLIER_RULES)}")
    if not 0.5 <= level < 1:
        raise NarratorError(f"interval level must be at least 0.5 and below 1, not {level}")
    if bin_rule not in BIN_RULES:
        raise NarratorError(f"unknown bin rule {bin_rule!r}; choose one of {', '.join(BIN_RULES)}")
    if bandwidth_rule not in BANDWIDTH_RULES:
        raise NarratorError(
            f"unknown bandwidth rule {bandwidth_rule!r}; choose one of {', '.join(BANDWIDTH_RULES)}")
    if lower_bound is not None and upper_bound is not None and lower_bound >= upper_bound:
        raise NarratorError(f"lower bound {lower_bound} must be below upper bound {upper_bound}")
    if outlier_rule == "esd":
        raise NarratorError("the esd outlier rule removes values one at a time and needs them all in memory; "
                            "with more data than memory choose tukey, adjusted or modified-z")
    if bandwidth_rule == "sheather-jones":
        raise NarratorError("the sheather-jones bandwidth needs every value in memory; with more data than "
                            "memory choose silverman or scott")


class _Reader:
    """Runs passes and counts them; resolves order statistics, widening brackets that missed."""

    def __init__(self, runner, low, high, sketch: QuantileSketch | None = None, n: int = 0) -> None:
        self.runner, self.low, self.high = runner, low, high
        self.sketch, self.n = sketch, n
        self.passes = 0

    def run(self, parts: dict, record_reading: bool = False) -> Pass:
        self.passes += 1
        return self.runner.run(Pass(parts, low=self.low, high=self.high, record_reading=record_reading))

    def partition_pass(self, partition: PartitionCounts) -> PartitionCounts:
        return self.run({"order": partition})["order"]

    def brackets(self, ranges) -> PartitionCounts:
        return plan_brackets(self.sketch, self.n, ranges, BRACKET_MARGIN * self.sketch.rank_error)

    def settle(self, statistics: OrderStatistics, ranks) -> None:
        """Extra passes (counted by partition_pass) until every rank in ``ranks`` is known."""
        resolve(self.partition_pass, statistics, self.sketch, ranks, BRACKET_MARGIN * self.sketch.rank_error)


def describe_source(
    source: ColumnSource,
    *,
    runner=None,
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
    sketch_k: int = SKETCH_K,
    reservoir_size: int = RESERVOIR_SIZE,
) -> ScaleResult:
    """Every finding about one numeric column too large for memory, read in a few passes.

    The options mean what they mean for :func:`narrator.engine.describe.describe`; ``runner`` reads
    the passes (:class:`~.streaming.StreamRunner` on this machine by default, or
    :class:`~.distributed.DaskRunner`). Exact figures equal the in-memory engine's; merged sums agree
    to rounding; the rest are listed with their bounds in ``findings.accuracy``. Methods: Chan, Golub &
    LeVeque (1979) and Pebay (2008) for merged moments; Karnin, Lang & Liberty (2016) for the sketch;
    bottom-k sampling (Cohen & Kaplan 2007) for the reservoir.
    """
    _check_options(outlier_rule, level, bin_rule, bandwidth_rule, lower_bound, upper_bound)
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise NarratorError(f"the seed must be a whole number >= 0; got {seed!r}")
    effective_min = valid_min if lower_bound is None else max(
        lower_bound, lower_bound if valid_min is None else valid_min)
    effective_max = valid_max if upper_bound is None else min(
        upper_bound, upper_bound if valid_max is None else valid_max)
    runner = runner or StreamRunner(source)
    reader = _Reader(runner, effective_min, effective_max)

    # ---- pass 1 -------------------------------------------------------------------------------
    first = reader.run({
        "extremes": ExtremeSummary(),
        "sketch": QuantileSketch(sketch_k),
        "reservoir": ReservoirSample(reservoir_size, seed),
        "tails": TailCandidates(TAIL_COUNT),
        "codes": CodeCounts(engine_quality.SUSPECT_CODES, engine_quality.ROWS_SHOWN),
        "round": RoundCounts(),
        "distinct": DistinctValues(engine_quality.FEW_DISTINCT + 1),
        "precision": PrecisionSummary(),
    }, record_reading=True)
    extremes: ExtremeSummary = first["extremes"]
    n = extremes.n
    reader.sketch, reader.n = first["sketch"], n
    account = _account(source, first, name, unit)
    integer_valued = bool(n) and first["precision"].whole
    decimals = 0 if integer_valued else first["precision"].decimals
    variable = Variable(name=account.name, unit=account.unit, valid_min=valid_min, valid_max=valid_max,
                        lower_bound=lower_bound, upper_bound=upper_bound, population=population,
                        decimals=decimals, integer_valued=integer_valued)
    options = {
        "outlier_rule": outlier_rule or "auto", "quantile_method": QUANTILE_METHOD, "level": level,
        "trim_proportions": [0.1, 0.2], "bin_rule": bin_rule, "bandwidth_rule": bandwidth_rule, "seed": seed,
        "population": population, "valid_min": valid_min, "valid_max": valid_max, "lower_bound": lower_bound,
        "upper_bound": upper_bound,
    }
    provenance = {**account.source, "libraries": library_versions()}
    if n == 0:
        quality, _ = engine_quality.assess_quality(account, np.zeros(0), iqr=None, decimals=0)
        findings = Findings(
            schema_version=SCHEMA_VERSION, variable=variable, n=0, n_missing=account.n_missing, center=None,
            spread=None, shape=classify_shape(_empty_signals()), outliers=None, without_outliers=None,
            intervals=Intervals(mean=None, median=None, reason="too_few"), histogram=None, density=None,
            quality=quality, options=options, provenance=provenance,
            accuracy=_accuracy(runner, first, n, (), seed, reservoir_size))
        return ScaleResult(findings, account, reader.passes)

    low, high = extremes.low, extremes.high
    _, factor = scaled(np.array([low, high]), largest=max(abs(low), abs(high)))
    has_spread = high > low
    codes: CodeCounts = first["codes"]
    distinct = first["distinct"].count_up_to(engine_quality.FEW_DISTINCT)

    # ---- pass 2: moments and exact order statistics -------------------------------------------
    wanted = set(type7_ranks(n, PERCENTILES)) | set(median_ranks(n)) | {0, n - 1}
    median_rank = None
    if not population and n >= 2 and has_spread:
        median_rank = intervals._median_rank(n, level)
        if median_rank is not None:
            wanted |= {median_rank - 1, n - median_rank}
    cuts = {}
    for proportion in (0.10, 0.20):
        cut = int(proportion * n)
        if n - 2 * cut > 0:
            cuts[proportion] = cut
            wanted |= {cut, n - cut - 1}
    code_plans = _code_plans(codes, n)
    for plan in code_plans:
        wanted |= set(plan["ranks"])
    tie_step = _tie_step(n) if n >= engine_quality.MIN_FOR_CONFIDENT and distinct > 1 else None
    tie_ranks = list(range(0, n, tie_step)) if tie_step else []
    wanted |= set(tie_ranks)
    second = reader.run({"moments": ScaledMoments(factor), "order": reader.brackets([(r, r) for r in sorted(wanted)])})
    statistics = OrderStatistics(n)
    statistics.add(second["order"])
    reader.settle(statistics, wanted)
    moments = second["moments"].moments()

    p5, p10, q1, _, q3, p90, p95 = (float(v) for v in type7_quantiles(statistics, n, PERCENTILES, factor))
    median = median_of(statistics, n, factor)
    iqr = q3 - q1
    sd, mean = moments.sd, moments.mean
    g1, g1_se = skewness_g1(moments)
    g2 = excess_kurtosis(moments)
    z, p = skewness_test(moments)
    bowley = robust.bowley_skewness(q1, median, q3)
    reservoir: ReservoirSample = first["reservoir"]
    whole_reservoir = reservoir.values.size == n
    medcouple_value, medcouple_method = (None, "exact")
    if n >= 3:
        medcouple_value, medcouple_method = _medcouple(np.sort(reservoir.values) / factor, whole_reservoir, seed)

    # ---- pass 3: pictures, MAD, trimmed means, tie counts -------------------------------------
    parts: dict = {}
    histogram_layout = sensitivity_layout = density_layout = None
    if has_spread:
        skewness_biased = moments.s3 / moments.s2**1.5 if moments.s2 > 0 else None
        histogram_layout = layouts.histogram_layout(
            n=n, low=low, high=high, sd=sd * factor, iqr=iqr * factor, rule=bin_rule,
            integer_valued=integer_valued, skewness_biased=skewness_biased)
        parts["histogram"] = layouts.histogram_counter(histogram_layout)
        if n >= MIN_FOR_SHAPE:
            sensitivity_layout = layouts.sensitivity_layout(low=low, high=high, base_width=histogram_layout.width,
                                                             integer_valued=integer_valued)
            for k, counter in enumerate(sensitivity_layout.counters):
                parts[f"sensitivity{k}"] = counter
        density_layout = layouts.density_layout(n=n, low=low, high=high, sd=sd * factor, iqr=iqr * factor,
                                                 rule=bandwidth_rule, lower_bound=lower_bound,
                                                 upper_bound=upper_bound)
        parts["density"] = density_layout.counter()
    mad_plan = _MadPlan(reader.sketch, n, median, factor, low, high,
                        margin=BRACKET_MARGIN * reader.sketch.rank_error)
    parts["mad"] = mad_plan.counter()
    trim_points = {statistics(r) for cut in cuts.values() for r in (cut, n - cut - 1)}
    tie_candidates = sorted({statistics(r) for r in tie_ranks})
    order_points = {q1 * factor, median * factor, q3 * factor}  # for the order counts (narrator.engine.ties)
    points = sorted(trim_points | set(tie_candidates) | order_points)
    parts["points"] = PartitionCounts(np.array(points, dtype=np.float64), np.zeros(len(points) + 1, dtype=bool))
    for proportion, cut in cuts.items():
        parts[f"trim{proportion}"] = RangeMean(statistics(cut), statistics(n - cut - 1), factor)
    for plan in code_plans:
        _code_quartiles(plan, statistics, n)
        if plan["q3"] - plan["q1"] <= 0:  # the code-free values tie: their SD stands in for the IQR
            parts[f"others{plan['index']}"] = ExcludingMoments(plan["code"])
    third = reader.run(parts)
    mad = mad_plan.settle(third["mad"], reader)

    histogram_plan = sensitivity = density_estimate = fine_density = None
    if has_spread:
        histogram_plan = layouts.histogram_from_counts(histogram_layout, third["histogram"].counts)
        if sensitivity_layout is not None:
            sensitivity = layouts.sensitivity_from_counts(
                sensitivity_layout, [third[f"sensitivity{k}"] for k in range(len(sensitivity_layout.counters))])
        density_estimate, fine_density = layouts.density_from_counts(density_layout, third["density"].counts,
                                                                      keep_fine=True)

    shape = classify_shape(ShapeSignals(
        n=n, skewness=g1, skewness_se=g1_se, skewness_test_z=z, skewness_test_p=p, bowley=bowley,
        medcouple=medcouple_value, medcouple_method=medcouple_method, excess_kurtosis=g2,
        density_peaks=substantial_peaks(density_estimate), bin_sensitivity=sensitivity, has_spread=has_spread))
    clearly_skewed = is_clearly_skewed(shape)

    # ---- pass 4: the flagged values and the rest -----------------------------------------------
    rule_choice = _rule_choice(outlier_rule, clearly_skewed)
    degenerate = degenerate_reason(rule_choice[0], n=n, q1=q1, q3=q3, medcouple=medcouple_value)
    if degenerate is not None:  # as narrator.engine.outliers.detect_outliers
        rule_choice = (fallback_rule(degenerate), *rule_choice[1:], rule_choice[0], degenerate)
    test, constants, fences, note = _outlier_test(
        rule_choice[0], n, q1=q1, median=median, q3=q3, mad=mad,
        medcouple=medcouple_value if medcouple_value is not None else 0.0, reader=reader, factor=factor)
    fourth_parts: dict = {}
    if test is not None:
        fourth_parts["flagged"] = FlaggedValues(test, factor)
        fourth_parts["order"] = reader.brackets(_rest_rank_ranges(reader.sketch, n, test, factor))
    farthest_needed, farthest = _farthest_plan(extremes, mean * factor, n)
    if farthest_needed:
        fourth_parts["farthest"] = FarthestValue(mean * factor)
    focus = None
    if histogram_plan is not None and fences[2] is not None:  # as describe: only far-out fences focus
        focus = engine_bins.focus_layout(histogram_plan, lowest=low, highest=high, far_lower=fences[2] * factor,
                                         far_upper=fences[3] * factor)
        if focus is not None:
            fourth_parts["focus"] = EdgeCounts(engine_bins.focus_edges(focus))
    fourth = reader.run(fourth_parts) if fourth_parts else None
    if fourth is not None and "order" in fourth.parts:
        statistics.add(fourth["order"])
    histogram_focus = None
    if focus is not None:
        counts = fourth["focus"].counts
        histogram_focus = engine_bins.focus_plan(histogram_plan, focus, counts[1:-1], int(counts[0]), int(counts[-1]))
    flagged_part = fourth["flagged"] if test is not None else None
    flagged = _outliers(rule_choice, constants, fences, note, factor, flagged_part)

    count_low, count_high = flagged.count_low, flagged.count_high
    m = n - count_low - count_high
    rest_ranks = _rest_ranks(m, count_low)
    reader.settle(statistics, rest_ranks)
    rest_moments = fourth["flagged"].inside.moments() if (test is not None and flagged.count) else moments

    def rest_value(rank: int) -> float:
        return statistics(count_low + rank)

    without = _without(m, rest_moments, rest_value, factor, mean, median, sd, iqr)
    lead, lead_reasons = choose_lead(clearly_skewed=clearly_skewed,
                                     several_peaks=shape.label in ("bimodal", "multimodal"),
                                     mean_shift=without.mean_change, sd_without=without.sd)
    lead_without = _lead_without(m, rest_moments, rest_value, flagged_part, reservoir, factor, whole_reservoir,
                                 seed)
    if lead_without is None:
        without = _replace(without, lead_without=lead, lead_would_change=False)
    else:
        without = _replace(without, lead_without=lead_without, lead_would_change=lead_without != lead)
    if n >= 2:
        value, row = farthest if not farthest_needed else (fourth["farthest"].value, fourth["farthest"].row)
        without = _replace(without, most_influential_value=value, most_influential_row=row,
                           most_influential_mean_shift=(mean * factor - value) / (n - 1))

    pull, material = mean_pull(mean, median, sd)
    trimmed = {proportion: _trimmed_mean(third, proportion, cut, n, statistics, factor, median)
               for proportion, cut in cuts.items()}
    center = Center(
        mean=mean * factor, median=median * factor,
        trimmed_mean_10=trimmed.get(0.10, median) * factor, trimmed_mean_20=trimmed.get(0.20, median) * factor,
        lead=lead, lead_reasons=lead_reasons, mean_minus_median=(mean - median) * factor,
        mean_median_gap_material=material, mean_pull=pull)
    cv, cv_reason = None, "not_positive"
    if low > 0 and n > 1:
        cv, cv_reason = (sd / mean, "computed") if mean != 0 else (None, "zero_mean")
    spread = Spread(
        sd=sd * factor, variance=moments.variance * factor * factor if factor < 1e150 else math.inf,
        q1=q1 * factor, q3=q3 * factor, iqr=iqr * factor, quantile_method=QUANTILE_METHOD, mad=mad * factor,
        mad_scaled=mad * MAD_NORMAL_SCALE * factor, min=low, max=high, range=(high / factor - low / factor) * factor,
        p5=p5 * factor, p10=p10 * factor, p90=p90 * factor, p95=p95 * factor, cv=cv, cv_reason=cv_reason)
    interval_findings = _intervals(n, has_spread, population, level, seed, g1, clearly_skewed, moments, factor,
                                   reservoir, whole_reservoir, median_rank, statistics)
    quality = _quality(account, n, first, third, code_plans, tie_candidates, distinct, extremes, iqr * factor,
                       decimals)
    approximate = _approximations(n, whole_reservoir, reservoir, seed, flagged, clearly_skewed)
    counted: PartitionCounts = third["points"]
    order_counts = order_counts_from(
        n=n, below_q1=counted.count_below(q1 * factor), below_median=counted.count_below(median * factor),
        at_median=counted.count_equal(median * factor), above_q3=n - counted.count_below(q3 * factor)
        - counted.count_equal(q3 * factor), at_min=extremes.low_count, at_max=extremes.high_count,
        next_above_min=extremes.second_low if math.isfinite(extremes.second_low) else None,
        next_below_max=extremes.second_high if math.isfinite(extremes.second_high) else None)
    findings = Findings(
        schema_version=SCHEMA_VERSION, variable=variable, n=n, n_missing=account.n_missing, center=center,
        spread=spread, shape=shape, outliers=flagged, without_outliers=without, intervals=interval_findings,
        histogram=histogram_plan, density=density_estimate, quality=quality, options=options,
        provenance=provenance,
        accuracy=_accuracy(runner, first, n, approximate, seed, reservoir_size), histogram_focus=histogram_focus,
        density_focus=density_focus_of(density_estimate, fine_density, histogram_focus), order_counts=order_counts)
    return ScaleResult(findings, _figure_sample(account, first, flagged), reader.passes)


# ---------------------------------------------------------------------------
# Reading account
# ---------------------------------------------------------------------------


def _account(source: ColumnSource, first: Pass, name: str | None, unit: str | None) -> Sample:
    """A Sample with no values that carries what reading found (rows read, exclusions, source)."""
    reading = first.reading
    options = source.options
    source_facts = {
        **source.provenance(),
        "column": clean_label(source.column_name, limit=max(len(source.column_name), 1)),
        "decimal_comma": options.decimal_comma,
        "missing_tokens": options.missing_tokens,
        "valid_min": options.valid_min,
        "valid_max": options.valid_max,
        **reading.source_facts(),
    }
    label = None if name is None else clean_label(name) or None
    shown_unit = unit if unit is not None else source.unit
    shown_unit = None if shown_unit is None else clean_label(shown_unit) or None
    return Sample(
        values=np.zeros(0), rows=np.zeros(0, dtype=np.int64),
        name=label or clean_label(source.column_name) or f"column {source.column_index + 1}",
        unit=shown_unit, n_rows=reading.n_rows, exclusions=reading.exclusion_list(),
        decimals=first["precision"].decimals, source=source_facts, valid_min=options.valid_min,
        valid_max=options.valid_max)


def _figure_sample(account: Sample, first: Pass, flagged: Outliers) -> Sample:
    """The reservoir, the extreme values and the listed flagged values, in row order."""
    reservoir: ReservoirSample = first["reservoir"]
    tails: TailCandidates = first["tails"]
    values = np.concatenate([reservoir.values, tails.low_values, tails.high_values,
                             np.asarray(flagged.values, dtype=np.float64)])
    rows = np.concatenate([reservoir.rows, tails.low_rows, tails.high_rows, np.asarray(flagged.rows, dtype=np.int64)])
    rows, first_at = np.unique(rows, return_index=True)
    return replace(account, values=values[first_at], rows=rows)


# ---------------------------------------------------------------------------
# Centre, spread and shape helpers
# ---------------------------------------------------------------------------


def _medcouple(sorted_units: np.ndarray, whole: bool, seed: int) -> tuple[float, str]:
    """The engine's medcouple when the reservoir holds every value; else the reservoir's, recorded as a
    fixed-seed subsample of its size."""
    if whole:
        return robust.medcouple_of_sample(sorted_units, seed)
    return robust.medcouple(sorted_units), f"subsample:{sorted_units.size}:{seed}"


def _trimmed_mean(third: Pass, proportion: float, cut: int, n: int, statistics, factor: float, median: float):
    """Mean of the order statistics cut..n-cut-1 (scipy.stats.trim_mean), in scaled units."""
    low_value, high_value = statistics(cut), statistics(n - cut - 1)
    kept = n - 2 * cut
    if low_value == high_value:
        return low_value / factor
    points: PartitionCounts = third["points"]
    low_copies = points.count_below(low_value) + points.count_equal(low_value) - cut
    high_copies = (n - cut) - points.count_below(high_value)
    middle: RangeMean = third[f"trim{proportion}"]
    if low_copies + middle.n + high_copies != kept:
        raise NarratorError("internal check failed: the trimmed mean's counts do not add up")
    low_unit, high_unit = low_value / factor, high_value / factor
    centre = middle.mean if middle.n else low_unit
    return centre + (low_copies * (low_unit - centre) + high_copies * (high_unit - centre)
                     + middle.n * (middle.mean - centre)) / kept


class _MadPlan:
    """Bracket for the median absolute deviation: the distances |x - median| of rank about n / 2 lie in
    a narrow band [inner, outer] found from the sketch; a pass counts the distances below it and keeps
    those inside (:class:`~.summaries.DistanceCounts`), so the MAD is read off exactly."""

    def __init__(self, sketch: QuantileSketch, n: int, median: float, factor: float, low: float, high: float,
                 margin: float) -> None:
        self.sketch, self.n, self.median, self.factor = sketch, n, median, factor
        self.centre = median * factor  # data units
        self.span = max(self.centre - low, high - self.centre, 0.0)
        middle = n // 2
        self.ranks = [middle] if n % 2 else [middle - 1, middle]
        self.margin = margin

    def _distance_for(self, share: float) -> float:
        """Smallest t (data units) whose sketch share of values within t of the median reaches ``share``."""
        if share <= 0:
            return 0.0
        if share >= 1:
            return math.inf
        low, high = 0.0, self.span
        for _ in range(80):
            t = (low + high) / 2
            within = self.sketch.rank(self.centre + t) - self.sketch.rank(np.nextafter(self.centre - t, -np.inf))
            if within >= share:
                high = t
            else:
                low = t
        return high

    def counter(self, margin: float | None = None) -> DistanceCounts:
        margin = self.margin if margin is None else margin
        inner = self._distance_for(self.ranks[0] / self.n - margin) / self.factor
        outer = self._distance_for((self.ranks[-1] + 1) / self.n + margin) / self.factor
        # Rounding of the band's ends is harmless: the read checks that the ranks landed inside the band.
        return DistanceCounts(self.median, self.factor, inner, outer)

    def _read(self, counts: DistanceCounts) -> float | None:
        found = [counts.smallest(rank) for rank in self.ranks]
        if any(value is None for value in found):
            return None
        if len(found) == 1:
            return float(found[0])
        return float(np.mean(np.array(found)))

    def settle(self, counts: DistanceCounts, reader: _Reader) -> float:
        result = self._read(counts)
        margin = self.margin
        while result is None:
            margin *= 8.0
            counts = reader.run({"mad": self.counter(margin)})["mad"]
            result = self._read(counts)
        return result


def _empty_signals() -> ShapeSignals:
    return ShapeSignals(n=0, skewness=None, skewness_se=None, skewness_test_z=None, skewness_test_p=None,
                        bowley=None, medcouple=None, medcouple_method="exact", excess_kurtosis=None,
                        density_peaks=None, bin_sensitivity=None, has_spread=False)


# ---------------------------------------------------------------------------
# Outliers and the values without them
# ---------------------------------------------------------------------------


def _rule_choice(rule: str | None, skew_clear: bool) -> tuple[str, str, str | None]:
    if rule is None:
        return ("adjusted" if skew_clear else "tukey"), "auto", ("skewed" if skew_clear else "not_skewed")
    return rule, "user", None


def _adjusted_exponents(mc: float) -> dict[str, float]:
    # Hubert & Vandervieren (2008), eq. (5), as narrator.engine.outliers applies it.
    lower_exponent, upper_exponent = (-4.0, 3.0) if mc >= 0 else (-3.0, 4.0)
    return {"medcouple": mc, "lower_exponent": lower_exponent, "upper_exponent": upper_exponent,
            "lower_multiplier": math.exp(lower_exponent * mc), "upper_multiplier": math.exp(upper_exponent * mc)}


def _outlier_test(rule, n, *, q1, median, q3, mad, medcouple, reader: _Reader, factor):
    """(test for FlaggedValues or None, constants, fences in scaled units, note), as detect_outliers."""
    if rule in ("tukey", "adjusted"):
        constants = {"coefficient": 1.5, "far_coefficient": 3.0}
        if rule == "adjusted" and n >= MIN_VALUES:
            if not -1.0 <= medcouple <= 1.0:
                raise NarratorError(f"the adjusted boxplot rule needs a medcouple in [-1, 1]; got {medcouple!r}")
            constants.update(_adjusted_exponents(float(medcouple)))
    else:
        constants = {"threshold": 3.5, "consistency_constant": MODIFIED_Z_CONSTANT}
    if n < MIN_VALUES:
        return None, constants, (None, None, None, None), "not_run_too_few"
    if rule in ("tukey", "adjusted"):
        iqr = q3 - q1
        lower_scale = constants.get("lower_multiplier", 1.0) * iqr
        upper_scale = constants.get("upper_multiplier", 1.0) * iqr
        fences = (q1 - constants["coefficient"] * lower_scale, q3 + constants["coefficient"] * upper_scale,
                  q1 - constants["far_coefficient"] * lower_scale, q3 + constants["far_coefficient"] * upper_scale)
        return ("fences", fences[0], fences[1]), constants, fences, ("iqr_zero" if iqr == 0 else None)
    threshold = constants["threshold"]
    note = None
    if mad > 0:
        scale = mad / constants["consistency_constant"]
        constants["mad"] = float(mad)
    else:
        mean_ad = reader.run({"distance": MeanDistance(median, factor)})["distance"].mean
        constants.pop("consistency_constant")
        constants["mean_ad_constant"] = MEAN_AD_CONSTANT
        constants["mean_absolute_deviation"] = mean_ad
        if mean_ad == 0:
            return None, constants, (None, None, None, None), "no_spread"
        scale = MEAN_AD_CONSTANT * mean_ad
        note = "mad_zero_fallback"
    fences = (median - threshold * scale, median + threshold * scale, None, None)
    return ("score", median, scale, threshold), constants, fences, note


def _outliers(choice, constants, fences, note, factor, part: FlaggedValues | None) -> Outliers:
    def back(value):
        return None if value is None else value * factor

    if part is None:
        part = FlaggedValues(("fences", -math.inf, math.inf), factor)
    values = np.concatenate([part.low_values, part.high_values])
    rows = np.concatenate([part.low_rows, part.high_rows])
    far = np.zeros(values.size, dtype=bool)
    if fences[2] is not None:
        units = values / factor
        far = (units < fences[2]) | (units > fences[3])
    low_range = (float(part.low_values[0]), part.low_max) if part.count_low else None
    high_range = (part.high_min, float(part.high_values[-1])) if part.count_high else None
    return Outliers(
        rule=choice[0], chosen_by=choice[1], auto_reason=choice[2], constants=constants,
        lower_fence=back(fences[0]), upper_fence=back(fences[1]), far_lower_fence=back(fences[2]),
        far_upper_fence=back(fences[3]), count=part.count_low + part.count_high, count_low=part.count_low,
        count_high=part.count_high, values=tuple(float(v) for v in values), rows=tuple(int(r) for r in rows),
        far_out_values=tuple(float(v) for v in values[far]), far_out_rows=tuple(int(r) for r in rows[far]),
        note=note, listed_low=int(part.low_values.size), low_range=low_range, high_range=high_range,
        fallback_from=choice[3] if len(choice) > 3 else None, fallback_reason=choice[4] if len(choice) > 4 else None)


def _rest_ranks(m: int, count_low: int) -> list[int]:
    """Full-data ranks of the order statistics the values without the flagged ones need."""
    if m <= 0:
        return []
    ranks = set(type7_ranks(m, [0.25, 0.5, 0.75])) | set(median_ranks(m)) | {0, m - 1}
    return sorted(count_low + r for r in ranks)


def _rest_rank_ranges(sketch: QuantileSketch, n: int, test, factor: float) -> list[tuple[int, int]]:
    """Rank ranges covering the rest's order statistics for any flagged counts the sketch allows.

    The sketch estimates how many values fall below and above the rule's limits to within ``error``
    ranks; a needed rank then moves by at most twice that, so each is bracketed that widely.
    """
    error = BRACKET_MARGIN * sketch.rank_error * n + 1
    if test[0] == "fences":
        lower, upper = test[1] * factor, test[2] * factor
    else:
        _, centre, scale, threshold = test
        lower, upper = (centre - threshold * scale) * factor, (centre + threshold * scale) * factor
    count_low = int(round(sketch.rank(float(np.nextafter(lower, -np.inf))) * n))
    count_high = int(round((1.0 - sketch.rank(upper)) * n))
    count_low, count_high = max(0, count_low), max(0, count_high)
    spread = int(2 * error) + 2
    ranks = _rest_ranks(max(n - count_low - count_high, 1), min(count_low, n - 1))
    return [(max(0, r - spread), min(n - 1, r + spread)) for r in ranks]


def _farthest_plan(extremes: ExtremeSummary, mean: float, n: int):
    """(whether a pass is needed, (value, row)) for the value farthest from the mean, as the engine's
    rule: the smallest or largest value, unless the next distinct value inwards is as far."""
    low_distance = abs(extremes.low - mean)
    high_distance = abs(extremes.high - mean)
    largest = max(low_distance, high_distance)
    inner = [v for v in (extremes.second_low, extremes.second_high) if math.isfinite(v)]
    if n >= 2 and any(abs(v - mean) == largest for v in inner):
        return True, None
    candidates = [(row, value) for row, value, distance in
                  ((extremes.low_row, extremes.low, low_distance), (extremes.high_row, extremes.high, high_distance))
                  if distance == largest]
    row, value = min(candidates)
    return False, (value, row)


def _without(m, moments, value_at, factor, mean, median, sd, iqr) -> WithoutOutliers:
    if m == 0:
        return WithoutOutliers(
            n=0, mean=None, median=None, sd=None, iqr=None, mean_change=None, mean_change_relative=None,
            median_change=None, median_change_relative=None, sd_change=None, iqr_change=None,
            lead_without=None, lead_would_change=False, most_influential_value=None,
            most_influential_row=None, most_influential_mean_shift=None)
    q1_w, q3_w = type7_quantiles(value_at, m, [0.25, 0.75], factor)
    median_w = median_of(value_at, m, factor)
    sd_w = moments.sd

    def relative(new: float, old: float) -> float | None:
        return (new - old) / abs(old) if old != 0 else None

    return WithoutOutliers(
        n=m, mean=moments.mean * factor, median=median_w * factor, sd=sd_w * factor if m > 1 else None,
        iqr=float(q3_w - q1_w) * factor, mean_change=(moments.mean - mean) * factor,
        mean_change_relative=relative(moments.mean, mean), median_change=(median_w - median) * factor,
        median_change_relative=relative(median_w, median),
        sd_change=(sd_w - sd) * factor if m > 1 and math.isfinite(sd) else None,
        iqr_change=(float(q3_w - q1_w) - iqr) * factor, lead_without=None, lead_would_change=False,
        most_influential_value=None, most_influential_row=None, most_influential_mean_shift=None)


def _replace(without: WithoutOutliers, **changes) -> WithoutOutliers:
    return replace(without, **changes)


def _lead_without(m, moments, value_at, flagged: FlaggedValues | None, reservoir: ReservoirSample, factor, whole,
                  seed):
    """The lead the same rule would choose without the flagged values (as the in-memory engine)."""
    if flagged is None or not (flagged.count_low or flagged.count_high):
        return None
    if m < MIN_FOR_SHAPE or value_at(m - 1) == value_at(0):
        return "mean" if m else None
    low, high = flagged.sides(reservoir.values)
    keep = ~(low | high)
    rest = np.sort(reservoir.values[keep]) / factor
    medcouple_value, medcouple_method = _medcouple(rest, whole, seed)
    g1, g1_se = skewness_g1(moments)
    z, p = skewness_test(moments)
    q1, median, q3 = (float(v) for v in type7_quantiles(value_at, m, [0.25, 0.5, 0.75], factor))
    shape = classify_shape(ShapeSignals(
        n=m, skewness=g1, skewness_se=g1_se, skewness_test_z=z, skewness_test_p=p,
        bowley=robust.bowley_skewness(q1, median, q3), medcouple=medcouple_value,
        medcouple_method=medcouple_method, excess_kurtosis=excess_kurtosis(moments), density_peaks=None,
        bin_sensitivity=None, has_spread=True))
    lead, _ = choose_lead(clearly_skewed=is_clearly_skewed(shape), several_peaks=False, mean_shift=None,
                          sd_without=None)
    return lead


# ---------------------------------------------------------------------------
# Intervals
# ---------------------------------------------------------------------------


def _intervals(n, has_spread, population, level, seed, skewness, clearly_skewed, moments, factor,
               reservoir: ReservoirSample, whole: bool, median_rank, statistics) -> Intervals:
    if population:
        return Intervals(mean=None, median=None, reason="population")
    if n < 2 or not has_spread:
        return Intervals(mean=None, median=None, reason="too_few")
    method, method_reason = intervals.choose_mean_method(n, skewness, clearly_skewed)
    if method != "t" and whole:
        values = np.sort(reservoir.values)
        try:
            mean_interval = intervals.mean_interval(values, level=level, method=method, seed=seed)
        except NarratorError:
            method_reason = "bootstrap_failed_t"
            mean_interval = intervals.mean_interval(values, level=level, method="t", seed=seed)
    else:
        # Student's t interval, mean +/- t_{(1+level)/2, n-1} s / sqrt(n), from the merged moments.
        half_width = float(t_ppf((1.0 + level) / 2.0, n - 1)) * moments.sd / math.sqrt(n)
        mean_interval = Interval(low=(moments.mean - half_width) * factor, high=(moments.mean + half_width) * factor,
                                 level=level, method="t")
    median_interval = None
    if median_rank is not None:
        median_interval = Interval(
            low=float(statistics(median_rank - 1)), high=float(statistics(n - median_rank)), level=level,
            method="order-statistic", coverage=1.0 - 2.0 * binomial_cdf(median_rank - 1, n, 0.5),
            ranks=(median_rank, n - median_rank + 1))
    return Intervals(mean=mean_interval, median=median_interval, reason="computed",
                     mean_method_reason=method_reason)


# ---------------------------------------------------------------------------
# Data quality
# ---------------------------------------------------------------------------


def _tie_step(n: int) -> int:
    """The shortest run that reaches the tie share (as narrator.engine.quality)."""
    shortest = max(1, int(engine_quality.TIE_SHARE * n) - 1)
    while shortest / n < engine_quality.TIE_SHARE:
        shortest += 1
    return shortest


def _code_plans(codes: CodeCounts, n: int) -> list[dict]:
    """For each suspect code that occurs often enough: the ranks its code-free quartiles need."""
    plans = []
    for k, code in enumerate(codes.codes):
        count = int(codes.equal[k])
        if count < engine_quality.MIN_CODE_COUNT or n - count < 4:
            continue
        left = int(codes.below[k])
        positions: list[int] = []

        def record(index: np.ndarray, positions=positions) -> np.ndarray:
            positions.extend(int(i) for i in index)
            return np.zeros(len(index))

        engine_quality._linear_quantiles(record, n - count, [0.25, 0.75])
        ranks = [p if p < left else p + count for p in positions]
        plans.append({"index": k, "code": code, "count": count, "left": left, "ranks": ranks})
    return plans


def _code_quartiles(plan: dict, statistics, n: int) -> None:
    """Type 7 quartiles of the values other than the code (as narrator.engine.quality), into ``plan``."""
    left, count = plan["left"], plan["count"]

    def others_at(index: np.ndarray) -> np.ndarray:
        return np.array([statistics(int(i) if i < left else int(i) + count) for i in index])

    plan["q1"], plan["q3"] = (float(v) for v in engine_quality._linear_quantiles(others_at, n - count, [0.25, 0.75]))


def _quality(account, n, first, third, code_plans, tie_candidates, distinct, extremes: ExtremeSummary, iqr,
             decimals) -> Quality:
    """The flags of :func:`narrator.engine.quality.assess_quality`, from counts."""
    flags = engine_quality._exclusion_flags(account) + engine_quality._reading_flags(account)
    codes: CodeCounts = first["codes"]
    for plan in code_plans:
        code, count, q1, q3 = plan["code"], plan["count"], plan["q1"], plan["q3"]
        spread = q3 - q1
        if spread <= 0:
            spread = third[f"others{plan['index']}"].population_sd() or 1.0
        reach = engine_quality.CODE_DISTANCE_IQR * spread
        if code < q1 - reach or code > q3 + reach:
            flags.append(QualityFlag(code="missing_code", count=count, share=count / n,
                                     rows=tuple(int(r) for r in codes.rows[plan["index"]]), values=(code,)))
    flags.extend(_heaping(first["round"], n, decimals, iqr))
    flags.extend(_ties(n, distinct, third["points"], tie_candidates, extremes))
    if n < MIN_FOR_SHAPE:
        flags.append(QualityFlag(code="too_few_for_shape", count=n))
    elif n < engine_quality.MIN_FOR_CONFIDENT:
        flags.append(QualityFlag(code="small_sample", count=n))
    impossible, non_numeric = account.excluded("impossible"), account.excluded("non_numeric")
    return Quality(
        n_rows=account.n_rows, n_missing=account.n_missing,
        missing_share=account.n_missing / account.n_rows if account.n_rows else 0.0,
        n_non_numeric=non_numeric.count if non_numeric else 0, n_impossible=impossible.count if impossible else 0,
        n_used=n, flags=tuple(flags))


def _heaping(rounds: RoundCounts, n: int, decimals: int, iqr: float) -> list[QualityFlag]:
    """narrator.engine.quality's heaping check from the round-number counts."""
    if n < 30:
        return []
    checks: list[tuple[float, float]] = []
    if decimals == 0:
        if iqr >= 10:
            checks = [(10.0, 0.1), (5.0, 0.2)]
    elif decimals <= 3:
        checks = [(1.0, 10.0**-decimals)]
    for base, chance in checks:
        hits = rounds.count(base)
        observed = hits / n
        if observed >= engine_quality.HEAPING_RATIO * chance:
            p = min(1.0, binomial_sf(hits - 1, n, chance))
            if p < engine_quality.HEAPING_P:
                return [QualityFlag(code="heaping", count=hits, share=observed, values=(base,),
                                    detail={"base": base, "expected_share": chance, "p_value": p})]
    return []


def _ties(n, distinct, points: PartitionCounts, tie_candidates, extremes: ExtremeSummary) -> list[QualityFlag]:
    flags = []
    if distinct == 1:
        return [QualityFlag(code="constant", count=n, share=1.0, values=(float(extremes.low),))]
    if distinct <= engine_quality.FEW_DISTINCT and n > 2 * engine_quality.FEW_DISTINCT:
        flags.append(QualityFlag(code="few_distinct", count=distinct, detail={"distinct": float(distinct)}))
    if n >= engine_quality.MIN_FOR_CONFIDENT:
        shortest = _tie_step(n)
        best = None
        for value in tie_candidates:
            length = points.count_equal(value)
            if length >= shortest and (best is None or length > best[0]):
                best = (length, float(value))
        if best is not None:
            flags.append(QualityFlag(code="many_ties", count=best[0], share=float(best[0] / n), values=(best[1],)))
    if distinct > 3 and n >= engine_quality.MIN_FOR_CONFIDENT:
        for code, run, value in (("floor", extremes.low_count, extremes.low),
                                 ("ceiling", extremes.high_count, extremes.high)):
            if run >= engine_quality.PILE_UP_MIN_COUNT and run / n >= engine_quality.PILE_UP_SHARE:
                flags.append(QualityFlag(code=code, count=int(run), share=float(run / n), values=(float(value),)))
    return flags


# ---------------------------------------------------------------------------
# The accuracy record
# ---------------------------------------------------------------------------


def _approximations(n, whole, reservoir: ReservoirSample, seed, flagged: Outliers, skewed) -> tuple:
    if whole or n < 3:
        return ()
    size = int(reservoir.values.size)
    # The shape judgement weighs the medcouple's sign; the lead follows the shape.
    depends = ["shape.label", "shape.strength", "shape.evidence", "shape.reasons", "center.lead",
               "center.lead_reasons", "without_outliers.lead_without", "without_outliers.lead_would_change"]
    if flagged.rule == "adjusted":  # the skew-adjusted fences stretch with the medcouple
        # The skew-adjusted fences stretch with the medcouple, and the focused histogram stops at a fence.
        depends = ["outliers", "without_outliers", "histogram_focus", "density_focus", *depends]
    return (ApproximateFigure(figure="shape.medcouple", method=f"reservoir-subsample:{size}:{seed}",
                              bound=math.sqrt(MEDCOUPLE_VARIANCE_FACTOR / size), bound_kind="standard_error",
                              depends=tuple(depends)),)


def _accuracy(runner, first: Pass, n, approximate, seed, reservoir_size) -> Accuracy:
    sketch: QuantileSketch = first["sketch"]
    return Accuracy(
        engine=getattr(runner, "name", "stream"), exact=EXACT_FIGURES, merged=MERGED_FIGURES,
        approximate=tuple(approximate), sketch=f"kll:{sketch.k}",
        sketch_rank_error=sketch.rank_error if n else None, merged_relative_error=MERGED_RELATIVE_ERROR,
        reservoir_size=int(reservoir_size), seed=int(seed))
