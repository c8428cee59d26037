"""The plain-language summary for managers: four to seven short sentences, no jargon.

Order (each step one sentence; words from the bank's ``memo.*`` claim entries, each said only
when its licence holds, narrator.phrasing.licences):

1. the lead center (``memo.lead.*``): the share at the lowest or highest value when most values
   sit there, else the middle value with what lies on each side of it, or the average;
2. what was left out, and what those cells held (``memo.left_out_sentence``);
3. a large share at one end, when the lead did not already say it (``memo.at_end``), and then the middle
   value of the values above the lowest one (``memo.above_min``) or below a declared highest one
   (``memo.below_max``);
4. the typical range: half of the values lie between Q1 and Q3, or the share that does, or the
   range (``memo.range``);
5. what the shape means in plain words, hedged by the ladder (``memo.shape.*``);
6. why the lead center (``memo.why_median.*``), or the other center (``memo.other_center``);
7. the unusual values (``memo.outliers.*``) and the center without them (``memo.without.*``);
8. one caution, the one that matters most here.

To keep within seven sentences the "why" sentence goes first, then the share at one end, then
the range, the shape and the middle value above the lowest one (:data:`DROPPED_FIRST`).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from narrator.findings import Difference, GroupComparison
from narrator.phrasing.context import WordingContext, member
from narrator.phrasing.licences import TINY_N, DifferenceFacts, holds
from narrator.phrasing.narrative import Paragraph, Sentence
from narrator.phrasing.selection import Message, Within, groups_may_mix, select_messages

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
    impossible = quality.get("impossible")
    text_flag = quality.get("non_numeric")
    text_rows = ctx.fmt.list([ctx.whole(row) for row in text_flag.rows]) if text_flag is not None else ""
    if text_flag is not None and text_flag.rows:
        numbers["non_numeric_rows"] = tuple(text_flag.rows)
    shown = ""
    if impossible is not None and impossible.values:
        shown = ctx.fmt.list([ctx.text("memo.left_out.impossible_item", value=ctx.recorded(value), row=ctx.whole(row))
                              for value, row in zip(impossible.values, impossible.rows, strict=False)])
        numbers["impossible_values"] = tuple(impossible.values)
    for code, count, key, noun in counts:
        numbers[code] = int(count)
        if not count:
            continue
        text = ctx.part(f"memo.left_out.{code}", subject=(count, noun), count=ctx.count(count, noun), name=ctx.name,
                        texts=_missing_texts(ctx), shown=shown, rows=text_rows)
        if text is not None:
            items.append(text)
            keys.append(key)
    flag = quality.get("missing")
    if flag is not None and flag.texts:
        numbers["missing_texts"] = tuple(flag.texts)
        numbers["missing_texts_complete"] = bool(flag.detail.get("texts_complete"))
    return ctx.fmt.list(items), tuple(keys), numbers


def _left_out_first(ctx: WordingContext, message: Message) -> list[Sentence]:
    """Message ``left_out``: a material share of the rows was left out, said first, with its count and share of the
    rows read, and that the figures describe the rest."""
    left_out, keys, numbers = left_out_items(ctx)
    if not left_out:
        return []
    rows, n = message.numbers["rows"], message.numbers["n"]
    sentence = ctx.say("memo.left_out_first", (*keys, "n"), subject=(n, "value"), left_out=left_out,
                       share=_share(ctx, message.numbers["left_out"], rows), rows=ctx.count(rows, "row"),
                       n_values=ctx.count(n, "value"),
                       claim={**numbers, "rows_read": rows, "used": n, "share": message.numbers["share"]})
    return [sentence, *_other_convention(ctx)] if sentence is not None else []


def _other_convention(ctx: WordingContext) -> list[Sentence]:
    """Right after the rows left out: how many of the text cells are numbers under the other decimal convention."""
    flag = ctx.findings.quality.get("other_convention")
    if flag is None or not flag.count:
        return []
    texts = [ctx.text("numbers.quoted", text=text) for text in flag.texts[:3] if text.strip()]
    mark = "point" if flag.detail.get("decimal_comma") else "comma"  # the convention the cells are written in
    text_count = ctx.findings.quality.n_non_numeric
    sentence = ctx.say("memo.other_convention", ("quality.flags.other_convention", "quality.n_non_numeric"),
                       subject=(flag.count, "row"),  # at most text_count: the "all" variant is that count
                       count=ctx.fmt.count_number(flag.count, "row", alone=True), text_count=ctx.count(text_count, "row"),
                       texts=ctx.fmt.list(texts, style="or"), mark=ctx.text(f"memo.other_convention_mark.{mark}"),
                       action=ctx.text(f"memo.other_convention_action.{mark}"),
                       claim={"code": "other_convention", "count": flag.count, "texts": tuple(flag.texts),
                              "detail": dict(flag.detail), "non_numeric": text_count})
    return [sentence] if sentence is not None else []


def memo_caution(ctx: WordingContext, flagged_said: bool = True) -> Sentence:
    """The one caution a memo ends with: the most pressing for these findings. ``flagged_said``: the memo
    named unusual values, so "check the unusual values" points at something it said."""
    findings = ctx.findings
    code = findings.quality.get("missing_code")
    if code is not None and code.values:
        # A value that may stand for "missing" can change every figure: it comes first.
        sentence = ctx.say("cautions.check_code", ("quality.flags",), code=ctx.recorded(code.values[0]),
                           count_times=ctx.times(code.count),
                           claim={"value": code.values[0], "count": code.count})
        if sentence is not None:
            return sentence
    for key, keys, numbers in (("cautions.check_flagged", ("outliers.count",), flagged_claim(findings)),
                               ("cautions.small_sample", ("n",), {"n": findings.n})):
        if key == "cautions.check_flagged" and not flagged_said:
            continue
        sentence = ctx.say(key, keys, claim=numbers)
        if sentence is not None:
            return sentence
    return ctx.say("cautions.descriptive")


def _share(ctx: WordingContext, count: int, of: int | None = None) -> str:
    """The share ``count`` of ``of`` (default: the values) holds, as the memo prints it (ctx.shares)."""
    whole = ctx.findings.n if of is None else of
    return ctx.shares((count, whole - count))[0]


def _share_of_total(ctx: WordingContext, share: float) -> str:
    """A share of a total (0.18 of the money), printed by the rule of ctx.shares."""
    share = min(max(share, 0.0), 1.0)
    return ctx.shares((share, 1.0 - share))[0]


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
        "median_exact": ctx.recorded_unit(center.median),  # "was 21 days: ..., 3% were exactly 21 days"
        "min": ctx.memo_recorded(spread.min),
        "max": ctx.memo_recorded(spread.max),
        "next_low_range": next_low, "max_range": high, "min_range": low, "next_high_range": next_high,
        "share_at_min": _share(ctx, counts.at_min),
        "share_at_max": _share(ctx, counts.at_max),
        "next_low": ctx.memo_recorded(counts.next_above_min) if counts.next_above_min is not None else "",
        "next_high": ctx.memo_recorded(counts.next_below_max) if counts.next_below_max is not None else "",
    }
    # Below, at and above the middle value partition the values: their percents add up to 100.
    values["share_below"], values["share_at"], values["share_above"] = ctx.shares(
        (counts.below_median, counts.at_median, counts.above_median))
    values["counts"] = _counts_around_median(ctx, values["median_exact"])
    claim = {
        "median": center.median, "n": findings.n,
        "share_below": counts.below_median / findings.n, "share_at": counts.at_median / findings.n,
        "share_above": counts.above_median / findings.n,
        "min": spread.min, "max": spread.max, "share_at_min": counts.at_min / findings.n,
        "share_at_max": counts.at_max / findings.n, "next_low": counts.next_above_min,
        "next_high": counts.next_below_max,
        "below": counts.below_median, "at": counts.at_median, "above": counts.above_median,
    }
    return [ctx.say("memo.lead.median", ("n", "center.median", "order_counts"), subject=subject, claim=claim,
                    **values)]


def _counts_around_median(ctx: WordingContext, median: str) -> str:
    """ "three were lower, one was exactly 9 and three were higher": the counts below, at and above the
    middle value, each worded for its own count (a small sample's lead, claim ``median_counts``)."""
    counts = ctx.findings.order_counts
    parts = []
    for place, count in (("below", counts.below_median), ("at", counts.at_median), ("above", counts.above_median)):
        if count:
            parts.append(ctx.text(f"memo.lead.counts.{place}", ctx.fmt.count_category(count),
                                  count=ctx.fmt.count_number(count, "value", alone=True), value=median))
    return ctx.fmt.list(parts)


def _left_out(ctx: WordingContext) -> list[Sentence]:
    left_out, keys, numbers = left_out_items(ctx)
    if not left_out:
        return []
    sentence = ctx.say("memo.left_out_sentence", keys, left_out=left_out, claim=numbers)
    return [sentence, *_other_convention(ctx)] if sentence is not None else []


def _at_end(ctx: WordingContext, lead: Sentence) -> list[Sentence]:
    """A quarter or more of the values at the lowest (or highest) value, when the lead did not say so."""
    if lead.claims and lead.claims[0].kind in ("share_at_minimum", "share_at_maximum"):
        return []
    findings, counts = ctx.findings, ctx.findings.order_counts
    kind = lead.claims[0].kind if lead.claims else None
    if kind in ("median_with_ties", "median_counts") and counts.at_min in (counts.below_median, counts.above_median):
        return []  # "30% were lower" already said it: every value below the middle one is the lowest
    sentence = ctx.say(
        "memo.at_end", ("order_counts",), min=ctx.memo_recorded(findings.spread.min),
        max=ctx.memo_recorded(findings.spread.max), share_at_min=_share(ctx, counts.at_min),
        share_at_max=_share(ctx, counts.at_max),
        claim={"min": findings.spread.min, "max": findings.spread.max, "share_at_min": counts.at_min / findings.n,
               "share_at_max": counts.at_max / findings.n, "n": findings.n})
    if sentence is not None and sentence.claims and (
            (sentence.claims[0].kind == "share_at_minimum" and kind in ("median_ties_at_min", "median_ties_at_ends"))
            or (sentence.claims[0].kind == "share_at_maximum" and kind in ("median_ties_at_max",
                                                                           "median_ties_at_ends"))):
        return []  # "44% were 0" in the lead already said it
    return [sentence] if sentence is not None else []


def _above_minimum(ctx: WordingContext) -> list[Sentence]:
    """ "Among the 59 values above €0, the middle one was €943": a quarter or more of the values at the lowest
    value (no claim, no visit) puts the whole's middle and quartiles at or near it, so the typical value of the
    others is said (licence ``middle_above_minimum``; the engine's ``Findings.above_minimum``, None where an
    engine that reads in passes did not compute it: then nothing is said)."""
    return _middle_of_the_others(ctx, "memo.above_min", ctx.findings.above_minimum, "above_minimum", "minimum",
                                 "order_counts.at_min", "min")


def _below_maximum(ctx: WordingContext) -> list[Sentence]:
    """ "Among the 141 values below 100, the middle one was 70": the mirror of :func:`_above_minimum` for a quarter or
    more of the values at a declared highest value (a full score), licence ``middle_below_maximum``
    (``Findings.below_maximum``, None where an engine that reads in passes did not compute it)."""
    return _middle_of_the_others(ctx, "memo.below_max", ctx.findings.below_maximum, "below_maximum", "maximum",
                                 "order_counts.at_max", "max")


def _middle_of_the_others(ctx: WordingContext, key: str, others, field: str, end: str, at_end_key: str,
                          placeholder: str) -> list[Sentence]:
    """The count and middle value of the values off one end (``others``: an ``AboveMinimum`` or ``BelowMaximum``,
    found in ``Findings.<field>``; ``end`` names its value of that end, ``placeholder`` the bank's field for it)."""
    if others is None:
        return []
    end_value = getattr(others, end)
    sentence = ctx.say(key, (f"{field}.count", f"{field}.median", at_end_key),
                       subject=(others.count, "value"), count=ctx.count(others.count, "value"),
                       median=ctx.memo(others.median), **{placeholder: ctx.memo_recorded(end_value)},
                       claim={end: end_value, "count": others.count, "median": others.median, "n": ctx.findings.n})
    return [sentence] if sentence is not None else []


def _range(ctx: WordingContext) -> Sentence | None:
    findings = ctx.findings
    spread, counts = findings.spread, findings.order_counts
    q1, q3 = ctx.memo_pair(spread.q1, spread.q3)  # "between 13 and 28 days": the unit once
    low, high = ctx.memo_recorded_pair(spread.min, spread.max)
    inside = counts.within_quartiles
    return ctx.say(
        "memo.range", ("spread.q1", "spread.q3"), subject=(inside, "value"), q1=q1, q3=q3,
        share_inside=_share(ctx, inside), min=low, max=high, n_values=ctx.count(findings.n, "value"),
        count_inside=ctx.fmt.count_number(inside, "value", alone=True),
        claim={"q1": spread.q1, "q3": spread.q3, "share": inside / findings.n, "count": inside, "low": spread.q1,
               "high": spread.q3, "min": spread.min, "max": spread.max, "n": findings.n})


def robust_leans_other_way(shape) -> bool:
    """A skewed label whose robust measures are both defined and at least one leans against G1 (Bowley's
    skewness or the medcouple of the other sign): the bulk of the data is not skewed the way G1 says."""
    if shape.label not in ("right-skewed", "left-skewed") or shape.skewness is None:
        return False
    if shape.bowley is None or shape.medcouple is None:
        return False
    return any(value * shape.skewness < 0 for value in (shape.bowley, shape.medcouple))


def _shape(ctx: WordingContext) -> Sentence | None:
    findings = ctx.findings
    shape = findings.shape
    keys = ("shape.label", "shape.evidence", "n")
    claim = {"label": shape.label, "strength": shape.strength, "n": findings.n}
    n_values = ctx.count(findings.n, "value")
    if ctx.hedge.level in ("too_few", "unclear"):
        return ctx.say("memo.shape.unsettled", keys, n_values=n_values, claim=claim)
    if _peaks_are_a_spike(findings):
        return None  # the share at that one value is said; its spike is no group of its own
    if robust_leans_other_way(shape):
        return None  # G1 leans one way, the middle of the data the other: a few far values, not the bulk, skew it
    tail = ""
    if shape.label in ("right-skewed", "left-skewed"):
        side = "high" if shape.label == "right-skewed" else "low"
        tail = ctx.text(f"memo.tail.{side}.{shape.strength or 'slight'}")
    heaping = findings.quality.get("heaping")
    base = heaping.detail.get("base", 0.0) if heaping is not None else 0.0
    share = heaping.share if heaping is not None and heaping.share is not None else 0.0
    return ctx.say(f"memo.shape.{shape.label}", keys, n_values=n_values, tail=tail, base=ctx.recorded(base),
                   heaped_share=ctx.fmt.percent(share, 0), claim={**claim, "base": base, "share": share})


def _peaks_are_a_spike(findings) -> bool:
    """The density's peaks come from one value holding a large share (narrator.engine.clusters: a spike is
    not a cluster), so "the values gather in two groups" would call that share a group."""
    clusters = findings.clusters
    return clusters is not None and clusters.reason == "spike_at_one_value"


EXACT_LEADS = ("median_with_ties", "median_counts", "median_ties_at_min", "median_ties_at_max",
               "median_ties_at_ends")  # leads that write the middle value as recorded ("exactly $1,298.24")


def _why(ctx: WordingContext, median_text: str | None = None) -> Sentence | None:
    """Why the memo leads with the middle value; ``median_text`` is the middle value as the lead wrote it, so
    one number is written one way in one paragraph ("$1,298.24" twice, never "$1,298.24" then "$1,298")."""
    findings = ctx.findings
    center = findings.center
    flagged = findings.outliers
    mean = ctx.memo(center.mean)
    median_text = median_text if median_text is not None else ctx.memo(center.median)
    claim = {"mean": center.mean, "median": center.median, "mean_shown": mean,
             "median_shown": median_text, **flagged_claim(findings)}
    if center.lead == "median":
        reasons = center.lead_reasons
        if "several_peaks" in reasons:
            if _peaks_are_a_spike(findings):
                return None
            return ctx.say("memo.why_median.several_peaks", ("center.lead_reasons", "center.mean"), mean=mean,
                           claim={**claim, "label": findings.shape.label})
        # The flagged values first when they move the mean: "the value outside the outlier rule's limits pulls the
        # average up" is the more concrete of the two, and true when a single value, not a long tail, does the
        # pulling.
        count = flagged.count if flagged is not None else 0
        side = None
        if flagged is not None and flagged.count_low and flagged.count_high:
            # Flagged on both sides: the sentence names the side that moves the mean the way it moved (every
            # value above the upper fence exceeds every other value, so those raise the mean; likewise below).
            side = "high" if center.mean > center.median else "low"
            count = flagged.count_high if side == "high" else flagged.count_low
        said = None
        if "outliers_move_mean" in reasons:
            said = ctx.say("memo.why_median.outliers", ("center.lead_reasons", "center.mean", "center.median"),
                           subject=(count, "value"), mean=mean, median=median_text,
                           claim={**claim, "cause": "flagged", "count": count, "n": findings.n, "side": side})
        if said is None and "skewed" in reasons:
            said = ctx.say("memo.why_median.skewed", ("center.lead_reasons", "center.mean", "center.median"),
                           mean=mean, median=median_text,
                           claim={**claim, "cause": "tail", "label": findings.shape.label})
        return said
    return ctx.say("memo.other_center", ("center.median",), median=median_text,
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


# --------------------------------------------------------------------------- the memo, message by message

CENTER_ORDER = ("lead", "at_end", "above_min", "below_max", "range", "shape", "why")
# To keep within MAX_SENTENCES, in this order.
DROPPED_FIRST = ("why", "at_end", "range", "shape", "above_min", "below_max")
TENTH_ADDS = 0.05  # the largest tenth's share is said only when it adds 5 points to the few largest's (our rule)
LISTED = 5  # values named in one sentence at most; the full report lists them all


@dataclass(frozen=True, slots=True)
class MemoGroups:
    """The groups a memo compares: the engine's comparison and the column the groups come from.
    ``excess_within``: for each shown group, whether its own values have more far-out values than their
    shape predicts (``Unusual.excess``; empty when not known). ``within``: the (value, row) pairs each
    group's own values flag (narrator.phrasing.selection.Within; None when not known)."""

    comparison: GroupComparison
    group_by: str
    excess_within: tuple[bool, ...] = ()
    within: Within | None = None


@dataclass
class _Said:
    """What the memo has said so far, so no sentence repeats another."""

    together: set = field(default_factory=set)
    apart: set = field(default_factory=set)
    pairs: set = field(default_factory=set)
    lead: bool = False


def _places_pair(ctx: WordingContext, low: float, high: float, *, keep_nonzero: bool) -> tuple[str, str]:
    """Both ends of a memo range with the unit once, at memo rounding never finer than the values were
    recorded (a shift between whole days is whole or half a day); more places while a non-zero end would
    print as 0."""
    start = places = min(ctx.memo_decimals, ctx.data_decimals)
    zero = ctx.fmt.quantity_pair(0.0, 0.0, ctx._memo_places(places))[0]
    pair = ctx.fmt.quantity_pair(low, high, ctx._memo_places(places))
    while keep_nonzero and places < start + 3 and (
            (low != 0 and pair[0] == zero) or (high != 0 and pair[1].split()[0] == zero.split()[0])):
        places += 1
        pair = ctx.fmt.quantity_pair(low, high, ctx._memo_places(places))
    return pair


def _size(ctx: WordingContext, value: float) -> str:
    """A size in a memo, with its unit; more places while a non-zero size would print as 0."""
    return _places_pair(ctx, abs(value), abs(value), keep_nonzero=True)[1]


def _bound(ctx: WordingContext, value: float) -> str:
    """An upper bound in a memo ("likely no more than 3 days", "at most 3 days"), rounded up at memo rounding, so the
    printed bound is never below the true one (2.4 days is "no more than 3 days", never "no more than 2 days"); the
    words allow the bound itself, which the interval may reach (its ends are values it holds)."""
    places = ctx._memo_places(min(ctx.memo_decimals, ctx.data_decimals))
    scale = 10.0 ** places
    return _size(ctx, math.ceil(round(abs(value) * scale, 9)) / scale)


def _signed_amount(ctx: WordingContext, value: float, text: str) -> str:
    kind = "higher" if value > 0 else "lower" if value < 0 else "none"
    return ctx.text(f"memo.groups.amount.{kind}", amount=text)


def _difference_claim(difference: Difference, first: tuple[str, ...], second: tuple[str, ...],
                      shown: dict[str, str]) -> dict[str, Any]:
    return {"first": list(first), "second": list(second), "shift": difference.shift, "low": difference.low,
            "high": difference.high, "level": difference.level, "verdict": difference.verdict,
            "direction": difference.direction, "ranks": list(difference.ranks or ()),
            "rank_method": difference.rank_method,
            "small_bound": difference.small_bound, "ruled_out_bound": difference.ruled_out_bound, "shown": shown}


def _difference_values(ctx: WordingContext, difference: Difference) -> dict[str, str]:
    """The words of one difference: the shift's size, its likely range in size (same sign), or signed ends."""
    values = {"shift": _size(ctx, difference.shift)} if difference.shift is not None else {}
    if difference.low is None or difference.high is None:
        return values
    low, high = difference.low, difference.high
    if low > 0 or high < 0:  # both ends on one side: sizes, "between 4 and 9 days higher"
        small, large = sorted((abs(low), abs(high)))
        values["low"], values["high"] = _places_pair(ctx, small, large, keep_nonzero=True)
    else:  # "between 1 day lower and 5 days higher": each end a whole amount, its unit in its own plural
        values["low"] = _signed_amount(ctx, low, _size(ctx, low))
        values["high"] = _signed_amount(ctx, high, _size(ctx, high))
    values["bound"] = _bound(ctx, max(abs(low), abs(high)))
    return values


def _group_list(ctx: WordingContext, groups: MemoGroups, labels) -> str:
    return ctx.fmt.list([member(ctx, groups.group_by, label) for label in labels])


def _say_difference(ctx: WordingContext, key: str, difference: Difference, first: tuple[str, ...],
                    second: tuple[str, ...], groups: MemoGroups, keys: tuple[str, ...],
                    **extra: str) -> Sentence | None:
    shown = _difference_values(ctx, difference)
    return ctx.say(key, keys, about=DifferenceFacts(ctx, difference),
                   claim=_difference_claim(difference, first, second, shown),
                   first=_group_list(ctx, groups, first), second=_group_list(ctx, groups, second),
                   **shown, **extra)


def _index(key: str) -> int:
    return int(key.split(".")[2])


def _pair_sentence(ctx: WordingContext, groups: MemoGroups, index: int, said: _Said) -> Sentence | None:
    pair = groups.comparison.pairs[index]
    if index in said.pairs:
        return None
    said.pairs.add(index)
    key = {"different": "memo.groups.pair", "slightly_different": "memo.groups.slight",
           "alike": "memo.groups.alike_pair", "unclear": "memo.groups.unclear_pair"}.get(pair.difference.verdict)
    if key is None:
        return None
    prefix = f"comparison.pairs.{index}"
    return _say_difference(ctx, key, pair.difference, (pair.first,), (pair.second,), groups,
                           (f"{prefix}.first", f"{prefix}.second", f"{prefix}.difference"))


def _together_sentences(ctx: WordingContext, groups: MemoGroups, said: _Said, *, all_alike: bool = False) -> list:
    """ "East and North are about the same." for each set of groups that go together, once."""
    comparison = groups.comparison
    out = []
    for together in comparison.together:
        if len(together) < 2 or together in said.together:
            continue
        said.together.add(together)
        inside = [(k, pair) for k, pair in enumerate(comparison.pairs)
                  if pair.first in together and pair.second in together]
        if inside and all(k in said.pairs for k, _ in inside):
            continue  # "A and C are about the same: ... about 1 day" was said pair by pair: not twice
        limits = [abs(value) for _, pair in inside for value in (pair.difference.low, pair.difference.high)
                  if value is not None]
        # Every "about the same" is sized: by the likely range (a sample), or by the largest typical difference
        # itself (a whole population, where there is no likely range).
        shifts = [abs(pair.difference.shift) for _, pair in inside if pair.difference.shift is not None]
        bound = max(limits) if limits else max(shifts) if shifts else None
        claim = {"groups": list(together), "bound": bound, "bound_of": "limits" if limits else "shifts",
                 "pairs": [[pair.first, pair.second, pair.difference.shift, pair.difference.low,
                            pair.difference.high] for _, pair in inside]}
        key = "memo.groups.all_alike" if all_alike and limits else "memo.groups.together"
        if not limits and bound == 0:
            key = "memo.groups.together_zero"  # "at most 0 days" says it backwards
        sentence = ctx.say(key, tuple(f"comparison.pairs.{k}.difference.verdict" for k, _ in inside), claim=claim,
                           subject=(len(together), "group"),
                           groups=_group_list(ctx, groups, together),
                           bound=_bound(ctx, bound) if bound is not None else "")
        if sentence is not None:
            said.pairs.update(k for k, _ in inside)
            out.append(sentence)
    return out


def _group_difference(ctx: WordingContext, message: Message, groups: MemoGroups | None, said: _Said) -> list:
    if groups is None:
        return []
    comparison = groups.comparison
    first_key = message.keys[0]
    out = []
    if first_key.startswith("comparison.versus_rest."):
        index = _index(first_key)
        rest = comparison.versus_rest[index]
        prefix = f"comparison.versus_rest.{index}"
        sentence = _say_difference(ctx, "memo.groups.apart", rest.difference, tuple(rest.others), (rest.group,),
                                   groups, (f"{prefix}.group", f"{prefix}.others", f"{prefix}.difference"),
                                   group=member(ctx, groups.group_by, rest.group),
                                   others=_group_list(ctx, groups, rest.others))
        said.apart.add(rest.group)
        if sentence is not None:
            out.append(sentence)
            said.pairs.update(k for k, pair in enumerate(comparison.pairs) if rest.group in (pair.first, pair.second))
            if message.numbers.get("together"):  # "Northgate and Eastgate are about the same." right after
                out += _together_sentences(ctx, groups, said)
            else:
                # The others do not clearly go together: how they compare among themselves, sized.
                for k, pair in enumerate(comparison.pairs):
                    if pair.first in rest.others and pair.second in rest.others and not set(
                            (pair.first, pair.second)) & said.apart:
                        out += [s for s in (_pair_sentence(ctx, groups, k, said),) if s is not None]
        else:  # the pooled others straddle it: its clear differences pair by pair
            for k, pair in enumerate(comparison.pairs):
                if rest.group in (pair.first, pair.second) and pair.difference.verdict == "different":
                    out += [s for s in (_pair_sentence(ctx, groups, k, said),) if s is not None]
    else:
        out += [s for s in (_pair_sentence(ctx, groups, _index(first_key), said),) if s is not None]
    return out


def _groups_alike(ctx: WordingContext, message: Message, groups: MemoGroups | None, said: _Said) -> list:
    if groups is None:
        return []
    if len(groups.comparison.pairs) == 1:
        return [s for s in (_pair_sentence(ctx, groups, 0, said),) if s is not None]
    return _together_sentences(ctx, groups, said, all_alike=True)


def _groups_unclear(ctx: WordingContext, message: Message, groups: MemoGroups | None, said: _Said) -> list:
    if groups is None:
        return []
    comparison = groups.comparison
    if len(comparison.pairs) == 1:
        return [s for s in (_pair_sentence(ctx, groups, 0, said),) if s is not None]
    limits = [abs(value) for pair in comparison.pairs for value in (pair.difference.low, pair.difference.high)
              if value is not None]
    out = []
    if limits:
        claim = {"bound": max(limits), "pairs": [[pair.first, pair.second, pair.difference.shift, pair.difference.low,
                                                  pair.difference.high, pair.difference.verdict]
                                                 for pair in comparison.pairs]}
        sentence = ctx.say("memo.groups.unclear_many", ("comparison.pairs",), claim=claim, group=groups.group_by,
                           count=ctx.count(len({label for pair in comparison.pairs
                                                for label in (pair.first, pair.second)}), "group"),
                           bound=_bound(ctx, max(limits)))
        if sentence is not None:
            out.append(sentence)
    return out + _together_sentences(ctx, groups, said)


def _tenths(share: float) -> int:
    return min(9, max(1, math.floor(share * 10 + 0.5)))


def _clusters(ctx: WordingContext, message: Message, groups, said) -> list:
    clusters = ctx.findings.clusters
    parts = clusters.parts
    claim = {"parts": [[part.share, part.median, part.low, part.high] for part in parts], "n": ctx.findings.n}

    def span(part) -> str:
        low, high = ctx.memo_recorded_pair(part.low, part.high)
        return ctx.text("format.range", low=low, high=high)

    ten = ctx.whole(10)  # "6 in 10": the 10 comes through the formatter too

    def tenths_text(tenths: int) -> str:
        return ctx.text("memo.clusters.tenths", tenths=ctx.whole(tenths), ten=ten)

    if len(parts) == 2:
        low_tenths = _tenths(parts[0].share)
        claim["tenths"] = [low_tenths, 10 - low_tenths]
        sentence = ctx.say("memo.clusters.two", message.keys, claim=claim,
                           share_low=tenths_text(low_tenths), share_high=tenths_text(10 - low_tenths),
                           tenths_low=ctx.whole(low_tenths), tenths_high=ctx.whole(10 - low_tenths), ten=ten,
                           median_low=ctx.memo_recorded(parts[0].median),
                           median_high=ctx.memo_recorded(parts[1].median),
                           range_low=span(parts[0]), range_high=span(parts[1]))
    else:
        claim["tenths"] = [_tenths(part.share) for part in parts]
        items = [ctx.text("memo.clusters.part", share=tenths_text(tenths),
                          median=ctx.memo_recorded(part.median), range=span(part))
                 for part, tenths in zip(parts, claim["tenths"], strict=True)]
        sentence = ctx.say("memo.clusters.many", message.keys, claim=claim,
                           clusters=ctx.count(len(parts), "cluster"), parts=ctx.fmt.list(items))
    out = [sentence] if sentence is not None else []
    separating = next((item for item in clusters.separation if item.separates), None)
    if separating is not None and clusters.separation_checked:
        by_cluster: dict[int, list[str]] = {}
        for category, index, _count in separating.categories:
            by_cluster.setdefault(index, []).append(ctx.text("numbers.quoted", text=category))
        pairs = [ctx.text("memo.clusters.category", categories=ctx.fmt.list(names[:3]),
                          median=ctx.memo_recorded(parts[index].median))
                 for index, names in sorted(by_cluster.items()) if index < len(parts)]
        sentence = ctx.say("memo.clusters.separated", ("clusters.separation",),
                           claim={"column": separating.column, "agreement": separating.agreement,
                                  "categories": [list(item) for item in separating.categories]},
                           column=separating.column, pairs=ctx.fmt.list(pairs))
        if sentence is not None:
            out.append(sentence)
    return out


def _items(ctx: WordingContext, errors) -> str:
    return ctx.fmt.list([ctx.text("memo.entry_error.item", value=ctx.memo_recorded(value), row=ctx.whole(row))
                         for value, row, *_ in errors[:LISTED]])


def _entry_error(ctx: WordingContext, message: Message, groups, said) -> list:
    errors = message.numbers["errors"]
    claim = {"errors": [[value, row] for value, row, _ in errors], "n": ctx.findings.n}
    if message.numbers["pattern"]:
        # "such as" only when the sentence names fewer values than it counts.
        named = min(len(errors), LISTED)
        key = "memo.entry_error.many_some" if message.numbers["count"] > named else "memo.entry_error.many"
        sentence = ctx.say(key, message.keys, claim=claim,
                           subject=(message.numbers["count"], "value"),
                           count=ctx.count(message.numbers["count"], "value"), items=_items(ctx, errors))
    elif len(errors) == 1:
        value, row, suggested = errors[0]
        key = "memo.entry_error.one_suggested" if suggested is not None else "memo.entry_error.one"
        sentence = ctx.say(key, message.keys, claim={**claim, "suggested": suggested},
                           value=ctx.memo_recorded(value), row=ctx.whole(row),
                           suggested=ctx.memo_recorded(suggested) if suggested is not None else "")
    else:
        sentence = ctx.say("memo.entry_error.several", message.keys, claim=claim, subject=(len(errors), "value"),
                           count=ctx.count(len(errors), "value"), items=_items(ctx, errors))
    return [sentence] if sentence is not None else []


def _stand_out(ctx: WordingContext, message: Message, groups, said) -> list:
    unusual = ctx.findings.unusual
    numbers = message.numbers
    far = {"rule": unusual.fence_rule, "far_lower": unusual.far_lower_fence, "far_upper": unusual.far_upper_fence,
           **flagged_claim(ctx.findings)}
    out = []
    values = numbers["values"]
    rows = numbers.get("rows", ())
    if values:
        # Each value with its row, so the reader can check it against the source records (the sentence asks it).
        named = list(zip(values, rows, strict=True)) if len(rows) == len(values) else []
        distinct = list(dict.fromkeys(ctx.memo_recorded(value) for value in values))
        shown = _items(ctx, named) if named else ctx.fmt.list(distinct[:LISTED])
        if unusual.complete and len(values) <= LISTED and (named or len(distinct) == len(values)):
            out.append(ctx.say("memo.unusual.values", message.keys, subject=(len(values), "value"),
                               claim={**far, "values": list(values)}, count=ctx.count(len(values), "value"),
                               values=shown))
        elif unusual.complete:
            out.append(ctx.say("memo.unusual.values_many", message.keys, claim={**far, "values": list(values)},
                               subject=(len(values), "value"),
                               count=ctx.count(len(values), "value"), values=shown))
        else:
            out.append(ctx.say("memo.unusual.values_some", message.keys, claim={**far, "values": list(values)},
                               values=shown))
    if numbers["excess"]:
        # "4 against about 0" says nothing true: under one expected value, the words say so.
        below_one = numbers["expected_beyond_fences"] < 1
        key = "memo.unusual.excess_below_one" if below_one else "memo.unusual.excess"
        # Pooled, yes; within each group, no: the groups' different values explain it, and it is not said.
        if not _excess_from_mixing(groups):
            out.append(ctx.say(key, ("unusual.excess", "unusual.count_beyond_fences"),
                               claim={**far, "count": numbers["count_beyond_fences"],
                                      "expected": numbers["expected_beyond_fences"],
                                      "fitted_shape": unusual.fitted_shape, "decimals": ctx.findings.variable.decimals},
                               count=ctx.whole(numbers["count_beyond_fences"]),
                               expected=ctx.whole(numbers["expected_beyond_fences"])))
    possible = tuple(item for item in numbers["possible_errors"] if item[0] not in values)  # not named twice
    if possible:
        # Money is never called a typing error, not even a possible one: a large amount is often real.
        key = "memo.unusual.possible_money" if numbers.get("money") else "memo.unusual.possible"
        out.append(ctx.say(key, ("unusual.entry_errors",), subject=(len(possible), "value"),
                           claim={**far, "errors": [list(item) for item in possible]},
                           count=ctx.count(len(possible), "value"), items=_items(ctx, possible)))
    return [sentence for sentence in out if sentence is not None]


def _shared_far(ctx: WordingContext) -> list[Sentence]:
    """ "Twelve values, 6% of all, were exactly 99, far above the rest": a far-out value that many values hold
    (``Unusual.shared``, narrator.engine.entry_errors.shared_values) is no stray entry to check; its share is
    said instead (at most LISTED such values)."""
    unusual, n = ctx.findings.unusual, ctx.findings.n
    out = []
    for value, count in unusual.shared[:LISTED]:
        side = "high" if unusual.far_upper_fence is not None and value > unusual.far_upper_fence else "low"
        sentence = ctx.say("memo.unusual.shared", ("unusual.shared",), subject=(count, "value"),
                           count=ctx.count(count, "value"), share=_share(ctx, count),
                           value=ctx.memo_recorded(value), side=ctx.text(f"memo.unusual.shared_side.{side}"),
                           claim={"value": value, "count": count, "n": n, "side": side,
                                  "far_lower": unusual.far_lower_fence, "far_upper": unusual.far_upper_fence})
        if sentence is not None:
            out.append(sentence)
    return out


def _excess_from_mixing(groups: MemoGroups | None) -> bool:
    """Whether the pooled values' excess of far-out values may come from mixing groups: no shown group has
    an excess of its own, and the groups are not all alike (alike groups mixed give one shape)."""
    if groups is None or not groups.excess_within or any(groups.excess_within):
        return False
    return groups_may_mix(groups.comparison)


def _unjudged(ctx: WordingContext, key: str, keys: tuple[str, ...], listed: list, count: int, *,
              complete: bool) -> list:
    """The rule's values that nothing can judge, each with its row ("``key``"), or only their count when not
    all are listed or there are more than LISTED ("``key``_count")."""
    if not (complete and len(listed) == count and count <= LISTED):
        key = f"{key}_count"
    sentence = ctx.say(key, keys, subject=(count, "value"), count=ctx.count(count, "value"), items=_items(ctx, listed),
                       claim={**flagged_claim(ctx.findings), "values": [value for value, _ in listed]})
    return [sentence] if sentence is not None else []


def _nothing_stands_out(ctx: WordingContext) -> list:
    """No value stands out: none flagged, or the flagged ones are what the shape predicts."""
    findings = ctx.findings
    flagged = findings.outliers
    if flagged is None or flagged.count == 0:
        sentence = ctx.say("memo.outliers.none", ("outliers.count",), claim=flagged_claim(findings))
    else:
        unusual = findings.unusual
        if unusual.reason == "too_few":
            # Too few values to judge a shape: the rule's values with their rows, and no word on whether they are
            # ordinary or surprising for a shape nobody can see in so few values.
            return _unjudged(ctx, "memo.unusual.few_to_judge", ("outliers.values", "outliers.rows", "outliers.count"),
                             list(zip(flagged.values, flagged.rows, strict=True)), flagged.count,
                             complete=flagged.complete)
        held = {value for value, _ in unusual.shared}
        listed = [(value, row) for value, row in zip(flagged.far_out_values, flagged.far_out_rows, strict=True)
                  if value not in held]
        if unusual.reason == "no_fitted_shape" and listed and holds("many_at_floor", ctx) and all(
                value > unusual.far_upper_fence for value, _ in listed):
            # A quarter or more at 0 (no claim, no visit) draws the rule's limits in close to 0: the far-out values
            # are the upper part of the others, and being far out for those limits says little about them (a rule
            # of ours; the middle value above 0 is said, memo.above_min). Counted, not listed to check.
            shared = sum(count for _, count in unusual.shared)
            count = (unusual.count_far_out - shared) or len(listed)
            sentence = ctx.say("memo.unusual.far_from_floor", ("outliers.far_out_values", "spread.min"),
                               subject=(count, "value"), count=ctx.count(count, "value"),
                               min=ctx.memo_recorded(findings.spread.min),
                               claim={**flagged_claim(findings), "values": [value for value, _ in listed]})
            return [sentence] if sentence is not None else []
        if unusual.reason in ("no_fitted_shape", "rule_ignores_skew") and listed:
            # No shape to judge them against (values at or below 0 in skewed data, a hand-chosen rule that ignores
            # the skew): values beyond the rule's far-out fences are still named, with their rows, to be checked;
            # no word on whether the shape explains them. A value many values share is not one of them.
            shared = sum(count for _, count in unusual.shared)
            return _unjudged(ctx, "memo.unusual.far_unjudged", ("outliers.far_out_values", "outliers.far_out_rows"),
                             listed, (unusual.count_far_out - shared) or len(listed), complete=True)
        if unusual.shared:
            return []  # the share of the value many values hold is said (_shared_far): "none stands out" is not
        if unusual.reason != "computed":
            return []
        # Which side they lie on: "six low values (1.8 to 4.0 days) lie outside ...", never a bare count a
        # reader of waiting times takes for six long waits.
        spell_out = flagged.count <= ctx.bank.spell_out_max
        parts = [_side_part(ctx, side, count, span, spell_out)
                 for side, count, span in (("low", flagged.count_low, flagged.low_range),
                                           ("high", flagged.count_high, flagged.high_range)) if count]
        sentence = ctx.say("memo.unusual.none", ("unusual.values", "unusual.excess", "outliers.count",
                                                 "outliers.low_range", "outliers.high_range"),
                           subject=(flagged.count, "value"), values_part=ctx.fmt.list(parts),
                           claim={"rule": unusual.fence_rule, "far_lower": unusual.far_lower_fence,
                                  "far_upper": unusual.far_upper_fence, "count_far_out": unusual.count_far_out,
                                  **flagged_claim(findings)})
    return [sentence] if sentence is not None else []


def _money(ctx: WordingContext, message: Message, groups, said) -> list:
    numbers = message.numbers
    found = ctx.findings.concentration
    claim = {"total": found.total, "top_count": found.top_percent_count, "top_share": found.top_percent_share,
             "tenth_count": found.top_tenth_count, "tenth_share": found.top_tenth_share, "n": found.n}
    values = {"n_values": ctx.count(ctx.findings.n, "value"), "total": ctx.memo(numbers["total"]),
              "top_count": ctx.count(found.top_percent_count, "value"),
              "top_share": _share_of_total(ctx, found.top_percent_share),
              "tenth_count": ctx.count(found.top_tenth_count, "value"),
              "tenth_share": _share_of_total(ctx, found.top_tenth_share),
              "tenth": ctx.fmt.percent(0.1, 0)}  # "the top 10% of values" (fr, es), "the largest tenth" (en)
    if message.code == "money_total":
        key = "memo.money.total"
    elif found.top_tenth_count <= found.top_percent_count or \
            found.top_tenth_share - found.top_percent_share < TENTH_ADDS:
        key = "memo.money.concentrated_short"  # the largest tenth says nothing the few largest did not
    else:
        key = "memo.money.concentrated"
    sentence = ctx.say(key, message.keys, subject=(found.top_percent_count, "value"), claim=claim, **values)
    return [sentence] if sentence is not None else []


def _center(ctx: WordingContext, message: Message, groups, said, clustered: bool) -> dict[str, list[Sentence]]:
    """The center and the typical range; none when the values form clusters: no single middle describes them,
    and a pooled middle half would straddle the gap between the clusters (the clusters' sentence gives each
    cluster's place, range and size instead)."""
    findings = ctx.findings
    if clustered:
        return {}
    lead = _lead(ctx)
    parts: dict[str, list[Sentence]] = {"lead": lead, "at_end": _at_end(ctx, lead[0]),
                                        "above_min": _above_minimum(ctx), "below_max": _below_maximum(ctx)}
    if said.lead:  # the share at one value already gave the lead (and the middle value above the lowest)
        parts["lead"] = parts["at_end"] = parts["above_min"] = parts["below_max"] = []
    if findings.n > 1 and findings.spread.range > 0:
        # A lead that gave the share at one end already said where the other values run.
        # So does one that named the lowest and the highest value with every value between ("30% were 1, 40% were
        # exactly 2 and 30% were 3"), when the quartiles are those ends ("100% were between 1 and 3" says nothing).
        spread = findings.spread
        said_range = bool(lead[0].claims) and (
            lead[0].claims[0].kind in ("share_at_minimum", "share_at_maximum")
            or (lead[0].claims[0].kind == "median_ties_at_ends" and spread.q1 == spread.min
                and spread.q3 == spread.max))
        parts["range"] = [] if said_range else [_range(ctx)]
        if groups is None:  # with groups, the groups are the message; the whole's shape is in the full report
            # "56% were 0 ...; the others ran from 1 to 24" already says most values are low and the rest spread
            # out: the shape sentence is said only when it adds that a few lie far out.
            parts["shape"] = [] if said_range and not _shape_adds_to_end_share(ctx) else [_shape(ctx)]
            # Most values at one end: the share said it; "the middle value is the better guide" would point
            # at that end value as typical, which no statistician would say.
            at_one_end = said_range or said.lead
            exact = bool(lead[0].claims) and lead[0].claims[0].kind in EXACT_LEADS
            parts["why"] = [] if at_one_end else [
                _why(ctx, ctx.recorded_unit(findings.center.median) if exact else None)]
    return {name: [s for s in sentences if s is not None] for name, sentences in parts.items()}


def _shape_adds_to_end_share(ctx: WordingContext) -> bool:
    """After the share at one end and the others' range, whether the shape sentence says more: a few values
    far out on the long side (licences few_far_high / few_far_low); its "most are low, the rest spread out"
    would only repeat the lead."""
    label = ctx.findings.shape.label
    if label == "right-skewed":
        return holds("few_far_high", ctx)
    if label == "left-skewed":
        return holds("few_far_low", ctx)
    return True


def _change_in_center(ctx: WordingContext, baseline) -> list[Sentence]:
    """ "Since the previous data, the middle value rose from 16 to 20 days (+4 days; likely between +0.5 and
    +7.5 days)": the change the selection found clear, first when it leads (the what-changed section keeps
    the whole comparison)."""
    from narrator.history.changes import compare
    from narrator.phrasing.licences import ChangeFacts
    from narrator.phrasing.what_changed import center_values

    changes = compare(baseline, ctx.findings)
    facts = ChangeFacts(ctx=ctx, changes=changes, old=baseline, new=ctx.findings)
    values, claim = center_values(ctx, changes)
    if values is None:
        return []
    sentence = ctx.say("memo.change.center", (f"center.{changes.lead}",), about=facts, claim=claim,
                       claim_about="change", **values)
    return [sentence] if sentence is not None else []


WORDERS: dict[str, Callable] = {
    "group_difference": _group_difference,
    "entry_error": _entry_error,
    "concentration": _money,
    "money_total": _money,
    "clusters": _clusters,
    "groups_alike": _groups_alike,
    "groups_unclear": _groups_unclear,
    "stand_out": _stand_out,
}


def memo_paragraph(ctx: WordingContext, groups: MemoGroups | None = None, *,
                   baseline=None) -> Paragraph:
    """The memo summary paragraph: the messages of narrator.phrasing.selection, in its order, then one caution.

    The first sentence states the top message. The center and range (message ``center_range``)
    keep their own order (lead, share at one end, range, shape, why); what was left out follows
    the first message. Without the shape judgement of :mod:`narrator.engine.entry_errors` (an
    engine that did not compute it) the rule's flagged values are listed as before.
    """
    findings = ctx.findings
    if findings.n == 0 or findings.center is None:
        return Paragraph((ctx.say("quality.no_values", ("n",), claim={"n": 0}), memo_caution(ctx)))
    if 2 <= findings.n < TINY_N and findings.spread.range > 0:
        return Paragraph(tuple(_tiny(ctx)))
    messages = select_messages(findings, comparison=groups.comparison if groups is not None else None,
                               currency=ctx.fmt.currency_code, within=groups.within if groups is not None else None,
                               baseline=baseline)
    # A clear change since the previous build is worded with both builds at hand (narrator.phrasing.what_changed).
    changed_from = baseline
    clustered = any(message.code == "clusters" for message in messages)
    said = _Said()
    blocks: list[tuple[str, list[Sentence]]] = []
    center: dict[str, list[Sentence]] = {}
    for message in messages:
        if message.code == "left_out":
            blocks.append(("left_out", _left_out_first(ctx, message)))
        elif message.code == "center_range":
            center = _center(ctx, message, groups, said, clustered)
            blocks.append(("center", []))
        elif message.code == "share_at_one_value":
            # The center's lead states it (the share at the lowest or highest value, or the ties at the middle);
            # said here, in the message's place, even when clusters leave the rest of the center out.
            lead = _lead(ctx)
            blocks.append(("share", [s for s in (*lead, *_at_end(ctx, lead[0]), *_above_minimum(ctx),
                                                 *_below_maximum(ctx)) if s is not None]))
            said.lead = True
        elif message.code == "change_in_center" and changed_from is not None:
            blocks.append((message.code, _change_in_center(ctx, changed_from)))
        elif message.code in WORDERS:
            blocks.append((message.code, WORDERS[message.code](ctx, message, groups, said)))
    if findings.n > 1 and findings.spread.range > 0:
        if findings.unusual is None:
            blocks.append(("outliers", _outliers(ctx)))  # an engine without the shape judgement: the rule's list
        elif not any(message.code in ("stand_out", "entry_error") for message in messages):
            blocks.append(("calm", _nothing_stands_out(ctx)))
        if findings.unusual is not None and findings.unusual.shared:
            blocks.append(("shared", _shared_far(ctx)))
    if groups is not None:
        blocks.append(("together", _together_sentences(ctx, groups, said)))
    mentioned_unusual = any(code in ("stand_out", "outliers") and sentences for code, sentences in blocks)
    # A sentence that named values standing out already asked for them to be checked: no second caution.
    asked_check = any(code == "stand_out" and any(s.claims and s.claims[0].kind in ("stand_out", "entry_error_possible")
                                                  for s in sentences)
                      for code, sentences in blocks)
    fixed = sum(len(sentences) for _, sentences in blocks) + len(_left_out(ctx)) + 1
    for name in DROPPED_FIRST:
        if fixed + sum(len(sentences) for sentences in center.values()) <= MAX_SENTENCES:
            break
        center[name] = []
    sentences: list[Sentence] = []
    for code, block in blocks:
        if code == "center":
            block = [s for name in CENTER_ORDER for s in center.get(name, ())]
        sentences.extend(block)
        if block and not any(s.claims and s.claims[0].kind == "left_out" for s in sentences):
            sentences.extend(_left_out(ctx))
    if not any(s.claims and s.claims[0].kind == "left_out" for s in sentences):
        sentences.extend(_left_out(ctx))
    sentences.append(memo_caution(ctx, (mentioned_unusual or findings.unusual is None) and not asked_check))
    return Paragraph(tuple(sentences))


def tiny_values(findings) -> list[float]:
    """The values of fewer than ``TINY_N`` (narrator.phrasing.licences), ascending, from the ends and their counts.

    With at most four values there are at most two besides the lowest and highest ones, and
    ``order_counts`` gives them (the next value above the lowest, the next below the highest).
    """
    spread, counts = findings.spread, findings.order_counts
    middle = findings.n - counts.at_min - counts.at_max
    inner = [] if middle <= 0 else [counts.next_above_min] if middle == 1 else [counts.next_above_min,
                                                                                 counts.next_below_max]
    return [spread.min] * counts.at_min + [float(value) for value in inner] + [spread.max] * counts.at_max


def _tiny(ctx: WordingContext) -> list[Sentence]:
    """Two to four values: the values, their average (and middle value), what was left out, the caution; what was
    left out comes first when it is a material share of the rows (message ``left_out``, as in a longer memo)."""
    findings = ctx.findings
    material = [message for message in select_messages(findings, currency=ctx.fmt.currency_code)
                if message.code == "left_out"]
    opening = _left_out_first(ctx, material[0]) if material else []
    values = tiny_values(findings)
    shown = [ctx.memo_recorded_pair(value, values[-1])[0] for value in values[:-1]] + [ctx.memo_recorded(values[-1])]
    out = [*opening, ctx.say("memo.tiny.values", ("n", "spread.min", "spread.max", "order_counts"),
                             subject=(findings.n, "value"),
                   n_values=ctx.count(findings.n, "value"), values=ctx.fmt.number_list(shown),
                   claim={"values": values, "n": findings.n})]
    center = findings.center
    out.append(ctx.say("memo.tiny.center", ("center.mean", "center.median"), mean=ctx.memo(center.mean),
                       median=ctx.memo(center.median), claim={"mean": center.mean, "median": center.median}))
    if not opening:
        out += _left_out(ctx)
    out.append(memo_caution(ctx, flagged_said=False))
    return [sentence for sentence in out if sentence is not None]


GROUP_CODES = ("group_difference", "groups_alike", "groups_unclear")


def group_sentences(ctx: WordingContext, groups: MemoGroups) -> list[Sentence]:
    """The groups' messages alone, in the selection's order, in plain words (a report's groups section)."""
    said = _Said()
    out: list[Sentence] = []
    for message in select_messages(ctx.findings, comparison=groups.comparison):
        if message.code in GROUP_CODES:
            out += WORDERS[message.code](ctx, message, groups, said)
    return out + _together_sentences(ctx, groups, said)
