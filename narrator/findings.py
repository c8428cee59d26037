"""Findings: the contract between the statistics engine and everything after it.

A :class:`Findings` holds every number and judgement the engine made about one
numeric variable, as frozen dataclasses with reason codes and no prose. It
round-trips through JSON (:meth:`Findings.to_dict` / :meth:`Findings.from_dict`,
:func:`dumps` / :func:`loads`) so a report can be regenerated and compared later.

==========================  ====================================================
Class                       What it holds
==========================  ====================================================
:class:`Variable`           name, unit, bounds and valid range as declared
:class:`Center`             mean, median, trimmed means, the lead measure
:class:`Spread`             SD, quartiles (with their definition), MAD, range
:class:`OrderCounts`        how many values lie below, at and above the median, quartiles, ends
:class:`Shape`              label, strength, and every piece of evidence
:class:`BinSensitivity`     visible peaks across bin widths and offsets
:class:`Outliers`           rule, constants, fences, flagged values and rows
:class:`WithoutOutliers`    center and spread recomputed without the flagged set
:class:`Interval`           one confidence interval and how it was made
:class:`Intervals`          the mean's and the median's intervals
:class:`HistogramPlan`      bin rule, nice width, aligned edges and counts
:class:`Density`            kernel density estimate on a grid
:class:`QualityFlag`        one data-quality observation (a code, counts, rows)
:class:`Quality`            rows read, missing, excluded, and all flags
:class:`ApproximateFigure`  one figure that is not exact, how it was made, its bound
:class:`Accuracy`           which engine ran, which figures are exact, which approximate
:class:`Cluster`            one cluster of values: its range, share and median
:class:`ColumnSeparation`   whether a categorical column of the file separates the clusters
:class:`Clusters`           the clusters the density's valleys split the values into
:class:`EntryError`         one value that is probably an entry error, with its row
:class:`Unusual`            values surprising for the shape the data have; entry errors
:class:`Concentration`      the total and how much of it the largest values hold
:class:`Difference`         one comparison of two groups' values: shift, interval, verdict
:class:`GroupPair`          two groups and their :class:`Difference`
:class:`GroupVersusRest`    one group against all the others pooled
:class:`GroupComparison`    every pair, which groups stand apart, which go together
:class:`Findings`           all of the above plus options and provenance
==========================  ====================================================

Field names are part of the public interface: users' scripts read the JSON
(``center.median``, ``outliers.upper_fence``...). Add fields; do not rename.
"""

from __future__ import annotations

import dataclasses
import json
import math
import types
import typing
from dataclasses import dataclass, field
from typing import Any

from narrator.errors import NarratorError

SCHEMA_VERSION = 1

# Flagged values listed per side (low, high) in Outliers; the counts and ranges cover them all.
LISTED_PER_SIDE = 1000

# Fixed vocabularies. The phrase builder keys its words on these codes.
SHAPE_LABELS = (
    "symmetric",
    "right-skewed",
    "left-skewed",
    "bimodal",
    "multimodal",
    "undetermined",  # too few values, or a constant column
)
SHAPE_STRENGTHS = ("slight", "moderate", "strong")
EVIDENCE_LEVELS = ("none", "weak", "moderate", "strong")
OUTLIER_RULES = ("tukey", "adjusted", "modified-z", "esd")
LEAD_MEASURES = ("mean", "median")


@dataclass(frozen=True, slots=True)
class Variable:
    """The variable as the user declared it."""

    name: str
    unit: str | None = None
    valid_min: float | None = None
    valid_max: float | None = None
    lower_bound: float | None = None  # a bound the quantity cannot cross (0 for waits)
    upper_bound: float | None = None
    population: bool = False  # the rows are the whole population of interest
    decimals: int = 0  # decimals the data are recorded with (largest seen, capped)
    integer_valued: bool = False


