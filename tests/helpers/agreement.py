"""Whether two Findings agree: the check that a streaming, a Dask and an in-memory run say the same.

=========================  ======================================================
Name                       What it does
=========================  ======================================================
:func:`differences`        every place two findings differ beyond rounding, as
                           "key: first | second" lines (empty when they agree)
=========================  ======================================================

Two numbers agree when they are equal, or when they differ by at most ``relative`` times the larger
of their sizes and of the data's scale (the largest |value|, the SD): sums merged in another grouping
differ in the last bits, and a difference of two nearly equal means (``without_outliers.mean_change``)
carries that rounding at the scale of the means, not of the difference. Everything else (counts,
flagged rows, labels, reason codes) must be equal. A field that either side records as not computed
by an engine that reads in passes (``Findings.not_computed``) is left out of the comparison.
"""

from __future__ import annotations

import math
from typing import Any

from narrator.engine.decision import NOT_IN_PASSES
from narrator.findings import Findings

IGNORED = ("provenance", "accuracy")

# Figures without the data's unit (ratios, test statistics, p-values): their rounding is measured
# against 1, not against the data's scale (values of 1e-22 give a skewness of 0 in one grouping of
# the sums and -1.5e-16 in another).
DIMENSIONLESS = frozenset({
    "shape.skewness", "shape.skewness_se", "shape.skewness_test_z", "shape.skewness_test_p", "shape.bowley",
    "shape.medcouple", "shape.excess_kurtosis", "shape.bimodality_coefficient",
})


def _scale(findings: Findings) -> float:
    spread = findings.spread
    if spread is None:
        return 0.0
    sizes = [abs(spread.min), abs(spread.max), spread.sd if math.isfinite(spread.sd) else 0.0]
    return max(sizes)


def differences(first: Findings, second: Findings, *, relative: float = 1e-12,
                ignore: tuple[str, ...] = IGNORED) -> list[str]:
    """Where ``first`` and ``second`` differ beyond ``relative`` rounding (see the module docstring);
    the top-level fields in ``ignore`` (by default where the data came from and how) are skipped."""
    scale = max(_scale(first), _scale(second))
    found: list[str] = []

    def walk(a: Any, b: Any, path: str) -> None:
        if isinstance(a, dict) and isinstance(b, dict):
            for key in sorted(set(a) | set(b), key=str):
                if not path and key in ignore:
                    continue
                walk(a.get(key), b.get(key), f"{path}.{key}" if path else str(key))
        elif isinstance(a, list) and isinstance(b, list) and len(a) == len(b):
            for index, (x, y) in enumerate(zip(a, b, strict=True)):
                walk(x, y, f"{path}[{index}]")
        elif isinstance(a, float) and isinstance(b, float) and not isinstance(a, bool):
            size = 1.0 if path in DIMENSIONLESS or path.endswith("_relative") else scale
            if a != b and abs(a - b) > relative * max(abs(a), abs(b), size):
                found.append(f"{path}: {a!r} | {b!r}")
        elif a != b:
            found.append(f"{path}: {str(a)[:80]} | {str(b)[:80]}")

    # A field an engine records as not computed (Findings.not_computed, narrator.engine.decision) is
    # skipped on both sides: the engine said it did not compute it, rather than computing it differently.
    skipped = {key for findings in (first, second) for key, reason in findings.not_computed.items()
               if reason == NOT_IN_PASSES}
    left, right = first.to_dict(), second.to_dict()
    for data in (left, right):
        for key in skipped:
            data.pop(key, None)
            data["not_computed"].pop(key, None)
    walk(left, right, "")
    return found
