"""The findings sidecar: its two forms, and the one policy for writing and reading it.

A report on one variable with no groups keeps the plain findings sidecar of
:mod:`narrator.findings` (plus the baseline it was compared with). A report on
several variables, or broken down by a grouping column, writes a *findings
set*: one JSON object that holds every variable's findings and, when grouped,
every shown group's findings. Either is written beside its report as one pair
(:func:`narrator.safe_io.commit_report_pair`, which adds the report's SHA-256).

=============================  ================================================
Name                           What it is
=============================  ================================================
:class:`GroupFindings`         one shown group: its label and its findings
:class:`VariableFindings`      one variable: overall findings, groups, and how
                               many groups were suppressed for privacy
:class:`FindingsSet`           every variable of one report
:func:`single_sidecar`         the sidecar of a one-variable report, as data
:func:`set_sidecar`            the sidecar of a findings set, as data
:func:`previous_build`         the previous build's findings beside a report,
                               or why they were ignored (never an error)
:func:`read_findings_file`     a sidecar file named by the user (``compare``):
                               every problem is one error
:func:`check_sidecar`          parsed sidecar JSON checked against the schema
:func:`dumps_set`              a findings set as JSON text
:func:`loads_any`              sidecar text of either kind -> FindingsSet
:func:`is_set`                 whether parsed sidecar JSON is a findings set
:data:`SET_KIND`               the ``kind`` marker of a findings-set sidecar
=============================  ================================================

The policy. A sidecar is read only through :func:`previous_build` (a build
looking for its previous findings) or :func:`read_findings_file` (a sidecar the
user names). Both check the JSON against the schema before any of it is used:
every field's type as the dataclasses of :mod:`narrator.findings` declare it,
whole numbers within 64 bits, the fixed vocabularies (lead measure, shape,
strength, evidence, outlier rule), and nesting at most :data:`MAX_DEPTH`
deep. A build that finds a previous sidecar that is damaged, foreign, or
not its report's (:func:`narrator.safe_io.read_report_pair`) ignores it, says so
once, and builds without the comparison; ``compare`` on such a file stops with
one line.

JSON layout (schema version 1)::

    {"schema_version": 1, "kind": "narrator-findings-set",
     "group_by": "site" | null, "privacy_threshold": 10 | null,
     "variables": [
        {"findings": {...one Findings...},
         "groups": [{"label": "A", "findings": {...}}, ...],
         "suppressed_groups": 1, "ungrouped_values": 0,
         "baseline": {...the earlier findings compared with, when any...},
         "group_baselines": [{"label": "A", "findings": {...}}, ...],  (that build's shown groups, when any)
         "comparison": {...the groups compared with each other, when grouped...}}, ...]}

Suppressed groups appear only as a count: no label, no value, no findings.
A plain findings sidecar read by :func:`loads_any` becomes a set of one
variable with no groups, so code that compares builds reads either kind.
"""

from __future__ import annotations