@dataclass(frozen=True, slots=True)
class Center:
    mean: float
    median: float
    trimmed_mean_10: float
    trimmed_mean_20: float
    lead: str  # one of LEAD_MEASURES
    lead_reasons: tuple[str, ...]  # reason codes, e.g. ("skewed",), ("outliers_move_mean",)
    mean_minus_median: float
    mean_median_gap_material: bool  # the gap is large relative to the spread
    mean_pull: str  # "higher", "lower" or "none": where the mean sits relative to the median


@dataclass(frozen=True, slots=True)
class Spread:
    sd: float
    variance: float
    q1: float
    q3: float
    iqr: float
    quantile_method: str  # "hyndman-fan-7" (numpy "linear")
    mad: float  # raw median absolute deviation
    mad_scaled: float  # 1.4826 * MAD, estimates the SD under normality
    min: float
    max: float
    range: float
    p5: float
    p10: float
    p90: float
    p95: float
    cv: float | None  # coefficient of variation; None when not meaningful
    cv_reason: str  # "computed", "not_positive", "zero_mean"


@dataclass(frozen=True, slots=True)
class OrderCounts:
    """Counts of values by their place against the median, the quartiles and the two ends.

    The words "half were lower", "no value is lower" or "58 % were 0" are said only when these
    counts make them true (narrator.phrasing.licences).
    """

    below_median: int
    at_median: int
    above_median: int
    below_q1: int  # strictly below Q1
    above_q3: int  # strictly above Q3
    at_min: int
    at_max: int
    next_above_min: float | None  # the smallest value above the minimum (None when all are equal)
    next_below_max: float | None  # the largest value below the maximum

    @property
    def n(self) -> int:
        return self.below_median + self.at_median + self.above_median

    @property
    def within_quartiles(self) -> int:
        """Values from Q1 to Q3, both included."""
        return self.n - self.below_q1 - self.above_q3


@dataclass(frozen=True, slots=True)
class BinSensitivity:
    base_width: float
    widths: tuple[float, ...]
    offsets: tuple[float, ...]  # as fractions of a bin
    peak_counts: tuple[tuple[int, ...], ...]  # [width index][offset index]
    sensitive: bool  # the number of visible peaks changes across the grid
    min_peaks: int
    max_peaks: int
    # The share of the values in the fullest bin at the base width, at the offset where it is smallest:
    # when one bin holds almost every value at every offset, peaks cannot be told apart.
    largest_bin_share: float | None = None
    undecided: bool = False  # largest_bin_share at or above narrator.engine.bins.DOMINANT_BIN_SHARE


@dataclass(frozen=True, slots=True)
class Shape:
    label: str  # one of SHAPE_LABELS
    strength: str | None  # one of SHAPE_STRENGTHS, None for symmetric/undetermined
    evidence: str  # one of EVIDENCE_LEVELS: how firmly the data support the label
    reasons: tuple[str, ...]  # reason codes
    skewness: float | None  # G1, adjusted Fisher-Pearson
    skewness_se: float | None
    skewness_test_z: float | None  # D'Agostino, n >= 8
    skewness_test_p: float | None
    bowley: float | None
    medcouple: float | None
    medcouple_method: str  # "exact" or "subsample:<size>:<seed>"
    excess_kurtosis: float | None  # G2
    heavy_tails: bool
    density_peaks: int | None
    bimodality_coefficient: float | None
    bin_sensitivity: BinSensitivity | None
    tail_skewness: float | None = None  # Hinkley's skewness at the 5th and 95th percentiles


