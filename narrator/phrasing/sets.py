"""narrate_set(): a findings set in, one Narrative out: several variables, and groups. A pure function.

Layout of the narrative, for every audience:

======================  =========================================================
Part                    What it holds
======================  =========================================================
``overview``            what the report covers, and the overview table (one row
                        per variable: n, lead center, middle half, outliers)
``variable.<i>``        a level-1 heading per variable, then that variable's
                        sections from the audience's plan (level 2), with the
                        ``groups`` section after the first of them
``groups``              the per-group table, the side-by-side figure and the
                        sentences comparing the groups' centers
``changes``             what changed since the earlier build (when the set
                        carries one), from :mod:`narrator.phrasing.what_changed`
``references``          the published methods of every variable, once, sorted
``cautions``            every caution that applies to any variable, once
======================  =========================================================

Figure keys are made unique per variable (``v1-histogram``, ``v2-groups``),
so the writer numbers the figures continuously through the document.

Group comparisons are descriptive only. The wording never says a group
*causes* anything; it says where values were typically higher, with the
lead measure's numbers, and hedges when a group is small (fewer than
:data:`SMALL_GROUP` values) or when the highest and lowest groups' 95 %
intervals for the lead measure overlap (overlapping intervals do not prove
the centers equal, so the words say the data do not clearly separate them).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace

from narrator.findings import Findings, Interval
from narrator.history.sidecar import FindingsSet, VariableFindings
from narrator.phrasing.context import NOT_DEFINED, WordingContext, capitalize_first, make_context, member
from narrator.phrasing.licences import GroupFacts
from narrator.phrasing.methods import reference_sentence, references_used
from narrator.phrasing.narrative import FigureText, Narrative, Paragraph, Section, Sentence, Table
from narrator.phrasing.planner import caution_paragraphs, narrate

SMALL_GROUP = 20  # as narrator.engine.quality.MIN_FOR_CONFIDENT: fewer values, hedged words
DOCUMENT_WIDE = ("references", "cautions")  # said once for the whole report, not per variable
NAMES_IN_TITLE = 3  # a title names up to this many variables, else counts them


@dataclass(frozen=True, slots=True)
class SetOptions:
    audience: str = "full"
    locale: str = "en_US"
    currency: str | None = None
    title: str | None = None


def figure_key(index: int, key: str) -> str:
    """The document-wide key of variable ``index``'s figure ``key`` (1-based index).

    >>> figure_key(2, "histogram")
    'v2-histogram'
    """
    return f"v{index}-{key}"


def _context(item: VariableFindings, options: SetOptions) -> WordingContext:
    return make_context(item.findings, options.locale, currency=options.currency, unit=None, name=None)


def _lead_value(findings: Findings, lead: str | None = None) -> float | None:
    """The center ``lead`` names ("median" or "mean"); by default the findings' own lead measure.

    Groups are always compared on the overall lead measure, whatever each
    group's own data would lead with, so every number compared is the same kind.
    """
    center = findings.center
    if center is None:
        return None
    return center.median if (lead or center.lead) == "median" else center.mean


def _lead_interval(findings: Findings, lead: str) -> Interval | None:
    return findings.intervals.median if lead == "median" else findings.intervals.mean


# --------------------------------------------------------------------------- overview


def overview_table(contexts: Sequence[WordingContext], items: Sequence[VariableFindings]) -> Table:
    key = "tables.overview"
    rows = []
    for ctx, item in zip(contexts, items, strict=True):
        findings = item.findings
        center, spread = findings.center, findings.spread
        if center is None:
            rows.append((ctx.axis_name, ctx.whole(findings.n), NOT_DEFINED, NOT_DEFINED, NOT_DEFINED))
            continue
        measure = ctx.text(f"words.lead.{center.lead}")
        lead = ctx.text(f"{key}.center_value", value=ctx.memo(_lead_value(findings)), measure=measure)
        middle = ctx.fmt.range_words(*ctx.memo_pair(spread.q1, spread.q3))
        flagged = findings.outliers
        unusual = NOT_DEFINED if flagged is None or flagged.note == "not_run_too_few" else ctx.whole(flagged.count)
        rows.append((ctx.name, ctx.whole(findings.n), lead, middle, unusual))
    first = contexts[0]
    return Table(
        key="overview",
        caption=first.caption(f"{key}.caption"),
        header=tuple(first.text(f"{key}.{name}") for name in ("variable", "n", "center", "middle_half", "unusual")),
        rows=tuple(rows),
        keys=("n", "center.lead", "center.median", "center.mean", "spread.q1", "spread.q3", "outliers.count"),
        align=("left", "right", "right", "right", "right"),
    )


def _overview_section(contexts, findings_set: FindingsSet) -> Section:
    first = contexts[0]
    items = findings_set.variables
    names = first.fmt.list([ctx.name for ctx in contexts])
    sentences = [first.say("collection.intro", ("variable.name",),
                           count=first.count(len(items), "variable"), names=names)]
    if findings_set.group_by is not None:
        groups = len(items[0].groups)
        sentences.append(first.say("collection.intro_grouped", ("groups",),
                                   group=findings_set.group_by, count=first.count(groups, "group")))
        suppressed = items[0].suppressed_groups
        if suppressed:
            sentences.append(_suppressed_sentence(first, suppressed, findings_set.privacy_threshold))
    return Section(
        key="overview", title=first.text("collection.overview_title"), paragraphs=(Paragraph(tuple(sentences)),),
        tables=(overview_table(contexts, items),),
    )


# --------------------------------------------------------------------------- groups


def _suppressed_sentence(ctx: WordingContext, count: int, threshold: int | None) -> Sentence:
    return ctx.say("groups.suppressed", ("suppressed_groups",), subject=(count, "group"),
                   groups=ctx.count(count, "group"), threshold=ctx.whole(threshold or 0),
                   claim={"suppressed": count, "threshold": threshold})


def _overlap(a: Interval | None, b: Interval | None) -> bool | None:
    if a is None or b is None:
        return None
    return a.low <= b.high and b.low <= a.high


def comparison_sentences(ctx: WordingContext, item: VariableFindings, group_by: str) -> list[Sentence]:
    """Sentences comparing the shown groups' centers, each said only when its licence holds
    (narrator.phrasing.licences, subject "groups"); descriptive only, never causal."""
    overall = item.findings
    shown = tuple(group for group in item.groups if group.findings.center is not None)
    if overall.center is None:
        shown = ()
    lead = overall.center.lead if overall.center is not None else "median"
    measure = ctx.text(f"words.lead.{lead}")
    ranked = sorted(shown, key=lambda group: (_lead_value(group.findings, lead), group.label))
    values_of = tuple(_lead_value(group.findings, lead) for group in shown)
    overlap = None
    if len(ranked) >= 2:
        overlap = _overlap(_lead_interval(ranked[0].findings, lead), _lead_interval(ranked[-1].findings, lead))
    facts = GroupFacts(ctx=ctx, shown=shown, lead=lead, values=values_of, overlap=overlap,
                       smallest_n=min((group.findings.n for group in shown), default=0))
    keys_of = [f"groups.{group.label}.center.{lead}" for group in shown]
    claim = {"measure": lead, "groups": {group.label: value for group, value in zip(shown, values_of, strict=True)},
             "shown": {group.label: ctx.memo(value) for group, value in zip(shown, values_of, strict=True)}}
    if not shown:
        return [s for s in (ctx.say("groups.none_shown", ("groups",), about=facts, group=group_by, claim=claim),)
                if s is not None]
    if len(shown) == 1:
        only = shown[0]
        return [s for s in (ctx.say("groups.one_shown", keys_of, about=facts, member=member(ctx, group_by, only.label),
                                    measure=measure, value=ctx.memo(values_of[0]), claim=claim),) if s is not None]
    low, high = ranked[0], ranked[-1]
    values = {
        "measure": measure,
        "high": member(ctx, group_by, high.label),
        "low": member(ctx, group_by, low.label),
        "high_value": ctx.memo(_lead_value(high.findings, lead)),
        "low_value": ctx.memo(_lead_value(low.findings, lead)),
        "value": ctx.memo(_lead_value(high.findings, lead)),
        "group": group_by,
        "level": ctx.fmt.percent(float(overall.options.get("level", 0.95)), 0),
        "small": ctx.whole(SMALL_GROUP),
    }
    claim = {**claim, "high": high.label, "low": low.label}
    interval_keys = (f"groups.{low.label}.intervals.{lead}", f"groups.{high.label}.intervals.{lead}")
    sentences = [
        ctx.say("groups.compared", keys_of, about=facts, claim=claim, **values),
        ctx.say("groups.intervals", interval_keys, about=facts, claim={**claim, "overlap": overlap}, **values),
        ctx.say("groups.small", tuple(f"groups.{g.label}.n" for g in shown), about=facts,
                claim={"smallest_n": facts.smallest_n}, **values),
        ctx.say("groups.descriptive", (), about=facts),
    ]
    return [sentence for sentence in sentences if sentence is not None]


def groups_table(ctx: WordingContext, item: VariableFindings, group_by: str) -> Table:
    """n, the lead measure's summary (median (IQR) or mean (SD)) and the outlier count per shown group."""
    key = "tables.groups"
    lead = item.findings.center.lead if item.findings.center is not None else "median"
    x = ctx.exact

    def summary(findings: Findings) -> str:
        center, spread = findings.center, findings.spread
        if center is None:
            return NOT_DEFINED
        if lead == "median":
            return ctx.text("format.median_iqr", median=x(center.median),
                            iqr_range=ctx.exact_range(spread.q1, spread.q3))
        return ctx.text("format.mean_sd", mean=x(center.mean), sd=x(spread.sd))

    def unusual(findings: Findings) -> str:
        flagged = findings.outliers
        return NOT_DEFINED if flagged is None or flagged.note == "not_run_too_few" else ctx.whole(flagged.count)

    rows = [(group.label, ctx.whole(group.findings.n), summary(group.findings), unusual(group.findings))
            for group in item.groups]
    rows.append((ctx.text(f"{key}.all"), ctx.whole(item.findings.n), summary(item.findings),
                 unusual(item.findings)))
    return Table(
        key="groups",
        caption=ctx.caption(f"{key}.caption", name=ctx.axis_name, group=group_by),
        header=(group_by, ctx.text(f"{key}.n"), ctx.text(f"{key}.{lead}_summary"), ctx.text(f"{key}.unusual")),
        rows=tuple(rows),
        keys=("groups", "n", f"center.{lead}", "outliers.count"),
        align=("left", "right", "right", "right"),
    )


