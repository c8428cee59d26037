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
Every sentence is a claim entry of the bank, said only when its licence holds
(narrator.phrasing.licences); a sentence whose licences do not hold is left out.
"""

from __future__ import annotations

from narrator.engine.bins import DOMINANT_BIN_SHARE
from narrator.engine.center import MEAN_SHIFT_SHARE
from narrator.engine.quality import MIN_FOR_CONFIDENT, MIN_FOR_SHAPE
from narrator.engine.shape import BIMODALITY_THRESHOLD, HEAVY_TAIL_KURTOSIS
from narrator.phrasing.context import WordingContext
from narrator.phrasing.memo import flagged_claim, left_out_items, robust_leans_other_way
from narrator.phrasing.narrative import Paragraph, Sentence

PERCENT_EXAMPLE = 0.12  # the example share in the words about cells with a percent sign


def _kept(*sentences: Sentence | None) -> list[Sentence]:
    return [sentence for sentence in sentences if sentence is not None]


def summary_claim(findings) -> dict:
    center, spread = findings.center, findings.spread
    return {"median": center.median, "q1": spread.q1, "q3": spread.q3, "mean": center.mean, "sd": spread.sd,
            "n": findings.n}


def center_sentences(ctx: WordingContext) -> list[Sentence]:
    findings = ctx.findings
    left_out, left_keys, counts = left_out_items(ctx)
    sentences = _kept(ctx.say("technical.size", ("n", *left_keys), n=ctx.whole(findings.n), left_out=left_out,
                              claim={"n": findings.n, **counts}))
    center, spread = findings.center, findings.spread
    if center is None:
        return sentences
    if findings.n == 1:
        return sentences + _kept(ctx.say("technical.single", ("center.median",), median=ctx.exact(center.median),
                                         claim={"value": center.median}))
    sentences += _kept(ctx.say(
        "technical.center", ("center.median", "spread.q1", "spread.q3", "center.mean", "spread.sd"),
        median=ctx.exact(center.median), q1=ctx.exact(spread.q1), q3=ctx.exact(spread.q3),
        mean=ctx.exact(center.mean), sd=ctx.exact(spread.sd), claim=summary_claim(findings)))
    sentences += _kept(lead_sentence(ctx))
    sentences += _kept(ctx.say("technical.mean_pull", ("center.mean_pull",),
                               claim={"direction": center.mean_pull, "mean": center.mean, "median": center.median,
                                      "sd": spread.sd, "label": findings.shape.label}))
    return sentences


def lead_sentence(ctx: WordingContext) -> Sentence | None:
    center = ctx.findings.center
    share = ctx.fmt.fixed(MEAN_SHIFT_SHARE, 1)
    reasons = ctx.fmt.list([ctx.text(f"words.lead_reason.{code}", share=share) for code in center.lead_reasons
                            if code != "not_skewed"])
    flagged = ctx.findings.outliers
    return ctx.say("technical.lead", ("center.lead", "center.lead_reasons"), reasons=reasons, share=share,
                   claim={"lead": center.lead, "reasons": tuple(center.lead_reasons), "share": MEAN_SHIFT_SHARE,
                          **flagged_claim(ctx.findings), "label": ctx.findings.shape.label,
                          "strength": ctx.findings.shape.strength, "flagged_count": flagged.count if flagged else 0})


def shape_words(ctx: WordingContext) -> str:
    shape = ctx.findings.shape
    words = ctx.text(f"words.shape.{shape.label}")
    if shape.strength and shape.label in ("right-skewed", "left-skewed"):
        return f"{ctx.text(f'words.strength.{shape.strength}')} {words}"
    return words


def shape_claim(findings) -> dict:
    shape = findings.shape
    return {"label": shape.label, "strength": shape.strength, "n": findings.n, "g1": shape.skewness,
            "bowley": shape.bowley, "medcouple": shape.medcouple}


def _distinct(widths) -> list[float]:
    seen: list[float] = []
    for width in widths:
        if width not in seen:
            seen.append(width)
    return seen


def grid_values(ctx: WordingContext) -> tuple[dict, dict]:
    """Words and claim numbers of the bin-sensitivity grid."""
    grid = ctx.findings.shape.bin_sensitivity
    widths = _distinct(grid.widths)
    values = {
        "grids": ctx.whole(len(grid.widths) * len(grid.offsets)),
        "widths": ctx.fmt.number_list([width_text(ctx, w) for w in widths]),
        "offsets": ctx.fmt.number_list([ctx.fmt.fixed(o, 2) for o in grid.offsets]),
        "peaks": ctx.count(grid.min_peaks, "peak"),
        "min_peaks": ctx.whole(grid.min_peaks),
        "max_peaks": ctx.whole(grid.max_peaks),
        "dominant": ctx.fmt.percent(DOMINANT_BIN_SHARE, 0),
    }
    claim = {"widths": tuple(grid.widths), "offsets": tuple(grid.offsets), "base_width": grid.base_width,
             "grids": len(grid.widths) * len(grid.offsets),
             "min_peaks": grid.min_peaks, "max_peaks": grid.max_peaks, "undecided": grid.undecided,
             "sensitive": grid.sensitive, "largest_bin_share": grid.largest_bin_share,
             "integer_aligned": bool(ctx.findings.histogram.integer_aligned) if ctx.findings.histogram else False}
    return values, claim


def shape_sentences(ctx: WordingContext) -> list[Sentence]:
    findings = ctx.findings
    shape = findings.shape
    keys = ("shape.label", "shape.strength", "shape.evidence")
    heaping = findings.quality.get("heaping")
    base = heaping.detail.get("base", 0.0) if heaping is not None else 0.0
    share = heaping.share if heaping is not None and heaping.share is not None else 0.0
    sentences = _kept(ctx.say("technical.shape", keys, shape_words=shape_words(ctx), n=ctx.whole(findings.n),
                              peaks=ctx.count(shape.density_peaks or 0, "peak"), base=ctx.recorded(base),
                              heaped_share=ctx.fmt.percent(share, 0),
                              claim={**shape_claim(findings), "base": base, "share": share}))
    if findings.spread is not None and findings.spread.range == 0:
        return sentences
    if findings.n < MIN_FOR_SHAPE:
        # "Too few values to judge the shape" stands alone: no skewness or kurtosis figures, no peaks of a
        # density curve that is not drawn below TINY_N, no "tails heavier than a normal distribution's".
        return sentences
    if shape.skewness is not None:
        stat_keys = ("shape.skewness", "shape.skewness_se", "shape.bowley", "shape.medcouple", "shape.excess_kurtosis")
        p_text = ctx.p_value(shape.skewness_test_p) if shape.skewness_test_p is not None else ""
        sentences += _kept(ctx.say(
            "technical.skew_statistics", (*stat_keys, "shape.skewness_test_z", "shape.skewness_test_p"),
            g1=ctx.stat(shape.skewness), se=ctx.stat(shape.skewness_se), bowley=ctx.stat(shape.bowley),
            medcouple=ctx.stat(shape.medcouple), g2=ctx.stat(shape.excess_kurtosis), z=ctx.stat(shape.skewness_test_z),
            p=p_text,
            claim={"g1": shape.skewness, "se": shape.skewness_se, "bowley": shape.bowley, "medcouple": shape.medcouple,
                   "g2": shape.excess_kurtosis, "z": shape.skewness_test_z, "p": shape.skewness_test_p,
                   "n": findings.n}))
    if shape.skewness is not None and ("skew_from_few_values" in shape.reasons or robust_leans_other_way(shape)):
        # G1 and the robust measures tell different stories: say which, so "roughly symmetric" beside G1 = 1.87
        # (or "right-skewed" beside a negative Bowley skewness) is read as the rule meant it.
        key = "technical.skew_from_few" if "skew_from_few_values" in shape.reasons else "technical.robust_disagree"
        sentences += _kept(ctx.say(key, ("shape.skewness", "shape.bowley", "shape.medcouple"),
                                   claim={"g1": shape.skewness, "bowley": shape.bowley,
                                          "medcouple": shape.medcouple, "label": shape.label}))
    sentences += _kept(ctx.say(
        "technical.peaks", ("shape.density_peaks", "shape.bimodality_coefficient"),
        peaks=ctx.count(shape.density_peaks or 0, "peak"),
        bc=ctx.fmt.fixed(shape.bimodality_coefficient, 3) if shape.bimodality_coefficient is not None else "",
        bc_threshold=ctx.fmt.fixed(BIMODALITY_THRESHOLD, 3),
        claim={"peaks": shape.density_peaks, "bc": shape.bimodality_coefficient, "g1": shape.skewness,
               "g2": shape.excess_kurtosis, "n": findings.n}))
    sentences += _kept(ctx.say("technical.heavy_tails", ("shape.heavy_tails", "shape.excess_kurtosis"),
                               g2_threshold=ctx.fmt.fixed(HEAVY_TAIL_KURTOSIS, 0), claim={"g2": shape.excess_kurtosis}))
    if shape.bin_sensitivity is not None:
        values, claim = grid_values(ctx)
        sentences += _kept(ctx.say("technical.bins", ("shape.bin_sensitivity",), claim=claim, **values))
    return sentences


def _width_decimals(width: float) -> int:
    """Decimals to show a nice bin width (1, 2, 2.5 or 5 times a power of ten) exactly."""
    for decimals in range(0, 10):
        if abs(round(width, decimals) - width) <= 1e-9 * max(1.0, abs(width)):
            return decimals
    return 9


def width_text(ctx: WordingContext, width: float) -> str:
    return ctx.fmt.fixed(width, _width_decimals(width))


def rule_words(ctx: WordingContext) -> dict[str, str]:
    """The outlier rule's name, how it was chosen, and why a first choice fell back, in words."""
    flagged = ctx.findings.outliers
    if flagged is None:
        return {"rule": "", "chosen": "", "fallback_words": "", "first_rule": ""}
    if flagged.chosen_by == "user":
        chosen = ctx.text("technical.chosen.user")
    else:
        chosen = ctx.text(f"technical.chosen.auto_{flagged.auto_reason or 'not_skewed'}")
    first = ctx.text(f"words.outlier_rule.{flagged.fallback_from}") if flagged.fallback_from else ""
    fallback = ctx.text(f"words.fallback.{flagged.fallback_reason}", first_rule=first) if flagged.fallback_reason \
        else ""
    return {"rule": ctx.text(f"words.outlier_rule.{flagged.rule}"), "chosen": chosen, "fallback_words": fallback,
            "first_rule": first}


