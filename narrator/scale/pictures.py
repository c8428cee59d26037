"""The histogram plan, the bin-sensitivity grid and the kernel density estimate from counts made in a pass.

The in-memory engine (:mod:`narrator.engine.bins`, :mod:`narrator.engine.density`) reads the sorted
values; here the same decisions are taken from the figures an earlier pass gave (n, smallest and
largest value, SD, IQR, skewness), the grids are laid out, a later pass counts the values into them
(:class:`~.summaries.BinCounts`, :class:`~.summaries.LinearBinCounts`), and the results are finished
from those counts with the engine's own helpers and constants, step for step.

==============================  ====================================================
Name                            What it does
==============================  ====================================================
:class:`HistogramLayout`        rule used, widths, first bin, bin count, tolerance (the engine's)
:func:`histogram_layout`        the plan's decisions without the values (the engine's function)
:func:`histogram_counter`       the pass summary that counts into a layout
:func:`histogram_from_counts`   layout + counts -> HistogramPlan
:class:`SensitivityLayout`      the fine grid (or the separate grids) of the 3 x 4
:func:`sensitivity_layout`      ... chosen like :func:`narrator.engine.bins.bin_sensitivity`
:func:`sensitivity_from_counts` fine counts -> BinSensitivity
:class:`DensityLayout`          standard units, bandwidth, fine binning grid
:func:`density_layout`          bandwidth by Silverman's or Scott's rule, grid
:func:`density_from_counts`     binned counts -> Density (FFT, reflection, peaks)
==============================  ====================================================
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from narrator.engine import bins as engine_bins
from narrator.engine import density as engine_density
from narrator.errors import NarratorError
from narrator.findings import BinSensitivity, HistogramPlan
from narrator.scale.summaries import BinCounts, LinearBinCounts

HistogramLayout = engine_bins.HistogramLayout


def histogram_counter(layout: HistogramLayout) -> BinCounts:
    """The pass summary that counts values into a histogram layout's bins."""
    return BinCounts(layout.width, layout.shift, layout.first, layout.tolerance, layout.bins, clip=True)


def histogram_layout(
    *, n: int, low: float, high: float, sd: float, iqr: float, rule: str, integer_valued: bool,
    skewness_biased: float | None,
) -> HistogramLayout:
    """:func:`narrator.engine.bins.histogram_layout` from n, the extremes, SD and IQR (data units);
    Doane's rule takes the moment skewness g1 = m3 / m2^1.5 (``skewness_biased``)."""
    whole = bool(integer_valued) and max(abs(low), abs(high)) < engine_bins.LARGEST_EXACT_INTEGER
    if not math.isfinite(high - low):
        raise NarratorError("histogram: the values span more than the largest floating-point number")
    units = engine_density.standard_units(np.array([low, high]))
    sd_scaled = iqr_scaled = None
    if units.has_spread:
        sd_scaled, iqr_scaled = float(sd) / units.unit, float(iqr) / units.unit
    return engine_bins.histogram_layout(n=n, low=low, high=high, rule=rule, whole=whole, units=units,
                                        sd_scaled=sd_scaled, iqr_scaled=iqr_scaled,
                                        doane_skewness=skewness_biased if rule == "doane" and n > 2 else None)


def histogram_from_counts(layout: HistogramLayout, counts: np.ndarray) -> HistogramPlan:
    return engine_bins.plan_from_counts(layout, counts)


@dataclass(frozen=True, slots=True)
class SensitivityLayout:
    base_width: float
    widths: tuple[float, ...]  # data units, as reported
    scaled_widths: tuple[float, ...]
    offsets: tuple[float, ...]
    factor: float
    shift: float
    fine: tuple[float, int] | None  # (step, period) of the shared fine grid, or None
    counters: tuple[BinCounts, ...]  # one fine counter, or one per width x offset


def sensitivity_layout(
    *, low: float, high: float, base_width: float, integer_valued: bool,
    width_factors: tuple[float, ...] = engine_bins.DEFAULT_WIDTH_FACTORS,
    offsets: tuple[float, ...] = engine_bins.DEFAULT_OFFSETS,
) -> SensitivityLayout:
    """The grids :func:`narrator.engine.bins.bin_sensitivity` counts into, for data spanning [low, high]."""
    largest_value = max(abs(low), abs(high))
    whole = bool(integer_valued) and largest_value < engine_bins.LARGEST_EXACT_INTEGER
    size_log2 = max(math.log2(largest_value) if largest_value > 0 else -math.inf,
                    math.log2(base_width) + math.log2(max(width_factors)))
    factor = 1.0 if -100 < size_log2 < 100 else math.ldexp(1.0, min(math.floor(size_log2), 1023))
    if whole:
        scaled_widths = tuple(max(1.0, float(round(base_width * f))) for f in width_factors)
    else:
        scaled_widths = tuple(float((base_width / factor) * f) for f in width_factors)
    widths = tuple(min(w * factor, float(np.finfo(float).max)) for w in scaled_widths)
    shift = (-0.5 if whole else 0.0) / factor
    low_s, high_s = low / factor, high / factor
    plan = engine_bins._fine_resolution(scaled_widths, offsets)
    counters: list[BinCounts] = []
    if plan is not None:
        step, period = plan
        origin = (math.floor((low_s - shift) / (step * period)) - 1) * period
        fine_bins = (high_s - shift) / step - origin + 2
        if fine_bins > engine_bins.MAX_FINE_BINS:
            raise NarratorError(f"bin sensitivity: a width of {min(widths):g} is too narrow"
                                f" for values spanning {(high_s - low_s) * factor:g}")
        tolerance = engine_bins._edge_tolerance(low_s, high_s, step, shift)
        last = int(engine_bins._bin_index(np.array([high_s]), step, shift, float(origin), tolerance)[0])
        counters.append(_scaled_counter(step, shift, float(origin), tolerance, last + 1, factor))
    else:
        for w in scaled_widths:
            for o in offsets:
                w_shift = shift + o * w
                tolerance = engine_bins._edge_tolerance(low_s, high_s, w, w_shift)
                first = engine_bins._first_index(low_s, w, w_shift, tolerance)
                last = int(engine_bins._bin_index(np.array([high_s]), w, w_shift, first, tolerance)[0])
                counters.append(_scaled_counter(w, w_shift, first, tolerance, last + 1, factor))
    return SensitivityLayout(float(base_width), widths, scaled_widths, tuple(float(o) for o in offsets), factor,
                             shift, plan, tuple(counters))


