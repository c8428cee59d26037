"""Technical prose: the statistics in reporting form, for the full report.

===============================  ==============================================
Function                         Paragraph(s) it returns
===============================  ==============================================
:func:`center_sentences`         n, what was left out, median (IQR), mean (SD), lead
:func:`shape_sentences`          hedged shape label, its statistics, bin grid
:func:`outlier_sentences`        the rule, its fences, what it flagged
:func:`without_sentences`        center and spread without the flagged values
:func:`interval_sentences`       confidence intervals, or why there are none
:func:`quality_paragraphs`       one bullet per data-quality flag
:func:`technical_summary`        the paragraph that opens the full report
===============================  ==============================================

Reporting form follows SAMPL (Lang & Altman 2013): "median (IQR)" and
"mean (SD)", always with n; the standard error is never used for spread.
"""

from __future__ import annotations

from narrator.engine.center import MEAN_SHIFT_SHARE
from narrator.engine.quality import MIN_FOR_CONFIDENT, MIN_FOR_SHAPE
from narrator.engine.shape import BIMODALITY_THRESHOLD, HEAVY_TAIL_KURTOSIS
from narrator.phrasing.context import WordingContext
from narrator.phrasing.memo import left_out_items
from narrator.phrasing.narrative import Paragraph, Sentence

PERCENT_EXAMPLE = 0.12  # the example share in the words about cells with a percent sign


def center_sentences(ctx: WordingContext) -> list[Sentence]:
    findings = ctx.findings
    left_out, left_keys = left_out_items(ctx, "memo.left_out")
    tail = ctx.text("technical.left_out", left_out=left_out) if left_out else ctx.text("technical.no_left_out")
    sentences = [ctx.sentence("technical.size", ("n", *left_keys), n=ctx.whole(findings.n), left_out_sentence=tail)]
    center, spread = findings.center, findings.spread
    if center is None:
        return sentences
    if findings.n == 1:
        return [*sentences, ctx.sentence("technical.single", ("center.median",), median=ctx.exact(center.median))]
    sentences.append(ctx.sentence(
        "technical.center", ("center.median", "spread.q1", "spread.q3", "center.mean", "spread.sd"),
        median=ctx.exact(center.median), q1=ctx.exact(spread.q1), q3=ctx.exact(spread.q3),
        mean=ctx.exact(center.mean), sd=ctx.exact(spread.sd)))
    reasons = ctx.fmt.list([ctx.text(f"words.lead_reason.{code}", share=ctx.fmt.fixed(MEAN_SHIFT_SHARE, 1))
                            for code in center.lead_reasons])
    sentences.append(ctx.sentence("technical.lead", ("center.lead", "center.lead_reasons"),
                                  lead=ctx.text(f"words.lead.{center.lead}"), reasons=reasons))
    if center.mean_median_gap_material and center.mean_pull in ("higher", "lower"):
        sentences.append(ctx.sentence(f"technical.mean_pull_{center.mean_pull}", ("center.mean_pull",)))
    return sentences


def shape_words(ctx: WordingContext) -> str:
    shape = ctx.findings.shape
    words = ctx.text(f"words.shape.{shape.label}")
    if shape.strength and shape.label in ("right-skewed", "left-skewed"):
        return f"{ctx.text(f'words.strength.{shape.strength}')} {words}"
    return words


def shape_sentences(ctx: WordingContext) -> list[Sentence]:
    findings = ctx.findings
    shape = findings.shape
    hedge = ctx.hedge
    keys = ("shape.label", "shape.strength", "shape.evidence")
    if findings.spread is not None and findings.spread.range == 0:
        return [ctx.sentence("technical.shape.no_spread", ("spread.range",))]
    if hedge.level == "too_few":
        return [ctx.sentence("technical.shape.too_few", ("n",), n=ctx.whole(findings.n))]
    if hedge.level == "unclear":
        sentences = [ctx.sentence("technical.shape.unclear", keys)]
    else:
        variant = "small" if findings.n < 20 else hedge.level
        sentences = [ctx.sentence(f"technical.shape.{variant}", keys, shape_words=shape_words(ctx),
                                  n=ctx.whole(findings.n))]
    if shape.skewness is not None:
        common = {"g1": ctx.stat(shape.skewness), "se": ctx.stat(shape.skewness_se), "bowley": ctx.stat(shape.bowley),
                  "medcouple": ctx.stat(shape.medcouple), "g2": ctx.stat(shape.excess_kurtosis)}
        stat_keys = ("shape.skewness", "shape.skewness_se", "shape.bowley", "shape.medcouple", "shape.excess_kurtosis")
        if shape.skewness_test_p is not None:
            sentences.append(ctx.sentence("technical.skew_statistics", (*stat_keys, "shape.skewness_test_z",
                                                                        "shape.skewness_test_p"),
                                          z=ctx.stat(shape.skewness_test_z), p=ctx.p_value(shape.skewness_test_p),
                                          **common))
        else:
            sentences.append(ctx.sentence("technical.skew_statistics_no_test", stat_keys, **common))
    if shape.density_peaks is not None and shape.bimodality_coefficient is not None:
        sentences.append(ctx.sentence("technical.peaks", ("shape.density_peaks", "shape.bimodality_coefficient"),
                                      peaks=ctx.count(shape.density_peaks, "peak"),
                                      bc=ctx.fmt.fixed(shape.bimodality_coefficient, 3),
                                      bc_threshold=ctx.fmt.fixed(BIMODALITY_THRESHOLD, 3)))
    if shape.heavy_tails:
        sentences.append(ctx.sentence("technical.heavy_tails", ("shape.heavy_tails", "shape.excess_kurtosis"),
                                      g2_threshold=ctx.fmt.fixed(HEAVY_TAIL_KURTOSIS, 0)))
    grid = shape.bin_sensitivity
    if grid is not None:
        values = {
            "grids": ctx.whole(len(grid.widths) * len(grid.offsets)),
            "widths": ctx.fmt.number_list([ctx.fmt.fixed(w, _width_decimals(w)) for w in grid.widths]),
            "offsets": ctx.fmt.number_list([ctx.fmt.fixed(o, 2) for o in grid.offsets]),
            "peaks": ctx.count(grid.min_peaks, "peak"),
            "min_peaks": ctx.whole(grid.min_peaks),
            "max_peaks": ctx.whole(grid.max_peaks),
        }
        key = "technical.bins_sensitive" if grid.sensitive else "technical.bins_stable"
        sentences.append(ctx.sentence(key, ("shape.bin_sensitivity",), **values))
    return sentences


