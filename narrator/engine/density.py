"""Kernel density estimate of one numeric column, and the peaks it shows.

Pure functions of a 1-D array of finite numbers (numpy, and scipy.optimize for the Sheather-Jones root).

===========================  =========================================================
Name                         What it does
===========================  =========================================================
:func:`bandwidth`            Gaussian-kernel bandwidth by a named rule (a float)
:func:`choose_bandwidth`     the same, with the rule actually used and a reason code
:func:`estimate_density`     Gaussian KDE by linear binning and FFT -> :class:`Density`
:func:`find_peaks`           prominent peaks of a curve sampled on a grid
:func:`local_maxima`         every local maximum with its height and prominence
:func:`local_maxima_of_curves`  the same for several curves, in one search
:func:`standard_units`       an overflow-safe centred and scaled copy of the values
:func:`next_fast_length`     the FFT length the convolution pads to (5-smooth)
:func:`fine_lattice`         the fine binning grid (:class:`FineLattice`)
:func:`coarsen_lattice`      a lattice binning as binned at twice the step
:class:`BandwidthChoice`     width, rule used, reason code
:class:`StandardUnits`       centre, unit and the scaled values
===========================  =========================================================

Bandwidth rules (``BANDWIDTH_RULES``):

- ``"silverman"``: h = 0.9 min(s, IQR / 1.34) n^(-1/5) (Silverman 1986,
  *Density Estimation*, eq. 3.31). When one of s and IQR / 1.34 is 0 the
  other is used (reason code ``iqr_zero_used_sd`` or ``sd_zero_used_iqr``).
- ``"scott"``: h = 1.06 s n^(-1/5) (Scott 1992, *Multivariate Density
  Estimation*, the normal-reference rule).
- ``"sheather-jones"``: the solve-the-equation plug-in of Sheather & Jones
  (1991, JRSS B 53), with the paper's pilot widths a = 0.920 IQR n^(-1/7) and
  b = 0.912 IQR n^(-1/9) (1.349 s in place of the IQR when the IQR is 0).
  The pair sums are computed from linearly binned counts on a fine grid and
  their autocorrelation by FFT (binned functional estimation, Wand & Jones
  1995, *Kernel Smoothing*), so the cost is O(n + M log M) for any n. If the estimated
  functionals are not positive or the equation has no root, Silverman's rule
  is used and recorded (``sheather_jones_failed_used_silverman``).

A column with no spread at all (every value equal, or a single value, or a
half-range below 2^-1000, see :class:`StandardUnits`) has no
data-driven width. The fallback is ``DEGENERATE_WIDTH_SHARE`` (5 %) of the
value's size, or ``DEGENERATE_WIDTH_AT_ZERO`` (1) when the value is 0: a
visible bump, recorded with reason code ``constant_fixed_width``. Our choice.

A bandwidth narrower than the range / ``MAX_RANGE_IN_BANDWIDTHS`` (2^14) is
widened to that (reason code ``bandwidth_floor``): such a curve is a row of
spikes no 512-point grid can draw, and the binned estimate could not keep its
accuracy (this happens only with a few values extremely far from a tied or
tightly packed bulk).

Density: the data are linearly binned (Fan & Marron 1994; Wand 1994) onto a
fine grid with at least ``FINE_STEPS_PER_BANDWIDTH`` (32) points per
bandwidth (4096 to 2^20 points; the step is the range times a power of two,
anchored at the smallest value, so it depends on the bandwidth only through a
whole number and the stream engine can bin before the bandwidth is known,
:class:`FineLattice`), convolved with the Gaussian kernel by FFT
(kernel cut at ``KERNEL_REACH_BANDWIDTHS`` = 8 bandwidths, where it is below
1e-13 of its peak), then read off at ``grid_size`` output points by linear
interpolation. Only the non-empty grid points are kept, and each cluster of
them is convolved on its own (a few far-out values stretch the grid over
stretches where the estimate is zero); sorted values are binned block by block.
The output grid spans [min - 3h, max + 3h], clipped at any declared bound. At
a declared bound the kernel is reflected (Schuster 1985,
*Communications in Statistics - Theory and Methods* 14): the density on the
allowed side is f(t) + f(2L - t), so no mass falls beyond the bound and the
curve integrates to 1 on the allowed side. With two bounds the reflections
repeat (the images of the data under both mirrors), summed until they no
longer reach the interval.

Every computation runs in standard units (centre the mid-range, unit the
half-range), so values near 1e300 neither overflow nor lose the spread.

Peaks (:func:`find_peaks`): local maxima whose topographic prominence
(scipy.signal's definition: height above the higher of the two lowest points
separating the peak from any higher peak or from the ends) passes two tests:

1. at least ``PEAK_MIN_PROMINENCE`` = 5 % of the curve's maximum, so a bump
   too small to see does not count (a share of the maximum is common
   practice; 5 % is our choice within the usual 5 to 10 %), and
2. at least ``PEAK_NOISE_Z`` = 2 standard errors of the difference between
   the estimate at the peak and at the valley, taking the pointwise variance
   of a kernel estimate as f(t) R(K) / (n h) (the usual large-sample
   approximation, Silverman 1986, ch. 3) and the two as independent:
   prominence >= 2 sqrt((f_peak + f_valley) R(K) / (n h)).
   One or two isolated values in a tail never pass this test, at any n.

The record of how the two thresholds were chosen is in tests/benchmarks/README.md;
tests/engine/test_density.py repeats a smaller version of that check. The shape rule also asks a
second signal to agree before reporting two peaks.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from narrator.errors import NarratorError
from narrator.findings import Density

BANDWIDTH_RULES = ("silverman", "scott", "sheather-jones")

SILVERMAN_FACTOR = 0.9
SILVERMAN_IQR_DIVISOR = 1.34  # Silverman's rounding of the normal IQR 1.349 sigma
SCOTT_FACTOR = 1.06
NORMAL_IQR = 1.349  # IQR of the standard normal, 2 * 0.6745
SJ_PILOT_A = 0.920  # Sheather & Jones (1991): a = 0.920 IQR n^(-1/7)
SJ_PILOT_B = 0.912  # b = 0.912 IQR n^(-1/9)
SJ_ALPHA = 1.357  # alpha_2(h) = 1.357 [S(a) / T(b)]^(1/7) h^(5/7)
GAUSSIAN_ROUGHNESS = 1.0 / (2.0 * math.sqrt(math.pi))  # R(K) for the Gaussian kernel
SJ_STEPS_PER_SCALE = 200  # binning grid for the plug-in: at least 200 points per normal-scale SD
SJ_GRID_MIN = 1024
SJ_GRID_MAX = 2**17
SJ_KERNEL_REACH = 12.0  # Gaussian derivatives beyond 12 pilot widths are below 1e-28

DEGENERATE_WIDTH_SHARE = 0.05
SMALLEST_SPREAD = 2.0**-1000
MAX_RANGE_IN_BANDWIDTHS = 2**14
DEGENERATE_WIDTH_AT_ZERO = 1.0

GRID_MARGIN_BANDWIDTHS = 3.0
KERNEL_REACH_BANDWIDTHS = 8.0
FINE_STEPS_PER_BANDWIDTH = 32
FINE_GRID_MIN = 4096
FINE_GRID_MAX = 2**20
DEFAULT_GRID_SIZE = 512
_BLOCK = 1 << 20  # values per block where a step is done block by block to spare memory

PEAK_MIN_PROMINENCE = 0.05
PEAK_NOISE_Z = 2.0


@dataclass(frozen=True, slots=True)
class StandardUnits:
    """``values = centre + unit * scaled``; ``scaled`` lies in [-1, 1] when the values have spread.

    ``has_spread`` is False when all values are equal, or when their half-range
    is below ``SMALLEST_SPREAD`` = 2^-1000 (about 9e-302): below that a density
    in data units (about 1 / spread high) would overflow. The unit is then the
    values' size (at least ``SMALLEST_SPREAD``; 1 at zero).
    """

    centre: float
    unit: float
    scaled: np.ndarray
    has_spread: bool


@dataclass(frozen=True, slots=True)
class BandwidthChoice:
    """A bandwidth, the rule that produced it and why it differs from the one asked for (or None)."""

    width: float
    rule: str
    note: str | None


def _as_values(values, what: str = "values") -> np.ndarray:
    array = np.asarray(values, dtype=float)
    if array.ndim != 1:
        array = array.ravel()
    if array.size == 0:
        raise NarratorError(f"{what}: no values to work with")
    if not np.all(np.isfinite(array)):
        raise NarratorError(f"{what}: values must be finite numbers (found NaN or infinity)")
    return array


def standard_units(values: np.ndarray) -> StandardUnits:
    """Centre on the mid-range and divide by the half-range, without overflow.

    The mid-range is computed as min/2 + max/2 and the half-range as
    max/2 - min/2, so values near the largest float stay finite. When all values
    are equal the unit is the value's size (or 1 at zero) and every scaled value is 0.

    >>> units = standard_units(np.array([1e300, 3e300]))
    >>> units.centre, units.unit, units.scaled.tolist(), units.has_spread
    (2e+300, 1e+300, [-1.0, 1.0], True)
    """
    return _standard_units(_as_values(values), presorted=False)


def _standard_units(array: np.ndarray, *, presorted: bool) -> StandardUnits:
    """:func:`standard_units` of a checked array; sorted values give their extremes at the ends."""
    low = float(array[0]) if presorted else float(array.min())
    high = float(array[-1]) if presorted else float(array.max())
    centre = low / 2.0 + high / 2.0
    half_range = high / 2.0 - low / 2.0
    has_spread = half_range >= SMALLEST_SPREAD
    unit = half_range if has_spread else (max(abs(centre), SMALLEST_SPREAD) if centre != 0.0 else 1.0)
    return StandardUnits(centre=centre, unit=unit, scaled=(array - centre) / unit, has_spread=has_spread)


def _sd_and_iqr(scaled: np.ndarray, sd: float | None, iqr: float | None, unit: float) -> tuple[float, float]:
    """SD (n - 1) and IQR (Hyndman-Fan type 7) in standard units; given values are in data units."""
    if sd is not None:
        sd_scaled = float(sd) / unit
    elif scaled.size > 1:
        sd_scaled = float(np.std(scaled, ddof=1))
    else:
        sd_scaled = 0.0
    if iqr is None:
        q1, q3 = np.percentile(scaled, [25.0, 75.0])
        iqr_scaled = float(q3 - q1)
    else:
        iqr_scaled = float(iqr) / unit
    if not (math.isfinite(sd_scaled) and math.isfinite(iqr_scaled)) or sd_scaled < 0 or iqr_scaled < 0:
        raise NarratorError("bandwidth: sd and iqr must be finite and not negative")
    return sd_scaled, iqr_scaled


def _degenerate_width(units: StandardUnits) -> float:
    """The fixed width for a column with no spread, in standard units."""
    if units.centre != 0.0:
        return DEGENERATE_WIDTH_SHARE * max(abs(units.centre), SMALLEST_SPREAD) / units.unit
    return DEGENERATE_WIDTH_AT_ZERO / units.unit


def _silverman(n: int, sd_scaled: float, iqr_scaled: float) -> tuple[float, str | None]:
    robust_scale = iqr_scaled / SILVERMAN_IQR_DIVISOR
    if sd_scaled > 0 and robust_scale > 0:
        return SILVERMAN_FACTOR * min(sd_scaled, robust_scale) * n ** -0.2, None
    if sd_scaled > 0:
        return SILVERMAN_FACTOR * sd_scaled * n ** -0.2, "iqr_zero_used_sd"
    if robust_scale > 0:
        return SILVERMAN_FACTOR * robust_scale * n ** -0.2, "sd_zero_used_iqr"
    return 0.0, None


def _linear_bin(scaled: np.ndarray, start: float, step: float, size: int, *, overwrite: bool = False) -> np.ndarray:
    """Linear binning: each value splits its unit weight between the two nearest grid points.

    ``overwrite=True`` lets the binning use ``scaled`` itself as its work array (its values are lost).
    """
    # The same arithmetic as (scaled - start) / step, floor, clip, fraction, 1 - fraction, done in
    # place and in blocks: at ten million values each temporary array would be 80 MB.
    if overwrite:
        position = scaled
        position -= start
    else:
        position = scaled - start
    position /= step
    return _bin_positions(position, size)


def _bin_positions(position: np.ndarray, size: int, lead: int = 0) -> np.ndarray:
    """Linear binning of positions (in steps from grid point 0) onto ``size`` points, then ``lead`` empty
    points on each side; ``position`` is used as the work array (its values are lost)."""
    index = np.empty(position.size, dtype=np.intp)
    for block in range(0, position.size, _BLOCK):
        index[block : block + _BLOCK] = np.floor(position[block : block + _BLOCK])
    np.clip(index, 0, size - 2, out=index)
    position -= index  # now the share of the weight that goes to the upper grid point
    index += 1 + lead
    total = size + 2 * lead
    upper = np.bincount(index, weights=position, minlength=total)
    index -= 1
    np.subtract(1.0, position, out=position)  # now the share that goes to the lower grid point
    counts = np.bincount(index, weights=position, minlength=total)
    counts += upper
    return counts


def _lattice_bin(scaled: np.ndarray, lattice: FineLattice) -> np.ndarray:
    """Linear binning of standard-unit values on a :class:`FineLattice` (``scaled`` is used as the work
    array): positions from the anchor, the same arithmetic the stream engine does chunk by chunk."""
    position = scaled
    position -= lattice.anchor
    position /= lattice.step
    return _bin_positions(position, lattice.nodes, lattice.lead)


def _linear_bin_sorted(sorted_values: np.ndarray, centre: float, unit: float,
                       lattice: FineLattice) -> tuple[np.ndarray, np.ndarray]:
    """:func:`_lattice_bin` of (sorted_values - centre) / unit, for values sorted ascending, as (grid points,
    weights) of the non-empty grid points only, with no array the size of the data or of the grid.

    Block by block, each value's grid index (which never decreases along sorted values) is formed as
    there, and the weights of each run of equal indices are summed with one ``np.add.reduceat``. The
    weights are the same numbers; only the order of their addition differs.
    """
    block = 1 << 16
    position = np.empty(block)
    lower = np.empty(block)
    index = np.empty(block, dtype=np.intp)
    points, weights = [], []
    for first in range(0, sorted_values.size, block):
        values = sorted_values[first : first + block]
        here, low_share, where = position[: values.size], lower[: values.size], index[: values.size]
        np.subtract(values, centre, out=here)
        here /= unit
        here -= lattice.anchor
        here /= lattice.step
        np.floor(here, out=low_share)
        where[:] = low_share
        np.clip(where, 0, lattice.nodes - 2, out=where)
        here -= where  # the share of the weight that goes to the upper grid point
        np.subtract(1.0, here, out=low_share)
        runs = np.concatenate(([0], np.flatnonzero(where[1:] != where[:-1]) + 1))
        grid_points = where[runs] + lattice.lead
        upper_weights, lower_weights = np.add.reduceat(here, runs), np.add.reduceat(low_share, runs)
        # Each run gives its lower point and the next one; consecutive runs share points.
        points.append(np.concatenate((grid_points, grid_points + 1)))
        weights.append(np.concatenate((lower_weights, upper_weights)))
    return _combined(np.concatenate(points), np.concatenate(weights))


def _combined(points: np.ndarray, weights: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The points in ascending order with repeats merged, their weights added (a stable sort keeps
    the order in which equal points' weights are added)."""
    if points.size == 0:
        return points, weights
    order = np.argsort(points, kind="stable")
    points, weights = points[order], weights[order]
    starts = np.concatenate(([0], np.flatnonzero(points[1:] != points[:-1]) + 1))
    return points[starts], np.add.reduceat(weights, starts)


