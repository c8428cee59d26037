"""The methods paragraph and its reference list: exactly what the engine computed, with its constants.

The paragraph states, in order: n and exclusions; the reporting form and the
values (SAMPL, Lang & Altman 2013); the quantile definition (Hyndman & Fan
1996); the lead-measure rule and its constant; the shape measures; the
outlier rule and its constants; the interval methods; the bin and bandwidth
rules, with any cap, floor, fallback or focus window that changed a number; the library
versions from ``findings.provenance["libraries"]``. A rule that was not run is said not to
have run, and a rule is named only beside a number it produced.

:func:`methods_paragraph` returns the paragraph; :func:`references_used`
returns the bank keys (``references.<key>``) of the published methods it
named, in alphabetical order.

The rule constants the engine does not copy into the findings (the lead
rule's mean-shift share, Bulmer's cut points) are read from the engine's own
modules, so the text cannot drift from the code.
"""

from __future__ import annotations

import math

from narrator.engine.bins import MAX_BINS
from narrator.engine.center import MEAN_SHIFT_SHARE
from narrator.engine.density import MAX_RANGE_IN_BANDWIDTHS
from narrator.engine.entry_errors import DECIMAL_PLACES, LOG_FAR_K, SURPRISE_P
from narrator.engine.shape import BIMODALITY_THRESHOLD, BULMER_MODERATE, BULMER_STRONG, MIN_FOR_SHAPE, ROBUST_NEAR_ZERO
from narrator.phrasing.context import WordingContext
from narrator.phrasing.licences import TINY_N
from narrator.phrasing.memo import flagged_claim, left_out_items
from narrator.phrasing.narrative import Claim, Paragraph, Sentence
from narrator.phrasing.technical import (
    grid_values,
    interval_claim,
    interval_values,
    rule_words,
    summary_claim,
    width_text,
)

RULE_REFERENCES = {
    "tukey": "tukey_1977",
    "adjusted": "hubert_vandervieren_2008",
    "modified-z": "iglewicz_hoaglin_1993",
    "esd": "rosner_1983",
}
BIN_REFERENCES = {
    "freedman-diaconis": "freedman_diaconis_1981",
    "scott": "scott_1979",
    "sturges": "sturges_1926",
    "doane": "doane_1976",
}
BANDWIDTH_REFERENCES = {"silverman": "silverman_1986", "scott": "scott_1992", "sheather-jones": "sheather_jones_1991"}
INTERVAL_REFERENCES = {"t": "student_1908", "bca-bootstrap": "efron_1987", "order-statistic": "conover_1999"}
QUANTILE_REFERENCES = {"hyndman-fan-7": "hyndman_fan_1996"}
LIBRARY_ORDER = ("narrator", "numpy", "scipy", "pandas", "matplotlib", "python-docx", "babel")


def _outlier_sentences(ctx: WordingContext) -> list[Sentence]:
    flagged = ctx.findings.outliers
    claim = flagged_claim(ctx.findings)
    words = rule_words(ctx)
    keys = ("outliers.rule", "outliers.constants")
    sentences = [ctx.say("methods.outlier_fallback", keys, claim=claim, **words)]
    if flagged is None or flagged.note == "not_run_too_few":
        return [s for s in [*sentences, ctx.say("methods.outlier_generic", keys, claim=claim, **words)] if s]
    constants = flagged.constants

    def number(name: str, decimals: int = 1) -> str:
        return ctx.fmt.fixed(constants[name], decimals)

    rule = words["rule"]
    if flagged.rule == "tukey" and {"coefficient", "far_coefficient"} <= set(constants):
        sentence = ctx.say("methods.outlier_tukey", keys, rule=rule, k=number("coefficient"),
                           far_k=number("far_coefficient"), claim=claim)
    elif flagged.rule == "adjusted" and {"coefficient", "far_coefficient", "medcouple", "lower_exponent",
                                         "upper_exponent"} <= set(constants):
        sentence = ctx.say("methods.outlier_adjusted", keys, rule=rule, k=number("coefficient"),
                           far_k=number("far_coefficient"), mc=number("medcouple", 3),
                           lower_exponent=number("lower_exponent", 0), upper_exponent=number("upper_exponent", 0),
                           claim=claim)
    elif flagged.rule == "modified-z" and "threshold" in constants and "mean_ad_constant" in constants:
        sentence = ctx.say("methods.outlier_modified-z_fallback", keys, rule=rule,
                           scale=number("mean_ad_constant", 6), threshold=number("threshold"), claim=claim)
    elif flagged.rule == "modified-z" and "threshold" in constants and "consistency_constant" in constants:
        sentence = ctx.say("methods.outlier_modified-z", keys, rule=rule, scale=number("consistency_constant", 4),
                           threshold=number("threshold"), claim=claim)
    elif flagged.rule == "esd" and {"alpha", "max_outliers"} <= set(constants):
        sentence = ctx.say("methods.outlier_esd", keys, rule=rule, alpha=number("alpha", 2),
                           max_outliers=ctx.whole(constants["max_outliers"]), claim=claim)
    else:
        sentence = ctx.say("methods.outlier_generic", keys, rule=rule, claim=claim)
    return [s for s in (*sentences, sentence) if s is not None]


