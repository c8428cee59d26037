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
*causes* anything. Groups are compared the way a statistician would, by the
engine's Hodges-Lehmann shift and its interval (narrator.engine.group_difference):
the memo's summary leads with a clear difference, sized in the reader's unit
with its likely range, says which groups stand apart and which go together,
and calls alike groups "about the same" without ranking them
(narrator.phrasing.selection orders these messages; narrator.phrasing.memo words
them). The methods and full reports add each pair's shift and interval in
technical words and name the method in the methods paragraph. Words hedge when
a group is small (fewer than :data:`SMALL_GROUP` values).

A memo leaves out the overview (each variable's summary says it; about one
variable, the title names it) and, when grouped, shows the groups' figure and table in plain column names ("Typical
value", "Middle half") in place of the distribution figure and key figures: one
page, one figure, one small table.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace

from narrator.engine.group_difference import NORMAL_IQR, RULED_OUT_EFFECT, SMALL_EFFECT
from narrator.findings import Findings
from narrator.history.sidecar import FindingsSet, VariableFindings
from narrator.phrasing.context import NOT_DEFINED, WordingContext, make_context, member
from narrator.phrasing.licences import DifferenceFacts, GroupFacts
from narrator.phrasing.memo import MemoGroups, group_sentences
from narrator.phrasing.methods import reference_sentence, references_used
from narrator.phrasing.narrative import FigureText, Narrative, Paragraph, Section, Sentence, Table
from narrator.phrasing.planner import caution_paragraphs, narrate
from narrator.phrasing.selection import within_groups

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


def memo_groups(item: VariableFindings, group_by: str | None) -> MemoGroups | None:
    """The groups a variable's summary compares, when the engine compared them."""
    comparison = item.comparison
    if group_by is None or comparison is None or comparison.reason != "computed" or not comparison.pairs:
        return None
    excess = tuple(part.findings.unusual is not None and part.findings.unusual.excess for part in item.groups)
    known = all(part.findings.unusual is not None for part in item.groups)
    return MemoGroups(comparison, group_by, excess if known else (), within_groups(item.groups))


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


def _suppressed_sentence(ctx: WordingContext, count: int, threshold: int | None, key: str = "groups.suppressed"
                         ) -> Sentence:
    return ctx.say(key, ("suppressed_groups",), subject=(count, "group"),
                   group_count=ctx.count(count, "group"), threshold=ctx.whole(threshold or 0),
                   claim={"suppressed": count, "threshold": threshold})


def _level(ctx: WordingContext, level: float) -> str:
    """ "95%", "98.3%": a level in whole percent when it is one, else to a tenth."""
    whole = abs(level * 100 - round(level * 100)) < 1e-9
    return ctx.fmt.percent(level, 0 if whole else 1)


def shift_sentences(ctx: WordingContext, groups: MemoGroups) -> list[Sentence]:
    """Each pair's Hodges-Lehmann shift and its interval, in technical words (methods and full reports)."""
    comparison = groups.comparison
    level = comparison.level
    out = []
    for index, pair in enumerate(comparison.pairs):
        difference = pair.difference
        if difference.shift is None:
            continue
        facts = DifferenceFacts(ctx, difference)
        values = {"first": member(ctx, groups.group_by, pair.first),
                  "second": member(ctx, groups.group_by, pair.second),
                  "shift": ctx.exact(difference.shift), "verdict": ctx.text(f"groups.verdict.{difference.verdict}"),
                  "level": _level(ctx, level) if level is not None else "",
                  "low": ctx.exact(difference.low) if difference.low is not None else "",
                  "high": ctx.exact(difference.high) if difference.high is not None else ""}
        claim = {"first": [pair.first], "second": [pair.second], "shift": difference.shift, "low": difference.low,
                 "high": difference.high, "level": difference.level, "verdict": difference.verdict,
                 "direction": difference.direction, "ranks": list(difference.ranks or ()),
                 "rank_method": difference.rank_method,
                 "small_bound": difference.small_bound, "ruled_out_bound": difference.ruled_out_bound}
        sentence = ctx.say("groups.shift", (f"comparison.pairs.{index}.difference",), about=facts, claim=claim,
                           **values)
        if sentence is not None:
            out.append(sentence)
    return out


def method_sentence(ctx: WordingContext, groups: MemoGroups) -> Sentence | None:
    """How the groups were compared, naming the method (the methods paragraph of a grouped report)."""
    comparison = groups.comparison
    adjusted = ""
    if comparison.adjustment == "bonferroni" and comparison.level is not None:
        adjusted = ctx.text("groups.method_adjusted", pairs=ctx.fmt.count_number(len(comparison.pairs), "pair"),
                            level=_level(ctx, comparison.level),
                            family_level=ctx.fmt.percent(comparison.family_level or 0.95, 0))
    return ctx.say("groups.method_difference", ("comparison.method", "comparison.level"),
                   claim={"numbers": {"small": SMALL_EFFECT, "medium": RULED_OUT_EFFECT, "level": comparison.level}},
                   adjusted=adjusted, small=ctx.stat(SMALL_EFFECT), medium=ctx.stat(RULED_OUT_EFFECT),
                   normal_iqr=ctx.fmt.fixed(NORMAL_IQR, 3), zero=ctx.whole(0))