def _hermite_gaussian(order: int, u: np.ndarray) -> np.ndarray:
    """The order-th derivative of the standard normal density (orders 4 and 6)."""
    phi = np.exp(-0.5 * u * u) / math.sqrt(2.0 * math.pi)
    u2 = u * u
    if order == 4:
        return (u2 * u2 - 6.0 * u2 + 3.0) * phi
    if order == 6:
        return (u2 * u2 * u2 - 15.0 * u2 * u2 + 45.0 * u2 - 15.0) * phi
    raise ValueError(f"derivative order {order} is not implemented")


class _BinnedPairSums:
    """Sum over all ordered pairs (i, j), i = j included, of phi^(r)((X_i - X_j) / g), from binned counts.

    With counts c_k on a grid of spacing delta, the pair sum is approximately
    sum_d C(d) phi^(r)(d delta / g) with C(d) = sum_k c_k c_(k+d), the counts'
    autocorrelation, which one FFT gives for every lag at once.
    """

    def __init__(self, scaled: np.ndarray, scale: float) -> None:
        low = float(scaled.min())
        span = float(scaled.max()) - low
        points = span * SJ_STEPS_PER_SCALE / scale if scale > 0 else math.inf
        if not points < SJ_GRID_MAX:
            size = SJ_GRID_MAX
        else:
            wanted = math.ceil(points) + 1
            size = int(min(max(1 << max(wanted - 1, 1).bit_length(), SJ_GRID_MIN), SJ_GRID_MAX))
        self.step = span / (size - 1)
        counts = _linear_bin(scaled, low, self.step, size)
        spectrum = np.fft.rfft(counts, 2 * size)
        self.lag_sums = np.fft.irfft(spectrum * np.conj(spectrum), 2 * size)[:size]
        self.size = size

    def __call__(self, order: int, width: float) -> float:
        """The pair sum at pilot width ``width``; NaN when the width is under a quarter of a grid step,
        where binned sums are no longer trustworthy (the caller then falls back to Silverman's rule)."""
        if not (math.isfinite(width) and width >= self.step / 4.0):
            return math.nan
        limit = min(self.size, math.ceil(SJ_KERNEL_REACH * width / self.step) + 1)
        u = np.arange(limit) * (self.step / width)
        weights = np.where(u <= SJ_KERNEL_REACH, _hermite_gaussian(order, np.minimum(u, SJ_KERNEL_REACH)), 0.0)
        return float(self.lag_sums[0] * weights[0] + 2.0 * np.dot(self.lag_sums[1:limit], weights[1:]))


