"""Words for what changed between two builds (narrator.history.changes decides what is worth saying).

=============================  ==================================================
Name                           What it does
=============================  ==================================================
:func:`changes_section`        Changes + both Findings -> the "what changed" Section
:func:`set_changes_narrative`  two findings sets -> a Narrative: each variable, each group
=============================  ==================================================

Sentences come in a fixed order (count, center, lead, spread, outliers, shape, missing,
impossible, then the rule), so the same comparison always gives the same words. Each is a
claim entry said only when its licence holds (narrator.phrasing.licences, subject "change"):
the center "rose" or "fell" only when the interval of the difference between the builds
excludes no change (Schenker & Gentleman 2001), and a change in the number of flagged values
says when the fences moved, so it does not read as the same values changing.
"""

from __future__ import annotations

from narrator.findings import Findings
from narrator.history.changes import COUNT_SHARE, POPULATION_SHARE, SPREAD_SHARE, Changes, SetChanges, same_findings
from narrator.phrasing.context import WordingContext, make_context, member
from narrator.phrasing.licences import ChangeFacts
from narrator.phrasing.narrative import Narrative, Paragraph, Section, Sentence


def center_values(ctx: WordingContext, changes: Changes) -> tuple[dict | None, dict | None]:
    """The words and the claim of the center's change (both None when the center was not compared)."""
    item = changes.item(f"center.{changes.lead}")
    if item is None:
        return None, None
    # "rose from 23 to 29 days": the unit once, after the second number (numbers.quantity_pair); a currency
    # symbol stays on both.
    old_shown, new_shown = ctx.memo_pair(item.old, item.new)
    if ctx.memo(item.old) == ctx.memo(item.new):  # "unchanged at 21 days": one number, with its unit
        old_shown = new_shown = ctx.memo(item.new)
    values = {"measure": ctx.text(f"changes.measure.{changes.lead}"), "old": old_shown,
              "new": new_shown,
              "difference": _signed_quantity(ctx, item.difference or 0.0),
              "low": "", "high": "",
              "level": ctx.fmt.percent(item.level or 0.95, 0)}
    if item.low is not None and item.high is not None:
        # "from +5 to +9 days": the signed ends with the unit once, as a range (numbers.quantity_pair)
        values["low"], values["high"] = ctx.signed_pair(item.low, item.high)
    claim = {"measure": changes.lead, "old": item.old, "new": item.new, "difference": item.difference,
             "low": item.low, "high": item.high, "level": item.level, "reason": item.reason,
             "old_shown": values["old"], "new_shown": values["new"]}
    return values, claim


def _center_sentence(ctx: WordingContext, facts: ChangeFacts, about: str, brief: bool = False) -> Sentence | None:
    changes = facts.changes
    values, claim = center_values(ctx, changes)
    if values is None:
        return None
    if brief:  # a memo: the same judgement in fewer words, without the interval's ends
        said = ctx.say("changes.center_memo", (f"center.{changes.lead}",), about=facts, claim=claim,
                       claim_about=about, **values)
        if said is not None:
            return said
    return ctx.say("changes.center", (f"center.{changes.lead}",), about=facts, claim=claim, claim_about=about,
                   **values)


def _signed_quantity(ctx: WordingContext, value: float) -> str:
    """A difference with its unit, at the memo's rounding, with a plus sign when it is above zero."""
    amount = ctx.memo(value)
    if value > 0 and amount != ctx.memo(0.0):
        return ctx.text("format.signed_positive", number=amount)
    return amount


def _spread_sentence(ctx: WordingContext, facts: ChangeFacts, about: str) -> Sentence | None:
    old, new = facts.old, facts.new
    if old.spread is None or new.spread is None:
        return None
    key = "spread.iqr" if facts.changes.lead == "median" else "spread.sd"
    old_low, old_high = ctx.memo_pair(old.spread.q1, old.spread.q3)  # the unit once: "13 to 28 days"
    new_low, new_high = ctx.memo_pair(new.spread.q1, new.spread.q3)
    old_range = ctx.text("format.range", low=old_low, high=old_high)
    new_range = ctx.text("format.range", low=new_low, high=new_high)
    item = facts.changes.item(key)
    return ctx.say("changes.spread", ("spread.q1", "spread.q3", key), about=facts, new_range=new_range,
                   old_range=old_range, claim_about=about,
                   claim={"measure": key, "old": item.old if item else None, "new": item.new if item else None,
                          "old_q1": old.spread.q1, "old_q3": old.spread.q3, "new_q1": new.spread.q1,
                          "new_q3": new.spread.q3})


def _fence_pair(findings: Findings) -> tuple[float, float] | None:
    flagged = findings.outliers
    if flagged is None or flagged.lower_fence is None or flagged.upper_fence is None:
        return None
    return flagged.lower_fence, flagged.upper_fence