def groups_figure_text(ctx: WordingContext, item: VariableFindings, group_by: str, key: str) -> FigureText | None:
    """Caption, alt text and labels of the side-by-side figure (one row per shown group)."""
    shown = [group for group in item.groups if group.findings.center is not None]
    if not shown or item.findings.center is None:
        return None
    lead = item.findings.center.lead
    measure = ctx.text(f"words.lead.{lead}")
    centers = ctx.fmt.list([
        ctx.text("figures.groups.alt_item", member=member(ctx, group_by, group.label),
                 value=ctx.memo(_lead_value(group.findings, lead)))
        for group in shown
    ])
    values = {"name": ctx.name, "group": group_by, "measure": measure, "centers": centers,
              "groups": ctx.count(len(shown), "group")}
    labels = {name: ctx.text(f"figures.groups.{name}", axis_name=ctx.axis_name)
              for name in ("x", "median", "mean", "middle_half", "values", "flagged")}
    for index, group in enumerate(shown):
        labels[f"group_{index}"] = ctx.text("figures.groups.row", member=member(ctx, group_by, group.label),
                                            n=ctx.whole(group.findings.n))
    return FigureText(
        key=key,
        caption=ctx.caption("figures.groups.caption", **values),
        alt_text=ctx.text("figures.groups.alt", **values),
        labels=labels,
    )