def _sheather_jones(scaled: np.ndarray, sd_scaled: float, iqr_scaled: float) -> float | None:
    """Sheather & Jones (1991) solve-the-equation bandwidth in standard units, or None if it fails."""
    n = scaled.size
    if n < 2:
        return None
    spread = iqr_scaled if iqr_scaled > 0 else NORMAL_IQR * sd_scaled
    if spread <= 0:
        return None
    pair_sums = _BinnedPairSums(scaled, spread / NORMAL_IQR)
    pairs = n * (n - 1.0)

    # A NaN pair sum (pilot width too narrow for the grid) is passed on, never divided.
    def s_hat(width: float) -> float:  # estimates the integral of f''(x)^2
        total = pair_sums(4, width)
        return total / (pairs * width**5) if math.isfinite(total) else math.nan

    def t_hat(width: float) -> float:  # estimates the integral of f'''(x)^2, i.e. minus psi_6
        total = pair_sums(6, width)
        return -total / (pairs * width**7) if math.isfinite(total) else math.nan

    pilot_a = SJ_PILOT_A * spread * n ** (-1.0 / 7.0)
    pilot_b = SJ_PILOT_B * spread * n ** (-1.0 / 9.0)
    s_a, t_b = s_hat(pilot_a), t_hat(pilot_b)
    if not (s_a > 0 and t_b > 0 and math.isfinite(s_a) and math.isfinite(t_b)):
        return None
    alpha_factor = SJ_ALPHA * (s_a / t_b) ** (1.0 / 7.0)

    def equation(h: float) -> float:
        s_value = s_hat(alpha_factor * h ** (5.0 / 7.0))
        if not s_value > 0:
            return math.nan
        return (GAUSSIAN_ROUGHNESS / (n * s_value)) ** 0.2 - h

    reference = SCOTT_FACTOR * (spread / NORMAL_IQR) * n ** -0.2
    low, high = reference / 4.0, reference * 2.0
    for _ in range(40):
        value = equation(low)
        if math.isnan(value):
            return None
        if value > 0:
            break
        low /= 2.0
    else:
        return None
    for _ in range(40):
        value = equation(high)
        if math.isnan(value):
            return None
        if value < 0:
            break
        high *= 2.0
    else:
        return None
    try:
        # Imported here: scipy.optimize adds a tenth of a second to every start-up, and only this rule needs it.
        from scipy import optimize

        root = float(optimize.brentq(equation, low, high, xtol=1e-12 * reference, rtol=1e-12))
    except (ValueError, RuntimeError):  # no sign change left, or no convergence
        return None
    return root if math.isfinite(equation(root)) else None


