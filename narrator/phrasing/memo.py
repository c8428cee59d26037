"""The plain-language summary for managers: four to seven short sentences, no jargon.

Order (each step one sentence; words from the bank's ``memo.*`` keys):

1. the lead center (``memo.lead.*``), with what was left out;
2. the typical range: half of the values lie between Q1 and Q3 (``memo.range``);
3. what the shape means in plain words, hedged by the ladder (``memo.shape.*``);
4. why the lead center (``memo.why_median.*``), or the other center (``memo.mean_*``);
5. the unusual values (``memo.outliers.*``) and
6. the center without them (``memo.without.*``);
7. one caution (``cautions.*``), the one that matters most here.

Step 4 is left out when it would only repeat step 3, and steps 5 and 6 when
there is nothing to say; the summary never runs past seven sentences.
"""

from __future__ import annotations

from narrator.phrasing.context import WordingContext
from narrator.phrasing.narrative import Paragraph, Sentence

LEFT_OUT_CODES = (("missing", "n_missing", "empty_row"), ("non_numeric", "quality.n_non_numeric", "row"),
                  ("impossible", "quality.n_impossible", "value"))


def left_out_items(ctx: WordingContext, prefix: str) -> tuple[str, tuple[str, ...]]:
    """The rows left out, as a locale list ("37 empty rows and 2 values outside ..."), and their keys."""
    findings = ctx.findings
    counts = {
        "missing": findings.n_missing,
        "non_numeric": findings.quality.n_non_numeric,
        "impossible": findings.quality.n_impossible,
    }
    items, keys = [], []
    for code, key, noun in LEFT_OUT_CODES:
        if counts[code]:
            items.append(ctx.text(f"{prefix}.{code}", count=ctx.count(counts[code], noun)))
            keys.append(key)
    return ctx.fmt.list(items), tuple(keys)


def memo_caution(ctx: WordingContext) -> Sentence:
    """The one caution a memo ends with: the most pressing for these findings."""
    findings = ctx.findings
    code = findings.quality.get("missing_code")
    if code is not None and code.values:
        # A value that may stand for "missing" can change every figure: it comes first.
        return ctx.sentence("cautions.check_code", ("quality.flags",), code=ctx.recorded(code.values[0]),
                            count_times=ctx.text("quality.times", ctx.plural(code.count), count=ctx.whole(code.count)))
    if findings.outliers is not None and findings.outliers.count > 0:
        return ctx.sentence("cautions.check_flagged", ("outliers.count",))
    if 0 < findings.n < 20:
        return ctx.sentence("cautions.small_sample", ("n",))
    return ctx.sentence("cautions.descriptive")


def _lead(ctx: WordingContext) -> list[Sentence]:
    findings = ctx.findings
    center = findings.center
    n_values = ctx.count(findings.n, "value")
    if findings.n == 1:
        return [ctx.sentence("memo.lead.single", ("center.median",), median=ctx.memo(center.median))]
    left_out, left_keys = left_out_items(ctx, "memo.left_out")
    suffix = "_left_out" if left_out else ""
    if center.lead == "median":
        return [ctx.sentence(f"memo.lead.median{suffix}", ("n", "center.median", *left_keys),
                             n_values=n_values, median=ctx.memo(center.median), left_out=left_out)]
    return [ctx.sentence(f"memo.lead.mean{suffix}", ("n", "center.mean", *left_keys),
                         n_values=n_values, mean=ctx.memo(center.mean), left_out=left_out)]


def _shape(ctx: WordingContext) -> Sentence:
    findings = ctx.findings
    shape = findings.shape
    hedge = ctx.hedge
    n_values = ctx.count(findings.n, "value")
    keys = ("shape.label", "shape.evidence", "n")
    if findings.spread is not None and findings.spread.range == 0:
        return ctx.sentence("memo.shape.no_spread", ("spread.range",))
    if hedge.level == "too_few":
        return ctx.sentence("memo.shape.too_few", keys, n_values=n_values)
    if hedge.level == "unclear":
        return ctx.sentence("memo.shape.unclear", keys)
    variant = "small" if "n_below_20" in hedge.reasons or findings.n < 20 else hedge.level
    tail = ""
    if shape.label in ("right-skewed", "left-skewed"):
        side = "high" if shape.label == "right-skewed" else "low"
        tail = ctx.text(f"memo.tail.{side}.{shape.strength or 'slight'}")
    return ctx.sentence(f"memo.shape.{shape.label}.{variant}", keys, n_values=n_values, tail=tail)