@dataclass(frozen=True, slots=True)
class Outliers:
    rule: str  # one of OUTLIER_RULES
    chosen_by: str  # "user" or "auto"
    auto_reason: str | None  # "skewed" or "not_skewed" when chosen_by == "auto"
    constants: dict[str, float]
    lower_fence: float | None
    upper_fence: float | None
    far_lower_fence: float | None
    far_upper_fence: float | None
    count: int
    count_low: int
    count_high: int
    # The flagged values listed, ascending: every flagged value when a side has at most
    # LISTED_PER_SIDE of them, else that side's LISTED_PER_SIDE farthest out (the lowest low
    # values, the highest high ones), so findings stay small however many values are flagged.
    # The first ``listed_low`` are low-side values, the rest high-side ones; ties in file order.
    values: tuple[float, ...]
    rows: tuple[int, ...]  # source row numbers of the listed values, same order
    far_out_values: tuple[float, ...]  # the listed values beyond the far fences
    far_out_rows: tuple[int, ...]
    note: str | None = None  # reason code, e.g. "mad_zero_fallback", "not_run_too_few"
    # Record identifiers of the listed values, same order; empty unless the
    # reader was asked to carry an id column (privacy by default).
    ids: tuple[str, ...] = ()
    listed_low: int = 0  # how many of ``values`` are low-side values
    low_range: tuple[float, float] | None = None  # (lowest, highest) of all low-side flagged values
    high_range: tuple[float, float] | None = None  # (lowest, highest) of all high-side flagged values
    # The rule first chosen, when it was degenerate for these data and ``rule`` is the one used instead,
    # and why: "medcouple_at_bound" (the skew-adjusted rule with |MC| = 1), "quartile_at_median" (the adjusted rule
    # with Q1 or Q3 equal to the median: the medcouple measures ties), "iqr_zero" (fences on the quartiles).
    fallback_from: str | None = None
    fallback_reason: str | None = None

    @property
    def low_values(self) -> tuple[float, ...]:
        """The listed low-side values, ascending."""
        return self.values[: self.listed_low]

    @property
    def high_values(self) -> tuple[float, ...]:
        """The listed high-side values, ascending."""
        return self.values[self.listed_low :]

    @property
    def complete(self) -> bool:
        """Whether every flagged value is listed."""
        return len(self.values) == self.count


@dataclass(frozen=True, slots=True)
class WithoutOutliers:
    n: int
    mean: float | None
    median: float | None
    sd: float | None
    iqr: float | None
    mean_change: float | None  # without - with
    mean_change_relative: float | None  # (without - with) / |with|
    median_change: float | None
    median_change_relative: float | None
    sd_change: float | None
    iqr_change: float | None
    lead_without: str | None
    lead_would_change: bool
    most_influential_value: float | None  # the value whose removal moves the mean most
    most_influential_row: int | None
    most_influential_mean_shift: float | None  # mean without it - mean with it


@dataclass(frozen=True, slots=True)
class Interval:
    low: float
    high: float
    level: float  # nominal, e.g. 0.95
    method: str  # "t", "bca-bootstrap", "order-statistic"
    coverage: float | None = None  # achieved coverage (order-statistic interval)
    ranks: tuple[int, int] | None = None  # 1-based order statistics used
    seed: int | None = None
    resamples: int | None = None


@dataclass(frozen=True, slots=True)
class Intervals:
    mean: Interval | None
    median: Interval | None
    reason: str  # "computed", "population", "too_few"
    mean_method_reason: str | None = None  # "default_t", "small_skewed_bootstrap", "t_past_range_bootstrap"


@dataclass(frozen=True, slots=True)
class HistogramPlan:
    rule: str  # "freedman-diaconis", "scott", "sturges", "doane"
    raw_width: float
    width: float  # rounded to 1, 2, 2.5 or 5 times a power of ten
    edges: tuple[float, ...]
    counts: tuple[int, ...]
    integer_aligned: bool
    # reason code when the plan differs from the plain rule: "iqr_zero_used_scott",
    # "too_few_for_doane_used_sturges", "bin_cap", "magnitude_resolution", "constant"; "focus" for
    # Findings.histogram_focus
    note: str | None = None
    below: int = 0  # values below the first edge (only a focused plan leaves any out)
    above: int = 0  # values at or above the last edge


