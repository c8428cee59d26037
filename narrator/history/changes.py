"""What changed between two builds: two Findings in, a structured comparison out. No prose.

=============================  ==================================================
Name                           What it is
=============================  ==================================================
:func:`compare`                old and new Findings -> :class:`Changes`
:func:`same_findings`          do two builds give the same figures?
:func:`baseline_for`           which earlier findings a new build is compared with
:class:`Change`                one compared quantity and whether it is worth saying
:class:`Changes`               every comparison, and "little changed" when none is
:func:`compare_sets`           two findings sets -> :class:`SetChanges` (variables, groups)
:func:`standard_error`         a build's standard error, from its own interval
=============================  ==================================================

When a change is worth mentioning (our own rules, stated in the methods
text through the reason codes):

* **center** (the lead measure of the new build): judged by the difference of
  the two estimates with its own interval, as Schenker & Gentleman (2001,
  "On judging the significance of differences by examining the overlap
  between confidence intervals", The American Statistician 55(3)) recommend
  (overlapping intervals are not the test). Each build's standard error is
  read off its own interval, se = (high - low) / (2 z), z the normal quantile
  at (1 + level) / 2; the difference's is sqrt(se_old^2 + se_new^2), the rule
  for independent builds. Builds of refreshed data usually share rows, and
  positively correlated estimates make the true standard error of the
  difference smaller, so this interval is wider than it needs to be: we
  choose it so that no change is ever overstated. The change is mentioned
  when the interval d +/- z se excludes 0 (``beyond_interval``; else
  ``within_interval``). When either build has no interval (the rows are the
  whole population, or too few values) any change larger than
  ``POPULATION_SHARE`` of the new SD is mentioned (``beyond_share_of_sd``).
* **spread** (SD and IQR): a relative change of more than ``SPREAD_SHARE``, and, when both builds are
  samples, a change of the SD beyond its uncertainty: ln(SD_new / SD_old) outside 0 +/- z se, with
  se^2 = (G2_old + 2) / (4 n_old) + (G2_new + 2) / (4 n_new), the large-sample variance of ln s for any
  shape (var(s^2) / sigma^4 = (kappa - 1) / n, kappa = G2 + 3, by the delta method; from memory). The
  IQR is judged by the same gate: its sampling error is larger still, so a middle half that moved with
  the SD unchanged is not called a change (``within_uncertainty``).
* **n**: a relative change of more than ``COUNT_SHARE``, or any change in
  the number of values left out as missing or impossible.
* **outliers**: any change in the number of flagged values (each build by its
  own fences: the words say so when the fences moved).
* **shape**: a change of label (symmetric, right-skewed, two peaks...), and, when both builds are
  samples, a change of the skewness G1 beyond its uncertainty, |G1_new - G1_old| > z sqrt(se_old^2 +
  se_new^2) with each build's own standard error of G1 (``within_uncertainty`` otherwise). A change of
  strength alone (moderately to strongly skewed) is mentioned only for whole populations: in samples
  it is a cut point crossed on a continuous measure whose sampling error in skewed data exceeds its
  normal-theory standard error (0.69 to 1.24 on 300 and 150 values of one gamma shape; reason
  ``strength_only``); **lead**: any change of measure.

:func:`compare_sets` compares two findings sets (several variables, groups)
variable by variable and group by group, matched by name and label.

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

from narrator.engine.distributions import normal_isf
from narrator.errors import NarratorError
from narrator.findings import Findings

POPULATION_SHARE = 0.1
LEVEL = 0.95  # the level of the spread's and the shape's uncertainty gates
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
    threshold: float | None = None  # for the center: the difference interval's half-width
    low: float | None = None  # the center's difference interval (new - old), when judged by one
    high: float | None = None
    level: float | None = None


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


def standard_error(interval) -> float | None:
    """A build's standard error read off its own interval: (high - low) / (2 z), z at (1 + level) / 2."""
    if interval is None or not (math.isfinite(interval.low) and math.isfinite(interval.high)):
        return None
    z = normal_isf((1.0 - interval.level) / 2.0)
    return (interval.high - interval.low) / (2.0 * z)


