"""The wording context: one findings object, one bank, one formatter and the rounding policy.

Every builder in narrator.phrasing (prose sections, tables, figure texts)
takes a :class:`WordingContext`, so all of them round and format the same
way (one door for numbers).

=============================  ===================================================
Name                           What it is
=============================  ===================================================
:class:`WordingContext`        findings + bank + formatter + decimals for each use
:func:`make_context`           builds it, applying the rounding policy
:func:`capitalize_first`       upper-cases the first letter of a sentence
:func:`sentence_start`         a capital first, and a numeral never first (recast by the bank)
:func:`member`                 how the text names one group ("site B", "Eastgate office")
=============================  ===================================================
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

from babel.numbers import get_currency_precision
from babel.units import get_unit_name

from narrator.findings import Findings
from narrator.phrasing.bank import PhraseBank, Variant, load_bank
from narrator.phrasing.hedges import Hedge, shape_hedge
from narrator.phrasing.licences import holds
from narrator.phrasing.narrative import Claim, Sentence
from narrator.phrasing.numbers import (
    NumberFormatter,
    largest_remainder,
    memo_decimals,
    methods_decimals,
    places_clear_of,
    round_half_up,
)

COMPACT_FROM = 1_000_000  # memo numbers this large (without a unit) read better as "1.2 million"
STATISTIC_DECIMALS = 2  # dimensionless statistics (G1, Bowley, medcouple) to two decimals (common practice)
NOT_DEFINED = "–"  # an en dash, the table convention for a statistic that is not defined (APA 2020)
P_DECIMALS = 3  # p-values to three decimals, "p < 0.001" below that (APA 2020)
SHARE_PLACES_MAX = 12  # a share of one value in 10^14 still prints as more than 0%


# Fields that hold the user's own words: a column name, a label, a group's value ("wait_days", "north",
# "site b"). They are printed as the user wrote them; where a sentence or caption opens with one, only an
# ordinary lower-case word takes a capital (capitalize_ordinary_word): a capital would change an identifier
# ("Wait_days" names no column of the file).
USER_WORD_FIELDS = frozenset({"name", "names", "axis_name", "group", "groups", "first", "second", "member",
                              "others", "categories"})


def opens_with_user_words(template: str) -> bool:
    """Whether ``template`` opens with a field that holds the user's own words (:data:`USER_WORD_FIELDS`).

    >>> opens_with_user_words("{name} by {group}"), opens_with_user_words("{count} stand out")
    (True, False)
    """
    if not template.startswith("{"):
        return False
    end = template.find("}")
    return end > 0 and template[1:end] in USER_WORD_FIELDS


def capitalize_first(text: str) -> str:
    """The sentence with its first letter in upper case (a count word may start it)."""
    for index, char in enumerate(text):
        if char.isalpha():
            return text[:index] + char.upper() + text[index + 1 :] if char.islower() else text
        if not char.isspace() and char not in "\"'“‘¿¡(":
            return text
    return text


def capitalize_ordinary_word(text: str) -> str:
    """A text that opens with the user's own words: its first letter in upper case only when the first word is an
    ordinary lower-case word ("eastgate office stands apart" -> "Eastgate office stands apart", as an editor
    starts every sentence); an identifier stays as written: "wait_days", "eBay", "x2" (our rule, after the
    style guides' advice to keep a term whose case carries meaning, Chicago Manual of Style, from memory).

    >>> capitalize_ordinary_word("east and North are about the same"), capitalize_ordinary_word("wait_days by clinic")
    ('East and North are about the same', 'wait_days by clinic')
    """
    word = re.match(r"[^\s,;:.()\[\]]+", text)
    if word is None or not (word.group().isalpha() and word.group().islower()):
        return text
    return text[0].upper() + text[1:]


def sentence_start(bank: PhraseBank, text: str) -> str:
    """A sentence that opens with a filled-in field: a capital ("{outlier_count} stand out" -> "Eight values
    stand out"), and never a numeral first: "21 values stand out" is recast with the bank's
    ``format.numeral_opening`` ("In all, 21 values stand out"), as style guides advise (Chicago Manual of
    Style and AP Stylebook: spell the number out or recast the sentence, from memory)."""
    if text[:1].isdigit() or (text[:1] in "+-\u2212" and text[1:2].isdigit()):
        return bank.format("format.numeral_opening", sentence=text)
    return capitalize_first(text)


@dataclass(frozen=True, slots=True)
class WordingContext:
    findings: Findings
    bank: PhraseBank
    fmt: NumberFormatter
    name: str  # what the text calls the variable
    memo_decimals: int
    methods_decimals: int
    data_decimals: int
    hedge: Hedge

    # ---- words
    def text(self, key: str, category: str | None = None, **values: str) -> str:
        return self.bank.format(key, category, **values)

    def choose(self, key: str, facts: Any = None) -> Variant | None:
        """The first variant of claim entry ``key`` whose licences all hold for ``facts`` (default: this
        context), or None when none does."""
        facts = self if facts is None else facts
        for variant in self.bank.variants(key):
            if all(holds(c.licence, facts) != c.negated for c in variant.when):
                return variant
        return None

    def _words(self, key: str, variant: Variant, subject: tuple[float, str | None] | None,
               values: dict[str, str]) -> str:
        template = variant.form(*self._category_gender(subject))
        text = self.bank.fill(key, template, **values)
        if not template.startswith("{"):
            return text  # text the bank itself starts in lower case ("n = 141") stays as written
        if opens_with_user_words(template):
            return capitalize_ordinary_word(text)  # "North and south ...", but "wait_days ..." as written
        return self.sentence_start(text)

    def sentence_start(self, text: str) -> str:
        return sentence_start(self.bank, text)

    def say(self, key: str, keys: Sequence[str] = (), *, about: Any = None, subject: tuple | None = None,
            claim: Mapping[str, Any] | None = None, claim_about: str = "", **values: str) -> Sentence | None:
        """The sentence of claim entry ``key``: the first variant whose licences hold, its words for the
        ``subject`` (count, noun key) filled with ``values``, recording its claim kind with the numbers in
        ``claim``. None when no variant's licences hold: then nothing is said."""
        variant = self.choose(key, about)
        if variant is None:
            return None
        text = self._words(key, variant, subject, values)
        when = tuple(str(condition) for condition in variant.when)
        return Sentence(text, tuple(keys), (Claim(variant.claim, dict(claim or {}), claim_about, when),))

    def part(self, key: str, *, about: Any = None, subject: tuple | None = None, **values: str) -> str | None:
        """A licensed piece of a sentence (claim entry ``key``), or None when no variant's licences hold.
        The claim it makes is recorded by the sentence it goes into."""
        variant = self.choose(key, about)
        if variant is None:
            return None
        return self.bank.fill(key, variant.form(*self._category_gender(subject)), **values)

    def _category_gender(self, subject: tuple | None) -> tuple[str | None, str | None]:
        if subject is None:
            return None, None
        count, noun = subject
        # A subject is a count written by ctx.count: its category is the one of the number as written.
        category = self.fmt.count_category(count) if float(count).is_integer() else self.plural(count)
        return category, (self.bank.noun(noun).gender if noun else None)

    def caption(self, key: str, category: str | None = None, **values: str) -> str:
        """A table or figure caption; capitalized like a sentence when it opens with a filled-in field; when that
        field holds the user's own words, only an ordinary word is ("River length (miles)", "wait_days (days) by
        clinic")."""
        text = self.text(key, category, **values)
        template = self.bank.raw(key)
        if isinstance(template, dict):
            template = template.get(category or "other", template["other"])
        if not template.startswith("{"):
            return text
        return capitalize_ordinary_word(text) if opens_with_user_words(template) else capitalize_first(text)

    def plural(self, count: float) -> str:
        """The CLDR plural category of ``count`` in this locale ("one", "few", "many", "other"...)."""
        return self.fmt.locale.plural_form(count if isinstance(count, int) else int(count) if float(count).is_integer()
                                           else count)

    def count(self, n: int, noun: str) -> str:
        return self.fmt.count(n, noun)

    def times(self, n: int) -> str:
        """How many times a value appears: "once", "three times", "11 times" (the count spelled out like any
        small count, by the bank's ``grammar.number_words`` for the noun ``time``)."""
        return self.text("quality.times", self.fmt.count_category(n), count=self.fmt.count_number(n, "time"))

    # ---- numbers
    def _compact_memo(self, *values: float) -> bool:
        """Memo numbers this large, without a CLDR unit or currency, read better as "1.2 million"."""
        return self.fmt.unit_id is None and self.fmt.currency_code is None and all(
            abs(value) >= COMPACT_FROM for value in values)

    def _as_recorded(self, *values: float) -> int:
        """The memo's decimals, or the data's own when every value is written exactly with them: a median of
        whole days that is a whole number of days is "0 days", never "0.0 days" (a count or a data value is
        written as the data write it; the extra decimal is for statistics that fall between values)."""
        places = self.data_decimals
        if places < self.memo_decimals and all(
                math.isfinite(value) and abs(value - round(value, places)) <= 1e-9 * max(1.0, abs(value))
                for value in values):
            return places
        return self.memo_decimals

    def memo(self, value: float) -> str:
        """A memo number with its unit, about two effective digits (Ehrenberg 1981)."""
        if self._compact_memo(value):
            return self.fmt.with_unit(self.fmt.compact(value))
        return self.fmt.quantity(value, self._memo_places(self._as_recorded(value)))

    def memo_pair(self, low: float, high: float) -> tuple[str, str]:
        """Both ends of a memo range, the unit written once: ("29", "43 inches") (see numbers.quantity_pair)."""
        return self.fmt.quantity_pair(low, high, self._memo_places(self._as_recorded(low, high)),
                                      compact=self._compact_memo(low, high))

    def memo_recorded_pair(self, low: float, high: float) -> tuple[str, str]:
        """Two data values as ends of a memo range: memo rounding, never finer than recorded, and never
        rounded onto a declared bound they do not equal (:meth:`_recorded_places`)."""
        return self.fmt.quantity_pair(low, high, self._memo_places(self._recorded_places(low, high)))

    def _recorded_places(self, *values: float) -> int:
        """The memo's places for data values (never finer than recorded), with more places, up to the data's own,
        while a value would be rounded onto a declared bound or valid limit it does not equal: a highest share of
        99.5% is never "100%" under an upper bound of 100 (a rule of ours: an extreme printed on the bound would
        say a value reached it)."""
        variable = self.findings.variable
        limits = [limit for limit in (variable.lower_bound, variable.upper_bound, variable.valid_min,
                                      variable.valid_max) if limit is not None and math.isfinite(limit)]
        finite = [value for value in values if math.isfinite(value)]
        return places_clear_of(limits, finite, lambda places: [round_half_up(value, places) for value in finite],
                               min(self.memo_decimals, self.data_decimals), self.data_decimals)

    def shares(self, parts: Sequence[float]) -> tuple[str, ...]:
        """Percents of the whole that ``parts`` partition (counts, or shares adding up to 1), adding up to 100
        (numbers.largest_remainder): whole percents, or more decimals, for every part alike, while a part would
        be printed as 0% or 100% without being none or all (numbers.places_clear_of, the rule that keeps a
        data value off a declared bound). A single share is ``shares((count, n - count))[0]``: (99, 6, 95) is
        "50%", "3%", "47%"; (1, 999) is "0.1%", "99.9%" (tests/phrasing/test_shares.py)."""
        exact = [Fraction(part) for part in parts]
        total = sum(exact)
        percents = [100 * part / total for part in exact]
        places = places_clear_of((0, 100), percents, lambda places: largest_remainder(parts, places), 0,
                                 SHARE_PLACES_MAX)
        return tuple(self.fmt.percent_points(hundred, places) for hundred in largest_remainder(parts, places))

    def exact_range(self, low: float, high: float) -> str:
        """Two summary statistics as a table range, "13.30–27.65" (words when an end has a sign)."""
        return self.fmt.range(self.exact(low), self.exact(high))

    def _memo_places(self, decimals: int) -> int:
        # Money is written in whole units or with the currency's own minor units ($11.50), never $11.5.
        if self.fmt.currency_code is not None and decimals > 0:
            return get_currency_precision(self.fmt.currency_code)
        return decimals

    def signed_pair(self, low: float, high: float) -> tuple[str, str]:
        """Both ends of an interval of a change, signed and with the unit once: ("+5", "+9 days"),
        ("-3", "+11 days"); the range-with-unit rule of :meth:`memo_pair` applied to signed ends
        (a plus sign on an end above zero, as ``format.signed_positive`` writes it)."""
        pair = self.memo_pair(low, high)
        zero = self.memo_pair(0.0, 0.0)
        if not self._compact_memo(low, high):
            # An end that is not zero is never printed as 0 ("-0.3 to +4 days", never "0 to +4 days" beside
            # "includes zero"): more places, at most three more, while it would.
            start = places = self._memo_places(self._as_recorded(low, high))
            zero = self.fmt.quantity_pair(0.0, 0.0, places)
            while places < start + 3 and any(value != 0 and text.split()[0] == zero[1].split()[0]
                                             for value, text in zip((low, high), pair, strict=True)):
                places = self._memo_places(places + 1)  # money: straight to the currency's minor unit
                pair = self.fmt.quantity_pair(low, high, places)
                zero = self.fmt.quantity_pair(0.0, 0.0, places)
        return tuple(self.text("format.signed_positive", number=text) if value > 0 and text != zero[k] else text
                     for k, (value, text) in enumerate(zip((low, high), pair, strict=True)))

    def memo_recorded(self, value: float) -> str:
        """A single data value in a memo, with its unit: memo rounding, never finer than recorded, never rounded
        onto a declared bound it does not equal."""
        return self.fmt.quantity(value, self._memo_places(self._recorded_places(value)))

    def exact(self, value: float) -> str:
        """A summary statistic for methods text and tables: one decimal beyond the data (Cole 2015).

        An undefined statistic (the SD of one value) shows as a dash."""
        if value is None or not math.isfinite(value):
            return NOT_DEFINED
        return self.fmt.fixed(value, self.methods_decimals)

    def recorded(self, value: float) -> str:
        """A data value as recorded (its own decimals)."""
        return self.fmt.fixed(value, self.data_decimals)

    def recorded_unit(self, value: float) -> str:
        """A data value as recorded (its own decimals), with its unit: "21 days"."""
        return self.fmt.quantity(value, self._memo_places(self.data_decimals))

    def stat(self, value: float | None) -> str:
        if value is None or not math.isfinite(value):
            return NOT_DEFINED
        return self.fmt.fixed(value, STATISTIC_DECIMALS)

    def whole(self, value: float) -> str:
        return self.fmt.fixed(value, 0)

    def signed(self, text_value: float, decimals: int) -> str:
        number = self.fmt.fixed(text_value, decimals)
        if text_value > 0 and number != self.fmt.fixed(0, decimals):
            return self.text("format.signed_positive", number=number)
        return number

    def p_value(self, p: float) -> str:
        threshold = 10.0**-P_DECIMALS
        if p < threshold:
            return self.text("format.p_below", threshold=self.fmt.fixed(threshold, P_DECIMALS))
        return self.text("format.p_equals", p=self.fmt.fixed(p, P_DECIMALS))

    def rows(self, rows: Sequence[int]) -> str:
        return self.fmt.list([self.whole(row) for row in rows])

    # ---- names
    @property
    def unit_label(self) -> str | None:
        """The unit as a reader sees it on an axis: CLDR long name, currency code or the user's text."""
        if self.fmt.currency_code is not None:
            return self.fmt.currency_code
        if self.fmt.unit_id is not None:
            return get_unit_name(self.fmt.unit_id, length="long", locale=self.fmt.locale) or self.fmt.unit
        return self.fmt.unit

    @property
    def axis_name(self) -> str:
        """The variable's name with its unit, "Wait (days)"; the name alone when it already says the unit."""
        unit = self.unit_label
        if unit is None:
            return self.name
        said = {text.casefold() for text in (unit, self.fmt.unit) if text}
        if self.name.casefold() in said or any(self.name.casefold().endswith(f"({text})") for text in said):
            return self.name  # "days", not "days (days)"
        return self.text("format.name_with_unit", name=self.name, unit=unit)


def _money_capped(decimals: int, fmt: NumberFormatter) -> int:
    """Money is never written finer than the currency's minor unit ($888.81, not $888.807)."""
    if fmt.currency_code is not None:
        return min(decimals, get_currency_precision(fmt.currency_code))
    return decimals


def make_context(
    findings: Findings,
    locale: str,
    *,
    currency: str | None,
    unit: str | None,
    name: str | None,
) -> WordingContext:
    """The context for one narrative, with the rounding policy applied to these findings."""
    fmt = NumberFormatter(locale, currency=currency, unit=unit if unit is not None else findings.variable.unit)
    bank = load_bank(fmt.locale.language)
    data_decimals = max(0, int(findings.variable.decimals))
    scale = reference = None
    if findings.spread is not None and findings.center is not None:
        # The spread sets the effective digits; if the IQR is zero, fall back to the SD.
        scale = findings.spread.iqr or findings.spread.sd or None
        reference = findings.center.median if findings.center.lead == "median" else findings.center.mean
    return WordingContext(
        findings=findings,
        bank=bank,
        fmt=fmt,
        name=name or findings.variable.name,
        memo_decimals=memo_decimals(scale, reference=reference, data_decimals=data_decimals),
        methods_decimals=_money_capped(methods_decimals(data_decimals), fmt),
        data_decimals=data_decimals,
        hedge=shape_hedge(findings),
    )


def member(ctx: WordingContext, group_by: str, label: str) -> str:
    """How the text names one group: a bare code gets the column's name ("Month 5", "site B");
    a label that names itself ("Eastgate office") stands alone."""
    names_itself = any(char.isalpha() for char in label) and len(label) > 2
    if names_itself:
        return label
    return ctx.text("groups.member", group=group_by, label=label)