@dataclass(frozen=True, slots=True)
class Density:
    kernel: str  # "gaussian"
    bandwidth_rule: str  # "silverman", "scott", "sheather-jones", or "user" (width given)
    bandwidth: float
    method: str  # "binned-fft" or "exact"
    grid: tuple[float, ...]
    values: tuple[float, ...]
    lower_bound: float | None
    upper_bound: float | None
    reflected: bool
    peaks: tuple[float, ...]  # grid locations of the prominent peaks
    # reason code for a bandwidth fallback: "iqr_zero_used_sd", "sd_zero_used_iqr",
    # "sd_zero_used_silverman", "sheather_jones_failed_used_silverman", "constant_fixed_width"
    bandwidth_note: str | None = None


@dataclass(frozen=True, slots=True)
class QualityFlag:
    code: str  # e.g. "missing", "non_numeric", "impossible", "missing_code", "heaping"
    count: int
    share: float | None = None
    rows: tuple[int, ...] = ()  # first few source rows involved
    values: tuple[float, ...] = ()  # values involved (e.g. the suspected code)
    detail: dict[str, float] = field(default_factory=dict)
    texts: tuple[str, ...] = ()  # cell texts involved, as read ("" for a blank cell), for exclusions


@dataclass(frozen=True, slots=True)
class Quality:
    n_rows: int
    n_missing: int
    missing_share: float
    n_non_numeric: int
    n_impossible: int
    n_used: int
    flags: tuple[QualityFlag, ...]

    def has(self, code: str) -> bool:
        return any(flag.code == code for flag in self.flags)

    def get(self, code: str) -> QualityFlag | None:
        return next((flag for flag in self.flags if flag.code == code), None)


@dataclass(frozen=True, slots=True)
class ApproximateFigure:
    """A figure computed from part of the data or a sketch, with how far it may be from the exact one."""

    figure: str  # findings key, e.g. "shape.medcouple"
    method: str  # e.g. "reservoir-subsample"
    bound: float | None  # size of the bound, in the figure's own units
    bound_kind: str  # e.g. "standard_error", "normalized_rank_error"
    depends: tuple[str, ...] = ()  # figures that inherit the approximation, e.g. the adjusted fences


@dataclass(frozen=True, slots=True)
class Accuracy:
    """How the findings were computed when the data were not all in memory at once.

    ``exact`` figures are the same numbers the in-memory engine gives; ``merged`` ones are sums merged
    over chunks, equal to the in-memory ones up to floating-point rounding (``merged_relative_error``);
    ``approximate`` ones carry their bound. (How many reads of the data it took is not recorded: a plan
    the look-ahead did not gather can cost one more read, and the findings must not change with it.)
    """

    engine: str  # "stream" or "dask"
    exact: tuple[str, ...]
    merged: tuple[str, ...]
    approximate: tuple[ApproximateFigure, ...]
    sketch: str | None = None  # the first pass's bracket summary, e.g. "rank-bins:4096" (bins to each doubling)
    merged_relative_error: float | None = None
    reservoir_size: int | None = None
    seed: int | None = None


@dataclass(frozen=True, slots=True)
class Cluster:
    """One cluster of values between two valleys of the density (see narrator.engine.clusters)."""

    low: float  # smallest value in the cluster
    high: float  # largest value in the cluster
    count: int
    share: float  # count / n
    median: float
    peak: float  # where the density peaks inside the cluster


@dataclass(frozen=True, slots=True)
class ColumnSeparation:
    """Whether one categorical column of the same file separates the clusters (narrator.groups.analysis).

    Each value is put in its cluster and its category; ``agreement`` is the share of values whose
    cluster is their category's most common cluster, ``association`` Goodman and Kruskal's lambda
    (the share of the errors of guessing the most common cluster for every value that knowing the
    category removes). ``categories`` names, for every category holding at least the privacy
    threshold of values, its most common cluster (0-based) and its count; smaller categories are
    only counted (``small_categories``).
    """

    column: str
    separates: bool
    reason: str  # "separates", "weak_association", "too_many_categories", "one_category", "too_few_labelled"
    n_labelled: int  # values with a category
    n_categories: int
    agreement: float | None = None
    association: float | None = None
    categories: tuple[tuple[str, int, int], ...] = ()  # (category, cluster index, count)
    small_categories: int = 0