def _center_change(key: str, old: Findings, new: Findings, lead: str) -> Change:
    old_value, new_value = getattr(old.center, lead), getattr(new.center, lead)
    old_se = standard_error(getattr(old.intervals, lead))
    new_se = standard_error(getattr(new.intervals, lead))
    if old_se is not None and new_se is not None:
        level = getattr(new.intervals, lead).level
        half = normal_isf((1.0 - level) / 2.0) * math.hypot(old_se, new_se)
        difference = new_value - old_value
        if difference == 0:
            return Change(key, old_value, new_value, 0.0, 0.0, False, "unchanged", half, -half, half, level)
        low, high = difference - half, difference + half
        mention = low > 0 or high < 0
        relative = difference / abs(old_value) if old_value != 0 else None
        return Change(key, old_value, new_value, difference, relative, mention,
                      "beyond_interval" if mention else "within_interval", half, low, high, level)
    sd = new.spread.sd if new.spread is not None else math.nan
    threshold = POPULATION_SHARE * sd if math.isfinite(sd) else None
    return _numbers(key, old_value, new_value, threshold=threshold, reason_over="beyond_share_of_sd",
                    reason_under="within_share_of_sd")


def _both_samples(old: Findings, new: Findings) -> bool:
    return not (old.variable.population or new.variable.population)


def _sd_within_uncertainty(old: Findings, new: Findings) -> bool:
    """Whether the SD's change lies within its uncertainty (the module notes); False when it cannot be judged."""
    if not _both_samples(old, new):
        return False
    terms = []
    for found in (old, new):
        g2, sd = found.shape.excess_kurtosis, found.spread.sd
        if g2 is None or not (sd and sd > 0 and math.isfinite(sd)) or found.n < 2:
            return False
        terms.append(max(g2 + 2.0, 0.0) / (4.0 * found.n))
    z = normal_isf((1.0 - LEVEL) / 2.0)
    return abs(math.log(new.spread.sd / old.spread.sd)) <= z * math.sqrt(sum(terms))


def _skewness_within_uncertainty(old: Findings, new: Findings) -> bool:
    """Whether G1's change lies within z times the two builds' standard errors; False when it cannot be judged."""
    if not _both_samples(old, new):
        return False
    values = [(found.shape.skewness, found.shape.skewness_se) for found in (old, new)]
    if any(g1 is None or se is None or not math.isfinite(se) for g1, se in values):
        return False
    z = normal_isf((1.0 - LEVEL) / 2.0)
    return abs(values[1][0] - values[0][0]) <= z * math.hypot(values[0][1], values[1][1])


def _unless_within(change: Change, within: bool) -> Change:
    """A change the numbers' uncertainty explains is not mentioned (reason ``within_uncertainty``)."""
    if not (change.mention and within):
        return change
    return Change(change.key, change.old, change.new, change.difference, change.relative, False,
                  "within_uncertainty", change.threshold)


def compare(old: Findings, new: Findings) -> Changes:
    """Compare two builds of the same variable; the new build's lead measure sets the center compared."""
    items: list[Change] = [_relative_change("n", float(old.n), float(new.n), COUNT_SHARE)]
    items.append(_labels("quality.n_missing", old.quality.n_missing, new.quality.n_missing))
    items.append(_labels("quality.n_impossible", old.quality.n_impossible, new.quality.n_impossible))
    lead = new.center.lead if new.center is not None else "median"
    if old.center is not None and new.center is not None:
        items.append(_center_change(f"center.{lead}", old, new, lead))
        items.append(_labels("center.lead", old.center.lead, new.center.lead))
    if old.spread is not None and new.spread is not None:
        settled = _sd_within_uncertainty(old, new)
        for key, before, after in (("spread.sd", old.spread.sd, new.spread.sd),
                                   ("spread.iqr", old.spread.iqr, new.spread.iqr)):
            items.append(_unless_within(_relative_change(key, before, after, SPREAD_SHARE), settled))
    old_count = old.outliers.count if old.outliers is not None else 0
    new_count = new.outliers.count if new.outliers is not None else 0
    items.append(_labels("outliers.count", old_count, new_count))
    settled = _skewness_within_uncertainty(old, new)
    items.append(_unless_within(_labels("shape.label", old.shape.label, new.shape.label), settled))
    strength = _labels("shape.strength", old.shape.strength, new.shape.strength)
    if strength.mention and old.shape.label == new.shape.label and _both_samples(old, new):
        strength = Change(strength.key, strength.old, strength.new, None, None, False, "strength_only")
    items.append(_unless_within(strength, settled))
    return Changes(variable=new.variable.name, lead=lead, items=tuple(items))


