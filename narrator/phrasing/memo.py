"""The plain-language summary for managers: four to seven short sentences, no jargon.

Order (each step one sentence; words from the bank's ``memo.*`` claim entries, each said only
when its licence holds, narrator.phrasing.licences):

1. the lead center (``memo.lead.*``): the share at the lowest or highest value when most values
   sit there, else the middle value with what lies on each side of it, or the average;
2. what was left out, and what those cells held (``memo.left_out_sentence``);
3. a large share at one end, when the lead did not already say it (``memo.at_end``);
4. the typical range: half of the values lie between Q1 and Q3, or the share that does, or the
   range (``memo.range``);
5. what the shape means in plain words, hedged by the ladder (``memo.shape.*``);
6. why the lead center (``memo.why_median.*``), or the other center (``memo.other_center``);
7. the unusual values (``memo.outliers.*``) and the center without them (``memo.without.*``);
8. one caution, the one that matters most here.

To keep within seven sentences the "why" sentence goes first, then the share at one end, then
the range (:data:`DROPPED_FIRST`).
"""

from __future__ import annotations

from narrator.phrasing.context import WordingContext
from narrator.phrasing.narrative import Paragraph, Sentence

MAX_SENTENCES = 7


def _missing_texts(ctx: WordingContext) -> str:
    flag = ctx.findings.quality.get("missing")
    if flag is None:
        return ""
    shown = [ctx.text("numbers.quoted", text=text) for text in flag.texts if text.strip()]
    return ctx.fmt.list(shown, style="or") if shown else ""


def left_out_items(ctx: WordingContext) -> tuple[str, tuple[str, ...], dict]:
    """The rows left out, as a locale list ("37 rows where ozone was blank and 2 values outside ..."),
    their findings keys, and the claim numbers (counts by reason)."""
    findings = ctx.findings
    quality = findings.quality
    non_finite = quality.get("non_finite")
    counts = (
        ("missing", findings.n_missing, "n_missing", "row"),
        ("non_numeric", quality.n_non_numeric, "quality.n_non_numeric", "row"),
        ("impossible", quality.n_impossible, "quality.n_impossible", "value"),
        ("non_finite", non_finite.count if non_finite is not None else 0, "quality.flags.non_finite", "row"),
    )
    items, keys, numbers = [], [], {}
    for code, count, key, noun in counts:
        numbers[code] = int(count)
        if not count:
            continue
        text = ctx.part(f"memo.left_out.{code}", subject=(count, noun), count=ctx.count(count, noun), name=ctx.name,
                        texts=_missing_texts(ctx))
        if text is not None:
            items.append(text)
            keys.append(key)
    flag = quality.get("missing")
    if flag is not None and flag.texts:
        numbers["missing_texts"] = tuple(flag.texts)
        numbers["missing_texts_complete"] = bool(flag.detail.get("texts_complete"))
    return ctx.fmt.list(items), tuple(keys), numbers


def memo_caution(ctx: WordingContext) -> Sentence:
    """The one caution a memo ends with: the most pressing for these findings."""
    findings = ctx.findings
    code = findings.quality.get("missing_code")
    if code is not None and code.values:
        # A value that may stand for "missing" can change every figure: it comes first.
        sentence = ctx.say("cautions.check_code", ("quality.flags",), code=ctx.recorded(code.values[0]),
                           count_times=ctx.text("quality.times", ctx.plural(code.count), count=ctx.whole(code.count)),
                           claim={"value": code.values[0], "count": code.count})
        if sentence is not None:
            return sentence
    for key, keys, numbers in (("cautions.check_flagged", ("outliers.count",), flagged_claim(findings)),
                               ("cautions.small_sample", ("n",), {"n": findings.n})):
        sentence = ctx.say(key, keys, claim=numbers)
        if sentence is not None:
            return sentence
    return ctx.say("cautions.descriptive")


def _share(ctx: WordingContext, count: int) -> str:
    return ctx.fmt.percent(count / ctx.findings.n, 0)


