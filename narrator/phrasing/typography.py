"""Typography of finished text: the spaces a language puts around punctuation, applied in one place.

French sets a no-break space before the "high" punctuation marks ; : ! ?
and inside guillemets « » (Lexique des règles typographiques en usage à
l'Imprimerie nationale; the narrow no-break space U+202F is the one CLDR's
French data use, for instance as fr_FR's grouping symbol). Which marks take
the space is the language's data, in the phrase bank's ``[typography]``
table (``space_before``, ``space_inside_guillemets``, with per-territory
overrides in ``[typography.<TERRITORY>]``); which space is the locale's CLDR
data: its grouping symbol when that is a space (U+202F for fr_FR, U+00A0
for fr_CA), else U+202F. English and Spanish banks ask for no space.

Every Narrative is typeset when it is made (``Narrative.__post_init__``), and
the report frame and the facts table are typeset the same way, so no builder
types a space before a colon and none is ever doubled. The rules are
idempotent: typesetting typeset text changes nothing.

=========================  ====================================================
Name                       What it does
=========================  ====================================================
:class:`Typography`        one locale's rules: which marks, which space
:func:`typography_for`     the rules of a locale (cached)
:func:`typeset`            one finished text, typeset for a locale
``typeset_narrative_fields``  every text of a Narrative, typeset in place (its __post_init__)
=========================  ====================================================
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass, replace

_SPACES = "\u0020\u00a0\u202f\u2009"  # space, no-break space, narrow no-break space, thin space
_NARROW_NO_BREAK = "\u202f"


@dataclass(frozen=True, slots=True)
class Typography:
    space: str  # the no-break space the locale's data call for
    space_before: str  # punctuation marks that take it before them ("" for none)
    inside_guillemets: bool

    @property
    def active(self) -> bool:
        return bool(self.space_before) or self.inside_guillemets


@functools.lru_cache(maxsize=32)
def typography_for(locale: str) -> Typography:
    """The typography rules of ``locale``: marks from its language's bank, the space from CLDR.

    >>> typography_for("en_US").active
    False
    """
    from narrator.phrasing.bank import load_bank
    from narrator.phrasing.numbers import parse_locale

    parsed = parse_locale(locale)
    bank = load_bank(parsed.language)
    group = parsed.number_symbols["latn"]["group"]
    space = group if group in "\u00a0\u202f" else _NARROW_NO_BREAK

    def rule(name: str, default):
        territory_key = f"typography.{parsed.territory}.{name}" if parsed.territory else None
        for key in (territory_key, f"typography.{name}"):
            if key and bank.has(key):
                return bank.raw(key)
        return default

    inside = rule("space_inside_guillemets", "no")
    return Typography(space=space, space_before=str(rule("space_before", "")),
                      inside_guillemets=str(inside).strip().lower() in ("yes", "true"))


def _patterns(rules: Typography) -> list[tuple[re.Pattern[str], str]]:
    patterns = []
    if rules.space_before:
        marks = re.escape(rules.space_before)
        # A mark used as punctuation: after a word or a closing mark, and followed by a space, a closing
        # mark or the end (so "10:30", "p=0.05" and "http://" keep their colons untouched).
        # A space after the mark that only leads to another mark ("!\u202f?", typeset) is not that mark's end,
        # so typesetting typeset text changes nothing.
        patterns.append((re.compile(rf"(?<=[^\s{_SPACES}])[{_SPACES}]*([{marks}])"
                                    rf"(?=[\s{_SPACES}](?![{_SPACES}]*[{marks}])|[)»\]]|$)"),
                         rules.space + r"\1"))
    if rules.inside_guillemets:
        patterns.append((re.compile(rf"«[{_SPACES}]*(?=\S)"), "«" + rules.space))
        patterns.append((re.compile(rf"(?<=\S)[{_SPACES}]*»"), rules.space + "»"))
    return patterns


@functools.lru_cache(maxsize=32)
def _compiled(locale: str) -> tuple[tuple[re.Pattern[str], str], ...]:
    return tuple(_patterns(typography_for(locale)))


def typeset(text: str, locale: str) -> str:
    """``text`` with the locale's spaces around punctuation; unchanged where the language sets none.

    >>> typeset("Nota : hay «dos» valores!", "en_US")
    'Nota : hay «dos» valores!'
    """
    if not text:
        return text
    for pattern, replacement in _compiled(locale):
        text = pattern.sub(replacement, text)
    return text


def typeset_narrative_fields(narrative) -> None:
    """Typeset every text of a just-made Narrative (called from ``Narrative.__post_init__``)."""
    if not typography_for(narrative.locale).active:
        return
    locale = narrative.locale
    t = functools.partial(typeset, locale=locale)
    sections = tuple(
        replace(
            section,
            title=t(section.title),
            paragraphs=tuple(replace(paragraph, sentences=tuple(replace(s, text=t(s.text))
                                                                for s in paragraph.sentences))
                             for paragraph in section.paragraphs),
            tables=tuple(replace(table, caption=t(table.caption), header=tuple(t(c) for c in table.header),
                                 rows=tuple(tuple(t(c) for c in row) for row in table.rows))
                         for table in section.tables),
        )
        for section in narrative.sections
    )
    figures = tuple(replace(figure, caption=t(figure.caption), alt_text=t(figure.alt_text),
                            labels={k: t(v) for k, v in figure.labels.items()})
                    for figure in narrative.figures)
    object.__setattr__(narrative, "title", t(narrative.title))
    object.__setattr__(narrative, "sections", sections)
    object.__setattr__(narrative, "figures", figures)
