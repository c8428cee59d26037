"""An agreement checker of our own: does each sentence's count agree with its verbs, pronouns and adjectives?

It renders phrase-bank messages at chosen counts, the way the phrase builder does (the form for the
CLDR plural category of the count as the number formatter writes it, the count filled in by
``NumberFormatter.count``), and reads each result with a small, per-language lexicon.

==========================  ===========================================================
Name                        What it does
==========================  ===========================================================
:func:`renders`             every count-bearing message of a bank, rendered at a count
:func:`agreement_errors`    what is wrong with one rendered message, in words
:func:`text_errors`         the checks that need no knowledge of the subject (any text)
:data:`LEXICONS`            per language: singular and plural words, clause boundaries
==========================  ===========================================================

How it decides. The grammatical number of a subject is "singular" when the CLDR plural category of
the count (as written: "1,5 millones" has the category of its compact form) is ``one``, else
"plural": English "one value was", "zero values were"; Spanish "un valor fue", "1 millón de valores
fueron" (with "millón de" + plural noun the verb goes in the plural; Diccionario panhispánico de
dudas, "millón", from memory); French 0 and 1 are ``one`` ("zéro valeur était"). After the count in
the message, every word of the lexicon up to the end of its clause must have that number; a pronoun
that stands for the subject ("it"/"them", "él"/"ellos") is checked to the end of the message, and is
the only thing checked when the count itself is not in the words ("Sin ellos, ...").

Checks that need no subject (:func:`text_errors`, also run on whole reports): a sentence that opens
with a digit (Chicago Manual of Style and AP Stylebook: spell the number out or recast the
sentence, from memory; the same advice is given for Spanish by Fundéu, from memory); a word written
twice in a row ("va de de"); in Spanish, "millón"/"millones" followed by a noun without "de" (RAE,
Ortografía 2010: "un millón de personas", from memory), a plural article or determiner before a
singular count ("de los 1 millón", "todos los un"), and "un" with no noun after it ("un por debajo":
"uno", from memory).

Its limits, said plainly:

- It is a lexicon check, not a parser: a verb, pronoun or adjective missing from its lists is not
  checked, and a listed word that belongs to another subject inside the same clause is a false alarm
  (the clause boundaries of :data:`LEXICONS`, "where", "en las que", ";", ":", "the median"..., keep
  those rare).
- Gender is not checked (Spanish "una fila marcada"): only number.
- It checks the count the builder passes as the subject; agreement with other counts in the same
  sentence (a second count, a percent) is not checked.
- Subject-verb agreement across messages (a part built by one key inside a sentence of another) is
  checked only in the rendered reports, and there only by :func:`text_errors`.
"""

from __future__ import annotations

import re
import string
from collections.abc import Iterator
from dataclasses import dataclass

from narrator.phrasing.bank import PhraseBank, Variant
from narrator.phrasing.context import sentence_start
from narrator.phrasing.numbers import NumberFormatter

COUNTS = (0, 1, 2, 5, 21, 1_000, 1_000_000, 1_500_000)

# Fields the builders fill with ctx.count(n, noun), and the noun (narrator/phrasing: memo.py,
# technical.py, methods.py, figure_text.py, sets.py, what_changed.py).
FIELD_NOUNS = {
    "n_values": "value", "outlier_count": "value", "hidden": "value", "values": "value", "top_count": "value",
    "new_n": "value", "old_n": "value", "groups": "group", "rows_read": "row", "peaks": "peak",
    "resamples": "resample",
}
# {count} is a count of rows or of values, by message (technical._FLAG_NOUNS, memo.left_out_words).
COUNT_NOUNS = {
    "memo.left_out.missing": "row", "memo.left_out.non_numeric": "row", "memo.left_out.non_finite": "row",
    "memo.left_out.impossible": "value", "quality.missing": "row", "quality.non_numeric": "row",
    "quality.non_finite": "row", "quality.ambiguous_grouping": "row", "quality.percent_signs": "row",
    "collection.intro": "variable", "collection.intro_grouped": "group", "quality.times": "time",
}
# The field that is the subject, where a message has more than one count.
SUBJECT_FIELD = {"figures.with_without.alt": "flagged_count", "methods.sample": "n_values", "changes.count": "new_n"}
# Messages whose {count} is a bare number the builder writes with the noun in the bank's words
# (memo.side_words: "{count} valores bajos"), or a table cell.
BARE_COUNT = ("memo.outliers.side_low", "memo.outliers.side_high", "quality.times")
WHOLE_COUNT = ("figures.with_without.alt",)  # ctx.whole: digits, never "1 million"
NOT_COUNTS = ("report.left_out_item", "facts.more", "format.count", "figures.histogram.beyond_high",
              "figures.histogram.beyond_low")

