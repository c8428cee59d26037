"""Words for what changed between two builds (narrator.history.changes decides what is worth saying).

=============================  ==================================================
Name                           What it does
=============================  ==================================================
:func:`changes_section`        Changes + both Findings -> the "what changed" Section
=============================  ==================================================

Sentences come in a fixed order (count, center, lead, spread, outliers,
shape, missing, impossible, then the rule), so the same comparison always
gives the same words. A change not worth mentioning is not said, except the
center, which is always stated with its verdict.
"""

from __future__ import annotations

from narrator.findings import Findings
from narrator.history.changes import COUNT_SHARE, POPULATION_SHARE, SPREAD_SHARE, Changes
from narrator.phrasing.context import WordingContext, make_context
from narrator.phrasing.narrative import Paragraph, Section, Sentence


def _center_sentences(ctx: WordingContext, changes: Changes) -> list[Sentence]:
    item = changes.item(f"center.{changes.lead}")
    if item is None:
        return []
    measure = ctx.text(f"changes.measure.{changes.lead}")
    keys = (f"center.{changes.lead}",)
    values = {"measure": measure, "old": ctx.memo(item.old), "new": ctx.memo(item.new)}
    whole = item.reason in ("beyond_share_of_sd", "within_share_of_sd")
    suffix = "_whole" if whole else ""
    if item.reason == "unchanged" or values["old"] == values["new"] and not item.mention:
        return [ctx.sentence("changes.center_same", keys, **values)]
    if item.mention:
        direction = "up" if item.difference > 0 else "down"
        return [ctx.sentence(f"changes.center_{direction}{suffix}", keys, **values)]
    return [ctx.sentence(f"changes.center_small{suffix}", keys, **values)]


def _spread_sentence(ctx: WordingContext, changes: Changes, old: Findings, new: Findings) -> list[Sentence]:
    key = "spread.iqr" if changes.lead == "median" else "spread.sd"
    item = changes.item(key)
    if item is None or not item.mention or old.spread is None or new.spread is None:
        return []
    old_low, old_high = ctx.memo_pair(old.spread.q1, old.spread.q3)  # the unit once: "13 to 28 days"
    new_low, new_high = ctx.memo_pair(new.spread.q1, new.spread.q3)
    old_range = ctx.text("format.range", low=old_low, high=old_high)
    new_range = ctx.text("format.range", low=new_low, high=new_high)
    message = "changes.spread_wider" if item.difference > 0 else "changes.spread_narrower"
    return [ctx.sentence(message, ("spread.q1", "spread.q3", key), new_range=new_range, old_range=old_range)]


def changes_section(
    changes: Changes,
    old: Findings,
    new: Findings,
    *,
    locale: str = "en_US",
    currency: str | None = None,
    unit: str | None = None,
    name: str | None = None,
) -> Section:
    """The "what changed since the previous data" section, worded for any audience (everyday words)."""
    ctx = make_context(new, locale, currency=currency, unit=unit, name=name)
    sentences: list[Sentence] = []
    n_item = changes.item("n")
    if changes.little_changed:
        sentences.append(ctx.sentence("changes.little_changed", ()))
    if n_item is not None and n_item.reason != "unchanged":
        sentences.append(
            ctx.sentence("changes.count_changed", ("n",), new_n=ctx.count(new.n, "value"),
                         old_n=ctx.count(old.n, "value"))
        )
    else:
        sentences.append(ctx.sentence("changes.count_same", ("n",), new_n=ctx.count(new.n, "value")))
    sentences.extend(_center_sentences(ctx, changes))
    lead = changes.item("center.lead")
    if lead is not None and lead.mention:
        sentences.append(
            ctx.sentence("changes.lead_changed", ("center.lead",),
                         new_measure=ctx.text(f"changes.measure.{lead.new}"),
                         old_measure=ctx.text(f"changes.measure.{lead.old}"))
        )
    sentences.extend(_spread_sentence(ctx, changes, old, new))
    simple = (
        ("outliers.count", "changes.outliers_changed"),
        ("quality.n_missing", "changes.missing_changed"),
        ("quality.n_impossible", "changes.impossible_changed"),
    )
    for key, message in simple:
        item = changes.item(key)
        if item is not None and item.mention:
            sentences.append(ctx.sentence(message, (key,), old=ctx.whole(item.old), new=ctx.whole(item.new)))
    shape_label, shape_strength = changes.item("shape.label"), changes.item("shape.strength")
    if (shape_label and shape_label.mention) or (shape_strength and shape_strength.mention):
        sentences.append(
            ctx.sentence("changes.shape_changed", ("shape.label", "shape.strength"),
                         old_shape=_shape_words(ctx, old), new_shape=_shape_words(ctx, new))
        )
    shares = {
        "spread_share": ctx.fmt.percent(SPREAD_SHARE),
        "count_share": ctx.fmt.percent(COUNT_SHARE),
    }
    center = changes.item(f"center.{changes.lead}")
    if center is not None and center.reason in ("beyond_share_of_sd", "within_share_of_sd"):
        rule = ctx.sentence("changes.rule_whole", (), sd_share=ctx.fmt.percent(POPULATION_SHARE), **shares)
    else:
        level = new.intervals.mean.level if new.intervals.mean is not None else 0.95
        rule = ctx.sentence("changes.rule", (), level=ctx.fmt.percent(level), **shares)
    return Section(
        key="changes",
        title=ctx.text("changes.title"),
        paragraphs=(Paragraph(tuple(sentences)), Paragraph((rule,))),
    )


def _shape_words(ctx: WordingContext, findings: Findings) -> str:
    shape = findings.shape
    words = ctx.text(f"words.shape.{shape.label}")
    if shape.strength:
        strength = ctx.text(f"words.strength.{shape.strength}")
        return ctx.text("changes.shape_with_strength", strength=strength, shape=words)
    return words