def _width_decimals(width: float) -> int:
    """Decimals to show a nice bin width (1, 2, 2.5 or 5 times a power of ten) exactly."""
    for decimals in range(0, 10):
        if abs(round(width, decimals) - width) <= 1e-9 * max(1.0, abs(width)):
            return decimals
    return 9


def width_text(ctx: WordingContext, width: float) -> str:
    return ctx.fmt.fixed(width, _width_decimals(width))


def outlier_sentences(ctx: WordingContext) -> list[Sentence]:
    flagged = ctx.findings.outliers
    if flagged is None or flagged.note == "not_run_too_few":
        return [ctx.sentence("technical.outlier_not_run", ("outliers.note",))]
    rule = ctx.text(f"words.outlier_rule.{flagged.rule}")
    if flagged.chosen_by == "user":
        chosen = ctx.text("technical.chosen.user")
    else:
        chosen = ctx.text(f"technical.chosen.auto_{flagged.auto_reason or 'not_skewed'}")
    sentences = []
    if flagged.lower_fence is not None and flagged.upper_fence is not None:
        sentences.append(ctx.sentence("technical.outlier_rule", ("outliers.rule", "outliers.lower_fence",
                                                                 "outliers.upper_fence"),
                                      rule=rule, chosen=chosen, lower=ctx.exact(flagged.lower_fence),
                                      upper=ctx.exact(flagged.upper_fence)))
    else:
        sentences.append(ctx.sentence("methods.outlier_generic", ("outliers.rule",), rule=rule))
    if flagged.note == "mad_zero_fallback":
        sentences.append(ctx.sentence("technical.mad_zero_fallback", ("outliers.note",)))
    if flagged.count == 0:
        sentences.append(ctx.sentence("technical.outliers_none", ("outliers.count",)))
    elif flagged.lower_fence is not None and flagged.upper_fence is not None:
        sentences.append(ctx.sentence("technical.flagged", ("outliers.count", "outliers.count_low",
                                                            "outliers.count_high"),
                                      outlier_count=ctx.count(flagged.count, "value"),
                                      low=ctx.whole(flagged.count_low), high=ctx.whole(flagged.count_high)))
    else:
        sentences.append(ctx.sentence("technical.flagged_no_fences", ("outliers.count",),
                                      outlier_count=ctx.count(flagged.count, "value")))
    return sentences


def without_sentences(ctx: WordingContext) -> list[Sentence]:
    findings = ctx.findings
    flagged, without = findings.outliers, findings.without_outliers
    if flagged is None or flagged.count == 0 or without is None or without.n == 0 or without.mean is None:
        return []
    decimals = ctx.methods_decimals
    relative = "–" if without.mean_change_relative is None else ctx.fmt.percent(without.mean_change_relative, 1)
    if without.mean_change_relative is not None and without.mean_change_relative > 0:
        relative = ctx.text("format.signed_positive", number=relative)
    sentences = [ctx.sentence(
        "technical.without",
        ("without_outliers.n", "without_outliers.mean", "without_outliers.mean_change",
         "without_outliers.median", "without_outliers.median_change"),
        n_without=ctx.whole(without.n), mean_without=ctx.exact(without.mean),
        mean_change=ctx.signed(without.mean_change, decimals), mean_change_relative=relative,
        median_without=ctx.exact(without.median), median_change=ctx.signed(without.median_change, decimals))]
    lead = findings.center.lead
    if without.lead_would_change and without.lead_without:
        sentences.append(ctx.sentence("technical.lead_would_change", ("without_outliers.lead_without",),
                                      lead_without=ctx.text(f"words.lead.{without.lead_without}")))
    else:
        sentences.append(ctx.sentence("technical.lead_would_stay", ("without_outliers.lead_without",),
                                      lead=ctx.text(f"words.lead.{lead}")))
    if without.most_influential_value is not None and without.most_influential_row is not None:
        sentences.append(ctx.sentence(
            "technical.influential",
            ("without_outliers.most_influential_value", "without_outliers.most_influential_row",
             "without_outliers.most_influential_mean_shift"),
            value=ctx.recorded(without.most_influential_value), row=ctx.whole(without.most_influential_row),
            shift=ctx.signed(without.most_influential_mean_shift, decimals)))
    return sentences


