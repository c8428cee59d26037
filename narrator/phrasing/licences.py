"""Licences: the named conditions under which a sentence may be said, and the claim kinds sentences make.

A claim entry of a phrase bank (templates/phrases/<lang>.toml) lists variants, each with
``when = [...]`` licences and a ``claim`` kind; the planner says the first variant whose licences
all hold, and says nothing when none does (:meth:`narrator.phrasing.context.WordingContext.say`).
The licences are defined here, once, as predicates over what the sentence is about; the words
live in the banks, so every language inherits them.

Each licence reads the *facts* of one subject:

==============  ===========================================================================
Subject         Facts object the predicate receives
==============  ===========================================================================
``variable``    a :class:`~narrator.phrasing.context.WordingContext` (findings, the rounding
                a reader sees, the bank)
``groups``      a :class:`GroupFacts`: the groups of one variable, compared on one measure
``change``      a :class:`ChangeFacts`: two builds of one variable and their comparison
``difference``  a :class:`DifferenceFacts`: one difference between groups (Hodges-Lehmann shift,
                its interval and verdict, narrator.engine.group_difference)
==============  ===========================================================================

A licence never computes a statistic: it reads findings (the engine counted, e.g.
``findings.order_counts``) and, where a claim depends on what a reader sees ("stays at 5"),
the numbers as the text shows them. Thresholds that give a word its meaning ("half", "most",
"close") are module constants, stated here with the reason for each.

:data:`LICENCES` maps every name to its :class:`Licence`; :data:`CLAIM_KINDS` maps every claim
kind a bank may name to what it asserts (tests/claims re-derives each from the raw values).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from narrator.engine.rules import MIN_VALUES
from narrator.engine.shape import MIN_FOR_SHAPE  # D'Agostino's test needs n >= 8 (D'Agostino 1970)

# "Half" in a sentence: exactly half, or within two percentage points of half (our reading: a reader
# told "half were lower" of 300 values does not mind 147, and minds 120). No slack of one value: of
# seven values, three are not "half"; a small sample is given its counts instead.
HALF_SLACK = 0.02
# "Half of the values lay between Q1 and Q3": the share from Q1 to Q3 (both included) within
# 5 points of a half, exactly half below SMALL_SAMPLE values (five of eleven are not "half"), and at
# least 8 values (type 7 quartiles of fewer values interpolate between values that are too far apart
# for "half" to mean anything).
MIDDLE_HALF_SLACK = 0.05
MIN_FOR_MIDDLE_HALF = 8
# Fewer values than this: a memo lists them, with their average and middle value, and judges no shape,
# center, typical range or unusual value (our rule: with four values or fewer, a "typical range", a tail or
# a value far from the rest is one value's doing; with two, the middle value is the average by definition).
# Every audience then gives no summary made of quantiles between the ends (IQR, 5th-95th percentiles, MAD,
# trimmed mean) and draws no density curve: interpolated between two to four values, they say nothing.
TINY_N = MIN_VALUES  # the engine's: no outlier rule is run below it either (fences are made of quartiles)
# A share at the lowest (or highest) value worth a sentence of its own (our choice: a quarter, and at
# least 3 of at least 8 values, as the engine's floor and ceiling flags ask for 3).
MANY_AT_END_SHARE = 0.25
MANY_AT_END_COUNT = 3
# "Most" values at one end: at least half of them.
MOST_SHARE = 0.5
SMALL_SAMPLE = 20  # fewer values: the cautions say the figures are a rough guide
# "A few are much higher": some values, and at most one in ten, lie beyond the outlier rule's fence on
# that side (our reading of "a few"; 40 % of the values above the rest are not a few).
FEW_SHARE = 0.10


@dataclass(frozen=True, slots=True)
class Licence:
    name: str
    subject: str  # "variable", "groups" or "change"
    meaning: str  # one line: what must be true of the data
    test: Callable[[Any], bool]


LICENCES: dict[str, Licence] = {}


def licence(subject: str, meaning: str):
    """Register the decorated predicate as a licence named after the function."""

    def register(test: Callable[[Any], bool]) -> Callable[[Any], bool]:
        name = test.__name__
        if name in LICENCES:
            raise ValueError(f"licence {name!r} is defined twice")
        LICENCES[name] = Licence(name, subject, meaning, test)
        return test

    return register


def holds(name: str, facts: Any) -> bool:
    """Whether licence ``name`` holds for ``facts``."""
    return bool(LICENCES[name].test(facts))


# ------------------------------------------------------------------------------------------ claims
# What each claim kind asserts, as the checker in tests/claims reads it (numbers in Claim.numbers).

CLAIM_KINDS: dict[str, str] = {
    # counts and centers
    "single_value": "there is one value, equal to `value`",
    "all_equal": "n >= 2 values, every one equal to `value`",
    "count": "`n` values were used, out of `rows` rows",
    "left_out": "the counts left out as missing, non-numeric, impossible and non-finite are those given; "
                "`missing_texts` (when given) are the texts the missing cells held, '' for blank",
    "mean_value": "the mean of the values is `mean`",
    "mean_and_median": "the mean of the values is `mean` and their median `median`",
    "values_listed": "the values, in ascending order, are exactly `values` (fewer than five values)",
    "median_value": "the median of the values is `median`",
    "median_splits": "the median is `median`; exactly half the values, or within 2 points of half, lie below "
                     "it and as many above",
    "median_ties_at_min": "as median_with_ties, and every value below the median is the smallest value `min`",
    "median_ties_at_max": "as median_with_ties, and every value above the median is the largest value `max`",
    "median_ties_at_ends": "as median_with_ties, every value below the median is `min` and every one above is `max`",
    "median_with_ties": "the median is `median`; the shares below, equal to and above it are "
                        "`share_below`, `share_at`, `share_above`, each of them above 0",
    "median_counts": "the median is `median`; of the `n` values, `below` lie below it, `at` equal it and `above` "
                     "lie above it (fewer than 20 values: counts, not shares)",
    "share_at_minimum": "the smallest value is `value` and a share `share` of the values equal it; `next` is "
                        "the smallest other value and `max` the largest",
    "share_at_maximum": "the largest value is `value` and a share `share` equal it; `next` is the largest "
                        "other value and `min` the smallest",
    "shared_far": "`count` of the `n` values (5 % or more, 3 at least) equal `value`, which lies beyond the far-out "
                  "fences `far_lower`/`far_upper` on the side `side`",
    "median_above_minimum": "`count` of the `n` values lie above the smallest, `minimum`, and their median is "
                            "`median`; a quarter of the values or more equal the smallest",
    "median_below_maximum": "`count` of the `n` values lie below the largest, `maximum`, and their median is "
                            "`median`; a quarter of the values or more equal the largest",
    "middle_half": "Q1 and Q3 (type 7) are `q1` and `q3`, and the share of values from Q1 to Q3 is within "
                   "5 points of a half (n >= 8; exactly half when n < 20)",
    "count_between": "Q1 and Q3 (type 7) are `q1` and `q3`, and `count` of the `n` values lie from Q1 to Q3, "
                     "both included (fewer than 20 values: a count, not a share)",
    "share_between": "a share `share` of the values lies from `low` to `high`, both included",
    "value_range": "the values run from `min` to `max`",
    "mean_close": "the mean is within a tenth of an SD of the median `median`",
    "mean_pulled": "the mean `mean` lies on the `direction` side of the median, apart at the memo's rounding; "
                   "`cause` 'tail': the long tail is on that side; 'flagged': the flagged values move the mean "
                   "that way",
    "several_groups": "the shape has several peaks (label bimodal or multimodal) that rounding does not explain; "
                      "the mean is `mean`",
    "heaped": "a share `share` of the values sits at multiples of `base` (at least twice the share chance gives), "
              "so peaks there come from rounding",
    # shape
    "shape": "the values have the shape `label` (`strength`): direction and Bulmer strength of G1, or "
             "symmetry (|G1| < 0.5 or both robust measures near 0), or peaks",
    "shape_unclear": "the shape is not stated (the signals disagree or are weak); nothing to check",
    "too_few_for_shape": "there are fewer than 8 values (or no spread), so no shape is stated",
    "no_spread": "every value is the same",
    "skew_statistics": "G1 `g1`, its SE `se`, Bowley `bowley`, medcouple `medcouple`, G2 `g2` (and "
                       "D'Agostino's z `z` and p `p` when given) are those of the values",
    "peaks": "the kernel density shows `peaks` prominent peaks; the bimodality coefficient is `bc`",
    "heavy_tails": "the excess kurtosis G2 is above 1",
    "bins": "the bin grid tried widths `widths` and offsets `offsets`; `undecided`: one bin holds at least 90 % "
            "of the values at the base width at every offset; else the visible peaks run from `min_peaks` to "
            "`max_peaks`",
    # outliers and without them
    "outliers_not_run": "no outlier rule was run: fewer than 4 values",
    "outlier_rule": "the rule `rule` gave fences `lower` and `upper` (None when it has none); when "
                    "`fallback_from` is given that rule was degenerate for `fallback_reason`",
    "flagged": "the rule `rule` with fences `lower`, `upper` flags `count_low` values below and `count_high` "
               "above, the low ones from `low_min` to `low_max` and the high ones from `high_min` to `high_max`",
    "without_flagged": "without the flagged values there are `n_without` values, with mean `mean_without` and "
                       "median `median_without`; `median_same`/`mean_same`: equal to the center at the memo's "
                       "rounding",
    "lead": "the text leads with `lead` for the reasons `reasons` (skewed: a skewed label; several_peaks: "
            "peaks; outliers_move_mean: the flagged values move the mean by more than 0.2 SD of the rest; "
            "not_skewed: none of these)",
    "lead_without": "without the flagged values the same lead rule chooses `lead_without`",
    "influential": "removing the value `value` (row `row`) moves the mean by `shift`, more than any other value",
    "mean_pull": "the mean is `direction` the median, by more than a tenth of an SD",
    # intervals and population
    "summary": "the median `median`, quartiles `q1` and `q3`, mean `mean` and SD `sd` are those of the values",
    "intervals": "`level` intervals: the median's from `median_low` to `median_high` and the mean's from "
                 "`mean_low` to `mean_high`, by `median_method` and `mean_method`",
    "no_intervals": "no interval was computed, for `reason` (population: the rows are the whole population)",
    "population": "the rows were declared the whole population",
    # data quality
    "quality": "the data-quality observation `code` holds: `count` values or rows (see tests/claims)",
    "missing_code_suspected": "the value `value` appears `count` times, far beyond the other values' far-out "
                              "fences, and is a value people type for missing",
    "at_bound": "a share `share` of the values sit at the declared bound `value`",
    "shape_reason": "G1 `g1` and the robust measures `bowley` and `medcouple` tell different stories: both robust "
                    "measures below 0.1 in size beside a G1 beyond the cut points, or not both leaning as G1 does",
    # methods
    "method": "a statement of how the numbers were made: the constants `numbers` it names are the engine's",
    "histogram_rule": "the histogram's bins are `width` wide, produced by `rule` (`note` names a cap, a "
                      "fallback or a focus window, and the focused width `focus_width` when given)",
    "density_rule": "the density bandwidth `bandwidth` comes from `rule`; `note` 'bandwidth_floor': a floor "
                    "raised it",
    # figures
    "figure": "a figure's caption and alt text: the numbers given (n, min, max, median, mean, tallest bin and "
              "its count, values beyond the axis) are those of the values",
    # groups and changes
    "groups_compared": "the groups' `measure` values are those given; `order`: the highest and the lowest",
    "groups_same": "every group shown has the same `measure` at the memo's rounding",
    "group_shift": "the Hodges-Lehmann shift (median of all differences) of the values of the groups `second` "
                   "minus those of `first` is `shift`; its distribution-free interval (Mann-Whitney inverted, "
                   "Bonferroni-adjusted level `level`) runs from `low` to `high`; the verdict `verdict` follows "
                   "from the interval and the pooled spread (IQR / 1.349): different, slightly_different, alike "
                   "or unclear; `direction` is the sign of the shift",
    "groups_alike": "every pair in `pairs` (first, second, shift, low, high) is about the same: its interval "
                    "includes 0 and lies within half a pooled spread; `bound` is the largest limit in size",
    "groups_unclear": "no pair in `pairs` is clearly different; `bound` is the largest interval limit in size",
    "clusters": "the values split into the `parts` (share, median, low, high): each part's share and median are "
                "those of the values from `low` to `high`, the parts hold every value, and the stated tenths "
                "`tenths` are within half a tenth of the shares",
    "clusters_separated": "the column `column` matches the clusters: each category in `categories` (category, "
                          "cluster, count) sits in one cluster, agreement `agreement`",
    "entry_error": "each value in `errors` (value, row) is among the values and is at least 10 times the median "
                   "or at most a tenth of it, or a decimal shift of it lands among the typical values",
    "entry_error_possible": "each value in `errors` (value, row) is among the values and beyond the far fences",
    "stand_out": "each value in `values` is among the values and beyond the far fences `far_lower`, "
                 "`far_upper` of the rule `rule`",
    "stand_out_none": "the rule `rule` flags some values, but no value lies beyond its far fences `far_lower`, "
                      "`far_upper` in a way the fitted shape does not predict (`count_far_out` lie beyond them)",
    "stand_out_excess": "`count` values lie beyond the rule's fences, more than the `expected` the fitted shape "
                        "predicts",
    "concentration": "the values add up to `total`; the largest `top_count` hold a share `top_share` and the "
                     "largest `tenth_count` a share `tenth_share` of it; `notable`: the largest 1 % hold at "
                     "least 20 % or the largest tenth at least half",
    "change_count": "the number of values went from `old_n` to `new_n`",
    "change_none": "the two builds have the same number of values (`old_n` = `new_n`), the same center `measure` "
                   "(`old` = `new`) and the same spread",
    "change_center": "the `measure` went from `old` to `new`; `verdict` 'up'/'down' when the difference "
                     "interval (Schenker & Gentleman 2001) excludes 0, 'within' when it includes 0",
    "change_spread": "the middle half went from `old_q1`-`old_q3` to `new_q1`-`new_q3` and its width changed by "
                     "more than 10 %",
    "change_flagged": "the number of flagged values went from `old` to `new` (each build by its own fences)",
    "change_other": "a count or label of the two builds went from `old` to `new`",
    "groups_moved": "the groups in `moved` changed center clearly (the difference interval excludes 0); the "
                    "others in `still` did not",
    # words that are not about the data
    "caution": "advice that holds for any data of its kind (descriptive only, check records, privacy); the "
               "condition in `when` is checked where there is one",
    "note": "words about the report itself, not the data (a rule stated, a reference)",
}


# ---------------------------------------------------------------------------------------- helpers


def _counts(ctx):
    return ctx.findings.order_counts


def _n(ctx) -> int:
    return ctx.findings.n


def _has_spread(ctx) -> bool:
    spread = ctx.findings.spread
    return spread is not None and spread.range > 0


def _about_half(count: int, n: int) -> bool:
    return 2 * count == n or abs(count - n / 2) <= HALF_SLACK * n


# ------------------------------------------------------------------------------- variable: counts


@licence("variable", "there is exactly one value")
def n_is_one(ctx) -> bool:
    return _n(ctx) == 1


@licence("variable", "there are exactly two values")
def n_is_two(ctx) -> bool:
    return _n(ctx) == 2


@licence("variable", "there are two values or more")
def several_values(ctx) -> bool:
    return _n(ctx) >= 2


@licence("variable", "two to four values (fewer than TINY_N): no quantile summary between the ends is given")
def too_few_for_quantiles(ctx) -> bool:
    return 2 <= _n(ctx) < TINY_N


@licence("variable", "fewer than 8 values: too few to judge the shape (as the shape sentence says)")
def too_few_to_judge_shape(ctx) -> bool:
    return 0 < _n(ctx) < MIN_FOR_SHAPE


@licence("variable", "two values or more, and they are not all equal")
def has_spread(ctx) -> bool:
    return _n(ctx) >= 2 and _has_spread(ctx)


@licence("variable", "two values or more, all equal")
def all_equal(ctx) -> bool:
    return _n(ctx) >= 2 and not _has_spread(ctx)


@licence("variable", "the rows of groups too small to show (privacy) were left out before describing")
def groups_left_out(ctx) -> bool:
    return ctx.findings.quality.has("groups_suppressed")


# Rows of text named in a memo's left-out sentence when there are at most this many (our rule: a reader can look
# up three rows; more are listed in the data-quality bullets). Their texts are never printed: a stray cell may
# hold a name or a note about a person (the project's privacy rule for cell texts other than missing marks).
FEW_TEXT_ROWS_NAMED = 3


@licence("variable", "at most FEW_TEXT_ROWS_NAMED rows held text, and the reading kept every one's row number")
def text_rows_known(ctx) -> bool:
    flag = ctx.findings.quality.get("non_numeric")
    return flag is not None and 0 < flag.count <= FEW_TEXT_ROWS_NAMED and len(flag.rows) == flag.count


def _other_convention_declared_comma(ctx) -> bool | None:
    """Whether a decimal comma was declared, when text cells left out are numbers under the other convention."""
    flag = ctx.findings.quality.get("other_convention")
    return None if flag is None or not flag.count else bool(flag.detail.get("decimal_comma"))


@licence("variable", "cells left out as text read as numbers with a decimal comma, and a decimal point was declared")
def other_convention_comma(ctx) -> bool:
    return _other_convention_declared_comma(ctx) is False


@licence("variable", "cells left out as text read as numbers with a decimal point, and a decimal comma was declared")
def other_convention_point(ctx) -> bool:
    return _other_convention_declared_comma(ctx) is True


@licence("variable", "every cell left out as text reads as a number under the other decimal convention")
def other_convention_all(ctx) -> bool:
    flag = ctx.findings.quality.get("other_convention")
    return flag is not None and 0 < flag.count == ctx.findings.quality.n_non_numeric


@licence("variable", "some rows were left out (missing, not numbers, impossible or not finite)")
def some_left_out(ctx) -> bool:
    quality = ctx.findings.quality
    return bool(ctx.findings.n_missing or quality.n_non_numeric or quality.n_impossible
                or quality.has("non_finite"))


def _missing_texts(ctx) -> tuple[tuple[str, ...], bool] | None:
    flag = ctx.findings.quality.get("missing")
    if flag is None or not flag.texts:
        return None
    return tuple(flag.texts), bool(flag.detail.get("texts_complete"))


@licence("variable", "every missing cell was blank (the reader saw every distinct text they held)")
def missing_all_blank(ctx) -> bool:
    texts = _missing_texts(ctx)
    return texts is not None and texts[1] and all(text.strip() == "" for text in texts[0])


@licence("variable", "the reader saw every distinct text the missing cells held")
def missing_texts_complete(ctx) -> bool:
    texts = _missing_texts(ctx)
    return texts is not None and texts[1]


@licence("variable", "some missing cells were blank")
def missing_some_blank(ctx) -> bool:
    texts = _missing_texts(ctx)
    return texts is not None and any(text.strip() == "" for text in texts[0])


@licence("variable", "some of the texts the missing cells held are known (a blank counts)")
def missing_texts_known(ctx) -> bool:
    return _missing_texts(ctx) is not None


@licence("variable", "some missing cells held a text (not a blank), and some of those texts are known")
def missing_marks_known(ctx) -> bool:
    texts = _missing_texts(ctx)
    return texts is not None and any(text.strip() for text in texts[0])


# ------------------------------------------------------------------------ variable: where values sit


def _share_at_min(ctx) -> float:
    counts = _counts(ctx)
    return counts.at_min / counts.n if counts is not None and counts.n else 0.0


def _share_at_max(ctx) -> float:
    counts = _counts(ctx)
    return counts.at_max / counts.n if counts is not None and counts.n else 0.0


def _at_bound(value: float, *bounds: float | None) -> bool:
    return any(bound is not None and value == bound for bound in bounds)


@licence("variable", "values are spread out and at least half of them equal the smallest value")
def most_at_minimum(ctx) -> bool:
    return has_spread(ctx) and _share_at_min(ctx) >= MOST_SHARE


@licence("variable", "values are spread out and at least half of them equal the largest value")
def most_at_maximum(ctx) -> bool:
    return has_spread(ctx) and _share_at_max(ctx) >= MOST_SHARE


@licence("variable", "8 values or more, spread out, and a quarter of them (3 at least) equal the smallest")
def many_at_minimum(ctx) -> bool:
    return has_spread(ctx) and _share_at_min(ctx) >= MANY_AT_END_SHARE and _n(ctx) >= MIN_FOR_SHAPE and \
        _counts(ctx).at_min >= MANY_AT_END_COUNT


@licence("variable", "8 values or more, spread out, and a quarter of them (3 at least) equal the largest")
def many_at_maximum(ctx) -> bool:
    return has_spread(ctx) and _share_at_max(ctx) >= MANY_AT_END_SHARE and _n(ctx) >= MIN_FOR_SHAPE and \
        _counts(ctx).at_max >= MANY_AT_END_COUNT


@licence("variable", "a quarter of the values or more (3 at least, of 8 or more) equal the smallest, which is 0 "
                     "or the declared lower bound")
def many_at_floor(ctx) -> bool:
    # The lowest value means "none" (0: no claim, no visit; or the declared floor): a lowest rating of 1 is one
    # more rating.
    spread = ctx.findings.spread
    return many_at_minimum(ctx) and (spread.min == 0 or minimum_is_bound(ctx))


@licence("variable", "a quarter of the values or more (3 at least, of 8 or more) equal the smallest, which is 0 "
                     "or the declared lower bound, and at least 5 lie above it, with their middle value computed")
def middle_above_minimum(ctx) -> bool:
    # With a quarter at the lowest value the lower quartile is that value, with half the middle one is too: the
    # whole's middle and quartiles no longer say what a typical value among the others is (the same quarter
    # at which the memo names the share at an end), when that value means "none". Fewer than TINY_N values are
    # listed, never summarized.
    above = ctx.findings.above_minimum
    return many_at_floor(ctx) and above is not None and above.count >= TINY_N


def _many_at_ceiling(ctx) -> bool:
    # The highest value is a ceiling (a full score, a capped amount) only when it is declared: a highest wait is one
    # more wait.
    return many_at_maximum(ctx) and maximum_is_bound(ctx)


@licence("variable", "a quarter of the values or more (3 at least, of 8 or more) equal the largest, which is the "
                     "declared upper bound, and at least 5 lie below it, with their middle value computed")
def middle_below_maximum(ctx) -> bool:
    # The mirror of middle_above_minimum: with a quarter at the ceiling, the upper quartile is the ceiling, and the
    # whole's middle and quartiles no longer say what a typical value among the others is.
    below = ctx.findings.below_maximum
    return _many_at_ceiling(ctx) and below is not None and below.count >= TINY_N


@licence("variable", "the smallest value is the declared lower bound (or valid minimum)")
def minimum_is_bound(ctx) -> bool:
    variable, spread = ctx.findings.variable, ctx.findings.spread
    return spread is not None and _at_bound(spread.min, variable.lower_bound, variable.valid_min)


@licence("variable", "the largest value is the declared upper bound (or valid maximum)")
def maximum_is_bound(ctx) -> bool:
    variable, spread = ctx.findings.variable, ctx.findings.spread
    return spread is not None and _at_bound(spread.max, variable.upper_bound, variable.valid_max)


@licence("variable", "exactly half the values, or within 2 points of half, lie below the median, and as many above")
def median_splits_values(ctx) -> bool:
    counts = _counts(ctx)
    if counts is None or counts.n < 2:
        return False
    return _about_half(counts.below_median, counts.n) and _about_half(counts.above_median, counts.n)


@licence("variable", "some values lie below the median and some above it")
def values_on_both_sides_of_median(ctx) -> bool:
    counts = _counts(ctx)
    return counts is not None and counts.below_median > 0 and counts.above_median > 0


@licence("variable", "some values lie below the median, and every one of them is the lowest value")
def below_median_all_at_minimum(ctx) -> bool:
    counts = _counts(ctx)
    return counts is not None and 0 < counts.below_median == counts.at_min


@licence("variable", "some values lie above the median, and every one of them is the highest value")
def above_median_all_at_maximum(ctx) -> bool:
    counts = _counts(ctx)
    return counts is not None and 0 < counts.above_median == counts.at_max


@licence("variable", "at least 8 values, and the share from Q1 to Q3 is within 5 points of half (exactly half "
                     "below 20 values)")
def middle_half_holds_half(ctx) -> bool:
    counts = _counts(ctx)
    if counts is None or counts.n < MIN_FOR_MIDDLE_HALF:
        return False
    if counts.n < SMALL_SAMPLE:
        return 2 * counts.within_quartiles == counts.n
    return abs(counts.within_quartiles / counts.n - 0.5) <= MIDDLE_HALF_SLACK


@licence("variable", "fewer than 8 values: too few for quartiles to mark a middle half")
def too_few_for_quartiles(ctx) -> bool:
    return _n(ctx) < MIN_FOR_MIDDLE_HALF


@licence("variable", "Q3 is above Q1")
def quartiles_apart(ctx) -> bool:
    spread = ctx.findings.spread
    return spread is not None and spread.q3 > spread.q1


# ---------------------------------------------------------------------------------- variable: shape


def _hedge(ctx) -> str:
    return ctx.hedge.level


@licence("variable", "the shape hedge is 'clear' (narrator.phrasing.hedges)")
def hedge_clear(ctx) -> bool:
    return _hedge(ctx) == "clear"


@licence("variable", "the shape hedge is 'likely'")
def hedge_likely(ctx) -> bool:
    return _hedge(ctx) == "likely"


@licence("variable", "the shape hedge is 'tentative'")
def hedge_tentative(ctx) -> bool:
    return _hedge(ctx) == "tentative"


@licence("variable", "the shape hedge is 'unclear': the signals disagree or are weak")
def hedge_unclear(ctx) -> bool:
    return _hedge(ctx) == "unclear"


@licence("variable", "too few values (fewer than 8) or no spread to judge a shape")
def hedge_too_few(ctx) -> bool:
    return _hedge(ctx) == "too_few"


@licence("variable", "fewer than 20 values")
def fewer_than_20(ctx) -> bool:
    return 0 < _n(ctx) < SMALL_SAMPLE


@licence("variable", "the rows were declared the whole population of interest")
def rows_are_population(ctx) -> bool:
    return bool(ctx.findings.variable.population)


@licence("variable", "the rows are a sample, so estimating language (intervals, 'probably') may be used")
def estimating_allowed(ctx) -> bool:
    return not ctx.findings.variable.population


@licence("variable", "the shape label is right-skewed (a long tail of high values)")
def long_tail_high(ctx) -> bool:
    return ctx.findings.shape.label == "right-skewed"


@licence("variable", "the shape label is left-skewed (a long tail of low values)")
def long_tail_low(ctx) -> bool:
    return ctx.findings.shape.label == "left-skewed"


def _mid_range(ctx) -> float | None:
    spread = ctx.findings.spread
    return None if spread is None or spread.range <= 0 else (spread.min + spread.max) / 2


# "Most values are fairly low": the median lies below the middle of the range, so at least half the values
# (MOST_SHARE) are in its lower half; the skew alone does not say so.
@licence("variable", "at least one value is a probable entry error (narrator.engine.entry_errors.strong_slip)")
def entry_error_probable(ctx) -> bool:
    unusual = ctx.findings.unusual
    return unusual is not None and any(error.strength == "probable" for error in unusual.entry_errors)


@licence("variable", "the largest value is one the memo asks to check: it stands out for the data's shape or may "
                     "be an entry error (narrator.engine.entry_errors)")
def largest_worth_checking(ctx) -> bool:
    unusual, spread = ctx.findings.unusual, ctx.findings.spread
    if unusual is None or spread is None:
        return False
    return spread.max in set(unusual.values) | {error.value for error in unusual.entry_errors}


@licence("variable", "the median lies below the middle of the range: most values are in its lower half")
def most_in_lower_half(ctx) -> bool:
    middle = _mid_range(ctx)
    return middle is not None and ctx.findings.center.median < middle


@licence("variable", "the median lies above the middle of the range: most values are in its upper half")
def most_in_upper_half(ctx) -> bool:
    middle = _mid_range(ctx)
    return middle is not None and ctx.findings.center.median > middle


def _few_beyond(ctx, side: str) -> bool:
    flagged = ctx.findings.outliers
    if flagged is None or flagged.note == "not_run_too_few":
        return False
    count = flagged.count_high if side == "high" else flagged.count_low
    return 0 < count <= FEW_SHARE * ctx.findings.n


@licence("variable", "some values, and at most a tenth of them, lie beyond the outlier rule's upper fence ('a few are "
                     "much higher')")
def few_far_high(ctx) -> bool:
    return _few_beyond(ctx, "high")


@licence("variable", "some values, and at most a tenth of them, lie beyond the outlier rule's lower fence ('a few are "
                     "much lower')")
def few_far_low(ctx) -> bool:
    return _few_beyond(ctx, "low")


@licence("variable", "the shape has several peaks (bimodal or multimodal)")
def several_peaks(ctx) -> bool:
    return ctx.findings.shape.label in ("bimodal", "multimodal")


@licence("variable", "values were heaped at round numbers (the engine's heaping flag): peaks there come from rounding")
def values_heaped(ctx) -> bool:
    return ctx.findings.quality.has("heaping")


@licence("variable", "the skewness test ran (8 values or more) and the rows are a sample")
def skewness_test_ran(ctx) -> bool:
    return ctx.findings.shape.skewness_test_p is not None and estimating_allowed(ctx)


@licence("variable", "G1 was computed")
def skewness_computed(ctx) -> bool:
    return ctx.findings.shape.skewness is not None


@licence("variable", "G1 was computed and the shape was judged (8 values or more, with spread)")
def shape_judged(ctx) -> bool:
    shape = ctx.findings.shape
    return shape.skewness is not None and shape.label != "undetermined"


@licence("variable", "the density and the bimodality coefficient were computed")
def peaks_computed(ctx) -> bool:
    shape = ctx.findings.shape
    return shape.density_peaks is not None and shape.bimodality_coefficient is not None


@licence("variable", "the excess kurtosis G2 is above 1")
def tails_heavy(ctx) -> bool:
    return bool(ctx.findings.shape.heavy_tails)


@licence("variable", "the bin grid ran")
def bin_grid_ran(ctx) -> bool:
    return ctx.findings.shape.bin_sensitivity is not None


@licence("variable", "one bin holds almost every value at every offset: the grid cannot count peaks")
def bin_grid_undecided(ctx) -> bool:
    grid = ctx.findings.shape.bin_sensitivity
    return grid is not None and grid.undecided


@licence("variable", "the number of visible peaks changes across the bin grid")
def bin_grid_sensitive(ctx) -> bool:
    grid = ctx.findings.shape.bin_sensitivity
    return grid is not None and grid.sensitive


# --------------------------------------------------------------------------------- variable: center


def _as_shown(ctx, value: float) -> str:
    return ctx.memo(value)


@licence("variable", "the mean is above the median, and they differ as the memo rounds them")
def mean_above_median_as_shown(ctx) -> bool:
    center = ctx.findings.center
    return center is not None and center.mean > center.median and \
        _as_shown(ctx, center.mean) != _as_shown(ctx, center.median)


@licence("variable", "the mean is below the median, and they differ as the memo rounds them")
def mean_below_median_as_shown(ctx) -> bool:
    center = ctx.findings.center
    return center is not None and center.mean < center.median and \
        _as_shown(ctx, center.mean) != _as_shown(ctx, center.median)


@licence("variable", "the mean is within a tenth of an SD of the median (engine: not material)")
def mean_close_to_median(ctx) -> bool:
    center = ctx.findings.center
    return center is not None and not center.mean_median_gap_material


@licence("variable", "the mean is more than a tenth of an SD from the median, above it")
def mean_materially_above(ctx) -> bool:
    center = ctx.findings.center
    return center is not None and center.mean_median_gap_material and center.mean_pull == "higher"


@licence("variable", "the mean is more than a tenth of an SD from the median, below it")
def mean_materially_below(ctx) -> bool:
    center = ctx.findings.center
    return center is not None and center.mean_median_gap_material and center.mean_pull == "lower"


@licence("variable", "the text leads with the median")
def leads_with_median(ctx) -> bool:
    center = ctx.findings.center
    return center is not None and center.lead == "median"


@licence("variable", "the text leads with the mean")
def leads_with_mean(ctx) -> bool:
    center = ctx.findings.center
    return center is not None and center.lead == "mean"


# ------------------------------------------------------------------------------- variable: outliers


def _flagged(ctx):
    return ctx.findings.outliers


@licence("variable", "no outlier rule ran (fewer than 4 values)")
def outliers_not_run(ctx) -> bool:
    flagged = _flagged(ctx)
    return flagged is None or flagged.note == "not_run_too_few"


@licence("variable", "an outlier rule ran")
def outliers_ran(ctx) -> bool:
    return not outliers_not_run(ctx)


@licence("variable", "an outlier rule ran and flagged nothing")
def none_flagged(ctx) -> bool:
    return outliers_ran(ctx) and _flagged(ctx).count == 0


@licence("variable", "an outlier rule ran and flagged at least one value")
def any_flagged(ctx) -> bool:
    return outliers_ran(ctx) and _flagged(ctx).count > 0


@licence("variable", "the rule flagged values above its upper fence only")
def flagged_high_only(ctx) -> bool:
    return any_flagged(ctx) and _flagged(ctx).count_low == 0


@licence("variable", "the rule flagged values below its lower fence only")
def flagged_low_only(ctx) -> bool:
    return any_flagged(ctx) and _flagged(ctx).count_high == 0


@licence("variable", "the outlier rule has fences (Tukey, skew-adjusted, modified z)")
def rule_has_fences(ctx) -> bool:
    flagged = _flagged(ctx)
    return flagged is not None and flagged.lower_fence is not None and flagged.upper_fence is not None


@licence("variable", "the rule first chosen was degenerate for these data and another was used")
def rule_fell_back(ctx) -> bool:
    flagged = _flagged(ctx)
    return flagged is not None and flagged.fallback_from is not None


@licence("variable", "the modified z-score used its MeanAD fallback (MAD = 0)")
def mad_was_zero(ctx) -> bool:
    flagged = _flagged(ctx)
    return flagged is not None and flagged.note == "mad_zero_fallback"


def _without(ctx):
    without = ctx.findings.without_outliers
    if without is None or without.n == 0 or without.mean is None:
        return None
    return without


@licence("variable", "values were flagged and some remain without them")
def values_remain_without_flagged(ctx) -> bool:
    return any_flagged(ctx) and _without(ctx) is not None


@licence("variable", "the mean of all values is above the mean without the flagged ones")
def flagged_raise_mean(ctx) -> bool:
    without = _without(ctx)
    return any_flagged(ctx) and without is not None and without.mean_change is not None and \
        without.mean_change < 0


@licence("variable", "the mean of all values is below the mean without the flagged ones")
def flagged_lower_mean(ctx) -> bool:
    without = _without(ctx)
    return any_flagged(ctx) and without is not None and without.mean_change is not None and \
        without.mean_change > 0


@licence("variable", "without the flagged values the median shows as the same number in the memo")
def median_unmoved_as_shown(ctx) -> bool:
    without = _without(ctx)
    return without is not None and ctx.memo(without.median) == ctx.memo(ctx.findings.center.median)


@licence("variable", "without the flagged values the mean shows as the same number in the memo")
def mean_unmoved_as_shown(ctx) -> bool:
    without = _without(ctx)
    return without is not None and ctx.memo(without.mean) == ctx.memo(ctx.findings.center.mean)


@licence("variable", "without the flagged values the lead rule would choose another measure")
def lead_would_change(ctx) -> bool:
    without = _without(ctx)
    return without is not None and without.lead_would_change and without.lead_without is not None


@licence("variable", "the value whose removal moves the mean most is known")
def influence_known(ctx) -> bool:
    without = ctx.findings.without_outliers
    return without is not None and without.most_influential_value is not None and \
        without.most_influential_row is not None


# ------------------------------------------------------------------------------ variable: intervals


@licence("variable", "both intervals (mean and median) were computed")
def intervals_computed(ctx) -> bool:
    intervals = ctx.findings.intervals
    return intervals.mean is not None and intervals.median is not None and estimating_allowed(ctx)


@licence("variable", "only the mean's interval was computed: too few values for the median's at this level")
def only_mean_interval(ctx) -> bool:
    intervals = ctx.findings.intervals
    return intervals.mean is not None and intervals.median is None and estimating_allowed(ctx)


@licence("variable", "the mean's interval is a BCa bootstrap: Student's t interval reached past the values' range")
def mean_bootstrap_for_range(ctx) -> bool:
    return ctx.findings.intervals.mean_method_reason == "t_past_range_bootstrap"


@licence("variable", "no interval was computed because there are too few distinct values")
def intervals_too_few(ctx) -> bool:
    intervals = ctx.findings.intervals
    return estimating_allowed(ctx) and intervals.mean is None and intervals.median is None


# ---------------------------------------------------------------------------------- variable: quality


@licence("variable", "a value that looks like a missing-value code was found")
def code_suspected(ctx) -> bool:
    flag = ctx.findings.quality.get("missing_code")
    return flag is not None and bool(flag.values)


@licence("variable", "the data-quality checks raised nothing")
def quality_clean(ctx) -> bool:
    return not ctx.findings.quality.flags


@licence("variable", "record identifiers are shown beside the flagged values")
def identifiers_shown(ctx) -> bool:
    flagged = _flagged(ctx)
    return flagged is not None and bool(flagged.ids)


# ------------------------------------------------------------------------------ variable: methods


@licence("variable", "the histogram has a plan (the values have spread)")
def histogram_planned(ctx) -> bool:
    return ctx.findings.histogram is not None


def _note(ctx) -> str | None:
    plan = ctx.findings.histogram
    return None if plan is None else plan.note


@licence("variable", "the histogram width is the named rule's own width, rounded (no cap or fallback)")
def bins_by_rule(ctx) -> bool:
    return histogram_planned(ctx) and _note(ctx) is None


@licence("variable", "the histogram width was widened to keep the bins within the cap")
def bins_capped(ctx) -> bool:
    return _note(ctx) in ("bin_cap", "magnitude_resolution")


@licence("variable", "the histogram rule fell back to another (IQR 0: Scott; too few for Doane: Sturges)")
def bins_fell_back(ctx) -> bool:
    return _note(ctx) in ("iqr_zero_used_scott", "too_few_for_doane_used_sturges")


@licence("variable", "the figure's histogram is focused on the bulk of the values, at its own width")
def bins_focused(ctx) -> bool:
    return ctx.findings.histogram_focus is not None


@licence("variable", "the density bandwidth is the named rule's own")
def bandwidth_by_rule(ctx) -> bool:
    density = ctx.findings.density
    return density is not None and density.bandwidth_note != "bandwidth_floor"


@licence("variable", "a floor raised the density bandwidth above the rule's")
def bandwidth_floored(ctx) -> bool:
    density = ctx.findings.density
    return density is not None and density.bandwidth_note == "bandwidth_floor"


@licence("variable", "the medcouple was computed on a fixed-seed subsample")
def medcouple_subsampled(ctx) -> bool:
    parts = ctx.findings.shape.medcouple_method.split(":")
    return parts[0] == "subsample" and len(parts) == 3


@licence("variable", "the values were read in passes (data larger than memory)")
def read_in_passes(ctx) -> bool:
    return ctx.findings.accuracy is not None and ctx.findings.n > 0


# ------------------------------------------------------------------------------------------- groups


@dataclass(frozen=True, slots=True)
class GroupFacts:
    """The groups of one variable shown in a report, compared on the overall lead measure."""

    ctx: Any  # the WordingContext of the whole variable
    shown: tuple  # GroupFindings with a center, in the set's order
    lead: str  # "median" or "mean"
    values: tuple[float, ...]  # each shown group's lead value, same order
    overlap: bool | None  # do the highest and lowest groups' intervals overlap (None: not computed)
    smallest_n: int


@licence("groups", "no group has enough values to be shown")
def no_group_shown(facts: GroupFacts) -> bool:
    return not facts.shown


@licence("groups", "exactly one group can be shown")
def one_group_shown(facts: GroupFacts) -> bool:
    return len(facts.shown) == 1


@licence("groups", "two groups or more are shown and their lead values differ as the text rounds them")
def groups_differ_as_shown(facts: GroupFacts) -> bool:
    if len(facts.shown) < 2:
        return False
    shown = {facts.ctx.memo(value) for value in facts.values}
    return len(shown) > 1


@licence("groups", "some shown group has fewer than 20 values")
def some_group_small(facts: GroupFacts) -> bool:
    return bool(facts.shown) and facts.smallest_n < SMALL_SAMPLE


@licence("variable", "the values are money and the largest 1 % hold at least 20 % of the total, or the largest "
                     "tenth at least half (narrator.phrasing.selection)")
def money_concentrated(ctx) -> bool:
    from narrator.phrasing.selection import TOP_PERCENT_NOTABLE, TOP_TENTH_NOTABLE

    found = ctx.findings.concentration
    return found is not None and (found.top_percent_share >= TOP_PERCENT_NOTABLE
                                  or found.top_tenth_share >= TOP_TENTH_NOTABLE)


IMPOSSIBLE_SHOWN = 5  # values left out as impossible that a memo shows one by one, at most


@licence("variable", "every value left out as outside the valid range is known with its row, and there are at "
                     "most 5 of them")
def impossible_values_known(ctx) -> bool:
    flag = ctx.findings.quality.get("impossible")
    return (flag is not None and 0 < flag.count <= IMPOSSIBLE_SHOWN and len(flag.values) == flag.count
            and len(flag.rows) == flag.count)


# --------------------------------------------------------------------------------------- difference


@dataclass(frozen=True, slots=True)
class DifferenceFacts:
    """One difference between groups (narrator.findings.Difference), second minus first."""

    ctx: Any  # the WordingContext of the whole variable
    difference: Any  # narrator.findings.Difference


def _has_interval(facts: DifferenceFacts) -> bool:
    d = facts.difference
    return d.low is not None and d.high is not None and d.shift is not None


@licence("difference", "the groups clearly differ: the interval excludes 0 and the shift is not small")
def difference_clear(facts: DifferenceFacts) -> bool:
    return facts.difference.verdict == "different" and _has_interval(facts)


@licence("difference", "whole populations that differ by more than a small amount (no interval: nothing estimated)")
def difference_whole(facts: DifferenceFacts) -> bool:
    return facts.difference.verdict == "different" and not _has_interval(facts) and facts.difference.shift is not None


@licence("difference", "the interval excludes 0 but the shift is small against the spread")
def difference_slight(facts: DifferenceFacts) -> bool:
    return facts.difference.verdict == "slightly_different" and _has_interval(facts)


@licence("difference", "about the same: the interval includes 0 and rules out a medium difference")
def difference_alike(facts: DifferenceFacts) -> bool:
    return facts.difference.verdict == "alike" and _has_interval(facts)


@licence("difference", "whole populations whose difference is small against the spread")
def difference_alike_whole(facts: DifferenceFacts) -> bool:
    return facts.difference.verdict == "alike" and not _has_interval(facts) and facts.difference.shift is not None


@licence("difference", "the data cannot tell: the interval includes 0 but does not rule out a medium difference")
def difference_unclear(facts: DifferenceFacts) -> bool:
    return facts.difference.verdict == "unclear" and _has_interval(facts)


@licence("difference", "the difference has an interval (the rows are a sample)")
def difference_has_interval(facts: DifferenceFacts) -> bool:
    return _has_interval(facts)


@licence("difference", "the second side's values are typically higher (the shift is above 0)")
def difference_higher(facts: DifferenceFacts) -> bool:
    return facts.difference.shift is not None and facts.difference.shift > 0


@licence("difference", "the second side's values are typically lower (the shift is below 0)")
def difference_lower(facts: DifferenceFacts) -> bool:
    return facts.difference.shift is not None and facts.difference.shift < 0


# ------------------------------------------------------------------------------------------- change


@dataclass(frozen=True, slots=True)
class ChangeFacts:
    """Two builds of one variable and their comparison (narrator.history.changes)."""

    ctx: Any  # the WordingContext of the new build
    changes: Any  # narrator.history.changes.Changes
    old: Any  # the old build's Findings
    new: Any


def _item(facts: ChangeFacts, key: str):
    return facts.changes.item(key)


@licence("change", "the two builds give the same figures (narrator.history.changes.same_findings)")
def data_unchanged(facts: ChangeFacts) -> bool:
    from narrator.history.changes import same_findings

    return same_findings(facts.old, facts.new)


@licence("change", "nothing compared is worth mentioning")
def little_changed(facts: ChangeFacts) -> bool:
    return facts.changes.little_changed


@licence("change", "the number of values changed")
def count_changed(facts: ChangeFacts) -> bool:
    item = _item(facts, "n")
    return item is not None and item.reason != "unchanged"


def _center(facts: ChangeFacts):
    return _item(facts, f"center.{facts.changes.lead}")


@licence("change", "the center shows as the same number in both builds")
def center_same_as_shown(facts: ChangeFacts) -> bool:
    item = _center(facts)
    return item is not None and facts.ctx.memo(item.old) == facts.ctx.memo(item.new)


@licence("change", "the center rose, judged by the difference interval (it excludes 0)")
def center_rose(facts: ChangeFacts) -> bool:
    item = _center(facts)
    return item is not None and item.mention and item.difference is not None and item.difference > 0 and \
        item.reason == "beyond_interval"


@licence("change", "the center fell, judged by the difference interval (it excludes 0)")
def center_fell(facts: ChangeFacts) -> bool:
    item = _center(facts)
    return item is not None and item.mention and item.difference is not None and item.difference < 0 and \
        item.reason == "beyond_interval"


@licence("change", "the difference interval of the center includes 0")
def center_within_uncertainty(facts: ChangeFacts) -> bool:
    item = _center(facts)
    return item is not None and item.reason == "within_interval"


@licence("change", "the rows are a whole population and the center moved by more than a tenth of an SD, up")
def center_rose_whole(facts: ChangeFacts) -> bool:
    item = _center(facts)
    return item is not None and item.reason == "beyond_share_of_sd" and (item.difference or 0) > 0


@licence("change", "the rows are a whole population and the center moved by more than a tenth of an SD, down")
def center_fell_whole(facts: ChangeFacts) -> bool:
    item = _center(facts)
    return item is not None and item.reason == "beyond_share_of_sd" and (item.difference or 0) < 0


@licence("change", "the rows are a whole population and the center moved by a tenth of an SD or less")
def center_moved_little_whole(facts: ChangeFacts) -> bool:
    item = _center(facts)
    return item is not None and item.reason == "within_share_of_sd"


@licence("change", "the lead measure changed")
def lead_changed(facts: ChangeFacts) -> bool:
    item = _item(facts, "center.lead")
    return item is not None and item.mention


def _spread_item(facts: ChangeFacts):
    return _item(facts, "spread.iqr" if facts.changes.lead == "median" else "spread.sd")


@licence("change", "the spread grew by more than 10 %")
def spread_wider(facts: ChangeFacts) -> bool:
    item = _spread_item(facts)
    return item is not None and item.mention and (item.difference or 0) > 0


@licence("change", "the spread shrank by more than 10 %")
def spread_narrower(facts: ChangeFacts) -> bool:
    item = _spread_item(facts)
    return item is not None and item.mention and (item.difference or 0) < 0


@licence("change", "the number of flagged values changed")
def flagged_count_changed(facts: ChangeFacts) -> bool:
    item = _item(facts, "outliers.count")
    return item is not None and item.mention


@licence("change", "the fences moved between the builds")
def fences_moved(facts: ChangeFacts) -> bool:
    old, new = facts.old.outliers, facts.new.outliers
    if old is None or new is None:
        return False
    return (old.lower_fence, old.upper_fence) != (new.lower_fence, new.upper_fence)


@licence("change", "the number of rows with no value changed")
def missing_changed(facts: ChangeFacts) -> bool:
    item = _item(facts, "quality.n_missing")
    return item is not None and item.mention


@licence("change", "the number of impossible values changed")
def impossible_changed(facts: ChangeFacts) -> bool:
    item = _item(facts, "quality.n_impossible")
    return item is not None and item.mention


@licence("change", "the shape label or its strength changed")
def shape_changed(facts: ChangeFacts) -> bool:
    label, strength = _item(facts, "shape.label"), _item(facts, "shape.strength")
    return bool((label and label.mention) or (strength and strength.mention))


@licence("change", "the center was judged by a difference interval (both builds had intervals)")
def judged_by_interval(facts: ChangeFacts) -> bool:
    item = _center(facts)
    return item is not None and item.reason in ("beyond_interval", "within_interval", "unchanged") and \
        not facts.new.variable.population