def _lead(ctx: WordingContext) -> list[Sentence]:
    findings = ctx.findings
    center, spread, counts = findings.center, findings.spread, findings.order_counts
    n_values = ctx.count(findings.n, "value")
    subject = (findings.n, "value")  # a bank may word the lead by its count ("de 1 millón de valores", es)
    if findings.n == 1:
        return [ctx.say("memo.lead.single", ("center.median",), median=ctx.memo_recorded(center.median),
                        claim={"value": center.median})]
    if spread.range == 0:
        return [ctx.say("memo.lead.constant", ("spread.min",), subject=subject, n_values=n_values,
                        value=ctx.memo_recorded(spread.min),
                        claim={"value": spread.min, "n": findings.n})]
    if center.lead == "mean":
        return [ctx.say("memo.lead.mean", ("n", "center.mean"), subject=subject, n_values=n_values,
                        mean=ctx.memo(center.mean),
                        claim={"mean": center.mean, "n": findings.n})]
    # Ranges write the unit once ("the others ran from 1 to 12 visits").
    next_low, high = ctx.memo_recorded_pair(counts.next_above_min if counts.next_above_min is not None else spread.min,
                                            spread.max)
    low, next_high = ctx.memo_recorded_pair(spread.min,
                                            counts.next_below_max if counts.next_below_max is not None else spread.max)
    values = {
        "n_values": n_values,
        "median": ctx.memo(center.median),
        "median_exact": ctx.recorded(center.median),
        "min": ctx.memo_recorded(spread.min),
        "max": ctx.memo_recorded(spread.max),
        "next_low_range": next_low, "max_range": high, "min_range": low, "next_high_range": next_high,
        "share_below": _share(ctx, counts.below_median),
        "share_at": _share(ctx, counts.at_median),
        "share_above": _share(ctx, counts.above_median),
        "share_at_min": _share(ctx, counts.at_min),
        "share_at_max": _share(ctx, counts.at_max),
        "next_low": ctx.memo_recorded(counts.next_above_min) if counts.next_above_min is not None else "",
        "next_high": ctx.memo_recorded(counts.next_below_max) if counts.next_below_max is not None else "",
    }
    claim = {
        "median": center.median, "n": findings.n,
        "share_below": counts.below_median / findings.n, "share_at": counts.at_median / findings.n,
        "share_above": counts.above_median / findings.n,
        "min": spread.min, "max": spread.max, "share_at_min": counts.at_min / findings.n,
        "share_at_max": counts.at_max / findings.n, "next_low": counts.next_above_min,
        "next_high": counts.next_below_max,
    }
    return [ctx.say("memo.lead.median", ("n", "center.median", "order_counts"), subject=subject, claim=claim,
                    **values)]


def _left_out(ctx: WordingContext) -> list[Sentence]:
    left_out, keys, numbers = left_out_items(ctx)
    if not left_out:
        return []
    sentence = ctx.say("memo.left_out_sentence", keys, left_out=left_out, claim=numbers)
    return [sentence] if sentence is not None else []


def _at_end(ctx: WordingContext, lead: Sentence) -> list[Sentence]:
    """A quarter or more of the values at the lowest (or highest) value, when the lead did not say so."""
    if lead.claims and lead.claims[0].kind in ("share_at_minimum", "share_at_maximum"):
        return []
    findings, counts = ctx.findings, ctx.findings.order_counts
    if lead.claims and lead.claims[0].kind == "median_with_ties" and counts.at_min in (counts.below_median,
                                                                                       counts.above_median):
        return []  # "30% were lower" already said it: every value below the middle one is the lowest
    sentence = ctx.say(
        "memo.at_end", ("order_counts",), min=ctx.memo_recorded(findings.spread.min),
        max=ctx.memo_recorded(findings.spread.max), share_at_min=_share(ctx, counts.at_min),
        share_at_max=_share(ctx, counts.at_max),
        claim={"min": findings.spread.min, "max": findings.spread.max, "share_at_min": counts.at_min / findings.n,
               "share_at_max": counts.at_max / findings.n, "n": findings.n})
    return [sentence] if sentence is not None else []


def _range(ctx: WordingContext) -> Sentence | None:
    findings = ctx.findings
    spread, counts = findings.spread, findings.order_counts
    q1, q3 = ctx.memo_pair(spread.q1, spread.q3)  # "between 13 and 28 days": the unit once
    low, high = ctx.memo_recorded_pair(spread.min, spread.max)
    return ctx.say(
        "memo.range", ("spread.q1", "spread.q3"), q1=q1, q3=q3,
        share_inside=_share(ctx, counts.within_quartiles), min=low, max=high,
        claim={"q1": spread.q1, "q3": spread.q3, "share": counts.within_quartiles / findings.n, "low": spread.q1,
               "high": spread.q3, "min": spread.min, "max": spread.max, "n": findings.n})