def floored_bandwidth(units: StandardUnits, width: float, rule: str, note: str | None) -> tuple[float, str, str | None]:
    """Widen a bandwidth narrower than range / MAX_RANGE_IN_BANDWIDTHS (see the module docstring)."""
    floor = float(units.scaled.max() - units.scaled.min()) / MAX_RANGE_IN_BANDWIDTHS
    if units.has_spread and width < floor:
        return floor, rule, "bandwidth_floor"
    return width, rule, note


def _choose_scaled(
    units: StandardUnits, rule: str, sd: float | None, iqr: float | None
) -> tuple[float, str, str | None]:
    """(width in standard units, rule used, reason code), floored."""
    return floored_bandwidth(units, *_choose_unfloored(units, rule, sd, iqr))


def _choose_unfloored(
    units: StandardUnits, rule: str, sd: float | None, iqr: float | None
) -> tuple[float, str, str | None]:
    if rule not in BANDWIDTH_RULES:
        raise NarratorError(f"unknown bandwidth rule {rule!r}; choose one of {', '.join(BANDWIDTH_RULES)}")
    scaled = units.scaled
    n = scaled.size
    sd_scaled, iqr_scaled = _sd_and_iqr(scaled, sd, iqr, units.unit)
    if not units.has_spread or (sd_scaled == 0 and iqr_scaled == 0):
        return _degenerate_width(units), rule, "constant_fixed_width"
    if rule == "sheather-jones":
        width = _sheather_jones(scaled, sd_scaled, iqr_scaled)
        if width is not None and math.isfinite(width) and width > 0:
            return width, rule, ("iqr_zero_used_sd" if iqr_scaled == 0 else None)
        width, _ = _silverman(n, sd_scaled, iqr_scaled)
        return width, "silverman", "sheather_jones_failed_used_silverman"
    return rule_bandwidth(units, n, rule, sd_scaled, iqr_scaled)


def rule_bandwidth(
    units: StandardUnits, n: int, rule: str, sd_scaled: float, iqr_scaled: float
) -> tuple[float, str, str | None]:
    """(width, rule used, reason code) by Silverman's or Scott's rule in standard units, before the
    floor: they need only n, the SD and the IQR, so the stream engine (narrator.scale) calls this too."""
    if not units.has_spread or (sd_scaled == 0 and iqr_scaled == 0):
        return _degenerate_width(units), rule, "constant_fixed_width"
    if rule == "scott":
        if sd_scaled > 0:
            return SCOTT_FACTOR * sd_scaled * n ** -0.2, rule, None
        width, _ = _silverman(n, sd_scaled, iqr_scaled)
        return width, "silverman", "sd_zero_used_silverman"
    width, note = _silverman(n, sd_scaled, iqr_scaled)
    return width, rule, note


@dataclass(frozen=True, slots=True)
class FineLattice:
    """The fine binning grid: ``nodes`` points anchor + i step from the smallest value (``anchor``) up to
    at least the largest, and ``lead`` empty points on each side out to where the kernel vanishes.

    The step is the range (standard units) times a power of two, 2^-``level``: it depends on the bandwidth
    only through the whole number ``level``, so values binned before the bandwidth is known land on
    the same points (and a binning at ``level`` + 1 coarsens exactly to ``level``, see
    :func:`coarsen_lattice`). Empty points change no weight.
    """

    anchor: float
    step: float
    nodes: int
    lead: int
    level: int

    @property
    def start(self) -> float:
        return self.anchor - self.lead * self.step

    @property
    def size(self) -> int:
        return self.nodes + 2 * self.lead


def fine_lattice(low: float, high: float, width: float) -> FineLattice:
    """The binning lattice for extremes ``low``, ``high`` and bandwidth ``width`` (standard units): the
    coarsest step range x 2^-level with at least FINE_STEPS_PER_BANDWIDTH steps a bandwidth and at least
    FINE_GRID_MIN points in all, out to KERNEL_REACH_BANDWIDTHS bandwidths beyond the extremes. (With no
    spread the step is a 256th of the width.)"""
    span = high - low
    if not span > 0:
        step = width / 256.0
        lead = math.ceil(KERNEL_REACH_BANDWIDTHS * width / step)
        return FineLattice(low, step, 2, lead, 0)
    level = math.ceil(math.log2(FINE_STEPS_PER_BANDWIDTH * span / width))
    while math.ldexp(span, -level) > width / FINE_STEPS_PER_BANDWIDTH:  # rounding of the logarithm
        level += 1
    while True:
        step = math.ldexp(span, -level)
        nodes = (1 << level) + 1 if level >= 0 else 2
        lead = math.ceil(KERNEL_REACH_BANDWIDTHS * width / step)
        if nodes + 2 * lead >= FINE_GRID_MIN or nodes + 2 * lead > FINE_GRID_MAX // 2:
            return FineLattice(low, step, nodes, lead, level)
        level += 1


def coarsen_lattice(counts: np.ndarray) -> np.ndarray:
    """Counts linearly binned on a lattice of 2^(L+1) + 1 points, as binned on the one of 2^L + 1 points
    with twice the step: each coarse point takes its own fine point's weight and half of each
    neighbour's. Exact up to rounding: a coarse hat function is linear on each fine cell, so it is the
    sum of the fine hat functions weighted by its values at the fine points (1 and 1/2)."""
    coarse = counts[0::2].copy()
    halves = 0.5 * counts[1::2]
    coarse[:-1] += halves
    coarse[1:] += halves
    return coarse


def choose_bandwidth(
    values, rule: str = "silverman", *, sd: float | None = None, iqr: float | None = None
) -> BandwidthChoice:
    """The Gaussian-kernel bandwidth by ``rule``, the rule actually used and a reason code.

    ``sd`` (n - 1 denominator) and ``iqr`` (Hyndman-Fan type 7) may be passed
    when already known, in data units; otherwise they are computed. See the
    module docstring for the rules, fallbacks and references.

    >>> choice = choose_bandwidth(np.array([3.0, 3.0, 3.0]))
    >>> round(choice.width, 6), choice.note
    (0.15, 'constant_fixed_width')
    """
    units = standard_units(values)
    width, used, note = _choose_scaled(units, rule, sd, iqr)
    return BandwidthChoice(width=width * units.unit, rule=used, note=note)


