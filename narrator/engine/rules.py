"""The rules: where a column's gathered statistics and the options become Findings, once for every engine.

An engine *gathers* (moments, an exact order statistic by rank, the MAD, trimmed means, the medcouple,
counts at values, binned counts); this module *decides*. The memory engine
(:mod:`narrator.engine.describe`) gathers from the sorted values; the stream and Dask engines
(:mod:`narrator.scale`) gather in passes over chunks. Both call the functions below, so no decision is
restated anywhere.

==============================  ==================================================================
Decision                        Function (constants)
==============================  ==================================================================
options, their checks           :class:`Options` (:meth:`Options.check`; ``BIN_RULES``,
                                ``BANDWIDTH_RULES``; ``NEEDS_EVERY_VALUE``: what only the memory
                                engine runs)
the effective valid range       :attr:`Options.effective_range` (a bound the quantity cannot cross
                                is also a limit of the valid range)
the options record, Variable    :meth:`Options.record`, :meth:`Options.variable`
the empty column                :func:`empty_findings`
quantiles, median (type 7)      :func:`quantiles_at`, :func:`median_at` (``PERCENTILES``)
the shape signals and label     :func:`shape_of` (G1, G2, D'Agostino, Bowley, then
                                :func:`narrator.engine.shape.classify_shape`)
the outlier rule                :func:`rule_choice` (adjusted when clearly skewed, else Tukey)
the skew-adjusted exponents     :func:`adjusted_exponents` (Hubert & Vandervieren 2008)
fences and score limits         :func:`outlier_test` -> :class:`OutlierTest` (``COEFFICIENT``,
                                ``FAR_COEFFICIENT``, ``MODIFIED_Z_THRESHOLD``,
                                ``MODIFIED_Z_CONSTANT``, ``MEAN_AD_CONSTANT``, ``MIN_VALUES``)
the Outliers finding            :func:`outliers_found` (the listed values, far-out values, ranges)
the focused histogram           :func:`focus_layout_for` (only the far-out fences focus),
                                :func:`density_focus_of`
without the flagged values      :func:`without_outliers`
the lead without them           :func:`lead_without`
the most influential value      :func:`farthest_plan` (the smallest or largest value, unless the
                                next distinct value inwards is as far), :func:`with_influence`
centre, lead, spread            :func:`decide` (via :func:`narrator.engine.center.choose_lead`,
                                ``MAD_NORMAL_SCALE``, the coefficient of variation's rule)
intervals                       :func:`intervals_of` (t from the moments, BCa for small skewed
                                samples, the order-statistic interval for the median)
quality flags from counts       :func:`exclusion_flags`, :func:`reading_flags`,
                                :func:`code_worth_checking`, :func:`code_flag`,
                                :func:`heaping_flags`, :func:`tie_run_length`, :func:`tie_flags`,
                                :func:`size_flags`, :func:`quality_of`
everything after the flagging   :func:`decide` (:class:`Gathered` -> :class:`~narrator.findings.Findings`)
what a memo leads with          :func:`narrator.engine.decision.add_decision_findings`, called by
                                :func:`decide` and :func:`empty_findings` (clusters, unusual values,
                                concentration)
==============================  ==================================================================

Findings from engines that gather the same statistics are the same numbers; where an engine gathers
an approximation (the stream engine's reservoir medcouple), it says so in ``Findings.accuracy``.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace

import numpy as np

from narrator.engine import intervals, robust
from narrator.engine.bins import BIN_RULES, focus_layout
from narrator.engine.center import choose_lead, mean_pull
from narrator.engine.decision import add_decision_findings
from narrator.engine.density import BANDWIDTH_RULES, curve_between
from narrator.engine.distributions import binomial_sf, t_ppf
from narrator.engine.moments import (
    QUANTILE_METHOD,
    Moments,
    excess_kurtosis,
    scaled,
    skewness_g1,
    skewness_test,
)
from narrator.engine.shape import MIN_FOR_SHAPE, ROBUST_NEAR_ZERO, ShapeSignals, classify_shape, is_clearly_skewed
from narrator.errors import NarratorError
from narrator.findings import (
    LISTED_PER_SIDE,
    OUTLIER_RULES,
    SCHEMA_VERSION,
    Center,
    Findings,
    HistogramPlan,
    Interval,
    Intervals,
    OrderCounts,
    Outliers,
    Quality,
    QualityFlag,
    Shape,
    Spread,
    Variable,
    WithoutOutliers,
)

DEFAULT_SEED = 20261201
MAD_NORMAL_SCALE = 1.482602218505602  # 1 / Phi^-1(3/4), as scipy.stats.median_abs_deviation(scale="normal")
PERCENTILES = (0.05, 0.10, 0.25, 0.50, 0.75, 0.90, 0.95)
TRIM_PROPORTIONS = (0.10, 0.20)
# Options only an engine that holds every value can run (the stream engines refuse them, saying why).
NEEDS_EVERY_VALUE = {
    ("outlier_rule", "esd"): "the esd outlier rule removes values one at a time and needs them all in memory; "
                             "with more data than memory choose tukey, adjusted or modified-z",
    ("bandwidth_rule", "sheather-jones"): "the sheather-jones bandwidth needs every value in memory; with more "
                                          "data than memory choose silverman or scott",
}

# Outlier rules (narrator.engine.outliers applies them to the values in memory).
# Below this, no rule is run: its fences or limits are made of quartiles, a median and a MAD, which between
# four values or fewer are one value's doing (our rule; the reports give no such summary either:
# narrator.phrasing.licences.TINY_N is this number, so the two can never disagree).
MIN_VALUES = 5
COEFFICIENT = 1.5  # Tukey (1977)
FAR_COEFFICIENT = 3.0
MODIFIED_Z_THRESHOLD = 3.5  # Iglewicz & Hoaglin (1993)
# Iglewicz & Hoaglin (1993): 0.6745, the standard normal 0.75 quantile as they round it, makes
# MAD / 0.6745 estimate the SD under normality.
MODIFIED_Z_CONSTANT = 0.6745
# Common-practice fallback when MAD = 0: sqrt(pi / 2), the ratio SD / mean absolute deviation under normality.
MEAN_AD_CONSTANT = 1.253314

# Data quality (thresholds are our own documented choices, common practice; see narrator.engine.quality).
MIN_FOR_CONFIDENT = 20  # below this the text hedges
FEW_DISTINCT = 10
TIE_SHARE = 0.20
PILE_UP_SHARE = 0.05
PILE_UP_MIN_COUNT = 3
HEAPING_RATIO = 2.0  # observed share at round values at least this many times the chance share
HEAPING_P = 0.001  # and a one-sided binomial test below this
HEAPING_MIN_N = 30
SUSPECT_CODES = (-9.0, -99.0, -999.0, -9999.0, -99999.0, 99.0, 999.0, 9999.0, 99999.0, 999999.0, -1.0, -8.0)
CODE_DISTANCE_IQR = 3.0  # a code must sit beyond the far-out fences of the other values
MIN_CODE_COUNT = 2  # a lone 99 among real values is not a missing-value code
ROWS_SHOWN = 10


# --------------------------------------------------------------------------- options


@dataclass(frozen=True, slots=True)
class Options:
    """What the caller asked for; the names and meanings of :func:`narrator.engine.describe.describe`."""

    valid_min: float | None = None
    valid_max: float | None = None
    lower_bound: float | None = None
    upper_bound: float | None = None
    population: bool = False
    outlier_rule: str | None = None
    level: float = 0.95
    bin_rule: str = "freedman-diaconis"
    bandwidth_rule: str = "silverman"
    seed: int = DEFAULT_SEED

    def check(self, *, every_value_at_hand: bool = True) -> Options:
        """Raise :class:`~narrator.errors.NarratorError` on an option that cannot be run; returns self."""
        if self.outlier_rule is not None and self.outlier_rule not in OUTLIER_RULES:
            raise NarratorError(
                f"unknown outlier rule {self.outlier_rule!r}; choose one of {', '.join(OUTLIER_RULES)}")
        if not 0.5 <= self.level < 1:
            raise NarratorError(f"interval level must be at least 0.5 and below 1, not {self.level}")
        if self.bin_rule not in BIN_RULES:
            raise NarratorError(f"unknown bin rule {self.bin_rule!r}; choose one of {', '.join(BIN_RULES)}")
        if self.bandwidth_rule not in BANDWIDTH_RULES:
            raise NarratorError(
                f"unknown bandwidth rule {self.bandwidth_rule!r}; choose one of {', '.join(BANDWIDTH_RULES)}")
        if self.lower_bound is not None and self.upper_bound is not None and self.lower_bound >= self.upper_bound:
            raise NarratorError(f"lower bound {self.lower_bound} must be below upper bound {self.upper_bound}")
        if not every_value_at_hand:
            if isinstance(self.seed, bool) or not isinstance(self.seed, int) or self.seed < 0:
                raise NarratorError(f"the seed must be a whole number >= 0; got {self.seed!r}")
            for (name, value), message in NEEDS_EVERY_VALUE.items():
                if getattr(self, name) == value:
                    raise NarratorError(message)
        return self

    @property
    def effective_range(self) -> tuple[float | None, float | None]:
        """(lowest, highest) valid value: a bound the quantity cannot cross is also a limit of the valid range
        (a wait of -3 days is impossible). A valid minimum of 0 is a limit like any other."""
        low = self.valid_min if self.lower_bound is None else max(
            self.lower_bound, self.lower_bound if self.valid_min is None else self.valid_min)
        high = self.valid_max if self.upper_bound is None else min(
            self.upper_bound, self.upper_bound if self.valid_max is None else self.valid_max)
        return low, high

    def record(self) -> dict:
        """The options as the findings record them."""
        return {
            "outlier_rule": self.outlier_rule or "auto",
            "quantile_method": QUANTILE_METHOD,
            "level": self.level,
            "trim_proportions": list(TRIM_PROPORTIONS),
            "bin_rule": self.bin_rule,
            "bandwidth_rule": self.bandwidth_rule,
            "seed": self.seed,
            "population": self.population,
            "valid_min": self.valid_min,
            "valid_max": self.valid_max,
            "lower_bound": self.lower_bound,
            "upper_bound": self.upper_bound,
        }

    def variable(self, name: str, unit: str | None, *, decimals: int, integer_valued: bool) -> Variable:
        return Variable(name=name, unit=unit, valid_min=self.valid_min, valid_max=self.valid_max,
                        lower_bound=self.lower_bound, upper_bound=self.upper_bound, population=self.population,
                        decimals=decimals, integer_valued=integer_valued)


def empty_findings(options: Options, variable: Variable, quality: Quality, provenance: dict,
                   accuracy=None) -> Findings:
    """The findings of a column with no usable value."""
    return add_decision_findings(Findings(
        schema_version=SCHEMA_VERSION, variable=variable, n=0, n_missing=quality.n_missing, center=None,
        spread=None, shape=shape_of(0, None, None, None, None, None, "exact", None, None, False), outliers=None,
        without_outliers=None, intervals=Intervals(mean=None, median=None, reason="too_few"), histogram=None,
        density=None, quality=quality, options=options.record(), provenance=provenance, accuracy=accuracy),
        np.zeros(0))


# --------------------------------------------------------------------------- order statistics


def quantiles_at(value_at: Callable[[int], float], n: int, probabilities, factor: float = 1.0) -> np.ndarray:
    """Hyndman & Fan (1996) type 7 quantiles (numpy's ``method="linear"``) of n values, of x / ``factor``,
    from their exact order statistics ``value_at(rank)`` (0-based, ascending, data units).

    With h = (n - 1) p, Q(p) = x[floor(h)] + (h - floor(h)) (x[floor(h)+1] - x[floor(h)]), the arithmetic
    of :func:`narrator.engine.moments.quantiles_sorted`.

    >>> quantiles_at([1.0, 2.0, 3.0, 4.0].__getitem__, 4, [0.5]).tolist()
    [2.5]
    """
    p = np.asarray(probabilities, dtype=float)
    h = (n - 1) * p
    low = np.floor(h).astype(np.int64)
    high = np.minimum(low + 1, n - 1)
    fraction = h - low
    lower_values = np.array([value_at(int(r)) for r in low], dtype=np.float64) / factor
    upper_values = np.array([value_at(int(r)) for r in high], dtype=np.float64) / factor
    return np.where(fraction == 0, lower_values, lower_values + fraction * (upper_values - lower_values))


def median_at(value_at: Callable[[int], float], n: int, factor: float = 1.0) -> float:
    """The middle value, or for an even count the mean of the two middle values (common practice), of
    x / ``factor``; the arithmetic of :func:`narrator.engine.moments.median_sorted`."""
    middle = n // 2
    if n % 2:
        return float(value_at(middle)) / factor
    below, above = float(value_at(middle - 1)) / factor, float(value_at(middle)) / factor
    if below == above:
        return below
    gap = above - below
    if math.isfinite(gap):
        return below + 0.5 * gap
    return below / 2 + above / 2


# --------------------------------------------------------------------------- shape


def shape_of(n: int, moments: Moments | None, q1: float | None, median: float | None, q3: float | None,
             medcouple: float | None, medcouple_method: str, density, sensitivity, has_spread: bool,
             tails: tuple[float, float] | None = None, population: bool = False) -> Shape:
    """The shape finding from the moments, the quartiles, the medcouple, the density, the bin grid and
    ``tails``, the 5th and 95th percentiles (for Hinkley's skewness; None where they are not known);
    ``population``: the rows are the whole population (no test judges the skew, narrator.engine.shape rule 4)."""
    from narrator.engine.shape import substantial_peaks

    tail = None
    if moments is None or n == 0:
        g1 = g1_se = z = p = g2 = bowley = None
    else:
        g1, g1_se = skewness_g1(moments)
        g2 = excess_kurtosis(moments)
        z, p = skewness_test(moments)
        bowley = robust.bowley_skewness(q1, median, q3)
        if tails is not None:
            tail = robust.bowley_skewness(tails[0], median, tails[1])  # the same formula at P5 and P95
    return classify_shape(ShapeSignals(
        n=n, skewness=g1, skewness_se=g1_se, skewness_test_z=z, skewness_test_p=p, bowley=bowley,
        medcouple=medcouple, medcouple_method=medcouple_method, excess_kurtosis=g2,
        density_peaks=substantial_peaks(density), bin_sensitivity=sensitivity, has_spread=has_spread,
        tail_skewness=tail, population=population))


# --------------------------------------------------------------------------- outliers


@dataclass(frozen=True, slots=True)
class RuleChoice:
    rule: str
    chosen_by: str  # "user" or "auto"
    auto_reason: str | None  # "skewed" or "not_skewed" when chosen automatically
    fallback_from: str | None = None  # the rule first chosen, when it was degenerate for these data
    fallback_reason: str | None = None  # why: "medcouple_at_bound", "quartile_at_median" or "iqr_zero"


MEDCOUPLE_BOUND = 1.0 - 1e-12  # |MC| at or above this is at its bound (the medcouple lies in [-1, 1])


def degenerate_reason(rule: str, *, n: int, q1: float, q3: float, medcouple: float | None,
                      median: float | None = None) -> str | None:
    """Why ``rule`` cannot work on these data, or None when it can (our own rule, stated in the findings):

    * ``"medcouple_at_bound"``: the skew-adjusted rule with |MC| = 1. The values on one side of the
      median all tie with it (half or more of a count are 0), so the medcouple measures the ties, not
      the tail, and the fence on the long side moves e^3 = 20 IQRs out: the rule can flag almost nothing;
    * ``"quartile_at_median"``: the skew-adjusted rule when a quartile ties with the median (Q1 = median or
      Q3 = median, as on a rating scale where a quarter or more of the values hold the median's point). The
      medcouple then measures the ties at the median, not the tail: on ratings 1 to 5 with median = Q3 = 4 it
      is -0.33 and pulls the upper fence to 4.4, so every top rating would be a far-out outlier. Tukey's
      fences (the adjusted rule with MC = 0) replace it;
    * ``"iqr_zero"``: Tukey's or the adjusted rule with IQR = 0: the fences sit on the quartiles and
      every value that differs from them would be "unusual".

    >>> degenerate_reason("adjusted", n=50, q1=0.0, q3=2.0, medcouple=1.0)
    'medcouple_at_bound'
    >>> degenerate_reason("adjusted", n=120, q1=3.0, q3=4.0, medcouple=-0.33, median=4.0)
    'quartile_at_median'
    >>> degenerate_reason("tukey", n=50, q1=3.0, q3=3.0, medcouple=0.0)
    'iqr_zero'
    """
    if n < MIN_VALUES or rule not in ("tukey", "adjusted"):
        return None
    if not q3 > q1:
        return "iqr_zero"
    if rule == "adjusted" and medcouple is not None and abs(medcouple) >= MEDCOUPLE_BOUND:
        return "medcouple_at_bound"
    if rule == "adjusted" and median is not None and (q1 == median or q3 == median):
        return "quartile_at_median"
    return None


def fallback_rule(reason: str) -> str:
    """The rule that replaces a degenerate one: Tukey's fences (the adjusted rule with MC = 0) for a medcouple
    at its bound or driven by ties at the median, the modified z-score (with its MeanAD fallback when the MAD
    is 0 too) for an IQR of 0."""
    return "modified-z" if reason == "iqr_zero" else "tukey"


def working_choice(choice: RuleChoice, n: int, *, q1: float, q3: float, medcouple: float | None,
                   median: float | None = None) -> RuleChoice:
    """``choice``, or the rule that replaces it when it is degenerate for these data (recorded in the choice). A rule
    the user named is replaced the same way: a report must not call a quarter of the values unusual because the
    fences collapsed."""
    reason = degenerate_reason(choice.rule, n=n, q1=q1, q3=q3, medcouple=medcouple, median=median)
    if reason is None:
        return choice
    return RuleChoice(fallback_rule(reason), choice.chosen_by, choice.auto_reason, choice.rule, reason)


def rule_choice(rule: str | None, clearly_skewed: bool) -> RuleChoice:
    """The rule asked for, or automatically the skew-adjusted boxplot when the data are clearly skewed
    and Tukey's fences otherwise."""
    if rule is None:
        return RuleChoice("adjusted" if clearly_skewed else "tukey", "auto",
                          "skewed" if clearly_skewed else "not_skewed")
    if rule not in OUTLIER_RULES:
        raise NarratorError(f"unknown outlier rule {rule!r}; choose one of {', '.join(OUTLIER_RULES)}")
    return RuleChoice(rule, "user", None)


def adjusted_exponents(mc: float) -> dict[str, float]:
    """Hubert & Vandervieren (2008), eq. (5): the longer tail's fence moves out, the shorter one's in."""
    lower_exponent, upper_exponent = (-4.0, 3.0) if mc >= 0 else (-3.0, 4.0)
    return {
        "medcouple": mc,
        "lower_exponent": lower_exponent,
        "upper_exponent": upper_exponent,
        "lower_multiplier": math.exp(lower_exponent * mc),
        "upper_multiplier": math.exp(upper_exponent * mc),
    }


@dataclass(frozen=True, slots=True)
class OutlierTest:
    """A rule's decision before the values are looked at: its constants and limits (x / factor units).

    ``kind`` is ``"fences"`` (flag x < lower or x > upper), ``"score"`` (flag (x - centre) / scale below
    -threshold or above threshold) or None (nothing is flagged: too few values, or no spread at all).
    """

    choice: RuleChoice
    constants: dict
    fences: tuple[float | None, float | None, float | None, float | None]  # lower, upper, far lower, far upper
    note: str | None
    kind: str | None
    centre: float = 0.0
    scale: float = 1.0
    threshold: float = 0.0

    def sides(self, units: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(low, high) masks of the flagged values among ``units`` (values / factor)."""
        if self.kind == "fences":
            return units < self.fences[0], units > self.fences[1]
        if self.kind == "score":
            score = (units - self.centre) / self.scale
            return score < -self.threshold, score > self.threshold
        empty = np.zeros(np.shape(units), dtype=bool)
        return empty, empty.copy()

    def fences_in_data_units(self, factor: float) -> tuple[float | None, ...]:
        return tuple(None if fence is None else float(fence * factor) for fence in self.fences)

    def far(self, units: np.ndarray) -> np.ndarray:
        if self.fences[2] is None:
            return np.zeros(np.shape(units), dtype=bool)
        return (units < self.fences[2]) | (units > self.fences[3])


def rule_constants(choice: RuleChoice, n: int, medcouple: float | None, *, coefficient: float = COEFFICIENT,
                   far_coefficient: float = FAR_COEFFICIENT,
                   modified_z_threshold: float = MODIFIED_Z_THRESHOLD) -> dict:
    """The constants a fence or score rule states (Tukey, adjusted, modified z)."""
    if choice.rule in ("tukey", "adjusted"):
        constants = {"coefficient": float(coefficient), "far_coefficient": float(far_coefficient)}
        if choice.rule == "adjusted" and n >= MIN_VALUES:
            if medcouple is None or not -1.0 <= medcouple <= 1.0:
                raise NarratorError(f"the adjusted boxplot rule needs a medcouple in [-1, 1]; got {medcouple!r}")
            constants.update(adjusted_exponents(float(medcouple)))
        return constants
    if choice.rule == "modified-z":
        return {"threshold": float(modified_z_threshold), "consistency_constant": MODIFIED_Z_CONSTANT}
    raise NarratorError(f"the {choice.rule} rule has no fences")


def outlier_test(choice: RuleChoice, n: int, *, q1: float, median: float, q3: float, mad: float,
                 medcouple: float | None, mean_absolute_deviation: Callable[[], float],
                 coefficient: float = COEFFICIENT, far_coefficient: float = FAR_COEFFICIENT,
                 modified_z_threshold: float = MODIFIED_Z_THRESHOLD) -> OutlierTest:
    """Fences (Tukey; Hubert & Vandervieren's skew-adjusted boxplot) or modified-z limits (Iglewicz &
    Hoaglin 1993) from the quartiles, the medcouple, the median and the MAD (all in x / factor units).

    ``mean_absolute_deviation()`` (the mean |x - median|) is asked for only when the MAD is 0: the
    common-practice fallback scale for the modified z score. A degenerate rule is replaced first
    (:func:`working_choice`).
    """
    choice = working_choice(choice, n, q1=q1, q3=q3, medcouple=medcouple, median=median)
    constants = rule_constants(choice, n, medcouple, coefficient=coefficient, far_coefficient=far_coefficient,
                               modified_z_threshold=modified_z_threshold)
    none = (None, None, None, None)
    if n < MIN_VALUES:
        return OutlierTest(choice, constants, none, "not_run_too_few", None)
    if choice.rule in ("tukey", "adjusted"):
        iqr = q3 - q1
        lower_scale = constants.get("lower_multiplier", 1.0) * iqr
        upper_scale = constants.get("upper_multiplier", 1.0) * iqr
        fences = (q1 - constants["coefficient"] * lower_scale, q3 + constants["coefficient"] * upper_scale,
                  q1 - constants["far_coefficient"] * lower_scale, q3 + constants["far_coefficient"] * upper_scale)
        return OutlierTest(choice, constants, fences, "iqr_zero" if iqr == 0 else None, "fences")
    threshold = constants["threshold"]
    note = None
    if mad > 0:
        scale = mad / constants["consistency_constant"]
        constants["mad"] = float(mad)
    else:
        # More than half the values equal the median. Common practice: the mean absolute deviation
        # from the median, scaled by sqrt(pi / 2), stands in for MAD / 0.6745.
        mean_ad = float(mean_absolute_deviation())
        constants.pop("consistency_constant")
        constants["mean_ad_constant"] = MEAN_AD_CONSTANT
        constants["mean_absolute_deviation"] = mean_ad
        if mean_ad == 0:
            return OutlierTest(choice, constants, none, "no_spread", None)
        scale = MEAN_AD_CONSTANT * mean_ad
        note = "mad_zero_fallback"
    fences = (median - threshold * scale, median + threshold * scale, None, None)
    return OutlierTest(choice, constants, fences, note, "score", centre=median, scale=scale, threshold=threshold)


def outliers_found(test: OutlierTest, factor: float, *, low_values, low_rows, high_values, high_rows,
                   count_low: int, count_high: int, low_range, high_range, note: str | None = None) -> Outliers:
    """The Outliers finding. ``low_values`` are the lowest flagged values (ascending, at most
    ``LISTED_PER_SIDE``, ties in row order), ``high_values`` the highest (ascending); values and ranges in
    data units, the test's limits in x / ``factor`` units."""
    low_values = np.asarray(low_values, dtype=np.float64)[:LISTED_PER_SIDE]
    high_values = np.asarray(high_values, dtype=np.float64)
    high_values = high_values[max(0, high_values.size - LISTED_PER_SIDE):]
    values = np.concatenate([low_values, high_values])
    rows = np.concatenate([np.asarray(low_rows, dtype=np.int64)[:LISTED_PER_SIDE],
                           np.asarray(high_rows, dtype=np.int64)[max(0, len(high_rows) - LISTED_PER_SIDE):]])
    far = test.far(values if factor == 1.0 else values / factor)
    lower, upper, far_lower, far_upper = test.fences_in_data_units(factor)
    return Outliers(
        rule=test.choice.rule, chosen_by=test.choice.chosen_by, auto_reason=test.choice.auto_reason,
        constants=test.constants, lower_fence=lower, upper_fence=upper, far_lower_fence=far_lower,
        far_upper_fence=far_upper,
        count=int(count_low + count_high), count_low=int(count_low), count_high=int(count_high),
        values=tuple(float(v) for v in values), rows=tuple(int(r) for r in rows),
        far_out_values=tuple(float(v) for v in values[far]), far_out_rows=tuple(int(r) for r in rows[far]),
        note=test.note if note is None else note, listed_low=int(low_values.size),
        low_range=None if low_range is None else (float(low_range[0]), float(low_range[1])),
        high_range=None if high_range is None else (float(high_range[0]), float(high_range[1])),
        fallback_from=test.choice.fallback_from, fallback_reason=test.choice.fallback_reason)


def focus_layout_for(histogram: HistogramPlan | None, far_lower: float | None, far_upper: float | None,
                     low: float, high: float):
    """The layout of the histogram over the bulk (:func:`narrator.engine.bins.focus_layout`), or None: only
    a rule with far-out fences focuses (data units; ``low`` and ``high`` are the smallest and largest values)."""
    if histogram is None or far_lower is None:
        return None
    return focus_layout(histogram, lowest=low, highest=high, far_lower=far_lower, far_upper=far_upper)


def density_focus_of(estimate, fine, focus):
    """The density curve over the focused histogram's part of the axis (None without a focus)."""
    if focus is None or estimate is None or fine is None:
        return None
    low, high = focus.edges[0], focus.edges[-1]
    grid, values = curve_between(fine, low, high)
    return replace(estimate, grid=tuple(float(t) for t in grid), values=tuple(float(v) for v in values),
                   peaks=tuple(p for p in estimate.peaks if low <= p <= high))


# --------------------------------------------------------------------------- with and without


def without_outliers(m: int, moments: Moments | None, rest_at: Callable[[int], float], factor: float, *,
                     mean: float, median: float, sd: float, iqr: float) -> WithoutOutliers:
    """Centre and spread of the m values the rule keeps (their moments, and their order statistics
    ``rest_at(rank)`` in data units), beside those of all values (``mean``..``iqr`` in x / factor units)."""
    if m == 0:
        return WithoutOutliers(
            n=0, mean=None, median=None, sd=None, iqr=None, mean_change=None, mean_change_relative=None,
            median_change=None, median_change_relative=None, sd_change=None, iqr_change=None,
            lead_without=None, lead_would_change=False, most_influential_value=None,
            most_influential_row=None, most_influential_mean_shift=None)
    q1_w, q3_w = (float(v) for v in quantiles_at(rest_at, m, [0.25, 0.75], factor))
    median_w = median_at(rest_at, m, factor)
    sd_w = moments.sd

    def relative(new: float, old: float) -> float | None:
        return (new - old) / abs(old) if old != 0 else None

    return WithoutOutliers(
        n=m, mean=moments.mean * factor, median=median_w * factor, sd=sd_w * factor if m > 1 else None,
        iqr=(q3_w - q1_w) * factor, mean_change=(moments.mean - mean) * factor,
        mean_change_relative=relative(moments.mean, mean), median_change=(median_w - median) * factor,
        median_change_relative=relative(median_w, median),
        sd_change=(sd_w - sd) * factor if m > 1 and math.isfinite(sd) else None,
        iqr_change=((q3_w - q1_w) - iqr) * factor, lead_without=None, lead_would_change=False,
        most_influential_value=None, most_influential_row=None, most_influential_mean_shift=None)


# The quantiles of the values without the flagged ones that the lead rule reads (lead_without): P5, the
# quartiles, the median and P95, as the shape of the whole reads them. Every engine gathers these ranks.
REST_PROBABILITIES = (0.05, 0.25, 0.5, 0.75, 0.95)


def lead_without(any_flagged: bool, m: int, moments: Moments | None, rest_at: Callable[[int], float],
                 factor: float, medcouple: Callable[[], tuple[float, str]], population: bool = False) -> str | None:
    """The lead measure the same rule would choose on the values without the flagged ones (None when
    nothing was flagged). ``medcouple()`` gives the rest's medcouple and its method code; ``population``: the
    rows are the whole population."""
    if not any_flagged:
        return None
    if m < MIN_FOR_SHAPE or rest_at(m - 1) == rest_at(0):
        return "mean" if m else None
    p5, q1, median, q3, p95 = (float(v) for v in quantiles_at(rest_at, m, REST_PROBABILITIES, factor))

    # The shape rule of the whole (shape_of), Hinkley's tail skewness included: the rest is "clearly skewed"
    # by the same test as the label the report gives the whole.
    def clearly_skewed(value: float, method: str = "exact") -> bool:
        return is_clearly_skewed(shape_of(m, moments, q1, median, q3, value, method, None, None, True,
                                          tails=(p5, p95), population=population))

    # The shape rule reads the medcouple's sign and whether it is near zero: when every kind of
    # medcouple gives the same answer, the answer does not depend on it and it is not computed.
    answers = {clearly_skewed(value) for value in _MEDCOUPLE_KINDS}
    skewed = answers.pop() if len(answers) == 1 else clearly_skewed(*medcouple())
    lead, _ = choose_lead(clearly_skewed=skewed, several_peaks=False, mean_shift=None, sd_without=None)
    return lead


# One medcouple of each kind the shape rule tells apart: zero, near zero either way (below
# narrator.engine.shape.ROBUST_NEAR_ZERO in size), clearly either way.
_MEDCOUPLE_KINDS = (0.0, ROBUST_NEAR_ZERO / 2, -ROBUST_NEAR_ZERO / 2, 5 * ROBUST_NEAR_ZERO, -5 * ROBUST_NEAR_ZERO)


@dataclass(frozen=True, slots=True)
class Extremes:
    """The smallest and largest value with the first row of each, and the next distinct value inwards
    from each end (inf / -inf when there is none)."""

    low: float
    low_row: int
    high: float
    high_row: int
    next_up: float
    next_down: float


def farthest_plan(extremes: Extremes, mean: float, n: int) -> tuple[float, int] | None:
    """(value, row) of the single value whose removal moves the mean most: the one farthest from the mean
    (removing x_i changes the mean by (mean - x_i) / (n - 1)), the first row on a tie.

    The distance never grows from either extreme towards the mean, so the farthest value is the smallest
    or the largest one; only when the next distinct value inwards rounds to the same distance (possible
    when the mean is huge beside the spread) is None returned: then every distance must be compared.
    """
    low_distance = abs(extremes.low - mean)
    high_distance = abs(extremes.high - mean)
    largest = max(low_distance, high_distance)
    inner = [v for v in (extremes.next_up, extremes.next_down) if math.isfinite(v)]
    if n >= 2 and any(abs(v - mean) == largest for v in inner):
        return None
    candidates = [(row, value) for row, value, distance in
                  ((extremes.low_row, extremes.low, low_distance), (extremes.high_row, extremes.high, high_distance))
                  if distance == largest]
    row, value = min(candidates)
    return value, row


def with_influence(without: WithoutOutliers, value: float, row: int, mean: float, n: int) -> WithoutOutliers:
    if n < 2:
        return without
    return replace(without, most_influential_value=float(value), most_influential_row=int(row),
                   most_influential_mean_shift=(mean - float(value)) / (n - 1))


# --------------------------------------------------------------------------- intervals


def intervals_of(n: int, has_spread: bool, options: Options, *, moments: Moments, factor: float,
                 skewness: float | None, clearly_skewed: bool, value_at: Callable[[int], float],
                 every_value: Callable[[], np.ndarray] | None) -> Intervals:
    """The mean's interval (Student's t from the moments; a BCa bootstrap for small, clearly skewed
    samples, from ``every_value()``, the sorted values, when the engine has them) and the median's
    order-statistic interval (Conover 1999) from ``value_at``."""
    if options.population:
        return Intervals(mean=None, median=None, reason="population")
    if n < 2 or not has_spread:
        return Intervals(mean=None, median=None, reason="too_few")
    level = options.level
    method, method_reason = intervals.choose_mean_method(n, skewness, clearly_skewed)
    mean_interval = None
    if method != "t" and every_value is not None:
        # In power-of-two scaled units, so squares of tiny values (1e-223) cannot underflow to a zero width.
        unit_values, unit = scaled(every_value())
        try:
            found = intervals.mean_interval(unit_values, level=level, method=method, seed=options.seed)
            mean_interval = replace(found, low=found.low * unit, high=found.high * unit)
        except NarratorError:
            # The bootstrap cannot work on degenerate resamples (nearly all values equal): use the t interval.
            method_reason = "bootstrap_failed_t"
    if mean_interval is None:
        # Student's t interval, mean +/- t_{(1+level)/2, n-1} s / sqrt(n), from the moments.
        half_width = float(t_ppf((1.0 + level) / 2.0, n - 1)) * moments.sd / math.sqrt(n)
        mean_interval = Interval(low=(moments.mean - half_width) * factor, high=(moments.mean + half_width) * factor,
                                 level=level, method="t")
        # A t interval that reaches past the smallest or largest value (a few huge values among many
        # small ones) claims means the data cannot have: the BCa bootstrap's stay within the values'
        # range (its resampled means do), so it replaces the t interval when every value is at hand.
        past_range = mean_interval.low < value_at(0) or mean_interval.high > value_at(n - 1)
        if past_range and method == "t" and every_value is not None and \
                intervals.BOOTSTRAP_MIN_N <= n <= intervals.BOOTSTRAP_MAX_N:
            unit_values, unit = scaled(every_value())
            try:
                found = intervals.mean_interval(unit_values, level=level, method="bca-bootstrap", seed=options.seed)
                mean_interval = replace(found, low=found.low * unit, high=found.high * unit)
                method_reason = "t_past_range_bootstrap"
            except NarratorError:
                pass  # degenerate resamples: the t interval stays, and the text says where it reaches
    median_interval = None
    rank = intervals.median_rank(n, level)
    if rank is not None:
        median_interval = Interval(
            low=float(value_at(rank - 1)), high=float(value_at(n - rank)), level=level, method="order-statistic",
            coverage=intervals.median_coverage(rank, n), ranks=(rank, n - rank + 1))
    return Intervals(mean=mean_interval, median=median_interval, reason="computed", mean_method_reason=method_reason)


# --------------------------------------------------------------------------- data quality


def exclusion_flags(sample) -> list[QualityFlag]:
    """One flag for each reason values were left out (missing, non-numeric, impossible, non-finite)."""
    flags = []
    total = max(sample.n_rows, 1)
    for exclusion in sample.exclusions:
        if exclusion.count:
            # The cell texts the reader saw ("" for a blank), so the text can say what the cells held.
            flags.append(QualityFlag(code=exclusion.reason, count=exclusion.count, share=exclusion.count / total,
                                     rows=tuple(int(r) for r in exclusion.rows[:ROWS_SHOWN]),
                                     values=tuple(float(v) for v in exclusion.values[:ROWS_SHOWN]),
                                     texts=tuple(exclusion.examples),
                                     detail={"texts_complete": float(exclusion.examples_complete)}
                                     if exclusion.examples else {}))
    return flags


def reading_flags(sample) -> list[QualityFlag]:
    """What the reader saw in the cells and settled by rule, so a reader of the report can check it.

    A cell that two conventions read differently is never guessed silently: it is read under the
    declared convention and counted here.
    """
    source = sample.source or {}
    total = max(sample.n_rows, 1)
    flags = []
    ambiguous = int(source.get("ambiguous_grouping") or 0)
    if ambiguous:
        flags.append(QualityFlag(
            code="ambiguous_grouping", count=ambiguous, share=ambiguous / total,
            rows=tuple(int(r) for r in source.get("ambiguous_grouping_rows", ())[:ROWS_SHOWN]),
            detail={"decimal_comma": float(bool(source.get("decimal_comma")))},
        ))
    other = int(source.get("other_convention") or 0)
    if other:
        # Left out as text, yet numbers under the other convention: the declared convention may be the wrong one.
        flags.append(QualityFlag(
            code="other_convention", count=other, share=other / total,
            rows=tuple(int(r) for r in source.get("other_convention_rows", ())[:ROWS_SHOWN]),
            texts=tuple(source.get("other_convention_texts") or ()),
            detail={"decimal_comma": float(bool(source.get("decimal_comma")))},
        ))
    percent = int(source.get("percent_cells") or 0)
    if percent:
        flags.append(QualityFlag(code="percent_signs", count=percent, share=percent / total))
    currencies = source.get("currency_symbols") or ()
    if currencies:
        flags.append(QualityFlag(code="currency_marks", count=len(currencies),
                                 detail={"distinct_marks": float(len(currencies))}))
    if source.get("encoding_guessed"):
        flags.append(QualityFlag(code="encoding_guessed", count=1))
    if source.get("suppressed_groups"):
        # The rows of groups below the privacy threshold were taken out before describing: the count is of
        # groups (the overview says it), never of their rows.
        flags.append(QualityFlag(code="groups_suppressed", count=int(source["suppressed_groups"])))
    return flags


def code_worth_checking(code: float, count: int, n: int) -> bool:
    """A suspect code is checked when it repeats (``MIN_CODE_COUNT`` times: one value is never a spike, and a code
    typed for "missing" is typed again and again) and at least 4 other values remain."""
    return count >= MIN_CODE_COUNT and n - count >= 4


def code_flag(code: float, count: int, n: int, *, q1: float, q3: float, others_sd: Callable[[], float],
              is_spike: Callable[[float], bool] | None, rows: Callable[[], object]) -> QualityFlag | None:
    """The ``missing_code`` flag when the code sits beyond the far-out fences of the other values (their
    type 7 quartiles ``q1``, ``q3``; their SD when those tie) and, where the engine can tell
    (``is_spike(spread)``), piles up far more often than the values next to it; ``rows()`` gives the
    first rows holding it."""
    spread = q3 - q1
    if spread <= 0:
        spread = float(others_sd()) or 1.0
    far = code < q1 - CODE_DISTANCE_IQR * spread or code > q3 + CODE_DISTANCE_IQR * spread
    if not far or (is_spike is not None and not is_spike(spread)):
        return None
    return QualityFlag(code="missing_code", count=int(count), share=count / n,
                       rows=tuple(int(r) for r in rows())[:ROWS_SHOWN], values=(float(code),))


def heaping_checks(decimals: int, iqr: float) -> list[tuple[float, float]]:
    """(base, chance share) pairs to test: multiples of 10 and 5 for whole numbers (when the spread is wide
    enough for that to mean anything), whole numbers for data recorded with up to 3 decimals."""
    if decimals == 0:
        return [(10.0, 0.1), (5.0, 0.2)] if iqr >= 10 else []
    if decimals <= 3:
        return [(1.0, 10.0**-decimals)]
    return []


def _on_multiple(value: float, base: float) -> bool:
    """Whether ``value`` sits on a multiple of ``base`` (the tolerance of the engines' round counts)."""
    ratio = value / base
    return abs(ratio - round(ratio)) < 1e-9 * max(1.0, abs(ratio))


def heaping_flags(n: int, decimals: int, iqr: float, hits: Callable[[float], int],
                  ends: tuple[float, int, float, int] | None = None) -> list[QualityFlag]:
    """Excess of values at round numbers; ``hits(base)`` counts the values at multiples of ``base``.

    ``ends`` is (smallest, its count, largest, its count). A pile-up at an end (a floor such as 0 days,
    flagged on its own) is set aside before the test: a third of the values at 0 are not rounding,
    and would otherwise make every whole number look heaped. The flag still counts every value.
    """
    if n < HEAPING_MIN_N:
        return []
    piles = []
    if ends is not None:
        low, low_run, high, high_run = ends
        piles = [(value, run) for value, run in ((low, low_run), (high, high_run))
                 if run >= PILE_UP_MIN_COUNT and run / n >= PILE_UP_SHARE]
        if len(piles) == 2 and piles[0][0] == piles[1][0]:
            piles = piles[:1]
    for base, chance in heaping_checks(decimals, iqr):
        count = int(hits(base))
        rest_n = n - sum(run for _, run in piles)
        rest = count - sum(run for value, run in piles if _on_multiple(value, base))
        if rest_n < HEAPING_MIN_N:
            continue
        observed = rest / rest_n
        if observed >= HEAPING_RATIO * chance:
            # One-sided binomial test, P(B >= hits): scipy.stats.binomtest(..., alternative="greater").
            p = min(1.0, binomial_sf(rest - 1, rest_n, chance))
            if p < HEAPING_P:
                detail = {"base": base, "expected_share": chance, "p_value": p}
                if rest_n < n:
                    detail["set_aside"] = float(n - rest_n)
                return [QualityFlag(code="heaping", count=count, share=count / n, values=(base,), detail=detail)]
    return []


def tie_run_length(n: int) -> int:
    """The shortest run of equal values that reaches the tie share (the same float comparison as the flag's)."""
    shortest = max(1, int(TIE_SHARE * n) - 1)
    while shortest / n < TIE_SHARE:
        shortest += 1
    return shortest


def tie_flags(n: int, distinct: int, longest: tuple[int, float] | None, extremes: tuple[float, int, float, int]
              ) -> list[QualityFlag]:
    """Constant column, few distinct values, one value holding the tie share, a floor or ceiling pile-up.

    ``distinct`` is exact up to ``FEW_DISTINCT`` + 1; ``longest`` the (length, value) of the first longest
    run of at least :func:`tie_run_length` values, or None; ``extremes`` (smallest, its count, largest,
    its count)."""
    low, low_run, high, high_run = extremes
    if distinct == 1:
        return [QualityFlag(code="constant", count=n, share=1.0, values=(float(low),))]
    flags = []
    if distinct <= FEW_DISTINCT and n > 2 * FEW_DISTINCT:
        flags.append(QualityFlag(code="few_distinct", count=distinct, detail={"distinct": float(distinct)}))
    if n >= MIN_FOR_CONFIDENT and longest is not None:
        length, value = longest
        flags.append(QualityFlag(code="many_ties", count=int(length), share=float(length / n), values=(float(value),)))
    if distinct > 3 and n >= MIN_FOR_CONFIDENT:
        for code, run, value in (("floor", low_run, low), ("ceiling", high_run, high)):
            if run >= PILE_UP_MIN_COUNT and run / n >= PILE_UP_SHARE:
                flags.append(QualityFlag(code=code, count=int(run), share=float(run / n), values=(float(value),)))
    return flags


def size_flags(n: int) -> list[QualityFlag]:
    if n < MIN_FOR_SHAPE:
        return [QualityFlag(code="too_few_for_shape", count=n)]
    if n < MIN_FOR_CONFIDENT:
        return [QualityFlag(code="small_sample", count=n)]
    return []


def quality_of(account, n: int, flags: list[QualityFlag]) -> Quality:
    """The Quality finding: the reading's account (a Sample: rows, exclusions, source facts) and the flags
    from the values (between the reading's flags and the sample-size flags)."""
    impossible, non_numeric = account.excluded("impossible"), account.excluded("non_numeric")
    every = exclusion_flags(account) + reading_flags(account)
    if n == 0:
        every.append(QualityFlag(code="no_values", count=0))
    every.extend(flags)
    every.extend(size_flags(n))
    return Quality(
        n_rows=account.n_rows, n_missing=account.n_missing,
        missing_share=account.n_missing / account.n_rows if account.n_rows else 0.0,
        n_non_numeric=non_numeric.count if non_numeric else 0, n_impossible=impossible.count if impossible else 0,
        n_used=n, flags=tuple(every))


# --------------------------------------------------------------------------- the rest of the findings


@dataclass(frozen=True, slots=True)
class Gathered:
    """What an engine gathered about the n values in use, for the decisions after the flagging.

    Statistics are in x / ``factor`` units (``factor`` a power of two, 1 unless the values are huge or
    tiny) except where said; ``value_at`` and ``rest_at`` give exact order statistics in data units.
    """

    n: int
    factor: float
    low: float  # data units
    high: float
    moments: Moments
    value_at: Callable[[int], float]
    median: float
    quantiles: tuple[float, ...]  # at PERCENTILES
    mad: float
    trimmed: tuple[float, float]  # at TRIM_PROPORTIONS
    shape: Shape
    outliers: Outliers
    rest_moments: Moments | None  # of the values the rule keeps (None when none are kept)
    rest_at: Callable[[int], float]  # their order statistics, data units
    rest_medcouple: Callable[[], tuple[float, str]]
    farthest: tuple[float, int] | None  # (value, row), data units
    every_value: Callable[[], np.ndarray] | None  # the sorted values, when the engine holds them
    histogram: HistogramPlan | None
    density: object
    density_focus: object
    histogram_focus: HistogramPlan | None
    quality: Quality
    order_counts: OrderCounts | None = None  # counts at the median, quartiles and ends (narrator.engine.ties)


def decide(g: Gathered, options: Options, variable: Variable, provenance: dict, accuracy=None) -> Findings:
    """The findings from what an engine gathered: without the flagged values, the lead measure and its
    reasons, the most influential value, centre, spread and intervals."""
    n, factor, moments = g.n, g.factor, g.moments
    mean, sd, median = moments.mean, moments.sd, g.median
    p5, p10, q1, _, q3, p90, p95 = g.quantiles
    iqr = q3 - q1
    has_spread = g.high > g.low
    clearly_skewed = is_clearly_skewed(g.shape)
    flagged = g.outliers
    m = n - flagged.count_low - flagged.count_high
    rest_moments = g.rest_moments if flagged.count else moments
    without = without_outliers(m, rest_moments, g.rest_at, factor, mean=mean, median=median, sd=sd, iqr=iqr)
    lead, lead_reasons = choose_lead(clearly_skewed=clearly_skewed,
                                     several_peaks=g.shape.label in ("bimodal", "multimodal"),
                                     mean_shift=without.mean_change, sd_without=without.sd)
    lead_w = lead_without(flagged.count > 0, m, rest_moments, g.rest_at, factor, g.rest_medcouple,
                          population=options.population)
    without = replace(without, lead_without=lead if lead_w is None else lead_w,
                      lead_would_change=lead_w is not None and lead_w != lead)
    if g.farthest is not None:
        without = with_influence(without, g.farthest[0], g.farthest[1], mean * factor, n)

    pull, material = mean_pull(mean, median, sd)
    center = Center(
        mean=mean * factor, median=median * factor, trimmed_mean_10=g.trimmed[0] * factor,
        trimmed_mean_20=g.trimmed[1] * factor, lead=lead, lead_reasons=lead_reasons,
        mean_minus_median=(mean - median) * factor, mean_median_gap_material=material, mean_pull=pull)
    cv, cv_reason = None, "not_positive"
    if g.low > 0 and n > 1:  # a coefficient of variation only for positive, ratio-scale data
        cv, cv_reason = (sd / mean, "computed") if mean != 0 else (None, "zero_mean")
    spread = Spread(
        sd=sd * factor, variance=moments.variance * factor * factor if factor < 1e150 else math.inf,
        q1=q1 * factor, q3=q3 * factor, iqr=iqr * factor, quantile_method=QUANTILE_METHOD, mad=g.mad * factor,
        mad_scaled=g.mad * MAD_NORMAL_SCALE * factor, min=g.low, max=g.high,
        range=(g.high / factor - g.low / factor) * factor, p5=p5 * factor, p10=p10 * factor, p90=p90 * factor,
        p95=p95 * factor, cv=cv, cv_reason=cv_reason)
    interval_findings = intervals_of(n, has_spread, options, moments=moments, factor=factor,
                                     skewness=g.shape.skewness, clearly_skewed=clearly_skewed, value_at=g.value_at,
                                     every_value=g.every_value)
    findings = Findings(
        schema_version=SCHEMA_VERSION, variable=variable, n=n, n_missing=g.quality.n_missing, center=center,
        spread=spread, shape=g.shape, outliers=flagged, without_outliers=without, intervals=interval_findings,
        histogram=g.histogram, density=g.density, quality=g.quality, options=options.record(),
        provenance=provenance, accuracy=accuracy, histogram_focus=g.histogram_focus, density_focus=g.density_focus,
        order_counts=g.order_counts)
    # What a memo leads with; the fields that need every value are recorded as not computed without them.
    return add_decision_findings(findings, None if g.every_value is None else g.every_value())