def comparison_sentences(ctx: WordingContext, item: VariableFindings, group_by: str,
                         audience: str = "full", summary_said: bool = False) -> list[Sentence]:
    """Sentences comparing the shown groups, each said only when its licence holds (subjects "groups" and
    "difference"); descriptive only, never causal. The memo's summary already leads with the groups'
    messages, so a memo's groups section keeps only the hedges; the methods and full reports give the
    plain messages and each pair's shift and interval."""
    overall = item.findings
    shown = tuple(group for group in item.groups if group.findings.center is not None)
    if overall.center is None:
        shown = ()
    lead = overall.center.lead if overall.center is not None else "median"
    measure = ctx.text(f"words.lead.{lead}")
    values_of = tuple(_lead_value(group.findings, lead) for group in shown)
    facts = GroupFacts(ctx=ctx, shown=shown, lead=lead, values=values_of, overlap=None,
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
    groups = memo_groups(item, group_by)
    sentences: list[Sentence | None] = []
    if groups is not None and audience != "memo":
        if not summary_said:  # a plan without the plain summary: the groups' messages here, in plain words
            sentences += group_sentences(ctx, groups)
        sentences += shift_sentences(ctx, groups)
    sentences += [
        ctx.say("groups.small", tuple(f"groups.{g.label}.n" for g in shown), about=facts,
                claim={"smallest_n": facts.smallest_n}, small=ctx.whole(SMALL_GROUP)),
        ctx.say("groups.descriptive", (), about=facts) if audience != "memo" else None,
    ]
    return [sentence for sentence in sentences if sentence is not None]


def groups_table(ctx: WordingContext, item: VariableFindings, group_by: str, audience: str = "full") -> Table:
    """n, the lead measure's summary (median (IQR) or mean (SD)) and the outlier count per shown group; in a
    memo, n, the typical value and the middle half, in plain column names."""
    key = "tables.groups"
    lead = item.findings.center.lead if item.findings.center is not None else "median"
    x = ctx.exact
    if audience == "memo":
        def typical(findings: Findings) -> tuple[str, str]:
            if findings.center is None:
                return NOT_DEFINED, NOT_DEFINED
            return (ctx.memo(_lead_value(findings, lead)),
                    ctx.fmt.range_words(*ctx.memo_pair(findings.spread.q1, findings.spread.q3)))

        plain = [(group.label, ctx.whole(group.findings.n), *typical(group.findings)) for group in item.groups]
        plain.append((ctx.text(f"{key}.all"), ctx.whole(item.findings.n), *typical(item.findings)))
        return Table(
            key="groups",
            caption=ctx.caption(f"{key}.caption", name=ctx.axis_name, group=group_by),
            # The typical value's column says which measure it is, as the key figures do: the text's group shifts
            # are Hodges-Lehmann shifts, and a reader comparing them with this column must know what it holds.
            header=(group_by, ctx.text(f"{key}.n"),
                    ctx.text("tables.key_figures.median" if lead == "median" else "tables.key_figures.mean"),
                    ctx.text(f"{key}.middle_half")),
            rows=tuple(plain),
            keys=("groups", "n", f"center.{lead}", "spread.q1", "spread.q3"),
            align=("left", "right", "right", "right"),
        )

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
                    figures: list[FigureText], audience: str = "full", overview: bool = True,
                    summary_said: bool = False) -> Section:
    group_by = findings_set.group_by
    sentences = comparison_sentences(ctx, item, group_by, audience, summary_said)
    notes = [ctx.say("groups.method", ("privacy_threshold",), group=group_by,
                     threshold=ctx.whole(findings_set.privacy_threshold or 0))]
    if not overview and item.suppressed_groups:
        # A memo says the privacy rule once, in fewer words: the suppressed groups' sentence names the threshold.
        memo = audience == "memo"
        suppressed = _suppressed_sentence(ctx, item.suppressed_groups, findings_set.privacy_threshold,
                                          "groups.suppressed_memo" if memo else "groups.suppressed")
        notes = [suppressed] if memo else [*notes, suppressed]
    # How many groups were suppressed is said once, in the overview (when there is one); here the rule is enough.
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
        paragraphs=tuple(Paragraph(tuple(part)) for part in (sentences, notes) if part),
        tables=(groups_table(ctx, item, group_by, audience),),
        figures=(text.key,) if text is not None else (),
        level=2,
    )


# --------------------------------------------------------------------------- the whole