@dataclass(frozen=True, slots=True)
class Clusters:
    """The clusters the values form: split at the density's lowest point between substantial peaks."""

    count: int  # 1 when the values form one cluster
    reason: str  # "several_peaks", "one_peak", "too_few", "peaks_not_confirmed", "spike_at_one_value"
    method: str = "density-valleys"
    min_peak_share: float | None = None  # a peak counts when its part of the curve holds this share
    cuts: tuple[float, ...] = ()  # the valleys (antimodes); a value at a cut belongs to the cluster above
    parts: tuple[Cluster, ...] = ()  # ascending; empty when count is 1
    # Filled where the file is read (narrator.groups.analysis); empty when no column was checked.
    separation: tuple[ColumnSeparation, ...] = ()
    separation_checked: bool = False


@dataclass(frozen=True, slots=True)
class EntryError:
    """A value that is probably an entry error: far out, and a simple slip of typing explains it."""

    value: float
    row: int
    reasons: tuple[str, ...]  # "ten_times_median", "tenth_of_median", "decimal_shift"
    ratio_to_median: float | None
    suggested: float | None = None  # the value with the decimal point moved, when that lands among the rest
    shift_digits: int | None = None  # how many places the point moved (negative: to the right)
    # "probable" when the evidence is strong (narrator.engine.entry_errors.strong_slip), else "possible":
    # worth checking against the source records, not judged a slip
    strength: str = "probable"


@dataclass(frozen=True, slots=True)
class Unusual:
    """Values that are surprising for the shape the data have (narrator.engine.entry_errors).

    ``values``/``rows`` are the values beyond the far-out fences of ``fence_rule`` that a shape
    fitted to the quartiles (``fitted_shape``) makes unlikely in a sample of this size; the full
    outlier list stays in :class:`Outliers`. ``excess`` says whether more values lie beyond the
    inner fences than the fitted shape predicts.
    """

    fence_rule: str | None
    reason: str  # "computed", "no_far_band", "no_fitted_shape", "rule_ignores_skew", "too_few", "not_run"
    far_lower_fence: float | None = None
    far_upper_fence: float | None = None
    count_far_out: int = 0
    expected_far_out: float | None = None
    far_out_surprising: bool = False
    values: tuple[float, ...] = ()
    rows: tuple[int, ...] = ()
    complete: bool = True  # every far-out value is listed
    count_beyond_fences: int = 0
    expected_beyond_fences: float | None = None
    excess: bool = False
    excess_p: float | None = None
    entry_errors: tuple[EntryError, ...] = ()
    entry_error_count: int = 0
    entry_error_reason: str = "none_found"  # "none_found", "found", "many", "not_positive", "not_checked"
    fitted_shape: str | None = None  # "normal" or "lognormal": the shape the values are judged against
    entry_error_probable_count: int = 0  # of entry_error_count, those with strength "probable"
    # Far-out values that many values hold, (value, count): not in ``values`` nor entry errors; their share
    # is said instead (narrator.engine.entry_errors.shared_values).
    shared: tuple[tuple[float, int], ...] = ()


@dataclass(frozen=True, slots=True)
class Concentration:
    """The total of the values and how concentrated it is (narrator.engine.concentration)."""

    total: float
    n: int
    top_percent_count: int  # the largest 1 % of values: ceil(n / 100) of them
    top_percent_share: float  # their share of the total
    top_tenth_count: int  # the largest 10 %: ceil(n / 10)
    top_tenth_share: float
    top_counts: tuple[tuple[int, float], ...]  # (k, share of the total held by the k largest values)
    gini: float  # 1 - 2 * area under the Lorenz curve (no small-sample correction)
    lorenz: tuple[float, ...]  # share of the total held by the lowest 10 %, 20 %, ..., 90 % of values


