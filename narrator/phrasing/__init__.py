"""narrator.phrasing: Findings in, careful plain-language words out (a Narrative).

=======================  ========================================================
Name                     What it is
=======================  ========================================================
:func:`narrate`          Findings -> Narrative for an audience and a locale
:class:`NumberFormatter` the one door for numbers (babel/CLDR)
:class:`Narrative`       sections > paragraphs > sentences, tables, figure texts
=======================  ========================================================
"""

from narrator.phrasing.narrative import FigureText, Narrative, Paragraph, Section, Sentence, Table
from narrator.phrasing.numbers import NumberFormatter
from narrator.phrasing.planner import AUDIENCES, narrate

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
