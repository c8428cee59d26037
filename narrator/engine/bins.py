"""Histogram bins: a width rule, a nice rounded width, aligned edges, visible peaks.

Pure functions of a 1-D array of finite numbers (numpy and scipy only).

=============================  ========================================================
Name                           What it does
=============================  ========================================================
:func:`nice_width`             round a width to 1, 2, 2.5 or 5 times a power of ten
:func:`histogram_plan`         rule -> raw width -> nice width -> edges and counts
:func:`count_visible_peaks`    peaks of a histogram that sampling noise cannot explain
:func:`count_visible_peaks_each`  the same for several histograms, in one search
:func:`bin_sensitivity`        visible peaks at 3 widths x 4 offsets -> BinSensitivity
=============================  ========================================================

Width rules (``BIN_RULES``), n values, s the SD (n - 1), IQR type 7:

- ``"freedman-diaconis"``: 2 IQR n^(-1/3) (Freedman & Diaconis 1981).
- ``"scott"``: 3.49 s n^(-1/3) (Scott 1979); the constant is (24 sqrt(pi))^(1/3).
  numpy's reference uses the SD with denominator n, ours n - 1.
- ``"sturges"``: ceil(log2 n) + 1 bins over the range (Sturges 1926).
- ``"doane"``: ceil(1 + log2 n + log2(1 + |g1| / sigma_g1)) bins over the range,
  g1 the moment skewness and sigma_g1 = sqrt(6 (n - 2) / ((n + 1)(n + 3)))
  (Doane 1976). Needs n > 2; fewer values use Sturges.
  For both bin-count rules the raw width is range / bins, the width numpy's
  reference implementation ends up with.

Fallbacks (reason code in ``HistogramPlan.note``): an IQR of 0 (many ties)
turns Freedman-Diaconis into Scott (``iqr_zero_used_scott``); more than
``MAX_BINS`` = 200 bins widens the width to the next nice step until they fit
(``bin_cap``, a width from the range); a width finer than 2^-30 of the
values' size cannot be told apart in floating point and is widened
(``magnitude_resolution``); a constant column gets one bin (``constant``).

Nice widths: the candidate among 1, 2, 2.5, 5 and 10 times 10^k nearest to the
raw width on a log scale (ties go to the wider). Edges sit at whole multiples
of the width (the first edge is floor(min / width) * width). Whole-number data
(``integer_valued``) get whole widths of at least 1 from 1, 2, 5 x 10^k (2.5 is
replaced by the nearer of 2 and 5), and edges at half-integers (k * width -
0.5), so no value ever sits on an edge and, at width 1, each bin is centred on
one integer.

Bins are half-open, [edge_i, edge_(i+1)), except that the last bin is closed
when the largest value sits exactly on its upper edge (numpy's convention; a
percentage of 100 then shares the top bin). An outer edge beyond the largest
double (values near 1.8e308) is clamped to it. A value equal to an edge up to
floating-point rounding (``EDGE_ROUNDING_ULPS`` = 64 units in the last place
of the value's position in bins, at most ``EDGE_TOLERANCE_CAP``, a millionth
of a bin) counts in the bin the edge opens, so decimal data such as 0.3 land
in the bin [0.3, 0.4) even though 3 * 0.1 is 0.30000000000000004 in binary.

Visible peaks and bin sensitivity: see :func:`count_visible_peaks` and
:func:`bin_sensitivity`. The histogram the figures draw when far-out values
would squeeze the bulk (``Findings.histogram_focus``): see :func:`focus_layout`.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from narrator.engine.density import local_maxima_of_curves, standard_units
from narrator.engine.distributions import normal_isf
from narrator.errors import NarratorError
from narrator.findings import BinSensitivity, HistogramPlan

BIN_RULES = ("freedman-diaconis", "scott", "sturges", "doane")

FREEDMAN_DIACONIS_FACTOR = 2.0
SCOTT_HISTOGRAM_FACTOR = (24.0 * math.sqrt(math.pi)) ** (1.0 / 3.0)  # 3.4908...
NICE_MULTIPLIERS = (1.0, 2.0, 2.5, 5.0, 10.0)
WHOLE_MULTIPLIERS = (1.0, 2.0, 5.0, 10.0)
MAX_BINS = 200
MIN_BINS = 1
CONSTANT_WIDTH_SHARE = 0.1  # one bin 10 % of the value's size wide (width 1 at zero)
MAGNITUDE_RESOLUTION = 2.0**-30  # narrowest width, relative to the largest |value|
EDGE_ROUNDING_ULPS = 64  # "on the edge" up to this many rounding steps of x / width
EDGE_TOLERANCE_CAP = 1e-6  # ... but never more than a millionth of a bin
LARGEST_EXACT_INTEGER = 2.0**52  # beyond this, x + 0.5 is not representable

FALSE_PEAK_RATE = 0.05
MIN_NOISE_Z = 2.0  # never below two standard errors, even for a one-bin histogram
PEAK_MIN_SHARE = 0.10
DEFAULT_WIDTH_FACTORS = (0.5, 1.0, 2.0)
DEFAULT_OFFSETS = (0.0, 0.25, 0.5, 0.75)
MAX_FINE_DIVISIONS = 64
MAX_FINE_BINS = 2**24
STRETCH_LIMIT = 0.5  # far-out values may widen the histogram's axis by at most half of the bulk's range
# One bin holding this share of the values at every offset (at the base width): the grid cannot tell
# how many peaks there are (our own cut; BinSensitivity.undecided).
DOMINANT_BIN_SHARE = 0.9


def _as_values(values, what: str) -> np.ndarray:
    array = np.asarray(values, dtype=float).ravel()
    if array.size == 0:
        raise NarratorError(f"{what}: no values to work with")
    if not np.all(np.isfinite(array)):
        raise NarratorError(f"{what}: values must be finite numbers (found NaN or infinity)")
    return array


def _scaled_candidate(multiplier: float, exponent: int) -> float:
    """multiplier * 10^exponent as the nearest double (parsing a decimal rounds correctly; inf past range)."""
    return float(f"{multiplier!r}e{exponent}")


def _nearest_on_ladder(raw: float, multipliers: tuple[float, ...]) -> float:
    exponent = math.floor(math.log10(raw))
    best, best_distance = math.inf, math.inf
    for k in (exponent - 1, exponent, exponent + 1):
        for multiplier in multipliers:
            candidate = _scaled_candidate(multiplier, k)
            if not math.isfinite(candidate) or candidate <= 0:
                continue
            distance = abs(math.log(candidate) - math.log(raw))
            # Ties (equal log distance up to rounding) go to the wider candidate.
            tied = abs(distance - best_distance) <= 1e-12
            if distance < best_distance - 1e-12 or (tied and candidate > best):
                best, best_distance = candidate, distance
    return best


def nice_width(raw: float) -> float:
    """The nice number nearest ``raw`` on a log scale: 1, 2, 2.5 or 5 times 10^k.

    Nearest in log scale means the cut points between neighbours are their
    geometric means: sqrt(2) = 1.414, sqrt(5) = 2.236, sqrt(12.5) = 3.536 and
    sqrt(50) = 7.071 (times 10^k). Ties go to the wider width. The ladder
    1-2-2.5-5 is common practice for axis and bin widths.

    >>> nice_width(0.03), nice_width(3.7), nice_width(1234.0)
    (0.025, 5.0, 1000.0)
    """
    try:
        number = float(raw)
    except (TypeError, ValueError):
        number = math.nan
    if not (math.isfinite(number) and number > 0):
        raise NarratorError(f"bin width must be a positive finite number, not {raw!r}")
    return _nearest_on_ladder(number, NICE_MULTIPLIERS)


def _whole_width(raw: float) -> float:
    """A whole-number nice width of at least 1: 1, 2 or 5 times 10^k."""
    if raw <= 1.0:
        return 1.0
    return _nearest_on_ladder(raw, WHOLE_MULTIPLIERS)


def _next_wider(width: float, whole: bool) -> float:
    """The next step up the nice ladder."""
    multipliers = WHOLE_MULTIPLIERS if whole else NICE_MULTIPLIERS
    exponent = math.floor(math.log10(width))
    for k in (exponent, exponent + 1):
        for multiplier in multipliers:
            candidate = _scaled_candidate(multiplier, k)
            if candidate > width * (1 + 1e-12):
                return candidate
    return width * 10.0


def _edge_tolerance(low: float, high: float, width: float, shift: float) -> float:
    """How near (in bins) to an edge a value counts as on it, allowing for rounding of x / width."""
    largest_position = max(abs(low - shift), abs(high - shift)) / width
    return min(EDGE_ROUNDING_ULPS * float(np.finfo(float).eps) * (1.0 + largest_position), EDGE_TOLERANCE_CAP)


def _nice_at_least(target: float, whole: bool) -> float:
    """The narrowest nice width not below target."""
    width = _whole_width(target) if whole else nice_width(target)
    return width if width >= target else _next_wider(width, whole)


def _bin_index(
    values: np.ndarray, width: float, shift: float, first_index: float, tolerance: float
) -> np.ndarray:
    """Index i of the half-open bin [shift + (j + i) width, shift + (j + i + 1) width), j = first_index."""
    position = (values - shift) / width
    return np.floor(position - first_index + tolerance).astype(np.int64)


def _sorted_bin_counts(
    sorted_values: np.ndarray, width: float, shift: float, first_index: float, tolerance: float, bins: int
) -> np.ndarray:
    """Counts per bin of sorted values, clipped to bins 0..bins-1, without indexing every value.

    The bin index floor((x - shift) / width - first + tolerance) never decreases as x grows
    (each floating-point step rounds monotonically), so in sorted data each bin is one run;
    a vectorised bisection finds where bins 1..bins-1 start. The counts are the same as
    ``np.bincount`` of the clipped indices of every value, at O(bins log n) cost.
    """
    n = sorted_values.size
    wanted = np.arange(1, bins, dtype=np.int64)
    low = np.zeros(wanted.size, dtype=np.int64)
    high = np.full(wanted.size, n, dtype=np.int64)
    pending = np.nonzero(low < high)[0]
    while pending.size:
        middle = (low[pending] + high[pending]) // 2
        index = _bin_index(sorted_values[middle], width, shift, first_index, tolerance)
        before = index < wanted[pending]
        low[pending] = np.where(before, middle + 1, low[pending])
        high[pending] = np.where(before, high[pending], middle)
        pending = pending[low[pending] < high[pending]]
    starts = np.concatenate(([0], low, [n]))
    return np.diff(starts)


# Below this many values, indexing every value costs less than the binary searches' fixed steps
# (measured: 20 to 100 us against 110 to 420 us at 3 000 to 30 000 values, 40 to 700 bins).
_INDEX_EVERY_VALUE_MAX = 32_768


def _grid_counts(
    array: np.ndarray, width: float, shift: float, first_index: float, tolerance: float, bins: int, *,
    presorted: bool,
) -> np.ndarray:
    """Counts per bin, clipped to bins 0..bins-1: by binary search in sorted values when that is cheaper
    (many values, few bins), else by indexing every value; the counts are the same either way."""
    n = array.size
    if presorted and n > _INDEX_EVERY_VALUE_MAX and bins * math.log2(n + 1) < n:
        return _sorted_bin_counts(array, width, shift, first_index, tolerance, bins)
    index = _bin_index(array, width, shift, first_index, tolerance)
    np.clip(index, 0, bins - 1, out=index)
    return np.bincount(index, minlength=bins)


def _sorted_ends(array: np.ndarray, what: str) -> tuple[float, float]:
    """(smallest, largest) of values said to be sorted ascending; a NaN sorts last, infinities sit at the ends."""
    if array.size == 0:
        raise NarratorError(f"{what}: no values to work with")
    low, high = float(array[0]), float(array[-1])
    if not (math.isfinite(low) and math.isfinite(high)):
        raise NarratorError(f"{what}: values must be finite numbers (found NaN or infinity)")
    return low, high


def _first_index(low: float, width: float, shift: float, tolerance: float) -> float:
    return float(math.floor((low - shift) / width + tolerance))


def focus_layout(
    plan: HistogramPlan, *, lowest: float, highest: float, far_lower: float | None, far_upper: float | None
) -> tuple[float, float, int, float] | None:
    """(width, first index, bins, shift) of a histogram over the bulk of the data, or None.

    When values beyond the outlier rule's far-out fences would stretch the axis by more than
    ``STRETCH_LIMIT`` of the bulk's range (the bulk: from the far-out fence, or the extreme value
    when nothing lies beyond it, on each side), the figures show the bulk only. The full plan's
    width was widened to keep its bins over the whole range within ``MAX_BINS``; over the bulk the
    rule's own width is used (``plan.raw_width`` rounded to a nice width, at most ``MAX_BINS`` bins
    over the bulk, never wider than the full plan's), on the same grid (edges at whole multiples
    of the width, or half-integers for whole numbers). An edge at a cut side is the first grid
    edge beyond the fence; on a side that is not cut every value is inside.
    """
    far_high = far_upper is not None and highest > far_upper
    far_low = far_lower is not None and lowest < far_lower
    if not (far_high or far_low):
        return None
    bulk_low = far_lower if far_low else lowest
    bulk_high = far_upper if far_high else highest
    bulk = bulk_high - bulk_low
    if not bulk > 0:
        return None
    cut_high = far_high and (highest - bulk_high) > STRETCH_LIMIT * bulk
    cut_low = far_low and (bulk_low - lowest) > STRETCH_LIMIT * bulk
    if not (cut_high or cut_low):
        return None
    whole = plan.integer_aligned
    shift = -0.5 if whole else 0.0
    low_end = bulk_low if cut_low else lowest
    high_end = bulk_high if cut_high else highest
    raw = plan.raw_width if plan.raw_width > 0 else plan.width
    width = _whole_width(raw) if whole else nice_width(raw)
    if (high_end - low_end) / width > MAX_BINS:
        width = _nice_at_least((high_end - low_end) / MAX_BINS, whole)
    narrowest = max(abs(lowest), abs(highest)) * MAGNITUDE_RESOLUTION
    if width < narrowest:
        width = _nice_at_least(narrowest, whole)
    width = min(width, plan.width)
    first = math.floor((low_end - shift) / width)
    stop = math.ceil((high_end - shift) / width) if cut_high else math.floor((high_end - shift) / width) + 1
    return float(width), float(first), max(int(stop - first), 1), shift


def focus_edges(layout: tuple[float, float, int, float]) -> np.ndarray:
    """The edges of a :func:`focus_layout`."""
    width, first, bins, shift = layout
    return _edges(first, bins, width, shift)


def focus_plan(plan: HistogramPlan, layout, counts: np.ndarray, below: int, above: int) -> HistogramPlan:
    """The focused plan from its layout and its counts (values in [e_i, e_(i+1)), below, above)."""
    width, _, _, _ = layout
    return HistogramPlan(
        rule=plan.rule, raw_width=plan.raw_width, width=width,
        edges=tuple(float(e) for e in focus_edges(layout)), counts=tuple(int(c) for c in counts),
        integer_aligned=plan.integer_aligned, note="focus", below=int(below), above=int(above),
    )


def focus_from_sorted(plan: HistogramPlan, layout, sorted_values: np.ndarray) -> HistogramPlan:
    """:func:`focus_plan` counted in sorted values by binary search (half-open bins)."""
    positions = np.searchsorted(sorted_values, focus_edges(layout), side="left")
    return focus_plan(plan, layout, np.diff(positions), int(positions[0]), int(sorted_values.size - positions[-1]))


def _edges(first_index: float, bins: int, width: float, shift: float) -> np.ndarray:
    largest = float(np.finfo(float).max)
    steps = first_index + np.arange(bins + 1)
    # Near the largest double an outer edge may not exist: clamp it to the largest float
    # (computed as steps * (width / largest) <= 1 so nothing overflows).
    beyond = np.abs(steps) * (width / largest) > 1.0
    edges = np.where(beyond, np.sign(steps) * largest, np.where(beyond, 0.0, steps) * width) + shift
    if 1e-300 < width < 1.0:
        # Print-clean edges: 0.30000000000000004 becomes 0.3 (the width has at most 4 significant digits),
        # unless rounding would overflow or move an edge by more than rounding error.
        decimals = math.ceil(-math.log10(width)) + 1
        with np.errstate(over="ignore", invalid="ignore"):
            rounded = np.round(edges, decimals)
        if np.all(np.isfinite(rounded)) and np.all(np.abs(rounded - edges) <= 1e-6 * width):
            edges = rounded
    return edges


def _raw_width(
    value_range: float, n: int, rule: str, sd_scaled: float, iqr_scaled: float, doane_skewness: float | None
) -> tuple[float, str, str | None]:
    """(raw width in standard units, rule used, reason code) for n values spanning ``value_range``."""
    if rule == "freedman-diaconis":
        if iqr_scaled > 0:
            return FREEDMAN_DIACONIS_FACTOR * iqr_scaled * n ** (-1.0 / 3.0), rule, None
        return SCOTT_HISTOGRAM_FACTOR * sd_scaled * n ** (-1.0 / 3.0), "scott", "iqr_zero_used_scott"
    if rule == "scott":
        return SCOTT_HISTOGRAM_FACTOR * sd_scaled * n ** (-1.0 / 3.0), rule, None
    if rule == "doane" and n > 2:
        sigma_g1 = math.sqrt(6.0 * (n - 2) / ((n + 1.0) * (n + 3.0)))
        bins = math.ceil(1.0 + math.log2(n) + math.log2(1.0 + abs(doane_skewness or 0.0) / sigma_g1))
        return value_range / bins, rule, None
    note = "too_few_for_doane_used_sturges" if rule == "doane" else None
    bins = math.ceil(math.log2(n)) + 1
    return value_range / bins, "sturges", note


def _detect_integer(array: np.ndarray) -> bool:
    return bool(np.max(np.abs(array)) < LARGEST_EXACT_INTEGER and np.all(array == np.round(array)))


@dataclass(frozen=True, slots=True)
class HistogramLayout:
    """A histogram plan before counting: what both engines decide from n, the extremes, SD and IQR."""

    rule: str
    raw_width: float
    width: float
    shift: float
    first: float
    tolerance: float
    bins: int
    whole: bool
    note: str | None


def histogram_layout(
    *,
    n: int,
    low: float,
    high: float,
    rule: str,
    whole: bool,
    units,
    sd_scaled: float | None = None,
    iqr_scaled: float | None = None,
    doane_skewness: float | None = None,
) -> HistogramLayout:
    """The decisions of :func:`histogram_plan`: raw width by ``rule``, nice width, cap, aligned grid.

    ``units`` are the standard units of the values (:func:`narrator.engine.density.standard_units`:
    they depend on the extremes alone); ``sd_scaled`` and ``iqr_scaled`` are in them. Doane's rule
    takes the moment skewness g1 = m3 / m2^1.5 (``doane_skewness``). ``whole``: the data are whole
    numbers small enough for half-integer edges. The stream engine (narrator.scale) lays out its
    passes with this same function, so both engines bin alike.
    """
    shift = -0.5 if whole else 0.0
    largest = max(abs(low), abs(high))
    if not units.has_spread:
        # One bin (two if the values straddle an edge within floating-point resolution).
        if whole or low == 0:
            width = 1.0
        else:  # 10 % of the value's size, kept above the smallest normal double
            width = _nice_at_least(max(CONSTANT_WIDTH_SHARE * abs(low), float(np.finfo(float).tiny)), False)
        tolerance = _edge_tolerance(low, high, width, shift)
        first = _first_index(low, width, shift, tolerance)
        bins = int(_bin_index(np.array([high]), width, shift, first, tolerance)[0]) + 1
        return HistogramLayout(rule, 0.0, width, shift, first, tolerance, bins, whole, "constant")
    if not (sd_scaled is not None and sd_scaled > 0 and math.isfinite(sd_scaled) and iqr_scaled is not None
            and iqr_scaled >= 0 and math.isfinite(iqr_scaled)):
        raise NarratorError("histogram: sd must be positive and iqr not negative for data with spread")
    value_range = (high - units.centre) / units.unit - (low - units.centre) / units.unit
    raw_scaled, used_rule, note = _raw_width(value_range, n, rule, sd_scaled, iqr_scaled, doane_skewness)
    # A width from the rule can pass the largest double when the values span most of it: cap it there.
    raw = min(raw_scaled * units.unit, float(np.finfo(float).max))
    width = _whole_width(raw) if whole else nice_width(raw)

    narrowest = largest * MAGNITUDE_RESOLUTION
    if width < narrowest:
        width = _nice_at_least(narrowest, whole)
        note = "magnitude_resolution"
    if (high - low) / width > MAX_BINS:
        width = _nice_at_least((high - low) / MAX_BINS, whole)
        note = "bin_cap"
    while True:  # alignment can add a bin: widen step by step until the bins fit
        tolerance = _edge_tolerance(low, high, width, shift)
        first = _first_index(low, width, shift, tolerance)
        bins = int(_bin_index(np.array([high]), width, shift, first, tolerance)[0]) + 1
        if bins <= MAX_BINS:
            break
        width = _next_wider(width, whole)
        note = "bin_cap"
    # Close the last bin when the largest value sits exactly on its upper edge (numpy's
    # convention), so a percentage of 100 or a ceiling value does not get a bin of its own.
    if bins > 1 and abs((high - shift) / width - first - (bins - 1)) <= tolerance:
        bins -= 1
    bins = max(bins, MIN_BINS)
    return HistogramLayout(used_rule, float(raw), float(width), shift, first, tolerance, bins, whole, note)


def plan_from_counts(layout: HistogramLayout, counts) -> HistogramPlan:
    """The :class:`HistogramPlan` of a layout and its counts."""
    return HistogramPlan(
        rule=layout.rule,
        raw_width=layout.raw_width,
        width=layout.width,
        edges=tuple(float(e) for e in _edges(layout.first, layout.bins, layout.width, layout.shift)),
        counts=tuple(int(c) for c in counts),
        integer_aligned=layout.whole,
        note=layout.note,
    )


def histogram_plan(
    values,
    *,
    rule: str = "freedman-diaconis",
    integer_valued: bool | None = None,
    sd: float | None = None,
    iqr: float | None = None,
    presorted: bool = False,
) -> HistogramPlan:
    """Bins for a histogram: raw width by ``rule``, nice width, aligned edges, counts.

    ``integer_valued=None`` detects whole-number data. ``sd`` (n - 1) and
    ``iqr`` (type 7) may be passed in data units when already known. Rules,
    rounding, alignment and fallbacks are in the module docstring.
    ``presorted=True`` says the values are sorted ascending: the ends are then
    the extremes and the counts come from binary searches (the same counts,
    without a pass over the values).
    ``HistogramPlan.rule`` is the rule actually used; ``note`` says why it
    differs from the one asked for.

    >>> plan = histogram_plan([1, 2, 2, 3, 3, 3, 4, 4, 5], rule="sturges")
    >>> plan.width, plan.edges[:3], plan.counts
    (1.0, (0.5, 1.5, 2.5), (1, 2, 3, 2, 1))
    """
    if rule not in BIN_RULES:
        raise NarratorError(f"unknown bin rule {rule!r}; choose one of {', '.join(BIN_RULES)}")
    if presorted:
        array = np.asarray(values, dtype=float).ravel()
        low, high = _sorted_ends(array, "histogram")
        largest = max(abs(low), abs(high))
    else:
        array = _as_values(values, "histogram")
        largest = float(np.max(np.abs(array)))
        low, high = float(array.min()), float(array.max())
    whole = _detect_integer(array) if integer_valued is None else bool(integer_valued)
    if whole and largest >= LARGEST_EXACT_INTEGER:
        whole = False  # half-integer edges cannot be written down at this size

    if not math.isfinite(high - low):
        raise NarratorError("histogram: the values span more than the largest floating-point number")
    # Sorted data need only their ends in standard units, unless Doane's rule needs every value's moment.
    ends_only = presorted and rule != "doane" and sd is not None and iqr is not None
    units = standard_units(array[[0, -1]] if ends_only else array)
    sd_scaled = iqr_scaled = skewness = None
    if units.has_spread:
        scaled = units.scaled
        sd_scaled = float(sd) / units.unit if sd is not None else float(np.std(scaled, ddof=1))
        if iqr is not None:
            iqr_scaled = float(iqr) / units.unit
        else:
            q1, q3 = np.percentile(scaled, [25.0, 75.0])
            iqr_scaled = float(q3 - q1)
        if rule == "doane" and array.size > 2:
            centred = scaled - scaled.mean()
            skewness = float(np.mean(centred**3)) / float(np.mean(centred**2)) ** 1.5
    layout = histogram_layout(n=array.size, low=low, high=high, rule=rule, whole=whole, units=units,
                              sd_scaled=sd_scaled, iqr_scaled=iqr_scaled, doane_skewness=skewness)
    counts = _grid_counts(array, layout.width, layout.shift, layout.first, layout.tolerance, layout.bins,
                          presorted=presorted)
    return plan_from_counts(layout, counts)


def count_visible_peaks(counts) -> int:
    """Number of peaks in a histogram that sampling noise does not explain.

    A peak is a local maximum of the counts (a flat top counts once); the
    histogram is padded with an empty bin at each end, so an end bin can be a
    peak. Its prominence is its height P above V, the higher of the two lowest
    bins separating it from any higher peak or from the ends (the topographic
    prominence scipy.signal uses; of two equally tall peaks the right one is
    taken as the higher). With k bins, a peak is visible when

        P - V >= max(z_k * sqrt(P + V), PEAK_MIN_SHARE * tallest bin),
        z_k = Phi^(-1)(1 - FALSE_PEAK_RATE / (2 k)).

    Reasoning: bin counts are roughly Poisson, so P - V has variance about
    P + V (common practice). A histogram has many local maxima, so a fixed
    two-standard-error rule finds a false peak somewhere in most large
    histograms (we saw it in 29 of 30 normal samples of 10 000 values at half
    the Freedman-Diaconis width); the Bonferroni bound over the k bins holds
    the chance of any false peak in a histogram to about ``FALSE_PEAK_RATE`` =
    5 % (z is 2.58 for 5 bins, 3.02 for 20, 3.48 for 100). And a bump under
    ``PEAK_MIN_SHARE`` = 10 % of the tallest bar hardly shows in a picture,
    however many values there are (our choice). The tallest peak of a
    non-empty histogram always counts.

    >>> count_visible_peaks([2, 30, 60, 30, 5, 30, 55, 25, 3])
    2
    >>> count_visible_peaks([50, 52, 49, 51, 50])
    1
    """
    return count_visible_peaks_each([counts])[0]


def count_visible_peaks_each(histograms) -> list[int]:
    """:func:`count_visible_peaks` of each histogram, all in one pass: their maxima found in one search
    (:func:`narrator.engine.density.local_maxima_of_curves`) and the rule applied to every peak at once.

    >>> count_visible_peaks_each([[2, 30, 60, 30, 5, 30, 55, 25, 3], [50, 52, 49, 51, 50], []])
    [2, 1, 0]
    """
    arrays = [np.asarray(counts, dtype=float).ravel() for counts in histograms]
    every = np.concatenate(arrays) if arrays else np.zeros(0)
    if not (np.all(np.isfinite(every)) and np.all(every >= 0)):
        raise NarratorError("histogram counts must be finite and not negative")
    sizes = np.array([array.size for array in arrays], dtype=np.intp)
    tallest = np.zeros(len(arrays))
    filled = np.flatnonzero(sizes)
    if filled.size:
        tallest[filled] = np.maximum.reduceat(every, (np.cumsum(sizes) - sizes)[filled])
    chosen = np.flatnonzero(tallest > 0)
    peaks = np.zeros(len(arrays), dtype=np.int64)
    if chosen.size:
        curve, _, peak_height, prominence = local_maxima_of_curves([arrays[k] for k in chosen.tolist()])
        valley = np.maximum(peak_height - prominence, 0.0)
        noise_z = np.array([_noise_z(int(sizes[k])) for k in chosen.tolist()])[curve]
        needed = np.maximum(noise_z * np.sqrt(peak_height + valley), PEAK_MIN_SHARE * tallest[chosen][curve])
        visible = prominence >= needed
        # The tallest peak of each histogram (its prominence is its full height), the first of equal ones.
        firsts = np.searchsorted(curve, np.arange(chosen.size))
        highest = prominence == np.maximum.reduceat(prominence, firsts)[curve]
        candidates = np.flatnonzero(highest)
        first_of_curve = np.concatenate(([True], curve[candidates][1:] != curve[candidates][:-1]))
        visible[candidates[first_of_curve]] = True
        peaks[chosen] = np.bincount(curve[visible], minlength=chosen.size)
    return peaks.tolist()


@functools.lru_cache(maxsize=256)
def _noise_z(bins: int) -> float:
    """z_k of :func:`count_visible_peaks` for k bins."""
    return max(float(normal_isf(FALSE_PEAK_RATE / (2.0 * bins))), MIN_NOISE_Z)


def _fine_resolution(widths: tuple[float, ...], offsets: tuple[float, ...]) -> tuple[float, int] | None:
    """(step, period in steps): a step dividing every width and every offset, or None.

    Every histogram in the grid is then a sum of consecutive fine bins, and
    all edge patterns repeat every ``period`` steps.
    """
    smallest = min(widths)
    for divisions in range(1, MAX_FINE_DIVISIONS + 1):
        step = smallest / divisions
        ratios = [w / step for w in widths] + [o * w / step for w in widths for o in offsets]
        if all(abs(r - round(r)) <= 1e-9 * max(1.0, abs(r)) for r in ratios):
            period = 1
            for w in widths:
                period = math.lcm(period, round(w / step))
            return step, period
    return None


@dataclass(frozen=True, slots=True)
class SensitivityGrid:
    """The grids :func:`bin_sensitivity` counts into: one fine grid, or one per width x offset.

    Each grid is (width, shift, first index, tolerance, bins) in units of ``factor`` (a power of two
    near the data's size when values or widths are huge or tiny, 1 otherwise).
    """

    base_width: float
    widths: tuple[float, ...]  # data units, as reported
    scaled_widths: tuple[float, ...]
    offsets: tuple[float, ...]
    factor: float
    fine: tuple[float, int] | None  # (step, period) of the shared fine grid, or None
    grids: tuple[tuple[float, float, float, float, int], ...]


def sensitivity_grid(
    low: float,
    high: float,
    base_width: float,
    *,
    width_factors: tuple[float, ...] = DEFAULT_WIDTH_FACTORS,
    offsets: tuple[float, ...] = DEFAULT_OFFSETS,
    integer_valued: bool = False,
) -> SensitivityGrid:
    """The grids of :func:`bin_sensitivity` for values from ``low`` to ``high`` (both engines lay out
    their counting with this, so they count alike)."""
    if not (math.isfinite(base_width) and base_width > 0):
        raise NarratorError(f"bin sensitivity: base width must be a positive number, not {base_width!r}")
    if not width_factors or any(not (math.isfinite(f) and f > 0) for f in width_factors):
        raise NarratorError("bin sensitivity: width factors must be positive numbers")
    if not offsets or any(not (math.isfinite(o) and 0 <= o < 1) for o in offsets):
        raise NarratorError("bin sensitivity: offsets must be fractions in [0, 1)")
    largest_value = max(abs(low), abs(high))
    whole = bool(integer_valued) and largest_value < LARGEST_EXACT_INTEGER
    # Work in units of a power of two near the data's size when values or widths are huge or tiny:
    # the division is exact, so multiples of a width stay multiples, and nothing overflows.
    size_log2 = max(
        math.log2(largest_value) if largest_value > 0 else -math.inf,
        math.log2(base_width) + math.log2(max(width_factors)),
    )
    factor = 1.0 if -100 < size_log2 < 100 else math.ldexp(1.0, min(math.floor(size_log2), 1023))
    if whole:
        # Rounded to whole numbers, two factors can give one width (0.5 and 1 of a width of 1): each
        # width is drawn and counted once, so the grid's size is the number of histograms it holds.
        scaled_widths = tuple(dict.fromkeys(max(1.0, float(round(base_width * f))) for f in width_factors))
    else:
        scaled_widths = tuple(float((base_width / factor) * f) for f in width_factors)
    # Reported in data units; a width past the largest double (values near 1.8e308) reads as that.
    widths = tuple(min(w * factor, float(np.finfo(float).max)) for w in scaled_widths)
    shift = (-0.5 if whole else 0.0) / factor
    low, high = (low / factor, high / factor) if factor != 1.0 else (low, high)
    plan = _fine_resolution(scaled_widths, offsets)
    grids = []
    if plan is not None:
        step, period = plan
        # In steps: a whole number of periods, at least one period below the data.
        origin = (math.floor((low - shift) / (step * period)) - 1) * period
        fine_bins = (high - shift) / step - origin + 2
        if fine_bins > MAX_FINE_BINS:
            raise NarratorError(
                f"bin sensitivity: a width of {min(widths):g} is too narrow"
                f" for values spanning {(high - low) * factor:g}"
            )
        tolerance = _edge_tolerance(low, high, step, shift)
        last = int(_bin_index(np.array([high]), step, shift, float(origin), tolerance)[0])
        grids.append((step, shift, float(origin), tolerance, last + 1))
    else:
        for w in scaled_widths:
            for o in offsets:
                w_shift = shift + o * w
                tolerance = _edge_tolerance(low, high, w, w_shift)
                first = _first_index(low, w, w_shift, tolerance)
                last = int(_bin_index(np.array([high]), w, w_shift, first, tolerance)[0])
                grids.append((w, w_shift, first, tolerance, last + 1))
    return SensitivityGrid(float(base_width), widths, scaled_widths, tuple(float(o) for o in offsets), factor,
                           plan, tuple(grids))


def sensitivity_from_counts(grid: SensitivityGrid, counts) -> BinSensitivity:
    """Visible peaks at every width x offset from the counts in ``grid.grids`` (in that order)."""
    peak_counts: list[tuple[int, ...]] = []
    fullest: list[list[float]] = []  # [width][offset]: the share of the values in the fullest bin

    def share_of_fullest(bin_counts) -> float:
        bin_counts = np.asarray(bin_counts)
        total = float(bin_counts.sum())
        return float(bin_counts.max()) / total if total > 0 else 1.0

    columns = len(grid.offsets)
    if grid.fine is not None:
        step, _ = grid.fine
        fine_counts = np.asarray(counts[0])
        histograms = []
        for w in grid.scaled_widths:
            steps_per_bin = round(w / step)
            for o in grid.offsets:
                # Fine bins before the offset are empty: the origin sits a whole period below the data.
                shifted = fine_counts[round(o * w / step):]
                padding = (-shifted.size) % steps_per_bin
                coarse = np.concatenate((shifted, np.zeros(padding, dtype=shifted.dtype)))
                histograms.append(coarse.reshape(-1, steps_per_bin).sum(axis=1))
    else:
        histograms = list(counts)
    flat = count_visible_peaks_each(histograms)
    for i in range(len(grid.scaled_widths)):
        peak_counts.append(tuple(flat[i * columns : (i + 1) * columns]))
        fullest.append([share_of_fullest(histograms[i * columns + j]) for j in range(columns)])
    # At the base width (the row whose width is nearest the plan's), the offset that spreads the values most.
    base_row = min(range(len(grid.widths)), key=lambda i: (abs(grid.widths[i] - grid.base_width), i))
    largest = min(fullest[base_row])
    return BinSensitivity(
        base_width=grid.base_width, widths=grid.widths, offsets=grid.offsets, peak_counts=tuple(peak_counts),
        sensitive=len(set(flat)) > 1, min_peaks=min(flat), max_peaks=max(flat),
        largest_bin_share=largest, undecided=largest >= DOMINANT_BIN_SHARE,
    )


def bin_sensitivity(
    values,
    base_width: float,
    *,
    width_factors: tuple[float, ...] = DEFAULT_WIDTH_FACTORS,
    offsets: tuple[float, ...] = DEFAULT_OFFSETS,
    integer_valued: bool = False,
    presorted: bool = False,
) -> BinSensitivity:
    """Visible peaks of the histogram at every width x offset; sensitive when the count varies.

    Widths are ``base_width * factor``; offsets are fractions of each width
    by which the edges move (edges at (j + offset) * width, j whole). For
    whole-number data widths are rounded to whole numbers of at least 1 and
    edges sit at half-integers plus the offset. Peaks are counted by
    :func:`count_visible_peaks`. The idea of redrawing a histogram at several
    widths and origins is common practice (a histogram's look depends on both).

    Speed: one fine histogram at a step that divides every width and offset
    (base / 8 for the defaults) is aggregated into every combination by
    summing consecutive fine bins, so the whole grid costs about one pass over
    the data. Widths or offsets without such a step (within 64 divisions) are
    counted one histogram at a time. ``presorted=True`` says the values are sorted
    ascending: the fine counts then come from binary searches (the same counts).

    >>> result = bin_sensitivity([1.0, 1.2, 1.4, 1.5, 1.6, 1.8, 2.0, 2.1, 2.5], 0.5)
    >>> result.widths, result.sensitive
    ((0.25, 0.5, 1.0), False)
    """
    if presorted:
        array = np.asarray(values, dtype=float).ravel()
        low, high = _sorted_ends(array, "bin sensitivity")
    else:
        array = _as_values(values, "bin sensitivity")
        low, high = float(array.min()), float(array.max())
    grid = sensitivity_grid(low, high, base_width, width_factors=width_factors, offsets=offsets,
                            integer_valued=integer_valued)
    if grid.factor != 1.0:
        array = array / grid.factor
    counts = [_grid_counts(array, width, shift, first, tolerance, bins, presorted=presorted)
              for width, shift, first, tolerance, bins in grid.grids]
    return sensitivity_from_counts(grid, counts)