# Messages said only at counts of at least this, and the licence (narrator/phrasing/licences.py) or
# code path that guarantees it.
MINIMUM = {
    "memo.lead.constant": 2,  # n_is_one goes to memo.lead.single
    "memo.outliers.both": 2,  # one value below the lower fence and one above the upper
    "memo.lead.median": 2, "memo.lead.mean": 2,  # n_is_one goes to memo.lead.single
}

# Keys whose text is a sentence a reader reads (not a table cell, an axis label or a format).
SENTENCE_PREFIXES = ("memo.", "technical.", "quality.", "methods.", "cautions.", "groups.", "changes.",
                     "collection.intro", "places.changes_first", "report.appendix_intro")
NOT_SENTENCES = ("memo.tail.", "memo.left_out.", "memo.outliers.side_", "quality.missing_held", "quality.times",
                 "technical.chosen", "changes.measure", "changes.title", "changes.group_title",
                 "changes.shape_with_strength", "groups.section_title", "groups.member", "methods.histogram_focus")
NAME_FIELDS = {"name", "names", "member", "group", "label", "axis_name", "rule", "first_rule", "bin_rule",
               "measure", "shape_words", "shape", "old_shape", "new_shape", "text", "texts", "what", "lead",
               "lead_without", "new_measure", "old_measure", "reasons", "tail", "strength", "chosen", "file",
               "column", "columns", "quantile_method", "mean_method", "median_method", "bandwidth_rule",
               "density_method", "fallback_words", "bin_fallback", "moved", "centers", "libraries",
               "low_part", "high_part", "flagged_sentence", "left_out", "aligned", "reflected", "item",
               "flag", "first", "second", "reason", "noun", "version", "date", "code", "high", "low"}


@dataclass(frozen=True)
class Lexicon:
    singular: frozenset[str]
    plural: frozenset[str]
    pronouns_singular: frozenset[str]
    pronouns_plural: frozenset[str]
    boundaries: tuple[str, ...]  # a clause ends before any of these (lower case, whole words)
    prepositions: frozenset[str]  # a count after one of these ("of the 21 values") is not the subject


def _words(text: str) -> frozenset[str]:
    return frozenset(text.split())


LEXICONS = {
    "en": Lexicon(
        singular=_words("was is has stands sits lies remains counts"),
        plural=_words("were are have stand sit lie remain"),
        pronouns_singular=_words("it its itself"),
        pronouns_plural=_words("they them their themselves"),
        boundaries=("where", "while", "but", "its", "their", "the value", "the values", "because", "so", "than",
                    "which", "whose", "text that", "the median",
                    "the mean", "the average", "the middle value", "the others", "half", ";", ":", ".", "(", "—"),
        prepositions=_words("of with from in for among to by than on at"),
    ),
    "es": Lexicon(
        singular=_words("fue era estaba estuvo tenía tuvo es está queda quedó destaca destacó sigue seguía llevaba "
                        "aparece cuenta reúne dejó dibuja muestra inusual señalado señalada marcado marcada escrita "
                        "escrito mayor menor alto alta bajo baja"),
        plural=_words("fueron eran estaban estuvieron tenían tuvieron son están quedan quedaron destacan "
                      "destacaron siguen seguían llevaban aparecen cuentan reúnen dejaron dibujan muestran "
                      "inusuales señalados señaladas marcados marcadas escritas escritos mayores menores altos "
                      "altas bajos bajas"),
        pronouns_singular=_words("él ella"),
        pronouns_plural=_words("ellos ellas"),
        boundaries=("en la que", "en las que", "donde", "pero", "porque", "así que", "por eso", "que el", "que la",
                    "mientras", "aunque", "el valor", "los valores", "sus", "que no es", "el valor central",
                    "el promedio", "la media", "la mediana", "los demás",
                    "la mitad", ";", ":", ".", "(", "—"),
        prepositions=_words("de del con en para entre a por frente sobre desde hasta"),
    ),
    "fr": Lexicon(
        singular=_words("était est a reste ressort se situe compte inhabituel inhabituelle signalé signalée "
                        "marqué marquée écrit écrite élevé élevée bas basse"),
        plural=_words("étaient sont ont restent ressortent situent comptent inhabituels inhabituelles signalés "
                      "signalées marqués marquées écrits écrites élevés élevées basses"),
        pronouns_singular=_words("il elle lui"),
        pronouns_plural=_words("ils elles eux"),
        boundaries=("où", "mais", "parce", "donc", "alors que", "qui n", "ses", "leurs", "il y a", "la médiane",
                    "la moyenne", "les autres",
                    "la moitié", ";", ":", ".", "(", "—", "«"),
        prepositions=_words("de des du avec sur pour parmi à en sur par"),
    ),
}