def outlier_sentences(ctx: WordingContext) -> list[Sentence]:
    findings = ctx.findings
    flagged = findings.outliers
    claim = flagged_claim(findings)
    words = rule_words(ctx)
    lower = ctx.exact(flagged.lower_fence) if flagged is not None and flagged.lower_fence is not None else ""
    upper = ctx.exact(flagged.upper_fence) if flagged is not None and flagged.upper_fence is not None else ""
    sentences = _kept(ctx.say("technical.outlier_rule", ("outliers.rule", "outliers.lower_fence",
                                                         "outliers.upper_fence"),
                              lower=lower, upper=upper, claim=claim, **words))
    if flagged is None or flagged.note == "not_run_too_few":
        return sentences
    sentences += _kept(ctx.say("technical.mad_zero_fallback", ("outliers.note",),
                               claim={"constants": dict(flagged.constants)}))
    spell_out = flagged.count <= ctx.bank.spell_out_max
    sentences += _kept(ctx.say("technical.flagged", ("outliers.count", "outliers.count_low", "outliers.count_high"),
                               outlier_count=ctx.count(flagged.count, "value"), claim=claim,
                               subject=(flagged.count, "value"),
                               # The parts are written like the total: "seven values: zero below ... and seven
                               # above", "12 values: 4 below ... and 8 above" (Chicago, from memory).
                               low=ctx.fmt.count_number(flagged.count_low, "value", spell_out=spell_out, alone=True),
                               high=ctx.fmt.count_number(flagged.count_high, "value", spell_out=spell_out, alone=True)))
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
    subject = (flagged.count, "value")
    claim = {"n_without": without.n, "mean_without": without.mean, "median_without": without.median,
             "mean": findings.center.mean, "median": findings.center.median, **flagged_claim(findings)}
    sentences = _kept(ctx.say(
        "technical.without",
        ("without_outliers.n", "without_outliers.mean", "without_outliers.mean_change",
         "without_outliers.median", "without_outliers.median_change"), subject=subject,
        n_without=ctx.whole(without.n), mean_without=ctx.exact(without.mean),
        mean_change=ctx.signed(without.mean_change, decimals), mean_change_relative=relative,
        median_without=ctx.exact(without.median), median_change=ctx.signed(without.median_change, decimals),
        claim=claim))
    lead = findings.center.lead
    sentences += _kept(ctx.say("technical.lead_without", ("without_outliers.lead_without",), subject=subject,
                               lead_without=ctx.text(f"words.lead.{without.lead_without or lead}"),
                               lead=ctx.text(f"words.lead.{lead}"),
                               claim={**claim, "lead": lead, "lead_without": without.lead_without or lead}))
    if without.most_influential_value is not None and without.most_influential_row is not None:
        sentences += _kept(ctx.say(
            "technical.influential",
            ("without_outliers.most_influential_value", "without_outliers.most_influential_row",
             "without_outliers.most_influential_mean_shift"),
            value=ctx.recorded(without.most_influential_value), row=ctx.whole(without.most_influential_row),
            shift=ctx.signed(without.most_influential_mean_shift, decimals),
            claim={"value": without.most_influential_value, "row": without.most_influential_row,
                   "shift": without.most_influential_mean_shift}))
    return sentences