def _shape(ctx: WordingContext) -> Sentence | None:
    findings = ctx.findings
    shape = findings.shape
    keys = ("shape.label", "shape.evidence", "n")
    claim = {"label": shape.label, "strength": shape.strength, "n": findings.n}
    n_values = ctx.count(findings.n, "value")
    if ctx.hedge.level in ("too_few", "unclear"):
        return ctx.say("memo.shape.unsettled", keys, n_values=n_values, claim=claim)
    tail = ""
    if shape.label in ("right-skewed", "left-skewed"):
        side = "high" if shape.label == "right-skewed" else "low"
        tail = ctx.text(f"memo.tail.{side}.{shape.strength or 'slight'}")
    heaping = findings.quality.get("heaping")
    base = heaping.detail.get("base", 0.0) if heaping is not None else 0.0
    return ctx.say(f"memo.shape.{shape.label}", keys, n_values=n_values, tail=tail, base=ctx.recorded(base),
                   claim={**claim, "base": base})


def _why(ctx: WordingContext) -> Sentence | None:
    findings = ctx.findings
    center = findings.center
    flagged = findings.outliers
    mean = ctx.memo(center.mean)
    claim = {"mean": center.mean, "median": center.median, "mean_shown": mean,
             "median_shown": ctx.memo(center.median), **flagged_claim(findings)}
    if center.lead == "median":
        reasons = center.lead_reasons
        if "several_peaks" in reasons:
            return ctx.say("memo.why_median.several_peaks", ("center.lead_reasons", "center.mean"), mean=mean,
                           claim={**claim, "label": findings.shape.label})
        # The flagged values first when they move the mean: "the unusual value pulls the average up" is the more
        # concrete of the two, and true when a single value, not a long tail, does the pulling.
        count = flagged.count if flagged is not None else 0
        said = None
        if "outliers_move_mean" in reasons:
            said = ctx.say("memo.why_median.outliers", ("center.lead_reasons", "center.mean"), subject=(count, "value"),
                           mean=mean, claim={**claim, "cause": "flagged", "count": count, "n": findings.n})
        if said is None and "skewed" in reasons:
            said = ctx.say("memo.why_median.skewed", ("center.lead_reasons", "center.mean"), mean=mean,
                           claim={**claim, "cause": "tail", "label": findings.shape.label})
        return said
    return ctx.say("memo.other_center", ("center.median",), median=ctx.memo(center.median),
                   claim={**claim, "sd": findings.spread.sd})


def _side_part(ctx: WordingContext, side: str, count: int, span: tuple[float, float], spell_out: bool = True) -> str:
    """ "four low values (135 to 202 miles)" / "one high value (3,710 miles)"; span = (lowest, highest).
    ``spell_out`` False writes the count in digits, as the total it goes with (Chicago: numbers of one kind
    in one sentence are written alike, from memory)."""
    low, high = ctx.memo_recorded_pair(span[0], span[1])
    single = ctx.memo_recorded(span[0])
    shown = single if single == ctx.memo_recorded(span[1]) else ctx.text("format.range", low=low, high=high)
    number = ctx.fmt.count_number(count, "value", spell_out=spell_out)
    return ctx.text(f"memo.outliers.side_{side}", ctx.plural(count), count=number, span=shown)


def flagged_claim(findings) -> dict:
    """The numbers a sentence about the flagged values asserts: rule, fences, counts, ranges."""
    flagged = findings.outliers
    if flagged is None:
        return {"rule": None, "n": findings.n}
    low = flagged.low_range or (None, None)
    high = flagged.high_range or (None, None)
    return {"rule": flagged.rule, "lower": flagged.lower_fence, "upper": flagged.upper_fence,
            "count_low": flagged.count_low, "count_high": flagged.count_high, "low_min": low[0], "low_max": low[1],
            "high_min": high[0], "high_max": high[1], "constants": dict(flagged.constants), "n": findings.n,
            "fallback_from": flagged.fallback_from, "fallback_reason": flagged.fallback_reason}


