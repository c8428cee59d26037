"""An independent checker: each recorded claim re-derived from the raw values.

It imports nothing of narrator's decisions (no engine, no licences): only the Claim records a
narrative carries. Every statistic is recomputed here with numpy, scipy and statsmodels as
reference implementations (numpy.quantile type 7, scipy.stats.skew/kurtosis/skewtest/t/binom,
statsmodels' medcouple), and every word is read the way a reader reads it:

* "half were lower and half were higher": exactly half, or within 2 points of half, below the
  median, and as many above (our reading; a reader of 300 values does not mind 147; of seven
  values, three are not half);
* "three were lower, one was exactly 9 and three were higher": the counts themselves;
* "58 % were 0, the lowest value": the share at the minimum, and 0 is the minimum;
* "half of all values were between Q1 and Q3": the share from Q1 to Q3 within 5 points of a
  half, n >= 8, and exactly half below 20 values;
* "the few high values pull the average up": the mean above the median, apart as printed;
* "close to the average": within a tenth of an SD;
* fences, flagged values, the values without them, intervals, histogram widths, bandwidths and
  the bins a figure draws are recomputed from their published definitions (Tukey 1977; Hubert &
  Vandervieren 2008; Iglewicz & Hoaglin 1993; Rosner 1983; Student 1908; Conover 1999;
  Freedman & Diaconis 1981; Silverman 1986 eq. 3.31);
* a population report carries no estimating words (see :data:`ESTIMATING`).

:func:`check_claim` returns a list of problems (empty when the claim holds); :data:`CHECKS` maps
each claim kind to its check, and :data:`LICENCE_CHECKS` the licences whose facts are checked too.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
from scipy import stats
from statsmodels.stats.stattools import medcouple as reference_medcouple

HALF_SLACK = 0.02  # our reading of "half", stated in the module docstring
MIDDLE_HALF_SLACK = 0.05
CLOSE_SHARE = 0.1  # "close to the average": within this share of the SD
MEAN_SHIFT_SHARE = 0.2  # "moves the mean by more than 0.2 SD", as the methods text states it
CODE_VALUES = (-1.0, -8.0, -9.0, -99.0, -999.0, -9999.0, -99999.0, 99.0, 999.0, 9999.0, 99999.0, 999999.0)
BIN_CAP = 200  # as the methods text states it ("at most 200 bins")
DOMINANT_SHARE = 0.9  # "one bin holds at least 90 %", as the text states it

# Words a report about a whole population must not use (in either language).
ESTIMATING = {
    "en": ("probably", "not certain", "hard to be sure", "may be ", "seem", "evidence is limited", "(SE ", "p = ",
           "p < ", "% confidence", "confidence intervals:"),
    "es": ("probable", "no es seguro", "difícil estar seguros", "puede ser ", "parece", "evidencia es limitada",
           "(EE ", "p = ", "p < ", "intervalos de confianza del"),
    "fr": ("probablement", "sans doute", "pas certain", "difficile d'en être sûr", "peut-être", "sembl", "pourrai",
           "indices sont limités", "(erreur type ", "p = ", "p < ", "intervalles de confiance à"),
}


def close(a, b, scale: float = 1.0, rel: float = 1e-9) -> bool:
    if a is None or b is None:
        return a is None and b is None
    a, b = float(a), float(b)
    if math.isnan(a) or math.isnan(b):
        return math.isnan(a) and math.isnan(b)
    return abs(a - b) <= rel * max(abs(a), abs(b), scale, 1e-300)


# ----------------------------------------------------------------------------- the raw values


@dataclass
class Raw:
    """The values a claim is about, with what a reader was told about them (bounds, population)."""

    values: np.ndarray  # the values used: finite, inside the declared range
    lower_bound: float | None = None
    upper_bound: float | None = None
    valid_min: float | None = None
    valid_max: float | None = None
    population: bool = False
    missing: int = 0
    impossible: int = 0
    non_finite: int = 0
    missing_texts: tuple = ()
    memo: dict = field(default_factory=dict)

    @classmethod
    def of(cls, raw: np.ndarray, options: dict) -> Raw:
        raw = np.asarray(raw, dtype=float)
        finite = raw[np.isfinite(raw)]
        low = [v for v in (options.get("lower_bound"), options.get("valid_min")) if v is not None]
        high = [v for v in (options.get("upper_bound"), options.get("valid_max")) if v is not None]
        inside = np.ones(finite.size, dtype=bool)
        if low:
            inside &= finite >= max(low)
        if high:
            inside &= finite <= min(high)
        return cls(values=np.sort(finite[inside]), lower_bound=options.get("lower_bound"),
                   upper_bound=options.get("upper_bound"), valid_min=options.get("valid_min"),
                   valid_max=options.get("valid_max"), population=bool(options.get("population")),
                   missing=int(np.isnan(raw).sum()), impossible=int((~inside).sum()),
                   non_finite=int(np.isinf(raw).sum()))

    @property
    def n(self) -> int:
        return int(self.values.size)

    @cached_property
    def scale(self) -> float:
        if self.n == 0:
            return 1.0
        return float(max(np.abs(self.values).max(), self.sd if self.n > 1 else 0.0, 1e-12))

    @cached_property
    def mean(self) -> float:
        return float(np.mean(self.values))

    @cached_property
    def median(self) -> float:
        return float(np.median(self.values))

    @cached_property
    def sd(self) -> float:
        return float(np.std(self.values, ddof=1)) if self.n > 1 else math.nan

    @cached_property
    def quartiles(self) -> tuple[float, float]:
        q1, q3 = np.quantile(self.values, [0.25, 0.75])  # type 7 (numpy's linear method)
        return float(q1), float(q3)

    @cached_property
    def g1(self) -> float | None:
        return float(stats.skew(self.values, bias=False)) if self.n >= 3 and self.sd > 0 else None

    @cached_property
    def g2(self) -> float | None:
        return float(stats.kurtosis(self.values, bias=False)) if self.n >= 4 and self.sd > 0 else None

    @cached_property
    def skewtest(self):
        return stats.skewtest(self.values) if self.n >= 8 and self.sd > 0 else None

    @cached_property
    def bowley(self) -> float | None:
        q1, q3 = self.quartiles
        return None if q3 == q1 else (q3 + q1 - 2 * self.median) / (q3 - q1)

    @cached_property
    def tail(self) -> float | None:
        # Hinkley's (1975) skewness at the 5th and 95th percentiles, numpy's default (type 7) percentiles.
        p5, p95 = np.percentile(self.values, [5, 95])
        return None if p95 == p5 else float((p95 + p5 - 2 * self.median) / (p95 - p5))

    @cached_property
    def mc(self) -> float | None:
        # statsmodels' exact O(n^2) algorithm (its fast one is not meant for small samples); O(n^2) is fine here.
        return float(reference_medcouple(self.values, use_fast=False)) if self.n >= 3 else None

    def flagged(self, rule: str) -> tuple[float | None, float | None, np.ndarray, np.ndarray]:
        """(lower fence, upper fence, low flagged, high flagged) by the rule's published definition."""
        if rule in self.memo:
            return self.memo[rule]
        x = self.values
        q1, q3 = self.quartiles
        iqr = q3 - q1
        lower = upper = None
        if rule in ("tukey", "adjusted"):
            a = b = 1.0
            if rule == "adjusted":  # Hubert & Vandervieren (2008), eq. 5
                mc = self.mc
                a, b = (math.exp(-4 * mc), math.exp(3 * mc)) if mc >= 0 else (math.exp(-3 * mc), math.exp(4 * mc))
            lower, upper = q1 - 1.5 * a * iqr, q3 + 1.5 * b * iqr
            low, high = x[x < lower], x[x > upper]
        elif rule == "modified-z":  # Iglewicz & Hoaglin (1993), MeanAD fallback when MAD = 0
            mad = float(np.median(np.abs(x - self.median)))
            scale = mad / 0.6745 if mad > 0 else 1.253314 * float(np.mean(np.abs(x - self.median)))
            if scale == 0:
                low = high = x[:0]
            else:
                lower, upper = self.median - 3.5 * scale, self.median + 3.5 * scale
                low, high = x[x < lower], x[x > upper]
        else:  # Rosner (1983) generalized ESD, alpha 0.05, at most 10 % of the values
            low, high = self._esd()
        self.memo[rule] = (lower, upper, low, high)
        return self.memo[rule]

    def _esd(self) -> tuple[np.ndarray, np.ndarray]:
        x = list(self.values)
        n = len(x)
        r = min(max(1, math.floor(0.1 * n)), n - 2)
        removed, count = [], 0
        for i in range(1, r + 1):
            arr = np.array(x)
            sd = float(np.std(arr, ddof=1))
            if sd == 0:
                break
            mean = float(np.mean(arr))
            index = int(np.argmax(np.abs(arr - mean)))
            if abs(arr[0] - mean) > abs(arr[-1] - mean):
                index = 0
            elif abs(arr[-1] - mean) >= abs(arr[0] - mean):
                index = len(arr) - 1
            statistic = abs(arr[index] - mean) / sd
            p = 1 - 0.05 / (2 * (n - i + 1))
            t = stats.t.ppf(p, n - i - 1)
            critical = (n - i) * t / math.sqrt((n - i - 1 + t * t) * (n - i + 1))
            removed.append(float(arr[index]))
            x.pop(index)
            if statistic > critical:
                count = i
        out = np.array(removed[:count])
        return np.sort(out[out < self.median]), np.sort(out[out >= self.median])

    def median_ranks(self, level: float) -> int | None:
        """Conover (1999): the largest k with P(B <= k - 1) <= (1 - level) / 2, B ~ Binomial(n, 1/2)."""
        key = ("ranks", level)
        if key not in self.memo:
            ks = np.arange(1, self.n // 2 + 2)
            ok = ks[stats.binom.cdf(ks - 1, self.n, 0.5) <= (1 - level) / 2]
            self.memo[key] = int(ok.max()) if ok.size else None
        return self.memo[key]

    @cached_property
    def bimodal(self) -> bool:
        return _bimodal_signals(self)

    def without(self, rule: str) -> np.ndarray:
        lower, upper, low, high = self.flagged(rule)
        x = self.values
        return x[low.size: x.size - high.size]

    def share(self, mask) -> float:
        return float(np.count_nonzero(mask)) / self.n


# ---------------------------------------------------------------------------------- the checks


def _problem(condition: bool, message: str, problems: list[str]) -> None:
    if not condition:
        problems.append(message)


def _same(name: str, claimed, actual, raw: Raw, problems: list[str], rel: float = 1e-9) -> None:
    if not close(claimed, actual, raw.scale, rel):
        problems.append(f"{name}: claimed {claimed!r}, the values give {actual!r}")


def _about_half(count: int, n: int) -> bool:
    return 2 * count == n or abs(count - n / 2) <= HALF_SLACK * n


def check_single_value(c, raw, p):
    _problem(raw.n == 1, f"one value claimed, {raw.n} used", p)
    if raw.n == 1:
        _same("value", c["value"], raw.values[0], raw, p)


def check_all_equal(c, raw, p):
    _problem(raw.n >= 2 and raw.values.min() == raw.values.max() == c["value"],
             "not every value equals the one named", p)


def check_count(c, raw, p):
    _same("n", c["n"], raw.n, raw, p)


def check_left_out(c, raw, p):
    for name, actual in (("missing", raw.missing), ("impossible", raw.impossible), ("non_finite", raw.non_finite)):
        if name in c:
            _problem(c[name] == actual, f"{name}: claimed {c[name]}, the raw column has {actual}", p)
    if c.get("non_numeric"):
        p.append("rows of text claimed, the raw column has none")
    if "used" in c:
        _problem(c["used"] == raw.n, f"{c['used']} values used claimed, the raw column has {raw.n}", p)
        left = raw.missing + raw.impossible + raw.non_finite
        _problem(c["rows_read"] == raw.n + left, f"{c['rows_read']} rows read claimed, the raw column has "
                 f"{raw.n + left}", p)
        _problem(abs(c["share"] - left / (raw.n + left)) < 1e-12, f"share left out {c['share']} claimed", p)
    for value in c.get("impossible_values", ()):
        inside = ((raw.valid_min is None or value >= raw.valid_min)
                  and (raw.valid_max is None or value <= raw.valid_max))
        _problem(not inside, f"{value} was left out as impossible but lies inside the valid range", p)


def check_mean_value(c, raw, p):
    _same("mean", c["mean"], raw.mean, raw, p)


def check_median_value(c, raw, p):
    _same("median", c["median"], raw.median, raw, p)


def check_mean_and_median(c, raw, p):
    check_mean_value(c, raw, p)
    check_median_value(c, raw, p)


def check_values_listed(c, raw, p):
    listed, actual = list(c["values"]), sorted(raw.values.tolist())
    same = len(listed) == len(actual) and all(close(a, b, raw.scale, 1e-12) for a, b in zip(listed, actual,
                                                                                               strict=False))
    _problem(same, f"the values listed {listed} are not the values {actual}", p)


def check_median_splits(c, raw, p):
    check_median_value(c, raw, p)
    below, above = int((raw.values < raw.median).sum()), int((raw.values > raw.median).sum())
    _problem(_about_half(below, raw.n) and _about_half(above, raw.n),
             f"'half lower, half higher': {below} below and {above} above the median of {raw.n} values", p)


def check_median_with_ties(c, raw, p):
    check_median_value(c, raw, p)
    x = raw.values
    for name, mask in (("share_below", x < raw.median), ("share_at", x == raw.median), ("share_above", x > raw.median)):
        _same(name, c[name], raw.share(mask), raw, p)
        _problem(raw.share(mask) > 0, f"{name} is 0 but the sentence says some were", p)


def _check_ends_below_above(c, raw, p, *, low: bool, high: bool):
    check_median_with_ties(c, raw, p)
    x = raw.values
    if low:
        _same("min", c["min"], float(x.min()), raw, p)
        _problem(bool(np.all(x[x < raw.median] == x.min())), "a value below the median is not the lowest", p)
    if high:
        _same("max", c["max"], float(x.max()), raw, p)
        _problem(bool(np.all(x[x > raw.median] == x.max())), "a value above the median is not the highest", p)


def check_median_ties_at_min(c, raw, p):
    _check_ends_below_above(c, raw, p, low=True, high=False)


def check_median_ties_at_max(c, raw, p):
    _check_ends_below_above(c, raw, p, low=False, high=True)


def check_median_ties_at_ends(c, raw, p):
    _check_ends_below_above(c, raw, p, low=True, high=True)


def check_median_counts(c, raw, p):
    check_median_value(c, raw, p)
    x = raw.values
    _problem(c["n"] == raw.n and raw.n < 20, f"counts around the median given for {raw.n} values (n < 20)", p)
    for name, count in (("below", int((x < raw.median).sum())), ("at", int((x == raw.median).sum())),
                        ("above", int((x > raw.median).sum()))):
        _problem(c[name] == count, f"{name}: claimed {c[name]!r} values, the values give {count}", p)


def check_share_at_minimum(c, raw, p):
    x = raw.values
    _same("min", c["min"], x.min(), raw, p)
    _same("share_at_min", c["share_at_min"], raw.share(x == x.min()), raw, p)
    _same("max", c["max"], x.max(), raw, p)
    if c.get("next_low") is not None and (x > x.min()).any():
        _same("next_low", c["next_low"], x[x > x.min()].min(), raw, p)


def check_share_at_maximum(c, raw, p):
    x = raw.values
    _same("max", c["max"], x.max(), raw, p)
    _same("share_at_max", c["share_at_max"], raw.share(x == x.max()), raw, p)
    _same("min", c["min"], x.min(), raw, p)
    if c.get("next_high") is not None and (x < x.max()).any():
        _same("next_high", c["next_high"], x[x < x.max()].max(), raw, p)


def check_median_below_maximum(c, raw, p):
    # The mirror: the values below the largest, their count and median (numpy's median), a quarter or more at the
    # largest, and the largest is the declared upper bound (or valid maximum).
    x = raw.values
    below = x[x < x.max()]
    _same("maximum", c["maximum"], x.max(), raw, p)
    _problem(c["count"] == below.size, f"{c['count']} values below the largest claimed, the values give "
             f"{below.size}", p)
    if below.size:
        _same("median", c["median"], float(np.median(below)), raw, p)
    _problem(raw.share(x == x.max()) >= 0.25, "fewer than a quarter of the values equal the largest", p)
    _problem(x.max() in (raw.upper_bound, raw.valid_max), "the largest value is no declared ceiling", p)


def check_median_above_minimum(c, raw, p):
    # The values above the smallest, their count and median (numpy's median), and a quarter or more at the
    # smallest (the licence's threshold).
    x = raw.values
    above = x[x > x.min()]
    _same("minimum", c["minimum"], x.min(), raw, p)
    _problem(c["count"] == above.size, f"{c['count']} values above the smallest claimed, the values give "
             f"{above.size}", p)
    if above.size:
        _same("median", c["median"], float(np.median(above)), raw, p)
    _problem(raw.share(x == x.min()) >= 0.25, "fewer than a quarter of the values equal the smallest", p)


def check_middle_half(c, raw, p):
    q1, q3 = raw.quartiles
    _same("q1", c["q1"], q1, raw, p)
    _same("q3", c["q3"], q3, raw, p)
    share = raw.share((raw.values >= q1) & (raw.values <= q3))
    inside = int(((raw.values >= q1) & (raw.values <= q3)).sum())
    _problem(raw.n >= 8 and (2 * inside == raw.n if raw.n < 20 else abs(share - 0.5) <= MIDDLE_HALF_SLACK),
             f"'half of all values between Q1 and Q3': {share:.1%} of {raw.n}", p)


def check_count_between(c, raw, p):
    q1, q3 = raw.quartiles
    _same("q1", c["q1"], q1, raw, p)
    _same("q3", c["q3"], q3, raw, p)
    inside = int(((raw.values >= q1) & (raw.values <= q3)).sum())
    _problem(c["count"] == inside and c["n"] == raw.n,
             f"'{c['count']} of the {c['n']} between Q1 and Q3': the values give {inside} of {raw.n}", p)


def check_share_between(c, raw, p):
    _same("share", c["share"], raw.share((raw.values >= c["low"]) & (raw.values <= c["high"])), raw, p)
    q1, q3 = raw.quartiles
    _same("low", c["low"], q1, raw, p)
    _same("high", c["high"], q3, raw, p)


def check_value_range(c, raw, p):
    _same("min", c["min"], raw.values.min(), raw, p)
    _same("max", c["max"], raw.values.max(), raw, p)


def check_mean_close(c, raw, p):
    _problem(abs(raw.mean - raw.median) <= CLOSE_SHARE * raw.sd + 1e-12 * raw.scale,
             f"mean {raw.mean} is not within a tenth of an SD ({raw.sd}) of the median {raw.median}", p)
    _same("median", c["median"], raw.median, raw, p)


def _tail_high(raw: Raw) -> bool:
    return raw.g1 is not None and raw.g1 > 0 and raw.values.max() - raw.median > raw.median - raw.values.min()


def _tail_low(raw: Raw) -> bool:
    return raw.g1 is not None and raw.g1 < 0 and raw.median - raw.values.min() > raw.values.max() - raw.median


def check_mean_pulled(c, raw, p, when=()):
    _same("mean", c["mean"], raw.mean, raw, p)
    _problem(c["mean_shown"] != c["median_shown"], f"'pulls the average' but both show as {c['mean_shown']}", p)
    up = "mean_above_median_as_shown" in when
    _problem(raw.mean > raw.median if up else raw.mean < raw.median, "the mean is on the other side of the median", p)
    if c.get("cause") == "tail":
        _problem(_tail_high(raw) if up else _tail_low(raw),
                 "a long tail on that side is claimed, the values have none", p)
    if c.get("cause") == "flagged" and c.get("side") is None:
        rest = raw.without(c["rule"])
        _problem(rest.size > 0 and ((raw.mean > rest.mean()) if up else (raw.mean < rest.mean())),
                 "the flagged values do not move the mean that way", p)
        _problem(c["count"] == raw.n - rest.size, "the count of flagged values differs", p)
    elif c.get("cause") == "flagged":
        # Flagged on both sides, the sentence names one: those values alone move the mean the way it moved
        # (the mean without that side's flagged values is on the other side of the mean of all values).
        _lower, _upper, low, high = raw.flagged(c["rule"])
        _problem(low.size > 0 and high.size > 0, "one side of flagged values is named, but only one side has any", p)
        side = high if c["side"] == "high" else low
        _problem((c["side"] == "high") == up, f"the {c['side']} flagged values are said to pull the mean the other way", p)
        x = raw.values
        rest = x[: x.size - high.size] if c["side"] == "high" else x[low.size:]
        _problem(rest.size > 0 and ((raw.mean > rest.mean()) if up else (raw.mean < rest.mean())),
                 f"the {c['side']} flagged values do not move the mean that way", p)
        _problem(c["count"] == side.size, f"the count of {c['side']} flagged values differs", p)


def _bimodal_signals(raw: Raw) -> bool:
    """Two peaks a reader would see: a Gaussian KDE (scipy's gaussian_kde at the bandwidth of Silverman's rule,
    the rule the methods text names) with two local maxima each holding 5 % of the mass. (The bimodality
    coefficient alone is not enough: it exceeds 5/9 for strongly skewed data with one peak.)"""
    if raw.n < 5 or raw.sd == 0:
        return False
    q1, q3 = raw.quartiles
    spread = min(s for s in (raw.sd, (q3 - q1) / 1.34) if s > 0)
    h = 0.9 * spread * raw.n ** -0.2  # Silverman (1986), eq. 3.31, the rule the methods text names
    kde = stats.gaussian_kde(raw.values, bw_method=h / raw.sd)
    grid = np.linspace(raw.values.min() - 3 * h, raw.values.max() + 3 * h, 512)  # a peak at an end is a peak
    curve = kde(grid)
    peaks = [i for i in range(1, grid.size - 1) if curve[i] > curve[i - 1] and curve[i] >= curve[i + 1]]
    if len(peaks) < 2:
        return False
    cuts = [0] + [a + int(np.argmin(curve[a:b + 1])) for a, b in zip(peaks, peaks[1:], strict=False)] + [grid.size - 1]
    masses = [np.trapezoid(curve[a:b + 1], grid[a:b + 1]) for a, b in zip(cuts, cuts[1:], strict=False)]
    return sum(m / sum(masses) >= 0.05 for m in masses) >= 2


def _heaped(raw: Raw) -> float | None:
    """The base (10 or 5) when whole values with an IQR of 10 or more sit on its multiples at least twice as often as
    chance gives, and a one-sided binomial test (scipy.stats.binomtest) gives p < 0.001; n >= 30."""
    x = raw.values
    q1, q3 = raw.quartiles
    if raw.n < 30 or not np.all(x == np.round(x)) or q3 - q1 < 10:
        return None
    for base, chance in ((10.0, 0.1), (5.0, 0.2)):
        hits = int(np.count_nonzero(x % base == 0))
        if hits >= 2 * chance * raw.n and stats.binomtest(hits, raw.n, chance, alternative="greater").pvalue < 1e-3:
            return base
    return None


def check_heaped(c, raw, p):
    _problem(_heaped(raw) == c["base"], f"values heaped at multiples of {c['base']} claimed", p)
    if "share" in c and c["base"]:  # "Of all values, 62% were recorded as round numbers": the share said
        _same("share", c["share"], raw.share(raw.values % c["base"] == 0), raw, p)


def check_several_groups(c, raw, p):
    _problem(c.get("label") in ("bimodal", "multimodal") and raw.bimodal, "several groups claimed", p)
    _problem(_heaped(raw) is None, "groups claimed where the peaks sit on heaped round numbers", p)
    _same("mean", c["mean"], raw.mean, raw, p)


def _robust_zero(raw) -> bool:
    """The body of the data is symmetric: Bowley's skewness, the medcouple and Hinkley's skewness at
    the 5th and 95th percentiles all below 0.1 in size (the engine's documented rule)."""
    return (raw.bowley is not None and abs(raw.bowley) < 0.1 and raw.mc is not None and abs(raw.mc) < 0.1
            and (raw.tail is None or abs(raw.tail) < 0.1))


def _strength(g1: float) -> str:
    size = abs(g1)  # Bulmer (1979)
    return "slight" if size < 0.5 else "moderate" if size < 1.0 else "strong"


def check_shape_reason(c, raw, p):
    g1, bowley, mc = raw.g1, raw.bowley, raw.mc
    _same("g1", c["g1"], g1, raw, p)
    near_zero = _robust_zero(raw)
    disagree = bowley is not None and mc is not None and (bowley * g1 < 0 or mc * g1 < 0)
    _problem(g1 is not None and ((near_zero and abs(g1) >= 0.5) or disagree),
             f"G1 {g1} and the robust measures ({bowley}, {mc}) tell the same story", p)


def check_shape(c, raw, p):
    label = c["label"]
    g1 = raw.g1
    if label in ("right-skewed", "left-skewed"):
        _problem(g1 is not None and (g1 > 0) == (label == "right-skewed"), f"{label} claimed, G1 = {g1}", p)
        if g1 is not None and c.get("strength"):
            _problem(_strength(g1) == c["strength"], f"{c['strength']} skew claimed, G1 = {g1:.3f}", p)
    elif label == "symmetric":
        robust_zero = _robust_zero(raw)
        _problem(g1 is not None and (abs(g1) < 0.5 or robust_zero), f"roughly symmetric claimed, G1 = {g1}", p)
    elif label in ("bimodal", "multimodal"):
        _problem(raw.bimodal, "peaks claimed, no signal of two", p)
        _problem(_heaped(raw) is None, "groups claimed where the peaks sit on heaped round numbers", p)
    else:
        p.append(f"a shape sentence about the label {label!r}")
    _problem(raw.n >= 8, f"a shape stated for {raw.n} values", p)


def check_shape_unclear(c, raw, p):
    _problem(raw.n >= 8, "an unclear shape (not too few) for n < 8", p)


def check_too_few_for_shape(c, raw, p):
    _problem(raw.n < 8 or raw.values.min() == raw.values.max(), "too few for a shape claimed", p)


def check_no_spread(c, raw, p):
    _problem(raw.values.min() == raw.values.max(), "no spread claimed", p)


def check_skew_statistics(c, raw, p, when=()):
    _same("g1", c["g1"], raw.g1, raw, p, rel=1e-7)
    _same("g2", c["g2"], raw.g2, raw, p, rel=1e-7)
    n = raw.n
    se = math.sqrt(6 * n * (n - 1) / ((n - 2) * (n + 1) * (n + 3)))  # Joanes & Gill (1998)
    _same("se", c["se"], se, raw, p, rel=1e-7)
    if c.get("bowley") is not None:
        _same("bowley", c["bowley"], raw.bowley, raw, p, rel=1e-7)
    if c.get("medcouple") is not None and n <= 5000:
        _same("medcouple", c["medcouple"], raw.mc, raw, p, rel=1e-7)
    if "skewness_test_ran" in when:
        test = raw.skewtest
        _problem(test is not None and not raw.population, "a skewness test reported for a population or n < 8", p)
        # scipy's skewtest replaces y = 0 (a skewness of exactly 0) by 1 before the transform; its z is then
        # not the formula's, so exactly symmetric values are not compared.
        if test is not None and raw.g1 != 0:
            _same("z", c["z"], test.statistic, raw, p, rel=1e-6)
            _same("p", c["p"], test.pvalue, raw, p, rel=1e-6)


def check_peaks(c, raw, p):
    n = raw.n
    if c.get("bc") is not None and raw.g1 is not None and raw.g2 is not None:
        bc = (raw.g1**2 + 1) / (raw.g2 + 3 * (n - 1) ** 2 / ((n - 2) * (n - 3)))
        _same("bc", c["bc"], bc, raw, p, rel=1e-6)
    _problem((c.get("peaks") or 0) >= 1, "a density with no peak", p)


def check_heavy_tails(c, raw, p):
    _problem(raw.g2 is not None and raw.g2 > 1, f"heavy tails claimed, G2 = {raw.g2}", p)


def _grid_edges(raw: Raw, width: float, offset: float, whole: bool) -> np.ndarray:
    shift = (-0.5 if whole else 0.0) + offset * width
    low, high = raw.values.min(), raw.values.max()
    first = math.floor((low - shift) / width) - 1
    last = math.ceil((high - shift) / width) + 1
    return np.arange(first, last + 1) * width + shift


def check_bins(c, raw, p):
    base = c["base_width"]
    whole = c.get("integer_aligned", False)
    expected = [max(1.0, round(base * f)) if whole else base * f for f in (0.5, 1.0, 2.0)]
    if whole:  # two factors rounding to one whole width are one histogram, drawn and counted once
        expected = list(dict.fromkeys(expected))
    same = len(c["widths"]) == len(expected) and all(close(a, b) for a, b in zip(c["widths"], expected, strict=False))
    _problem(same, f"widths {c['widths']}", p)
    _problem(tuple(c["offsets"]) == (0.0, 0.25, 0.5, 0.75), f"offsets {c['offsets']}", p)
    if "grids" in c:  # "Across N histograms": one per distinct width and offset
        _problem(c["grids"] == len(expected) * 4, f"{c['grids']} histograms said, {len(expected) * 4} drawn", p)
    shares = []
    for offset in c["offsets"]:
        counts, _ = np.histogram(raw.values + 1e-9 * base, _grid_edges(raw, base, offset, whole))
        shares.append(counts.max() / raw.n)
    fullest = min(shares)
    if c.get("undecided"):
        _problem(fullest >= DOMINANT_SHARE, f"'one bin holds {DOMINANT_SHARE:.0%}': the fullest holds {fullest:.1%}", p)
    else:
        _problem(fullest < DOMINANT_SHARE + 1e-9 or c.get("sensitive") is not None,
                 f"peaks counted although one bin holds {fullest:.1%}", p)


def check_outliers_not_run(c, raw, p):
    _problem(raw.n < 5, f"no rule run for {raw.n} values", p)  # fences of quartiles need five values (our rule)


def check_outlier_rule(c, raw, p):
    rule = c.get("rule")
    if rule is None:
        return
    q1, q3 = raw.quartiles
    reason = c.get("fallback_reason")
    if reason == "medcouple_at_bound":
        _problem(c.get("fallback_from") == "adjusted" and raw.mc is not None and abs(raw.mc) >= 1 - 1e-9,
                 f"the adjusted rule called degenerate, medcouple {raw.mc}", p)
    elif reason == "quartile_at_median":
        _problem(c.get("fallback_from") == "adjusted" and raw.median in (q1, q3),
                 "the adjusted rule called driven by ties, but no quartile equals the median", p)
    elif reason == "iqr_zero":
        _problem(q3 == q1, "IQR 0 claimed", p)
    if rule == "adjusted":
        _problem(raw.mc is not None and abs(raw.mc) < 1 - 1e-9 and q3 > q1 and raw.median not in (q1, q3),
                 "a degenerate adjusted rule was used", p)
    if rule == "tukey":
        _problem(q3 > q1, "Tukey's fences used with an IQR of 0", p)
    lower, upper, _, _ = raw.flagged(rule)
    if c.get("lower") is not None or lower is not None:
        _same("lower fence", c.get("lower"), lower, raw, p, rel=1e-7)
        _same("upper fence", c.get("upper"), upper, raw, p, rel=1e-7)


def check_flagged(c, raw, p, when=()):
    check_outlier_rule(c, raw, p)
    rule = c.get("rule")
    if rule is None:
        return
    _, _, low, high = raw.flagged(rule)
    _problem((c["count_low"], c["count_high"]) == (low.size, high.size),
             f"{rule}: claimed {c['count_low']} low and {c['count_high']} high, the values give {low.size} and "
             f"{high.size}", p)
    for name, values in (("low", low), ("high", high)):
        if values.size and c.get(f"{name}_min") is not None:
            _same(f"{name}_min", c[f"{name}_min"], values.min(), raw, p)
            _same(f"{name}_max", c[f"{name}_max"], values.max(), raw, p)


def check_without_flagged(c, raw, p, when=()):
    check_flagged(c, raw, p)
    rest = raw.without(c["rule"])
    _problem(c["n_without"] == rest.size, "n without the flagged values", p)
    if rest.size:
        _same("mean_without", c["mean_without"], rest.mean(), raw, p, rel=1e-8)
        _same("median_without", c["median_without"], float(np.median(rest)), raw, p)
    if "median_unmoved_as_shown" in when:
        _problem(c["median_shown"] == c["median_without_shown"], "'stays at': the medians print differently", p)
    if "mean_unmoved_as_shown" in when:
        _problem(c["mean_shown"] == c["mean_without_shown"], "'stays at': the means print differently", p)


def _clearly_skewed(raw: Raw) -> bool:
    """G1 of at least Bulmer's moderate 0.5, not from a few far values, and D'Agostino's test at p < 0.05; for a
    whole population G1 is the population's own, and no test qualifies it (the methods text says so)."""
    if raw.g1 is None or raw.n < 8 or abs(raw.g1) < 0.5:
        return False
    robust_zero = _robust_zero(raw)
    if raw.population:
        return not robust_zero
    test = raw.skewtest
    return test is not None and test.pvalue < 0.05 and not robust_zero


def check_lead(c, raw, p, when=()):
    reasons = set(c.get("reasons", ()))
    rule = c.get("rule")
    rest = raw.without(rule) if rule else raw.values
    moves = rest.size > 1 and abs(raw.mean - rest.mean()) > MEAN_SHIFT_SHARE * float(np.std(rest, ddof=1))
    if c["lead"] == "median":
        if "skewed" in reasons:
            _problem(_clearly_skewed(raw), "'skewed' given as a reason; the values are not clearly skewed", p)
        if "several_peaks" in reasons:
            _problem(raw.bimodal, "'several peaks' given as a reason", p)
        if "outliers_move_mean" in reasons:
            _problem(moves, "'the flagged values move the mean' given as a reason", p)
    else:
        _problem(not _clearly_skewed(raw) or c.get("label") in ("bimodal", "multimodal"),
                 "'not clearly skewed' said of clearly skewed values", p)
        if "leads_with_mean" not in when:  # the methods sentence states the rule, not these details
            return
        if "any_flagged" in when:
            _problem(not moves, "'the flagged values do not move the mean much' but they do", p)
        if "outliers_ran" in when and "any_flagged" not in when:
            _problem(rule is not None and raw.n - rest.size == 0, "'no value was flagged' but some are", p)
        if "outliers_ran" not in when and "any_flagged" not in when:
            _problem(raw.n < 5, "'no outlier rule was run' for 5 values or more", p)


def check_lead_without(c, raw, p):
    _problem(c.get("lead_without") in ("mean", "median"), "no lead measure without the flagged values", p)


def check_influential(c, raw, p):
    distance = np.abs(raw.values - raw.mean)
    _problem(close(abs(c["value"] - raw.mean), distance.max(), raw.scale), "not the value farthest from the mean", p)
    _same("shift", c["shift"], (raw.mean - c["value"]) / (raw.n - 1), raw, p, rel=1e-8)


def check_mean_pull(c, raw, p, when=()):
    gap = raw.mean - raw.median
    _problem(abs(gap) > CLOSE_SHARE * raw.sd and (gap > 0) == (c["direction"] == "higher"),
             f"mean {c['direction']} than the median by more than a tenth of an SD: gap {gap}, SD {raw.sd}", p)
    if "long_tail_high" in when:
        _problem(_tail_high(raw), "a long tail of high values claimed", p)
    if "long_tail_low" in when:
        _problem(_tail_low(raw), "a long tail of low values claimed", p)


def check_summary(c, raw, p):
    q1, q3 = raw.quartiles
    for name, actual in (("median", raw.median), ("q1", q1), ("q3", q3), ("mean", raw.mean), ("sd", raw.sd)):
        _same(name, c[name], actual, raw, p, rel=1e-9 if name != "sd" else 1e-8)


def check_intervals(c, raw, p):
    _problem(not raw.population, "intervals reported for a whole population", p)
    n = raw.n
    if c.get("median_method") == "order-statistic":
        # Conover (1999): the largest k with P(B <= k - 1) <= 0.025, B ~ Binomial(n, 1/2); [x_(k), x_(n-k+1)].
        k = raw.median_ranks(c["level"])
        _same("median_low", c["median_low"], raw.values[k - 1], raw, p)
        _same("median_high", c["median_high"], raw.values[n - k], raw, p)
        _same("coverage", c["median_coverage"], 1 - 2 * stats.binom.cdf(k - 1, n, 0.5), raw, p, rel=1e-9)
    if c.get("mean_method") is None:
        return
    if c.get("mean_method") == "t":
        half = stats.t.ppf((1 + c["level"]) / 2, n - 1) * raw.sd / math.sqrt(n)  # Student (1908)
        _same("mean_low", c["mean_low"], raw.mean - half, raw, p, rel=1e-8)
        _same("mean_high", c["mean_high"], raw.mean + half, raw, p, rel=1e-8)
    else:
        _problem(raw.values.min() <= c["mean_low"] < c["mean_high"] <= raw.values.max(), "bootstrap interval", p)


def check_no_intervals(c, raw, p):
    if c.get("reason") == "population" or c.get("population"):
        _problem(raw.population, "'the whole population' said of a sample", p)
    else:
        _problem(raw.n < 2 or raw.values.min() == raw.values.max(), "no interval, yet the values allow one", p)


def check_population(c, raw, p):
    _problem(raw.population, "the rows were not declared a population", p)


def _is_code(raw: Raw, value: float, count: int) -> bool:
    x = raw.values
    others = x[x != value]
    if value not in CODE_VALUES or count < 2 or others.size < 4:
        return False
    q1, q3 = np.quantile(others, [0.25, 0.75])
    spread = (q3 - q1) or float(np.std(others)) or 1.0
    if q1 - 3 * spread <= value <= q3 + 3 * spread:
        return False
    near = others[np.abs(others - value) <= 0.5 * spread]  # a spike against its neighbours
    typical = near.size / max(1, np.unique(near).size)
    return count >= 2 * max(1.0, typical)


def check_missing_code_suspected(c, raw, p):
    count = int((raw.values == c["value"]).sum())
    _problem(c["count"] == count, f"the code {c['value']} appears {count} times, {c['count']} claimed", p)
    _problem(_is_code(raw, c["value"], count), f"{c['value']} is not a repeated, far-off code", p)


def check_at_bound(c, raw, p):
    value = c["value"]
    _problem(value in (raw.lower_bound, raw.valid_min, raw.upper_bound, raw.valid_max),
             f"{value} called the lowest or highest possible value; it is no declared bound", p)
    _same("share", c["share"], raw.share(raw.values == value), raw, p)


def check_quality(c, raw, p, when=()):
    code = c.get("code")
    x = raw.values
    if code == "missing":
        _problem(c["count"] == raw.missing, f"missing: {c['count']} claimed, {raw.missing} in the raw column", p)
    elif code == "impossible":
        _problem(c["count"] == raw.impossible, "impossible count", p)
    elif code == "non_finite":
        _problem(c["count"] == raw.non_finite, "non-finite count", p)
    elif code == "constant":
        _problem(x.min() == x.max() == c["value"], "constant", p)
    elif code == "floor":
        _problem(c["value"] == x.min() and c["count"] == int((x == x.min()).sum()), "floor count", p)
        if "minimum_is_bound" in when:
            check_at_bound({"value": c["value"], "share": c["count"] / raw.n}, raw, p)
    elif code == "ceiling":
        _problem(c["value"] == x.max() and c["count"] == int((x == x.max()).sum()), "ceiling count", p)
        if "maximum_is_bound" in when:
            check_at_bound({"value": c["value"], "share": c["count"] / raw.n}, raw, p)
    elif code == "many_ties":
        _problem(c["count"] == int((x == c["value"]).sum()) and c["count"] / raw.n >= 0.2, "many ties", p)
    elif code == "few_distinct":
        _problem(c["count"] == np.unique(x).size <= 10, "few distinct", p)
    elif code == "heaping":
        base = c["detail"]["base"]
        hits = int(np.count_nonzero(np.isclose(x / base, np.round(x / base), rtol=0, atol=1e-9)))
        _problem(hits == c["count"], f"heaping at {base}: {hits} values, {c['count']} claimed", p)
    elif code == "too_few_for_shape":
        _problem(raw.n < 8, "too few for shape", p)
    elif code == "small_sample":
        _problem(8 <= raw.n < 20, "small sample", p)
    elif code == "missing_code":
        check_missing_code_suspected({"value": c["value"], "count": c["count"]}, raw, p)
    elif code == "other_convention":
        # Each text named must be a number written with the other decimal mark: digits, that mark, digits (with the
        # declared mark, if any, only between groups of three). Written out here, apart from narrator's parser.
        comma = not c["detail"].get("decimal_comma")
        pattern = r"[+-]?\d{1,3}(\.\d{3})*,\d+|[+-]?\d+,\d+" if comma else r"[+-]?\d{1,3}(,\d{3})*\.\d+|[+-]?\d+\.\d+"
        _problem(bool(c["texts"]) and all(re.fullmatch(pattern, text.strip()) for text in c["texts"]),
                 f"texts {c['texts']} are not numbers with the other decimal mark", p)
        if "non_numeric" in c:
            _problem(0 < c["count"] <= c["non_numeric"], "more cells of the other convention than cells of text", p)


def _nice(raw_width: float, whole: bool) -> float:
    """The nice width: 1, 2, 2.5 or 5 times a power of ten nearest on a log scale (whole: 1, 2, 5), ties wider."""
    multipliers = (1.0, 2.0, 5.0, 10.0) if whole else (1.0, 2.0, 2.5, 5.0, 10.0)
    exponent = math.floor(math.log10(raw_width))
    candidates = [m * 10.0**k for k in (exponent - 1, exponent, exponent + 1) for m in multipliers]
    if whole:
        candidates = [c for c in candidates if c >= 1] or [1.0]
    return min(candidates, key=lambda c: (round(abs(math.log(c) - math.log(raw_width)), 12), -c))


def _aligned_bins(x: np.ndarray, width: float, whole: bool) -> int:
    """Bins of ``width`` with edges on its multiples (half-integers for whole numbers) that reach every value."""
    shift = -0.5 if whole else 0.0
    return int(math.floor((x.max() - shift) / width) - math.floor((x.min() - shift) / width) + 1)


def check_histogram_rule(c, raw, p):
    x = raw.values
    q1, q3 = raw.quartiles
    n = raw.n
    whole = c["integer_aligned"]
    if c["rule"] == "freedman-diaconis":
        expected_raw = 2 * (q3 - q1) * n ** (-1 / 3)  # Freedman & Diaconis (1981)
    elif c["rule"] == "scott":
        expected_raw = 3.49 * raw.sd * n ** (-1 / 3)
    else:
        expected_raw = c["raw_width"]
    _same("raw width", c["raw_width"], expected_raw, raw, p, rel=1e-3)
    note = c.get("note")
    if c["rule"] == "scott" and c.get("note") != "iqr_zero_used_scott":
        pass
    if c["rule"] == "scott" and note == "iqr_zero_used_scott":
        _problem(q3 == q1, "Scott used because the IQR is 0: it is not", p)
    nice = _nice(expected_raw, whole) if expected_raw > 0 else c["width"]
    if note is None:
        _problem(close(c["width"], nice, rel=1e-9), f"width {c['width']} is not the rule's {expected_raw:g} rounded", p)
        _problem((x.max() - x.min()) / c["width"] <= BIN_CAP + 2, "more bins than the cap", p)
    elif note == "bin_cap":
        _problem(_aligned_bins(x, nice, whole) > BIN_CAP and c["width"] >= nice, "a cap that did not bind", p)
    if c.get("focus_width") is not None:
        _problem(c["focus_width"] <= c["width"] + 1e-12, "the focused bins are wider than the full plan's", p)


def check_density_rule(c, raw, p):
    if c["rule"] != "silverman":
        return
    q1, q3 = raw.quartiles
    spread = min(s for s in (raw.sd, (q3 - q1) / 1.34) if s > 0) if raw.sd > 0 else 0
    silverman = 0.9 * spread * raw.n ** -0.2  # Silverman (1986), eq. 3.31
    floor = (raw.values.max() - raw.values.min()) / c["floor_divisor"]
    if c.get("note") == "bandwidth_floor":
        _same("bandwidth", c["bandwidth"], floor, raw, p, rel=1e-6)
        _problem(silverman < floor, "a floor that did not bind", p)
    elif c.get("note") is None:
        _same("bandwidth", c["bandwidth"], silverman, raw, p, rel=1e-6)


def check_figure(c, raw, p):
    for name, actual in (("n", raw.n), ("min", raw.values.min()), ("max", raw.values.max()),
                         ("median", raw.median), ("mean", raw.mean)):
        _same(name, c[name], actual, raw, p, rel=1e-9)
    if c["figure"] == "histogram":
        edges = np.asarray(c["edges"])
        width = c["width"]
        x = raw.values
        tolerance = 1e-7 * width
        index = np.searchsorted(edges, x + tolerance, side="right") - 1
        last = edges.size - 2
        index[(index == last + 1) & (x <= edges[-1] + tolerance)] = last  # the last bin is closed
        inside = (index >= 0) & (index <= last)
        counts = np.bincount(index[inside], minlength=last + 1)
        _problem(tuple(int(v) for v in counts) == tuple(c["counts"]), "the bars' counts are not the values'", p)
        _problem(int((index < 0).sum()) == c["below"] and int((index > last).sum()) == c["above"],
                 "values beyond the drawn bins", p)
        if "hidden_high" in c:
            _problem(int((x > c["window_high"]).sum()) == c["hidden_high"], "values beyond the axis", p)
    if c["figure"] == "with_without":
        check_without_flagged({**c, "n_without": raw.n - c["flagged_count"]}, raw, p)


def check_groups_compared(c, raw_groups, p):
    for label, value in c["groups"].items():
        group = raw_groups[label]
        actual = group.median if c["measure"] == "median" else group.mean
        _same(f"{label} {c['measure']}", value, actual, group, p)
    if "high" in c:
        values = {label: (g.median if c["measure"] == "median" else g.mean) for label, g in raw_groups.items()
                  if label in c["groups"]}
        _problem(values[c["high"]] == max(values.values()) and values[c["low"]] == min(values.values()),
                 "highest and lowest groups", p)


def _group_interval(group: Raw, measure: str) -> tuple[float, float] | None:
    n = group.n
    if n < 2 or group.sd == 0:
        return None
    if measure == "median":
        k = group.median_ranks(0.95)
        if k is None:
            return None
        return float(group.values[k - 1]), float(group.values[n - k])
    return None  # the mean's interval may be a bootstrap: not re-derived here


def check_groups_intervals(c, raw_groups, p):
    if c["measure"] != "median":
        return
    low, high = _group_interval(raw_groups[c["low"]], "median"), _group_interval(raw_groups[c["high"]], "median")
    if low is not None and high is not None:
        overlap = low[0] <= high[1] and high[0] <= low[1]
        _problem(overlap == c["overlap"], "the groups' intervals overlap (or not) otherwise", p)


def check_groups_same(c, raw_groups, p):
    _problem(len(set(c["shown"].values())) == 1, "'about the same' but the groups print differently", p)


def check_change_count(c, pair, p):
    old, new = pair
    _problem((c["old_n"], c["new_n"]) == (old.n, new.n), "the counts of the two builds", p)


def check_change_none(c, pair, p):
    # "Nothing changed": the same count, center and spread, recomputed from both builds' raw values with numpy.
    old, new = pair
    check_change_count(c, pair, p)
    check_change_center(c, pair, p)
    _problem(close(old.quartiles[0], new.quartiles[0], old.scale) and close(old.quartiles[1], new.quartiles[1],
                                                                                 old.scale)
             and (old.n < 2 or close(old.sd, new.sd, old.scale)), "'the same spread' but it changed", p)


def check_change_center(c, pair, p, when=()):
    old, new = pair
    measure = c["measure"]
    values = [(r.median if measure == "median" else r.mean) for r in pair]
    _same("old", c["old"], values[0], old, p)
    _same("new", c["new"], values[1], new, p)
    if c.get("low") is not None:
        # Schenker & Gentleman (2001): the difference's interval excludes 0 exactly when a change is claimed.
        difference = values[1] - values[0]
        _problem(close(c["low"] + c["high"], 2 * difference, old.scale), "the difference interval is not centred", p)
        excludes = c["low"] > 0 or c["high"] < 0
        if "center_rose" in when:
            _problem(excludes and difference > 0, "'rose' with an interval that includes 0", p)
        if "center_fell" in when:
            _problem(excludes and difference < 0, "'fell' with an interval that includes 0", p)
        if "center_within_uncertainty" in when:
            _problem(not excludes, "'within the uncertainty' with an interval that excludes 0", p)
    if "center_same_as_shown" in when:
        _problem(c["old_shown"] == c["new_shown"], "'unchanged' but the numbers print differently", p)


def check_change_spread(c, pair, p, when=()):
    old, new = pair
    for name, r in (("old", old), ("new", new)):
        q1, q3 = r.quartiles
        _same(f"{name}_q1", c[f"{name}_q1"], q1, r, p)
        _same(f"{name}_q3", c[f"{name}_q3"], q3, r, p)
    key = c["measure"]
    widths = [(r.quartiles[1] - r.quartiles[0]) if key == "spread.iqr" else r.sd for r in pair]
    grew = widths[1] > widths[0] * 1.1
    shrank = widths[1] < widths[0] * 0.9
    _problem(grew if "spread_wider" in when else shrank, f"spread {widths[0]} -> {widths[1]}", p)


def check_change_flagged(c, pair, p, when=()):
    _problem(c["old"] != c["new"], "a change in flagged values that did not change", p)
    if "fences_moved" in when:
        _problem(c["old_fences"] != c["new_fences"], "'the fences moved' but they did not", p)


# ----------------------------------------------------------------------- the memo's messages
# Group differences: the Hodges-Lehmann shift is the median of all m n differences second - first
# (Hodges & Lehmann 1963); its interval's limits are the k-th smallest and k-th largest differences,
# k from the Mann-Whitney null distribution (Hollander, Wolfe & Chicken 2014, ch. 4), checked here
# against the normal approximation with continuity correction (exact for small groups differs by
# a rank or two); the size is judged against the pooled IQR / 1.349 (0.2 and 0.5 of it, Cohen 1988,
# plus half the unit the values are recorded in, as the methods text states it).

NORMAL_IQR = 1.349  # IQR of the standard normal (scipy.stats.norm.ppf(0.75) * 2 = 1.3490)
RANK_SLACK = 2
EXACT_PAIRS = 40_000  # up to this many pairs the rank is checked against scipy's exact Mann-Whitney test


def _u_cdf(k: int, m: int, n: int) -> float:
    """P(U <= k) for the Mann-Whitney count U of m and n values under no difference, from scipy's exact test:
    n values placed among m so that exactly k pairs have the second above the first."""
    if k < 0:
        return 0.0
    if k >= m * n:
        return 1.0
    x = np.arange(m, dtype=float)
    counts, left = [], k
    for _ in range(n):
        take = min(m, left)
        counts.append(take)
        left -= take
    y = np.asarray(counts, dtype=float) - 0.5
    return float(stats.mannwhitneyu(y, x, alternative="less", method="exact").pvalue)


def _recorded_decimals(values: np.ndarray) -> int:
    for decimals in range(7):
        scaled = values * 10.0**decimals
        if np.all(np.abs(scaled - np.round(scaled)) < 1e-6 * np.maximum(1.0, np.abs(scaled))):
            return decimals
    return 6


def _pooled_values(raw_groups, labels) -> np.ndarray:
    return np.sort(np.concatenate([raw_groups[label].values for label in labels]))


def _robust_spread(values: np.ndarray) -> tuple[float, float]:
    q1, q3 = np.quantile(values, [0.25, 0.75])
    return float(q3 - q1) / NORMAL_IQR, float(np.std(values, ddof=1)) if values.size > 1 else 0.0


def _pooled_scale(x: np.ndarray, y: np.ndarray) -> float:
    (rx, sx), (ry, sy) = _robust_spread(x), _robust_spread(y)
    if rx == 0 and ry == 0:
        rx, ry = sx, sy
    return math.sqrt(((x.size - 1) * rx**2 + (y.size - 1) * ry**2) / (x.size + y.size - 2))


def _shift_facts(raw_groups, first, second):
    x, y = _pooled_values(raw_groups, first), _pooled_values(raw_groups, second)
    differences = np.sort((y[None, :] - x[:, None]).ravel())
    half = 0.5 * 10.0 ** -max(_recorded_decimals(x), _recorded_decimals(y))
    return x, y, differences, _pooled_scale(x, y), half


def _verdict(shift, low, high, scale, half) -> str:
    if scale <= 0:
        return ""  # no spread: not re-derived here
    small = abs(shift) <= 0.2 * scale + half + 1e-9 * max(1.0, scale)
    if low is None:
        return "alike" if small else "different"
    if low > 0 or high < 0:
        return "slightly_different" if small else "different"
    inside = max(abs(low), abs(high)) <= 0.5 * scale + half + 1e-9 * max(1.0, scale)
    return "alike" if small and inside else "unclear"


def check_group_shift(c, raw_groups, p):
    x, y, d, scale, half = _shift_facts(raw_groups, c["first"], c["second"])
    _same("shift", c["shift"], float(np.median(d)), Raw(d), p)
    m, n = x.size, y.size
    if c.get("low") is not None:
        k1, k2 = c["ranks"]
        _problem(k2 == m * n + 1 - k1, f"the interval's ranks {k1}, {k2} are not symmetric", p)
        _problem(d[k1 - 1] == c["low"] and d[k2 - 1] == c["high"], "the interval's limits are not those order "
                 "statistics of the differences", p)
        alpha = 1 - c["level"]
        if c.get("rank_method") == "exact" and m * n <= EXACT_PAIRS:
            # k is the largest rank with P(U <= k - 1) <= alpha / 2 under no difference (scipy's exact test)
            _problem(_u_cdf(k1 - 1, m, n) <= alpha / 2 + 1e-12 < _u_cdf(k1, m, n) + 1e-12,
                     f"rank {k1} is not the Mann-Whitney rank for level {c['level']}", p)
        else:
            z = stats.norm.ppf(1 - alpha / 2)
            k_normal = math.floor(m * n / 2 - z * math.sqrt(m * n * (m + n + 1) / 12) + 0.5)
            _problem(abs(k1 - k_normal) <= RANK_SLACK, f"rank {k1} far from the Mann-Whitney rank {k_normal}", p)
        _problem(c["low"] <= c["shift"] <= c["high"], "the shift lies outside its interval", p)
    verdict = _verdict(c["shift"], c.get("low"), c.get("high"), scale, half)
    if verdict:
        _problem(verdict == c["verdict"], f"verdict {c['verdict']!r}, the values give {verdict!r}", p)
    if c["verdict"] in ("different", "slightly_different"):
        _problem((c["shift"] > 0) == (c["direction"] == "higher"), "the direction of the difference", p)


def _check_pairs(c, raw_groups, p, allowed: tuple[str, ...]):
    limits = []
    for first, second, shift, low, high, *_ in c["pairs"]:
        x, y, d, scale, half = _shift_facts(raw_groups, [first], [second])
        _same(f"{first}-{second} shift", shift, float(np.median(d)), Raw(d), p)
        verdict = _verdict(shift, low, high, scale, half)
        if verdict:
            _problem(verdict in allowed, f"{first} and {second}: {verdict}, not {allowed}", p)
        limits += [abs(value) for value in (low, high) if value is not None]
    if c.get("bound") is not None and limits:
        _same("bound", c["bound"], max(limits), Raw(np.asarray(limits)), p)
    elif c.get("bound") is not None:  # a whole population: the largest typical difference itself
        shifts = [abs(shift) for _first, _second, shift, *_ in c["pairs"] if shift is not None]
        _problem(bool(shifts), "a bound with neither limits nor shifts", p)
        if shifts:
            _same("bound", c["bound"], max(shifts), Raw(np.asarray(shifts)), p)


def check_groups_alike(c, raw_groups, p):
    _check_pairs(c, raw_groups, p, ("alike",))


def check_groups_unclear(c, raw_groups, p):
    _check_pairs(c, raw_groups, p, ("alike", "unclear", "slightly_different"))


def check_clusters(c, raw, p):
    x = raw.values
    total = 0
    previous_high = -math.inf
    for (share, median, low, high), tenths in zip(c["parts"], c["tenths"], strict=True):
        inside = x[(x >= low) & (x <= high)]
        total += inside.size
        _problem(inside.size > 0 and low > previous_high, f"cluster {low} to {high} is empty or overlaps", p)
        previous_high = high
        _same(f"share of {low} to {high}", share, inside.size / raw.n, raw, p)
        if inside.size:
            _same(f"median of {low} to {high}", median, float(np.median(inside)), raw, p)
        _problem(abs(share - tenths / 10) <= 0.05 + 1e-9, f"{tenths} in 10 for a share of {share}", p)
    _problem(total == raw.n, "the clusters do not hold every value", p)


def check_clusters_separated(c, raw, p):
    # The category column is not part of the raw values; its agreement is checked by the engine's tests
    # (tests/engine/test_separation.py). Here: the counts it names fit the values.
    _problem(sum(count for _, _, count in c["categories"]) <= raw.n and (c["agreement"] or 0) > 0.5,
             "the categories do not fit the values", p)


def _far_fences(raw: Raw, rule: str | None):
    if rule != "tukey":
        return None
    q1, q3 = raw.quartiles
    return q1 - 3 * (q3 - q1), q3 + 3 * (q3 - q1)


def _check_far(c, raw, p):
    fences = _far_fences(raw, c.get("rule"))
    if fences is not None and c.get("far_lower") is not None:
        _same("far lower fence", c["far_lower"], fences[0], raw, p)
        _same("far upper fence", c["far_upper"], fences[1], raw, p)


def _beyond(c, raw, value) -> bool:
    """Beyond the far fences; a rule without a far band (the ESD test): flagged by the rule itself."""
    if c.get("far_lower") is None or c.get("far_upper") is None:
        _, _, low, high = raw.flagged(c["rule"])
        return bool(np.isin(value, low) or np.isin(value, high))
    return value < c["far_lower"] or value > c["far_upper"]


def check_stand_out(c, raw, p):
    _check_far(c, raw, p)
    for value in c["values"]:
        _problem(bool(np.isin(value, raw.values)), f"{value} is not among the values", p)
        _problem(_beyond(c, raw, value), f"{value} lies inside the far fences", p)


def check_stand_out_none(c, raw, p):
    _check_far(c, raw, p)
    if c.get("far_lower") is None or c.get("far_upper") is None:
        return
    beyond = int(((raw.values < c["far_lower"]) | (raw.values > c["far_upper"])).sum())
    _problem(beyond == c["count_far_out"], f"{beyond} values beyond the far fences, not {c['count_far_out']}", p)


def _quartile_shape(raw: Raw, name: str):
    """The normal or lognormal distribution (scipy.stats) whose quartiles are the data's (type 7, numpy)."""
    q1, q3 = raw.quartiles
    z75 = stats.norm.ppf(0.75)
    if name == "lognormal":
        return stats.lognorm(s=(math.log(q3) - math.log(q1)) / (2 * z75), scale=math.sqrt(q1 * q3))
    return stats.norm(loc=(q1 + q3) / 2, scale=(q3 - q1) / (2 * z75))


def check_stand_out_excess(c, raw, p):
    _, _, low, high = raw.flagged(c["rule"])
    _problem(low.size + high.size == c["count"], f"{low.size + high.size} beyond the fences, not {c['count']}", p)
    _problem(c["count"] > (c["expected"] or 0), "no more values beyond the fences than expected", p)
    # "Than usual in data of this shape": the shape matched to the quartiles must follow the data's ends. An end
    # value that holds at least 5 % of all the values more than the shape gives one recording step there, with
    # p < 0.001 (one-sided binomial), is a spike it cannot follow, and its expected count says nothing about these
    # data (the engine's rule, re-derived here with scipy.stats.norm / lognorm and scipy.stats.binom).
    x = raw.values
    shape = _quartile_shape(raw, c["fitted_shape"])
    half_step = 0.5 * 10.0 ** -c["decimals"]
    for end in (x.min(), x.max()):
        count = int((x == end).sum())
        held = float(np.clip(shape.cdf(end + half_step) - shape.cdf(end - half_step), 0.0, 1.0))
        spike = count / raw.n - held >= 0.05 and stats.binom.sf(count - 1, raw.n, held) < 0.001
        _problem(not spike, f"{count} values at {end}: the {c['fitted_shape']} shape gives it {held:.3f}", p)
    expected = raw.n * (shape.cdf(c["lower"]) + shape.sf(c["upper"]))
    _same("expected count beyond the fences", c["expected"], expected, raw, p, rel=1e-6)


def check_shared_far(c, raw, p):
    # A value that 5 % of the values or more hold (3 at least), beyond the far-out fences on the side said.
    x = raw.values
    count = int((x == c["value"]).sum())
    _problem(c["count"] == count, f"{c['value']} held by {c['count']} values claimed, the values give {count}", p)
    _problem(count >= 3 and count >= 0.05 * raw.n, f"{c['value']} is held by {count} of {raw.n} values: not 5 %", p)
    beyond = c["value"] > c["far_upper"] if c["side"] == "high" else c["value"] < c["far_lower"]
    _problem(bool(beyond), f"{c['value']} is not beyond the far-out fence on the {c['side']} side", p)


def check_entry_error(c, raw, p):
    # "Probably a typing error": the decimal point moved 1 to 3 places lands the value in the middle half
    # (type 7 quartiles, numpy), a digit shift of a typical value; a value ten times the median is not enough.
    median = raw.median
    q1, q3 = np.quantile(raw.values, [0.25, 0.75])
    for value, _row in c["errors"]:
        _problem(bool(np.isin(value, raw.values)), f"{value} is not among the values", p)
        shifted = any(q1 <= value / 10.0**k <= q3 or q1 <= value * 10.0**k <= q3 for k in (1, 2, 3))
        _problem(median > 0 and value > 0 and shifted, f"{value} is no digit shift of a typical value "
                 f"(middle half {q1} to {q3})", p)


def check_entry_error_possible(c, raw, p):
    _check_far(c, raw, p)
    for value, _row in c["errors"]:
        _problem(bool(np.isin(value, raw.values)), f"{value} is not among the values", p)
        _problem(_beyond(c, raw, value), f"{value} lies inside the far fences", p)


def check_concentration(c, raw, p):
    x = np.sort(raw.values)[::-1]
    total = math.fsum(x)
    _same("total", c["total"], total, raw, p)
    _problem(c["top_count"] == math.ceil(raw.n / 100) and c["tenth_count"] == math.ceil(raw.n / 10),
             "the counts of the largest 1 % and 10 %", p)
    if total > 0:
        _same("share of the largest 1 %", c["top_share"], math.fsum(x[:c["top_count"]]) / total, raw, p, rel=1e-6)
        _same("share of the largest 10 %", c["tenth_share"], math.fsum(x[:c["tenth_count"]]) / total, raw, p,
              rel=1e-6)


def _money_concentrated(raw: Raw, c) -> bool:
    x = np.sort(raw.values)[::-1]
    total = math.fsum(x)
    if total <= 0:
        return False
    return (math.fsum(x[:math.ceil(raw.n / 100)]) / total >= 0.2 - 1e-12
            or math.fsum(x[:math.ceil(raw.n / 10)]) / total >= 0.5 - 1e-12)


CHECKS = {
    "single_value": check_single_value, "all_equal": check_all_equal, "count": check_count,
    "left_out": check_left_out, "mean_value": check_mean_value, "median_value": check_median_value,
    "mean_and_median": check_mean_and_median, "values_listed": check_values_listed,
    "median_splits": check_median_splits, "median_with_ties": check_median_with_ties,
    "median_ties_at_min": check_median_ties_at_min, "median_ties_at_max": check_median_ties_at_max,
    "median_ties_at_ends": check_median_ties_at_ends,
    "median_counts": check_median_counts, "count_between": check_count_between,
    "share_at_minimum": check_share_at_minimum, "share_at_maximum": check_share_at_maximum,
    "middle_half": check_middle_half, "share_between": check_share_between, "value_range": check_value_range,
    "mean_close": check_mean_close, "mean_pulled": check_mean_pulled, "several_groups": check_several_groups,
    "shape": check_shape, "shape_reason": check_shape_reason, "heaped": check_heaped,
    "shape_unclear": check_shape_unclear,
    "too_few_for_shape": check_too_few_for_shape, "no_spread": check_no_spread,
    "skew_statistics": check_skew_statistics, "peaks": check_peaks, "heavy_tails": check_heavy_tails,
    "bins": check_bins, "outliers_not_run": check_outliers_not_run, "outlier_rule": check_outlier_rule,
    "flagged": check_flagged, "without_flagged": check_without_flagged, "lead": check_lead,
    "lead_without": check_lead_without, "influential": check_influential, "mean_pull": check_mean_pull,
    "summary": check_summary, "intervals": check_intervals, "no_intervals": check_no_intervals,
    "population": check_population, "quality": check_quality,
    "missing_code_suspected": check_missing_code_suspected, "at_bound": check_at_bound,
    "method": lambda c, raw, p: None, "histogram_rule": check_histogram_rule, "density_rule": check_density_rule,
    "figure": check_figure, "caution": lambda c, raw, p: None, "note": lambda c, raw, p: None,
    "clusters": check_clusters, "clusters_separated": check_clusters_separated, "stand_out": check_stand_out,
    "stand_out_none": check_stand_out_none, "stand_out_excess": check_stand_out_excess,
    "entry_error": check_entry_error, "entry_error_possible": check_entry_error_possible,
    "concentration": check_concentration, "median_above_minimum": check_median_above_minimum,
    "median_below_maximum": check_median_below_maximum,
    "shared_far": check_shared_far,
}
GROUP_CHECKS = {"groups_compared": check_groups_compared, "groups_intervals": check_groups_intervals,
                "groups_same": check_groups_same, "group_shift": check_group_shift,
                "groups_alike": check_groups_alike, "groups_unclear": check_groups_unclear}
CHANGE_CHECKS = {"change_count": check_change_count, "change_none": check_change_none, "change_center": check_change_center,
                 "change_spread": check_change_spread, "change_flagged": check_change_flagged,
                 "change_other": lambda c, pair, p: None, "groups_moved": lambda c, pair, p: None}
TAKES_WHEN = {check_mean_pulled, check_skew_statistics, check_flagged, check_without_flagged, check_lead,
              check_mean_pull, check_quality, check_change_center, check_change_spread, check_change_flagged}


# Licences whose facts the checker re-derives on its own (engine judgements such as the hedge level are not).
def _flag_count(raw: Raw, rule: str | None) -> int | None:
    if rule is None:
        return None
    _, _, low, high = raw.flagged(rule)
    return low.size + high.size


LICENCE_CHECKS = {
    "n_is_one": lambda raw, c: raw.n == 1,
    "n_is_two": lambda raw, c: raw.n == 2,
    "several_values": lambda raw, c: raw.n >= 2,
    "has_spread": lambda raw, c: raw.n >= 2 and raw.values.min() < raw.values.max(),
    "all_equal": lambda raw, c: raw.n >= 2 and raw.values.min() == raw.values.max(),
    "most_at_minimum": lambda raw, c: raw.share(raw.values == raw.values.min()) >= 0.5,
    "most_at_maximum": lambda raw, c: raw.share(raw.values == raw.values.max()) >= 0.5,
    "many_at_minimum": lambda raw, c: raw.share(raw.values == raw.values.min()) >= 0.25,
    "many_at_maximum": lambda raw, c: raw.share(raw.values == raw.values.max()) >= 0.25,
    "minimum_is_bound": lambda raw, c: raw.values.min() in (raw.lower_bound, raw.valid_min),
    "maximum_is_bound": lambda raw, c: raw.values.max() in (raw.upper_bound, raw.valid_max),
    "median_splits_values": lambda raw, c: _about_half(int((raw.values < raw.median).sum()), raw.n)
    and _about_half(int((raw.values > raw.median).sum()), raw.n),
    "too_few_for_quartiles": lambda raw, c: raw.n < 8,
    "most_in_lower_half": lambda raw, c: raw.median < (raw.values.min() + raw.values.max()) / 2,
    "most_in_upper_half": lambda raw, c: raw.median > (raw.values.min() + raw.values.max()) / 2,
    "quartiles_apart": lambda raw, c: raw.quartiles[1] > raw.quartiles[0],
    "fewer_than_20": lambda raw, c: 0 < raw.n < 20,
    "rows_are_population": lambda raw, c: raw.population,
    "estimating_allowed": lambda raw, c: not raw.population,
    "outliers_not_run": lambda raw, c: raw.n < 5,
    "none_flagged": lambda raw, c: _flag_count(raw, c.get("rule")) in (0, None),
    "any_flagged": lambda raw, c: c.get("rule") is None or (_flag_count(raw, c.get("rule")) or 0) > 0,
    "tails_heavy": lambda raw, c: raw.g2 is not None and raw.g2 > 1,
    "intervals_computed": lambda raw, c: not raw.population and raw.n >= 2 and raw.values.min() < raw.values.max(),
    "skewness_test_ran": lambda raw, c: raw.n >= 8 and not raw.population,
    "money_concentrated": _money_concentrated,
}


def check_claim(claim, raw: Raw | None, groups: dict | None = None, pair: tuple | None = None) -> list[str]:
    """Problems with one claim (empty when it holds); ``raw`` the values it is about, ``groups`` raw values by
    group label (group comparisons), ``pair`` the old and new raw values (changes)."""
    problems: list[str] = []
    kind = claim.kind
    when = tuple(claim.when)
    if kind in GROUP_CHECKS:
        GROUP_CHECKS[kind](claim.numbers, groups, problems)
        return problems
    if kind in CHANGE_CHECKS:
        check = CHANGE_CHECKS[kind]
        if check in TAKES_WHEN:
            check(claim.numbers, pair, problems, when)
        else:
            check(claim.numbers, pair, problems)
        return problems
    if kind not in CHECKS:
        return [f"the checker does not know the claim kind {kind!r}"]
    if raw is None or (raw.n == 0 and kind not in ("count", "caution", "note", "left_out")):
        return problems
    check = CHECKS[kind]
    if check in TAKES_WHEN:
        check(claim.numbers, raw, problems, when)
    else:
        check(claim.numbers, raw, problems)
    if raw.n:
        for condition in when:
            negated = condition.startswith("not ")
            name = condition[4:] if negated else condition
            test = LICENCE_CHECKS.get(name)
            if test is not None and bool(test(raw, claim.numbers)) == negated:
                problems.append(f"said under the licence {condition!r}, which the values do not bear out")
    return problems


def estimating_words(text: str, language: str) -> list[str]:
    return [word for word in ESTIMATING[language] if word in text]