def _changes_part(item: VariableFindings, options: SetOptions, index: int, group_by: str | None = None) -> Section:
    """What changed since the build this one is compared with (narrator.history.changes), as a level-2 section."""
    from narrator.history.changes import compare
    from narrator.phrasing.what_changed import changes_section

    section = changes_section(compare(item.baseline, item.findings), item.baseline, item.findings,
                              locale=options.locale, currency=options.currency, brief=options.audience == "memo")
    moved = _groups_moved(item, options, group_by)
    if moved is not None:  # which group moved clearly, right after the whole's changes
        first = section.paragraphs[0]
        section = replace(section, paragraphs=(replace(first, sentences=(*first.sentences, moved)),
                                               *section.paragraphs[1:]))
    if options.audience == "memo":
        # A memo keeps what changed in the count, the typical value and the groups; the spread, the flagged
        # values by each build's own fences, the rows left out and how a change is judged are for the full report.
        first = section.paragraphs[0]
        kept = tuple(sentence for sentence in first.sentences
                     if not sentence.claims or sentence.claims[0].kind in MEMO_CHANGE_KINDS)
        section = replace(section, paragraphs=(replace(first, sentences=kept),))
    return replace(section, key=f"{index}.{section.key}", level=2)


MEMO_CHANGE_KINDS = ("note", "change_count", "change_center", "groups_moved")


def _groups_moved(item: VariableFindings, options: SetOptions, group_by: str | None) -> Sentence | None:
    """ "The middle value (median) moved clearly in Eastgate office." for the groups, shown in both builds,
    whose lead measure moved beyond the uncertainty (narrator.history.changes decides it, as for the whole);
    None when no group was in the earlier build or none moved."""
    from narrator.history.changes import compare

    earlier = {group.label: group.findings for group in item.group_baselines}
    if not earlier or item.findings.center is None or group_by is None:
        return None
    moved = []
    for group in item.groups:
        old = earlier.get(group.label)
        if old is None or old.center is None or group.findings.center is None:
            continue
        changes = compare(old, group.findings)
        center = changes.item(f"center.{changes.lead}")
        if center is not None and center.mention:
            moved.append(group.label)
    if not moved:
        return None
    ctx = _context(item, options)
    lead = item.findings.center.lead
    return ctx.say("changes.groups_moved", (), measure=ctx.text(f"changes.measure.{lead}"),
                   moved=ctx.fmt.list([member(ctx, group_by, label) for label in moved]), group=group_by,
                   claim={"moved": tuple(moved), "measure": lead}, claim_about="change")


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
    return first.text(f"collection.title_{options.audience}", names=names)  # the names as the user wrote them


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
    # A memo needs no overview: each variable's summary says it, and each page is that variable's.
    overview = options.audience != "memo"
    single = len(findings_set.variables) == 1
    sections: list[Section] = [_overview_section(contexts, findings_set)] if overview else []
    figures: list[FigureText] = []
    references: set[str] = set()
    cautions: list[Paragraph] = []
    language = contexts[0].bank.language
    locale_id = contexts[0].fmt.locale_id
    audience = options.audience
    for index, (ctx, item) in enumerate(zip(contexts, findings_set.variables, strict=True), start=1):
        groups = memo_groups(item, findings_set.group_by)
        part = narrate(item.findings, options.audience, options.locale, currency=options.currency, groups=groups,
                       baseline=item.baseline)
        audience = part.audience
        renamed = {text.key: figure_key(index, text.key) for text in part.figures}
        figures.extend(replace(text, key=renamed[text.key]) for text in part.figures)
        if overview or not single:  # one variable's memo: the title names it
            sections.append(Section(key=f"variable.{index}", title=ctx.axis_name))
        grouped_memo = findings_set.group_by is not None and part.audience == "memo"
        inner = []
        for section in part.sections:
            if section.key in DOCUMENT_WIDE:
                continue
            # A grouped memo's one figure and small table are the groups' own.
            shown = () if grouped_memo else tuple(renamed[key] for key in section.figures)
            if grouped_memo:
                section = replace(section, tables=())
            paragraphs = section.paragraphs
            if section.key == "methods" and groups is not None:
                said = method_sentence(ctx, groups)
                if said is not None and paragraphs:
                    paragraphs = (Paragraph((*paragraphs[0].sentences, said), paragraphs[0].style), *paragraphs[1:])
            inner.append(replace(section, key=f"{index}.{section.key}", level=2, figures=shown,
                                 paragraphs=paragraphs))
        if grouped_memo:
            kept = {key for section in inner for key in section.figures}
            figures[:] = [figure for figure in figures if figure.key in kept or not figure.key.startswith(f"v{index}-")]
        if findings_set.group_by is not None:
            inner.insert(min(1, len(inner)), _groups_section(ctx, item, findings_set, index, figures,
                                                             part.audience, overview,
                                                             part.section("summary") is not None))
        if item.baseline is not None:
            inner.insert(min(1, len(inner)), _changes_part(item, options, index, findings_set.group_by))
        sections.extend(inner)
        if part.section("references") is not None:
            references.update(references_used(ctx))
            if groups is not None:
                references.update({"hodges_lehmann_1963", "cohen_1988"})
                if groups.comparison.adjustment == "bonferroni":
                    references.add("dunn_1961")
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