def _groups_section(ctx: WordingContext, item: VariableFindings, findings_set: FindingsSet, index: int,
                    figures: list[FigureText]) -> Section:
    group_by = findings_set.group_by
    sentences = comparison_sentences(ctx, item, group_by)
    notes = [ctx.say("groups.method", ("privacy_threshold",), group=group_by,
                     threshold=ctx.whole(findings_set.privacy_threshold or 0))]
    # How many groups were suppressed is said once, in the overview; here the rule is enough.
    if item.ungrouped_values:
        notes.append(ctx.say("groups.ungrouped", ("ungrouped_values",), subject=(item.ungrouped_values, "value"),
                             values=ctx.count(item.ungrouped_values, "value"), group=group_by,
                             claim={"ungrouped": item.ungrouped_values}))
    text = groups_figure_text(ctx, item, group_by, figure_key(index, "groups"))
    if text is not None:
        figures.append(text)
    return Section(
        key="groups",
        title=ctx.text("groups.section_title", group=group_by),
        paragraphs=(Paragraph(tuple(sentences)), Paragraph(tuple(notes))),
        tables=(groups_table(ctx, item, group_by),),
        figures=(text.key,) if text is not None else (),
        level=2,
    )


# --------------------------------------------------------------------------- the whole


def _changes_part(item: VariableFindings, options: SetOptions, index: int) -> Section:
    """What changed since the build this one is compared with (narrator.history.changes), as a level-2 section."""
    from narrator.history.changes import compare
    from narrator.phrasing.what_changed import changes_section

    section = changes_section(compare(item.baseline, item.findings), item.baseline, item.findings,
                              locale=options.locale, currency=options.currency)
    return replace(section, key=f"{index}.{section.key}", level=2)


