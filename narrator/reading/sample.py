"""Sample: one numeric column after reading and cleaning, with an account of what was left out.

=====================  ========================================================
Name                   What it is
=====================  ========================================================
:class:`Exclusion`     cells left out of the analysis, grouped by why
:class:`Sample`        values ready for the engine, with their source rows
:func:`guess_decimals` decimals needed to write values as recorded
:func:`clean_label`    a name taken from the data, made safe to show anywhere
:func:`no_numbers`     why a column gave no number to describe, in words
=====================  ========================================================
"""

from __future__ import annotations

import unicodedata
from dataclasses import dataclass, field

import numpy as np

LABEL_LENGTH = 200  # characters of a column name or label a report shows before cutting it

# Bidirectional embedding, override and isolate controls (Unicode Standard
# Annex 9): in a name from a file they can make text display in a different
# order than it is stored, so they are dropped.
_BIDI_CONTROLS = frozenset("\u061c\u200e\u200f\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069")
_LINE_BREAKS = frozenset("\t\n\r\x0b\x0c\x85\u2028\u2029")


def clean_label(text: object, limit: int = LABEL_LENGTH) -> str:
    """A name from the data (a column header, a label, a unit) made safe to show in any output.

    Control characters (Unicode category Cc; XML 1.0, W3C 2008, section 2.2,
    cannot hold most of them and fonts have no glyph for any), surrogates,
    private-use and unassigned code points (which include the non-characters
    U+FFFE and U+FFFF) and bidirectional controls are removed; line breaks,
    tabs and other spaces each become a plain space (runs are kept: the
    name must still match its header); the result is cut at ``limit``
    characters with an ellipsis. Nothing in the text is interpreted: braces,
    dollar signs and "=" stay as they are.

    >>> clean_label("wait" + chr(0) + chr(10) + "(days)" + chr(0x202E))
    'wait (days)'
    """
    kept = []
    for character in str(text):
        category = unicodedata.category(character)
        if character in _LINE_BREAKS or category == "Zs":
            kept.append(" ")
        elif category in ("Cc", "Cs", "Co", "Cn") or character in _BIDI_CONTROLS:
            continue
        else:
            kept.append(character)
    cleaned = "".join(kept)
    return cleaned if len(cleaned) <= limit else cleaned[: limit - 1].rstrip() + "\u2026"


@dataclass(frozen=True, slots=True)
class Exclusion:
    """Cells left out of the analysis, grouped by why."""

    reason: str  # "missing", "non_numeric", "impossible", "non_finite"
    count: int
    rows: tuple[int, ...] = ()  # first source rows (spreadsheet numbering: header is row 1)
    examples: tuple[str, ...] = ()  # first offending cell texts, already made printable
    # For values left out as impossible: the values of ``rows``, same order (empty for other reasons).
    values: tuple[float, ...] = ()
    examples_complete: bool = False  # the examples are every distinct text these cells held


@dataclass(frozen=True, slots=True, eq=False)
class Sample:
    """Values ready for the engine.

    ``values`` are float64, finite, inside the declared valid range, in file
    order; ``rows[i]`` is the source row number of ``values[i]`` as a
    spreadsheet shows it (the header is row 1, the first data row is row 2).
    For an array given directly, rows are positions counted from 1.
    """

    values: np.ndarray
    rows: np.ndarray
    name: str
    unit: str | None = None
    n_rows: int = 0  # data rows read, before any exclusion
    exclusions: tuple[Exclusion, ...] = ()
    decimals: int = 0  # decimals the values are written with (largest seen, capped at 6)
    source: dict = field(default_factory=dict)  # file name, sha256, sheet, reading options
    valid_min: float | None = None  # declared valid range; values outside were excluded as impossible
    valid_max: float | None = None
    # Record identifiers aligned with ``values``, only when the caller asked for
    # them (an id column); None otherwise, so no identifier can reach a report
    # by accident.
    ids: np.ndarray | None = None

    def excluded(self, reason: str) -> Exclusion | None:
        return next((e for e in self.exclusions if e.reason == reason), None)

    @property
    def n_missing(self) -> int:
        found = self.excluded("missing")
        return found.count if found else 0

    @classmethod
    def from_values(cls, values, name: str = "value", unit: str | None = None) -> Sample:
        """A Sample from numbers already in memory; non-finite values are excluded and counted."""
        array = np.asarray(values, dtype=float).ravel()
        rows = np.arange(1, array.size + 1, dtype=np.int64)
        if bool(np.isfinite(array).all()):  # the usual case: one check, and a copy instead of a selection
            return cls(values=array.copy(), rows=rows, name=name, unit=unit, n_rows=int(array.size),
                       exclusions=(), decimals=guess_decimals(array))
        nan_mask = np.isnan(array)
        inf_mask = np.isinf(array)
        keep = ~(nan_mask | inf_mask)
        exclusions = []
        if nan_mask.any():
            exclusions.append(Exclusion("missing", int(nan_mask.sum()), tuple(rows[nan_mask][:10].tolist())))
        if inf_mask.any():
            exclusions.append(Exclusion("non_finite", int(inf_mask.sum()), tuple(rows[inf_mask][:10].tolist())))
        kept = array[keep]
        return cls(
            values=kept,
            rows=rows[keep],
            name=name,
            unit=unit,
            n_rows=int(array.size),
            exclusions=tuple(exclusions),
            decimals=guess_decimals(kept),
        )


def guess_decimals(values: np.ndarray, cap: int = 6) -> int:
    """Decimals needed to write the values as recorded (largest over a sample of them, at most cap)."""
    if values.size == 0:
        return 0
    probe = values[:: max(1, values.size // 2000)][:2000]
    # Values beyond 1e15 carry no decimals a float can hold; scaling them would only overflow.
    probe = probe[np.abs(probe) < 1e15]
    if probe.size == 0:
        return 0
    for decimals in range(cap + 1):
        scaled = probe * 10**decimals
        if np.all(np.abs(scaled - np.round(scaled)) <= 1e-6 * np.maximum(1.0, np.abs(scaled))):
            return decimals
    return cap


def no_numbers(sample: Sample) -> str:
    """Why ``sample`` holds no value to describe, for the one-line message a command stops with.

    >>> no_numbers(Sample(values=np.zeros(0), rows=np.zeros(0, dtype=np.int64), name="v", n_rows=0))
    'the file has a header but no data rows'
    """
    if sample.n_rows == 0:
        return "the file has a header but no data rows"
    text = sample.excluded("non_numeric")
    if text is not None and text.count:
        shown = ", ".join(repr(example) for example in text.examples[:3])
        example = f" (for example {shown})" if shown else ""
        reason = f"none of its {sample.n_rows} cells holds a number{example}"
        other = int((sample.source or {}).get("other_convention") or 0)
        if other:
            # Numbers under the other decimal convention: the likely cause, and the setting that reads them.
            comma = not (sample.source or {}).get("decimal_comma")
            mark, fix = (("a decimal comma", "add --decimal-comma (decimal_comma = true in a recipe)") if comma else
                         ("a decimal point", "leave out --decimal-comma (decimal_comma = false in a recipe)"))
            cells = "every one of them" if other == text.count else f"{other} of them"
            reason += f"; {cells} reads as a number written with {mark}: if the file writes them that way, {fix}"
        return reason
    impossible = sample.excluded("impossible")
    if impossible is not None and impossible.count == sample.n_rows - sample.n_missing and impossible.count:
        return "every value lies outside the valid range"
    return f"all of its {sample.n_rows} cells are blank or marked as missing"