def bandwidth(values, rule: str = "silverman", *, sd: float | None = None, iqr: float | None = None) -> float:
    """Bandwidth h of a Gaussian kernel density estimate, in data units.

    ``"silverman"``: 0.9 min(s, IQR / 1.34) n^(-1/5) (Silverman 1986, eq. 3.31);
    ``"scott"``: 1.06 s n^(-1/5) (Scott 1992); ``"sheather-jones"``: the
    solve-the-equation plug-in (Sheather & Jones 1991), binned. Fallbacks are
    described in the module docstring; :func:`choose_bandwidth` reports them.

    >>> round(bandwidth(np.array([1.0, 2.0, 3.0, 4.0])), 4)
    0.7635
    """
    return choose_bandwidth(values, rule, sd=sd, iqr=iqr).width


def _reflection_images(lower: float | None, upper: float | None, reach: float) -> list[tuple[float, float]]:
    """(sign, shift) pairs: the bounded density at t is the sum of f(shift + sign * t)."""
    if lower is None and upper is None:
        return [(1.0, 0.0)]
    if upper is None:
        return [(1.0, 0.0), (-1.0, 2.0 * lower)]
    if lower is None:
        return [(1.0, 0.0), (-1.0, 2.0 * upper)]
    width = upper - lower
    repeats = math.ceil((width + reach) / (2.0 * width))
    images = []
    for k in range(-repeats, repeats + 1):
        images.append((1.0, -2.0 * k * width))
        images.append((-1.0, 2.0 * lower + 2.0 * k * width))
    return images


def check_bounds(array: np.ndarray, lower_bound: float | None, upper_bound: float | None) -> None:
    if lower_bound is not None:
        if not math.isfinite(lower_bound):
            raise NarratorError("density: the lower bound must be a finite number")
        if array.min() < lower_bound:
            raise NarratorError(
                f"density: a value ({array.min():g}) lies below the declared lower bound {lower_bound:g}"
            )
    if upper_bound is not None:
        if not math.isfinite(upper_bound):
            raise NarratorError("density: the upper bound must be a finite number")
        if array.max() > upper_bound:
            raise NarratorError(
                f"density: a value ({array.max():g}) lies above the declared upper bound {upper_bound:g}"
            )
    if lower_bound is not None and upper_bound is not None and not lower_bound < upper_bound:
        raise NarratorError("density: the lower bound must be below the upper bound")


def estimate_density(
    values,
    *,
    rule: str = "silverman",
    bandwidth: float | None = None,
    lower_bound: float | None = None,
    upper_bound: float | None = None,
    grid_size: int = DEFAULT_GRID_SIZE,
    sd: float | None = None,
    iqr: float | None = None,
    presorted: bool = False,
    keep_fine: bool = False,
) -> Density | tuple[Density, FineDensity]:
    """Gaussian kernel density estimate on a regular grid, with prominent peaks.

    ``keep_fine=True`` returns ``(Density, FineDensity)``: the fine binned estimate as well, from
    which :func:`curve_between` draws the curve over a part of the axis.

    f(t) = (1 / (n h)) sum_i phi((t - x_i) / h), computed by linear binning and
    FFT convolution (Wand 1994; Fan & Marron 1994) in O(n + m log m), reflected
    at declared bounds (Schuster 1985). ``bandwidth`` overrides ``rule``
    (recorded as ``bandwidth_rule="user"``). ``sd`` and ``iqr`` (data units)
    spare recomputing them for the bandwidth rule. Grid, constants and the
    peak rule are in the module docstring. ``presorted=True`` says the values are
    sorted ascending, so checks and extremes read the two ends only.

    >>> result = estimate_density(np.array([1.0, 2.0, 2.5, 4.0]), lower_bound=0.0)
    >>> result.grid[0], result.reflected, len(result.peaks)
    (0.0, True, 1)
    """
    if presorted:
        array = np.asarray(values, dtype=float).ravel()
        ends = array[[0, -1]] if array.size else array
        _as_values(ends, "density")
    else:
        array = _as_values(values, "density")
        ends = array
    if not isinstance(grid_size, int | np.integer) or grid_size < 2:
        raise NarratorError("density: grid_size must be a whole number of at least 2")
    check_bounds(ends, lower_bound, upper_bound)
    if presorted and bandwidth is None and rule != "sheather-jones" and sd is not None and iqr is not None:
        # Sorted values with the SD and IQR known: the bandwidth needs only the extremes in standard units,
        # and the binning reads the values block by block.
        n = array.size
        units = _standard_units(array[[0, -1]], presorted=True)
        low, high = float(units.scaled[0]), float(units.scaled[1])
        sd_scaled, iqr_scaled = _sd_and_iqr(units.scaled, sd, iqr, units.unit)
        width, used_rule, note = floored_bandwidth(units, *rule_bandwidth(units, n, rule, sd_scaled, iqr_scaled))
        lattice = fine_lattice(low, high, width)
        counts = _linear_bin_sorted(array, units.centre, units.unit, lattice)
        return density_from_fine_counts(
            counts, n=n, centre=units.centre, unit=units.unit, width=width, rule=used_rule, note=note, low=low,
            high=high, fine_start=lattice.start, fine_step=lattice.step, lower_bound=lower_bound,
            upper_bound=upper_bound, grid_size=grid_size, keep_fine=keep_fine, fine_size=lattice.size,
        )
    units = _standard_units(array, presorted=presorted)
    if bandwidth is None:
        width, used_rule, note = _choose_scaled(units, rule, sd, iqr)
    else:
        if not (math.isfinite(bandwidth) and bandwidth > 0):
            raise NarratorError("density: the bandwidth must be a positive number")
        width, used_rule, note = floored_bandwidth(units, bandwidth / units.unit, "user", None)

    scaled = units.scaled
    n = scaled.size
    low, high = (float(scaled[0]), float(scaled[-1])) if presorted else (float(scaled.min()), float(scaled.max()))
    # Fine grid for binning: the unbounded estimate, out to where the kernel vanishes.
    lattice = fine_lattice(low, high, width)
    counts = _lattice_bin(scaled, lattice)  # scaled is not used again
    return density_from_fine_counts(
        counts, n=n, centre=units.centre, unit=units.unit, width=width, rule=used_rule, note=note, low=low,
        high=high, fine_start=lattice.start, fine_step=lattice.step, lower_bound=lower_bound, upper_bound=upper_bound,
        grid_size=grid_size, keep_fine=keep_fine,
    )


