"""Phrase banks and document plans: the words and the outlines, read from templates/ as data.

A phrase bank (``templates/phrases/<language>.toml``) holds every word a
reader sees, keyed by dotted paths (``memo.lead.median``). A document plan
(``templates/plans/<audience>.toml``) lists the sections of one audience's
text, in order. Both are found with importlib.resources, so they work from an
installed wheel too.

=========================  ======================================================
Name                       What it is
=========================  ======================================================
:class:`Noun`              a noun's forms by CLDR plural category, and its gender
:class:`Condition`         one licence a variant needs (or needs not to hold)
:class:`Variant`           one wording of a claim: its licences, its claim kind, its forms
:class:`PhraseBank`        one language's messages, nouns and number words
:func:`load_bank`          the bank for a language code ("en", "es"), cached
:func:`available_languages` languages that have a bank
:class:`PlanSection`       one section of a plan: key, title key, figures, tables
:class:`Plan`              one audience's sections, in order
:func:`load_plan`          the plan for an audience ("memo", "methods", "full")
:func:`message_keys`       every message key of a bank (for the completeness test)
=========================  ======================================================

Bank layout. ``[meta]`` names the language. ``[grammar]`` holds
``spell_out_max`` and ``number_words`` (a list of words for 0..spell_out_max
per grammatical gender; ``default`` is required). ``[nouns.<key>]`` gives the
forms of a noun by CLDR plural category (every category of the language
must be present) and optionally its ``gender``. Every other table holds
messages: a message is either a string or a *plural message*, a table whose
keys are CLDR plural categories (``one``, ``other``...; a category it does not
list falls back to ``other``, since the nouns inside it already carry the
full plural forms).

Claims. An entry that states something about the data is a *claim entry*: an
array of tables, one per variant, in the order they are tried::

    [[memo.lead.median]]
    when = ["most_at_minimum"]          # licences (narrator.phrasing.licences), all must hold
    claim = "share_at_minimum"          # what the sentence asserts (licences.CLAIM_KINDS)
    text = "{share_at} of the {n_values} were {value}, the lowest value."

    [[memo.lead.median]]
    when = ["median_splits_values"]
    claim = "median_splits"
    text = "The middle value of the {n_values} was {median}: half were lower and half were higher."

The planner says the first variant whose licences all hold (a name written
``"not <licence>"`` must not hold); when none holds the sentence is not said.
A single table with ``claim`` is a one-variant entry. A variant's words are
``text``, or whole-sentence forms by the CLDR plural category of the
sentence's subject count (``one``, ``few``, ``many``, ``other``...), and per
grammatical gender of the subject noun (``one_feminine``, ``other_feminine``:
genders listed in ``[grammar] genders``). A form is looked up as
``<category>_<gender>``, ``<category>``, ``other_<gender>``, ``other``, then
``text``. Every bank must give a claim entry the same variants, with the same
licences and claim kinds, in the same order as the English bank; the loader
checks it, so a new language inherits every licence.

Substitution is safe: messages may only contain plain named fields
(``{median}``); attribute access, indexing, conversions and format specs are
rejected when the bank is loaded. Values are strings the number formatter
already made, filled in with ``str.format_map``. No expression is ever run.
"""

from __future__ import annotations

import functools
import re
import string
import tomllib
from dataclasses import dataclass
from importlib import resources
from typing import Any

from babel import Locale

from narrator.errors import NarratorError

PLURAL_CATEGORIES = ("zero", "one", "two", "few", "many", "other")
_NON_MESSAGE_TABLES = ("meta", "grammar", "nouns")
_TERRITORY_OVERRIDE = re.compile(r"^typography\.[A-Z]{2}\.")  # [typography.<TERRITORY>] overrides


def _templates():
    return resources.files("narrator.templates")


def available_languages() -> tuple[str, ...]:
    """Language codes with a phrase bank under templates/phrases/, sorted."""
    folder = _templates() / "phrases"
    return tuple(sorted(item.name[:-5] for item in folder.iterdir() if item.name.endswith(".toml")))


