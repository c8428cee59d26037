"""narrate(): Findings in, a Narrative out, following one audience's document plan. A pure function.

The plan (templates/plans/<audience>.toml) says which sections come in
which order; this module maps each section key to the builder that words it.

====================  ==========================================================
Section key           What the section holds
====================  ==========================================================
``summary``           the plain-language memo paragraph (4 to 7 sentences)
``technical_summary`` center, shape, outliers, change without them, intervals
``key_figures``       the plain-word key-figures table
``statistics``        the summary-statistics table
``shape``             the hedged shape statement with its statistics and bin grid
``outliers``          the rule, its fences, what it flagged; the outlier table
``with_without``      center and spread without the flagged values; their table
``uncertainty``       confidence intervals, or why there are none
``data_quality``      one bullet per data-quality flag
``methods``           one paragraph: exactly what was computed, with constants
``references``        the published methods named, one entry each
``cautions``          the cautions a careful report carries, as bullets
====================  ==========================================================

Figures named in a plan are FigureText keys; ``distribution`` stands for the
dot plot up to ``plan.dotplot_max_n`` values and the histogram beyond
(Wilkinson 1999). A figure or table that does not apply (no outliers, no
histogram for a constant column) is left out of the section.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace

from narrator.errors import NarratorError
from narrator.findings import Findings
from narrator.phrasing.bank import Plan, PlanSection, load_plan
from narrator.phrasing.context import WordingContext, make_context
from narrator.phrasing.figure_text import FIGURE_BUILDERS
from narrator.phrasing.memo import MemoGroups, flagged_claim, memo_paragraph
from narrator.phrasing.methods import methods_paragraph, references_paragraphs
from narrator.phrasing.narrative import FigureText, Narrative, Paragraph, Section, Sentence
from narrator.phrasing.tables import TABLE_BUILDERS
from narrator.phrasing.technical import (
    center_sentences,
    interval_sentences,
    outlier_sentences,
    quality_paragraphs,
    shape_sentences,
    technical_summary,
    without_sentences,
)

AUDIENCES = ("memo", "methods", "full")


CAUTIONS = ("cautions.descriptive", "cautions.check_flagged", "cautions.small_sample", "cautions.representative",
            "cautions.population", "cautions.independence", "cautions.review", "cautions.privacy")


def caution_paragraphs(ctx: WordingContext) -> tuple[Paragraph, ...]:
    """The cautions a careful report carries, those whose licences hold, as bullets."""
    said = (ctx.say(key, claim=flagged_claim(ctx.findings)) for key in CAUTIONS)
    return tuple(Paragraph((sentence,), style="bullet") for sentence in said if sentence is not None)


def _body(sentences: list[Sentence]) -> tuple[Paragraph, ...]:
    sentences = [sentence for sentence in sentences if sentence is not None]
    return (Paragraph(tuple(sentences)),) if sentences else ()


def _outlier_section_sentences(ctx: WordingContext) -> list[Sentence]:
    sentences = outlier_sentences(ctx)
    sentences.append(ctx.say("technical.outlier_privacy", ("outliers.rows",)))
    return sentences


def _of_kind(sentences: list[Sentence], kind: str) -> list[Sentence]:
    return [sentence for sentence in sentences if sentence.claims and sentence.claims[0].kind == kind]


PARAGRAPH_BUILDERS: dict[str, Callable[[WordingContext], tuple[Paragraph, ...]]] = {
    "summary": lambda ctx: (memo_paragraph(ctx),),
    "technical_summary": lambda ctx: (technical_summary(ctx),),
    "key_figures": lambda ctx: (),
    "statistics": lambda ctx: _body(_of_kind(center_sentences(ctx), "summary")),
    "shape": lambda ctx: _body(shape_sentences(ctx)),
    "outliers": lambda ctx: _body(_outlier_section_sentences(ctx)),
    "with_without": lambda ctx: _body(without_sentences(ctx)),
    "uncertainty": lambda ctx: _body(interval_sentences(ctx)),
    "data_quality": lambda ctx: tuple(quality_paragraphs(ctx)),
    "methods": lambda ctx: (methods_paragraph(ctx),),
    "references": references_paragraphs,
    "cautions": caution_paragraphs,
}


def _figure_keys(section: PlanSection, plan: Plan, ctx: WordingContext, made: dict[str, FigureText]) -> tuple:
    keys = []
    for key in section.figures:
        if key == "distribution":
            key = "dotplot" if ctx.findings.n <= plan.dotplot_max_n else "histogram"
        if key in made and key not in keys:
            keys.append(key)
    return tuple(keys)


def narrate(
    findings: Findings,
    audience: str = "memo",
    locale: str = "en_US",
    *,
    currency: str | None = None,
    unit: str | None = None,
    title: str | None = None,
    name: str | None = None,
    groups: MemoGroups | None = None,
    baseline: Findings | None = None,
) -> Narrative:
    """Word the findings for one audience in one locale, following templates/plans/<audience>.toml.

    ``audience`` is a plan name ("memo", "methods", "full"); ``locale`` a CLDR
    locale ("en_US", "es_ES", "de_DE"...) whose language has a phrase bank.
    ``currency`` (ISO 4217) and ``unit`` (the user's unit word, mapped to a
    CLDR unit where one fits) override the unit the findings carry; ``name``
    is what the text calls the variable (default: its column name); ``title``
    replaces the plan's title. Pure and deterministic: the same arguments give
    the same Narrative, word for word. ``groups`` (the groups' comparison and their column) lets
    the summary lead with a difference between groups (narrator.phrasing.selection); ``baseline`` (the
    previous build's findings) lets it lead with a clear change since then.

    Reporting conventions: SAMPL (Lang & Altman 2013); digits: Ehrenberg
    (1981) for memos, Cole (2015) for methods; plain language: US Federal
    Plain Language Guidelines (2011).
    """
    if not isinstance(findings, Findings):
        kind = type(findings).__name__
        raise NarratorError(f"narrate() needs a Findings object (from narrator.describe), not {kind}")
    plan = load_plan(audience)
    ctx = make_context(findings, locale, currency=currency, unit=unit, name=name)
    made = {}
    for builder in FIGURE_BUILDERS:
        figure = builder(ctx)
        if figure is not None:
            if plan.audience == "memo" and "density" in figure.labels:
                # A manager's word for the curve ("smoothed shape"), not the method's.
                figure = replace(figure, labels={**figure.labels, "density": ctx.text("figures.memo.density")})
            made[figure.key] = figure
    sections = []
    for section in plan.sections:
        tables = tuple(table for table in (TABLE_BUILDERS[key](ctx) for key in section.tables) if table is not None)
        if section.key == "summary":
            paragraphs = (memo_paragraph(ctx, groups, baseline=baseline),)
        else:
            paragraphs = PARAGRAPH_BUILDERS[section.key](ctx)
        figures = _figure_keys(section, plan, ctx, made)
        if not paragraphs and not tables and not figures:
            continue
        sections.append(Section(key=section.key, title=ctx.text(section.title), paragraphs=paragraphs,
                                tables=tables, figures=figures))
    used = {key for section in sections for key in section.figures}
    return Narrative(
        audience=plan.audience,
        locale=ctx.fmt.locale_id,
        language=ctx.bank.language,
        title=title if title is not None else ctx.text(plan.title, name=ctx.name),
        sections=tuple(sections),
        figures=tuple(figure for key, figure in made.items() if key in used),
    )