def density_from_fine_counts(
    counts: np.ndarray, *, n: int, centre: float, unit: float, width: float, rule: str, note: str | None,
    low: float, high: float, fine_start: float, fine_step: float, lower_bound: float | None,
    upper_bound: float | None, grid_size: int = DEFAULT_GRID_SIZE, keep_fine: bool = False,
    fine_size: int | None = None,
) -> Density | tuple[Density, FineDensity]:
    """The rest of :func:`estimate_density` once the values are linearly binned on the fine grid.

    ``counts`` are the fine grid's binned counts (``fine_start`` + k ``fine_step``, standard units
    t = (x - centre) / unit), as an array over the grid or as (non-empty points, their counts) with a
    ``fine_size``; ``width`` the bandwidth and ``low``, ``high`` the extremes, all in
    standard units. The stream engine (narrator.scale) bins chunk by chunk and finishes here, so
    both engines give the same curve.
    """
    if isinstance(counts, tuple):
        points, weights = counts
    else:
        counts = np.asarray(counts, dtype=np.float64)
        fine_size = counts.size
        points = np.flatnonzero(counts)
        weights = counts[points]
    lower = None if lower_bound is None else (lower_bound - centre) / unit
    upper = None if upper_bound is None else (upper_bound - centre) / unit
    reach = KERNEL_REACH_BANDWIDTHS * width
    half = min(math.ceil(reach / fine_step), fine_size - 1)
    u = np.arange(-half, half + 1) * (fine_step / width)
    kernel = np.exp(-0.5 * u * u) / (math.sqrt(2.0 * math.pi) * n * width)
    fine_density = _convolve_clusters(points, weights, fine_size, kernel, fine_start, fine_step)

    largest = float(np.finfo(float).max)
    out_low = low - GRID_MARGIN_BANDWIDTHS * width
    out_high = high + GRID_MARGIN_BANDWIDTHS * width
    clipped_low = lower is not None and out_low <= lower
    clipped_high = upper is not None and out_high >= upper
    out_low = lower if clipped_low else max(out_low, -largest / unit - centre / unit)
    out_high = upper if clipped_high else min(out_high, largest / unit - centre / unit)
    grid = np.linspace(out_low, out_high, grid_size)
    density_scaled = np.zeros(grid_size)
    for sign, shift in _reflection_images(lower, upper, reach):
        density_scaled += fine_density.interpolate(shift + sign * grid)
    reflected = (lower is not None and low - lower < reach) or (upper is not None and upper - high < reach)

    with np.errstate(over="ignore"):  # a rounding step past the largest double is clipped just below
        grid_data = np.clip(centre + grid * unit, -largest, largest)
    if clipped_low:
        grid_data[0] = lower_bound  # exactly the bound, not a rounding of it
    if clipped_high:
        grid_data[-1] = upper_bound
    grid_data = np.maximum.accumulate(grid_data)  # rounding in data units must not reverse the order
    density_data = density_scaled / unit
    peak_locations = find_peaks(grid, density_scaled, sample_size=n, bandwidth=width)
    peaks = tuple(float(grid_data[np.searchsorted(grid, location)]) for location in peak_locations)
    result = Density(
        kernel="gaussian",
        bandwidth_rule=rule,
        bandwidth=float(width * unit),
        method="binned-fft",
        grid=tuple(float(t) for t in grid_data),
        values=tuple(float(v) for v in density_data),
        lower_bound=None if lower_bound is None else float(lower_bound),
        upper_bound=None if upper_bound is None else float(upper_bound),
        reflected=bool(reflected),
        peaks=peaks,
        bandwidth_note=note,
    )
    if keep_fine:
        return result, FineDensity(centre, unit, fine_start, fine_step, fine_density, lower, upper, reach)
    return result


@dataclass(frozen=True, slots=True)
class FineDensity:
    """The fine binned density of :func:`estimate_density`, in standard units (t = (x - centre) / unit)."""

    centre: float
    unit: float
    start: float
    step: float
    values: FineCurve
    lower: float | None  # reflecting bounds, standard units
    upper: float | None
    reach: float


def curve_between(fine: FineDensity, low: float, high: float, grid_size: int = DEFAULT_GRID_SIZE):
    """(grid, density) in data units on ``grid_size`` points from ``low`` to ``high``, read from the fine
    estimate exactly as :func:`estimate_density` reads its own grid (reflections included)."""
    grid = np.linspace((low - fine.centre) / fine.unit, (high - fine.centre) / fine.unit, grid_size)
    density_scaled = np.zeros(grid_size)
    for sign, shift in _reflection_images(fine.lower, fine.upper, fine.reach):
        density_scaled += fine.values.interpolate(shift + sign * grid)
    grid_data = np.maximum.accumulate(np.clip(fine.centre + grid * fine.unit, low, high))
    grid_data[0], grid_data[-1] = low, high
    return grid_data, density_scaled / fine.unit


def find_peaks(
    grid,
    values,
    *,
    min_prominence: float = PEAK_MIN_PROMINENCE,
    sample_size: int | None = None,
    bandwidth: float | None = None,
    noise_z: float = PEAK_NOISE_Z,
) -> tuple[float, ...]:
    """Grid locations of the prominent peaks of a density curve, ascending.

    A peak is a local maximum (a flat top counts once, at its middle) whose
    prominence is at least ``min_prominence`` times the curve's maximum and,
    when ``sample_size`` n and ``bandwidth`` h of a Gaussian kernel estimate
    are given, at least ``noise_z`` sqrt((f_peak + f_valley) R(K) / (n h)),
    R(K) = 1 / (2 sqrt(pi)); the highest peak always counts. Maxima and
    prominences come from :func:`local_maxima`: the curve is padded with 0 at
    both ends, so a maximum at a reflecting bound (for example a mode at 0)
    counts as a peak. The module docstring gives the reasons for the thresholds.

    >>> find_peaks([0, 1, 2, 3, 4], [0.0, 1.0, 0.2, 0.9, 0.0])
    (1.0, 3.0)
    """
    grid_array = np.asarray(grid, dtype=float)
    curve = np.asarray(values, dtype=float)
    if grid_array.shape != curve.shape or curve.ndim != 1:
        raise NarratorError("peaks: grid and values must be 1-D and of the same length")
    if curve.size == 0 or not np.all(np.isfinite(curve)):
        return ()
    top = float(curve.max())
    if top <= 0:
        return ()
    positions, heights, prominence = local_maxima(curve)
    keep = prominence >= min_prominence * top
    if sample_size is not None and bandwidth is not None:
        valley_height = heights - prominence
        variance_scale = GAUSSIAN_ROUGHNESS / (sample_size * bandwidth)
        keep &= prominence >= noise_z * np.sqrt(np.maximum(heights + valley_height, 0.0) * variance_scale)
    # The highest maximum (its prominence is its full height) always counts.
    keep[np.argmax(prominence)] = True
    return tuple(float(grid_array[i]) for i in positions[keep])