@dataclass(frozen=True, slots=True)
class Noun:
    forms: dict[str, str]  # CLDR plural category -> word
    gender: str = "default"


@dataclass(frozen=True, slots=True)
class Condition:
    licence: str  # a name in narrator.phrasing.licences.LICENCES
    negated: bool = False  # written "not <licence>": the licence must not hold

    @classmethod
    def parse(cls, text: str) -> Condition:
        words = text.split()
        if len(words) == 2 and words[0] == "not":
            return cls(words[1], True)
        if len(words) == 1:
            return cls(words[0], False)
        raise ValueError(text)

    def __str__(self) -> str:
        return f"not {self.licence}" if self.negated else self.licence


@dataclass(frozen=True, slots=True)
class Variant:
    """One wording of a claim entry: the licences it needs, the claim kind it makes, its forms."""

    when: tuple[Condition, ...]
    claim: str
    forms: dict[str, str]  # "text", or CLDR plural categories, optionally "<category>_<gender>"

    def form(self, category: str | None, gender: str | None) -> str:
        """The words for a subject of this plural category and gender (see the module docstring)."""
        candidates = []
        for cat in (category, "other") if category else ("other",):
            if gender and gender != "default":
                candidates.append(f"{cat}_{gender}")
            candidates.append(cat)
        candidates.append("text")
        for name in candidates:
            if name in self.forms:
                return self.forms[name]
        raise NarratorError(f"a variant for claim {self.claim!r} has no form for {category!r}")


def _is_plural_message(value: Any) -> bool:
    return isinstance(value, dict) and bool(value) and set(value) <= set(PLURAL_CATEGORIES) and all(
        isinstance(item, str) for item in value.values()
    )


_VARIANT_KEYS = ("when", "claim")


def _is_variant_table(value: Any) -> bool:
    return isinstance(value, dict) and "claim" in value


def _variant(table: dict[str, Any], key: str, where: str, genders: tuple[str, ...]) -> Variant:
    when = table.get("when")
    if not isinstance(when, list) or not all(isinstance(item, str) for item in when):
        raise NarratorError(f"{where}: {key}: every variant needs when = [\"<licence>\", ...] (a list, may be empty)")
    try:
        conditions = tuple(Condition.parse(item) for item in when)
    except ValueError as exc:
        raise NarratorError(f"{where}: {key}: {str(exc)!r} is not a licence name or \"not <licence>\"") from None
    claim = table.get("claim")
    if not isinstance(claim, str) or not claim:
        raise NarratorError(f"{where}: {key}: every variant needs claim = \"<kind>\"")
    allowed = {"text", *PLURAL_CATEGORIES} | {f"{cat}_{gender}" for cat in PLURAL_CATEGORIES for gender in genders}
    forms = {}
    for name, text in table.items():
        if name in _VARIANT_KEYS:
            continue
        if name not in allowed or not isinstance(text, str):
            raise NarratorError(f"{where}: {key}: a variant's words are text or plural forms, not {name!r}")
        forms[name] = text
    if not forms:
        raise NarratorError(f"{where}: {key}: a variant has no words")
    if "text" not in forms and "other" not in forms:
        raise NarratorError(f"{where}: {key}: a variant with plural forms needs an 'other' form")
    return Variant(when=conditions, claim=claim, forms=forms)


def _flatten(table: dict[str, Any], prefix: str, into: dict[str, Any], where: str,
             genders: tuple[str, ...] = ()) -> None:
    for name, value in table.items():
        key = f"{prefix}.{name}" if prefix else name
        if isinstance(value, str) or _is_plural_message(value):
            into[key] = value
        elif _is_variant_table(value):
            into[key] = (_variant(value, key, where, genders),)
        elif isinstance(value, list) and value and all(_is_variant_table(item) for item in value):
            into[key] = tuple(_variant(item, key, where, genders) for item in value)
        elif isinstance(value, dict):
            _flatten(value, key, into, where, genders)
        elif isinstance(value, list) and all(isinstance(item, str) for item in value):
            into[key] = value  # ordered word lists, e.g. the reference list
        else:
            raise NarratorError(f"{where}: {key} must be text, a list of text, a claim entry, or a table")