def _libraries(ctx: WordingContext) -> str:
    versions = ctx.findings.provenance.get("libraries") or {}
    ordered = [name for name in LIBRARY_ORDER if name in versions]
    ordered += sorted(name for name in versions if name not in LIBRARY_ORDER)
    return ctx.fmt.list([ctx.text("format.library", name=name, version=str(versions[name])) for name in ordered])


def _histogram_sentences(ctx: WordingContext) -> list[Sentence]:
    """The rule that made each width the report shows, with any cap, fallback or focus window stated."""
    findings = ctx.findings
    histogram = findings.histogram
    if histogram is None:
        return []
    fmt = ctx.fmt
    aligned = ctx.text("words.methods.integer_aligned") if histogram.integer_aligned else ""
    bin_rule = ctx.text(f"words.bin_rule.{histogram.rule}")
    fallback_key = f"words.bin_fallback.{histogram.note}"
    fallback = ctx.text(fallback_key) if ctx.bank.has(fallback_key) else ""
    claim = {"rule": histogram.rule, "width": histogram.width, "raw_width": histogram.raw_width,
             "note": histogram.note, "integer_aligned": histogram.integer_aligned, "max_bins": MAX_BINS,
             "edges": (histogram.edges[0], histogram.edges[-1]), "bins": len(histogram.counts)}
    sentences = [ctx.say("methods.histogram", ("histogram.rule", "histogram.width", "histogram.note"),
                         bin_rule=bin_rule, width=width_text(ctx, histogram.width), aligned=aligned,
                         raw_width=fmt.fixed(histogram.raw_width, _raw_decimals(histogram)),
                         max_bins=ctx.whole(MAX_BINS), bin_fallback=fallback, claim=claim)]
    focus = findings.histogram_focus
    if focus is not None:
        hidden = focus.below + focus.above
        sentences.append(ctx.say(
            "methods.histogram_focus", ("histogram_focus.width",), low=ctx.recorded(focus.edges[0]),
            high=ctx.recorded(focus.edges[-1]), focus_width=width_text(ctx, focus.width), bin_rule=bin_rule,
            hidden=ctx.count(hidden, "value"), subject=(hidden, "value"),
            claim={**claim, "focus_width": focus.width, "focus_low": focus.edges[0], "focus_high": focus.edges[-1],
                   "hidden": hidden}))
    grid = findings.shape.bin_sensitivity
    if grid is not None:
        values, grid_claim = grid_values(ctx)
        sentences.append(ctx.say("methods.bin_grid", ("shape.bin_sensitivity",), claim=grid_claim, **values))
    return [s for s in sentences if s is not None]


def _raw_decimals(histogram) -> int:
    """Enough decimals to show the rule's raw width to two significant digits."""
    raw = abs(histogram.raw_width)
    if not raw > 0:
        return 0
    return max(0, 1 - math.floor(math.log10(raw)))