def local_maxima(curve) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(index, height, prominence) of every local maximum of a sampled curve, left to right.

    The curve is padded with 0 at both ends, so an end point can be a maximum.
    A flat top counts once, at its middle. Prominence is the topographic one
    (scipy.signal.peak_prominences) on the curve with flat runs collapsed; of
    two separate maxima of exactly equal height the right one is taken as the
    higher, so each is measured against the dip between them rather than
    against the ends.

    >>> local_maxima([1.0, 3.0, 3.0, 3.0, 0.5, 2.0])
    (array([2, 5]), array([3., 2.]), array([3. , 1.5]))
    """
    _, index, height, prominence = local_maxima_of_curves([curve])
    return index, height, prominence


def local_maxima_of_curves(curves) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(curve, index, height, prominence) of every local maximum of each finite curve, curve by curve and
    left to right within a curve: :func:`local_maxima` of each, found in one search over all of them.

    The curves, each padded with 0, are joined end to end with a NaN between two; flat runs are collapsed
    and each curve's tie-break added (from its own maximum and number of runs, as for the curve alone).
    No curve's first or last point has a neighbour on both sides, and no search for a base passes a NaN,
    so every maximum and prominence is the one the curve alone gives, to the bit. One whole-array search
    costs about what one curve's does, where the 12 short histograms of the bin-sensitivity grid paid for
    12 scans.

    >>> [a.tolist() for a in local_maxima_of_curves([[1.0, 0.0, 2.0], [5.0]])[:2]]
    [[0, 0, 1], [0, 2, 0]]
    """
    arrays = [np.asarray(curve, dtype=float).ravel() for curve in curves]
    if not arrays:
        return np.zeros(0, dtype=np.intp), np.zeros(0, dtype=np.intp), np.zeros(0), np.zeros(0)
    padded_sizes = np.array([array.size + 2 for array in arrays], dtype=np.intp)
    begins = np.concatenate(([0], np.cumsum(padded_sizes + 1)[:-1]))  # where each padded curve starts
    zero, gap = np.zeros(1), np.full(1, np.nan)
    pieces = []
    for array in arrays:
        pieces.extend((gap, zero, array, zero))
    joined = np.concatenate(pieces[1:])
    # Runs of equal values; a NaN is never equal, so each gap is a run of its own and no run crosses it.
    run_starts = np.concatenate(([0], np.flatnonzero(np.diff(joined) != 0) + 1))
    run_ends = np.concatenate((run_starts[1:], [joined.size]))
    run_heights = joined[run_starts]
    run_curve = np.searchsorted(begins, run_starts, side="right") - 1
    in_curve = np.ones(run_starts.size, dtype=bool)
    in_curve[np.searchsorted(run_starts, begins[1:] - 1)] = False  # the gaps
    first_run = np.searchsorted(run_starts, begins)
    runs = np.diff(np.append(first_run, run_starts.size)) - (np.arange(len(arrays)) < len(arrays) - 1)
    curve_runs = run_heights[in_curve]
    top = np.maximum.reduceat(curve_runs, np.searchsorted(np.flatnonzero(in_curve), first_run))
    # A rising tie-break far below any real difference orders equal separate maxima.
    run_number = np.arange(run_starts.size) - first_run[run_curve]
    tie_break = (1e-12 * np.maximum(top, 1e-300))[run_curve] * run_number / np.maximum(runs, 1)[run_curve]
    prepared = np.where(in_curve, run_heights + tie_break, np.nan)
    found, prominences = _peaks_and_prominences(prepared)
    curve = run_curve[found]
    middles = (run_starts[found] + run_ends[found] - 1) // 2 - 1 - begins[curve]  # middle of the flat top
    return curve.astype(np.intp), middles.astype(np.intp), run_heights[found], prominences


# scipy.signal would cost most of a second of start-up (it imports scipy.stats); the two routines the
# engine used from it are restated below, step for step, so the numbers are the same to the last bit
# (tests/engine/test_scipy_equivalents.py compares them with scipy.signal).


def _convolve_same(data: np.ndarray, kernel: np.ndarray) -> np.ndarray:
    """scipy.signal.fftconvolve(data, kernel, mode="same") for 1-D float arrays: FFT at the next fast
    length, product, inverse FFT, then the centred part as long as ``data``.

    numpy.fft and scipy.fft run the same pocketfft code and give the same bits here; numpy's is used
    because importing scipy.fft costs a tenth of a second of start-up.
    """
    full = data.size + kernel.size - 1
    fast = next_fast_length(full)
    product = np.fft.rfft(data, fast) * np.fft.rfft(kernel, fast)
    result = np.fft.irfft(product, fast)[:full]
    start = (full - data.size) // 2
    return result[start : start + data.size].copy()


_MAX_CLUSTERS = 64


@dataclass(frozen=True, slots=True)
class FineCurve:
    """A curve on the grid start + j step (j = 0..size-1) that is zero outside a few segments: segment k
    covers the points first[k] .. first[k] + length[k] - 1, its values stored from offsets[k] on."""

    start: float
    step: float
    size: int
    first: np.ndarray
    length: np.ndarray
    offsets: np.ndarray
    values: np.ndarray

    def at(self, index: np.ndarray) -> np.ndarray:
        """The curve at grid points ``index`` (0 outside the segments)."""
        k = np.searchsorted(self.first, index, side="right") - 1
        safe = np.maximum(k, 0)
        offset = index - self.first[safe]
        inside = (k >= 0) & (offset < self.length[safe])
        return np.where(inside, self.values[np.where(inside, self.offsets[safe] + offset, 0)], 0.0)

    def interpolate(self, t: np.ndarray) -> np.ndarray:
        """Linear interpolation between grid points, 0 beyond the grid (as numpy.interp with left=right=0)."""
        position = (np.asarray(t, dtype=np.float64) - self.start) / self.step
        inside = (position >= 0.0) & (position <= self.size - 1)
        j = np.clip(np.floor(position), 0, self.size - 2).astype(np.intp)
        share = position - j
        below, above = self.at(j), self.at(j + 1)
        return np.where(inside, below + share * (above - below), 0.0)


def _convolve_clusters(points: np.ndarray, weights: np.ndarray, size: int, kernel: np.ndarray, start: float,
                       step: float) -> FineCurve:
    """The binned counts (``weights`` at grid ``points``, ascending) convolved with ``kernel`` as
    :func:`_convolve_same` would, computed only where the result can be non-zero: around each cluster
    of non-empty points (points closer than a kernel's width joined). A few far-out values stretch the
    fine grid to a million points that are nearly all empty; the clusters hold the same sums. With very
    many clusters, the span from the first to the last point is convolved as one.
    """
    half = (kernel.size - 1) // 2
    if points.size == 0:
        empty = np.zeros(0, dtype=np.intp)
        return FineCurve(start, step, size, empty, empty, empty, np.zeros(0))
    breaks = np.flatnonzero(np.diff(points) > 2 * half + 1)
    starts = np.concatenate(([points[0]], points[breaks + 1]))
    stops = np.concatenate((points[breaks], [points[-1]])) + 1
    if starts.size > _MAX_CLUSTERS:
        starts, stops = starts[:1], stops[-1:]
    firsts, lengths, parts = [], [], []
    for begin, end in zip(starts.tolist(), stops.tolist(), strict=True):
        segment = np.zeros(end - begin)
        chosen = slice(int(np.searchsorted(points, begin)), int(np.searchsorted(points, end)))
        segment[points[chosen] - begin] = weights[chosen]
        full = segment.size + kernel.size - 1
        fast = next_fast_length(full)
        part = np.fft.irfft(np.fft.rfft(segment, fast) * np.fft.rfft(kernel, fast), fast)[:full]
        origin = begin - half  # grid point of part[0]
        low, high = max(origin, 0), min(origin + full, size)
        firsts.append(low)
        lengths.append(high - low)
        parts.append(part[low - origin : high - origin])
    values = np.concatenate(parts)
    np.maximum(values, 0.0, out=values)  # FFT round-off leaves tiny negatives far out
    lengths_array = np.asarray(lengths, dtype=np.intp)
    offsets = np.concatenate(([0], np.cumsum(lengths_array)[:-1])).astype(np.intp)
    return FineCurve(start, step, size, np.asarray(firsts, dtype=np.intp), lengths_array, offsets, values)


