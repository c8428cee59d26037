"""Text that XML 1.0 can hold: the one rule every Word file narrator writes follows.

=============================  ================================================
Name                           What it is
=============================  ================================================
:func:`xml_safe`               text with characters XML 1.0 cannot hold removed
=============================  ================================================

Kept apart from :mod:`narrator.writer` so code that writes Word XML without
python-docx (:mod:`narrator.places.package`) applies the same rule.
"""

from __future__ import annotations

import re

# XML 1.0 (section 2.2) allows tab, newline, carriage return and the ranges
# below; everything else (C0 controls, lone surrogates, U+FFFE/U+FFFF) is removed.
_NOT_XML = re.compile("[^\t\n\r\u0020-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")


def xml_safe(text: object) -> str:
    """``text`` as a string with every character XML 1.0 cannot hold removed.

    Keeps tab and newline (the Word writers turn them into ``w:tab`` and ``w:br``);
    a carriage return becomes a newline. The allowed set is the ``Char``
    production of the XML 1.0 recommendation (W3C 2008, section 2.2).

    >>> xml_safe("a\\x00b\\x1bc\\td")
    'abc\\td'
    """
    value = str(text).replace("\r\n", "\n").replace("\r", "\n")
    return _NOT_XML.sub("", value)