def _density_sentence(ctx: WordingContext) -> Sentence | None:
    density = ctx.findings.density
    if density is None or ctx.findings.n < TINY_N:  # no curve is drawn for two to four values
        return None
    fmt = ctx.fmt
    bounds = [b for b in (density.lower_bound, density.upper_bound) if b is not None]
    reflected = ctx.text("words.methods.reflected", bound=fmt.number_list([ctx.recorded(b) for b in bounds])) \
        if density.reflected and bounds else ""
    return ctx.say(
        "methods.density", ("density.bandwidth", "density.bandwidth_rule", "density.method"),
        bandwidth=fmt.fixed(density.bandwidth, ctx.methods_decimals + 1),
        bandwidth_rule=ctx.text(f"words.bandwidth_rule.{density.bandwidth_rule}"),
        density_method=ctx.text(f"words.density_method.{density.method}"), reflected=reflected,
        floor_divisor=ctx.whole(MAX_RANGE_IN_BANDWIDTHS),
        claim={"bandwidth": density.bandwidth, "rule": density.bandwidth_rule, "note": density.bandwidth_note,
               "floor_divisor": MAX_RANGE_IN_BANDWIDTHS, "reflected": density.reflected,
               "bounds": tuple(bounds)})


def methods_paragraph(ctx: WordingContext) -> Paragraph:
    """One paragraph saying exactly what was computed and how (see the module docstring)."""
    findings = ctx.findings
    fmt = ctx.fmt
    left_out, left_keys, counts = left_out_items(ctx)
    sentences = [
        ctx.say("methods.sample", ("n", "quality.n_rows"), n_values=ctx.count(findings.n, "value"), name=ctx.name,
                rows_read=ctx.count(findings.quality.n_rows, "row"),
                claim={"n": findings.n, "rows": findings.quality.n_rows}),
        ctx.say("methods.left_out", left_keys or ("n_missing",), left_out=left_out, claim=counts),
        ctx.say("methods.population", ("variable.population",), claim={"population": True}),
    ]
    center, spread = findings.center, findings.spread
    if center is not None and findings.n > 1:
        sentences.append(ctx.say(
            "methods.reporting", ("center.median", "spread.q1", "spread.q3", "center.mean", "spread.sd"),
            median=ctx.exact(center.median), q1=ctx.exact(spread.q1), q3=ctx.exact(spread.q3),
            mean=ctx.exact(center.mean), sd=ctx.exact(spread.sd), tiny=ctx.count(TINY_N, "value"),
            claim=summary_claim(findings)))
        method = spread.quantile_method
        words = ctx.text(f"words.quantile_method.{method}") if ctx.bank.has(f"words.quantile_method.{method}") \
            else method
        if findings.n >= TINY_N:  # two to four values: no quartile or percentile is given
            sentences.append(ctx.say("methods.quantiles", ("spread.quantile_method",), quantile_method=words,
                                     claim={"quantile_method": method}))
        sentences.append(ctx.say("methods.lead_rule", ("center.lead",), share=fmt.fixed(MEAN_SHIFT_SHARE, 1),
                                 lead=ctx.text(f"words.lead.{center.lead}"),
                                 claim={"lead": center.lead, "reasons": tuple(center.lead_reasons),
                                        "share": MEAN_SHIFT_SHARE, **flagged_claim(findings),
                                        "label": findings.shape.label, "strength": findings.shape.strength}))
    sentences.append(ctx.say("methods.shape_rule", ("shape.skewness", "shape.skewness_test_p"),
                             moderate=fmt.fixed(BULMER_MODERATE, 1), strong=fmt.fixed(BULMER_STRONG, 1),
                             test_min_n=ctx.whole(MIN_FOR_SHAPE), bc_threshold=fmt.fixed(BIMODALITY_THRESHOLD, 3),
                             claim={"moderate": BULMER_MODERATE, "strong": BULMER_STRONG}))
    sentences.append(ctx.say("methods.shape_robust", ("shape.bowley", "shape.medcouple"),
                             near_zero=fmt.fixed(ROBUST_NEAR_ZERO, 1), claim={"near_zero": ROBUST_NEAR_ZERO}))
    method_parts = findings.shape.medcouple_method.split(":")
    if len(method_parts) == 3:
        # The engine took the medcouple on a fixed-seed random subsample (large samples): say so, with both numbers.
        sentences.append(ctx.say("methods.medcouple_subsample", ("shape.medcouple_method",),
                                 size=ctx.whole(float(method_parts[1])), seed=method_parts[2],
                                 claim={"size": float(method_parts[1]), "seed": method_parts[2]}))
    accuracy = findings.accuracy
    if accuracy is not None and findings.n > 0:
        # Data larger than memory (narrator.scale): say what is exact, what is merged, what is approximate.
        # accuracy.sketch is "rank-bins:<bins to each doubling of the distance>" (narrator.scale.summaries.RankBins)
        bins = int(str(accuracy.sketch).rsplit(":", 1)[-1])
        sentences.append(ctx.say("methods.scale_exact", ("accuracy.engine", "accuracy.sketch"), bins=ctx.whole(bins),
                                 claim={"bins": bins}))
        for approximate in accuracy.approximate:
            fences = any(key.startswith("outliers.") for key in approximate.depends)
            key = "methods.scale_approximate_fences" if fences else "methods.scale_approximate_medcouple"
            sentences.append(ctx.say(key, ("accuracy.approximate",), bound=fmt.fixed(approximate.bound, 3),
                                     claim={"bound": approximate.bound}))
    sentences.extend(_outlier_sentences(ctx))
    # The rule behind any "probably a typing error" sentence (narrator.engine.entry_errors), with its numbers.
    sentences.append(ctx.say("methods.entry_error_rule", ("unusual.entry_errors",),
                             low_places=ctx.whole(min(DECIMAL_PLACES)), high_places=ctx.whole(max(DECIMAL_PLACES)),
                             surprise=fmt.fixed(SURPRISE_P, 2), k=fmt.fixed(LOG_FAR_K, 0),
                             claim={"places": list(DECIMAL_PLACES), "surprise": SURPRISE_P, "k": LOG_FAR_K}))
    sentences.append(ctx.say("methods.with_without", ("without_outliers",)))
    sentences.append(ctx.say("methods.intervals", ("intervals.mean.method", "intervals.median.method"),
                             claim=interval_claim(findings), **interval_values(ctx)))
    sentences.extend(_histogram_sentences(ctx))
    sentences.append(_density_sentence(ctx))
    libraries = _libraries(ctx)
    if libraries:
        sentences.append(ctx.say("methods.libraries", ("provenance.libraries",), libraries=libraries))
    return Paragraph(tuple(sentence for sentence in sentences if sentence is not None))