_FORMATTER = string.Formatter()


def _check_fields(text: str, key: str, where: str) -> None:
    """Only plain {name} fields: no attribute access, indexing, conversion or format spec."""
    try:
        parsed = list(_FORMATTER.parse(text))
    except ValueError as exc:
        raise NarratorError(f"{where}: {key}: bad braces in {text!r}: {exc}") from None
    for _literal, field_name, format_spec, conversion in parsed:
        if field_name is None:
            continue
        if not field_name.isidentifier() or format_spec or conversion:
            raise NarratorError(f"{where}: {key}: only plain {{name}} fields are allowed, found {{{field_name}}}")


class _Values(dict):
    """format_map values that name the message when a field is missing."""

    __slots__ = ("key",)

    def __missing__(self, name: str) -> str:
        raise NarratorError(f"phrase bank message {self.key!r} needs a value for {{{name}}}")


@dataclass(frozen=True, slots=True)
class PhraseBank:
    """One language's words. Messages are looked up by dotted key and filled with formatted strings."""

    language: str
    name: str
    messages: dict[str, Any]  # dotted key -> str | {category: str} | [str, ...]
    nouns: dict[str, Noun]
    number_words: dict[str, tuple[str, ...]]  # gender -> words for 0..spell_out_max
    spell_out_max: int

    def has(self, key: str) -> bool:
        return key in self.messages

    def raw(self, key: str) -> Any:
        try:
            return self.messages[key]
        except KeyError:
            raise NarratorError(f"phrase bank {self.language!r} has no message {key!r}") from None

    def variants(self, key: str) -> tuple[Variant, ...]:
        """The variants of a claim entry, in the order they are tried."""
        entry = self.raw(key)
        if not (isinstance(entry, tuple) and entry and isinstance(entry[0], Variant)):
            raise NarratorError(f"phrase bank entry {key!r} is not a claim entry (it needs when = and claim =)")
        return entry

    def fill(self, key: str, text: str, **values: str) -> str:
        """``text`` (one form of entry ``key``) filled with ``values``."""
        mapping = _Values(values)
        mapping.key = key
        return text.format_map(mapping)

    def format(self, key: str, category: str | None = None, **values: str) -> str:
        """The message ``key`` filled with ``values``; for a plural message, the form for ``category``."""
        message = self.raw(key)
        if isinstance(message, tuple):
            raise NarratorError(f"phrase bank entry {key!r} is a claim entry: say it through its licences")
        if isinstance(message, dict):
            if category is None:
                raise NarratorError(f"phrase bank message {key!r} is plural; a plural category is needed")
            message = message.get(category, message["other"])
        elif not isinstance(message, str):
            raise NarratorError(f"phrase bank entry {key!r} is a list, not a message")
        mapping = _Values(values)
        mapping.key = key
        return message.format_map(mapping)

    def words(self, key: str) -> tuple[str, ...]:
        """A list entry (e.g. a reference) as a tuple of strings."""
        value = self.raw(key)
        if isinstance(value, list):
            return tuple(value)
        raise NarratorError(f"phrase bank entry {key!r} is not a list")

    def noun(self, key: str) -> Noun:
        try:
            return self.nouns[key]
        except KeyError:
            raise NarratorError(f"phrase bank {self.language!r} has no noun {key!r}") from None

    def number_word(self, n: int, gender: str = "default") -> str:
        words = self.number_words.get(gender, self.number_words["default"])
        return words[n]