_PARENTHESES = re.compile(r"\([^()]*\)")  # "one value (2%) sit": the words inside do not end the clause
_TOKEN = re.compile(r"\w+|[;:.(—«]", re.UNICODE)
_FORMATTER = string.Formatter()


@dataclass(frozen=True)
class Rendered:
    key: str
    count: int
    number: str  # "singular" or "plural"
    text: str
    subject: str | None  # the filled-in count, or None when the count is not in the words
    sentence: bool


def grammatical_number(fmt: NumberFormatter, count: int) -> str:
    return "singular" if fmt.count_category(count) == "one" else "plural"


def _fields(text: str) -> list[str]:
    return [name for _, name, _, _ in _FORMATTER.parse(text) if name]


def _filler(fmt: NumberFormatter, field: str) -> str:
    if field in NAME_FIELDS:
        return "Xq"
    if field.startswith("share") or field in ("level", "expected", "dominant", "coverage"):
        return fmt.percent(0.125, 1)
    return fmt.fixed(12.5, 1)


def _forms(message) -> Iterator[tuple[Variant | None, dict | str]]:
    if isinstance(message, tuple):
        for variant in message:
            yield variant, variant
    else:
        yield None, message


def _form_for(message, category: str, gender: str | None) -> str:
    if isinstance(message, Variant):
        return message.form(category, gender)
    if isinstance(message, dict):
        return message.get(category, message["other"])
    return message


def is_sentence(key: str) -> bool:
    return key.startswith(SENTENCE_PREFIXES) and not key.startswith(NOT_SENTENCES) or (
        key.startswith("figures.") and (".alt" in key or ".caption" in key))


def renders(bank: PhraseBank, locale: str, counts=COUNTS) -> Iterator[Rendered]:
    """Every message of ``bank`` with a count in its words or in its plural forms, at each of ``counts``."""
    fmt = NumberFormatter(locale)
    for key, entry in bank.messages.items():
        if isinstance(entry, list) or key in NOT_COUNTS:
            continue
        for variant, message in _forms(entry):
            forms = variant.forms.values() if variant else (message.values() if isinstance(message, dict)
                                                            else [message])
            fields = {field for form in forms for field in _fields(form)}
            subject_fields = sorted(f for f in fields if f in FIELD_NOUNS or (f == "count" and key not in NOT_COUNTS))
            if key in SUBJECT_FIELD:
                subject_fields = [SUBJECT_FIELD[key]] + [f for f in subject_fields if f != SUBJECT_FIELD[key]]
            plural_forms = bool(variant and set(variant.forms) - {"text"}) or isinstance(message, dict)
            if not subject_fields and not plural_forms:
                continue
            if key == "memo.lead.constant" and variant is not None and variant.when and \
                    variant.when[-1].licence == "n_is_two":
                counts_here = (2,)
            else:
                counts_here = [c for c in counts if c >= MINIMUM.get(key, 0)]
            field = subject_fields[0] if subject_fields else None
            noun = FIELD_NOUNS.get(field) or COUNT_NOUNS.get(key, "value")
            gender = bank.noun(noun).gender if noun in bank.nouns else None
            for count in counts_here:
                category = fmt.count_category(count)
                template = _form_for(message, category, gender)
                values = {name: _filler(fmt, name) for name in _fields(template)}
                subject = None
                if field is not None and field in values:
                    subject = fmt.count_number(count, noun) if key in BARE_COUNT else fmt.fixed(count, 0) \
                        if key in WHOLE_COUNT else fmt.count(count, noun)
                    values[field] = subject
                for other in subject_fields[1:]:
                    if other in values:
                        values[other] = fmt.count(21, FIELD_NOUNS.get(other, "value"))
                text = _as_said(bank, key, template, values)
                yield Rendered(key, count, grammatical_number(fmt, count), text, subject, is_sentence(key))


def sentence_renders(bank: PhraseBank, locale: str) -> Iterator[Rendered]:
    """Every sentence message of ``bank`` once, each form, its fields filled with neutral words and numbers
    (counts at 21), for the checks that need no subject (:func:`text_errors`)."""
    fmt = NumberFormatter(locale)
    for key, entry in bank.messages.items():
        if isinstance(entry, list) or not is_sentence(key):
            continue
        for variant, message in _forms(entry):
            forms = variant.forms if variant else (message if isinstance(message, dict) else {"text": message})
            for form, template in forms.items():
                count = 1 if form.startswith("one") else 21
                values = {name: fmt.count(count, FIELD_NOUNS.get(name) or COUNT_NOUNS.get(key, "value"))
                          if name in FIELD_NOUNS or name == "count" else _filler(fmt, name)
                          for name in _fields(template)}
                yield Rendered(key, count, grammatical_number(fmt, count), _as_said(bank, key, template, values),
                               None, True)