def _outliers(ctx: WordingContext) -> list[Sentence]:
    findings = ctx.findings
    flagged = findings.outliers
    claim = flagged_claim(findings)
    keys = ("outliers.count", "outliers.low_range", "outliers.high_range")
    if flagged is None or flagged.count == 0:
        sentence = ctx.say("memo.outliers.none", keys, claim=claim)
        return [sentence] if sentence is not None else []
    lowest = (flagged.low_range or flagged.high_range)[0]
    highest = (flagged.high_range or flagged.low_range)[1]
    low_text, high_text = ctx.memo_recorded_pair(lowest, highest)  # "from 66 to 129 days": the unit once
    values = {"outlier_count": ctx.count(flagged.count, "value"), "lowest": low_text, "highest": high_text}
    if flagged.count_low and flagged.count_high:
        # "11 values stand out: 8 low values ... and 3 high values", never "11 ...: eight ... and three".
        spell_out = flagged.count <= ctx.bank.spell_out_max
        values["low_part"] = _side_part(ctx, "low", flagged.count_low, flagged.low_range, spell_out)
        values["high_part"] = _side_part(ctx, "high", flagged.count_high, flagged.high_range, spell_out)
        sentences = [ctx.say("memo.outliers.both", keys, claim=claim, **values)]
    else:
        side = "high" if flagged.count_high else "low"
        same = "_same" if ctx.memo_recorded(lowest) == ctx.memo_recorded(highest) else ""  # not "from $150 to $150"
        if same:
            values["lowest"] = values["highest"] = ctx.memo_recorded(lowest)
        sentences = [ctx.say(f"memo.outliers.{side}{same}", keys, subject=(flagged.count, "value"), claim=claim,
                             **values)]
    without = findings.without_outliers
    center = findings.center
    if without is not None and without.n > 0 and without.mean is not None:
        claim = {"n_without": without.n, "mean_without": without.mean, "median_without": without.median,
                 "mean": center.mean, "median": center.median, "median_shown": ctx.memo(center.median),
                 "median_without_shown": ctx.memo(without.median), "mean_shown": ctx.memo(center.mean),
                 "mean_without_shown": ctx.memo(without.mean), **flagged_claim(findings)}
        key = "memo.without.median_lead" if center.lead == "median" else "memo.without.mean_lead"
        sentence = ctx.say(key, ("without_outliers.median", "without_outliers.mean", f"center.{center.lead}"),
                           subject=(flagged.count, "value"), median=ctx.memo(center.median),
                           median_without=ctx.memo(without.median), mean=ctx.memo(center.mean),
                           mean_without=ctx.memo(without.mean), claim=claim)
        if sentence is not None:
            sentences.append(sentence)
    return [s for s in sentences if s is not None]


ORDER = ("lead", "left_out", "at_end", "range", "shape", "why", "outliers", "caution")
DROPPED_FIRST = ("why", "at_end", "range")  # to keep within MAX_SENTENCES, in this order


def memo_paragraph(ctx: WordingContext) -> Paragraph:
    """The memo summary paragraph (see the module docstring for its order)."""
    findings = ctx.findings
    if findings.n == 0 or findings.center is None:
        return Paragraph((ctx.say("quality.no_values", ("n",), claim={"n": 0}), memo_caution(ctx)))
    lead = _lead(ctx)
    parts: dict[str, list[Sentence]] = {"lead": lead, "left_out": _left_out(ctx), "at_end": _at_end(ctx, lead[0])}
    if findings.n > 1 and findings.spread.range > 0:
        # A lead that gave the share at one end already said where the others run.
        said_range = bool(lead[0].claims) and lead[0].claims[0].kind in ("share_at_minimum", "share_at_maximum")
        parts["range"] = [] if said_range else [_range(ctx)]
        parts["shape"] = [_shape(ctx)]
        parts["why"] = [_why(ctx)]
        parts["outliers"] = _outliers(ctx)
    parts["caution"] = [memo_caution(ctx)]
    parts = {name: [s for s in sentences if s is not None] for name, sentences in parts.items()}
    for name in DROPPED_FIRST:
        if sum(len(sentences) for sentences in parts.values()) <= MAX_SENTENCES:
            break
        parts[name] = []
    return Paragraph(tuple(sentence for name in ORDER for sentence in parts.get(name, ())))