def references_used(ctx: WordingContext) -> tuple[str, ...]:
    """Bank keys of the references for the methods this report names, sorted."""
    findings = ctx.findings
    tiny = 2 <= findings.n < TINY_N  # no SAMPL summary (quartiles) and no density curve for two to four values
    used = set() if tiny else {"lang_altman_2013"}
    if findings.accuracy is not None and findings.n > 0:
        used.update({"chan_1979", "karnin_2016"})
    if findings.spread is not None and not tiny:
        used.add(QUANTILE_REFERENCES.get(findings.spread.quantile_method, "hyndman_fan_1996"))
    shape = findings.shape
    if shape.skewness is not None and shape.label != "undetermined":
        used.update({"joanes_gill_1998", "bulmer_1979", "bowley_1920", "brys_2004", "pfister_2013"})
        if shape.skewness_test_p is not None and not findings.variable.population:
            used.add("dagostino_1970")
    if findings.outliers is not None and findings.outliers.note != "not_run_too_few":
        used.add(RULE_REFERENCES[findings.outliers.rule])
    intervals = findings.intervals
    for interval in (intervals.mean, intervals.median):
        if interval is not None and interval.method in INTERVAL_REFERENCES:
            used.add(INTERVAL_REFERENCES[interval.method])
    if findings.histogram is not None:
        used.add(BIN_REFERENCES[findings.histogram.rule])
    density = findings.density
    if density is not None and not tiny:
        used.add(BANDWIDTH_REFERENCES[density.bandwidth_rule])
        if density.method == "binned-fft":
            used.add("wand_1994")
        if density.reflected:
            used.add("schuster_1985")
    return tuple(sorted(used))


def references_paragraphs(ctx: WordingContext) -> tuple[Paragraph, ...]:
    return tuple(Paragraph((reference_sentence(ctx, key),), style="reference") for key in references_used(ctx))


def reference_sentence(ctx: WordingContext, key: str) -> Sentence:
    """One entry of the reference list: words about the report, not the data (claim kind "note")."""
    return Sentence(ctx.text(f"references.{key}"), (), (Claim("note", {"reference": key}),))
