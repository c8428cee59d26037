"""Which center to lead with, and why, as reason codes.

The rule, after SAMPL (Lang & Altman 2013: mean (SD) for roughly normal
data, median (IQR) for skewed data), made explicit:

* lead with the **median** when the shape is clearly skewed (``skewed``),
  when the density shows several peaks (``several_peaks``), or when the
  flagged outliers move the mean by more than ``MEAN_SHIFT_SHARE`` of the SD
  of the remaining values (``outliers_move_mean``);
* otherwise lead with the **mean** (``not_skewed``).

The mean and median gap is called material when it exceeds
``MATERIAL_GAP_SHARE`` of the SD (our own threshold, common practice).
"""

from __future__ import annotations

import math

MEAN_SHIFT_SHARE = 0.2
MATERIAL_GAP_SHARE = 0.1


def choose_lead(
    *, clearly_skewed: bool, several_peaks: bool, mean_shift: float | None, sd_without: float | None
) -> tuple[str, tuple[str, ...]]:
    """Return ("mean" | "median", reason codes)."""
    reasons = []
    if clearly_skewed:
        reasons.append("skewed")
    if several_peaks:
        reasons.append("several_peaks")
    if (
        mean_shift is not None
        and sd_without is not None
        and math.isfinite(sd_without)
        and abs(mean_shift) > MEAN_SHIFT_SHARE * sd_without
    ):
        reasons.append("outliers_move_mean")
    if reasons:
        return "median", tuple(reasons)
    return "mean", ("not_skewed",)


def mean_pull(mean: float, median: float, sd: float) -> tuple[str, bool]:
    """Where the mean sits relative to the median, and whether the gap is material."""
    gap = mean - median
    if not math.isfinite(sd) or sd == 0:
        return "none", False
    material = abs(gap) > MATERIAL_GAP_SHARE * sd
    if abs(gap) <= 1e-12 * max(abs(mean), abs(median), 1.0):
        return "none", False
    return ("higher" if gap > 0 else "lower"), material
