"""What changed between two builds: two Findings in, a structured comparison out. No prose.

=============================  ==================================================
Name                           What it is
=============================  ==================================================
:func:`compare`                old and new Findings -> :class:`Changes`
:func:`same_findings`          do two builds give the same figures?
:func:`baseline_for`           which earlier findings a new build is compared with
:class:`Change`                one compared quantity and whether it is worth saying
:class:`Changes`               every comparison, and "little changed" when none is
=============================  ==================================================

When a change is worth mentioning (our own rules, stated in the methods
text through the reason codes):

* **center** (the lead measure of the new build): the change is larger than
  the half-width of the new build's confidence interval for that measure,
  i.e. larger than the uncertainty of the estimate itself
  (``beyond_interval``). Without an interval (the rows are the whole
  population, or too few values) any change larger than ``POPULATION_SHARE``
  of the SD is mentioned (``beyond_share_of_sd``).
* **spread** (SD and IQR): a relative change of more than ``SPREAD_SHARE``.
* **n**: a relative change of more than ``COUNT_SHARE``, or any change in
  the number of values left out as missing or impossible.
* **outliers**: any change in the number of flagged values.
* **shape**: any change of label or strength; **lead**: any change of measure.

Regeneration: a rebuild on unchanged data must give the same text. So the
sidecar (:mod:`narrator.history.sidecar`) keeps, beside the new findings, the findings it was compared with
(the *baseline*). When the data have not changed since the last build, the
new build keeps the last build's baseline, and the "what changed" text is
the same as last time; when they have, the last build becomes the baseline.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from typing import Any

from narrator.findings import Findings

POPULATION_SHARE = 0.1
SPREAD_SHARE = 0.10
COUNT_SHARE = 0.05


@dataclass(frozen=True, slots=True)
class Change:
    key: str  # findings key, e.g. "center.median", "n", "outliers.count", "shape.label"
    old: Any
    new: Any
    difference: float | None  # new - old, for numbers
    relative: float | None  # (new - old) / |old|
    mention: bool
    reason: str  # "beyond_interval", "within_interval", "beyond_share_of_sd", "changed", "unchanged", ...
    threshold: float | None = None


@dataclass(frozen=True, slots=True)
class Changes:
    variable: str
    lead: str  # the lead measure the center comparison uses
    items: tuple[Change, ...]

    @property
    def little_changed(self) -> bool:
        return not any(item.mention for item in self.items)

    @property
    def identical(self) -> bool:
        return all(item.reason == "unchanged" for item in self.items)

    def item(self, key: str) -> Change | None:
        return next((item for item in self.items if item.key == key), None)


def _numbers(key: str, old: float | None, new: float | None, *, threshold: float | None, reason_over: str,
             reason_under: str) -> Change:
    if old is None or new is None or not (math.isfinite(old) and math.isfinite(new)):
        return Change(key, old, new, None, None, old != new, "changed" if old != new else "unchanged")
    difference = new - old
    relative = difference / abs(old) if old != 0 else None
    if difference == 0:
        return Change(key, old, new, 0.0, 0.0, False, "unchanged", threshold)
    if threshold is None:
        return Change(key, old, new, difference, relative, True, reason_over, None)
    mention = abs(difference) > threshold
    return Change(key, old, new, difference, relative, mention, reason_over if mention else reason_under, threshold)


def _relative_change(key: str, old: float | None, new: float | None, share: float) -> Change:
    threshold = None if old is None or not math.isfinite(old) else share * abs(old)
    return _numbers(key, old, new, threshold=threshold, reason_over="beyond_share", reason_under="within_share")


def _labels(key: str, old: Any, new: Any) -> Change:
    return Change(key, old, new, None, None, old != new, "changed" if old != new else "unchanged")


def compare(old: Findings, new: Findings) -> Changes:
    """Compare two builds of the same variable; the new build's lead measure sets the center compared."""
    items: list[Change] = [_relative_change("n", float(old.n), float(new.n), COUNT_SHARE)]
    items.append(_labels("quality.n_missing", old.quality.n_missing, new.quality.n_missing))
    items.append(_labels("quality.n_impossible", old.quality.n_impossible, new.quality.n_impossible))
    lead = new.center.lead if new.center is not None else "median"
    if old.center is not None and new.center is not None:
        interval = getattr(new.intervals, lead)
        if interval is not None and math.isfinite(interval.low) and math.isfinite(interval.high):
            threshold = (interval.high - interval.low) / 2
            reasons = ("beyond_interval", "within_interval")
        else:
            sd = new.spread.sd if new.spread is not None else math.nan
            threshold = POPULATION_SHARE * sd if math.isfinite(sd) else None
            reasons = ("beyond_share_of_sd", "within_share_of_sd")
        items.append(
            _numbers(f"center.{lead}", getattr(old.center, lead), getattr(new.center, lead),
                     threshold=threshold, reason_over=reasons[0], reason_under=reasons[1])
        )
        items.append(_labels("center.lead", old.center.lead, new.center.lead))
    if old.spread is not None and new.spread is not None:
        items.append(_relative_change("spread.sd", old.spread.sd, new.spread.sd, SPREAD_SHARE))
        items.append(_relative_change("spread.iqr", old.spread.iqr, new.spread.iqr, SPREAD_SHARE))
    old_count = old.outliers.count if old.outliers is not None else 0
    new_count = new.outliers.count if new.outliers is not None else 0
    items.append(_labels("outliers.count", old_count, new_count))
    items.append(_labels("shape.label", old.shape.label, new.shape.label))
    items.append(_labels("shape.strength", old.shape.strength, new.shape.strength))
    return Changes(variable=new.variable.name, lead=lead, items=tuple(items))


def _comparable(findings: Findings) -> dict:
    data = findings.to_dict()
    data.pop("provenance", None)  # library versions or a renamed file do not change the figures
    return data


def same_findings(a: Findings, b: Findings) -> bool:
    """True when two builds give the same figures (provenance aside)."""
    return json.dumps(_comparable(a), sort_keys=True) == json.dumps(_comparable(b), sort_keys=True)


def baseline_for(new: Findings, previous: Findings | None, previous_baseline: Findings | None) -> Findings | None:
    """The findings a new build is compared with.

    No earlier build: none. Data unchanged since the last build: the last
    build's own baseline (so the text repeats). Otherwise: the last build.
    """
    if previous is None:
        return None
    if same_findings(previous, new):
        return previous_baseline
    return previous