EXTRA_FENCE_PLACES = 3  # at most this many places beyond the memo's to tell a moved fence from the old one


def _fences(ctx: WordingContext, old: Findings, new: Findings) -> tuple[str, str]:
    """Both builds' fences, "2 and 67 days" (the unit once), at memo rounding; with more places, up to
    EXTRA_FENCE_PLACES, while a fence that moved prints as it did ("they were 4 and 71 days and are now 4 and 70
    days" hid a lower limit that moved from 3.9 to 4.3 days, past every wait of 4 days)."""
    pairs = [_fence_pair(old), _fence_pair(new)]
    texts = [None if pair is None else ctx.memo_pair(*pair) for pair in pairs]
    if None not in pairs:
        places = ctx._memo_places(ctx._as_recorded(*pairs[0], *pairs[1]))
        extra = 0
        while extra < EXTRA_FENCE_PLACES and any(
                pairs[0][k] != pairs[1][k] and texts[0][k] == texts[1][k] for k in (0, 1)):
            extra += 1
            texts = [ctx.fmt.quantity_pair(*pair, places + extra) for pair in pairs]
    return tuple("" if text is None else ctx.text("format.both", low=text[0], high=text[1]) for text in texts)


def change_sentences(ctx: WordingContext, changes: Changes, old: Findings, new: Findings,
                     about: str = "change", brief: bool = False) -> list[Sentence]:
    """The sentences about one variable (or group) in two builds, in the fixed order (``brief``: a memo's
    words where the bank has them, ``changes.center_memo``)."""
    facts = ChangeFacts(ctx=ctx, changes=changes, old=old, new=new)
    if same_findings(old, new) and new.center is not None:
        # The same data as last time: one sentence (count, center and spread the same), never a list of "unchanged".
        lead = new.center.lead
        unchanged = ctx.say("changes.nothing_changed", ("n", f"center.{lead}"), about=facts, claim_about=about,
                            subject=(new.n, "value"), n_values=ctx.count(new.n, "value"),
                            measure=ctx.text(f"changes.measure.{lead}"), center=ctx.memo(getattr(new.center, lead)),
                            claim={"old_n": old.n, "new_n": new.n, "measure": lead,
                                   "old": getattr(old.center, lead), "new": getattr(new.center, lead)})
        if unchanged is not None:
            return [unchanged]
    n_item = changes.item("n")
    sentences = [
        ctx.say("changes.little_changed", (), about=facts, claim_about=about),
        ctx.say("changes.count", ("n",), about=facts, new_n=ctx.count(new.n, "value"), old_n=ctx.count(old.n, "value"),
                claim={"old_n": old.n, "new_n": new.n, "reason": n_item.reason if n_item else None},
                claim_about=about),
        _center_sentence(ctx, facts, about, brief),
    ]
    lead = changes.item("center.lead")
    if lead is not None:
        sentences.append(ctx.say("changes.lead_changed", ("center.lead",), about=facts,
                                 new_measure=ctx.text(f"changes.measure.{lead.new}"),
                                 old_measure=ctx.text(f"changes.measure.{lead.old}"),
                                 claim={"old": lead.old, "new": lead.new}, claim_about=about))
    sentences.append(_spread_sentence(ctx, facts, about))
    flagged = changes.item("outliers.count")
    if flagged is not None:
        fences = _fences(ctx, old, new)
        sentences.append(ctx.say(
            "changes.flagged", ("outliers.count",), about=facts, old=ctx.whole(flagged.old), new=ctx.whole(flagged.new),
            old_fences=fences[0], new_fences=fences[1], claim_about=about,
            claim={"old": flagged.old, "new": flagged.new,
                   "old_fences": (old.outliers.lower_fence, old.outliers.upper_fence) if old.outliers else None,
                   "new_fences": (new.outliers.lower_fence, new.outliers.upper_fence) if new.outliers else None}))
    sentences.append(ctx.say("changes.shape_changed", ("shape.label", "shape.strength"), about=facts,
                             old_shape=_shape_words(ctx, old), new_shape=_shape_words(ctx, new), claim_about=about,
                             claim={"old": (old.shape.label, old.shape.strength),
                                    "new": (new.shape.label, new.shape.strength)}))
    for key, message in (("quality.n_missing", "changes.missing_changed"),
                         ("quality.n_impossible", "changes.impossible_changed")):
        item = changes.item(key)
        if item is not None:
            sentences.append(ctx.say(message, (key,), about=facts, old=ctx.whole(item.old), new=ctx.whole(item.new),
                                     claim={"old": item.old, "new": item.new, "key": key}, claim_about=about))
    return [sentence for sentence in sentences if sentence is not None]