@dataclass(frozen=True, slots=True)
class AboveMinimum:
    """The values above the lowest one (narrator.engine.decision): when many values sit at the lowest (no
    claim, no visit), the middle of the others is the typical amount a reader asks for."""

    minimum: float
    count: int  # the values above the minimum
    median: float  # their middle value (the mean of the two middle ones for an even count)


@dataclass(frozen=True, slots=True)
class BelowMaximum:
    """The values below the highest one (narrator.engine.decision): when many values sit at the highest (a full
    score, a capped amount), the middle of the others is the typical value a reader asks for."""

    maximum: float
    count: int  # the values below the maximum
    median: float  # their middle value (the mean of the two middle ones for an even count)


@dataclass(frozen=True, slots=True)
class Difference:
    """How the values of one side compare with another's: ``second`` minus ``first``.

    ``shift`` is the Hodges-Lehmann estimate (median of all differences second - first) and
    ``low``/``high`` its distribution-free interval (narrator.engine.group_difference); both None
    for a whole population (``interval_reason``). ``lead_difference`` is the difference of the two
    sides' lead measures. ``verdict`` is "different", "slightly_different", "alike", "unclear" or
    "not_compared".
    """

    n_first: int
    n_second: int
    shift: float | None
    low: float | None
    high: float | None
    level: float | None
    coverage: float | None  # achieved coverage (at least this, also with ties)
    ranks: tuple[int, int] | None  # 1-based ranks of the limits among the n_first * n_second differences
    rank_method: str | None  # "exact" or "normal"
    interval_reason: str  # "computed", "population", "too_few"
    lead: str
    lead_difference: float | None
    scale: float | None  # the pooled spread the size is judged against
    scale_method: str | None  # "pooled-iqr" or "pooled-sd"
    small_bound: float | None  # |shift| at most this is small
    ruled_out_bound: float | None  # "alike" needs the interval inside +/- this
    verdict: str
    direction: str  # "higher", "lower" or "none": the second side against the first
    reasons: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class GroupPair:
    first: str
    second: str
    difference: Difference


@dataclass(frozen=True, slots=True)
class GroupVersusRest:
    group: str
    others: tuple[str, ...]
    difference: Difference  # the group's values (second) against the others' pooled values (first)


@dataclass(frozen=True, slots=True)
class GroupComparison:
    """Every shown group compared with every other (narrator.engine.group_difference).

    ``stand_apart`` lists the groups clearly different from every other group (three groups or
    more); ``together`` the sets of groups where every pair is alike. Both keep the groups'
    reading order: groups are never ranked, and ties are never broken by name.
    """

    reason: str  # "computed", "one_group", "too_many_groups"
    method: str = "hodges-lehmann"
    lead: str = "median"
    level: float | None = None  # each interval's level, after the adjustment
    family_level: float | None = None  # the report's level, for all the pairs together
    adjustment: str = "none"  # "none" or "bonferroni"
    pairs: tuple[GroupPair, ...] = ()
    stand_apart: tuple[str, ...] = ()
    together: tuple[tuple[str, ...], ...] = ()
    versus_rest: tuple[GroupVersusRest, ...] = ()