def _as_said(bank: PhraseBank, key: str, template: str, values: dict[str, str]) -> str:
    """The words as the builder says them: a sentence that opens with a field starts as
    narrator.phrasing.context.sentence_start makes it (a capital, never a numeral first)."""
    text = template.format_map(values)
    if is_sentence(key) and template.startswith("{"):
        return sentence_start(bank, text)
    return text


def _tokens(text: str) -> list[str]:
    return [token.lower() for token in _TOKEN.findall(text)]


_IMPERSONAL = (("il", "y", "a"), ("il", "faut"), ("il", "est", "difficile"))  # French "il" that stands for nothing


def _without_impersonal(tokens: list[str]) -> list[str]:
    kept, index = [], 0
    while index < len(tokens):
        for phrase in _IMPERSONAL:
            if tuple(tokens[index:index + len(phrase)]) == phrase:
                index += len(phrase)
                break
        else:
            kept.append(tokens[index])
            index += 1
    return kept


def _clause(tokens: list[str], boundaries: tuple[str, ...]) -> list[str]:
    phrases = [tuple(b.split()) for b in boundaries]
    for index in range(len(tokens)):
        for phrase in phrases:
            if tuple(tokens[index:index + len(phrase)]) == phrase:
                return tokens[:index]
    return tokens


def agreement_errors(item: Rendered, language: str) -> list[str]:
    """The agreement errors of one rendered message (empty when it agrees), as readable lines."""
    lexicon = LEXICONS[language]
    wrong_words = lexicon.plural if item.number == "singular" else lexicon.singular
    wrong_pronouns = lexicon.pronouns_plural if item.number == "singular" else lexicon.pronouns_singular
    errors = []
    if item.subject is not None:
        start = item.text.find(item.subject)
        before = [t for t in _tokens(item.text[:start]) if t not in _ARTICLES][-1:]
        if before and before[0] in lexicon.prepositions:
            return _sentence_errors(item, language)  # "of the 21 values": the count is not the subject
        after = _tokens(_PARENTHESES.sub(" ", item.text[start + len(item.subject):]))
        for word in _clause(after, lexicon.boundaries):
            if word in wrong_words:
                errors.append(f"{item.key} at {item.count}: {word!r} after {item.subject!r} ({item.number}): "
                              f"{item.text}")
    else:
        after = _tokens(item.text)
    for word in _without_impersonal(after):
        if word in wrong_pronouns:
            errors.append(f"{item.key} at {item.count}: pronoun {word!r} for a {item.number} subject: {item.text}")
    return errors + _sentence_errors(item, language)


_ARTICLES = _words("the a an only all these el la los las un una unos unas solo todos todas estos estas le les "
                   "l seulement tous toutes ces")


def _sentence_errors(item: Rendered, language: str) -> list[str]:
    if not item.sentence:
        return []
    return [f"{item.key} at {item.count}: {error}" for error in text_errors(item.text, language)]


_OPENING_DIGIT = re.compile(r"(?:^|[.!?]\s+)[\"“‘«¿¡(]?([+\-−]?\d)")
_DOUBLED = re.compile(r"\b(\w+)\s+\1\b", re.IGNORECASE | re.UNICODE)
_MILLION_NO_DE = re.compile(r"\b(millón|millones)\s+(?!de\b)([a-záéíóúñ]+)", re.IGNORECASE)
_APOCOPE_ALONE = re.compile(r"\bun\s+(?=por\b|y\b|o\b|[,;:.])", re.IGNORECASE)  # "un por debajo": "uno"
_PLURAL_BEFORE_ONE = re.compile(r"\b(los|las|unos|unas|estos|estas|esos|esas)\s+(un|una|uno|1)\b(?![.,]\d)",
                                re.IGNORECASE)


def text_errors(text: str, language: str) -> list[str]:
    """Errors found in any finished text, sentence by sentence, without knowing its subject."""
    errors = []
    for match in _OPENING_DIGIT.finditer(text):
        if text[:match.start(1)].rstrip().endswith(("al.", "ed.", "p.", "pp.")):
            continue  # "Pfister et al. 2013", a citation, not a sentence
        sentence = text[match.start(1):match.start(1) + 60]
        errors.append(f"a sentence opens with a numeral: {sentence!r}")
    for match in _DOUBLED.finditer(text):
        if not match.group(1).isdigit():
            errors.append(f"a word written twice: {match.group(0)!r}")
    if language == "es":
        for match in _MILLION_NO_DE.finditer(text):
            errors.append(f"'millón' without 'de' before its noun: {match.group(0)!r}")
        for match in _APOCOPE_ALONE.finditer(text):
            errors.append(f"'un' without its noun (write 'uno'): {text[match.start():match.start() + 30]!r}")
        for match in _PLURAL_BEFORE_ONE.finditer(text):
            errors.append(f"a plural article before a singular count: {match.group(0)!r}")
    return errors