def _scaled_counter(width, shift, first, tolerance, bins, factor) -> BinCounts:
    return BinCounts(width, shift, first, tolerance, bins, clip=True, factor=factor)


def sensitivity_from_counts(layout: SensitivityLayout, counters) -> BinSensitivity:
    peak_counts: list[tuple[int, ...]] = []
    if layout.fine is not None:
        step, _ = layout.fine
        fine_counts = counters[0].counts
        for w in layout.scaled_widths:
            steps_per_bin = round(w / step)
            row = []
            for o in layout.offsets:
                shifted = fine_counts[round(o * w / step):]
                padding = (-shifted.size) % steps_per_bin
                coarse = np.concatenate((shifted, np.zeros(padding, dtype=shifted.dtype)))
                row.append(engine_bins.count_visible_peaks(coarse.reshape(-1, steps_per_bin).sum(axis=1)))
            peak_counts.append(tuple(row))
    else:
        columns = len(layout.offsets)
        for i in range(len(layout.scaled_widths)):
            peak_counts.append(tuple(engine_bins.count_visible_peaks(counters[i * columns + j].counts)
                                     for j in range(columns)))
    flat = [count for row in peak_counts for count in row]
    return BinSensitivity(
        base_width=layout.base_width, widths=layout.widths, offsets=layout.offsets,
        peak_counts=tuple(peak_counts), sensitive=len(set(flat)) > 1, min_peaks=min(flat), max_peaks=max(flat),
    )


@dataclass(frozen=True, slots=True)
class DensityLayout:
    n: int
    centre: float
    unit: float
    has_spread: bool
    low: float  # standard units
    high: float
    width: float  # bandwidth, standard units
    rule: str
    note: str | None
    fine_start: float
    fine_step: float
    fine_size: int
    lower_bound: float | None
    upper_bound: float | None

    def counter(self) -> LinearBinCounts:
        return LinearBinCounts(self.centre, self.unit, self.fine_start, self.fine_step, self.fine_size)


def density_layout(
    *, n: int, low: float, high: float, sd: float, iqr: float, rule: str,
    lower_bound: float | None, upper_bound: float | None,
) -> DensityLayout:
    """Standard units, bandwidth and binning grid of :func:`narrator.engine.density.estimate_density`
    (Silverman's or Scott's rule; both need only n, SD, IQR and the extremes)."""
    if rule not in ("silverman", "scott"):
        raise NarratorError(f"the bandwidth rule {rule!r} needs every value in memory; with more data than "
                            "memory use 'silverman' or 'scott'")
    ends = np.array([low, high])
    engine_density._check_bounds(ends, lower_bound, upper_bound)
    units = engine_density.standard_units(ends)  # they depend on the extremes alone
    centre, unit, has_spread = units.centre, units.unit, units.has_spread
    low_s, high_s = float(units.scaled[0]), float(units.scaled[1])
    sd_scaled, iqr_scaled = float(sd) / unit, float(iqr) / unit
    if not (math.isfinite(sd_scaled) and math.isfinite(iqr_scaled)) or sd_scaled < 0 or iqr_scaled < 0:
        raise NarratorError("bandwidth: sd and iqr must be finite and not negative")
    width, used, note = engine_density.floored_bandwidth(
        units, *engine_density.rule_bandwidth(units, n, rule, sd_scaled, iqr_scaled))
    fine_start, fine_step, fine_size = engine_density.fine_grid(low_s, high_s, width)
    return DensityLayout(n, centre, unit, has_spread, low_s, high_s, width, used, note, fine_start, fine_step,
                         fine_size, lower_bound, upper_bound)


def density_from_counts(layout: DensityLayout, counts: np.ndarray,
                        grid_size: int = engine_density.DEFAULT_GRID_SIZE, keep_fine: bool = False):
    """The rest of :func:`narrator.engine.density.estimate_density` once the values are binned
    (:func:`narrator.engine.density.density_from_fine_counts`, the engine's own; with ``keep_fine``:
    ``(Density, FineDensity)``)."""
    return engine_density.density_from_fine_counts(
        np.asarray(counts, dtype=np.float64), n=layout.n, centre=layout.centre, unit=layout.unit,
        width=layout.width, rule=layout.rule, note=layout.note, low=layout.low, high=layout.high,
        fine_start=layout.fine_start, fine_step=layout.fine_step, lower_bound=layout.lower_bound,
        upper_bound=layout.upper_bound, grid_size=grid_size, keep_fine=keep_fine)