import dataclasses
import functools
import json
import math
import os
import types
import typing
from dataclasses import dataclass
from pathlib import Path
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
    # The groups of the build ``baseline`` comes from, so a grouped report can say which group moved.
    group_baselines: tuple[GroupFindings, ...] = ()


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
                    **({GROUP_BASELINES_KEY: [{"label": group.label, "findings": group.findings.to_dict()}
                                              for group in item.group_baselines]}
                       if item.group_baselines else {}),
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
            groups, group_baselines = [], []
            for key, into in (("groups", groups), (GROUP_BASELINES_KEY, group_baselines)):
                for group in entry.get(key, []):
                    if not isinstance(group, dict) or not isinstance(group.get("label"), str):
                        raise NarratorError(f"findings set: variable {number} has a group without a label")
                    into.append(GroupFindings(group["label"], Findings.from_dict(group["findings"])))
            variables.append(VariableFindings(
                findings=Findings.from_dict(entry["findings"]),
                groups=tuple(groups),
                suppressed_groups=int(entry.get("suppressed_groups", 0)),
                ungrouped_values=int(entry.get("ungrouped_values", 0)),
                baseline=Findings.from_dict(entry["baseline"]) if isinstance(entry.get("baseline"), dict) else None,
                group_baselines=tuple(group_baselines),
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


# --------------------------------------------------------------------------- the policy

MAX_DEPTH = 32  # nesting of the free-form parts (options, provenance, details) a sidecar may hold
BASELINE_KEY = "baseline"
GROUP_BASELINES_KEY = "group_baselines"
_VOCABULARIES = {
    ("Center", "lead"): findings_module.LEAD_MEASURES,
    ("WithoutOutliers", "lead_without"): findings_module.LEAD_MEASURES,
    ("Shape", "label"): findings_module.SHAPE_LABELS,
    ("Shape", "strength"): findings_module.SHAPE_STRENGTHS,
    ("Shape", "evidence"): findings_module.EVIDENCE_LEVELS,
    ("Outliers", "rule"): findings_module.OUTLIER_RULES,
}
_LARGEST_WHOLE = 2**63


@functools.cache
def _hints(kind: type) -> dict[str, Any]:
    return typing.get_type_hints(kind)


def _kind_word(value: Any) -> str:
    return {bool: "true/false", int: "a whole number", float: "a number", str: "text", list: "a list",
            dict: "an object", type(None): "null"}.get(type(value), type(value).__name__)


def _check_json(value: Any, where: str, depth: int) -> None:
    if depth > MAX_DEPTH:
        raise NarratorError(f"{where} is nested more than {MAX_DEPTH} levels deep")
    if isinstance(value, dict):
        for key, item in value.items():
            _check_json(item, f"{where}.{key}", depth + 1)
    elif isinstance(value, list):
        for item in value:
            _check_json(item, where, depth + 1)
    elif isinstance(value, int) and not isinstance(value, bool) and abs(value) >= _LARGEST_WHOLE:
        raise NarratorError(f"{where} holds a whole number too large to be a finding")


def _check_value(kind: Any, value: Any, where: str, depth: int) -> None:
    origin = typing.get_origin(kind)
    if origin in (typing.Union, types.UnionType):
        if value is None:
            return
        options = [arg for arg in typing.get_args(kind) if arg is not type(None)]
        _check_value(options[0], value, where, depth)
        return
    if dataclasses.is_dataclass(kind):
        if not isinstance(value, dict):
            raise NarratorError(f"{where} must be an object, not {_kind_word(value)}")
        hints = _hints(kind)
        for item in dataclasses.fields(kind):
            required = item.default is dataclasses.MISSING and item.default_factory is dataclasses.MISSING
            if item.name not in value:
                if required:
                    raise NarratorError(f"{where}.{item.name} is missing")
                continue
            found = value[item.name]
            words = _VOCABULARIES.get((kind.__name__, item.name))
            if words is not None and found is not None and found not in words:
                raise NarratorError(f"{where}.{item.name} is {json.dumps(found)[:40]}, not one of {', '.join(words)}")
            _check_value(hints[item.name], found, f"{where}.{item.name}", depth + 1)
        return
    if origin is tuple:
        if not isinstance(value, list):
            raise NarratorError(f"{where} must be a list, not {_kind_word(value)}")
        args = typing.get_args(kind)
        if len(args) == 2 and args[1] is Ellipsis:
            for item in value:
                _check_value(args[0], item, where, depth + 1)
        elif len(args) != len(value):
            raise NarratorError(f"{where} must hold {len(args)} items, not {len(value)}")
        else:
            for arg, item in zip(args, value, strict=True):
                _check_value(arg, item, where, depth + 1)
        return
    if origin is dict or kind is Any:
        if origin is dict and not isinstance(value, dict):
            raise NarratorError(f"{where} must be an object, not {_kind_word(value)}")
        _check_json(value, where, depth)
        return
    if kind is float:
        if value is None:
            return  # a non-finite figure is written as null
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise NarratorError(f"{where} must be a number, not {_kind_word(value)}")
        if isinstance(value, int):
            try:
                float(value)
            except OverflowError:
                raise NarratorError(f"{where} is a number too large for a finding") from None
        elif not math.isfinite(value):
            raise NarratorError(f"{where} is not a finite number")
        return
    if kind is int:
        if isinstance(value, bool) or not isinstance(value, int):
            raise NarratorError(f"{where} must be a whole number, not {_kind_word(value)}")
        if abs(value) >= _LARGEST_WHOLE:
            raise NarratorError(f"{where} is a whole number too large to be a finding")
        return
    if kind is str and not isinstance(value, str):
        raise NarratorError(f"{where} must be text, not {_kind_word(value)}")
    if kind is bool and not isinstance(value, bool):
        raise NarratorError(f"{where} must be true or false, not {_kind_word(value)}")


def _check_findings(value: Any, where: str) -> None:
    if not isinstance(value, dict):
        raise NarratorError(f"{where} must be an object, not {_kind_word(value)}")
    version = value.get("schema_version")
    if version != SCHEMA_VERSION:
        raise NarratorError(f"{where} has schema version {json.dumps(version)[:20]}; this narrator reads version "
                            f"{SCHEMA_VERSION}")
    _check_value(Findings, value, where, 0)


def check_sidecar(data: Any) -> None:
    """NarratorError (one line, naming the first bad field) unless ``data`` is a sidecar of either form."""
    if not isinstance(data, dict):
        raise NarratorError(f"a findings file holds an object, not {_kind_word(data)}")
    if not is_set(data):
        _check_findings(data, "findings")
        if data.get(BASELINE_KEY) is not None:
            _check_findings(data[BASELINE_KEY], "baseline")
        return
    if data.get("schema_version") != SCHEMA_VERSION:
        raise NarratorError(f"the findings set has schema version {json.dumps(data.get('schema_version'))[:20]}; "
                            f"this narrator reads version {SCHEMA_VERSION}")
    entries = data.get("variables")
    if not isinstance(entries, list) or not entries:
        raise NarratorError("the findings set's variables must be a non-empty list")
    for number, entry in enumerate(entries, start=1):
        where = f"variable {number}"
        if not isinstance(entry, dict):
            raise NarratorError(f"{where} must be an object, not {_kind_word(entry)}")
        _check_findings(entry.get("findings"), f"{where} findings")
        if entry.get(BASELINE_KEY) is not None:
            _check_findings(entry[BASELINE_KEY], f"{where} baseline")
        for key, word in (("groups", "group"), (GROUP_BASELINES_KEY, "baseline group")):
            groups = entry.get(key, [])
            if not isinstance(groups, list):
                raise NarratorError(f"{where} {key} must be a list")
            for group in groups:
                if not isinstance(group, dict) or not isinstance(group.get("label"), str):
                    raise NarratorError(f"{where} has a {word} without a label")
                _check_findings(group.get("findings"), f"{where} {word} {json.dumps(group['label'])[:40]}")
        for key in ("suppressed_groups", "ungrouped_values"):
            count = entry.get(key, 0)
            if isinstance(count, bool) or not isinstance(count, int) or not 0 <= count < _LARGEST_WHOLE:
                raise NarratorError(f"{where} {key} must be a whole number of at least 0")
    threshold = data.get("privacy_threshold")
    if threshold is not None and (isinstance(threshold, bool) or not isinstance(threshold, int)
                                  or not 0 < threshold < _LARGEST_WHOLE):
        raise NarratorError("the findings set's privacy_threshold must be a whole number of at least 1")
    if data.get("group_by") is not None and not isinstance(data.get("group_by"), str):
        raise NarratorError("the findings set's group_by must be text")


def _set_of(data: dict) -> FindingsSet:
    """Checked sidecar data as a FindingsSet (a single sidecar becomes a set of one variable)."""
    check_sidecar(data)
    if is_set(data):
        return FindingsSet.from_dict(data)
    baseline = data.get(BASELINE_KEY)
    return FindingsSet(variables=(VariableFindings(
        Findings.from_dict(data), baseline=Findings.from_dict(baseline) if isinstance(baseline, dict) else None),))


def single_sidecar(findings: Findings, baseline: Findings | None) -> dict[str, Any]:
    """The sidecar of a one-variable report: the findings, and the baseline they were compared with."""
    data = findings.to_dict()
    if baseline is not None:
        baseline_data = baseline.to_dict()
        baseline_data.pop(BASELINE_KEY, None)
        data[BASELINE_KEY] = baseline_data
    return data


def set_sidecar(findings_set: FindingsSet) -> dict[str, Any]:
    """The sidecar of a report on several variables or groups."""
    return findings_set.to_dict()


@dataclass(frozen=True, slots=True)
class Previous:
    """The previous build of a report: its findings (as a set), whether its sidecar was the one-variable
    kind, and, when a sidecar was there but not used, why (one line for the user)."""

    findings_set: FindingsSet | None = None
    single: bool = False
    note: str | None = None


def previous_build(report: str | os.PathLike[str]) -> Previous:
    """The findings of the previous build of ``report``, read by the policy above; never raises for its content."""
    from narrator.reading.files import shown_name
    from narrator.safe_io import pause, read_report_pair, sidecar_path

    reading = read_report_pair(report)
    pause("previous-read")
    if reading.state == "none":
        return Previous()
    if reading.state != "ok":
        return Previous(note=reading.note)
    try:
        found = _set_of(reading.data)
    except (NarratorError, RecursionError, ValueError, TypeError, OverflowError) as exc:
        why = str(exc) if isinstance(exc, NarratorError) else "it does not follow the findings schema"
        name = shown_name(sidecar_path(report).name)
        return Previous(note=f"the previous findings {name} were ignored: {why}")
    return Previous(found, single=not is_set(reading.data))


def read_findings_file(path: str | os.PathLike[str]) -> FindingsSet:
    """A findings sidecar the user names, of either kind, checked; every problem is one NarratorError line."""
    from narrator.reading.files import shown_name

    target = Path(path)
    name = shown_name(target.name)
    try:
        if target.stat().st_size > 256 << 20:
            raise NarratorError(f"{name}: far larger than a findings file")
        text = target.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise NarratorError(f"{name}: no such findings file") from None
    except IsADirectoryError:
        raise NarratorError(f"{name}: is a folder, not a findings file") from None
    except UnicodeDecodeError:
        raise NarratorError(f"{name}: not a findings file (not UTF-8 text)") from None
    except OSError as exc:
        raise NarratorError(f"{name}: cannot be read ({exc.strerror or exc})") from None
    try:
        data = json.loads(text)
    except RecursionError:
        raise NarratorError(f"{name}: not a findings file (nested too deeply)") from None
    except ValueError as exc:
        raise NarratorError(f"{name}: not a findings file (not valid JSON: {' '.join(str(exc).split())[:80]})"
                            ) from None
    try:
        return _set_of(data)
    except NarratorError as exc:
        raise NarratorError(f"{name}: not a findings file narrator can read ({exc})") from None
    except (RecursionError, ValueError, TypeError, OverflowError):
        raise NarratorError(f"{name}: not a findings file narrator can read (it does not follow the schema)"
                            ) from None
