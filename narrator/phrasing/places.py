"""Words for the marked places of a user's own document: one target of one variable -> what goes there.

A pure layer over the builders the reports use, so a place says exactly what
the matching part of a report says: :func:`narrator.phrasing.narrate` (memo
summary, key figures, the memo's figure, the methods paragraph), the "what
changed" section (:mod:`narrator.phrasing.what_changed`) and the groups table
(:mod:`narrator.phrasing.sets`). A single number or phrase is formatted by
the same wording context as the key-figures table. When a place's usual
words do not apply (no usable value, no grouping, no earlier build), it gets
the true words of the bank's ``[places]`` table instead, never stale ones.

==================  ==========  ===============================================
Target              Kind        What goes there
==================  ==========  ===============================================
``summary``         paragraphs  the memo's plain-language summary paragraph
``methods``         paragraphs  the methods paragraph (what was computed, how)
``changes``         paragraphs  what changed since the previous build
``key-figures``     table       the memo's key-figures table, with its caption
``groups``          table       n, center and unusual values per shown group
``figure``          figure      the memo's picture of the values, with caption
``n``               phrase      the number of values used
``median``          phrase      the median, with its unit (memo rounding)
``mean``            phrase      the mean, with its unit (memo rounding)
``middle-half``     phrase      where the middle half of the values lie (Q1 to Q3)
``unusual``         phrase      the number of unusual (flagged) values
``change``          phrase      how far the lead center moved since the last build
==================  ==========  ===============================================

=============================  ================================================
Name                           What it is
=============================  ================================================
:data:`TARGETS`                every target, in the order of the table above
:data:`TARGET_KINDS`           target -> kind
:class:`PlaceText`             the words (or table, or figure text) for a place
:class:`PlaceWords`            one variable's words for every target, cached
=============================  ================================================
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field, replace

from narrator.findings import Findings
from narrator.history.sidecar import VariableFindings
from narrator.phrasing.context import WordingContext, make_context
from narrator.phrasing.licences import middle_half_holds_half, too_few_for_quartiles
from narrator.phrasing.narrative import Claim, FigureText, Narrative, Paragraph, Sentence, Table
from narrator.phrasing.typography import typeset, typography_for

TARGET_KINDS: dict[str, str] = {
    "summary": "paragraphs",
    "methods": "paragraphs",
    "changes": "paragraphs",
    "key-figures": "table",
    "groups": "table",
    "figure": "figure",
    "n": "phrase",
    "median": "phrase",
    "mean": "phrase",
    "middle-half": "phrase",
    "unusual": "phrase",
    "change": "phrase",
}
TARGETS: tuple[str, ...] = tuple(TARGET_KINDS)
# The findings a picture of the values shows: if none of them moved, neither did the picture's story.
FIGURE_KEYS = ("n", "center.mean", "center.median", "spread.q1", "spread.q3", "spread.min", "spread.max")


@dataclass(frozen=True, slots=True)
class PlaceText:
    """What one place holds. ``kind`` is that of the target, or ``note`` when the bank's ``[places]`` words stand in.

    ``keys`` are the findings keys the words state (dotted paths, as in
    :class:`~narrator.phrasing.narrative.Sentence`); ``baseline`` in them means
    the words depend on the earlier build compared with.
    """

    target: str
    kind: str  # "paragraphs", "table", "figure", "phrase" or "note"
    paragraphs: tuple[Paragraph, ...] = ()
    table: Table | None = None
    figure: FigureText | None = None
    phrase: str | None = None
    keys: tuple[str, ...] = ()

    @property
    def text(self) -> str:
        """The words as plain text (paragraphs joined by blank lines; a table as its plain-text form)."""
        if self.kind == "paragraphs":
            return "\n\n".join(paragraph.text for paragraph in self.paragraphs)
        if self.kind == "table" and self.table is not None:
            return self.table.plain_text()
        if self.kind == "figure" and self.figure is not None:
            return self.figure.caption
        return self.phrase or ""


@dataclass(slots=True)
class PlaceWords:
    """Every target's words for one variable, worded once and kept (a document may mark a target twice).

    ``item`` carries the findings, the shown groups and the earlier findings
    this build is compared with (``item.baseline``); ``group_by`` is the
    grouping column's name, or None.
    """

    item: VariableFindings
    locale: str = "en_US"
    currency: str | None = None
    group_by: str | None = None
    _narratives: dict[str, Narrative] = field(default_factory=dict)
    _made: dict[str, PlaceText] = field(default_factory=dict)

    @property
    def findings(self) -> Findings:
        return self.item.findings

    def context(self) -> WordingContext:
        return make_context(self.findings, self.locale, currency=self.currency, unit=None, name=None)

    def narrative(self, audience: str) -> Narrative:
        if audience not in self._narratives:
            from narrator.phrasing.planner import narrate

            self._narratives[audience] = narrate(self.findings, audience, self.locale, currency=self.currency)
        return self._narratives[audience]

    def text(self, target: str) -> PlaceText:
        """The words for ``target`` (one of :data:`TARGETS`)."""
        if target not in self._made:
            self._made[target] = _typeset_place(_BUILDERS[target](self), self.locale)
        return self._made[target]

    def note(self, target: str, key: str) -> PlaceText:
        return PlaceText(target, "note", phrase=self.context().text(f"places.{key}"))


def _typeset_place(place: PlaceText, locale: str) -> PlaceText:
    """The place's words with the language's punctuation spacing, as every Narrative has (words made outside
    a Narrative, such as a "what changed" section or a note, need it here; typeset text is left as it is)."""
    if not typography_for(locale).active:
        return place
    t = functools.partial(typeset, locale=locale)
    paragraphs = tuple(replace(paragraph, sentences=tuple(replace(s, text=t(s.text)) for s in paragraph.sentences))
                       for paragraph in place.paragraphs)
    table = place.table
    if table is not None:
        table = replace(table, caption=t(table.caption), header=tuple(t(c) for c in table.header),
                        rows=tuple(tuple(t(c) for c in row) for row in table.rows))
    figure = place.figure
    if figure is not None:
        figure = replace(figure, caption=t(figure.caption), alt_text=t(figure.alt_text),
                         labels={k: t(v) for k, v in figure.labels.items()})
    return replace(place, paragraphs=paragraphs, table=table, figure=figure,
                   phrase=t(place.phrase) if place.phrase else place.phrase)


def _summary(words: PlaceWords) -> PlaceText:
    section = words.narrative("memo").section("summary")
    paragraphs = section.paragraphs if section is not None else ()
    return PlaceText("summary", "paragraphs", paragraphs=paragraphs, keys=_sentence_keys(paragraphs))


def _methods(words: PlaceWords) -> PlaceText:
    section = words.narrative("methods").section("methods")
    paragraphs = section.paragraphs if section is not None else ()
    return PlaceText("methods", "paragraphs", paragraphs=paragraphs, keys=_sentence_keys(paragraphs))


def _changes(words: PlaceWords) -> PlaceText:
    baseline = words.item.baseline
    if baseline is None:
        ctx = words.context()
        # Words about the report (no earlier build yet), not about the data: claim kind "note".
        paragraph = Paragraph((Sentence(ctx.text("places.changes_first"), (), (Claim("note"),)),))
        return PlaceText("changes", "paragraphs", paragraphs=(paragraph,), keys=("baseline",))
    from narrator.history.changes import compare
    from narrator.phrasing.what_changed import changes_section

    section = changes_section(compare(baseline, words.findings), baseline, words.findings, locale=words.locale,
                              currency=words.currency)
    return PlaceText("changes", "paragraphs", paragraphs=section.paragraphs,
                     keys=("baseline", *_sentence_keys(section.paragraphs)))


def _key_figures(words: PlaceWords) -> PlaceText:
    # The memo's key-figures table, in whichever section its plan puts it (the summary's).
    tables = [table for section in words.narrative("memo").sections for table in section.tables
              if table.key == "key_figures"]
    if not tables:
        return words.note("key-figures", "no_values")
    return PlaceText("key-figures", "table", table=tables[0], keys=tables[0].keys)


def _groups(words: PlaceWords) -> PlaceText:
    if words.group_by is None or not words.item.groups:
        return words.note("groups", "no_groups")
    if words.findings.center is None:
        return words.note("groups", "no_values")
    from narrator.phrasing.sets import groups_table

    table = groups_table(words.context(), words.item, words.group_by)
    return PlaceText("groups", "table", table=table, keys=table.keys)


def _figure(words: PlaceWords) -> PlaceText:
    narrative = words.narrative("memo")
    section = narrative.section("summary")
    shown = section.figures if section is not None else ()
    texts = [text for text in narrative.figures if text.key in shown]
    if not texts:
        return words.note("figure", "no_figure" if words.findings.center is not None else "no_values")
    return PlaceText("figure", "figure", figure=texts[0], keys=FIGURE_KEYS)


def _n(words: PlaceWords) -> PlaceText:
    return PlaceText("n", "phrase", phrase=words.context().whole(words.findings.n), keys=("n",))


def _center(measure: str):
    def build(words: PlaceWords) -> PlaceText:
        center = words.findings.center
        if center is None:
            return words.note(measure, "no_values")
        value = center.median if measure == "median" else center.mean
        return PlaceText(measure, "phrase", phrase=words.context().memo(value), keys=(f"center.{measure}",))

    return build


def _middle_half(words: PlaceWords) -> PlaceText:
    spread = words.findings.spread
    if spread is None or words.findings.center is None:
        return words.note("middle-half", "no_values")
    ctx = words.context()
    # The place sits in the user's sentence about half the values: Q1 to Q3 goes there only when about half
    # of them lie there (the memo's licence); with few values or many tied at a quartile, a true note.
    if not middle_half_holds_half(ctx):
        return words.note("middle-half", "middle_half_too_few" if too_few_for_quartiles(ctx) else "middle_half_ties")
    low, high = ctx.memo_pair(spread.q1, spread.q3)  # the unit once: "13 to 28 days"
    phrase = ctx.text("format.range", low=low, high=high)
    return PlaceText("middle-half", "phrase", phrase=phrase, keys=("spread.q1", "spread.q3"))


def _unusual(words: PlaceWords) -> PlaceText:
    flagged = words.findings.outliers
    if flagged is None or flagged.note == "not_run_too_few":
        return words.note("unusual", "unusual_not_checked")
    return PlaceText("unusual", "phrase", phrase=words.context().whole(flagged.count), keys=("outliers.count",))


def _change(words: PlaceWords) -> PlaceText:
    baseline = words.item.baseline
    if baseline is None:
        return words.note("change", "change_first")
    from narrator.history.changes import compare

    changes = compare(baseline, words.findings)
    item = changes.item(f"center.{changes.lead}")
    if item is None or item.difference is None:
        return words.note("change", "no_values")
    ctx = words.context()
    amount = ctx.memo(item.difference)
    if item.difference > 0 and amount != ctx.memo(0.0):
        amount = ctx.text("format.signed_positive", number=amount)
    return PlaceText("change", "phrase", phrase=amount, keys=("baseline", f"center.{changes.lead}"))


def _sentence_keys(paragraphs: tuple[Paragraph, ...]) -> tuple[str, ...]:
    keys: list[str] = []
    for paragraph in paragraphs:
        for sentence in paragraph.sentences:
            keys.extend(key for key in sentence.keys if key not in keys)
    return tuple(keys)


_BUILDERS = {
    "summary": _summary,
    "methods": _methods,
    "changes": _changes,
    "key-figures": _key_figures,
    "groups": _groups,
    "figure": _figure,
    "n": _n,
    "median": _center("median"),
    "mean": _center("mean"),
    "middle-half": _middle_half,
    "unusual": _unusual,
    "change": _change,
}