def interval_claim(findings) -> dict:
    intervals = findings.intervals
    mean, median = intervals.mean, intervals.median
    numbers = {"reason": intervals.reason, "population": findings.variable.population}
    if mean is not None:
        numbers.update({"level": mean.level, "mean_low": mean.low, "mean_high": mean.high, "mean_method": mean.method,
                        "mean": findings.center.mean})
    if median is not None:
        numbers.update({"level": median.level, "median_low": median.low, "median_high": median.high,
                        "median_method": median.method, "median_ranks": median.ranks,
                        "median_coverage": median.coverage, "median": findings.center.median})
    return numbers


def interval_values(ctx: WordingContext) -> dict[str, str]:
    """The intervals' numbers and methods in words, for whichever intervals were computed."""
    intervals = ctx.findings.intervals
    values: dict[str, str] = {}
    for name, interval in (("mean", intervals.mean), ("median", intervals.median)):
        if interval is not None:
            values.update({"level": ctx.fmt.percent(interval.level, 0), f"{name}_low": ctx.exact(interval.low),
                           f"{name}_high": ctx.exact(interval.high), f"{name}_method": interval_method(ctx, interval)})
    return values


def interval_sentences(ctx: WordingContext) -> list[Sentence]:
    claim = interval_claim(ctx.findings)
    values = interval_values(ctx)
    sentences = _kept(ctx.say("technical.intervals", ("intervals.median.low", "intervals.median.high",
                                                      "intervals.mean.low", "intervals.mean.high"),
                              claim=claim, **values))
    sentences += _kept(ctx.say("technical.intervals_methods", ("intervals.median.method", "intervals.mean.method"),
                               claim=claim, **values))
    sentences += _kept(ctx.say("technical.independence", ("intervals.reason",)))
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


