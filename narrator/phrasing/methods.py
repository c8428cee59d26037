"""The methods paragraph and its reference list: exactly what the engine computed, with its constants.

The paragraph states, in order: n and exclusions; the reporting form and the
values (SAMPL, Lang & Altman 2013); the quantile definition (Hyndman & Fan
1996); the lead-measure rule and its constant; the shape measures; the
outlier rule and its constants; the interval methods; the bin and bandwidth
rules; the library versions from ``findings.provenance["libraries"]``.
A rule that was not run is said not to have run (DESIGN.md principle 7).

:func:`methods_paragraph` returns the paragraph; :func:`references_used`
returns the bank keys (``references.<key>``) of the published methods it
named, in alphabetical order.

The rule constants the engine does not copy into the findings (the lead
rule's mean-shift share, Bulmer's cut points) are read from the engine's own
modules, so the text cannot drift from the code.
"""

from __future__ import annotations

from narrator.engine.center import MEAN_SHIFT_SHARE
from narrator.engine.shape import BIMODALITY_THRESHOLD, BULMER_MODERATE, BULMER_STRONG, MIN_FOR_SHAPE
from narrator.phrasing.context import WordingContext
from narrator.phrasing.memo import left_out_items
from narrator.phrasing.narrative import Paragraph, Sentence
from narrator.phrasing.technical import interval_method, width_text

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


def _outlier_sentence(ctx: WordingContext) -> Sentence:
    flagged = ctx.findings.outliers
    if flagged is None or flagged.note == "not_run_too_few":
        return ctx.sentence("methods.outlier_not_run", ("outliers.note",))
    constants = flagged.constants
    rule = ctx.text(f"words.outlier_rule.{flagged.rule}")
    keys = ("outliers.rule", "outliers.constants")

    def number(name: str, decimals: int = 1) -> str:
        return ctx.fmt.fixed(constants[name], decimals)

    if flagged.rule == "tukey" and {"coefficient", "far_coefficient"} <= set(constants):
        return ctx.sentence("methods.outlier_tukey", keys, rule=rule, k=number("coefficient"),
                            far_k=number("far_coefficient"))
    if flagged.rule == "adjusted" and {"coefficient", "far_coefficient", "medcouple", "lower_exponent",
                                       "upper_exponent"} <= set(constants):
        return ctx.sentence("methods.outlier_adjusted", keys, rule=rule, k=number("coefficient"),
                            far_k=number("far_coefficient"), mc=number("medcouple", 3),
                            lower_exponent=number("lower_exponent", 0), upper_exponent=number("upper_exponent", 0))
    if flagged.rule == "modified-z" and "threshold" in constants:
        if "mean_ad_constant" in constants:
            return ctx.sentence("methods.outlier_modified-z_fallback", keys, rule=rule,
                                scale=number("mean_ad_constant", 6), threshold=number("threshold"))
        if "consistency_constant" in constants:
            return ctx.sentence("methods.outlier_modified-z", keys, rule=rule,
                                scale=number("consistency_constant", 4), threshold=number("threshold"))
    if flagged.rule == "esd" and {"alpha", "max_outliers"} <= set(constants):
        return ctx.sentence("methods.outlier_esd", keys, rule=rule, alpha=number("alpha", 2),
                            max_outliers=ctx.whole(constants["max_outliers"]))
    return ctx.sentence("methods.outlier_generic", keys, rule=rule)


def _libraries(ctx: WordingContext) -> str:
    versions = ctx.findings.provenance.get("libraries") or {}
    ordered = [name for name in LIBRARY_ORDER if name in versions]
    ordered += sorted(name for name in versions if name not in LIBRARY_ORDER)
    return ctx.fmt.list([ctx.text("format.library", name=name, version=str(versions[name])) for name in ordered])


