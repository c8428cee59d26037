"""describe_source(): the findings of :func:`narrator.engine.describe.describe`, for data read in passes.

The steps of the in-memory engine, each from summaries that merge over chunks:

====  ======================================================================  =====
Pass  What it gathers                                                         Why
====  ======================================================================  =====
1     rows read and left out; n, extremes; moments (Chan et al. 1979          plan,
      merge); rank bins; reservoir sample; tail values; suspect-code          centre
      counts; round-number counts; distinct values; precision
2     exact order statistics in the bins' brackets: P5..P95, quartiles,       spread,
      median, the median interval's ranks, the trimmed means' cut points,     shape,
      code-free quartiles, tie candidates; and, gathered ahead for every      outliers,
      plan those brackets allow (:class:`_LookAhead`): histogram and          with/without
      bin-sensitivity counts, density binning, the MAD's band,
      trimmed-mean middles, and for each rule the automatic choice may take
      (it waits for the shape): the values it flags with rows, the moments
      of the rest, brackets for the rest's quartiles and median, the
      focused histogram's counts
(3)   the same summaries for the exact plan, read only when the look-ahead
      did not hold one of them
====  ======================================================================  =====

The modified z rule needs the MAD for its limits and takes a pass of its own; values beyond 1e60 or
below 1e-60 in size take one more for their moments in scaled units. The rank bins
(:class:`~.summaries.RankBins`, centred on the median of the first chunk read, which is read once
more to find it) count exactly, so their brackets hold; each is checked all the same, and one that
missed would be widened and read again in an extra pass: exact figures are always exact. The
medcouple is exact when the reservoir holds every value (n up to ``reservoir_size``); above that it
is the medcouple of the fixed-seed reservoir, and :class:`~narrator.findings.Accuracy` records it,
with its standard error, and what depends on it.

The generalized ESD rule and the Sheather-Jones bandwidth need every value at once and are refused
here with a message that says so.

=========================  =================================================
Name                       What it is
=========================  =================================================
:func:`describe_source`    ColumnSource (+ runner) -> :class:`ScaleResult`
:class:`ScaleResult`       findings, a Sample for the figures, passes made
``RANK_BIN_BITS``          the rank bins' 2^bits bins to each doubling of the distance
``RESERVOIR_SIZE``         the reservoir's size (the engine's medcouple subsample size)
=========================  =================================================
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from narrator.engine import bins as engine_bins
from narrator.engine import density as engine_density
from narrator.engine import intervals, robust, rules
from narrator.engine.describe import library_versions
from narrator.engine.moments import scaled
from narrator.engine.quality import linear_quantiles
from narrator.engine.rules import (
    FEW_DISTINCT,
    MIN_FOR_CONFIDENT,
    PERCENTILES,
    ROWS_SHOWN,
    SUSPECT_CODES,
    TRIM_PROPORTIONS,
    Options,
)
from narrator.engine.shape import MIN_FOR_SHAPE, is_clearly_skewed
from narrator.engine.ties import order_counts_from
from narrator.errors import NarratorError
from narrator.findings import Accuracy, ApproximateFigure, Findings, Outliers, QualityFlag
from narrator.reading.sample import Sample, clean_label
from narrator.scale import layouts
from narrator.scale.ranks import (
    FIRST_WIDENING,
    WIDEN_FACTOR,
    OrderStatistics,
    median_ranks,
    plan_brackets,
    resolve,
    type7_ranks,
)
from narrator.scale.sources import ColumnSource
from narrator.scale.streaming import Pass, StreamRunner
from narrator.scale.summaries import (
    RANK_BIN_BITS,
    BinBrackets,
    BinCounts,
    CentreBand,
    CodeCounts,
    DistanceCounts,
    DistinctValues,
    EdgeCounts,
    ExcludingMoments,
    ExtremeSummary,
    FarthestValue,
    FlaggedBand,
    FlaggedValues,
    MeanDistance,
    MomentSummary,
    PartitionCounts,
    PrecisionSummary,
    RangeMean,
    RankBins,
    ReservoirSample,
    RoundCounts,
    ScaledMoments,
    TailCandidates,
)

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


class _Reader:
    """Runs passes and counts them; resolves order statistics, widening brackets that missed."""

    def __init__(self, runner, low, high, bins: RankBins | None = None, n: int = 0) -> None:
        self.runner, self.low, self.high = runner, low, high
        self.bins, self.n = bins, n
        self.passes = 0

    def run(self, parts: dict, record_reading: bool = False) -> Pass:
        self.passes += 1
        return self.runner.run(Pass(parts, low=self.low, high=self.high, record_reading=record_reading))

    def partition_pass(self, partition: BinBrackets) -> BinBrackets:
        return self.run({"order": partition})["order"]

    def brackets(self, ranges) -> BinBrackets:
        return plan_brackets(self.bins, ranges)

    def settle(self, statistics: OrderStatistics, ranks) -> None:
        """Extra passes (counted by partition_pass) until every rank in ``ranks`` is known."""
        resolve(self.partition_pass, statistics, self.bins, ranks)


def describe_source(
    source: ColumnSource,
    *,
    runner=None,
    name: str | None = None,
    unit: str | None = None,
    rank_bits: int = RANK_BIN_BITS,
    reservoir_size: int = RESERVOIR_SIZE,
    **describe_options,
) -> ScaleResult:
    """Every finding about one numeric column too large for memory, read in a few passes.

    ``describe_options`` are the options of :func:`narrator.engine.describe.describe` (the fields of
    :class:`narrator.engine.rules.Options`: valid range, bounds, population, rules, level, seed), with
    the same meanings; ``runner`` reads
    the passes (:class:`~.streaming.StreamRunner` on this machine by default, or
    :class:`~.distributed.DaskRunner`). Exact figures equal the in-memory engine's; merged sums agree
    to rounding; the rest are listed with their bounds in ``findings.accuracy``. Methods: Chan, Golub &
    LeVeque (1979) and Pebay (2008) for merged moments; exact bin counts for the brackets;
    bottom-k sampling (Cohen & Kaplan 2007) for the reservoir.
    """
    try:
        options = Options(**describe_options).check(every_value_at_hand=False)
    except TypeError as exc:
        raise NarratorError(f"describe_source: {exc}") from None
    population, level, seed = options.population, options.level, options.seed
    runner = runner or StreamRunner(source)
    reader = _Reader(runner, *options.effective_range)

    # ---- pass 1 -------------------------------------------------------------------------------
    first = reader.run({
        "extremes": ExtremeSummary(),
        "bins": RankBins.around(_first_values(source, *options.effective_range), rank_bits),
        "reservoir": ReservoirSample(reservoir_size, seed),
        "tails": TailCandidates(TAIL_COUNT),
        "codes": CodeCounts(SUSPECT_CODES, ROWS_SHOWN),
        "round": RoundCounts(),
        "distinct": DistinctValues(FEW_DISTINCT + 1),
        "precision": PrecisionSummary(),
        "moments": MomentSummary(),
    }, record_reading=True)
    extremes: ExtremeSummary = first["extremes"]
    n = extremes.n
    reader.bins, reader.n = first["bins"], n
    account = _account(source, first, name, unit)
    integer_valued = bool(n) and first["precision"].whole
    decimals = 0 if integer_valued else first["precision"].decimals
    variable = options.variable(account.name, account.unit, decimals=decimals, integer_valued=integer_valued)
    provenance = {**account.source, "libraries": library_versions()}
    if n == 0:
        return ScaleResult(rules.empty_findings(options, variable, rules.quality_of(account, 0, []), provenance,
                                                _accuracy(runner, first, n, (), seed, reservoir_size)),
                           account, reader.passes)

    low, high = extremes.low, extremes.high
    _, factor = scaled(np.array([low, high]), largest=max(abs(low), abs(high)))
    has_spread = high > low
    codes: CodeCounts = first["codes"]
    distinct = first["distinct"].count_up_to(FEW_DISTINCT)

    moments = first["moments"].moments()
    if factor != 1.0:  # values beyond 1e60 or below 1e-60 in size: the moments again, in scaled units
        moments = reader.run({"moments": ScaledMoments(factor)})["moments"].moments()

    # ---- pass 2: exact order statistics --------------------------------------------------------
    wanted = set(type7_ranks(n, PERCENTILES)) | set(median_ranks(n)) | {0, n - 1}
    median_rank = None
    if not population and n >= 2 and has_spread:
        median_rank = intervals.median_rank(n, level)
        if median_rank is not None:
            wanted |= {median_rank - 1, n - median_rank}
    cuts = {}
    for proportion in TRIM_PROPORTIONS:
        cut = int(proportion * n)
        if n - 2 * cut > 0:
            cuts[proportion] = cut
            wanted |= {cut, n - cut - 1}
    code_plans = _code_plans(codes, n)
    for plan in code_plans:
        wanted |= set(plan["ranks"])
    tie_step = rules.tie_run_length(n) if n >= MIN_FOR_CONFIDENT and distinct > 1 else None
    tie_ranks = list(range(0, n, tie_step)) if tie_step else []
    wanted |= set(tie_ranks)
    reservoir: ReservoirSample = first["reservoir"]
    whole_reservoir = reservoir.values.size == n
    medcouple_value, medcouple_method = (None, "exact")
    if n >= 3:
        medcouple_value, medcouple_method = _medcouple(np.sort(reservoir.values) / factor, whole_reservoir, seed)
    plan_for = _QuartilePlanner(reader=reader, options=options, n=n, low=low, high=high, factor=factor,
                                moments=moments, integer_valued=integer_valued, has_spread=has_spread,
                                medcouple=medcouple_value)
    farthest = rules.farthest_plan(
        rules.Extremes(extremes.low, extremes.low_row, extremes.high, extremes.high_row, extremes.second_low,
                       extremes.second_high), moments.mean * factor, n)
    # What the third pass would gather is gathered now, for every plan the bins' brackets for the
    # quartiles and the median allow (narrator.scale.ahead); it is used when the exact plan is among them.
    ahead = _LookAhead.plan(plan_for, reader, n, factor, code_plans, cuts, farthest is None, moments.mean * factor)
    # One partition for every bracket of the pass: the order statistics' and, gathered ahead, those of
    # each candidate rule's rest (one set of comparisons per chunk instead of one per rule).
    second_parts = {"order": reader.brackets([(r, r) for r in sorted(wanted)]
                                             + (ahead.order_ranges if ahead is not None else []))}
    if ahead is not None:
        second_parts.update(ahead.parts)
    second = reader.run(second_parts)
    statistics = OrderStatistics(n)
    statistics.add(second["order"])
    reader.settle(statistics, wanted)

    quantile_values = tuple(float(v) for v in rules.quantiles_at(statistics, n, PERCENTILES, factor))
    _, _, q1, _, q3, _, _ = quantile_values
    median = rules.median_at(statistics, n, factor)

    # ---- pass 3: pictures, MAD, trimmed means, tie counts, and the values each candidate rule flags
    # (the automatic choice waits for the shape, which waits for the density: both rules are gathered)
    planned = plan_for(q1, median, q3)
    parts = dict(planned.parts)
    histogram_layout, sensitivity_layout = planned.histogram_layout, planned.sensitivity_layout
    density_layout, provisional, candidates = planned.density_layout, planned.provisional, planned.candidates
    mad_plan = _MadPlan(reader.bins, n, median, factor, low, high)
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
    if farthest is None:
        parts["farthest"] = FarthestValue(moments.mean * factor)
    third = ahead.settle(parts, second, statistics, median) if ahead is not None else None
    if third is None:
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
    shape = rules.shape_of(n, moments, q1, median, q3, medcouple_value, medcouple_method, density_estimate,
                           sensitivity, has_spread, tails=(quantile_values[0], quantile_values[-1]),
                           population=options.population)

    choice = rules.rule_choice(options.outlier_rule, is_clearly_skewed(shape))
    flagged_pass = third
    if choice.rule in candidates:
        # The candidate's limits, with the final choice's words (and the rule that replaced it, if any).
        test = replace(candidates[choice.rule], choice=rules.working_choice(
            choice, n, q1=q1, q3=q3, medcouple=medcouple_value if medcouple_value is not None else 0.0, median=median))
    else:  # ---- pass 4 (modified z only): the values it flags and the rest
        test = rules.outlier_test(
            choice, n, q1=q1, median=median, q3=q3, mad=mad, medcouple=None,
            mean_absolute_deviation=lambda: reader.run({"distance": MeanDistance(median, factor)})["distance"].mean)
        fourth_parts: dict = {}
        _gather_flagged(fourth_parts, choice.rule, test, reader, n, factor, provisional, low, high)
        flagged_pass = reader.run(fourth_parts) if fourth_parts else None
    if farthest is None:
        farthest = (third["farthest"].value, third["farthest"].row)
    key = choice.rule
    if test.kind is not None:
        statistics.add(flagged_pass[f"order_{key}"])
        part = flagged_pass[f"flagged_{key}"]
    else:
        part = FlaggedValues(("fences", -math.inf, math.inf), factor)
    flagged = rules.outliers_found(
        test, factor, low_values=part.low_values, low_rows=part.low_rows, high_values=part.high_values,
        high_rows=part.high_rows, count_low=part.count_low, count_high=part.count_high,
        low_range=(float(part.low_values[0]), part.low_max) if part.count_low else None,
        high_range=(part.high_min, float(part.high_values[-1])) if part.count_high else None)
    histogram_focus = None
    layout = rules.focus_layout_for(provisional, *test.fences_in_data_units(factor)[2:], low, high)
    if layout is not None:
        counts = flagged_pass[f"focus_{key}"].counts
        histogram_focus = engine_bins.focus_plan(histogram_plan, layout, counts[1:-1], int(counts[0]),
                                                 int(counts[-1]))
    count_low, count_high = flagged.count_low, flagged.count_high
    m = n - count_low - count_high
    reader.settle(statistics, _rest_ranks(m, count_low))

    def rest_at(rank: int) -> float:
        return statistics(count_low + rank)

    def rest_medcouple() -> tuple[float, str]:
        low_side, high_side = part.sides(reservoir.values)
        return _medcouple(np.sort(reservoir.values[~(low_side | high_side)]) / factor, whole_reservoir, seed)

    trimmed = {proportion: _trimmed_mean(third, proportion, cut, n, statistics, factor) for proportion, cut in
               cuts.items()}
    quality = rules.quality_of(account, n, _quality_flags(
        n, first, third, code_plans, tie_candidates, distinct, extremes, (q3 - q1) * factor, decimals))
    gathered = rules.Gathered(
        n=n, factor=factor, low=low, high=high, moments=moments, value_at=statistics, median=median,
        quantiles=quantile_values, mad=mad, trimmed=tuple(trimmed.get(p, median) for p in TRIM_PROPORTIONS),
        shape=shape, outliers=flagged, rest_moments=part.inside.moments() if flagged.count else None,
        rest_at=rest_at, rest_medcouple=rest_medcouple, farthest=farthest,
        every_value=(lambda: np.sort(reservoir.values)) if whole_reservoir else None, histogram=histogram_plan,
        density=density_estimate, density_focus=rules.density_focus_of(density_estimate, fine_density,
                                                                        histogram_focus),
        histogram_focus=histogram_focus, quality=quality, order_counts=_order_counts(third["points"], n, q1, median, q3,
                                                                                 factor, extremes))
    approximate = _approximations(n, whole_reservoir, reservoir, seed, flagged)
    findings = rules.decide(gathered, options, variable, provenance,
                            _accuracy(runner, first, n, approximate, seed, reservoir_size))
    return ScaleResult(findings, _figure_sample(account, first, flagged), reader.passes)


# ---------------------------------------------------------------------------
# The third pass's plan, and gathering it ahead in the second pass
# ---------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class _Planned:
    """What the summaries that need the quartiles are, for one (q1, median, q3)."""

    parts: dict
    histogram_layout: object
    sensitivity_layout: object
    density_layout: object
    provisional: object
    candidates: dict  # rule -> OutlierTest, for each rule the automatic choice may take


@dataclass(frozen=True, slots=True)
class _QuartilePlanner:
    """The histogram, bin-sensitivity and density layouts and each candidate rule's summaries, from the
    quartiles and the median (x / factor units): one function for the exact plan and for the plans the
    look-ahead gathers."""

    reader: object
    options: Options
    n: int
    low: float
    high: float
    factor: float
    moments: object
    integer_valued: bool
    has_spread: bool
    medcouple: float | None

    def __call__(self, q1: float, median: float, q3: float) -> _Planned:
        n, low, high, factor, options, moments = self.n, self.low, self.high, self.factor, self.options, self.moments
        sd = moments.sd
        parts: dict = {}
        histogram_layout = sensitivity_layout = density_layout = provisional = None
        if self.has_spread:
            skewness_biased = moments.s3 / moments.s2**1.5 if moments.s2 > 0 else None
            histogram_layout = layouts.histogram_layout(
                n=n, low=low, high=high, sd=sd * factor, iqr=(q3 - q1) * factor, rule=options.bin_rule,
                integer_valued=self.integer_valued, skewness_biased=skewness_biased)
            parts["histogram"] = layouts.histogram_counter(histogram_layout)
            if n >= MIN_FOR_SHAPE:
                sensitivity_layout = layouts.sensitivity_layout(low=low, high=high, base_width=histogram_layout.width,
                                                                 integer_valued=self.integer_valued)
                for k, counter in enumerate(sensitivity_layout.counters):
                    parts[f"sensitivity{k}"] = counter
            density_layout = layouts.density_layout(n=n, low=low, high=high, sd=sd * factor, iqr=(q3 - q1) * factor,
                                                     rule=options.bandwidth_rule, lower_bound=options.lower_bound,
                                                     upper_bound=options.upper_bound)
            parts["density"] = density_layout.counter()
            # the histogram's widths are known before its counts; the focus needs only those
            provisional = layouts.histogram_from_counts(histogram_layout, np.zeros(histogram_layout.bins, dtype=int))
        candidates = {}
        medcouple = self.medcouple
        if options.outlier_rule != "modified-z":  # the modified z rule needs the MAD: it waits for the MAD's pass
            choices = ([rules.rule_choice(None, True), rules.rule_choice(None, False)] if options.outlier_rule is None
                       else [rules.rule_choice(options.outlier_rule, False)])
            for choice in choices:
                if rules.working_choice(choice, n, q1=q1, q3=q3, medcouple=medcouple,
                                        median=median).rule == "modified-z":
                    continue  # a rule that gives way to the modified z score needs the MAD: it waits for it
                test = rules.outlier_test(choice, n, q1=q1, median=median, q3=q3, mad=math.nan,
                                          medcouple=medcouple if medcouple is not None else 0.0,
                                          mean_absolute_deviation=lambda: math.nan)
                candidates[choice.rule] = test
                _gather_flagged(parts, choice.rule, test, self.reader, n, factor, provisional, low, high)
        return _Planned(parts, histogram_layout, sensitivity_layout, density_layout, provisional, candidates)


# Points per quartile bracket at which the look-ahead evaluates the plan (and both ends).
_AHEAD_STEPS = 5


class _LookAhead:
    """The third pass's summaries gathered in the second, before the exact quartiles and median are known.

    The rank bins bracket each order statistic; every plan those brackets allow (the plan at a grid of
    quartiles and medians across them, ends included) is gathered: each distinct histogram and bin grid,
    the density's lattice at its finest level (a coarser one is exact from it,
    :func:`narrator.engine.density.coarsen_lattice`), each focused histogram's edges, each rule's values
    between the least and greatest limits (:class:`~.summaries.FlaggedBand`), the MAD's distances for any
    median in its bracket (:class:`~.summaries.CentreBand`); the trimmed means' middles between the
    brackets; tie and order counts come from the order statistics' own brackets. Once the exact
    figures are known, :meth:`settle` rebuilds every summary of the exact plan from these, or gives
    None (and the third pass is read) when any is not among them: never a different result.
    """

    def __init__(self) -> None:
        self.parts: dict = {}
        self.bin_keys: dict = {}
        self.edge_keys: dict = {}
        self.trims: dict = {}
        # rank ranges whose bins "order" keeps besides the order statistics': the rest's of every rule
        # gathered ahead, and the trimmed means' brackets out to their inner ends
        self.order_ranges: list = []
        self.rest_rules: set = set()
        self.ok = True

    @classmethod
    def plan(cls, plan_for: _QuartilePlanner, reader: _Reader, n: int, factor: float, code_plans, cuts,
             want_farthest: bool, mean_data: float) -> _LookAhead | None:
        if not plan_for.has_spread or n < 2:
            return None
        bins = reader.bins
        low, high = plan_for.low, plan_for.high

        def lower(rank: int) -> float:
            return min(max(bins.value_below(rank), low), high)

        def upper(rank: int) -> float:
            return min(max(bins.value_above(rank), low), high)

        quartile_low = rules.quantiles_at(lower, n, [0.25, 0.75], factor)
        quartile_high = rules.quantiles_at(upper, n, [0.25, 0.75], factor)
        median_low, median_high = rules.median_at(lower, n, factor), rules.median_at(upper, n, factor)
        ahead = cls()
        grids = [np.linspace(a, b, _AHEAD_STEPS) for a, b in zip(quartile_low, quartile_high, strict=True)]
        medians = np.linspace(median_low, median_high, 3)
        density = None
        fences: dict = {}
        rest_ranges: dict = {}
        for q1 in grids[0]:
            for q3 in grids[1]:
                for median in medians:
                    if not q1 <= median <= q3:
                        continue
                    try:
                        planned = plan_for(float(q1), float(median), float(q3))
                    except NarratorError:  # a plan the exact figures may not take: the exact one decides
                        return None
                    for key, part in planned.parts.items():
                        if key == "histogram" or key.startswith("sensitivity"):
                            ahead.bin_keys.setdefault(_bin_key(part), part)
                        elif key == "density":
                            if density is None or part.step < density.step:
                                density = part
                        elif key.startswith("focus_"):
                            ahead.edge_keys.setdefault(part.edges.tobytes(), part)
                    for rule, test in planned.candidates.items():
                        if test.kind != "fences":
                            return None
                        lower_fence, upper_fence = test.fences[0], test.fences[1]
                        known = fences.setdefault(rule, [lower_fence, lower_fence, upper_fence, upper_fence])
                        known[0], known[1] = min(known[0], lower_fence), max(known[1], lower_fence)
                        known[2], known[3] = min(known[2], upper_fence), max(known[3], upper_fence)
                        rest_ranges.setdefault(rule, []).extend(_rest_rank_ranges(bins, n, test, factor))
        if density is None:
            return None
        lattice_nodes = density.nodes
        # The finest lattice, without its empty lead points (they change no weight).
        ahead.parts["ahead_density"] = type(density)(density.centre, density.unit, density.anchor, density.step,
                                                     lattice_nodes)
        for k, part in enumerate(ahead.bin_keys.values()):
            ahead.parts[f"ahead_bins{k}"] = part
        for k, part in enumerate(ahead.edge_keys.values()):
            ahead.parts[f"ahead_edges{k}"] = part
        for rule, (lower_min, lower_max, upper_min, upper_max) in fences.items():
            slack = 1e-12 * max(abs(lower_min), abs(upper_max), 1e-300)
            lower_min, lower_max, upper_min, upper_max = (lower_min - slack, lower_max + slack, upper_min - slack,
                                                          upper_max + slack)
            if not lower_max < upper_min:
                return None
            ahead.parts[f"ahead_flagged_{rule}"] = FlaggedBand(lower_min, lower_max, upper_min, upper_max, factor)
            ahead.order_ranges.extend(rest_ranges[rule])
            ahead.rest_rules.add(rule)
        # The MAD: distances from the middle of the median's bracket, for any median inside it.
        centre = (median_low / 2 + median_high / 2) * factor
        reach = (median_high / 2 - median_low / 2) * factor
        reach += 1e-9 * max(abs(centre), reach, 1e-300)
        mad_plan = _MadPlan(bins, n, centre / factor, factor, low, high)
        band = mad_plan.counter()
        # Any median within ``reach`` of the centre moves each distance by at most ``reach``: the band is
        # widened by that, and by as much again for the settling's own allowance.
        ahead.parts["ahead_mad"] = CentreBand(centre, 2 * reach, max(band.inner * factor - 3 * reach, 0.0),
                                              band.outer * factor + 3 * reach, factor)
        # Trimmed means: the values strictly between the brackets' inner ends; the rest are in the brackets.
        for proportion, cut in cuts.items():
            inner_low, inner_high = upper(cut), lower(n - cut - 1)
            if inner_low < inner_high:
                ahead.trims[proportion] = (inner_low, inner_high)
                # The values from each cut point out to the inner end (the end included) are read from the
                # kept bins: those of the cut's rank through the bin that holds the inner end.
                ahead.order_ranges.append((cut, max(cut, bins.count_bounds(inner_low)[1] - 1)))
                ahead.order_ranges.append((min(n - cut - 1, bins.count_bounds(inner_high)[0]), n - cut - 1))
                ahead.parts[f"ahead_trim{proportion}"] = RangeMean(inner_low, inner_high, factor)
        for plan in code_plans:
            ahead.parts[f"ahead_others{plan['index']}"] = ExcludingMoments(plan["code"])
        if want_farthest:
            ahead.parts["ahead_farthest"] = FarthestValue(mean_data)
        return ahead

    def settle(self, parts: dict, second: Pass, statistics: OrderStatistics, median: float) -> dict | None:
        """The exact plan's summaries (``parts``, not yet filled) rebuilt from what the second pass gathered,
        or None when any of them is not among its plans."""
        order: PartitionCounts = second["order"]
        settled: dict = {}
        for key, part in parts.items():
            found = self._settle_one(key, part, second, order, statistics, median)
            if found is None:
                return None
            settled[key] = found
        return settled

    def _settle_one(self, key, part, second, order, statistics, median):
        if key == "histogram" or key.startswith("sensitivity"):
            found = self.bin_keys.get(_bin_key(part))
            return None if found is None else second[self._name_of(found)]
        if key == "density":
            return _coarsened(second["ahead_density"], part)
        if key.startswith("focus_"):
            found = self.edge_keys.get(part.edges.tobytes())
            if found is None or not np.array_equal(found.edges, part.edges):
                return None
            return second[self._name_of(found)]
        if key.startswith("flagged_"):
            band = second.parts.get("ahead_" + key)
            if band is None or part.test[0] != "fences":
                return None
            return band.settle(part.test[1], part.test[2])
        if key.startswith("order_"):
            return order if key[len("order_"):] in self.rest_rules else None
        if key == "mad":
            return second["ahead_mad"].settle(median)
        if key == "points":
            return _PointCounts.of(part.boundaries, statistics.partitions)
        if key.startswith("trim"):
            return self._trim(key, part, second, statistics.partitions)
        if key.startswith("others") or key == "farthest":
            return second.parts.get("ahead_" + key)
        return None

    def _name_of(self, part) -> str:
        for name, value in self.parts.items():
            if value is part:
                return name
        raise LookupError(name)

    def _trim(self, key, part: RangeMean, second, partitions) -> RangeMean | None:
        proportion = float(key[len("trim"):])
        if proportion not in self.trims:
            return None
        inner_low, inner_high = self.trims[proportion]
        low_value, high_value = part.low, part.high
        if not (low_value <= inner_low and inner_high <= high_value):
            return None
        middle: RangeMean = second[f"ahead_trim{proportion}"]
        result = RangeMean(low_value, high_value, part.factor)
        result._add(middle.n, middle.mean)
        for start, stop in ((low_value, inner_low), (inner_high, high_value)):
            holder = next((p for p in partitions if p.covers(start, stop)), None)
            if holder is None:
                return None
            values, copies = holder.kept_between(start, stop)
            inside = (values > low_value) & (values < high_value)
            values, copies = values[inside], copies[inside]
            if values.size:
                units = values if part.factor == 1.0 else values / part.factor
                count = int(copies.sum())
                result._add(count, float(np.sum(units * copies) / count))
        return result


def _bin_key(part: BinCounts) -> tuple:
    return (part.width, part.shift, part.first, part.tolerance, part.bins, part.clip, part.factor)


def _coarsened(finest, part):
    """The exact plan's density counts from the finest lattice's: coarsened level by level, with the
    plan's empty lead points around them; None when the plan's lattice is not a coarsening of it."""
    if (finest.centre, finest.unit, finest.anchor) != (part.centre, part.unit, part.anchor):
        return None
    counts = finest.counts
    step = finest.step
    while step < part.step and counts.size > 2 and (counts.size - 1) % 2 == 0:
        counts = engine_density.coarsen_lattice(counts)
        step *= 2.0
    if step != part.step or counts.size != part.nodes:
        return None
    result = type(part)(part.centre, part.unit, part.anchor, part.step, part.nodes, part.lead)
    result.counts[part.lead : part.lead + part.nodes] = counts
    return result


class _PointCounts:
    """count_below and count_equal at given points, read from the order statistics' brackets."""

    def __init__(self, answers: dict) -> None:
        self.answers = answers

    @classmethod
    def of(cls, points, partitions) -> _PointCounts | None:
        answers = {}
        for point in points:
            found = next((a for a in (p.counts_at(float(point)) for p in partitions) if a is not None), None)
            if found is None:
                return None
            answers[float(point)] = found
        return cls(answers)

    def count_below(self, value: float) -> int:
        return self.answers[float(value)][0]

    def count_equal(self, value: float) -> int:
        return self.answers[float(value)][1]


