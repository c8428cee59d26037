"""One pass over the data: summaries fed chunk by chunk on one machine, with bounded memory.

======================  ==========================================================
Name                    What it does
======================  ==========================================================
:class:`Pass`           named summaries filled together in one read of the data;
                        applies the declared bounds and records what they left out
:class:`StreamRunner`   runs a Pass over a :class:`~.sources.ColumnSource`'s chunks
======================  ==========================================================

Memory: one chunk of values (``chunk_rows`` float64 plus the parsed cells) and
the summaries, whose size does not grow with the data except for the values
kept inside the second pass's narrow brackets and the flagged outliers.
"""

from __future__ import annotations

import copy

import numpy as np

from narrator.reading.sample import Sample
from narrator.scale.sources import ColumnSource, ReadingSummary


class Pass:
    """Summaries (``parts``, a name -> summary dict) filled in one read of the data.

    ``low``/``high`` are the effective valid range (the declared valid range and bounds the quantity
    cannot cross): values outside it are left out before any summary sees them, as the in-memory engine
    does; with ``record_reading`` the pass also keeps the :class:`~.sources.ReadingSummary`.
    """

    def __init__(self, parts: dict, *, low: float | None, high: float | None, record_reading: bool = False):
        self.parts = parts
        self.low, self.high = low, high
        self.reading = ReadingSummary() if record_reading else None

    def empty_copy(self) -> Pass:
        return copy.deepcopy(self)

    def feed(self, chunk: Sample) -> None:
        values, rows = chunk.values, chunk.rows
        outside = None
        if self.low is not None or self.high is not None:
            outside = np.zeros(values.size, dtype=bool)
            if self.low is not None:
                outside |= values < self.low
            if self.high is not None:
                outside |= values > self.high
            if outside.any():
                keep = ~outside
                out_rows, out_values = rows[outside], values[outside]
                values, rows = values[keep], rows[keep]
            else:
                outside = None
        if self.reading is not None:
            empty = np.zeros(0)
            self.reading.add_chunk(chunk, out_rows if outside is not None else empty.astype(np.int64),
                                   out_values if outside is not None else empty)
        for part in self.parts.values():
            part.update(values, rows)

    def merge(self, other: Pass) -> Pass:
        for name, part in self.parts.items():
            part.merge(other.parts[name])
        if self.reading is not None and other.reading is not None:
            self.reading.merge(other.reading)
        return self

    def __getitem__(self, name: str):
        return self.parts[name]


class StreamRunner:
    """Reads the source once per pass, chunk by chunk, on this machine."""

    name = "stream"

    def __init__(self, source: ColumnSource) -> None:
        self.source = source
        self.passes = 0

    def run(self, plan: Pass) -> Pass:
        self.passes += 1
        for chunk in self.source.chunks():
            plan.feed(chunk)
        return plan

    def describe_runner(self) -> dict:
        return {"engine": self.name, "chunk_rows": self.source.chunk_rows}