@dataclass(frozen=True, slots=True)
class PairedChange:
    """One variable (or one group of it) in both builds, and their comparison."""

    name: str  # the variable's name
    group: str | None  # the group's label, or None for the whole variable
    old: Findings
    new: Findings
    changes: Changes


@dataclass(frozen=True, slots=True)
class SetChanges:
    """Two findings sets compared: every variable and group found in both, and what is only in one."""

    group_by: str | None
    pairs: tuple[PairedChange, ...]
    only_old: tuple[str, ...]  # "name" or "name / label" in the old build only
    only_new: tuple[str, ...]


def check_comparable(before: Findings, after: Findings) -> None:
    """NarratorError when two findings are not of one variable in one unit: comparing waits in days with
    awards in dollars, or hours with days, would call the difference a change."""
    old_var, new_var = before.variable, after.variable
    if old_var.name != new_var.name:
        raise NarratorError(f"the two findings files describe different variables ({old_var.name!r} and "
                            f"{new_var.name!r}); variables are matched by name")
    if (old_var.unit or None) != (new_var.unit or None):
        raise NarratorError(f"the two findings files give {new_var.name!r} in different units "
                            f"({old_var.unit or 'none'} and {new_var.unit or 'none'}); compare builds in one unit")


def compare_sets(old, new) -> SetChanges:
    """Compare two findings sets (narrator.history.sidecar.FindingsSet), variable by variable (matched by
    name) and, when both are grouped by the same column, group by group (matched by label)."""
    old_by_name = {item.findings.variable.name: item for item in old.variables}
    pairs: list[PairedChange] = []
    only_new: list[str] = []
    only_old = [name for name in old_by_name if name not in {i.findings.variable.name for i in new.variables}]
    same_grouping = old.group_by is not None and old.group_by == new.group_by
    for item in new.variables:
        name = item.findings.variable.name
        before = old_by_name.get(name)
        if before is None:
            only_new.append(name)
            continue
        check_comparable(before.findings, item.findings)
        pairs.append(PairedChange(name, None, before.findings, item.findings, compare(before.findings, item.findings)))
        if not same_grouping:
            continue
        old_groups = {group.label: group for group in before.groups}
        for group in item.groups:
            earlier = old_groups.get(group.label)
            if earlier is None:
                only_new.append(f"{name} / {group.label}")
                continue
            pairs.append(PairedChange(name, group.label, earlier.findings, group.findings,
                                      compare(earlier.findings, group.findings)))
        new_labels = {group.label for group in item.groups}
        only_old.extend(f"{name} / {label}" for label in old_groups if label not in new_labels)
    if not pairs:
        raise NarratorError("the two findings files have no variable in common (variables are matched by name)")
    return SetChanges(group_by=new.group_by if same_grouping else None, pairs=tuple(pairs),
                      only_old=tuple(only_old), only_new=tuple(only_new))


def _comparable(findings: Findings) -> dict:
    data = findings.to_dict()
    data.pop("provenance", None)  # library versions or a renamed file do not change the figures
    return data


def same_findings(a: Findings, b: Findings) -> bool:
    """True when two builds give the same figures (provenance aside)."""
    return json.dumps(_comparable(a), sort_keys=True) == json.dumps(_comparable(b), sort_keys=True)


def baseline_for(new: Findings, previous: Findings | None, previous_baseline: Findings | None, *,
                 say_unchanged: bool = False) -> Findings | None:
    """The findings a new build is compared with.

    No earlier build: none. Data unchanged since the last build: the last
    build's own baseline (so the text repeats); when it had none, none, or with ``say_unchanged`` (a
    report) the last build itself, so the report says in one sentence that nothing changed (a fill keeps
    none: a second fill on unchanged data writes nothing). Otherwise: the last build.
    """
    if previous is None:
        return None
    if same_findings(previous, new):
        return previous if previous_baseline is None and say_unchanged else previous_baseline
    return previous
