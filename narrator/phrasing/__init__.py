"""narrator.phrasing: Findings in, careful plain-language words out (a Narrative).

=======================  ========================================================
Name                     What it is
=======================  ========================================================
:func:`narrate`          Findings -> Narrative for an audience and a locale
:class:`NumberFormatter` the one door for numbers (babel/CLDR)
:class:`Narrative`       sections > paragraphs > sentences, tables, figure texts
=======================  ========================================================

``narrate`` and ``AUDIENCES`` are loaded on first use, so a module that needs only the
narrative's classes or the number formatter (the figures, in the drawing helper) does not load
the builders and the engine constants they read.
"""

from narrator.phrasing.narrative import FigureText, Narrative, Paragraph, Section, Sentence, Table
from narrator.phrasing.numbers import NumberFormatter

__all__ = [
    "AUDIENCES",
    "FigureText",
    "Narrative",
    "NumberFormatter",
    "Paragraph",
    "Section",
    "Sentence",
    "Table",
    "narrate",
]


def __getattr__(name: str):
    if name in ("AUDIENCES", "narrate"):
        from narrator.phrasing import planner

        value = getattr(planner, name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'narrator.phrasing' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted({*globals(), "AUDIENCES", "narrate"})