def _rule_sentence(ctx: WordingContext, changes: Changes, old: Findings, new: Findings) -> Sentence:
    facts = ChangeFacts(ctx=ctx, changes=changes, old=old, new=new)
    center = changes.item(f"center.{changes.lead}")
    level = center.level if center is not None and center.level is not None else 0.95
    return ctx.say("changes.rule", (), about=facts, level=ctx.fmt.percent(level),
                   sd_share=ctx.fmt.percent(POPULATION_SHARE), spread_share=ctx.fmt.percent(SPREAD_SHARE),
                   count_share=ctx.fmt.percent(COUNT_SHARE))


def changes_section(
    changes: Changes,
    old: Findings,
    new: Findings,
    *,
    locale: str = "en_US",
    currency: str | None = None,
    unit: str | None = None,
    name: str | None = None,
    brief: bool = False,
) -> Section:
    """The "what changed since the previous data" section, worded for any audience (everyday words;
    ``brief``: a memo's shorter words where the bank has them)."""
    ctx = make_context(new, locale, currency=currency, unit=unit, name=name)
    sentences = tuple(change_sentences(ctx, changes, old, new, brief=brief))
    # Nothing changed: the one sentence says so; the rule for judging changes has nothing to judge.
    rule = () if same_findings(old, new) else (Paragraph((_rule_sentence(ctx, changes, old, new),)),)
    return Section(key="changes", title=ctx.text("changes.title"), paragraphs=(Paragraph(sentences), *rule))


def set_changes_narrative(compared: SetChanges, *, locale: str = "en_US", currency: str | None = None) -> Narrative:
    """What changed between two findings sets: a section per variable, and per group when both builds were
    grouped by the same column, with a sentence naming the groups whose center moved clearly."""
    sections: list[Section] = []
    first_ctx = None
    rule = None
    by_variable: dict[str, list] = {}
    for pair in compared.pairs:
        by_variable.setdefault(pair.name, []).append(pair)
    for name, pairs in by_variable.items():
        whole = next(pair for pair in pairs if pair.group is None)
        ctx = make_context(whole.new, locale, currency=currency, unit=None, name=None)
        first_ctx = first_ctx or ctx
        rule = rule or _rule_sentence(ctx, whole.changes, whole.old, whole.new)
        sections.append(Section(key=f"changes.{name}", title=ctx.text("changes.title") if len(by_variable) == 1
                                else ctx.axis_name,
                                paragraphs=(Paragraph(tuple(change_sentences(ctx, whole.changes, whole.old,
                                                                             whole.new))),)))
        groups = [pair for pair in pairs if pair.group is not None]
        if not groups:
            continue
        moved, still = [], []
        for pair in groups:
            item = pair.changes.item(f"center.{pair.changes.lead}")
            (moved if item is not None and item.mention else still).append(pair.group)
        measure = ctx.text(f"changes.measure.{whole.changes.lead}")
        group_by = compared.group_by or ""
        summary = ctx.say("changes.groups_moved" if moved else "changes.groups_still", (), measure=measure,
                          moved=ctx.fmt.list([member(ctx, group_by, label) for label in moved]), group=group_by,
                          claim={"moved": tuple(moved), "still": tuple(still), "measure": whole.changes.lead},
                          claim_about="change")
        sections.append(Section(key=f"changes.{name}.groups", title=ctx.text("changes.group_title", group=group_by),
                                paragraphs=(Paragraph((summary,)),), level=2))
        for pair in groups:
            group_ctx = make_context(pair.new, locale, currency=currency, unit=None, name=None)
            sentences = change_sentences(group_ctx, pair.changes, pair.old, pair.new, about=f"change:{pair.group}")
            sections.append(Section(key=f"changes.{name}.group.{pair.group}", title=member(ctx, group_by, pair.group),
                                    paragraphs=(Paragraph(tuple(sentences)),), level=2))
    notes = []
    ctx = first_ctx
    if ctx is not None:
        for label in compared.only_new:
            notes.append(ctx.say("changes.group_new", (), member=label))
        for label in compared.only_old:
            notes.append(ctx.say("changes.group_gone", (), member=label))
    closing = [Paragraph(tuple(notes))] if notes else []
    if rule is not None:
        closing.append(Paragraph((rule,)))
    if closing:
        sections.append(Section(key="changes.rule", title="", paragraphs=tuple(closing)))
    title = ctx.text("changes.title") if ctx is not None else ""
    return Narrative(audience="changes", locale=ctx.fmt.locale_id if ctx else locale,
                     language=ctx.bank.language if ctx else locale.split("_")[0], title=title,
                     sections=tuple(sections))


def _shape_words(ctx: WordingContext, findings: Findings) -> str:
    shape = findings.shape
    words = ctx.text(f"words.shape.{shape.label}")
    if shape.strength:
        strength = ctx.text(f"words.strength.{shape.strength}")
        return ctx.text("changes.shape_with_strength", strength=strength, shape=words)
    return words