def methods_paragraph(ctx: WordingContext) -> Paragraph:
    """One paragraph saying exactly what was computed and how (see the module docstring)."""
    findings = ctx.findings
    fmt = ctx.fmt
    sentences = [ctx.sentence("methods.sample", ("n", "quality.n_rows"), n_values=ctx.count(findings.n, "value"),
                              name=ctx.name, rows_read=ctx.count(findings.quality.n_rows, "row"))]
    left_out, left_keys = left_out_items(ctx, "memo.left_out")
    if left_out:
        sentences.append(ctx.sentence("methods.left_out", left_keys, left_out=left_out))
    else:
        sentences.append(ctx.sentence("methods.none_left_out", ("n_missing",)))
    if findings.variable.population:
        sentences.append(ctx.sentence("methods.population", ("variable.population",)))
    center, spread = findings.center, findings.spread
    if center is not None and findings.n > 1:
        sentences.append(ctx.sentence(
            "methods.reporting", ("center.median", "spread.q1", "spread.q3", "center.mean", "spread.sd"),
            median=ctx.exact(center.median), q1=ctx.exact(spread.q1), q3=ctx.exact(spread.q3),
            mean=ctx.exact(center.mean), sd=ctx.exact(spread.sd)))
        method = spread.quantile_method
        words = ctx.text(f"words.quantile_method.{method}") if ctx.bank.has(f"words.quantile_method.{method}") \
            else method
        sentences.append(ctx.sentence("methods.quantiles", ("spread.quantile_method",), quantile_method=words))
        sentences.append(ctx.sentence("methods.lead_rule", ("center.lead",), share=fmt.fixed(MEAN_SHIFT_SHARE, 1),
                                      lead=ctx.text(f"words.lead.{center.lead}")))
    if findings.shape.skewness is not None:
        sentences.append(ctx.sentence("methods.shape_rule", ("shape.skewness", "shape.skewness_test_p"),
                                      moderate=fmt.fixed(BULMER_MODERATE, 1), strong=fmt.fixed(BULMER_STRONG, 1),
                                      test_min_n=ctx.whole(MIN_FOR_SHAPE),
                                      bc_threshold=fmt.fixed(BIMODALITY_THRESHOLD, 3)))
    method_parts = findings.shape.medcouple_method.split(":")
    if method_parts[0] == "subsample" and len(method_parts) == 3:
        # The engine took the medcouple on a fixed-seed random subsample (large samples): say so, with both numbers.
        sentences.append(ctx.sentence("methods.medcouple_subsample", ("shape.medcouple_method",),
                                      size=ctx.whole(float(method_parts[1])), seed=method_parts[2]))
    accuracy = findings.accuracy
    if accuracy is not None and findings.n > 0:
        # Data larger than memory (narrator.scale): say what is exact, what is merged, what is approximate.
        sentences.append(ctx.sentence("methods.scale_exact", ("accuracy.engine", "accuracy.sketch_rank_error"),
                                      rank_error=fmt.percent(accuracy.sketch_rank_error or 0.0, 2)))
        for approximate in accuracy.approximate:
            fences = any(key.startswith("outliers.") for key in approximate.depends)
            key = "methods.scale_approximate_fences" if fences else "methods.scale_approximate_medcouple"
            sentences.append(ctx.sentence(key, ("accuracy.approximate",), bound=fmt.fixed(approximate.bound, 3)))
    sentences.append(_outlier_sentence(ctx))
    if findings.outliers is not None and findings.outliers.count > 0:
        sentences.append(ctx.sentence("methods.with_without", ("without_outliers",)))
    intervals = findings.intervals
    if intervals.reason == "population" or findings.variable.population:
        sentences.append(ctx.sentence("methods.intervals_population", ("intervals.reason",)))
    elif intervals.mean is None or intervals.median is None:
        sentences.append(ctx.sentence("methods.intervals_too_few", ("intervals.reason",)))
    else:
        sentences.append(ctx.sentence("methods.intervals", ("intervals.mean.method", "intervals.median.method"),
                                      level=fmt.percent(intervals.mean.level, 0),
                                      mean_method=interval_method(ctx, intervals.mean),
                                      median_method=interval_method(ctx, intervals.median)))
    histogram = findings.histogram
    if histogram is not None:
        aligned = ctx.text("methods.integer_aligned") if histogram.integer_aligned else ""
        bin_rule = ctx.text(f"words.bin_rule.{histogram.rule}")
        grid = findings.shape.bin_sensitivity
        if grid is not None:
            sentences.append(ctx.sentence(
                "methods.histogram", ("histogram.rule", "histogram.width", "shape.bin_sensitivity"),
                bin_rule=bin_rule, width=width_text(ctx, histogram.width), aligned=aligned,
                widths=fmt.number_list([width_text(ctx, w) for w in grid.widths]),
                offsets=fmt.number_list([fmt.fixed(o, 2) for o in grid.offsets])))
        else:
            sentences.append(ctx.sentence("methods.histogram_no_grid", ("histogram.rule", "histogram.width"),
                                          bin_rule=bin_rule, width=width_text(ctx, histogram.width), aligned=aligned))
    density = findings.density
    if density is not None:
        bounds = [b for b in (density.lower_bound, density.upper_bound) if b is not None]
        reflected = ctx.text("methods.reflected", bound=fmt.number_list([ctx.recorded(b) for b in bounds])) \
            if density.reflected and bounds else ""
        sentences.append(ctx.sentence(
            "methods.density", ("density.bandwidth", "density.bandwidth_rule", "density.method"),
            bandwidth=fmt.fixed(density.bandwidth, ctx.methods_decimals + 1),
            bandwidth_rule=ctx.text(f"words.bandwidth_rule.{density.bandwidth_rule}"),
            density_method=ctx.text(f"words.density_method.{density.method}"), reflected=reflected))
    libraries = _libraries(ctx)
    if libraries:
        sentences.append(ctx.sentence("methods.libraries", ("provenance.libraries",), libraries=libraries))
    return Paragraph(tuple(sentences))


def references_used(ctx: WordingContext) -> tuple[str, ...]:
    """Bank keys of the references for the methods this report names, sorted."""
    findings = ctx.findings
    used = {"lang_altman_2013"}
    if findings.accuracy is not None and findings.n > 0:
        used.update({"chan_1979", "karnin_2016"})
    if findings.spread is not None:
        used.add(QUANTILE_REFERENCES.get(findings.spread.quantile_method, "hyndman_fan_1996"))
    shape = findings.shape
    if shape.skewness is not None:
        used.update({"joanes_gill_1998", "bulmer_1979", "bowley_1920", "brys_2004", "pfister_2013"})
        if shape.skewness_test_p is not None:
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
    if density is not None:
        used.add(BANDWIDTH_REFERENCES[density.bandwidth_rule])
        if density.method == "binned-fft":
            used.add("wand_1994")
        if density.reflected:
            used.add("schuster_1985")
    return tuple(sorted(used))


def references_paragraphs(ctx: WordingContext) -> tuple[Paragraph, ...]:
    return tuple(
        Paragraph((Sentence(ctx.text(f"references.{key}")),), style="reference") for key in references_used(ctx)
    )
