"""Findings sets: the sidecar of a report on several variables, or on one variable by group.

A report on one variable with no groups keeps the plain findings sidecar of
:mod:`narrator.findings`. A report on several variables, or broken down by a
grouping column, writes a *findings set*: one JSON object that holds every
variable's findings and, when grouped, every shown group's findings.

=============================  ================================================
Name                           What it is
=============================  ================================================
:class:`GroupFindings`         one shown group: its label and its findings
:class:`VariableFindings`      one variable: overall findings, groups, and how
                               many groups were suppressed for privacy
:class:`FindingsSet`           every variable of one report
:func:`dumps_set`              a findings set as JSON text
:func:`loads_any`              sidecar text of either kind -> FindingsSet
:func:`is_set`                 whether parsed sidecar JSON is a findings set
:data:`SET_KIND`               the ``kind`` marker of a findings-set sidecar
=============================  ================================================

JSON layout (schema version 1)::

    {"schema_version": 1, "kind": "narrator-findings-set",
     "group_by": "site" | null, "privacy_threshold": 10 | null,
     "variables": [
        {"findings": {...one Findings...},
         "groups": [{"label": "A", "findings": {...}}, ...],
         "suppressed_groups": 1, "ungrouped_values": 0,
         "baseline": {...the earlier findings compared with, when any...},
         "comparison": {...the groups compared with each other, when grouped...}}, ...]}

Suppressed groups appear only as a count: no label, no value, no findings.
A plain findings sidecar read by :func:`loads_any` becomes a set of one
variable with no groups, so code that compares builds reads either kind.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from narrator import findings as findings_module
from narrator.errors import NarratorError
from narrator.findings import SCHEMA_VERSION, Findings, GroupComparison

SET_KIND = "narrator-findings-set"


@dataclass(frozen=True, slots=True)
class GroupFindings:
    label: str
    findings: Findings


@dataclass(frozen=True, slots=True)
class VariableFindings:
    """One variable: the findings over every shown value, and per shown group.

    ``suppressed_groups`` counts the groups left out because they held fewer
    values than the privacy threshold; ``ungrouped_values`` counts values whose
    grouping cell was blank (they count in the overall findings, in no group).
    ``baseline`` is the earlier build's findings this build was compared with
    (see :func:`narrator.history.changes.baseline_for`), or None. ``comparison``
    compares the shown groups with each other (:mod:`narrator.engine.group_difference`),
    None without groups.
    """

    findings: Findings
    groups: tuple[GroupFindings, ...] = ()
    suppressed_groups: int = 0
    ungrouped_values: int = 0
    baseline: Findings | None = None
    comparison: GroupComparison | None = None


@dataclass(frozen=True, slots=True)
class FindingsSet:
    variables: tuple[VariableFindings, ...]
    group_by: str | None = None
    privacy_threshold: int | None = None
    schema_version: int = SCHEMA_VERSION

    def to_dict(self) -> dict[str, Any]:
        return {
            "schema_version": self.schema_version,
            "kind": SET_KIND,
            "group_by": self.group_by,
            "privacy_threshold": self.privacy_threshold,
            "variables": [
                {
                    "findings": item.findings.to_dict(),
                    "groups": [{"label": group.label, "findings": group.findings.to_dict()}
                               for group in item.groups],
                    "suppressed_groups": item.suppressed_groups,
                    "ungrouped_values": item.ungrouped_values,
                    **({"baseline": item.baseline.to_dict()} if item.baseline is not None else {}),
                    **({"comparison": findings_module.encode_part(item.comparison)}
                       if item.comparison is not None else {}),
                }
                for item in self.variables
            ],
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> FindingsSet:
        version = data.get("schema_version")
        if version != SCHEMA_VERSION:
            raise NarratorError(
                f"findings set schema version {version!r} is not supported (expected {SCHEMA_VERSION})"
            )
        if data.get("kind") != SET_KIND:
            raise NarratorError(f"findings set: 'kind' must be {SET_KIND!r}")
        entries = data.get("variables")
        if not isinstance(entries, list) or not entries:
            raise NarratorError("findings set: 'variables' must be a non-empty list")
        variables = []
        for number, entry in enumerate(entries, start=1):
            if not isinstance(entry, dict) or not isinstance(entry.get("findings"), dict):
                raise NarratorError(f"findings set: variable {number} must be an object with 'findings'")
            groups = []
            for group in entry.get("groups", []):
                if not isinstance(group, dict) or not isinstance(group.get("label"), str):
                    raise NarratorError(f"findings set: variable {number} has a group without a label")
                groups.append(GroupFindings(group["label"], Findings.from_dict(group["findings"])))
            variables.append(VariableFindings(
                findings=Findings.from_dict(entry["findings"]),
                groups=tuple(groups),
                suppressed_groups=int(entry.get("suppressed_groups", 0)),
                ungrouped_values=int(entry.get("ungrouped_values", 0)),
                baseline=Findings.from_dict(entry["baseline"]) if isinstance(entry.get("baseline"), dict) else None,
                comparison=(findings_module.decode_part(GroupComparison, entry["comparison"],
                                                        f"variable {number} comparison")
                            if isinstance(entry.get("comparison"), dict) else None),
            ))
        threshold = data.get("privacy_threshold")
        return cls(
            variables=tuple(variables),
            group_by=data.get("group_by"),
            privacy_threshold=None if threshold is None else int(threshold),
        )


def dumps_set(findings_set: FindingsSet) -> str:
    """The findings set as JSON text: stable key order, full float precision, no NaN."""
    return json.dumps(findings_set.to_dict(), indent=2, ensure_ascii=False, allow_nan=False)


def is_set(data: Any) -> bool:
    """Whether parsed sidecar JSON is a findings set (not a single variable's findings)."""
    return isinstance(data, dict) and data.get("kind") == SET_KIND


def loads_any(text: str) -> FindingsSet:
    """Sidecar text of either kind as a FindingsSet; plain findings become a set of one variable.

    >>> from narrator.engine.describe import describe
    >>> one = findings_module.dumps(describe([1, 2, 3, 4, 5]))
    >>> loads_any(one).variables[0].findings.center.median
    3.0
    """
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise NarratorError(f"findings are not valid JSON: {exc}") from None
    if not isinstance(data, dict):
        raise NarratorError("findings JSON must be an object")
    if is_set(data):
        return FindingsSet.from_dict(data)
    baseline = data.get("baseline")  # a single sidecar may keep the findings it was compared with
    return FindingsSet(variables=(VariableFindings(
        findings_module.Findings.from_dict(data),
        baseline=findings_module.Findings.from_dict(baseline) if isinstance(baseline, dict) else None,
    ),))