# ---------------------------------------------------------------------------
# Reading account
# ---------------------------------------------------------------------------


class _FirstValues:
    """The values of the first chunk that has any (after the valid range), kept once."""

    def __init__(self) -> None:
        self.values: np.ndarray | None = None

    def update(self, values: np.ndarray, rows: np.ndarray | None = None) -> _FirstValues:
        if self.values is None and values.size:
            self.values = values.copy()
        return self


_FIRST_CHUNKS_LOOKED_AT = 8


def _first_values(source: ColumnSource, low: float | None, high: float | None) -> np.ndarray:
    """The values of the first chunk (of the first few) with any, for the rank bins' centre and scale:
    the same chunk and cell rules as the passes, read once more (not a pass: one chunk)."""
    look = Pass({"first": _FirstValues()}, low=low, high=high)
    for k, chunk in enumerate(source.chunks()):
        look.feed(chunk)
        if look["first"].values is not None or k + 1 >= _FIRST_CHUNKS_LOOKED_AT:
            break
    found = look["first"].values
    return found if found is not None else np.zeros(0)


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


def _trimmed_mean(third: Pass, proportion: float, cut: int, n: int, statistics, factor: float):
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
    a narrow band [inner, outer] found from the rank bins' exact counts; a pass counts the distances below
    it and keeps those inside (:class:`~.summaries.DistanceCounts`), so the MAD is read off exactly."""

    def __init__(self, bins: RankBins, n: int, median: float, factor: float, low: float, high: float) -> None:
        self.bins, self.n, self.median, self.factor = bins, n, median, factor
        self.centre = median * factor  # data units
        self.span = max(self.centre - low, high - self.centre, 0.0)
        middle = n // 2
        self.ranks = [middle] if n % 2 else [middle - 1, middle]

    def _within(self, t: float) -> tuple[int, int]:
        """(a, b): a <= the number of values within t of the centre (ends included) <= b, from the bins."""
        below_low, upto_low = self.bins.count_bounds(self.centre - t)
        below_high, upto_high = self.bins.count_bounds(self.centre + t)
        return below_high - upto_low, upto_high - below_low

    def _inner(self, most: int) -> float:
        """A distance t with at most ``most`` values nearer the centre than t (the largest the bisection
        finds; 0 when none is)."""
        if most < 0 or self._within(0.0)[1] > most:
            return 0.0
        low, high = 0.0, self.span
        if self._within(high)[1] <= most:
            return high
        for _ in range(64):
            t = (low + high) / 2
            if self._within(t)[1] <= most:
                low = t
            else:
                high = t
        return low

    def _outer(self, least: int) -> float:
        """A distance t with at least ``least`` values within t of the centre (inf when the bins cannot
        tell)."""
        low, high = 0.0, self.span
        if self._within(high)[0] < least:
            return math.inf
        if self._within(low)[0] >= least:
            return 0.0
        for _ in range(64):
            t = (low + high) / 2
            if self._within(t)[0] >= least:
                high = t
            else:
                low = t
        return high

    def counter(self, widen: int = 0) -> DistanceCounts:
        inner = self._inner(self.ranks[0] - widen) / self.factor
        outer = self._outer(self.ranks[-1] + 1 + widen) / self.factor
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
        widen = FIRST_WIDENING
        while result is None:
            counts = reader.run({"mad": self.counter(widen)})["mad"]
            result = self._read(counts)
            widen = int(widen * WIDEN_FACTOR)
        return result


# ---------------------------------------------------------------------------
# Outliers and the values without them
# ---------------------------------------------------------------------------


def _gather_flagged(parts: dict, key: str, test: rules.OutlierTest, reader: _Reader, n: int, factor: float,
                    provisional, low: float, high: float) -> None:
    """The pass summaries for one rule's test: the values it flags with their rows and the moments of the
    rest, brackets for the rest's order statistics, and the focused histogram's counts."""
    if test.kind is None:
        return
    parts[f"flagged_{key}"] = FlaggedValues(_limits(test), factor)
    parts[f"order_{key}"] = reader.brackets(_rest_rank_ranges(reader.bins, n, test, factor))
    layout = rules.focus_layout_for(provisional, *test.fences_in_data_units(factor)[2:], low, high)
    if layout is not None:
        parts[f"focus_{key}"] = EdgeCounts(engine_bins.focus_edges(layout))


def _limits(test: rules.OutlierTest) -> tuple:
    """The rule's test as :class:`~.summaries.FlaggedValues` takes it (x / factor units)."""
    if test.kind == "fences":
        return ("fences", test.fences[0], test.fences[1])
    return ("score", test.centre, test.scale, test.threshold)