@dataclass(frozen=True, slots=True)
class Findings:
    schema_version: int
    variable: Variable
    n: int
    n_missing: int
    center: Center | None  # None only when no value is usable
    spread: Spread | None
    shape: Shape
    outliers: Outliers | None
    without_outliers: WithoutOutliers | None
    intervals: Intervals
    histogram: HistogramPlan | None
    density: Density | None
    quality: Quality
    options: dict[str, Any]
    provenance: dict[str, Any]
    # Set only by the engines for data larger than memory (narrator.scale); None in memory.
    accuracy: Accuracy | None = None
    # The histogram figures draw when a few far-out values would squeeze the bulk of the data into
    # a corner: bins of the rule's width over the bulk only, with the values beyond counted
    # (narrator.engine.bins.focus_layout). None when every value fits comfortably.
    histogram_focus: HistogramPlan | None = None
    # The density curve over the same part of the axis (the same estimate, read on 512 points there).
    density_focus: Density | None = None
    # Counts by place against the median, quartiles and ends (None when no value is usable).
    order_counts: OrderCounts | None = None
    # What a memo leads with (narrator.engine.decision): clusters, unusual values and entry errors,
    # the total's concentration. A field that was not computed is None and ``not_computed`` gives
    # its reason code ("stream_engine", "no_spread", "negative_values", ...).
    clusters: Clusters | None = None
    unusual: Unusual | None = None
    concentration: Concentration | None = None
    # The values above the lowest one: their count and middle value (None when all values are equal).
    above_minimum: AboveMinimum | None = None
    # The values below the highest one, likewise.
    below_maximum: BelowMaximum | None = None
    not_computed: dict[str, str] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        """A JSON-ready dict; non-finite floats become None."""
        return _encode(self)

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Findings:
        version = data.get("schema_version")
        if version != SCHEMA_VERSION:
            raise NarratorError(
                f"findings schema version {version!r} is not supported (expected {SCHEMA_VERSION})"
            )
        return _decode(cls, data, "findings")


def encode_part(value: Any) -> Any:
    """Any findings dataclass (or tuple of them) as JSON-ready data, as :meth:`Findings.to_dict` writes it."""
    return _encode(value)


def decode_part(kind: Any, data: Any, where: str) -> Any:
    """JSON-ready data back into ``kind`` (a findings dataclass or type hint); ``where`` names it in errors."""
    return _decode(kind, data, where)


def dumps(findings: Findings) -> str:
    """Findings as JSON text, stable key order, full float precision."""
    return json.dumps(findings.to_dict(), indent=2, ensure_ascii=False, allow_nan=False)


def loads(text: str) -> Findings:
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise NarratorError(f"findings are not valid JSON: {exc}") from None
    if not isinstance(data, dict):
        raise NarratorError("findings JSON must be an object")
    return Findings.from_dict(data)


_PLAIN_TYPES = (int, str, bool, type(None))


def _encode(value: Any) -> Any:
    # Exact built-in types first: a sidecar holds thousands of listed values and rows.
    kind = type(value)
    if kind is float:
        return value if math.isfinite(value) else None
    if kind in _PLAIN_TYPES:
        return value
    if kind is tuple or kind is list:
        return [_encode(item) for item in value]
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: _encode(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, tuple | list):
        return [_encode(item) for item in value]
    if isinstance(value, dict):
        return {str(key): _encode(item) for key, item in value.items()}
    if hasattr(value, "item") and callable(value.item):  # a numpy scalar slipped through
        return _encode(value.item())
    return value


def _decode(tp: Any, data: Any, where: str) -> Any:
    origin = typing.get_origin(tp)
    if origin in (typing.Union, types.UnionType):
        if data is None:
            return None
        options = [arg for arg in typing.get_args(tp) if arg is not type(None)]
        return _decode(options[0], data, where)
    if dataclasses.is_dataclass(tp):
        if not isinstance(data, dict):
            raise NarratorError(f"findings: {where} must be an object")
        hints = typing.get_type_hints(tp)
        kwargs = {}
        for f in dataclasses.fields(tp):
            if f.name in data:
                kwargs[f.name] = _decode(hints[f.name], data[f.name], f"{where}.{f.name}")
        try:
            return tp(**kwargs)
        except TypeError as exc:
            raise NarratorError(f"findings: {where}: {exc}") from None
    if origin is tuple:
        args = typing.get_args(tp)
        if not isinstance(data, list):
            raise NarratorError(f"findings: {where} must be a list")
        if len(args) == 2 and args[1] is Ellipsis:
            return tuple(_decode(args[0], item, where) for item in data)
        return tuple(_decode(arg, item, where) for arg, item in zip(args, data, strict=True))
    if origin is dict:
        if not isinstance(data, dict):
            raise NarratorError(f"findings: {where} must be an object")
        return dict(data)
    if tp is float:
        return float("nan") if data is None else float(data)
    if tp is int:
        return int(data)
    return data