_FLAG_NOUNS = {"missing": "row", "non_numeric": "row", "non_finite": "row", "ambiguous_grouping": "row",
               "other_convention": "row", "percent_signs": "row", "groups_suppressed": "group"}


def quality_paragraphs(ctx: WordingContext) -> list[Paragraph]:
    """One bullet per data-quality flag, or one sentence saying the checks found nothing."""
    quality = ctx.findings.quality
    bullets = []
    for flag in quality.flags:
        key = f"quality.{flag.code}" if ctx.bank.has(f"quality.{flag.code}") else "quality.other"
        noun = _FLAG_NOUNS.get(flag.code, "value")
        texts = [ctx.text("numbers.quoted", text=text) for text in flag.texts if text.strip()]
        values = {
            "code": flag.code,
            "count": ctx.count(flag.count, noun),
            "share": ctx.fmt.percent(flag.share, 1) if flag.share is not None else "–",
            "rows": ctx.rows(flag.rows) if flag.rows else "–",
            "value": ctx.recorded(flag.values[0]) if flag.values else "–",
            "count_times": ctx.times(flag.count),
            "distinct": ctx.fmt.count_number(int(flag.detail.get("distinct", flag.count)), "value"),  # "only four"
            "base": ctx.recorded(flag.detail.get("base", flag.values[0] if flag.values else 0)),
            "expected": ctx.fmt.percent(flag.detail.get("expected_share", 0.0), 0),
            "texts": ctx.fmt.list(texts, style="or") if texts else "",
            "min_n": ctx.whole(MIN_FOR_SHAPE),
            "small_n": ctx.whole(MIN_FOR_CONFIDENT),
            "example_cell": ctx.fmt.percent(PERCENT_EXAMPLE),  # a cell "12%" ...
            "example_value": ctx.fmt.fixed(PERCENT_EXAMPLE * 100, 0),  # ... is read as 12
        }
        if flag.code == "missing_code" and flag.values:
            values["code"] = ctx.recorded(flag.values[0])
        if flag.code == "missing":
            values["what"] = ctx.part("quality.missing_held", **values) or ""
        claim = {"code": flag.code, "count": flag.count, "share": flag.share, "values": tuple(flag.values),
                 "detail": dict(flag.detail), "rows": tuple(flag.rows), "texts": tuple(flag.texts),
                 "value": flag.values[0] if flag.values else None, "n": ctx.findings.n}
        sentence = ctx.say(key, (f"quality.flags.{flag.code}",), subject=(flag.count, noun), claim=claim, **values)
        if sentence is not None:
            bullets.append(Paragraph((sentence,), style="bullet"))
    if not bullets:
        sentence = ctx.say("quality.none", ("quality.flags",), claim={"code": None})
        return [Paragraph((sentence,))] if sentence is not None else []
    return bullets


def technical_summary(ctx: WordingContext) -> Paragraph:
    """The opening paragraph of the full report: center, shape, outliers, change without them, intervals."""
    sentences = center_sentences(ctx)
    sentences.extend(shape_sentences(ctx)[:1])
    sentences.extend([s for s in outlier_sentences(ctx) if s.claims[0].kind != "method"][:2])
    sentences.extend(without_sentences(ctx)[:1])
    sentences.extend(interval_sentences(ctx)[:1])
    return Paragraph(tuple(sentences))