def _rest_ranks(m: int, count_low: int) -> list[int]:
    """Full-data ranks of the order statistics the values without the flagged ones need."""
    if m <= 0:
        return []
    ranks = set(type7_ranks(m, rules.REST_PROBABILITIES)) | set(median_ranks(m)) | {0, m - 1}
    return sorted(count_low + r for r in ranks)


def _rest_rank_ranges(bins: RankBins, n: int, test: rules.OutlierTest, factor: float) -> list[tuple[int, int]]:
    """Rank ranges covering the rest's order statistics for any flagged counts the rank bins allow.

    The bins bound how many values fall below the rule's lower limit and above its upper one; each
    needed rank (count below + a rank of the rest) does not fall as the count below grows nor rise as
    the count above grows, so the two extreme pairs of counts give its range.
    """
    if test.kind == "fences":
        lower, upper = test.fences[0] * factor, test.fences[1] * factor
    else:
        lower = (test.centre - test.threshold * test.scale) * factor
        upper = (test.centre + test.threshold * test.scale) * factor
    low_least, low_most = bins.count_bounds(lower)
    upper_least, upper_most = bins.count_bounds(upper)
    high_least, high_most = n - upper_most, n - upper_least

    def ranks(count_low: int, count_high: int) -> list[int]:
        count_low = min(max(count_low, 0), n - 1)
        m = max(n - count_low - max(count_high, 0), 1)
        named = [m // 2 - 1 if m % 2 == 0 else m // 2, m // 2, 0, m - 1]
        for p in rules.REST_PROBABILITIES:  # type7_ranks's two ranks each, one pair per probability
            below = int(np.floor((m - 1) * p))
            named += [below, min(below + 1, m - 1)]
        return [count_low + r for r in named]

    return [(max(0, a - 1), min(n - 1, b + 1)) for a, b in zip(ranks(low_least, high_most),
                                                              ranks(low_most, high_least), strict=True)]


# ---------------------------------------------------------------------------
# Data quality
# ---------------------------------------------------------------------------


def _code_plans(codes: CodeCounts, n: int) -> list[dict]:
    """For each suspect code worth checking (:func:`narrator.engine.rules.code_worth_checking`): the ranks
    its code-free quartiles need."""
    plans = []
    for k, code in enumerate(codes.codes):
        count = int(codes.equal[k])
        if not rules.code_worth_checking(code, count, n):
            continue
        left = int(codes.below[k])
        positions: list[int] = []

        def record(index: np.ndarray, positions=positions) -> np.ndarray:
            positions.extend(int(i) for i in index)
            return np.zeros(len(index))

        linear_quantiles(record, n - count, [0.25, 0.75])
        ranks = [p if p < left else p + count for p in positions]
        plans.append({"index": k, "code": code, "count": count, "left": left, "ranks": ranks})
    return plans


def _code_quartiles(plan: dict, statistics, n: int) -> None:
    """Type 7 quartiles of the values other than the code (as narrator.engine.quality), into ``plan``."""
    left, count = plan["left"], plan["count"]

    def others_at(index: np.ndarray) -> np.ndarray:
        return np.array([statistics(int(i) if i < left else int(i) + count) for i in index])

    plan["q1"], plan["q3"] = (float(v) for v in linear_quantiles(others_at, n - count, [0.25, 0.75]))


def _order_counts(counted: PartitionCounts, n: int, q1: float, median: float, q3: float, factor: float,
                  extremes: ExtremeSummary):
    """narrator.engine.ties' order counts from the exact counts at the quartiles and the median."""
    return order_counts_from(
        n=n, below_q1=counted.count_below(q1 * factor), below_median=counted.count_below(median * factor),
        at_median=counted.count_equal(median * factor),
        above_q3=n - counted.count_below(q3 * factor) - counted.count_equal(q3 * factor),
        at_min=extremes.low_count, at_max=extremes.high_count,
        next_above_min=extremes.second_low if math.isfinite(extremes.second_low) else None,
        next_below_max=extremes.second_high if math.isfinite(extremes.second_high) else None)


def _quality_flags(n, first, third, code_plans, tie_candidates, distinct, extremes: ExtremeSummary, iqr,
                   decimals) -> list[QualityFlag]:
    """The counts :func:`narrator.engine.rules.quality_of` decides from, gathered in the passes.

    The spike test of a suspected code (a count far above its neighbours') needs the values next to
    the code and is not run here: a repeated code far from the rest is flagged.
    """
    codes: CodeCounts = first["codes"]
    flags = []
    for plan in code_plans:
        flag = rules.code_flag(plan["code"], plan["count"], n, q1=plan["q1"], q3=plan["q3"],
                               others_sd=lambda plan=plan: third[f"others{plan['index']}"].population_sd(),
                               is_spike=None, rows=lambda plan=plan: codes.rows[plan["index"]])
        if flag is not None:
            flags.append(flag)
    flags.extend(rules.heaping_flags(n, decimals, iqr, first["round"].count,
                                     (extremes.low, extremes.low_count, extremes.high, extremes.high_count)))
    longest = None
    if n >= MIN_FOR_CONFIDENT and distinct > 1:
        points: PartitionCounts = third["points"]
        shortest = rules.tie_run_length(n)
        for value in tie_candidates:
            length = points.count_equal(value)
            if length >= shortest and (longest is None or length > longest[0]):
                longest = (length, float(value))
    flags.extend(rules.tie_flags(n, distinct, longest, (extremes.low, extremes.low_count, extremes.high,
                                                        extremes.high_count)))
    return flags


# ---------------------------------------------------------------------------
# The accuracy record
# ---------------------------------------------------------------------------


def _approximations(n, whole, reservoir: ReservoirSample, seed, flagged: Outliers) -> tuple:
    if whole or n < 3:
        return ()
    size = int(reservoir.values.size)
    # The shape judgement weighs the medcouple's sign; the lead follows the shape, and so does what stands
    # out (narrator.engine.entry_errors reads the shape and the fences).
    depends = ["shape.label", "shape.strength", "shape.evidence", "shape.reasons", "center.lead",
               "center.lead_reasons", "without_outliers.lead_without", "without_outliers.lead_would_change",
               "unusual"]
    if flagged.rule == "adjusted":  # the skew-adjusted fences stretch with the medcouple
        # The skew-adjusted fences stretch with the medcouple, and the focused histogram stops at a fence.
        depends = ["outliers", "without_outliers", "histogram_focus", "density_focus", *depends]
    return (ApproximateFigure(figure="shape.medcouple", method=f"reservoir-subsample:{size}:{seed}",
                              bound=math.sqrt(MEDCOUPLE_VARIANCE_FACTOR / size), bound_kind="standard_error",
                              depends=tuple(depends)),)


def _accuracy(runner, first: Pass, n, approximate, seed, reservoir_size) -> Accuracy:
    bins: RankBins = first["bins"]
    return Accuracy(
        engine=getattr(runner, "name", "stream"), exact=EXACT_FIGURES, merged=MERGED_FIGURES,
        approximate=tuple(approximate), sketch=f"rank-bins:{2**bins.bits}", merged_relative_error=MERGED_RELATIVE_ERROR,
        reservoir_size=int(reservoir_size), seed=int(seed))