def _load_toml(folder: str, name: str) -> dict[str, Any]:
    resource = _templates() / folder / f"{name}.toml"
    where = f"templates/{folder}/{name}.toml"
    if not resource.is_file():
        raise NarratorError(f"{where} does not exist")
    try:
        return tomllib.loads(resource.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise NarratorError(f"{where} is not valid TOML: {exc}") from None


def message_texts(message) -> list[str]:
    """Every text of one bank message: each form of each variant, each plural form, each list item."""
    if isinstance(message, tuple):
        return [text for variant in message for text in variant.forms.values()]
    if isinstance(message, dict):
        return list(message.values())
    return list(message) if isinstance(message, list) else [message]


@functools.lru_cache(maxsize=16)
def load_bank(language: str) -> PhraseBank:
    """The phrase bank for ``language`` (a CLDR language code such as "en"), checked and cached."""
    if language not in available_languages():
        raise NarratorError(
            f"no phrase bank for language {language!r}; available: {', '.join(available_languages())}"
        )
    where = f"templates/phrases/{language}.toml"
    data = _load_toml("phrases", language)
    meta = data.get("meta", {})
    grammar = data.get("grammar", {})
    spell_out_max = int(grammar.get("spell_out_max", -1))
    number_words = {gender: tuple(words) for gender, words in grammar.get("number_words", {}).items()}
    if "default" not in number_words:
        raise NarratorError(f"{where}: grammar.number_words.default is missing")
    for gender, words in number_words.items():
        if len(words) != spell_out_max + 1:
            raise NarratorError(f"{where}: grammar.number_words.{gender} needs {spell_out_max + 1} words")
    genders = tuple(str(g) for g in grammar.get("genders", ()))
    categories = set(Locale.parse(language).plural_form.tags) | {"other"}
    nouns = {}
    for key, table in data.get("nouns", {}).items():
        forms = {cat: word for cat, word in table.items() if cat in PLURAL_CATEGORIES}
        missing = categories - set(forms)
        if missing:
            raise NarratorError(f"{where}: nouns.{key} lacks plural forms {sorted(missing)}")
        nouns[key] = Noun(forms=forms, gender=str(table.get("gender", "default")))
    messages: dict[str, Any] = {}
    for table_name, table in data.items():
        if table_name in _NON_MESSAGE_TABLES:
            continue
        if not isinstance(table, dict):
            raise NarratorError(f"{where}: top-level entry {table_name!r} must be a table")
        _flatten(table, table_name, messages, where, genders)
    for key, message in messages.items():
        for text in message_texts(message):
            _check_fields(text, key, where)
        if isinstance(message, dict) and "other" not in message:
            raise NarratorError(f"{where}: plural message {key} needs an 'other' form")
    _check_licences(messages, where)
    bank = PhraseBank(
        language=language,
        name=str(meta.get("name", language)),
        messages=messages,
        nouns=nouns,
        number_words=number_words,
        spell_out_max=spell_out_max,
    )
    if language != REFERENCE_LANGUAGE and REFERENCE_LANGUAGE in available_languages():
        check_same_claims(bank, load_bank(REFERENCE_LANGUAGE))
    return bank


REFERENCE_LANGUAGE = "en"  # every bank's claim entries must match this one's variants


def _check_licences(messages: dict[str, Any], where: str) -> None:
    """Every licence a variant names exists, and every claim kind is known."""
    from narrator.phrasing.licences import CLAIM_KINDS, LICENCES

    for key, message in messages.items():
        if not isinstance(message, tuple):
            continue
        for variant in message:
            for condition in variant.when:
                if condition.licence not in LICENCES:
                    raise NarratorError(f"{where}: {key}: unknown licence {condition.licence!r} "
                                        "(licences are defined in narrator/phrasing/licences.py)")
            if variant.claim not in CLAIM_KINDS:
                raise NarratorError(f"{where}: {key}: unknown claim kind {variant.claim!r}")


def check_same_claims(bank: PhraseBank, reference: PhraseBank) -> None:
    """``bank`` gives every claim entry of ``reference`` the same variants: same count, licences, claim kinds."""
    where = f"templates/phrases/{bank.language}.toml"
    for key, message in reference.messages.items():
        if not isinstance(message, tuple):
            continue
        other = bank.messages.get(key)
        if not isinstance(other, tuple):
            raise NarratorError(
                f"{where}: {key} must be a claim entry, as in templates/phrases/{reference.language}.toml")
        mine = [(variant.when, variant.claim) for variant in other]
        theirs = [(variant.when, variant.claim) for variant in message]
        if mine != theirs:
            raise NarratorError(
                f"{where}: {key} must have the variants of templates/phrases/{reference.language}.toml, in order: "
                + "; ".join(f"when {[str(c) for c in when]} claim {claim}" for when, claim in theirs))
    for key, message in bank.messages.items():
        if isinstance(message, tuple) and not isinstance(reference.messages.get(key), tuple):
            raise NarratorError(f"{where}: {key} is a claim entry here but not in {reference.language}.toml")


def message_keys(bank: PhraseBank) -> frozenset[str]:
    """Every message key and noun key of a bank; all banks must have the same set.

    A territory's typography overrides (``typography.<TERRITORY>.*``, such as fr's
    ``[typography.CA]``) are optional by design and not counted.
    """
    return frozenset(key for key in bank.messages if not _TERRITORY_OVERRIDE.match(key)) | frozenset(
        f"nouns.{key}" for key in bank.nouns)


@dataclass(frozen=True, slots=True)
class PlanSection:
    key: str  # the section builder, e.g. "summary"
    title: str  # phrase bank key of the section title
    figures: tuple[str, ...] = ()  # FigureText keys; "distribution" = dot plot or histogram by n
    tables: tuple[str, ...] = ()  # Table keys


@dataclass(frozen=True, slots=True)
class Plan:
    audience: str
    title: str  # phrase bank key of the document title
    sections: tuple[PlanSection, ...]
    dotplot_max_n: int = 150  # "distribution" shows a dot plot up to this n (Wilkinson 1999)


KNOWN_SECTIONS = (
    "summary",
    "technical_summary",
    "key_figures",
    "statistics",
    "shape",
    "outliers",
    "with_without",
    "uncertainty",
    "data_quality",
    "methods",
    "references",
    "cautions",
)
KNOWN_TABLES = ("key_figures", "statistics", "outliers", "with_without")
KNOWN_FIGURES = ("distribution", "histogram", "dotplot", "with_without", "bin_sensitivity")


@functools.lru_cache(maxsize=16)
def load_plan(audience: str) -> Plan:
    """The document plan for ``audience`` from templates/plans/<audience>.toml, checked and cached."""
    if not isinstance(audience, str) or not audience.isidentifier():
        raise NarratorError(f"audience must be a plan name such as 'memo', not {audience!r}")
    where = f"templates/plans/{audience}.toml"
    data = _load_toml("plans", audience)
    plan = data.get("plan", {})
    sections = []
    for number, item in enumerate(data.get("sections", []), start=1):
        key = item.get("key")
        if key not in KNOWN_SECTIONS:
            known = ", ".join(KNOWN_SECTIONS)
            raise NarratorError(f"{where}: section {number} has unknown key {key!r}; known: {known}")
        figures = tuple(item.get("figures", ()))
        tables = tuple(item.get("tables", ()))
        for figure in figures:
            if figure not in KNOWN_FIGURES:
                raise NarratorError(f"{where}: section {key!r} names unknown figure {figure!r}")
        for table in tables:
            if table not in KNOWN_TABLES:
                raise NarratorError(f"{where}: section {key!r} names unknown table {table!r}")
        sections.append(PlanSection(key=key, title=str(item.get("title", f"sections.{key}")), figures=figures,
                                    tables=tables))
    if not sections:
        raise NarratorError(f"{where}: a plan needs at least one [[sections]] entry")
    return Plan(
        audience=str(plan.get("audience", audience)),
        title=str(plan.get("title", f"titles.{audience}")),
        sections=tuple(sections),
        dotplot_max_n=int(plan.get("dotplot_max_n", 150)),
    )