def _why(ctx: WordingContext) -> Sentence | None:
    center = ctx.findings.center
    reasons = center.lead_reasons
    if center.lead == "median":
        if "several_peaks" in reasons:
            return ctx.sentence("memo.why_median.several_peaks", ("center.lead_reasons", "center.mean"),
                                mean=ctx.memo(center.mean))
        if center.mean_pull == "none":
            return None
        direction = "higher" if center.mean_pull == "higher" else "lower"
        cause = "skewed" if "skewed" in reasons else "outliers"
        return ctx.sentence(f"memo.why_median.{cause}_{direction}", ("center.lead_reasons", "center.mean"),
                            mean=ctx.memo(center.mean))
    median = ctx.memo(center.median)
    key = "memo.mean_apart" if center.mean_median_gap_material else "memo.mean_close"
    return ctx.sentence(key, ("center.median",), median=median)


def _side_part(ctx: WordingContext, side: str, count: int, span: tuple[float, float]) -> str:
    """ "four low values (135 to 202 miles)" / "one high value (3,710 miles)"; span = (lowest, highest)."""
    low, high = ctx.memo_recorded_pair(span[0], span[1])
    single = ctx.memo_recorded(span[0])
    shown = single if single == ctx.memo_recorded(span[1]) else ctx.text("format.range", low=low, high=high)
    number = ctx.fmt.count_number(count, "value")
    return ctx.text(f"memo.outliers.side_{side}", ctx.plural(count), count=number, span=shown)


def _outliers(ctx: WordingContext) -> list[Sentence]:
    findings = ctx.findings
    flagged = findings.outliers
    if flagged is None or flagged.note == "not_run_too_few":
        return [ctx.sentence("memo.outliers.not_run", ("outliers.note",))]
    if flagged.count == 0:
        return [ctx.sentence("memo.outliers.none", ("outliers.count",))]
    lowest = (flagged.low_range or flagged.high_range)[0]
    highest = (flagged.high_range or flagged.low_range)[1]
    low_text, high_text = ctx.memo_recorded_pair(lowest, highest)  # "from 66 to 129 days": the unit once
    values = {"outlier_count": ctx.count(flagged.count, "value"), "lowest": low_text, "highest": high_text}
    keys = ("outliers.count", "outliers.low_range", "outliers.high_range")
    if flagged.count_low and flagged.count_high:
        values["low_part"] = _side_part(ctx, "low", flagged.count_low, flagged.low_range)
        values["high_part"] = _side_part(ctx, "high", flagged.count_high, flagged.high_range)
        sentences = [ctx.sentence("memo.outliers.both", keys, **values)]
    else:
        side = "high" if flagged.count_high else "low"
        same = "_same" if ctx.memo_recorded(lowest) == ctx.memo_recorded(highest) else ""  # not "from $150 to $150"
        if same:
            values["lowest"] = values["highest"] = ctx.memo_recorded(lowest)
        sentences = [ctx.sentence(f"memo.outliers.{side}{same}", keys, ctx.plural(flagged.count), **values)]
    without = findings.without_outliers
    if without is not None and without.n > 0 and without.mean is not None:
        center = findings.center
        if center.lead == "median":
            same = ctx.memo(without.median) == ctx.memo(center.median)
            key = "memo.without.median_same" if same else "memo.without.changed"
            sentences.append(ctx.sentence(
                key, ("without_outliers.median", "without_outliers.mean", "center.median"), ctx.plural(flagged.count),
                median=ctx.memo(center.median), median_without=ctx.memo(without.median),
                mean_without=ctx.memo(without.mean)))
        else:
            same = ctx.memo(without.mean) == ctx.memo(center.mean)
            key = "memo.without.mean_lead_same" if same else "memo.without.mean_lead_changed"
            sentences.append(ctx.sentence(key, ("without_outliers.mean", "center.mean"), ctx.plural(flagged.count),
                                          mean=ctx.memo(center.mean), mean_without=ctx.memo(without.mean)))
    return sentences


MAX_SENTENCES = 7


def memo_paragraph(ctx: WordingContext) -> Paragraph:
    """The memo summary paragraph (see the module docstring for its order)."""
    findings = ctx.findings
    if findings.n == 0 or findings.center is None:
        return Paragraph((ctx.sentence("quality.no_values", ("n",)), memo_caution(ctx)))
    spread = findings.spread
    sentences = _lead(ctx)
    if findings.n > 1 and spread.range > 0:
        q1, q3 = ctx.memo_pair(spread.q1, spread.q3)  # "between 13 and 28 days": the unit once
        sentences.append(ctx.sentence("memo.range", ("spread.q1", "spread.q3"), q1=q1, q3=q3))
    sentences.append(_shape(ctx))
    why = _why(ctx) if findings.n > 1 and spread.range > 0 else None
    outliers = _outliers(ctx) if findings.n > 1 else []
    caution = memo_caution(ctx)
    # Keep to seven sentences: the "why" sentence is the first to go (the shape sentence already
    # tells the reader the values are lopsided).
    if why is not None and len(sentences) + 1 + len(outliers) + 1 <= MAX_SENTENCES:
        sentences.append(why)
    sentences.extend(outliers)
    sentences.append(caution)  # at most 2 + 1 + 1 + 2 + 1 = 7 sentences without the "why"
    return Paragraph(tuple(sentences))