def interval_sentences(ctx: WordingContext) -> list[Sentence]:
    intervals = ctx.findings.intervals
    if intervals.reason == "population" or ctx.findings.variable.population:
        return [ctx.sentence("technical.intervals_population", ("intervals.reason",))]
    if intervals.mean is None or intervals.median is None:
        return [ctx.sentence("technical.intervals_too_few", ("intervals.reason",))]
    mean, median = intervals.mean, intervals.median
    sentences = [ctx.sentence(
        "technical.intervals",
        ("intervals.median.low", "intervals.median.high", "intervals.mean.low", "intervals.mean.high"),
        level=ctx.fmt.percent(mean.level, 0), median_low=ctx.exact(median.low), median_high=ctx.exact(median.high),
        mean_low=ctx.exact(mean.low), mean_high=ctx.exact(mean.high))]
    sentences.append(ctx.sentence("technical.intervals_methods", ("intervals.median.method", "intervals.mean.method"),
                                  median_method=interval_method(ctx, median), mean_method=interval_method(ctx, mean)))
    sentences.append(ctx.sentence("technical.independence", ("intervals.reason",)))
    return sentences


def interval_method(ctx: WordingContext, interval) -> str:
    """How one interval was made, in words, with its seed, resamples or ranks and coverage."""
    low_rank, high_rank = interval.ranks if interval.ranks else (0, 0)
    return ctx.text(
        f"words.interval_method.{interval.method}",
        resamples=ctx.count(interval.resamples or 0, "resample"),
        seed=ctx.fmt.digits(interval.seed) if interval.seed is not None else "–",
        low_rank=ctx.whole(low_rank),
        high_rank=ctx.whole(high_rank),
        coverage=ctx.fmt.percent(interval.coverage, 1) if interval.coverage is not None else "–",
    )


def quality_paragraphs(ctx: WordingContext) -> list[Paragraph]:
    """One bullet per data-quality flag, or one sentence saying the checks found nothing."""
    quality = ctx.findings.quality
    bullets = []
    for flag in quality.flags:
        key = f"quality.{flag.code}" if ctx.bank.has(f"quality.{flag.code}") else "quality.other"
        noun = {"missing": "row", "non_numeric": "row"}.get(flag.code, "value")
        values = {
            "code": flag.code,
            "count": ctx.count(flag.count, noun),
            "share": ctx.fmt.percent(flag.share, 1) if flag.share is not None else "–",
            "rows": ctx.rows(flag.rows) if flag.rows else "–",
            "value": ctx.recorded(flag.values[0]) if flag.values else "–",
            "count_times": ctx.text("quality.times", ctx.plural(flag.count), count=ctx.whole(flag.count)),
            "distinct": ctx.whole(flag.detail.get("distinct", flag.count)),
            "base": ctx.recorded(flag.detail.get("base", flag.values[0] if flag.values else 0)),
            "expected": ctx.fmt.percent(flag.detail.get("expected_share", 0.0), 0),
            "min_n": ctx.whole(MIN_FOR_SHAPE),
            "small_n": ctx.whole(MIN_FOR_CONFIDENT),
            "example_cell": ctx.fmt.percent(PERCENT_EXAMPLE),  # a cell "12%" ...
            "example_value": ctx.fmt.fixed(PERCENT_EXAMPLE * 100, 0),  # ... is read as 12
        }
        if flag.code == "missing_code" and flag.values:
            values["code"] = ctx.recorded(flag.values[0])
        bullets.append(Paragraph((ctx.sentence(key, (f"quality.flags.{flag.code}",), **values),), style="bullet"))
    if not bullets:
        return [Paragraph((ctx.sentence("quality.none", ("quality.flags",)),))]
    return bullets


def technical_summary(ctx: WordingContext) -> Paragraph:
    """The opening paragraph of the full report: center, shape, outliers, change without them, intervals."""
    sentences = center_sentences(ctx)
    sentences.extend(shape_sentences(ctx)[:1])
    sentences.extend(outlier_sentences(ctx)[:2])
    sentences.extend(without_sentences(ctx)[:1])
    sentences.extend(interval_sentences(ctx)[:1])
    return Paragraph(tuple(sentences))