def _unique_paragraphs(paragraphs: Sequence[Paragraph]) -> tuple[Paragraph, ...]:
    seen, kept = set(), []
    for paragraph in paragraphs:
        if paragraph.text not in seen:
            seen.add(paragraph.text)
            kept.append(paragraph)
    return tuple(kept)


def _title(contexts: Sequence[WordingContext], options: SetOptions) -> str:
    if options.title is not None:
        return options.title
    first = contexts[0]
    if len(contexts) <= NAMES_IN_TITLE:
        names = first.fmt.list([ctx.name for ctx in contexts])
    else:
        names = first.count(len(contexts), "variable")
    return capitalize_first(first.text(f"collection.title_{options.audience}", names=names))


def narrate_set(findings_set: FindingsSet, options: SetOptions | None = None) -> Narrative:
    """Word a findings set for one audience: overview, a part per variable, document-wide sections last.

    Each variable's part is :func:`narrator.phrasing.narrate` for that
    variable (the same plan, the same words), its headings one level down,
    its figure keys made unique (:func:`figure_key`), with the ``groups``
    section after its first section when the set is grouped. Pure and
    deterministic.
    """
    options = options or SetOptions()
    contexts = [_context(item, options) for item in findings_set.variables]
    sections: list[Section] = [_overview_section(contexts, findings_set)]
    figures: list[FigureText] = []
    references: set[str] = set()
    cautions: list[Paragraph] = []
    language = contexts[0].bank.language
    locale_id = contexts[0].fmt.locale_id
    audience = options.audience
    for index, (ctx, item) in enumerate(zip(contexts, findings_set.variables, strict=True), start=1):
        part = narrate(item.findings, options.audience, options.locale, currency=options.currency)
        audience = part.audience
        renamed = {text.key: figure_key(index, text.key) for text in part.figures}
        figures.extend(replace(text, key=renamed[text.key]) for text in part.figures)
        sections.append(Section(key=f"variable.{index}", title=capitalize_first(ctx.axis_name)))
        inner = [
            replace(section, key=f"{index}.{section.key}", level=2,
                    figures=tuple(renamed[key] for key in section.figures))
            for section in part.sections if section.key not in DOCUMENT_WIDE
        ]
        if findings_set.group_by is not None:
            inner.insert(min(1, len(inner)), _groups_section(ctx, item, findings_set, index, figures))
        if item.baseline is not None:
            inner.insert(min(1, len(inner)), _changes_part(item, options, index))
        sections.extend(inner)
        if part.section("references") is not None:
            references.update(references_used(ctx))
        if part.section("cautions") is not None:
            cautions.extend(caution_paragraphs(ctx))
    first = contexts[0]
    if references:
        sections.append(Section(
            key="references", title=first.text("sections.references"),
            paragraphs=tuple(Paragraph((reference_sentence(first, key),), style="reference")
                             for key in sorted(references)),
        ))
    if cautions:
        if findings_set.group_by is not None:
            cautions.insert(1, Paragraph((first.say("groups.caution", ()),), style="bullet"))
        sections.append(Section(key="cautions", title=first.text("sections.cautions"),
                                paragraphs=_unique_paragraphs(cautions)))
    return Narrative(
        audience=audience,
        locale=locale_id,
        language=language,
        title=_title(contexts, options),
        sections=tuple(sections),
        figures=tuple(figures),
    )