def next_fast_length(target: int) -> int:
    """The smallest 5-smooth number (2^a 3^b 5^c) at least ``target``: scipy.fft.next_fast_len(target,
    real=True), the lengths pocketfft's real transforms are fastest at (Temperton 1992's regular numbers).

    >>> next_fast_length(4097), next_fast_length(7)
    (4320, 8)
    """
    if target <= 6 or not target & (target - 1):
        return target
    best = 1 << (target - 1).bit_length()  # the next power of two always qualifies
    power_of_5 = 1
    while power_of_5 < target:
        power_of_35 = power_of_5
        while power_of_35 < target:
            # the smallest power of two that lifts power_of_35 to the target
            quotient = -(-target // power_of_35)
            candidate = (1 << (quotient - 1).bit_length()) * power_of_35
            if candidate == target:
                return candidate
            best = min(best, candidate)
            power_of_35 *= 3
        best = min(best, power_of_35)
        power_of_5 *= 5
    return min(best, power_of_5)


def _peaks_and_prominences(curve: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Local maxima of a 1-D curve (a plateau counts once, at its middle, rounded down) and their
    topographic prominences: scipy.signal.find_peaks(curve, prominence=0) with its
    "prominences" property (the definition of scipy.signal.peak_prominences, no window).

    From each peak the search runs outwards while the curve is not higher than the peak; the
    base on each side is the lowest point passed, and the prominence is the peak's height above
    the higher of the two bases.

    Short curves (histogram bars) are scanned point by point; longer ones (density grids, fine
    histograms) are handled for all points at once, which costs a fixed ~0.2 ms but no Python loop.
    """
    if np.size(curve) <= _SCAN_MAX_POINTS:
        return _peaks_by_scan(curve)
    return _peaks_vectorised(curve)


_SCAN_MAX_POINTS = 200  # below this a Python scan is faster than the vectorised search (measured)


def _peaks_by_scan(curve: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`_peaks_and_prominences` by one scan for the maxima and a stack scan each way for the
    nearest strictly higher point on each side of every point."""
    x = np.ascontiguousarray(curve, dtype=np.float64)
    values = x.tolist()  # Python floats: the scans below read one value at a time
    last = x.size - 1
    peaks = []
    i = 1
    while i < last:
        if values[i - 1] < values[i]:
            ahead = i + 1
            while ahead < last and values[ahead] == values[i]:
                ahead += 1
            if values[ahead] < values[i]:
                peaks.append((i + ahead - 1) // 2)
                i = ahead
        i += 1
    found = np.asarray(peaks, dtype=np.intp)
    prominences = np.empty(found.size)
    if found.size == 0:
        return found, prominences
    # The nearest strictly higher point on each side of every point (one stack scan each way), in
    # place of a search from each peak.
    size = len(values)
    higher_left, higher_right = [-1] * size, [size] * size
    stack: list[int] = []
    for k, value in enumerate(values):
        while stack and values[stack[-1]] <= value:
            stack.pop()
        higher_left[k] = stack[-1] if stack else -1
        stack.append(k)
    stack = []
    for k in range(size - 1, -1, -1):
        value = values[k]
        while stack and values[stack[-1]] <= value:
            stack.pop()
        higher_right[k] = stack[-1] if stack else size
        stack.append(k)
    for k, peak in enumerate(found.tolist()):
        start, stop = higher_left[peak] + 1, higher_right[peak]
        prominences[k] = values[peak] - max(x[start : peak + 1].min(), x[peak:stop].min())
    return found, prominences


def _peaks_vectorised(curve: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`_peaks_and_prominences` with whole-array steps: runs of equal values for the maxima,
    binary lifting over tables of range maxima and minima for the bases."""
    x = np.ascontiguousarray(curve, dtype=np.float64)
    size = x.size
    if size < 3:
        return np.zeros(0, dtype=np.intp), np.empty(0)
    # Runs of equal values (NaN is never equal, so each NaN is a run of its own); a run is a peak when
    # it has a neighbour on each side and both are lower (a run reaching either end is not).
    run_starts = np.concatenate(([0], np.flatnonzero(x[1:] != x[:-1]) + 1))
    run_ends = np.concatenate((run_starts[1:] - 1, [size - 1]))
    inner = (run_starts >= 1) & (run_ends <= size - 2)
    starts, ends = run_starts[inner], run_ends[inner]
    rising = x[starts - 1] < x[starts]
    falling = x[ends + 1] < x[ends]
    found = ((starts + ends) // 2)[rising & falling].astype(np.intp)
    prominences = np.empty(found.size)
    if found.size == 0:
        return found, prominences
    # On each side of a peak the nearest strictly higher point (or NaN, which no point passes) bounds
    # the search; the base is the lowest point before it. Both are found for all peaks at once with
    # tables of range maxima and minima over spans of 1, 2, 4, ... points (binary lifting).
    barrier = np.where(np.isnan(x), np.inf, x)
    highest, lowest = [barrier], [x]
    while 2 ** len(highest) <= size:
        half = 2 ** (len(highest) - 1)
        highest.append(np.maximum(highest[-1][:-half], highest[-1][half:]))
        lowest.append(np.minimum(lowest[-1][:-half], lowest[-1][half:]))
    heights = x[found]
    start = found.copy()  # the left search: start - span .. start - 1 is not higher, for each span taken
    stop = found + 1
    for level in range(len(highest) - 1, -1, -1):
        span = 2**level
        table = highest[level]
        can = start - span >= 0
        index = np.where(can, start - span, 0)
        take = can & (table[index] <= heights)
        start = np.where(take, start - span, start)
        can = stop + span <= size
        index = np.where(can, stop, 0)
        take = can & (table[index] <= heights)
        stop = np.where(take, stop + span, stop)

    def range_min(first: np.ndarray, last: np.ndarray) -> np.ndarray:  # min of x[first..last], inclusive
        level = np.floor(np.log2(last - first + 1)).astype(np.intp)
        out = np.empty(first.size)
        for k in np.unique(level).tolist():
            chosen = level == k
            table = lowest[k]
            out[chosen] = np.minimum(table[first[chosen]], table[last[chosen] - 2**k + 1])
        return out

    prominences = heights - np.maximum(range_min(start, found), range_min(found, stop - 1))
    return found, prominences
