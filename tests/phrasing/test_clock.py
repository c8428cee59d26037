"""Times of day and duration words as CLDR writes them, never as typed strings (babel 2.x, CLDR data).

French writes a time of day with its units, "16 h 18 min 44 s" (the usage of the Lexique des règles
typographiques en usage à l'Imprimerie nationale, from memory); CLDR's own long time pattern for fr_CA is
exactly that, ``HH 'h' mm 'min' ss 's' z``, so babel's fr_CA time is the outside reference. English and
Spanish keep CLDR's clock patterns ("4:18:44 PM UTC", "16:18:44 UTC"). French "erreur type" is the usual
term for a standard error (not "erreur standard").
"""

from __future__ import annotations

import datetime as dt

import numpy as np
from babel.dates import format_time, get_time_format

from narrator.engine.describe import describe
from narrator.phrasing import narrate
from narrator.phrasing.bank import load_bank
from narrator.phrasing.numbers import NumberFormatter

MOMENT = dt.datetime(2026, 12, 3, 16, 18, 44, tzinfo=dt.UTC)


def _spaces(text: str) -> str:
    return text.replace("\u202f", " ").replace("\xa0", " ")


def test_french_times_are_written_with_cldr_duration_units():
    assert get_time_format("long", locale="fr_CA").pattern == "HH 'h' mm 'min' ss 's' z"
    early = dt.datetime(2026, 12, 3, 9, 5, 0, tzinfo=dt.UTC)
    for moment in (MOMENT, early):
        reference = format_time(moment, "long", tzinfo=dt.UTC, locale="fr_CA")  # "16 h 18 min 44 s UTC"
        assert NumberFormatter("fr_CA").long_datetime(moment).endswith(reference)  # CLDR's own pattern, kept
        # fr_FR: the same words as fr_CA's pattern, with CLDR's short duration units and fr_FR's zone name.
        ours = NumberFormatter("fr_FR").long_datetime(moment)
        assert _spaces(ours).endswith(_spaces(reference).replace("UTC", "TU")), (ours, reference)
        assert "\u202fh" in ours and "\xa0min" in ours and ":" not in ours  # no-break spaces: never broken
    assert _spaces(NumberFormatter("fr_FR").long_datetime(early)) == "3 décembre 2026, 09 h 05 min 00 s TU"


def test_english_and_spanish_keep_the_cldr_clock():
    for locale in ("en_US", "en_GB", "es_ES", "es_MX"):
        ours = NumberFormatter(locale).long_datetime(MOMENT)
        assert ours.endswith(format_time(MOMENT, "long", tzinfo=dt.UTC, locale=locale)), locale


def test_french_says_erreur_type_never_erreur_standard():
    bank = load_bank("fr")
    texts = [str(text) for text in bank.messages.values()]
    assert not any("erreur standard" in text or "erreurs standard" in text or "(ES " in text for text in texts)
    values = np.round(np.random.default_rng(5).lognormal(3, 0.5, 300))
    text = narrate(describe(values, name="jours"), "full", "fr_FR").plain_text()
    assert "(erreur type " in text and "erreur standard" not in text
