"""The histogram plan, the bin-sensitivity grid and the kernel density estimate from counts made in a pass.

The in-memory engine (:mod:`narrator.engine.bins`, :mod:`narrator.engine.density`) reads the sorted
values; here the same decisions are taken, by the engine's own public layout functions, from the
figures an earlier pass gave (n, smallest and largest value, SD, IQR, skewness); a later pass counts
the values into the grids (:class:`~.summaries.BinCounts`, :class:`~.summaries.LinearBinCounts`),
and the engine's own "from counts" functions finish the results. Nothing is decided twice.

==============================  ====================================================
Name                            What it does
==============================  ====================================================
:class:`HistogramLayout`        rule used, widths, first bin, bin count, tolerance (the engine's)
:func:`histogram_layout`        the plan's decisions without the values (the engine's function)
:func:`histogram_counter`       the pass summary that counts into a layout
:func:`histogram_from_counts`   layout + counts -> HistogramPlan
:class:`SensitivityLayout`      the fine grid (or the separate grids) of the 3 x 4
:func:`sensitivity_layout`      ... by :func:`narrator.engine.bins.sensitivity_grid`
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
    grid: engine_bins.SensitivityGrid
    counters: tuple[BinCounts, ...]  # one per grid of ``grid.grids``, in order


def sensitivity_layout(
    *, low: float, high: float, base_width: float, integer_valued: bool,
    width_factors: tuple[float, ...] = engine_bins.DEFAULT_WIDTH_FACTORS,
    offsets: tuple[float, ...] = engine_bins.DEFAULT_OFFSETS,
) -> SensitivityLayout:
    """The grids :func:`narrator.engine.bins.bin_sensitivity` counts into (the engine's
    :func:`~narrator.engine.bins.sensitivity_grid`), with a pass summary for each."""
    grid = engine_bins.sensitivity_grid(low, high, base_width, width_factors=width_factors, offsets=offsets,
                                        integer_valued=integer_valued)
    counters = tuple(BinCounts(width, shift, first, tolerance, bins, clip=True, factor=grid.factor)
                     for width, shift, first, tolerance, bins in grid.grids)
    return SensitivityLayout(grid, counters)


def sensitivity_from_counts(layout: SensitivityLayout, counters) -> BinSensitivity:
    return engine_bins.sensitivity_from_counts(layout.grid, [counter.counts for counter in counters])


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
    lattice: engine_density.FineLattice
    lower_bound: float | None
    upper_bound: float | None

    def counter(self) -> LinearBinCounts:
        lattice = self.lattice
        return LinearBinCounts(self.centre, self.unit, lattice.anchor, lattice.step, lattice.nodes, lattice.lead)


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
    engine_density.check_bounds(ends, lower_bound, upper_bound)
    units = engine_density.standard_units(ends)  # they depend on the extremes alone
    centre, unit, has_spread = units.centre, units.unit, units.has_spread
    low_s, high_s = float(units.scaled[0]), float(units.scaled[1])
    sd_scaled, iqr_scaled = float(sd) / unit, float(iqr) / unit
    if not (math.isfinite(sd_scaled) and math.isfinite(iqr_scaled)) or sd_scaled < 0 or iqr_scaled < 0:
        raise NarratorError("bandwidth: sd and iqr must be finite and not negative")
    width, used, note = engine_density.floored_bandwidth(
        units, *engine_density.rule_bandwidth(units, n, rule, sd_scaled, iqr_scaled))
    return DensityLayout(n, centre, unit, has_spread, low_s, high_s, width, used, note,
                         engine_density.fine_lattice(low_s, high_s, width), lower_bound, upper_bound)


def density_from_counts(layout: DensityLayout, counts: np.ndarray,
                        grid_size: int = engine_density.DEFAULT_GRID_SIZE, keep_fine: bool = False):
    """The rest of :func:`narrator.engine.density.estimate_density` once the values are binned
    (:func:`narrator.engine.density.density_from_fine_counts`, the engine's own; with ``keep_fine``:
    ``(Density, FineDensity)``)."""
    return engine_density.density_from_fine_counts(
        np.asarray(counts, dtype=np.float64), n=layout.n, centre=layout.centre, unit=layout.unit,
        width=layout.width, rule=layout.rule, note=layout.note, low=layout.low, high=layout.high,
        fine_start=layout.lattice.start, fine_step=layout.lattice.step, lower_bound=layout.lower_bound,
        upper_bound=layout.upper_bound, grid_size=grid_size, keep_fine=keep_fine)
