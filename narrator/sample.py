"""Sample: one numeric column after reading and cleaning, with an account of what was left out."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


@dataclass(frozen=True, slots=True)
class Exclusion:
    """Cells left out of the analysis, grouped by why."""

    reason: str  # "missing", "non_numeric", "impossible", "non_finite"
    count: int
    rows: tuple[int, ...] = ()  # first source rows (spreadsheet numbering: header is row 1)
    examples: tuple[str, ...] = ()  # first offending cell texts, already made printable


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
    for decimals in range(cap + 1):
        scaled = probe * 10**decimals
        if np.all(np.abs(scaled - np.round(scaled)) <= 1e-6 * np.maximum(1.0, np.abs(scaled))):
            return decimals
    return cap
